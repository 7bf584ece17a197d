//! Minimization benchmarks: Hopcroft against the naive Moore baseline, and against
//! regex-automata's own minimizer on the same DFAs.
//!
//! ```text
//! cargo bench -p detent-compiler --bench minimize
//! python3 scripts/plot_minimize.py      # docs/minimize-growth.svg and the tables
//! ```
//!
//! Groups:
//! - `random`: uniform random complete DFAs, 8 symbols, 4 initial labels, 2^10..2^20
//!   states. Random tables are already minimal and Moore needs only about log n
//!   rounds on them, so this is Moore's best case. `walk` is the memory-latency
//!   baseline: the same inverse lists walked with no refinement (see [`Walk`]).
//! - `chain`: a chain on symbol 0 (state i -> i+1, the last loops), the other 7 symbols
//!   loop, only the last state labelled: n distinct states and n Moore rounds, the
//!   baseline's O(k n^2) worst case.
//! - `regex`: `[01]*1[01]{N}` built by regex-automata with and without its minimizer
//!   (the difference is its minimizer's cost) against Hopcroft on the exported
//!   unminimized DFA (2^(N+1) + 3 states; the parameter in the id is the state count).
//!
//! - `quotient`: what `#[minimize]` pays per `gen rust` on machines from
//!   `scripts/gen_big_spec.py STATES 16` (python3 needed): `minimize` is one
//!   minimization (the baseline), `quotient` one minimization plus the quotient machine
//!   built directly and lowered (today's path), and `resolve_printed` the resolution of
//!   the quotient's syntax tree, the step the former path paid on top of a second
//!   minimization (it printed the quotient as a tree and resolved it).
//!
//! Sample counts are small (10, flat sampling) so the whole run stays within a few
//! minutes on two shared cores; read the results as ratios within one run.

#[path = "../tests/support/regex_export.rs"]
#[allow(dead_code)]
mod regex_export;

use std::hint::black_box;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, SamplingMode};
use detent_compiler::minimize::partition::{hopcroft, moore_refinement, Dfa};
use detent_compiler::testing::dfa::random_dfa;

const SYMBOLS: usize = 8;

fn chain(n: usize) -> Dfa {
    let mut delta = Vec::with_capacity(n * SYMBOLS);
    for s in 0..n {
        delta.push((s + 1).min(n - 1) as u32);
        delta.extend(std::iter::repeat_n(s as u32, SYMBOLS - 1));
    }
    let mut initial = vec![0; n];
    initial[n - 1] = 1;
    Dfa {
        n_states: n,
        n_symbols: SYMBOLS,
        delta,
        initial,
    }
}

/// The memory-latency baseline for the `random` group: the inverse lists of every
/// state (grouped by target, as `hopcroft` keeps them), walked once each in a random
/// order of targets, with two dependent random read-modify-writes per source (the
/// source's slot, then the slot it links to), as a mark touches a state's slot
/// and then its block's. That is k n scanned transitions against Hopcroft's 1.14 k n
/// marks on these tables, with no refinement at all: if Hopcroft's time per mark grows
/// only because the working set leaves the caches, `hopcroft / walk` stays flat.
struct Walk {
    off: Vec<u32>,
    src: Vec<u32>,
    order: Vec<u32>,
}

impl Walk {
    fn new(d: &Dfa) -> Walk {
        let (n, k) = (d.n_states, d.n_symbols);
        let mut off = vec![0u32; n + 1];
        for &t in &d.delta {
            off[t as usize + 1] += 1;
        }
        for i in 1..=n {
            off[i] += off[i - 1];
        }
        let mut fill = off.clone();
        let mut src = vec![0u32; d.delta.len()];
        for (i, &t) in d.delta.iter().enumerate() {
            src[fill[t as usize] as usize] = (i / k) as u32;
            fill[t as usize] += 1;
        }
        // A random order of the targets: Fisher-Yates with the table's own successors
        // as the random source (they are uniform on random tables).
        let mut order: Vec<u32> = (0..n as u32).collect();
        for i in (1..n).rev() {
            let j = d.delta[i * k] as usize % (i + 1);
            order.swap(i, j);
        }
        Walk { off, src, order }
    }

    fn run(&self, slot: &mut [(u32, u32)]) -> u64 {
        let mut scanned = 0u64;
        for &t in &self.order {
            let (lo, hi) = (self.off[t as usize], self.off[t as usize + 1]);
            for &s in &self.src[lo as usize..hi as usize] {
                let (count, link) = slot[s as usize];
                slot[s as usize].0 = count.wrapping_add(1);
                let l = &mut slot[link as usize].0;
                *l = l.wrapping_add(1);
                scanned += 1;
            }
        }
        scanned
    }
}

