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
