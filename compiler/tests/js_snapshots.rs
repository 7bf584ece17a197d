//! Snapshot tests of the JavaScript simulator (`emit::js`), so that a change in output is
//! seen in review. Its behaviour is tested against the interpreter in Chromium
//! (`tests/tests/js_browser.rs`).

use detent_compiler::emit::js::to_js;

fn machine(name: &str) -> detent_compiler::model::Machine {
    let path = format!("{}/../examples/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).expect("example exists");
    let report = detent_compiler::driver::check_source(name, &text);
    assert!(!report.has_errors(), "{name} checks clean");
    report.machines.into_iter().next().unwrap().machine.unwrap()
}

#[test]
fn greenhouse_simulator() {
    insta::assert_snapshot!("greenhouse_js", to_js(&machine("greenhouse.detent")));
}

#[test]
fn clocked_debounce_simulator() {
    insta::assert_snapshot!("debounce_js", to_js(&machine("debounce.detent")));
}

/// A machine with a counter: comparisons inline in the tests (`cnt[0] < 2`), the
/// operation table and the counters' ranges.
#[test]
fn counter_simulator() {
    let text = "machine Keypad {
    events Digit, Wrong, Right;
    inputs tamper;
    actions alarm;
    counters strikes to 3;
    start Idle;
    unhandled ignore;
    state Idle {
        Wrong if strikes < 2 => Idle, do strikes += 1;
        Wrong if strikes == 2 => Locked, do strikes += 1, alarm;
        Digit if tamper && strikes != 0 => stay, do strikes -= 1;
    }
    state Locked {
        Right if strikes == 3 => Idle, do strikes = 0;
    }
}";
    let report = detent_compiler::driver::check_source("keypad.detent", text);
    assert!(!report.has_errors(), "keypad checks clean");
    let m = report.machines.into_iter().next().unwrap().machine.unwrap();
    insta::assert_snapshot!("keypad_js", to_js(&m));
}
