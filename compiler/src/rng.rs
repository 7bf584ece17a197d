//! The workspace's one seeded random generator.
//!
//! The state-assignment search draws its random starts from it (so a search is the same
//! on every run and platform), and the seeded generators of tests and benchmarks
//! ([`crate::testing`], behind the `testing` feature) use it too.

/// The golden-ratio increment of SplitMix64, also used to spread a seed.
const GOLDEN: u64 = 0x9E37_79B9_7F4A_7C15;

/// SplitMix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014): a tiny deterministic generator, so the same seed gives the
/// same random machines, traces, functions and tables on every platform and in every
/// run. Not a cryptographic generator.
#[derive(Clone, Debug)]
pub struct Rng(u64);

impl Rng {
    /// A generator from a seed (mixed with the golden ratio first, so that small seeds
    /// do not start from a near-zero state).
    pub fn new(seed: u64) -> Rng {
        Rng(seed ^ GOLDEN)
    }

    /// A generator whose state is `state`, unmixed (the sequences of the logic and DFA
    /// generators, which benchmarks record, start this way).
    pub fn from_state(state: u64) -> Rng {
        Rng(state)
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(GOLDEN);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// A number in `0..n` (`0` when `n` is 0; the modulo bias is negligible for the
    /// small `n` of tests).
    pub fn below(&mut self, n: u64) -> u64 {
        self.next_u64() % n.max(1)
    }

    /// An index in `0..n` (`0` when `n` is 0).
    pub fn index(&mut self, n: usize) -> usize {
        self.below(n as u64) as usize
    }

    /// A number in `lo..=hi`.
    pub fn range(&mut self, lo: usize, hi: usize) -> usize {
        lo + self.index(hi - lo + 1)
    }

    /// True with probability `p`.
    pub fn chance(&mut self, p: f64) -> bool {
        (self.next_u64() >> 11) as f64 / ((1u64 << 53) as f64) < p
    }

    /// A seeded random sequence of `(event number, input levels)`: events uniform over
    /// `0..events`, each of the `inputs` levels (bit `i` for input `i`) a fair coin.
    pub fn events(&mut self, events: usize, inputs: usize, len: usize) -> Vec<(usize, u32)> {
        let mask = if inputs >= 32 {
            u32::MAX
        } else {
            (1u32 << inputs) - 1
        };
        (0..len)
            .map(|_| {
                let e = self.index(events);
                let levels = (self.next_u64() as u32) & mask;
                (e, levels)
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::Rng;

    /// The first outputs of SplitMix64 from state 0, as published with the algorithm's
    /// reference implementation (Vigna, `splitmix64.c`; values from memory of its test
    /// vectors, checked here so that a change of the generator is seen).
    #[test]
    fn splitmix64_reference_values() {
        let mut r = Rng::from_state(0);
        assert_eq!(r.next_u64(), 0xE220_A839_7B1D_CDAF);
        assert_eq!(r.next_u64(), 0x6E78_9E6A_A1B9_65F4);
        assert_eq!(r.next_u64(), 0x06C4_5D18_8009_454F);
    }

    #[test]
    fn bounds_hold() {
        let mut r = Rng::new(7);
        for n in 1..50 {
            assert!(r.index(n) < n);
            let x = r.range(3, 3 + n);
            assert!((3..=3 + n).contains(&x));
        }
        assert_eq!(r.index(0), 0);
        let evs = r.events(5, 3, 100);
        assert!(evs.iter().all(|&(e, l)| e < 5 && l < 8));
    }
}
