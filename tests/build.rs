//! Two jobs for the tests of this crate:
//!
//! - Compiles the committed generated C of `tests/c/specs/bilge_pump.detent` (in
//!   `tests/c/ffi/`) into a static library, so the FFI test can drive it from Rust.
//!   The test `ffi_files_are_fresh` keeps those files equal to what `gen c` writes.
//! - Writes the differential-test machines into `OUT_DIR`: random specs (fixed seeds)
//!   from `src/gen.rs`, their `gen rust` output in both dispatch styles, inline and
//!   file-form macro copies, and per-form runners that drive a machine over a trace.

#[path = "src/gen.rs"]
#[allow(dead_code)]
mod gen;

use detent_compiler::driver::check_source;
use detent_compiler::emit::rust::{generate_file, module_name};
use detent_compiler::model::Machine;
use detent_compiler::syntax::ast::DispatchStyle;
use std::fmt::Write;
use std::path::PathBuf;

/// Seeds per configuration.
const SEEDS: u64 = 8;

fn main() {
    compile_c_ffi();
    write_differential_machines();
}

fn compile_c_ffi() {
    println!("cargo:rerun-if-changed=c/ffi/bilge_pump.c");
    println!("cargo:rerun-if-changed=c/ffi/bilge_pump.h");
    cc::Build::new()
        .file("c/ffi/bilge_pump.c")
        .include("c/ffi")
        .std("c99")
        .flag_if_supported("-Wall")
        .flag_if_supported("-Wextra")
        .flag_if_supported("-pedantic")
        .warnings_into_errors(true)
        .compile("detent_c_ffi");
}

