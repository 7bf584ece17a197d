//! Machines built from a grammar (`detent_fuzz::gen`), so nearly every input is a valid
//! spec: it must check with no error (a `property` error only when the builder wrote a
//! property), then goes through minimize, equiv, tour, logic synthesis and every emitter
//! (Rust table and match, C, Verilog module and testbench, JavaScript, DOT, SVG).
#![no_main]

use arbitrary::Unstructured;
use detent_compiler::diag::Lint;
use detent_compiler::driver::check_source;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let mut u = Unstructured::new(data);
    let built = detent_fuzz::gen::build(&mut u);
    let report = check_source("structured.detent", &built.text);
    let errors: Vec<String> = report
        .diagnostics()
        .filter(|d| d.is_error() && !(built.has_property && d.lint == Lint::Property))
        .map(|d| format!("{:?}: {}", d.lint, d.message))
        .collect();
    assert!(
        errors.is_empty(),
        "a built spec has errors {errors:?}:\n{}",
        built.text
    );
    if report.has_errors() {
        return;
    }
    let depth = detent_fuzz::Depth {
        code: true,
        logic: Some((built.encoding, built.flip_flop)),
    };
    for m in report.machines.iter().filter_map(|r| r.machine.as_ref()) {
        detent_fuzz::exercise_machine(m, depth);
    }
});
