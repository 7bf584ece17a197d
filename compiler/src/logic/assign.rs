//! State assignment: which code of state bits stands for which state.
//!
//! * **binary**: state `i` (declaration order) gets code `i`, on `ceil(log2 m)` bits
//!   (the lower bound for any encoding with distinct codes; common practice).
//! * **gray**: state `i` gets the reflected binary Gray code `i ^ (i >> 1)`, so states
//!   consecutive in declaration order differ in exactly one bit.
//! * **one-hot**: state `i` gets bit `i` alone, on `m` bits.
//!
//! A machine with one state still gets one state bit (code `0`): the `state` port and
//! the reset stay meaningful, and the flip-flop equations are constants.
//!
//! Bit `j` of a code is state bit `q_j`; code strings are written most significant
//! first (`q1 q0`), the variable order of every equation.
//!
//! The search for a cheap assignment ([`crate::logic::search`]) uses
//! [`canonical_assignments`] (exhaustive up to symmetry), [`adjacency_assignment`] (the
//! classic adjacency rules, then pairwise-swap descent) and
//! [`canonical_under_permutation`] (to drop assignments already costed). Costs: the
//! enumeration is `(2^k - 1)! / (2^k - m)!` assignments with `k!` permutation tests
//! each; the adjacency heuristic is O(m^2) per score, so O(m^4) per swap pass (the
//! search's own descent uses O(m) deltas instead).

/// How states are encoded.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum EncodingKind {
    /// Declaration order, `ceil(log2 m)` bits.
    Binary,
    /// Reflected Gray code in declaration order, `ceil(log2 m)` bits.
    Gray,
    /// One flip-flop per state.
    OneHot,
    /// Found by the assignment search, `ceil(log2 m)` bits.
    Searched,
}

impl EncodingKind {
    /// The name used in reports (`binary`, `gray`, `onehot`, `auto`).
    pub fn name(self) -> &'static str {
        match self {
            EncodingKind::Binary => "binary",
            EncodingKind::Gray => "gray",
            EncodingKind::OneHot => "onehot",
            EncodingKind::Searched => "auto",
        }
    }
}

/// A state assignment.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Encoding {
    /// How it was made.
    pub kind: EncodingKind,
    /// Number of state bits (flip-flops).
    pub bits: usize,
    /// The code of each state, indexed by state id; bit `j` is `q_j`.
    pub codes: Vec<u64>,
}

/// `ceil(log2 m)`, at least 1: the state bits of a dense encoding of `m` states.
pub fn dense_bits(m: usize) -> usize {
    let mut k = 1;
    while (1usize << k) < m {
        k += 1;
    }
    k
}

/// `ceil(log2 e)` (0 for `e <= 1`): the width of the event bus for `e` events.
pub fn bus_bits(e: usize) -> usize {
    let mut k = 0;
    while (1usize << k) < e {
        k += 1;
    }
    k
}

impl Encoding {
    /// Binary: state `i` gets code `i`.
    pub fn binary(m: usize) -> Encoding {
        Encoding {
            kind: EncodingKind::Binary,
            bits: dense_bits(m),
            codes: (0..m as u64).collect(),
        }
    }

    /// Gray: state `i` gets `i ^ (i >> 1)`.
    pub fn gray(m: usize) -> Encoding {
        Encoding {
            kind: EncodingKind::Gray,
            bits: dense_bits(m),
            codes: (0..m as u64).map(|i| i ^ (i >> 1)).collect(),
        }
    }

    /// One-hot: state `i` gets bit `i` alone. At most 64 states (one machine word).
    pub fn one_hot(m: usize) -> Result<Encoding, String> {
        if m > 64 {
            return Err(format!(
                "one-hot encoding of {m} states needs {m} state bits; at most 64 are supported"
            ));
        }
        Ok(Encoding {
            kind: EncodingKind::OneHot,
            bits: m.max(1),
            codes: (0..m).map(|i| 1u64 << i).collect(),
        })
    }

    /// Whether this is a one-hot encoding.
    pub fn is_one_hot(&self) -> bool {
        self.kind == EncodingKind::OneHot
    }

