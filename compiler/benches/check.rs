//! Criterion benchmark of the checker on large generated machines: `check_source`
//! (parse, resolve, every lint including `equivalent_states`, properties) against two
//! baselines measured in the same run on the same text: tokenizing it with
//! `proc_macro2` (the floor: every spec is lexed before anything else can happen) and
//! parsing it to the AST.
//!
//! The specs come from `scripts/gen_big_spec.py STATES 16` (the README's 10,000-state
//! figure uses the same script): every state handles all 16 events, half of them split
//! by a guard on one of four inputs, so each spec checks clean.
//!
//! `cargo bench -p detent-compiler --bench check` (about 4 minutes here), then
//! `python3 scripts/bench_ratios.py check` prints the ratios for BENCHMARKS.md.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, SamplingMode};
use detent_compiler::driver::check_source;
use detent_compiler::syntax::parse_source;
use std::path::Path;
use std::process::Command;
use std::time::Duration;

// The allocator of the `detent` binary (cli/src/main.rs), so the figures are the CLI's.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn spec(states: usize) -> String {
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("../scripts/gen_big_spec.py");
    let out = Command::new("python3")
        .arg(&script)
        .arg(states.to_string())
        .arg("16")
        .output()
        .unwrap_or_else(|e| panic!("cannot run python3 {}: {e}", script.display()));
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).expect("the generator writes UTF-8")
}

fn check(c: &mut Criterion) {
    let mut group = c.benchmark_group("check");
    group.sample_size(10);
    group.warm_up_time(Duration::from_secs(1));
    for states in [1_000usize, 10_000, 65_535] {
        let text = spec(states);
        let report = check_source("big.detent", &text);
        assert!(!report.has_errors(), "the generated spec must check clean");
        println!(
            "check n={states}: {} bytes, {} findings",
            text.len(),
            report
                .machines
                .iter()
                .map(|m| m.diagnostics.len())
                .sum::<usize>()
        );
        // One iteration per sample on the big specs (seconds each).
        group.sampling_mode(if states > 1_000 {
            SamplingMode::Flat
        } else {
            SamplingMode::Auto
        });
        group.bench_with_input(BenchmarkId::new("tokenize", states), &text, |b, t| {
            b.iter(|| std::hint::black_box(t.parse::<proc_macro2::TokenStream>().is_ok()))
        });
        group.bench_with_input(BenchmarkId::new("parse", states), &text, |b, t| {
            b.iter(|| std::hint::black_box(parse_source(t).is_ok()))
        });
        group.bench_with_input(BenchmarkId::new("check", states), &text, |b, t| {
            b.iter(|| std::hint::black_box(check_source("big.detent", t).has_errors()))
        });
    }
    group.finish();
}

criterion_group!(benches, check);
criterion_main!(benches);
