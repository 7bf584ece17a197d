//! Runs one (size, form) of the dispatch benchmark over its event buffer, for counting
//! instructions and simulated branch misses under valgrind (no hardware counters on
//! the benchmark machine):
//!
//! ```text
//! cargo build --release -p detent-bench --example dispatch_one
//! valgrind --tool=cachegrind --cache-sim=no --branch-sim=yes \
//!     target/release/examples/dispatch_one small table 20
//! ```
//!
//! Arguments: size (`small`, `medium`, `large`), form (`hand`, `table`, `matched`),
//! passes (default 20). Prints the action checksum, so the run cannot be optimized out.

use detent_bench::{event_buffer, random_events, run, Variant, BENCH_EVENTS, BENCH_SEED};

fn passes<V: Variant>(events: usize, inputs: usize, n: usize) -> u32 {
    let buffer = event_buffer::<V>(&random_events(BENCH_SEED, events, inputs, BENCH_EVENTS));
    (0..n).fold(0, |acc, _| acc ^ run::<V>(std::hint::black_box(&buffer)))
}

fn main() {
    use detent_bench::{large, medium, small};
    let args: Vec<String> = std::env::args().collect();
    let size = args.get(1).map_or("small", String::as_str);
    let form = args.get(2).map_or("table", String::as_str);
    let n = args.get(3).and_then(|n| n.parse().ok()).unwrap_or(20);
    let sum = match (size, form) {
        ("small", "hand") => passes::<small::hand::V>(small::EVENTS, small::INPUTS, n),
        ("small", "table") => passes::<small::table::V>(small::EVENTS, small::INPUTS, n),
        ("small", "matched") => passes::<small::matched::V>(small::EVENTS, small::INPUTS, n),
        ("medium", "hand") => passes::<medium::hand::V>(medium::EVENTS, medium::INPUTS, n),
        ("medium", "table") => passes::<medium::table::V>(medium::EVENTS, medium::INPUTS, n),
        ("medium", "matched") => passes::<medium::matched::V>(medium::EVENTS, medium::INPUTS, n),
        ("large", "hand") => passes::<large::hand::V>(large::EVENTS, large::INPUTS, n),
        ("large", "table") => passes::<large::table::V>(large::EVENTS, large::INPUTS, n),
        ("large", "matched") => passes::<large::matched::V>(large::EVENTS, large::INPUTS, n),
        _ => {
            eprintln!("usage: dispatch_one small|medium|large hand|table|matched [passes]");
            std::process::exit(2);
        }
    };
    println!("{size} {form}: {n} passes of {BENCH_EVENTS} events, checksum {sum:#x}");
}
