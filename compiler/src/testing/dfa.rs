//! Random complete DFAs for the minimizer's tests and benchmarks.

use super::Rng;
use crate::minimize::partition::Dfa;

/// A pseudo-random complete DFA: successors uniform over all states, labels uniform
/// over `0..n_labels` (SplitMix64 from `seed`, so the same arguments always give the
/// same table).
pub fn random_dfa(n_states: usize, n_symbols: usize, n_labels: u32, seed: u64) -> Dfa {
    let mut rng = Rng::from_state(seed);
    // Uniform in `0..n` by multiply-shift (the bias is below 2^-32 for these sizes); the
    // tables of BENCHMARKS.md's minimizer runs were drawn this way.
    let mut below = |n: u64| ((rng.next_u64() >> 32) * n) >> 32;
    let delta = (0..n_states * n_symbols)
        .map(|_| below(n_states as u64) as u32)
        .collect();
    let initial = (0..n_states)
        .map(|_| below(u64::from(n_labels.max(1))) as u32)
        .collect();
    Dfa {
        n_states,
        n_symbols,
        delta,
        initial,
    }
}
