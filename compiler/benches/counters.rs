//! Criterion benchmark of what counters and deadlines cost the checker: a pump
//! controller whose stop sequence runs the motor down for 1,000 ticks, in four forms
//! measured in one run: `base` (no counter, no deadline), `counter64` (a restart
//! counter of 64 values, 0..=63, compared and incremented on every start), `deadline`
//! (`ensure !motor within 1000 ticks after Fail`, which holds to the tick) and `both`.
//! The ratios against `base` say what each costs; see BENCHMARKS.md, "Counters and
//! deadlines".
//!
//! `cargo bench -p detent-compiler --bench counters`, then
//! `python3 scripts/bench_ratios.py counters --base base` prints the ratios.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use detent_tests::resolved_machine as resolve;
use std::time::Duration;

// The allocator of the `detent` binary (cli/src/main.rs), so the figures are the CLI's.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// The pump, with or without the restart counter and the deadline.
fn pump(counter: bool, deadline: bool) -> String {
    let counters = if counter {
        "counters restarts to 63;"
    } else {
        ""
    };
    let ensure = if deadline {
        "ensure !motor within 1000 ticks after Fail;"
    } else {
        ""
    };
    let start = if counter {
        "Start if restarts < 63 => Running, do restarts += 1;
         Start if restarts == 63 => Latched;"
    } else {
        "Start => Running;"
    };
    let reset = if counter { ", do restarts = 0" } else { "" };
    format!(
        "#[allow(unreachable_state)]
        machine Pump {{
            events Tick, Start, Stop, Fail;
            outputs motor, alarm;
            timebase Tick;
            {counters}
            start Idle;
            {ensure}
            never motor && alarm;
            state Idle {{ {start} Stop | Fail | Tick => stay; }}
            state Running emit motor {{ Fail => Stopping; Stop => Idle; Start | Tick => stay; }}
            state Stopping emit motor {{
                after 1000 ticks => Idle;
                Start | Stop | Fail | Tick => stay;
            }}
            state Latched emit alarm {{ Stop => Idle{reset}; Start | Fail | Tick => stay; }}
        }}"
    )
}

fn counters(c: &mut Criterion) {
    let machines = [
        ("base", resolve(&pump(false, false))),
        ("counter64", resolve(&pump(true, false))),
        ("deadline", resolve(&pump(false, true))),
        ("both", resolve(&pump(true, true))),
    ];
    for (name, m) in &machines {
        let g = detent_compiler::configs::explore(m).expect("within the limit");
        let d = detent_compiler::check::check_machine(m);
        assert!(d.iter().all(|d| !d.is_error()), "{name}: {d:#?}");
        println!(
            "counters {name}: {} configurations, {} steps between them",
            g.configs.len(),
            g.edges.len()
        );
    }
    // The deadline holds to the tick: one tick more of run-down breaks it.
    let late = pump(true, true).replace("after 1000 ticks", "after 1001 ticks");
    let d = detent_compiler::check::check_machine(&resolve(&late));
    assert!(
        d.iter().any(|d| d.is_error()),
        "the 1,001-tick run-down is refused"
    );
    let mut group = c.benchmark_group("counters");
    group.sample_size(10);
    group.warm_up_time(Duration::from_secs(1));
    for (name, m) in &machines {
        group.bench_with_input(BenchmarkId::new(*name, "check"), m, |b, m| {
            b.iter(|| detent_compiler::check::check_machine(m))
        });
    }
    group.finish();
}

criterion_group!(benches, counters);
criterion_main!(benches);
