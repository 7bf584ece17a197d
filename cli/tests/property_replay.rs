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
    let diag = detent_tests::property_diagnostic(&out);
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

/// A door left open for 1.5 s at a 1 ms time base raises the alarm: 1,501 steps.
const DOOR: &str = "
machine Door {
    events Tick, Open, Close;
    outputs alarm;
    timebase Tick 1 ms;
    start Closed;
    never alarm;
    state Closed { Open => Opened; Close | Tick => stay; }
    state Opened { after 1500 ms => Alarm; Close => Closed; Open | Tick => stay; }
    state Alarm emit alarm { Close => Closed; Open | Tick => stay; }
}
";

#[test]
fn a_timed_counterexample_prints_with_counts_and_replays_to_the_violation() {
    let dir = std::env::temp_dir().join(format!("detent-replay-timed-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let spec = dir.join("door.detent");
    std::fs::write(&spec, DOOR).unwrap();
    let spec = spec.to_str().unwrap();

    // JSON: two entries, the second with `repeat`.
    let out = detent(&["check", "--format", "json", spec]);
    let diag = detent_tests::property_diagnostic(&out);
    assert_eq!(
        diag["trace"],
        serde_json::json!([
            {"event": "Open", "inputs": {}},
            {"event": "Tick", "inputs": {}, "repeat": 1500}
        ])
    );
    // Text: the note's trace lines.
    let out = detent(&["check", spec]);
    let text = String::from_utf8(out.stderr).unwrap();
    assert!(
        text.contains("violated at step 1501")
            && text.contains("(1501 steps as 2 trace lines):")
            && text.contains("Open\n              Tick *1500\n"),
        "{text}"
    );

    // Both forms replay through `run` to the alarm at step 1501.
    let json_trace = dir.join("cex.json");
    std::fs::write(&json_trace, serde_json::to_string(&diag["trace"]).unwrap()).unwrap();
    let text_trace = dir.join("cex.trace");
    std::fs::write(&text_trace, "Open\nTick *1500\n").unwrap();
    for trace in [&json_trace, &text_trace] {
        let out = detent(&["run", spec, "--trace", trace.to_str().unwrap()]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let stdout = String::from_utf8(out.stdout).unwrap();
        let lines: Vec<serde_json::Value> = stdout
            .lines()
            .map(|l| serde_json::from_str(l).unwrap())
            .collect();
        assert_eq!(lines.len(), 1502, "step 0 and 1501 steps");
        assert_eq!(lines[1500]["to"], "Opened");
        let last = &lines[1501];
        assert_eq!(last["step"], 1501);
        assert_eq!(last["to"], "Alarm");
        assert_eq!(last["moore"], serde_json::json!(["alarm"]));
    }
    std::fs::remove_dir_all(&dir).ok();
}