fn bench_random(c: &mut Criterion) {
    let mut g = c.benchmark_group("random");
    g.sampling_mode(SamplingMode::Flat)
        .sample_size(10)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(2));
    for log in [10u32, 12, 14, 16, 18, 20] {
        let n = 1usize << log;
        let dfa = random_dfa(n, SYMBOLS, 4, 0x5EED + log as u64);
        g.bench_with_input(BenchmarkId::new("hopcroft", n), &dfa, |b, d| {
            b.iter(|| black_box(hopcroft(d)).n_classes)
        });
        let walk = Walk::new(&dfa);
        // Each slot links to a random other slot (a successor), as a state to its block.
        let mut slot: Vec<(u32, u32)> = (0..n).map(|s| (0, dfa.delta[s * SYMBOLS + 1])).collect();
        g.bench_with_input(BenchmarkId::new("walk", n), &walk, |b, w| {
            b.iter(|| black_box(w.run(&mut slot)))
        });
        if log <= 18 {
            g.bench_with_input(BenchmarkId::new("moore", n), &dfa, |b, d| {
                b.iter(|| black_box(moore_refinement(d)).n_classes)
            });
        }
    }
    g.finish();
}

fn bench_chain(c: &mut Criterion) {
    let mut g = c.benchmark_group("chain");
    g.sampling_mode(SamplingMode::Flat)
        .sample_size(10)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(2));
    for log in [10u32, 12, 14, 16, 18, 20] {
        let n = 1usize << log;
        let dfa = chain(n);
        g.bench_with_input(BenchmarkId::new("hopcroft", n), &dfa, |b, d| {
            b.iter(|| black_box(hopcroft(d)).n_classes)
        });
        // Moore's n rounds: about 0.3 s at 2^12 already, 16x per doubling beyond.
        if log <= 12 {
            g.bench_with_input(BenchmarkId::new("moore", n), &dfa, |b, d| {
                b.iter(|| black_box(moore_refinement(d)).n_classes)
            });
        }
    }
    g.finish();
}

fn bench_regex(c: &mut Criterion) {
    let mut g = c.benchmark_group("regex");
    g.sampling_mode(SamplingMode::Flat)
        .sample_size(10)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(2));
    // regex-automata's minimizer compares each splitter with every block, quadratic
    // in the states: about 7 s per build at N = 12 (2^13 states) here, so it runs up
    // to N = 11; for N = 14 and 16 only the unminimized build and Hopcroft run.
    for n in [8u32, 9, 10, 11, 14, 16] {
        let pattern = format!("[01]*1[01]{{{n}}}");
        let patterns = [pattern.as_str()];
        let exported = regex_export::export(&regex_export::build(&patterns, false, false));
        let states = exported.dfa.n_states;
        g.bench_with_input(BenchmarkId::new("ra_build_nomin", states), &n, |b, _| {
            b.iter(|| black_box(regex_export::build(&patterns, false, false)))
        });
        if n <= 11 {
            g.bench_with_input(BenchmarkId::new("ra_build_min", states), &n, |b, _| {
                b.iter(|| black_box(regex_export::build(&patterns, true, false)))
            });
        }
        g.bench_with_input(
            BenchmarkId::new("hopcroft_exported", states),
            &exported.dfa,
            |b, d| b.iter(|| black_box(hopcroft(d)).n_classes),
        );
    }
    g.finish();
}

fn big_spec(states: usize) -> String {
    let script =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../scripts/gen_big_spec.py");
    let out = std::process::Command::new("python3")
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

fn bench_quotient(c: &mut Criterion) {
    use detent_compiler::minimize::{machine::quotient_ast, minimize, quotient};
    let mut g = c.benchmark_group("quotient");
    g.sample_size(10);
    g.sampling_mode(SamplingMode::Flat);
    g.warm_up_time(Duration::from_secs(1));
    for states in [1_000usize, 10_000] {
        let text = big_spec(states);
        let file = detent_compiler::syntax::parse_source(&text).expect("parses");
        let (machines, errors) = detent_compiler::model::resolve_file(&file);
        assert!(errors.is_empty());
        let m = &machines[0];
        let q = quotient(m);
        println!(
            "quotient n={states}: {} classes of {} states",
            q.minimization.states_after(),
            states
        );
        let tree = quotient_ast(&q.machine);
        g.bench_function(BenchmarkId::new("minimize", states), |b| {
            b.iter(|| black_box(minimize(m).states_after()))
        });
        g.bench_function(BenchmarkId::new("quotient", states), |b| {
            b.iter(|| black_box(quotient(m).machine.states.len()))
        });
        g.bench_function(BenchmarkId::new("resolve_printed", states), |b| {
            b.iter(|| black_box(detent_compiler::model::resolve(&tree).is_ok()))
        });
    }
    g.finish();
}

criterion_group!(
    benches,
    bench_random,
    bench_chain,
    bench_regex,
    bench_quotient
);
criterion_main!(benches);