    /// The code of state `s` as a bit string, most significant bit (`q_{k-1}`) first.
    pub fn code_string(&self, s: usize) -> String {
        code_string(self.codes[s], self.bits)
    }

    /// Codes of `bits` bits that no state uses, ascending (empty for one-hot, whose
    /// unused codes are handled as "not exactly one bit set").
    pub fn unused_codes(&self) -> Vec<u64> {
        if self.is_one_hot() {
            return Vec::new();
        }
        let mut used = vec![false; 1usize << self.bits];
        for &c in &self.codes {
            used[c as usize] = true;
        }
        (0..1u64 << self.bits)
            .filter(|&c| !used[c as usize])
            .collect()
    }
}

/// A code as `bits` characters, most significant first.
pub fn code_string(code: u64, bits: usize) -> String {
    (0..bits)
        .rev()
        .map(|j| if code >> j & 1 == 1 { '1' } else { '0' })
        .collect()
}

/// Applies a bit permutation to a code: bit `j` of `code` moves to bit `perm[j]`.
fn permute(code: u64, perm: &[usize]) -> u64 {
    perm.iter()
        .enumerate()
        .fold(0, |acc, (j, &to)| acc | ((code >> j & 1) << to))
}

/// Every permutation of `0..k` (Heap's algorithm), identity first.
fn permutations(k: usize) -> Vec<Vec<usize>> {
    let mut a: Vec<usize> = (0..k).collect();
    let mut out = vec![a.clone()];
    let mut c = vec![0usize; k];
    let mut i = 0;
    while i < k {
        if c[i] < i {
            if i % 2 == 0 {
                a.swap(0, i);
            } else {
                a.swap(c[i], i);
            }
            out.push(a.clone());
            c[i] += 1;
            i = 0;
        } else {
            c[i] = 0;
            i += 1;
        }
    }
    out
}

/// The representative of an assignment under permutations of the state bits: the
/// lexicographically smallest of its `k!` permuted code vectors. Two assignments with the
/// same representative give the same exact literal counts (the equations only rename
/// their state variables). Cost O(k! m).
pub fn canonical_under_permutation(codes: &[u64], bits: usize) -> Vec<u64> {
    let mut best = codes.to_vec();
    let mut permuted = vec![0u64; codes.len()];
    for p in permutations(bits).iter().skip(1) {
        for (dst, &c) in permuted.iter_mut().zip(codes.iter()) {
            *dst = permute(c, p);
        }
        if permuted < best {
            best.clone_from(&permuted);
        }
    }
    best
}

/// Raw assignments (before symmetry) up to which `auto` enumerates every assignment:
/// `7! = 5040`, i.e. every machine of up to 8 states (3 bits). Measured: the examples of
/// 4 to 6 states take well under a second in a release build; 9 states would be
/// `15!/7! ~ 2.6e8` raw assignments, far beyond.
pub const EXHAUSTIVE_MAX_RAW: u64 = 5040;

/// The number of assignments [`canonical_assignments`] would visit before the symmetry
/// test (`(2^k - 1)! / (2^k - m)!`), saturating; used to decide whether to enumerate.
pub fn raw_assignment_count(m: usize) -> u64 {
    let k = dense_bits(m);
    let free = (1u64 << k) - 1;
    let mut n = 1u64;
    for i in 0..m.saturating_sub(1) as u64 {
        n = n.saturating_mul(free - i);
    }
    n
}

