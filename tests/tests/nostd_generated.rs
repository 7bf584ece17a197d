//! The generated Rust of every example spec, in both dispatch styles, builds in a
//! `#![no_std] #![forbid(unsafe_code)] #![deny(missing_docs)]` crate in release, and no
//! panic machinery is reachable from `step`, `restore`, `outputs` or `State::name`
//! (the harness of `detent_tests::nostd`: release assembly scanned for panic symbols).

use detent_compiler::driver::check_source;
use detent_compiler::emit::rust::{generate_file, module_name};
use detent_compiler::model::Machine;
use detent_compiler::syntax::ast::{DispatchStyle, Vis};
use detent_tests::nostd::build_nostd_and_check;
use detent_tests::workspace_root;
use std::fmt::Write;
use std::path::PathBuf;

/// Spec files: this crate's `specs/` and every `.detent` under `examples/`.
fn spec_files() -> Vec<PathBuf> {
    let root = workspace_root();
    let mut files = Vec::new();
    let mut dirs = vec![root.join("tests").join("specs"), root.join("examples")];
    while let Some(dir) = dirs.pop() {
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        for entry in entries.flatten() {
            let path = entry.path();
            if path.is_dir() && !path.ends_with("target") {
                dirs.push(path);
            } else if path.extension().is_some_and(|e| e == "detent") {
                files.push(path);
            }
        }
    }
    files.sort();
    files
}

/// Concrete hooks and `#[inline(never)] pub fn` entry points for one machine.
fn entry_points(m: &Machine, tag: &str) -> String {
    let snake = module_name(m);
    let raw = if m.states.len() <= 256 { "u8" } else { "u16" };
    let mut s = String::new();
    let _ = writeln!(
        s,
        "/// Concrete hooks for `{snake}`.\npub struct Host{tag} {{\n    /// Input levels, bit i = input i.\n    pub levels: u64,\n    /// Actions run.\n    pub count: u32,\n}}"
    );
    let _ = writeln!(s, "impl {snake}::Hooks for Host{tag} {{");
    for (i, input) in m.inputs.iter().enumerate() {
        let _ = writeln!(
            s,
            "    fn {}(&mut self) -> bool {{ (self.levels >> {}) & 1 != 0 }}",
            input.name,
            i % 64
        );
    }
    for action in &m.actions {
        let _ = writeln!(
            s,
            "    fn {}(&mut self) {{ self.count = self.count.wrapping_add(1); }}",
            action.name
        );
    }
    let _ = writeln!(s, "}}");
    let _ = writeln!(
        s,
        "/// Entry: step.\n#[inline(never)]\npub fn step_entry{tag}(m: &mut {snake}::Machine, e: {snake}::Event, h: &mut Host{tag}) -> Result<{snake}::Outputs, detent::Rejected> {{ m.step(e, h) }}\n\
         /// Entry: restore.\n#[inline(never)]\npub fn restore_entry{tag}(raw: {raw}) -> Result<{snake}::Machine, detent::InvalidState> {{ {snake}::Machine::restore(raw) }}\n\
         /// Entry: outputs.\n#[inline(never)]\npub fn outputs_entry{tag}(m: &{snake}::Machine) -> {snake}::Outputs {{ m.outputs() }}\n\
         /// Entry: state name.\n#[inline(never)]\npub fn name_entry{tag}(s: {snake}::State) -> &'static str {{ s.name() }}"
    );
    s
}

#[test]
fn generated_code_is_no_std_and_panic_free_in_both_styles() {
    let files = spec_files();
    assert!(files.len() >= 3, "spec files: {files:?}");
    let mut checked = 0;
    for file in &files {
        let text = std::fs::read_to_string(file).unwrap();
        let report = check_source(&file.display().to_string(), &text);
        assert!(!report.has_errors(), "{} has errors", file.display());
        let mut machines: Vec<Machine> = report
            .machines
            .into_iter()
            .filter_map(|m| m.machine)
            .collect();
        for m in &mut machines {
            m.vis = Vis::Pub;
        }
        for (style, name) in [
            (DispatchStyle::Table, "table"),
            (DispatchStyle::Match, "match"),
        ] {
            // Warning-free too: a rustc warning in generated code is an error here.
            let mut code = String::from("#![deny(warnings)]\n");
            code.push_str(&generate_file("spec.detent", &machines, Some(style)));
            let mut roots = Vec::new();
            for (i, m) in machines.iter().enumerate() {
                code.push_str(&entry_points(m, &i.to_string()));
                for entry in ["step_entry", "restore_entry", "outputs_entry", "name_entry"] {
                    // `outputs` of a machine without outputs returns a zero-sized
                    // value: an empty function the optimizer may fold into another.
                    if entry == "outputs_entry" && m.outputs.is_empty() {
                        continue;
                    }
                    roots.push(format!("{entry}{i}"));
                }
            }
            let stem = file
                .file_stem()
                .unwrap()
                .to_string_lossy()
                .replace('-', "_");
            let crate_name = format!("nostd_{stem}_{name}");
            let built = build_nostd_and_check(&crate_name, &code)
                .unwrap_or_else(|e| panic!("{} ({name}): {e}", file.display()));
            let roots: Vec<&str> = roots.iter().map(String::as_str).collect();
            for root in &roots {
                assert!(
                    built.defines(root),
                    "{root} missing: {:?}",
                    built.functions()
                );
            }
            built
                .check_entry_points(&roots)
                .unwrap_or_else(|e| panic!("{} ({name}): {e}", file.display()));
            checked += 1;
        }
    }
    assert_eq!(checked, files.len() * 2);
}

#[test]
fn generated_code_builds_with_every_runtime_feature() {
    // defmt derives and the per-transition trace, serde derives: the generated enums
    // and structs go through the runtime's `__derive_extras!`/`__trace_transition!`.
    let path = workspace_root().join("tests/specs/door_lock.detent");
    let text = std::fs::read_to_string(&path).unwrap();
    let report = check_source("door_lock.detent", &text);
    let machines: Vec<Machine> = report
        .machines
        .into_iter()
        .filter_map(|m| m.machine)
        .collect();
    for (style, name) in [
        (DispatchStyle::Table, "table"),
        (DispatchStyle::Match, "match"),
    ] {
        let mut code = generate_file("door_lock.detent", &machines, Some(style));
        code.push_str(&entry_points(&machines[0], "0"));
        let options = detent_tests::nostd::NoStdOptions {
            detent_features: vec!["defmt-trace".into(), "serde".into()],
            env: vec![("DEFMT_LOG".into(), "trace".into())],
            ..Default::default()
        };
        let built = detent_tests::nostd::build_nostd_and_check_with(
            &format!("nostd_features_{name}"),
            &code,
            &options,
        )
        .unwrap_or_else(|e| panic!("{name}: {e}"));
        assert!(built.defines("step_entry0"), "{:?}", built.functions());
    }
}
