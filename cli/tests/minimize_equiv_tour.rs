//! The `minimize`, `equiv` and `tour` commands: exit codes and JSON shapes (DESIGN.md).

use serde_json::Value;
use std::path::PathBuf;
use std::process::Command;

fn write(name: &str, text: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-cli-met-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn detent(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(args)
        .output()
        .expect("run detent");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const COUNTER: &str = "machine C { events Inc; outputs z; start P0;
    state P0 emit z { Inc => P1; }  state P1 { Inc => P2; }  state P2 { Inc => P3; }
    state P3 emit z { Inc => P4; }  state P4 { Inc => P5; }  state P5 { Inc => P0; }
    state Lost { Inc => P0; } }";

#[test]
fn minimize_json_text_and_spec() {
    let f = write("counter.detent", COUNTER);
    let f = f.to_str().unwrap();
    let (code, out, err) = detent(&["minimize", f, "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    let m = &v["machines"][0];
    assert_eq!(m["name"], "C");
    assert_eq!(m["states_before"], 7);
    assert_eq!(m["states_after"], 3);
    assert_eq!(m["unreachable"], serde_json::json!(["Lost"]));
    assert_eq!(
        m["classes"],
        serde_json::json!([["P0", "P3"], ["P1", "P4"], ["P2", "P5"]])
    );
    let keys: Vec<&String> = m.as_object().unwrap().keys().collect();
    assert_eq!(keys.len(), 5);

    let (code, out, _) = detent(&["minimize", f]);
    assert_eq!(code, 0);
    assert!(out.contains("7 states -> 3"), "{out}");

    let (code, spec, _) = detent(&["minimize", f, "--format", "spec"]);
    assert_eq!(code, 0);
    let g = write("counter_min.detent", &spec);
    let (code, out, err) = detent(&["check", g.to_str().unwrap()]);
    assert_eq!(code, 0, "{spec}\n{out}{err}");
    // The printed quotient is equivalent to the original.
    let (code, out, _) = detent(&["equiv", f, g.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 0, "{out}");
    assert_eq!(
        serde_json::from_str::<Value>(&out).unwrap()["equivalent"],
        true
    );
}

#[test]
fn minimize_with_errors_or_missing_file() {
    let f = write(
        "bad.detent",
        "machine B { events Go; start A; state A { } }",
    );
    let (code, _, err) = detent(&["minimize", f.to_str().unwrap()]);
    assert_eq!(code, 1, "{err}");
    let (code, _, _) = detent(&["minimize", "/nonexistent/x.detent"]);
    assert_eq!(code, 2);
}

#[test]
fn equiv_exit_codes_and_witness() {
    let chain = |emit: &str| {
        format!(
            "machine Chain {{ events Go; inputs x; outputs o; start S0;
               state S0 {{ Go if x => S1; Go if !x => stay; }}
               state S1 {{ Go if x => S2; Go if !x => stay; }}
               state S2 {{ Go if x => S3; Go if !x => stay; }}
               state S3{emit} {{ Go => stay; }} }}"
        )
    };
    let a = write("a.detent", &chain(" emit o"));
    let b = write("b.detent", &chain(""));
    let (a, b) = (a.to_str().unwrap(), b.to_str().unwrap());
    let (code, out, _) = detent(&["equiv", a, b, "--format", "json"]);
    assert_eq!(code, 1);
    let v: Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["equivalent"], false);
    // Three equal steps: one entry with its count (DESIGN.md, step lists).
    assert_eq!(
        v["witness"],
        serde_json::json!([{"event": "Go", "inputs": {"x": true}, "repeat": 3}])
    );
    let (code, out, _) = detent(&["equiv", a, b]);
    assert_eq!(code, 1);
    assert!(out.contains("step 3"), "{out}");
    let (code, _, _) = detent(&["equiv", a, a]);
    assert_eq!(code, 0);

    let c = write(
        "c.detent",
        "machine Chain { events Go, Halt; outputs o; start S0; unhandled ignore; state S0 { Go => stay; } }",
    );
    let (code, _, err) = detent(&["equiv", a, c.to_str().unwrap()]);
    assert_eq!(code, 2);
    assert!(err.contains("`Halt`") && err.contains("`x`"), "{err}");
}

#[test]
fn tour_json_covers_everything() {
    let f = write(
        "p.detent",
        "machine P { events Ea, Eb, Ec; inputs x; start A; unhandled ignore;
           state A { Ea if x => B; }  state B { Eb => A; Ec => A; } }",
    );
    let (code, out, err) = detent(&["tour", f.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["transitions"], 3);
    assert_eq!(v["covers"], 3);
    let steps = v["steps"].as_array().unwrap();
    assert_eq!(steps.len(), 4);
    assert_eq!(
        steps[0],
        serde_json::json!({"event": "Ea", "inputs": {"x": true}})
    );

    // Not strongly connected: a reset is marked.
    let g = write(
        "r.detent",
        "machine R { events Go, Alt; start A; unhandled ignore;
           state A { Go => B; Alt => C; }  terminal state B;  terminal state C; }",
    );
    let (code, out, _) = detent(&["tour", g.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 0);
    let v: Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["transitions"], 2);
    assert_eq!(v["covers"], 2);
    assert_eq!(v["steps"][1], serde_json::json!({"reset": true}));
    assert_eq!(v["steps"].as_array().unwrap().len(), 3);

    // The text form replays with `detent run`.
    let (code, text, _) = detent(&["tour", f.to_str().unwrap()]);
    assert_eq!(code, 0);
    let t = write("p.trace", &text);
    let (code, out, err) = detent(&["run", f.to_str().unwrap(), "--trace", t.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(out.lines().count(), 5, "{out}");
}

/// Two blinkers: `Slow` waits 1.2 s in `On`, `Fast` 1 s; both at a 1 ms time base.
/// `A` and `B` of the first are equivalent (same timeouts, same behaviour).
fn blinker(on_ms: u32) -> String {
    format!(
        "machine Blink {{ events Tick, Go; outputs led; timebase Tick 1 ms; start Off;
           state Off {{ Go => On; Tick => stay; }}
           state On emit led {{ after {on_ms} ms => A; Go => Off; Tick => stay; }}
           state A {{ after 500 ms => On; Go => B; Tick => stay; }}
           state B {{ after 500 ms => On; Go => A; Tick => stay; }} }}"
    )
}

