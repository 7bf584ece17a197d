//! Criterion benchmark of the two-level minimizers on a fixed seeded set of functions:
//! exact (Quine-McCluskey + branch and bound) at 6, 8, 10 and 12 variables (the same
//! functions `examples/logic_export.rs` exports for `tests/python/bench_sopform.py`),
//! and the heuristic on 20-, 24- and 32-variable cube-list functions. Literal counts
//! (and, for exact, whether the minimum was proven) are printed once per group.
//!
//! `cargo bench -p detent-compiler --bench logic`

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use detent_compiler::logic::exact::{minimize_exact, DEFAULT_NODE_BUDGET};
use detent_compiler::logic::heuristic::minimize_heuristic;
use detent_compiler::testing::logic::{
    benchmark_functions, planted_cube_function, random_cube_function, Rng,
};

/// Seed shared with `examples/logic_export.rs`.
const SEED: u64 = 0xde7e_4e71;

fn exact(c: &mut Criterion) {
    let mut group = c.benchmark_group("exact");
    group.sample_size(10);
    for n in [6usize, 8, 10, 12] {
        let functions = benchmark_functions(SEED, &[n], 3);
        let literals: Vec<(usize, bool)> = functions
            .iter()
            .map(|f| {
                let r = minimize_exact(n, &f.on, &f.dc, DEFAULT_NODE_BUDGET);
                (r.cubes.iter().map(|c| c.literals()).sum(), r.proven)
            })
            .collect();
        println!("exact n={n}: (literals, proven) = {literals:?}");
        group.bench_with_input(BenchmarkId::from_parameter(n), &functions, |b, fs| {
            b.iter(|| {
                for f in fs {
                    std::hint::black_box(minimize_exact(n, &f.on, &f.dc, DEFAULT_NODE_BUDGET));
                }
            })
        });
    }
    group.finish();
}

fn heuristic(c: &mut Criterion) {
    let mut group = c.benchmark_group("heuristic");
    group.sample_size(10);
    for n in [20usize, 24, 32] {
        let mut rng = Rng::from_state(SEED ^ n as u64);
        let random = random_cube_function(&mut rng, n, 60, 10, 350);
        let (planted, planted_literals) = planted_cube_function(&mut rng, n, 12, 6);
        let (r, stats) = minimize_heuristic(&random.on, &random.dc);
        let (p, _) = minimize_heuristic(&planted.on, &planted.dc);
        let lits =
            |cs: &[detent_compiler::logic::Cube]| cs.iter().map(|c| c.literals()).sum::<usize>();
        println!(
            "heuristic n={n}: random {} -> {} literals (off-set {} cubes); planted {} cubes \
             ({planted_literals} planted literals) -> {} literals",
            lits(&random.on),
            lits(&r),
            stats.off_cubes,
            planted.on.len(),
            lits(&p)
        );
        group.bench_with_input(BenchmarkId::new("random", n), &random, |b, f| {
            b.iter(|| std::hint::black_box(minimize_heuristic(&f.on, &f.dc)))
        });
        group.bench_with_input(BenchmarkId::new("planted", n), &planted, |b, f| {
            b.iter(|| std::hint::black_box(minimize_heuristic(&f.on, &f.dc)))
        });
    }
    group.finish();
}

criterion_group!(benches, exact, heuristic);
criterion_main!(benches);
