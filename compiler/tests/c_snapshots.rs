//! Snapshot tests of the generated C, so that a change in output is seen in review.

use detent_compiler::emit::c::generate_c;

fn machine(name: &str) -> detent_compiler::model::Machine {
    let path = format!("{}/../examples/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).expect("example exists");
    let report = detent_compiler::driver::check_source(name, &text);
    assert!(!report.has_errors(), "{name} checks clean");
    report.machines.into_iter().next().unwrap().machine.unwrap()
}

#[test]
fn locker_header_and_source() {
    let files = generate_c(&machine("locker.detent"), "locker.detent");
    insta::assert_snapshot!("locker_h", files.header);
    insta::assert_snapshot!("locker_c", files.source);
}

#[test]
fn clocked_pattern_detector() {
    let files = generate_c(
        &machine("pattern_detector.detent"),
        "pattern_detector.detent",
    );
    insta::assert_snapshot!("pattern_detector_c", files.source);
}

/// Timers (issue 19): fields of the machine struct, counted on the time base with
/// corrupt values clamped, due tests before guards, the resets of each transition and
/// `_next_timeout`.
#[test]
fn timed_header_and_source() {
    let path = format!(
        "{}/../tests/specs/timed_sampled.detent",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).expect("spec exists");
    let report = detent_compiler::driver::check_source("timed_sampled.detent", &text);
    assert!(!report.has_errors(), "timed_sampled.detent checks clean");
    let m = report.machines.into_iter().next().unwrap().machine.unwrap();
    let files = generate_c(&m, "timed_sampled.detent");
    insta::assert_snapshot!("timed_sampled_h", files.header);
    insta::assert_snapshot!("timed_sampled_c", files.source);
}

/// Counters (issue 20): members of the machine struct, set to 0 by `_init`, a stored
/// value past a bound refused with -1, comparisons in the guard switch reading the
/// machine, operations in the action table beside the actions, in order.
#[test]
fn counted_header_and_source() {
    let path = format!(
        "{}/../tests/specs/keypad_counted.detent",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).expect("spec exists");
    let report = detent_compiler::driver::check_source("keypad_counted.detent", &text);
    assert!(!report.has_errors(), "keypad_counted.detent checks clean");
    let m = report.machines.into_iter().next().unwrap().machine.unwrap();
    let files = generate_c(&m, "keypad_counted.detent");
    insta::assert_snapshot!("keypad_counted_h", files.header);
    insta::assert_snapshot!("keypad_counted_c", files.source);
}
