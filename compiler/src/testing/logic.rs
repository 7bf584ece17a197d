//! Seeded random Boolean functions for tests, benchmarks and the sympy comparison.
//!
//! The generator is [`Rng`] (SplitMix64) started from the seed unmixed
//! ([`Rng::from_state`]), so the same seed gives the same functions in the unit tests,
//! the criterion benchmark and the JSON exported by `examples/logic_export.rs` for the
//! Python timing script.

pub use super::Rng;
use crate::logic::cube::{full_mask, Cube};
use crate::logic::{CubeFunction, Function};

fn var_names(n: usize) -> Vec<String> {
    (0..n).map(|i| format!("x{i}")).collect()
}

/// A random function of `n` variables (`n <= 24`): each minterm is on with probability
/// `on_per_mille`/1000, else don't-care with probability `dc_per_mille`/1000, else off.
pub fn random_function(rng: &mut Rng, n: usize, on_per_mille: u64, dc_per_mille: u64) -> Function {
    let mut on = Vec::new();
    let mut dc = Vec::new();
    for m in 0..(1u64 << n) {
        let r = rng.below(1000);
        if r < on_per_mille {
            on.push(m);
        } else if r < on_per_mille + dc_per_mille {
            dc.push(m);
        }
    }
    Function {
        vars: var_names(n),
        on,
        dc,
    }
}

/// A random cube with each of the `n` variables cared for with probability
/// `care_per_mille`/1000, in a random phase.
pub fn random_cube(rng: &mut Rng, n: usize, care_per_mille: u64) -> Cube {
    let mut care = 0u64;
    for v in 0..n {
        if rng.below(1000) < care_per_mille {
            care |= 1u64 << v;
        }
    }
    Cube::new(rng.next_u64() & full_mask(n), care)
}

/// A random cube-list function of `n` variables: `on_cubes` on-cubes and `dc_cubes`
/// don't-care cubes, each variable a literal with probability `care_per_mille`/1000.
pub fn random_cube_function(
    rng: &mut Rng,
    n: usize,
    on_cubes: usize,
    dc_cubes: usize,
    care_per_mille: u64,
) -> CubeFunction {
    let on = (0..on_cubes)
        .map(|_| random_cube(rng, n, care_per_mille))
        .collect();
    let dc = (0..dc_cubes)
        .map(|_| random_cube(rng, n, care_per_mille))
        .collect();
    CubeFunction {
        vars: var_names(n),
        on,
        dc,
    }
}

/// A cube-list function with a planted cover: `planted` random cubes of `literals`
/// literals each, every one split into the 8 sub-cubes on 3 further free variables (so
/// the on-set is given as `8 * planted` cubes). Returns the function and the planted
/// cover's literal count (an upper bound on the minimum). Needs `n >= literals + 3`.
pub fn planted_cube_function(
    rng: &mut Rng,
    n: usize,
    planted: usize,
    literals: usize,
) -> (CubeFunction, usize) {
    let mut on = Vec::new();
    let mut total = 0;
    for _ in 0..planted {
        let mut care = 0u64;
        while (care.count_ones() as usize) < literals.min(n) {
            care |= 1u64 << rng.below(n as u64);
        }
        let cube = Cube::new(rng.next_u64(), care);
        total += cube.literals();
        let mut extra = Vec::new();
        while extra.len() < 3 && (care.count_ones() as usize) + extra.len() < n {
            let bit = 1u64 << rng.below(n as u64);
            if care & bit == 0 && !extra.contains(&bit) {
                extra.push(bit);
            }
        }
        let extra_care: u64 = extra.iter().fold(0, |a, b| a | b);
        for k in 0..(1u64 << extra.len()) {
            let value = extra
                .iter()
                .enumerate()
                .filter(|&(i, _)| k >> i & 1 == 1)
                .fold(cube.value, |a, (_, b)| a | b);
            on.push(Cube::new(value, care | extra_care));
        }
    }
    (
        CubeFunction {
            vars: var_names(n),
            on,
            dc: Vec::new(),
        },
        total,
    )
}

/// The fixed benchmark set of minterm functions: `count` functions of each size in
/// `sizes`, 1/3 on and 1/6 don't-care, seeded by `seed ^ n`.
pub fn benchmark_functions(seed: u64, sizes: &[usize], count: usize) -> Vec<Function> {
    let mut out = Vec::new();
    for &n in sizes {
        let mut rng = Rng::from_state(seed ^ n as u64);
        for _ in 0..count {
            out.push(random_function(&mut rng, n, 333, 167));
        }
    }
    out
}
