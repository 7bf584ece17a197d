//! The bundled examples with time (`examples/burner.detent`, `examples/debounce.detent`)
//! through the CLI: the burner's one-trial property holds with its 20 s window; with a
//! 25 s window the checker finds the shortest counterexample, 2,301 steps printed as
//! two lines (`Demand`, `Tick *2300`), which `detent run` replays to the violation; the
//! debouncer confirms a press after 20 ms of equal samples and not before. The burner's
//! safety-time deadline (`ensure ... within 3 s after in Trial`) holds with a margin
//! of zero ticks, and a trial one tick (10 ms) longer is refused with the shortest
//! trace, which `detent run` replays.

use std::path::PathBuf;
use std::process::Command;

fn detent(args: &[&str], stdin: Option<&str>) -> std::process::Output {
    use std::io::Write;
    let mut child = Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(args)
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("detent runs");
    if let Some(text) = stdin {
        child
            .stdin
            .take()
            .unwrap()
            .write_all(text.as_bytes())
            .unwrap();
    }
    drop(child.stdin.take());
    child.wait_with_output().expect("detent finishes")
}

fn example(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../examples")
        .join(name)
}

/// The burner with `from` replaced by `to` (which must be in it), written as `file` in
/// a fresh folder; `check --format json` on it must exit 1 with a property diagnostic.
/// Returns the folder (kept while the caller uses the spec), the spec's path, and the
/// diagnostic.
fn burner_violation(
    from: &str,
    to: &str,
    file: &str,
) -> (tempfile::TempDir, String, serde_json::Value) {
    let text = std::fs::read_to_string(example("burner.detent")).unwrap();
    assert!(text.contains(from), "the burner has `{from}`");
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join(file);
    std::fs::write(&spec, text.replace(from, to)).unwrap();
    let spec = spec.to_str().unwrap().to_string();
    let out = detent(&["check", "--format", "json", &spec], None);
    let diag = detent_tests::property_diagnostic(&out);
    (dir, spec, diag)
}

#[test]
fn the_burner_window_proof_and_its_long_counterexample() {
    let burner = example("burner.detent");
    let out = detent(&["check", burner.to_str().unwrap()], None);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );

    // One line longer window: a second trial fits in it.
    let (_dir, spec, diag) = burner_violation(
        "after 20 s => Lockout",
        "after 25 s => Lockout",
        "burner25.detent",
    );
    let spec = spec.as_str();
    let trace = diag["trace"].as_array().unwrap();
    // Shortest: Demand, then 1,000 ticks of purge, 300 of trial, 1,000 of purge again.
    assert_eq!(trace.len(), 2, "{trace:?}");
    assert_eq!(trace[0]["event"], "Demand");
    assert_eq!(trace[1]["event"], "Tick");
    assert_eq!(trace[1]["repeat"], 2300);
    // The text form says the same, and replays as printed.
    let out = detent(&["check", spec], None);
    let text = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(text.contains("Tick *2300"), "{text}");
    let json_line = serde_json::to_string(&diag["trace"]).unwrap();
    for trace_text in [json_line.as_str(), "Demand\nTick *2300\n"] {
        let out = detent(&["run", spec, "--trace", "-"], Some(trace_text));
        assert_eq!(out.status.code(), Some(0));
        let lines: Vec<&str> = std::str::from_utf8(&out.stdout).unwrap().lines().collect();
        assert_eq!(lines.len(), 2_302, "step 0 and 2,301 steps");
        assert!(
            lines[2_301].contains(r#""from":"Repurge","event":"Tick","to":"Retrial""#),
            "{}",
            lines[2_301]
        );
        assert!(lines[2_300].contains(r#""to":"Repurge""#));
    }
}

#[test]
fn the_burner_safety_time_holds_to_the_tick_and_one_tick_more_fails() {
    let burner = example("burner.detent");
    let text = std::fs::read_to_string(&burner).unwrap();
    assert!(text.contains("ensure !gas_valve || in Running within 3 s after in Trial;"));
    assert!(text.contains("after 3 s => Repurge"));
    // The trial ends exactly at the deadline: proved (the check passes, above and here).
    let out = detent(&["check", burner.to_str().unwrap()], None);
    assert_eq!(out.status.code(), Some(0));
    // One 10 ms tick longer: refused.
    let (_dir, spec, diag) = burner_violation(
        "after 3 s => Repurge",
        "after 3010 ms => Repurge",
        "burner_slow.detent",
    );
    let spec = spec.as_str();
    assert_eq!(
        diag["message"],
        "property `ensure !gas_valve || in Running within 3 s after in Trial` is violated at step 1301"
    );
    // Demand, 1,000 ticks of purge (the 1,000th enters the trial), 300 ticks of trial
    // with the gas open and no flame: the 300th completes the 3 s.
    let trace = diag["trace"].as_array().unwrap();
    assert_eq!(trace.len(), 2, "{trace:?}");
    assert_eq!(trace[0]["event"], "Demand");
    assert_eq!(trace[1]["repeat"], 1300);
    let out = detent(&["run", spec, "--trace", "-"], Some("Demand\nTick *1300\n"));
    assert_eq!(out.status.code(), Some(0));
    let lines: Vec<&str> = std::str::from_utf8(&out.stdout).unwrap().lines().collect();
    assert_eq!(lines.len(), 1_302);
    assert!(lines[1_001].contains(r#""to":"Trial""#), "{}", lines[1_001]);
    // From the trial's entry to the last step the gas is open and no flame is proven.
    for line in &lines[1_001..] {
        assert!(line.contains(r#""to":"Trial""#), "{line}");
        assert!(line.contains("gas_valve"), "{line}");
    }
}

#[test]
fn the_debouncer_waits_twenty_milliseconds() {
    let debounce = example("debounce.detent");
    let spec = debounce.to_str().unwrap();
    // A bounce after 10 ms starts the wait again; then 21 high samples confirm.
    let trace = "Tick raw=1 *10\nTick\nTick raw=1 *20\nTick raw=1\n";
    let out = detent(
        &["run", spec, "--trace", "-", "--format", "text"],
        Some(trace),
    );
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 33);
    assert!(lines[11].contains("Pressing -> Released"), "{}", lines[11]);
    assert!(lines[31].contains("Pressing -> Pressing"), "{}", lines[31]);
    assert!(lines[32].contains("Pressing -> Pressed"), "{}", lines[32]);
    assert!(lines[32].contains("press_edge"), "{}", lines[32]);
    assert!(lines[32].contains("on_press"), "{}", lines[32]);
}
