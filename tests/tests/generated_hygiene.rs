//! Generated Rust hygiene (issue 8): the `gen rust` output of every example, of the
//! specs in `tests/specs/` and of seeded random machines, in both dispatch styles, is
//! clean under `cargo clippy` with `clippy::pedantic` denied, in a crate that is also
//! `#![no_std]`, `#![forbid(unsafe_code)]` and `#![deny(missing_docs)]`.
//! (`tests/tests/nostd_generated.rs` builds the examples in release and scans them for
//! panic paths; this adds clippy's pedantic group, the lint set common practice holds
//! libraries to.)
//!
//! The random machines reach what the examples do not: more than 256 states or events
//! (`u16` numbers), many outputs and actions, clocked machines, a lone negated guard,
//! timers of `after` rules.
//! The private machine of `tests/specs/blinker.detent` is not exported, which is where
//! clippy's `trivially_copy_pass_by_ref` and `unnecessary_wraps` apply (as in a firmware
//! binary that includes the generated file).

use detent_compiler::driver::check_source;
use detent_compiler::emit::rust::generate_file;
use detent_compiler::model::Machine;
use detent_compiler::syntax::ast::{DispatchStyle, Vis};
use detent_tests::gen::{random_spec, GenConfig};
use detent_tests::{spec_files, workspace_root};
use std::process::Command;

/// The machines of one spec text, which must check without errors.
fn machines_of(name: &str, text: &str) -> Vec<Machine> {
    let report = check_source(name, text);
    assert!(!report.has_errors(), "{name}");
    report
        .machines
        .into_iter()
        .filter_map(|m| m.machine)
        .collect()
}

/// `(file name, machines)` for every `.detent` file of `examples/` and `tests/specs/`.
fn spec_machines() -> Vec<(String, Vec<Machine>)> {
    let mut out = Vec::new();
    for dir in ["examples", "tests/specs"] {
        for f in spec_files(dir) {
            let name = f.file_name().unwrap().to_string_lossy().into_owned();
            let machines = machines_of(&name, &std::fs::read_to_string(&f).unwrap());
            out.push((name, machines));
        }
    }
    assert!(out.len() >= 9);
    out
}

/// Seeded random machines, shaped to reach the generator's size-dependent paths.
fn random_machines() -> Vec<(String, Vec<Machine>)> {
    let base = GenConfig::default();
    let configs = [
        // More than 256 states: `u16` state numbers, long `name` and `outputs`.
        GenConfig {
            states: (300, 300),
            events: 2,
            inputs: 1,
            outputs: 5,
            actions: 3,
            ..base.clone()
        },
        // More than 256 events: `u16` event numbers.
        GenConfig {
            states: (2, 4),
            events: 300,
            inputs: 2,
            outputs: 1,
            actions: 2,
            ..base.clone()
        },
        // Many outputs and actions (long `outputs_from` and `run_action`).
        GenConfig {
            states: (6, 8),
            events: 3,
            inputs: 4,
            outputs: 100,
            actions: 100,
            ..base.clone()
        },
        // Clocked.
        GenConfig {
            events: 0,
            policy: Some("ignore"),
            ..base.clone()
        },
        // `reject`, flat, guards that come out as `!x`.
        GenConfig {
            states: (3, 6),
            events: 4,
            inputs: 2,
            outputs: 4,
            actions: 0,
            groups: false,
            policy: Some("reject"),
            timeouts: false,
            counters: 0,
        },
        GenConfig {
            policy: Some("complete"),
            ..base.clone()
        },
        // Timeouts (issue 19): timers in states and nested groups, event-driven and
        // clocked, with and without a period.
        GenConfig {
            states: (4, 10),
            events: 3,
            timeouts: true,
            ..base.clone()
        },
        GenConfig {
            events: 0,
            timeouts: true,
            ..base.clone()
        },
        // Tiny: one event, no inputs, outputs or actions.
        GenConfig {
            states: (1, 3),
            events: 1,
            inputs: 0,
            outputs: 0,
            actions: 0,
            ..base
        },
    ];
    let mut out = Vec::new();
    for (c, cfg) in configs.iter().enumerate() {
        // The large ones once, the small ones twice.
        for seed in 0..if c < 3 { 1 } else { 2 } {
            let seed = 1000 + 10 * c as u64 + seed as u64;
            let name = format!("random{seed}");
            let machines = machines_of(&name, &random_spec(seed, cfg));
            out.push((name, machines));
        }
    }
    out
}

#[test]
fn generated_rust_is_clippy_pedantic_clean_in_a_no_std_crate() {
    let root = workspace_root();
    let dir = std::env::temp_dir().join(format!("detent-hygiene-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("src")).unwrap();
    std::fs::write(
        dir.join("Cargo.toml"),
        format!(
            "[package]\nname = \"hygiene\"\nversion = \"0.0.0\"\nedition = \"2021\"\npublish = false\n\n[dependencies]\ndetent = {{ path = {:?} }}\n\n[workspace]\n",
            root.join("runtime").display().to_string()
        ),
    )
    .unwrap();
    let mut lib = String::from(
        "//! Generated code under the strictest lints.\n#![no_std]\n#![forbid(unsafe_code)]\n#![deny(missing_docs)]\n#![deny(clippy::pedantic)]\n#![deny(warnings)]\n\n",
    );
    let mut modules = 0;
    for (name, machines) in spec_machines().into_iter().chain(random_machines()) {
        for (tag, style) in [
            ("table", DispatchStyle::Table),
            ("matched", DispatchStyle::Match),
        ] {
            let stem = name.trim_end_matches(".detent");
            let module = format!("{stem}_{tag}");
            std::fs::write(
                dir.join("src").join(format!("{module}.rs")),
                generate_file(&name, &machines, Some(style)),
            )
            .unwrap();
            // A private machine's items are used by nothing outside its module: that
            // is rustc's `dead_code`, not a clippy finding.
            let allow = if machines.iter().any(|m| m.vis != Vis::Pub) {
                "#[allow(dead_code)]\n"
            } else {
                ""
            };
            lib.push_str(&format!(
                "/// `{name}`, {tag} dispatch.\n{allow}pub mod {module};\n"
            ));
            modules += 1;
        }
    }
    std::fs::write(dir.join("src").join("lib.rs"), lib).unwrap();
    // Its own target folder: the workspace's is locked by the running test.
    let out = Command::new(std::env::var("CARGO").unwrap_or_else(|_| "cargo".into()))
        .args([
            "clippy",
            "--quiet",
            "--offline",
            "--",
            "-D",
            "warnings",
            "-D",
            "clippy::pedantic",
        ])
        .current_dir(&dir)
        .env("CARGO_TARGET_DIR", dir.join("target"))
        .output()
        .expect("cargo clippy runs");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        out.status.success(),
        "clippy found something in the generated Rust:\n{stderr}"
    );
    assert!(!stderr.contains("warning"), "{stderr}");
    println!("generated hygiene: {modules} generated modules clean under clippy::pedantic, no_std, forbid(unsafe_code), deny(missing_docs)");
    let _ = std::fs::remove_dir_all(&dir);
}
