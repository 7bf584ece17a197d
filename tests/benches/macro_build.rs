//! What `detent::machine!` costs a user's `cargo build`: a debug build of a one-file
//! library crate that expands a 100- or 1,000-state machine, against the same crate
//! empty (the baseline), and against the same crate holding the `detent gen rust`
//! output of the same machine instead of the macro call (so the difference between
//! the two is the expansion itself, and the rest is rustc compiling the generated
//! code, which any hand-written machine of that size would also cost).
//!
//! Each crate depends on the workspace's `detent` runtime (which re-exports the
//! macros) and sets `[profile.dev.build-override] opt-level = 3`, as the workspace
//! and the README recommend for procedural macros. Dependencies are built once before
//! measuring; each measured iteration touches `src/lib.rs` and runs
//! `cargo build --offline` with `CARGO_INCREMENTAL=0`, so only the leaf crate rebuilds,
//! and fully (an incremental rebuild of unchanged generated items would cost less than
//! any real change does). All variants share one target directory under
//! `target/macro-build-bench`.
//!
//! `cargo bench -p detent-tests --bench macro_build` (about 5 minutes here), then
//! `python3 scripts/bench_ratios.py macro_build --base empty`.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, SamplingMode};
use detent_compiler::driver::check_source;
use detent_compiler::emit::rust::generate_file;
use detent_compiler::syntax::ast::DispatchStyle;
use detent_tests::workspace_root;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

/// A ring of states with guards, Moore and Mealy outputs and actions, in which every
/// state handles every event (the spec checks clean). Invented: a carousel of sample
/// trays in a kiln's loading bay.
fn spec(states: usize) -> String {
    let mut s = String::from(
        "pub machine Carousel {\n    events Next, Back, Reset, Hold;\n    inputs fast, armed;\n    \
         outputs even, odd, pulse;\n    actions step_done, reset_done;\n    start S0;\n",
    );
    for i in 0..states {
        let (next, skip, prev) = (
            (i + 1) % states,
            (i + 2) % states,
            (i + states - 1) % states,
        );
        let emit = if i % 2 == 0 { "even" } else { "odd" };
        let _ = write!(
            s,
            "    state S{i} emit {emit} {{\n        Next if fast => S{skip}, do step_done;\n        \
             Next if !fast => S{next}, emit pulse;\n        Back => S{prev};\n        \
             Reset if armed => S0, do reset_done;\n        Reset if !armed => stay;\n        \
             Hold => stay;\n    }}\n"
        );
    }
    s.push_str("}\n");
    s
}

struct Crate {
    dir: PathBuf,
}

impl Crate {
    fn new(root: &Path, name: &str, lib: &str, extra: &[(&str, String)]) -> Crate {
        let dir = root.join(name);
        std::fs::create_dir_all(dir.join("src")).unwrap();
        let runtime = workspace_root().join("runtime");
        std::fs::write(
            dir.join("Cargo.toml"),
            format!(
                "[package]\nname = \"{name}\"\nversion = \"0.0.0\"\nedition = \"2021\"\n\
                 publish = false\n\n[dependencies]\ndetent = {{ path = {:?} }}\n\n\
                 [profile.dev.build-override]\nopt-level = 3\n\n[workspace]\n",
                runtime.display().to_string()
            ),
        )
        .unwrap();
        std::fs::copy(workspace_root().join("Cargo.lock"), dir.join("Cargo.lock")).unwrap();
        std::fs::write(dir.join("src/lib.rs"), lib).unwrap();
        for (file, text) in extra {
            std::fs::write(dir.join("src").join(file), text).unwrap();
        }
        Crate { dir }
    }

    /// One leaf rebuild: touch `lib.rs` (rewrite it: a new mtime), then build.
    fn build(&self, target: &Path) -> Duration {
        let lib = self.dir.join("src/lib.rs");
        let text = std::fs::read(&lib).unwrap();
        std::fs::write(&lib, text).unwrap();
        let start = Instant::now();
        let out = Command::new(env!("CARGO"))
            .args(["build", "--offline", "-q", "--manifest-path"])
            .arg(self.dir.join("Cargo.toml"))
            .env("CARGO_TARGET_DIR", target)
            // A full compile of the leaf crate each time (what a clean or CI build pays),
            // not an incremental one that reuses the last build's unchanged items.
            .env("CARGO_INCREMENTAL", "0")
            .output()
            .expect("cannot run cargo");
        let took = start.elapsed();
        assert!(
            out.status.success(),
            "cargo build of {} failed:\n{}",
            self.dir.display(),
            String::from_utf8_lossy(&out.stderr)
        );
        took
    }
}

fn macro_build(c: &mut Criterion) {
    let root = workspace_root().join("target/macro-build-bench");
    let crates_dir = root.join("crates");
    let target = root.join("target");
    let _ = std::fs::remove_dir_all(&crates_dir);
    let mut variants = vec![(
        "empty".to_string(),
        0usize,
        Crate::new(
            &crates_dir,
            "bench_empty",
            "//! Baseline: no machine.\n",
            &[],
        ),
    )];
    for states in [100usize, 1_000] {
        let text = spec(states);
        let report = check_source("carousel.detent", &text);
        assert!(!report.has_errors(), "the bench spec must check clean");
        let machines: Vec<_> = report
            .machines
            .into_iter()
            .filter_map(|m| m.machine)
            .collect();
        for (tag, style) in [
            ("table", DispatchStyle::Table),
            ("match", DispatchStyle::Match),
        ] {
            variants.push((
                format!("macro_{tag}"),
                states,
                Crate::new(
                    &crates_dir,
                    &format!("bench_macro_{tag}_{states}"),
                    &format!(
                        "//! The machine through the macro.\ndetent::machine! {{\n#[dispatch({tag})]\n{text}}}\n"
                    ),
                    &[],
                ),
            ));
            variants.push((
                format!("generated_{tag}"),
                states,
                Crate::new(
                    &crates_dir,
                    &format!("bench_generated_{tag}_{states}"),
                    "//! The machine as `detent gen rust` writes it.\npub mod carousel;\n",
                    &[(
                        "carousel.rs",
                        generate_file("carousel.detent", &machines, Some(style)),
                    )],
                ),
            ));
        }
    }
    // Dependencies (and each crate once), outside the measurement.
    for (_, _, krate) in &variants {
        krate.build(&target);
    }
    let mut group = c.benchmark_group("macro_build");
    group.sample_size(10);
    group.sampling_mode(SamplingMode::Flat);
    group.warm_up_time(Duration::from_millis(1));
    group.measurement_time(Duration::from_secs(1));
    for (name, states, krate) in &variants {
        let params: Vec<usize> = if *states == 0 {
            vec![100, 1_000]
        } else {
            vec![*states]
        };
        for p in params {
            group.bench_function(BenchmarkId::new(name.as_str(), p), |b| {
                b.iter_custom(|iters| (0..iters).map(|_| krate.build(&target)).sum())
            });
        }
    }
    group.finish();
}

criterion_group!(benches, macro_build);
criterion_main!(benches);
