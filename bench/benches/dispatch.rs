//! The dispatch benchmark: ns per event of `step` for detent's table and match styles
//! and a hand-written `match` of the same machine, at 4, 50 and 1,000 states, on a
//! precomputed buffer of random events and input levels (fixed seed, so no RNG cost is
//! measured). Every step's result goes through `black_box`; each pass starts from the
//! start state, so every form does the same work.
//!
//! Two parts in one run:
//!
//! 1. criterion, one group per size (`dispatch/<size>`), the three forms back to back,
//!    throughput in events;
//! 2. an interleaved pass (`DISPATCH_ROUNDS` rounds, default 300): each round times
//!    every (size, form) once (two passes over the buffer), in a rotating order, so
//!    the forms share the machine's load; it prints per form the fastest and the median
//!    round's ns/event, and per generated form the ratio to the hand-written one of the
//!    fastest rounds and the median of the per-round ratios, with its quartiles. On a
//!    shared machine the fastest rounds are the least disturbed ones. The pass runs
//!    twice: one machine stepped back to back (each step waits for the state the last
//!    one wrote), then a bank of [`BANK`] machines with the events dealt round-robin
//!    (independent steps, as with one machine per channel).
//!
//! `cargo bench -p detent-bench --bench dispatch`; BENCHMARKS.md ("Dispatch") has the
//! results.

use criterion::{black_box, Criterion, Throughput};
use detent_bench::{
    event_buffer, random_events, run, run_bank, Variant, BANK, BENCH_EVENTS, BENCH_SEED,
};
use std::time::{Duration, Instant};

const EVENTS: usize = BENCH_EVENTS;

/// One (size, form) as something to time.
struct Case {
    size: &'static str,
    form: &'static str,
    pass: Box<dyn Fn() -> u32>,
    /// The same buffer through a bank of machines ([`run_bank`]).
    bank_pass: Box<dyn Fn() -> u32>,
}

fn case<V: Variant + 'static>(size: &'static str, events: usize, inputs: usize) -> Case {
    let buffer = event_buffer::<V>(&random_events(BENCH_SEED, events, inputs, EVENTS));
    let bank_buffer = buffer.clone();
    Case {
        size,
        form: V::FORM,
        pass: Box::new(move || run::<V>(black_box(&buffer))),
        bank_pass: Box::new(move || run_bank::<V>(black_box(&bank_buffer))),
    }
}

fn cases() -> Vec<Case> {
    use detent_bench::{large, medium, small};
    vec![
        case::<small::hand::V>("small", small::EVENTS, small::INPUTS),
        case::<small::table::V>("small", small::EVENTS, small::INPUTS),
        case::<small::matched::V>("small", small::EVENTS, small::INPUTS),
        case::<medium::hand::V>("medium", medium::EVENTS, medium::INPUTS),
        case::<medium::table::V>("medium", medium::EVENTS, medium::INPUTS),
        case::<medium::matched::V>("medium", medium::EVENTS, medium::INPUTS),
        case::<large::hand::V>("large", large::EVENTS, large::INPUTS),
        case::<large::table::V>("large", large::EVENTS, large::INPUTS),
        case::<large::matched::V>("large", large::EVENTS, large::INPUTS),
    ]
}

const SIZES: [&str; 3] = ["small", "medium", "large"];
const FORMS: [&str; 3] = ["hand", "table", "matched"];

fn criterion_part(c: &mut Criterion, cases: &[Case]) {
    for size in SIZES {
        let mut group = c.benchmark_group(format!("dispatch/{size}"));
        group.throughput(Throughput::Elements(EVENTS as u64));
        for case in cases.iter().filter(|k| k.size == size) {
            group.bench_function(case.form, |b| b.iter(|| (case.pass)()));
        }
        group.finish();
    }
}

fn quantile(sorted: &[f64], q: f64) -> f64 {
    let at = ((sorted.len() - 1) as f64 * q).round() as usize;
    sorted[at]
}

fn interleaved_part(cases: &[Case], rounds: usize, bank: bool) {
    let passes = 2;
    let pass = |case: &Case| {
        if bank {
            (case.bank_pass)()
        } else {
            (case.pass)()
        }
    };
    let mut times = vec![Vec::with_capacity(rounds); cases.len()];
    for case in cases {
        black_box(pass(case));
    }
    for round in 0..rounds {
        for k in 0..cases.len() {
            let i = (k + round) % cases.len();
            let start = Instant::now();
            for _ in 0..passes {
                black_box(pass(&cases[i]));
            }
            let ns = start.elapsed().as_nanos() as f64 / (passes * EVENTS) as f64;
            times[i].push(ns);
        }
    }
    println!();
    println!(
        "interleaved, {}: {rounds} rounds x {passes} passes x {EVENTS} events per (size, \
         form); ns/event: fastest round (median round); ratios: of the fastest rounds, then \
         the median of per-round ratios (q1-q3)",
        if bank {
            format!("a bank of {BANK} machines, events dealt round-robin")
        } else {
            "one machine stepped back to back".to_string()
        }
    );
    println!(
        "| size | hand ns/event | table ns/event | match ns/event | table / hand | match / hand |"
    );
    println!("|---|---:|---:|---:|---:|---:|");
    for size in SIZES {
        let of = |form: &str| {
            cases
                .iter()
                .position(|c| c.size == size && c.form == form)
                .expect("every form of every size")
        };
        let [h, t, m] = FORMS.map(of);
        let sorted = |i: usize| {
            let mut v = times[i].clone();
            v.sort_by(f64::total_cmp);
            v
        };
        let ns = |i: usize| {
            let v = sorted(i);
            format!("{:.2} ({:.2})", v[0], quantile(&v, 0.5))
        };
        let ratio = |i: usize| {
            let mut r: Vec<f64> = times[i].iter().zip(&times[h]).map(|(g, b)| g / b).collect();
            r.sort_by(f64::total_cmp);
            format!(
                "{:.3}x; {:.3}x ({:.2}-{:.2})",
                sorted(i)[0] / sorted(h)[0],
                quantile(&r, 0.5),
                quantile(&r, 0.25),
                quantile(&r, 0.75)
            )
        };
        println!(
            "| {size} | {} | {} | {} | {} | {} |",
            ns(h),
            ns(t),
            ns(m),
            ratio(t),
            ratio(m)
        );
    }
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let quick = args.iter().any(|a| a == "--test" || a == "--list");
    let cases = cases();
    // The forms must agree (tests/agree.rs checks it step by step); a cheap guard here
    // too: the same action checksum over the buffer.
    for size in SIZES {
        for bank in [false, true] {
            let sums: Vec<u32> = cases
                .iter()
                .filter(|c| c.size == size)
                .map(|c| if bank { (c.bank_pass)() } else { (c.pass)() })
                .collect();
            assert!(
                sums.windows(2).all(|w| w[0] == w[1]),
                "{size}: the forms disagree (bank: {bank})"
            );
        }
    }
    let mut c = Criterion::default()
        .warm_up_time(Duration::from_secs(2))
        .measurement_time(Duration::from_secs(4))
        .configure_from_args();
    criterion_part(&mut c, &cases);
    c.final_summary();
    if !quick {
        let rounds = std::env::var("DISPATCH_ROUNDS")
            .ok()
            .and_then(|r| r.parse().ok())
            .unwrap_or(300);
        interleaved_part(&cases, rounds, false);
        interleaved_part(&cases, rounds, true);
    }
}
