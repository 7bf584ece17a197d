//! Criterion benchmark of the analyses of a machine with a timer: the same pump
//! controller with a 30 s priming timeout at a 1 ms time base (30,000 ticks, about
//! 30,000 configurations of the priming state) against a 30-tick timeout (30
//! configurations), in one run, for the checker (every lint and the property), the
//! minimizer and the tour. The ratios say what exact analysis over configurations
//! costs as a timeout grows; see BENCHMARKS.md, "Timers".
//!
//! `cargo bench -p detent-compiler --bench timed`, then
//! `python3 scripts/bench_ratios.py timed --base ticks30` prints the ratios.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use detent_tests::resolved_machine as resolve;
use std::time::Duration;

// The allocator of the `detent` binary (cli/src/main.rs), so the figures are the CLI's.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// The pump controller with the given time base and priming timeout.
fn pump(timebase: &str, timeout: &str) -> String {
    format!(
        "machine Pump {{
            events Tick, Start, Stop, Primed;
            inputs pressure_ok;
            outputs motor, alarm;
            {timebase}
            start Idle;
            never motor && alarm;
            recover to Idle;
            state Idle {{ Start => Priming; Stop | Primed | Tick => stay; }}
            state Priming emit motor {{
                after {timeout} => Fault;
                Primed if pressure_ok => Running;
                Primed if !pressure_ok => stay;
                Stop => Idle;
                Start | Tick => stay;
            }}
            state Running emit motor {{ Stop => Idle; Start | Primed | Tick => stay; }}
            state Fault emit alarm {{ Stop => Idle; Start | Primed | Tick => stay; }}
        }}"
    )
}

fn timed(c: &mut Criterion) {
    let machines = [
        ("ticks30", resolve(&pump("timebase Tick;", "30 ticks"))),
        ("ms30000", resolve(&pump("timebase Tick 1 ms;", "30 s"))),
    ];
    for (name, m) in &machines {
        let g = detent_compiler::configs::explore(m).expect("within the limit");
        let d = detent_compiler::check::check_machine(m);
        assert!(d.iter().all(|d| !d.is_error()), "{d:#?}");
        let t = detent_compiler::tour::tour(m);
        assert_eq!(t.covers, t.transitions);
        println!(
            "timed {name}: {} configurations, {} steps between them, tour {} steps",
            g.configs.len(),
            g.edges.len(),
            t.len_steps()
        );
    }
    let mut group = c.benchmark_group("timed");
    group.sample_size(10);
    group.warm_up_time(Duration::from_secs(1));
    for (name, m) in &machines {
        group.bench_with_input(BenchmarkId::new(*name, "check"), m, |b, m| {
            b.iter(|| detent_compiler::check::check_machine(m))
        });
        group.bench_with_input(BenchmarkId::new(*name, "minimize"), m, |b, m| {
            b.iter(|| detent_compiler::minimize::minimize(m))
        });
        group.bench_with_input(BenchmarkId::new(*name, "tour"), m, |b, m| {
            b.iter(|| detent_compiler::tour::tour(m))
        });
        group.bench_with_input(BenchmarkId::new(*name, "explore"), m, |b, m| {
            b.iter(|| detent_compiler::configs::explore(m).map(|g| g.configs.len()))
        });
    }
    group.finish();
}

criterion_group!(benches, timed);
criterion_main!(benches);
