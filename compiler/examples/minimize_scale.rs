//! Times Hopcroft's minimization on one large random DFA, for peak-memory runs:
//!
//! ```text
//! cargo build --release -p detent-compiler --example minimize_scale
//! /usr/bin/time -v target/release/examples/minimize_scale 1000000 8 4
//! ```
//!
//! Arguments: states (default 1,000,000), symbols (8), initial labels (4), and
//! `moore` as a fourth argument to time the naive baseline instead.

use std::time::Instant;

use detent_compiler::minimize::partition::{hopcroft_with_stats, moore_refinement};
use detent_compiler::testing::dfa::random_dfa;

fn arg(args: &[String], i: usize, default: usize) -> usize {
    match args.get(i) {
        Some(a) => a.parse().unwrap_or_else(|_| {
            eprintln!("argument {i} must be a number, got {a:?}");
            std::process::exit(2)
        }),
        None => default,
    }
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let n = arg(&args, 1, 1_000_000);
    let k = arg(&args, 2, 8);
    let labels = arg(&args, 3, 4) as u32;
    let moore = args.get(4).is_some_and(|a| a == "moore");

    let t = Instant::now();
    let dfa = random_dfa(n, k, labels, 0x5EED);
    let gen = t.elapsed();

    let t = Instant::now();
    let (p, stats) = if moore {
        (moore_refinement(&dfa), None)
    } else {
        let (p, s) = hopcroft_with_stats(&dfa);
        (p, Some(s))
    };
    let run = t.elapsed();
    println!(
        "{} on {n} states x {k} symbols, {labels} labels: {} classes in {:.3} s \
         (table generated in {:.3} s)",
        if moore { "moore" } else { "hopcroft" },
        p.n_classes,
        run.as_secs_f64(),
        gen.as_secs_f64()
    );
    if let Some(s) = stats {
        println!(
            "  {} splitters, {} marks ({:.2} per k n log2 n), {} splits, {:.1} ns per mark",
            s.splitters,
            s.marks,
            s.marks as f64 / (k as f64 * n as f64 * (n as f64).log2()),
            s.splits,
            run.as_nanos() as f64 / s.marks.max(1) as f64
        );
    }
}