#[test]
fn timed_equiv_witness_uses_counts_and_replays() {
    let a = write("slow.detent", &blinker(1200));
    let b = write("fast.detent", &blinker(1000));
    let (a, b) = (a.to_str().unwrap(), b.to_str().unwrap());
    let (code, out, err) = detent(&["equiv", a, b, "--format", "json"]);
    assert_eq!(code, 1, "{err}");
    let v: Value = serde_json::from_str(&out).unwrap();
    // Go, then the 1000th tick turns the fast blinker's led off: 1001 steps.
    assert_eq!(
        v["witness"],
        serde_json::json!([
            {"event": "Go", "inputs": {}},
            {"event": "Tick", "inputs": {}, "repeat": 1000}
        ])
    );
    assert_eq!(v["step"], 1001);
    // The text form is a trace: it replays on either machine.
    let (code, text, _) = detent(&["equiv", a, b]);
    assert_eq!(code, 1);
    assert!(text.contains("\nGo\nTick *1000\n"), "{text}");
    let t = write("witness.trace", &text);
    for spec in [a, b] {
        let (code, out, err) = detent(&["run", spec, "--trace", t.to_str().unwrap()]);
        assert_eq!(code, 0, "{err}");
        assert_eq!(out.lines().count(), 1002, "step 0 and 1001 steps");
    }
    let (code, _, _) = detent(&["equiv", a, a]);
    assert_eq!(code, 0);
}

#[test]
fn timed_minimize_spec_keeps_the_time_base_and_timeouts() {
    let f = write("blink.detent", &blinker(1200));
    let f = f.to_str().unwrap();
    let (code, out, err) = detent(&["minimize", f, "--format", "spec"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("timebase Tick 1 ms;"), "{out}");
    assert!(out.contains("after 1200 ms => A;"), "{out}");
    assert!(out.contains("after 500 ms => On;"), "{out}");
    assert!(!out.contains("state B"), "A and B merge:\n{out}");
    let g = write("blink.min.detent", &out);
    let g = g.to_str().unwrap();
    let (code, _, err) = detent(&["check", g]);
    assert_eq!(code, 0, "{err}");
    let (code, out, _) = detent(&["equiv", f, g]);
    assert_eq!(code, 0, "{out}");
}

#[test]
fn timed_tour_fires_every_timeout_and_replays() {
    let f = write("blink_tour.detent", &blinker(1200));
    let f = f.to_str().unwrap();
    let (code, out, err) = detent(&["tour", f]);
    assert_eq!(code, 0, "{err}");
    // Reaching the 1200 ms timeout takes a run of ticks, printed with its count.
    assert!(
        out.lines().any(|l| l
            .strip_prefix("Tick *")
            .and_then(|n| n.parse::<u32>().ok())
            .is_some_and(|n| n >= 1199)),
        "{out}"
    );
    assert!(err.contains("greedy cover over configurations"), "{err}");
    let t = write("tour.trace", &out);
    let (code, run, err) = detent(&["run", f, "--trace", t.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    // Every `after` rule fired: On -> A (1200 ms) and A or B -> On (500 ms).
    let steps: Vec<Value> = run
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    let moved = |from: &str, to: &str| {
        steps
            .windows(2)
            .any(|w| w[0]["to"] == from && w[1]["to"] == to && w[1]["event"] == "Tick")
    };
    assert!(moved("On", "A"), "{out}");
    assert!(moved("A", "On") && moved("B", "On"), "{out}");
    let (code, out, _) = detent(&["tour", f, "--format", "json"]);
    assert_eq!(code, 0);
    let v: Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["covers"], v["transitions"]);
    assert!(v["steps"]
        .as_array()
        .unwrap()
        .iter()
        .any(|s| s["repeat"].as_u64().is_some_and(|n| n >= 499)));
}