fn write_differential_machines() {
    println!("cargo:rerun-if-changed=src/gen.rs");
    println!("cargo:rerun-if-changed=build.rs");
    // A soak run (scripts/soak.sh) asks for this many random machines in all; the Rust
    // forms of the extra ones are `gen rust` table and match only (the macros expand the
    // same generator), compiled into the differential test.
    println!("cargo:rerun-if-env-changed=DETENT_SOAK_MACHINES");
    // One crate of 10,000 machines in two forms does not fit in 24 GiB for rustc:
    // `DETENT_SOAK_CHUNK=k/n` compiles only the soak machines whose number is k modulo
    // n (scripts/soak.sh builds and runs the chunks one after the other).
    println!("cargo:rerun-if-env-changed=DETENT_SOAK_CHUNK");
    let chunk: (u64, u64) = std::env::var("DETENT_SOAK_CHUNK").map_or((0, 1), |v| {
        v.split_once('/')
            .and_then(|(k, n)| Some((k.trim().parse().ok()?, n.trim().parse().ok()?)))
            .filter(|&(k, n)| k < n)
            .unwrap_or_else(|| panic!("DETENT_SOAK_CHUNK must be k/n with k < n, not `{v}`"))
    });
    let soak: Option<u64> =
        std::env::var("DETENT_SOAK_MACHINES")
            .ok()
            .map(|v| match v.trim().parse::<u64>() {
                Ok(n) if n > 0 => n,
                _ => panic!("DETENT_SOAK_MACHINES must be a positive number, not `{v}`"),
            });
    let out = PathBuf::from(std::env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    let configs = [
        gen::GenConfig::default(),
        gen::GenConfig {
            events: 0,
            ..gen::GenConfig::default()
        },
        gen::GenConfig {
            states: (8, 20),
            events: 5,
            inputs: 4,
            outputs: 10,
            actions: 4,
            ..gen::GenConfig::default()
        },
        // Past `NUMERIC_TABLE_CELLS` (1,024 cells): the table style writes its tables as
        // numbers and turns target numbers into states in `step`.
        gen::GenConfig {
            states: (130, 160),
            events: 8,
            inputs: 3,
            outputs: 4,
            actions: 3,
            ..gen::GenConfig::default()
        },
    ];
    // Timeouts (issue 19) and counters (issue 20): the configurations all the
    // differential suites share.
    let timed = gen::timed_configs();
    let counted = gen::counter_configs();
    let mut all = String::new();
    let mut index = String::from(
        "/// Every differential case: (name, spec, runners).\npub const CASES: &[Case] = &[\n",
    );
    let mut specs: Vec<(String, String)> = Vec::new();
    // (name, spec) of the soak machines: table and match forms only.
    let mut soak_specs: Vec<(String, String)> = Vec::new();
    for (ci, cfg) in configs.iter().enumerate() {
        // The big machines cost the most to build: two seeds of them.
        let seeds = if cfg.states.0 > 100 { 2 } else { SEEDS };
        for k in 0..seeds {
            let seed = 1000 + k * 10 + ci as u64;
            specs.push((format!("s{seed}"), gen::random_spec(seed, cfg)));
        }
    }
    for (ci, cfg) in timed.iter().enumerate() {
        for k in 0..5 {
            let seed = 5000 + k * 10 + ci as u64;
            specs.push((format!("t{seed}"), gen::random_spec(seed, cfg)));
        }
    }
    for (ci, cfg) in counted.iter().enumerate() {
        for k in 0..5 {
            let seed = 7000 + k * 10 + ci as u64;
            specs.push((format!("c{seed}"), gen::random_spec(seed, cfg)));
        }
    }
    if let Some(n) = soak {
        // The small configurations only (the big ones take minutes per machine to
        // build), timed and counting ones among them.
        let small: Vec<&gen::GenConfig> = configs[..3]
            .iter()
            .chain(timed[..2].iter())
            .chain(counted[..2].iter())
            .collect();
        // Machines one build compiles; past it, rustc's memory grows past what a
        // small machine has (10,000 machines in two forms took more than 24 GiB, so
        // more than 2.4 MB each; 1,000 fit).
        const MAX_SOAK_PER_BUILD: u64 = 2_000;
        let in_build = n.div_ceil(chunk.1);
        assert!(
            in_build <= MAX_SOAK_PER_BUILD,
            "DETENT_SOAK_MACHINES={n} in chunk {}/{} compiles {in_build} machines in one build, \
             more than {MAX_SOAK_PER_BUILD}; set DETENT_SOAK_CHUNK=k/n with n at least {} \
             (scripts/soak.sh does)",
            chunk.0,
            chunk.1,
            n.div_ceil(MAX_SOAK_PER_BUILD)
        );
        let per = n.div_ceil(small.len() as u64);
        let mut number = 0u64;
        for (ci, cfg) in small.iter().enumerate() {
            for k in SEEDS..per.max(SEEDS) {
                if number % chunk.1 == chunk.0 {
                    let seed = 0x50A4_0000 + k * 16 + ci as u64;
                    soak_specs.push((format!("soak{seed}"), gen::random_spec(seed, cfg)));
                }
                number += 1;
            }
        }
    }
    // The rule-lookup cases of `specs/inherit/` (preempt, else, named over `_`).
    println!("cargo:rerun-if-changed=specs/inherit");
    let mut fixed: Vec<PathBuf> = std::fs::read_dir("specs/inherit")
        .expect("specs/inherit")
        .map(|e| e.expect("dir entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "detent"))
        .collect();
    fixed.sort();
    for p in fixed {
        println!("cargo:rerun-if-changed={}", p.display());
        let stem = p.file_stem().expect("stem").to_string_lossy().into_owned();
        specs.push((
            format!("inherit_{stem}"),
            std::fs::read_to_string(&p).expect("read spec"),
        ));
    }
    {
        let all_specs = specs
            .into_iter()
            .map(|(c, s)| (c, s, true))
            .chain(soak_specs.into_iter().map(|(c, s)| (c, s, false)));
        for (case, spec, macros) in all_specs {
            let report = check_source("random.detent", &spec);
            assert!(
                !report.has_errors(),
                "generator made a spec with errors:\n{spec}"
            );
            let m = report
                .machines
                .into_iter()
                .find_map(|m| m.machine)
                .expect("one machine");
            let spec_path = out.join(format!("{case}.detent"));
            std::fs::write(&spec_path, &spec).expect("write spec");
            for (style, suffix) in [
                (DispatchStyle::Table, "table"),
                (DispatchStyle::Match, "match"),
            ] {
                let code = generate_file(
                    &format!("{case}.detent"),
                    std::slice::from_ref(&m),
                    Some(style),
                );
                std::fs::write(out.join(format!("{case}_{suffix}.rs")), code).expect("write code");
            }
            let snake = module_name(&m);
            let _ = writeln!(all, "#[allow(deprecated)]\npub mod {case} {{");
            let _ = writeln!(all, "    pub mod table {{ include!(concat!(env!(\"OUT_DIR\"), \"/{case}_table.rs\")); }}");
            let _ = writeln!(all, "    pub mod matched {{ include!(concat!(env!(\"OUT_DIR\"), \"/{case}_match.rs\")); }}");
            let mut forms = vec![
                ("table", format!("table::{snake}")),
                ("matched", format!("matched::{snake}")),
            ];
            if macros {
                let _ = writeln!(
                    all,
                    "    pub mod inline {{ ::detent::machine! {{\n{spec}\n    }} }}"
                );
                let _ = writeln!(
                    all,
                    "    #[::detent::machine_file(file = {:?}, dispatch = \"match\")]\n    pub mod file {{}}",
                    spec_path.display().to_string()
                );
                forms.push(("inline", format!("inline::{snake}")));
                forms.push(("file", "file".to_string()));
            }
            for (form, path) in &forms {
                all.push_str(&runner(&m, form, path));
            }
            all.push_str("}\n");
            let runners = if macros {
                format!("(\"table\", {case}::run_table), (\"match\", {case}::run_matched), (\"inline macro\", {case}::run_inline), (\"file macro\", {case}::run_file)")
            } else {
                format!("(\"table\", {case}::run_table), (\"match\", {case}::run_matched)")
            };
            let _ = writeln!(
                index,
                "    Case {{ name: {case:?}, spec: {spec:?}, runners: &[{runners}] }},"
            );
        }
    }
    index.push_str("];\n");
    all.push_str(&index);
    std::fs::write(out.join("differential.rs"), all).expect("write differential.rs");

    // A machine past 256 states: `State` becomes `#[repr(u16)]`.
    // `home` in W0 alone keeps the states apart (no `equivalent_states` warning).
    let mut wide = String::from(
        "pub machine Wide {\n    events Next, Back;\n    outputs home;\n    start W0;\n",
    );
    for i in 0..300 {
        let _ = writeln!(
            wide,
            "    state W{i}{} {{ Next => W{}; Back => W{}; }}",
            if i == 0 { " emit home" } else { "" },
            (i + 1) % 300,
            (i + 299) % 300
        );
    }
    wide.push_str("}\n");
    let wide_path = out.join("wide.detent");
    std::fs::write(&wide_path, wide).expect("write wide.detent");
    std::fs::write(
        out.join("wide.rs"),
        format!(
            "#[::detent::machine_file(file = {:?})]\npub mod wide {{}}\n",
            wide_path.display().to_string()
        ),
    )
    .expect("write wide.rs");
}

/// A `Hooks` impl for the test recorder and a `run_<form>` function for one form.
fn runner(m: &Machine, form: &str, path: &str) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "    impl {path}::Hooks for crate::Recorder {{");
    for (i, input) in m.inputs.iter().enumerate() {
        let _ = writeln!(
            s,
            "        fn {}(&mut self) -> bool {{ self.input({i}) }}",
            input.name
        );
    }
    for (i, action) in m.actions.iter().enumerate() {
        let _ = writeln!(
            s,
            "        fn {}(&mut self) {{ self.action({i}) }}",
            action.name
        );
    }
    let _ = writeln!(s, "    }}");
    let outputs: Vec<String> = m.outputs.iter().map(|o| format!("o.{}", o.name)).collect();
    // The timers as `u32`s, in timer order, and `next_timeout`.
    let timers = if m.timers.is_empty() {
        "vec![]".to_string()
    } else {
        let fields: Vec<String> = detent_compiler::emit::timers::timer_names(m)
            .iter()
            .zip(&m.timers)
            .map(|(f, timer)| {
                if timer.max() > u32::from(u16::MAX) {
                    format!("t.{f}")
                } else {
                    format!("u32::from(t.{f})")
                }
            })
            .collect();
        format!(
            "{{ let t = machine.timers(); vec![{}] }}",
            fields.join(", ")
        )
    };
    // The counters as `u16`s, in declaration order.
    let counters = if m.counters.is_empty() {
        "vec![]".to_string()
    } else {
        let fields: Vec<String> = m
            .counters
            .iter()
            .map(|c| {
                if c.max > 255 {
                    format!("c.{}", c.name)
                } else {
                    format!("u16::from(c.{})", c.name)
                }
            })
            .collect();
        format!(
            "{{ let c = machine.counters(); vec![{}] }}",
            fields.join(", ")
        )
    };
    let next = if m.timers.is_empty() {
        "None"
    } else {
        "machine.next_timeout()"
    };
    let _ = writeln!(
        s,
        "    pub fn run_{form}(trace: &[(usize, Vec<bool>)]) -> Vec<crate::Observed> {{
        use {path}::{{Event, Machine}};
        let mut machine = Machine::new();
        let mut rec = crate::Recorder::default();
        let o = machine.outputs();
        let mut out = vec![crate::Observed {{ state: machine.state() as usize, outputs: vec![{outs}], rejected: false, actions: vec![], reads: vec![], timers: {timers}, next_timeout: {next}, counters: {counters} }}];
        for (e, ins) in trace {{
            rec.begin(ins);
            let (o, rejected) = match machine.step(Event::ALL[*e], &mut rec) {{
                Ok(o) => (o, false),
                Err(::detent::Rejected) => (machine.outputs(), true),
            }};
            out.push(crate::Observed {{ state: machine.state() as usize, outputs: vec![{outs}], rejected, actions: rec.take(), reads: rec.take_reads(), timers: {timers}, next_timeout: {next}, counters: {counters} }});
        }}
        out
    }}",
        outs = outputs.join(", ")
    );
    s
}
