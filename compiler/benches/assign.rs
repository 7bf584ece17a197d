//! Criterion benchmark of the state-assignment search of `logic --encoding auto`:
//! today's search (`auto_assign_baseline`: exhaustive up to 8 states, else 6 adjacency
//! restarts and 120 exact swaps) against the new one (`auto_assign`, `logic::search`),
//! on the same machines in one run: the 9-state battery charger fixture (4 events,
//! 6 inputs: 8 pins, 12 equation variables) and a 16-state machine of the seeded
//! generator with 8 events and 7 inputs (10 pins, 14 variables), with D and JK
//! flip-flops. The literal counts of both are printed once per machine.
//!
//! Group `primes`: the prime implicants of the charger's four D equations (binary
//! encoding), by Quine-McCluskey on minterms (what the exact minimizer did before) and
//! by Tison's consensus on the cube lists (what it does now).
//!
//! `cargo bench -p detent-compiler --bench assign`

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use detent_compiler::logic::assign::Encoding;
use detent_compiler::logic::auto::{auto_assign, auto_assign_baseline, AutoReport};
use detent_compiler::logic::equations::{synthesize, LogicSpec, Map};
use detent_compiler::logic::exact::{prime_implicants, primes_from_cubes};
use detent_compiler::logic::excitation::FlipFlop;
use detent_compiler::logic::Cube;
use detent_tests::gen::{random_spec, GenConfig};

fn load(text: &str) -> LogicSpec {
    let report = detent_compiler::driver::check_source("bench", text);
    let m = report
        .machines
        .into_iter()
        .find_map(|m| m.machine)
        .expect("a machine");
    LogicSpec::from_machine(&m).expect("a logic spec")
}

fn machines() -> Vec<(&'static str, LogicSpec)> {
    let charger = include_str!("../tests/fixtures/charger.detent");
    let generated = random_spec(
        1,
        &GenConfig {
            states: (16, 16),
            events: 8,
            inputs: 7,
            outputs: 3,
            actions: 3,
            groups: true,
            policy: Some("ignore"),
            timeouts: false,
            counters: 0,
        },
    );
    vec![("charger9", load(charger)), ("gen16", load(&generated))]
}

fn searched(r: &AutoReport) -> usize {
    r.rows
        .iter()
        .find(|r| r.encoding.kind.name() == "auto")
        .map_or(0, |r| r.literals)
}

fn search(c: &mut Criterion) {
    let mut group = c.benchmark_group("assign");
    group.sample_size(10);
    for (name, spec) in machines() {
        for (ff_name, ff) in [("d", FlipFlop::D), ("jk", FlipFlop::JK)] {
            let (_, old) = auto_assign_baseline(&spec, ff, Map::Sop, &mut |_, _| {}).unwrap();
            let (_, new) = auto_assign(&spec, ff, Map::Sop, &mut |_, _| {}).unwrap();
            println!(
                "{name} {ff_name}: baseline {} literals ({} costed); search {} literals \
                 ({} costed, {} pruned, {} minimized, {} memo hits); binary {} gray {}",
                searched(&old),
                old.evaluated,
                searched(&new),
                new.stats.evaluated,
                new.stats.pruned,
                new.stats.minimized,
                new.stats.memo_hits,
                new.rows[0].literals,
                new.rows[1].literals,
            );
            let id = format!("{name}/{ff_name}");
            group.bench_with_input(BenchmarkId::new("baseline", &id), &spec, |b, s| {
                b.iter(|| auto_assign_baseline(s, ff, Map::Sop, &mut |_, _| {}).unwrap())
            });
            group.bench_with_input(BenchmarkId::new("search", &id), &spec, |b, s| {
                b.iter(|| auto_assign(s, ff, Map::Sop, &mut |_, _| {}).unwrap())
            });
        }
    }
    group.finish();
}

fn primes(c: &mut Criterion) {
    let spec = load(include_str!("../tests/fixtures/charger.detent"));
    let design = synthesize(&spec, &Encoding::binary(spec.n_states), FlipFlop::D, false).unwrap();
    let functions: Vec<_> = design
        .functions
        .iter()
        .filter(|f| f.name.starts_with('D'))
        .map(|f| {
            let (on, dc) = f.minterms.clone().expect("12 variables are tabulated");
            let cubes: Vec<Cube> = f.on_cubes.iter().chain(&f.dc_cubes).copied().collect();
            (f.vars.len(), on, dc, cubes)
        })
        .collect();
    for (n, on, dc, cubes) in &functions {
        assert_eq!(primes_from_cubes(cubes), Some(prime_implicants(*n, on, dc)));
    }
    let mut group = c.benchmark_group("primes");
    group.sample_size(10);
    group.bench_function("minterms/charger9_d", |b| {
        b.iter(|| {
            for (n, on, dc, _) in &functions {
                std::hint::black_box(prime_implicants(*n, on, dc));
            }
        })
    });
    group.bench_function("cubes/charger9_d", |b| {
        b.iter(|| {
            for (_, _, _, cubes) in &functions {
                std::hint::black_box(primes_from_cubes(cubes));
            }
        })
    });
    group.finish();
}

criterion_group!(benches, search, primes);
criterion_main!(benches);
