//! Where the structured fuzz target spends its time: runs it (uninstrumented) on the
//! files given, or on `N` seeded random inputs, and prints each stage's share.
//!
//! ```text
//! cd fuzz && cargo run --release --example stage_times -- 2000          # random inputs
//! cd fuzz && cargo run --release --example stage_times -- corpus/structured/*
//! ```

use std::collections::BTreeMap;
use std::time::{Duration, Instant};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let inputs: Vec<Vec<u8>> = match args.as_slice() {
        [n] if n.parse::<usize>().is_ok() => {
            let mut rng = detent_fuzz::gen::Rng::new(24);
            (0..n.parse::<usize>().unwrap_or(0))
                .map(|_| {
                    let len = rng.range(16, 600);
                    (0..len).map(|_| rng.next_u64() as u8).collect()
                })
                .collect()
        }
        files => files.iter().filter_map(|f| std::fs::read(f).ok()).collect(),
    };
    let mut times: BTreeMap<&'static str, (Duration, Duration, usize)> = BTreeMap::new();
    let mut slowest = (Duration::ZERO, 0usize);
    let all = Instant::now();
    for (i, data) in inputs.iter().enumerate() {
        let one = Instant::now();
        let build = Instant::now();
        let _ = detent_fuzz::build_structured(data);
        add(&mut times, "build (generator)", build.elapsed());
        let ok = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            detent_fuzz::exercise_structured(data, &mut |name, run| {
                let t = Instant::now();
                run();
                add(&mut times, name, t.elapsed());
            })
        }));
        if ok.is_err() {
            let s = detent_fuzz::build_structured(data);
            eprintln!("input #{i} failed; its spec:\n{}", s.built.text);
            std::process::exit(1);
        }
        if one.elapsed() > slowest.0 {
            slowest = (one.elapsed(), i);
        }
    }
    let total = all.elapsed();
    let n = inputs.len().max(1);
    println!(
        "{} inputs in {:.2} s: {:.3} ms per input; slowest input #{} {:.1} ms",
        inputs.len(),
        total.as_secs_f64(),
        total.as_secs_f64() * 1e3 / n as f64,
        slowest.1,
        slowest.0.as_secs_f64() * 1e3
    );
    let mut rows: Vec<_> = times.into_iter().collect();
    rows.sort_by(|a, b| b.1 .0.cmp(&a.1 .0));
    println!(
        "{:<22} {:>8} {:>6} {:>10} {:>10}",
        "stage", "runs", "share", "mean ms", "max ms"
    );
    for (name, (sum, max, runs)) in rows {
        println!(
            "{:<22} {:>8} {:>5.1}% {:>10.3} {:>10.2}",
            name,
            runs,
            100.0 * sum.as_secs_f64() / total.as_secs_f64(),
            sum.as_secs_f64() * 1e3 / runs.max(1) as f64,
            max.as_secs_f64() * 1e3
        );
    }
}

fn add(
    times: &mut BTreeMap<&'static str, (Duration, Duration, usize)>,
    name: &'static str,
    d: Duration,
) {
    let e = times.entry(name).or_default();
    e.0 += d;
    e.1 = e.1.max(d);
    e.2 += 1;
}