/// Every assignment of `m` states to distinct `ceil(log2 m)`-bit codes, up to symmetry:
/// complementing a set of bits is removed by giving the start state code 0 (complement
/// the bits where its code is 1: every assignment has such a twin), and permuting bits
/// by keeping only assignments that are lexicographically smallest among their `k!`
/// bit permutations. `visit` gets each representative; it returns `false` to stop.
///
/// Complementation is a true symmetry of the state-bit variables (literal phases swap),
/// but not exactly of the cost: with a D flip-flop the complemented bit's input is the
/// complement function, whose cover can differ in size. The classical count of distinct
/// assignments, `(2^k - 1)! / ((2^k - m)! k!)`, makes the same simplification; a
/// flip-flop's complemented output justifies it in hardware.
pub fn canonical_assignments(m: usize, start: usize, mut visit: impl FnMut(&[u64]) -> bool) {
    let k = dense_bits(m);
    let perms = permutations(k);
    let n_codes = 1usize << k;
    let mut codes = vec![0u64; m];
    let mut used = vec![false; n_codes];
    used[0] = true;
    // States other than the start, in declaration order, get nonzero codes.
    let others: Vec<usize> = (0..m).filter(|&s| s != start).collect();
    let mut permuted = vec![0u64; m];
    #[allow(clippy::too_many_arguments)]
    fn rec(
        depth: usize,
        others: &[usize],
        codes: &mut [u64],
        used: &mut [bool],
        perms: &[Vec<usize>],
        permuted: &mut [u64],
        visit: &mut dyn FnMut(&[u64]) -> bool,
    ) -> bool {
        if depth == others.len() {
            // Keep the assignment only if no bit permutation makes it smaller.
            for p in perms.iter().skip(1) {
                for (dst, &c) in permuted.iter_mut().zip(codes.iter()) {
                    *dst = permute(c, p);
                }
                if *permuted < *codes {
                    return true;
                }
            }
            return visit(codes);
        }
        for c in 1..used.len() {
            if used[c] {
                continue;
            }
            used[c] = true;
            codes[others[depth]] = c as u64;
            let go_on = rec(depth + 1, others, codes, used, perms, permuted, visit);
            used[c] = false;
            if !go_on {
                return false;
            }
        }
        true
    }
    if m == 0 {
        return;
    }
    codes[start] = 0;
    rec(
        0,
        &others,
        &mut codes,
        &mut used,
        &perms,
        &mut permuted,
        &mut visit,
    );
}

/// Adjacency weights between states for [`adjacency_assignment`], symmetric, `m x m`
/// flat (`w[a * m + b]`).
#[derive(Clone, Debug)]
pub struct Adjacency {
    /// Number of states.
    pub m: usize,
    /// The weights.
    pub w: Vec<u32>,
}

impl Adjacency {
    /// No affinities yet.
    pub fn new(m: usize) -> Adjacency {
        Adjacency {
            m,
            w: vec![0; m * m],
        }
    }

    /// Adds `by` to the affinity of `a` and `b` (both directions; nothing for `a == b`).
    pub fn add(&mut self, a: usize, b: usize, by: u32) {
        if a != b {
            self.w[a * self.m + b] += by;
            self.w[b * self.m + a] += by;
        }
    }

    /// The weighted distance `sum w(a, b) * hamming(code a, code b)` of an assignment.
    pub fn score(&self, codes: &[u64]) -> u64 {
        let mut total = 0u64;
        for a in 0..self.m {
            for b in a + 1..self.m {
                let w = self.w[a * self.m + b];
                if w != 0 {
                    total += u64::from(w) * u64::from((codes[a] ^ codes[b]).count_ones());
                }
            }
        }
        total
    }
}

