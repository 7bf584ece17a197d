//! A violated property's counterexample, as `check --format json` prints it, replays
//! through `detent run` to the violating step.

use std::process::Command;

const OVEN: &str = "
machine Oven {
    events Start, Heat, Vent, Stop;
    inputs door_closed;
    outputs heater, vent;
    start Idle;
    never heater && vent;
    state Idle { Start if door_closed => Warm; Start if !door_closed => stay; Heat | Vent | Stop => stay; }
    state Warm emit heater { Heat => Hot; Vent | Start => stay; Stop => Idle; }
    state Hot emit heater { Vent => stay, emit vent; Heat | Start => stay; Stop => Idle; }
}
";

fn detent(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(args)
        .output()
        .expect("detent runs")
}

#[test]
fn counterexample_replays_to_the_violation() {
    let dir = std::env::temp_dir().join(format!("detent-replay-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let spec = dir.join("oven.detent");
    std::fs::write(&spec, OVEN).unwrap();
    let spec = spec.to_str().unwrap();

    let out = detent(&["check", "--format", "json", spec]);
    assert_eq!(
        out.status.code(),
        Some(1),
        "a violated property is an error"
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let diag = report["machines"][0]["diagnostics"]
        .as_array()
        .unwrap()
        .iter()
        .find(|d| d["lint"] == "property")
        .expect("a property diagnostic")
        .clone();
    let trace = diag["trace"].as_array().expect("the counterexample trace");
    // Shortest: Start (door closed), Heat, Vent.
    let events: Vec<&str> = trace.iter().map(|s| s["event"].as_str().unwrap()).collect();
    assert_eq!(events, ["Start", "Heat", "Vent"]);

    // Replay the JSON trace as it was printed.
    let trace_file = dir.join("cex.trace");
    std::fs::write(&trace_file, serde_json::to_string(&diag["trace"]).unwrap()).unwrap();
    // `run` replays it on the spec itself: a violated property leaves the machine
    // well defined.
    let out = detent(&["run", spec, "--trace", trace_file.to_str().unwrap()]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let lines: Vec<serde_json::Value> = String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), 4, "step 0 and three steps");
    let last = &lines[3];
    assert_eq!(last["to"], "Hot");
    assert_eq!(last["mealy"], serde_json::json!(["vent"]));
    assert_eq!(last["moore"], serde_json::json!(["heater"]));
    std::fs::remove_dir_all(&dir).ok();
}
