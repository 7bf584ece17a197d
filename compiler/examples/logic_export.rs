//! Exports the seeded benchmark functions of `detent_compiler::testing::logic` as JSON,
//! with the exact minimizer's literal count and time for each, for
//! `tests/python/bench_sopform.py` (which times sympy's SOPform on the same functions).
//! With `--measure` it prints exact and heuristic timings per variable count instead
//! (the numbers behind `EXACT_MAX_VARS`).
//!
//! ```text
//! cargo run --release -p detent-compiler --example logic_export -- [--sizes 6,8,10] [--count 3] [--measure]
//! ```

use std::time::Instant;

use detent_compiler::logic::exact::{minimize_exact, DEFAULT_NODE_BUDGET};
use detent_compiler::logic::heuristic::minimize_heuristic;
use detent_compiler::logic::{check_cube_cover, Cover, Method};
use detent_compiler::testing::logic::{benchmark_functions, random_cube_function, Rng};

/// Seed shared with `benches/logic.rs`.
const SEED: u64 = 0xde7e_4e71;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let mut sizes = vec![6usize, 8, 10];
    let mut count = 3usize;
    let mut measure = false;
    let mut i = 0;
    while i < args.len() {
        match args[i].as_str() {
            "--sizes" if i + 1 < args.len() => {
                sizes = args[i + 1]
                    .split(',')
                    .filter_map(|s| s.trim().parse().ok())
                    .collect();
                i += 1;
            }
            "--count" if i + 1 < args.len() => {
                count = args[i + 1].parse().unwrap_or(count);
                i += 1;
            }
            "--measure" => measure = true,
            other => {
                eprintln!("unknown argument `{other}`");
                std::process::exit(2);
            }
        }
        i += 1;
    }
    let functions = benchmark_functions(SEED, &sizes, count);
    if measure {
        for f in &functions {
            let n = f.vars.len();
            let start = Instant::now();
            let r = minimize_exact(n, &f.on, &f.dc, DEFAULT_NODE_BUDGET);
            let t_exact = start.elapsed().as_secs_f64();
            let cf = f.to_cubes();
            let start = Instant::now();
            let (h, _) = minimize_heuristic(&cf.on, &cf.dc);
            let t_heur = start.elapsed().as_secs_f64();
            let lits = |c: &[detent_compiler::logic::Cube]| -> usize {
                c.iter().map(|x| x.literals()).sum()
            };
            println!(
                "n={n:2} on={:5} dc={:5} primes={:6} nodes={:6} proven={} exact: {:6} lits {:9.4}s | heuristic: {:6} lits {:9.4}s",
                f.on.len(),
                f.dc.len(),
                r.primes,
                r.nodes,
                r.proven,
                lits(&r.cubes),
                t_exact,
                lits(&h),
                t_heur
            );
        }
        let mut rng = Rng::from_state(SEED);
        for n in [20usize, 24, 32] {
            let f = random_cube_function(&mut rng, n, 60, 10, 350);
            let start = Instant::now();
            let (h, stats) = minimize_heuristic(&f.on, &f.dc);
            let t = start.elapsed().as_secs_f64();
            let cover = Cover {
                literals: h.iter().map(|c| c.literals()).sum(),
                cubes: h,
                method: Method::Heuristic,
            };
            let ok = check_cube_cover(&f, &cover).is_ok();
            let input: usize = f.on.iter().map(|c| c.literals()).sum();
            println!(
                "n={n} cubes in={} ({input} lits) out={} ({} lits) off-set cubes={} passes={} {t:.4}s valid={ok}",
                f.on.len(),
                cover.cubes.len(),
                cover.literals,
                stats.off_cubes,
                stats.passes
            );
        }
        return;
    }
    let mut out = Vec::new();
    for f in &functions {
        let n = f.vars.len();
        // Best of three runs, as the Python side does.
        let mut best = f64::MAX;
        let mut literals = 0;
        for _ in 0..3 {
            let start = Instant::now();
            let r = minimize_exact(n, &f.on, &f.dc, DEFAULT_NODE_BUDGET);
            best = best.min(start.elapsed().as_secs_f64());
            literals = r.cubes.iter().map(|c| c.literals()).sum::<usize>();
        }
        out.push(serde_json::json!({
            "vars": f.vars,
            "on": f.on,
            "dc": f.dc,
            "rust_literals": literals,
            "rust_seconds": best,
        }));
    }
    println!("{}", serde_json::Value::Array(out));
}