/// The adjacency-based assignment heuristic in the spirit of the classic rules (states
/// with the same next state, successors of one state, and states with the same outputs
/// should get codes that differ in few bits; the caller sets the weights): the start
/// state gets code 0; states are placed one at a time, the one with the most affinity to
/// the placed ones first, each on the free code that minimises its weighted distance to
/// the placed states; then pairwise swaps (and moves to free codes) are made while they
/// lower [`Adjacency::score`]. `seed` varies tie-breaking for restarts.
pub fn adjacency_assignment(adj: &Adjacency, start: usize, seed: u64) -> Vec<u64> {
    let m = adj.m;
    let k = dense_bits(m);
    let n_codes = 1usize << k;
    let mut codes = vec![u64::MAX; m];
    let mut used = vec![false; n_codes];
    let mut rng = seed.wrapping_mul(0x9E37_79B9_7F4A_7C15) | 1;
    let mut jitter = move || {
        rng ^= rng << 13;
        rng ^= rng >> 7;
        rng ^= rng << 17;
        rng
    };
    codes[start] = 0;
    used[0] = true;
    let mut placed = vec![false; m];
    placed[start] = true;
    for _ in 1..m {
        // The unplaced state with the largest affinity to placed states.
        let mut best = None;
        for s in (0..m).filter(|&s| !placed[s]) {
            let aff: u64 = (0..m)
                .filter(|&t| placed[t])
                .map(|t| u64::from(adj.w[s * m + t]))
                .sum();
            let key = (aff, if seed == 0 { 0 } else { jitter() % 4 });
            if best.is_none_or(|(_, k)| key > k) {
                best = Some((s, key));
            }
        }
        let Some((s, _)) = best else { break };
        let mut best_code = None;
        for c in (0..n_codes).filter(|&c| !used[c]) {
            let cost: u64 = (0..m)
                .filter(|&t| placed[t])
                .map(|t| {
                    u64::from(adj.w[s * m + t]) * u64::from((c as u64 ^ codes[t]).count_ones())
                })
                .sum();
            let key = (cost, if seed == 0 { 0 } else { jitter() % 4 });
            if best_code.is_none_or(|(_, k)| key < k) {
                best_code = Some((c, key));
            }
        }
        let Some((c, _)) = best_code else { break };
        codes[s] = c as u64;
        used[c] = true;
        placed[s] = true;
    }
    // Descent: swap two states' codes, or move a state to a free code.
    let mut score = adj.score(&codes);
    loop {
        let mut improved = false;
        for a in 0..m {
            for b in a + 1..m {
                codes.swap(a, b);
                let s = adj.score(&codes);
                if s < score {
                    score = s;
                    improved = true;
                } else {
                    codes.swap(a, b);
                }
            }
            for c in 0..n_codes as u64 {
                if used[c as usize] {
                    continue;
                }
                let old = codes[a];
                codes[a] = c;
                let s = adj.score(&codes);
                if s < score {
                    score = s;
                    improved = true;
                    used[old as usize] = false;
                    used[c as usize] = true;
                } else {
                    codes[a] = old;
                }
            }
        }
        if !improved {
            break;
        }
    }
    codes
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dense_encodings_use_the_lower_bound() {
        // ceil(log2 m) bits: the lower bound for distinct codes (common practice).
        for m in 1..=70usize {
            let k = dense_bits(m);
            assert!(m <= 1 << k);
            assert!(m == 1 || m > 1 << (k - 1), "m={m} k={k}");
            for enc in [Encoding::binary(m), Encoding::gray(m)] {
                let mut c = enc.codes.clone();
                c.sort_unstable();
                c.dedup();
                assert_eq!(c.len(), m);
                assert!(c.iter().all(|&x| x < 1 << k));
            }
        }
        let g = Encoding::gray(8);
        for w in g.codes.windows(2) {
            assert_eq!((w[0] ^ w[1]).count_ones(), 1);
        }
        assert_eq!(Encoding::gray(4).code_string(2), "11");
        assert_eq!(Encoding::one_hot(3).unwrap().code_string(1), "010");
        assert!(Encoding::one_hot(65).is_err());
        assert_eq!(bus_bits(1), 0);
        assert_eq!(bus_bits(5), 3);
    }

    #[test]
    fn canonical_count_matches_the_classical_formula() {
        // (2^k - 1)! / ((2^k - m)! k!) distinct assignments (from memory: the classical
        // count of state assignments up to bit permutation and complementation). It is
        // exact when no nontrivial bit permutation fixes every code of an assignment,
        // true for these sizes: m=3,4: 3; m=5: 140; m=8: 840.
        for (m, expect) in [(3usize, 3u64), (4, 3), (5, 140), (8, 840)] {
            let mut n = 0u64;
            canonical_assignments(m, 0, |codes| {
                assert_eq!(codes[0], 0);
                n += 1;
                true
            });
            assert_eq!(n, expect, "m={m}");
        }
    }

    #[test]
    fn adjacency_puts_heavy_pairs_next_to_each_other() {
        let mut adj = Adjacency::new(4);
        adj.add(0, 3, 10);
        adj.add(1, 2, 10);
        let codes = adjacency_assignment(&adj, 0, 0);
        assert_eq!((codes[0] ^ codes[3]).count_ones(), 1);
        assert_eq!((codes[1] ^ codes[2]).count_ones(), 1);
        let mut c = codes.clone();
        c.sort_unstable();
        c.dedup();
        assert_eq!(c.len(), 4);
    }
}
