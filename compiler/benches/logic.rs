//! Criterion benchmark of the two-level minimizers on a fixed seeded set of functions:
//! exact (Quine-McCluskey + branch and bound) at 6, 8, 10 and 12 variables (the same
//! functions `examples/logic_export.rs` exports for `tests/python/bench_sopform.py`),
//! and the heuristic on 20-, 24- and 32-variable cube-list functions. Literal counts
//! (and, for exact, whether the minimum was proven) are printed once per group.
//! `off_set`: the heuristic on the wide functions of a one-hot machine with the off-set
//! complemented from the on- and don't-care sets (the baseline, as before) and taken
//! from the machine's regions (what `synthesize` does now), in the same run.
//!
//! `cargo bench -p detent-compiler --bench logic`

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use detent_compiler::logic::assign::Encoding;
use detent_compiler::logic::equations::{synthesize, LogicSpec};
use detent_compiler::logic::exact::{minimize_exact, DEFAULT_NODE_BUDGET};
use detent_compiler::logic::excitation::FlipFlop;
use detent_compiler::logic::heuristic::{minimize_heuristic, minimize_heuristic_against};
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

/// The wide (heuristic) functions of the charger fixture under one-hot with D
/// flip-flops (9 state bits + 2 event bits + 6 inputs = 17 variables), minimized with
/// the complement as the off-set and with the regions' off-set.
fn off_set(c: &mut Criterion) {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/fixtures/charger.detent");
    let m =
        detent_tests::checked_machine("charger.detent", &std::fs::read_to_string(path).unwrap());
    let spec = LogicSpec::from_machine(&m).unwrap();
    let encoding = Encoding::one_hot(m.states.len()).unwrap();
    let design = synthesize(&spec, &encoding, FlipFlop::D, false).unwrap();
    let wide: Vec<_> = design
        .functions
        .iter()
        .filter(|f| f.vars.len() > detent_compiler::logic::EXACT_MAX_VARS)
        .collect();
    let count = |f: &dyn Fn(
        &detent_compiler::logic::equations::LogicFunction,
    ) -> Vec<detent_compiler::logic::Cube>|
     -> usize {
        wide.iter()
            .map(|x| f(x).iter().map(|c| c.literals()).sum::<usize>())
            .sum()
    };
    println!(
        "off_set: {} functions of {} variables; literals with the complement {}, with the regions {}",
        wide.len(),
        wide.first().map_or(0, |f| f.vars.len()),
        count(&|f| minimize_heuristic(&f.on_cubes, &f.dc_cubes).0),
        count(&|f| minimize_heuristic_against(&f.on_cubes, &f.dc_cubes, &f.off_cubes).0),
    );
    let mut group = c.benchmark_group("off_set");
    group.sample_size(10);
    group.bench_function("complement", |b| {
        b.iter(|| {
            for f in &wide {
                std::hint::black_box(minimize_heuristic(&f.on_cubes, &f.dc_cubes));
            }
        })
    });
    group.bench_function("regions", |b| {
        b.iter(|| {
            for f in &wide {
                std::hint::black_box(minimize_heuristic_against(
                    &f.on_cubes,
                    &f.dc_cubes,
                    &f.off_cubes,
                ));
            }
        })
    });
    group.finish();
}

criterion_group!(benches, exact, heuristic, off_set);
criterion_main!(benches);
