//! The rule lookup of issue 18 end to end: `preempt` and `else` errors, the lints
//! `dead_rule` and `repeated_action` with their exact text, SARIF and lint options, and
//! the Pump spec (a member's `_` no longer hides its group's trip) under `detent run`.

use serde_json::Value;
use std::path::PathBuf;
use std::process::{Command, Output};

fn detent_in(dir: &PathBuf, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_detent"))
        .current_dir(dir)
        .args(args)
        .env("NO_COLOR", "1")
        .output()
        .expect("the detent binary runs")
}

/// A fresh scratch folder for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-inherit-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

/// (file name, spec, exit code, exact standard error of `detent check FILE`).
const CASES: &[(&str, &str, i32, &str)] = &[
    (
        "preempt_in_state.detent",
        r#"machine Pump {
    events Go, Trip;
    start Off;
    state Off { Go => On; Trip => stay; }
    state On { preempt Trip => Off; Go => stay; }
}
"#,
        1,
        r#"error[name]: `preempt` in a state: only a group's rules can preempt its members' rules
 --> preempt_in_state.detent:5:16
  |
5 |     state On { preempt Trip => Off; Go => stay; }
  |                ^^^^^^^
  |
  = help: move the rule into a group around the state, or drop `preempt` (a state's own rules already come before its groups' rules)

detent: 1 error, 0 warnings
"#,
    ),
    (
        "preempt_wildcard.detent",
        r#"machine Pump {
    events Go, Trip;
    start Off;
    state Off { Go => On; Trip => stay; }
    group Running {
        preempt _ => Off;
        state On { Go | Trip => stay; }
    }
}
"#,
        1,
        r#"error[name]: `preempt _`: a preempt rule names its events
 --> preempt_wildcard.detent:6:17
  |
6 |         preempt _ => Off;
  |                 ^
  |
  = help: name the events the rule must take from every member (`preempt Stop | Fault => Idle;`)

detent: 1 error, 0 warnings
"#,
    ),
    (
        "preempt_else.detent",
        r#"machine Pump {
    events Go, Trip;
    start Off;
    state Off { Go => On; Trip => stay; }
    group Running {
        preempt Trip else => Off;
        state On { Go | Trip => stay; }
    }
}
"#,
        1,
        r#"error[name]: `preempt ... else`: a preempt rule cannot be an `else` rule
 --> preempt_else.detent:6:22
  |
6 |         preempt Trip else => Off;
  |                      ^^^^
  |
  = help: give the preempt rule a guard (or none), and put the `else` rule among the members' rules

detent: 1 error, 0 warnings
"#,
    ),
    (
        "two_else.detent",
        r#"machine Pump {
    events Go, Trip;
    inputs hot;
    start Off;
    state Off {
        Go if hot => stay;
        Go else => On;
        Go else => Off;
        Trip => stay;
    }
    state On { Go | Trip => Off; }
}
"#,
        1,
        r#"error[name]: a second `else` rule for event `Go` in this scope
 --> two_else.detent:8:12
  |
7 |         Go else => On;
  |            ---- the first `else` rule
8 |         Go else => Off;
  |            ^^^^
  |
  = help: keep one `else` per event and scope: it takes every valuation the scope's other rules leave

detent: 1 error, 0 warnings
"#,
    ),
    (
        "event_named_like_input.detent",
        r#"machine Pump {
    events Go, Trip;
    inputs Trip;
    start Off;
    state Off { Go | Trip => stay; }
}
"#,
        1,
        r#"error[name]: `Trip` is both an event and an input
 --> event_named_like_input.detent:2:16
  |
2 |     events Go, Trip;
  |                ^^^^
3 |     inputs Trip;
  |            ---- declared as an input here
  |
  = note: a property may name events, inputs, outputs and actions alike, so one name cannot be two of them
  = help: rename one of them (events are UpperCamelCase, the others snake_case)

detent: 1 error, 0 warnings
"#,
    ),
    (
        "dead_rule.detent",
        r#"machine Pump {
    events Go, Trip;
    outputs motor;
    start Off;
    state Off { Go => On; Trip => stay; }
    group Running emit motor {
        preempt Trip => Off;
        state On { Go => stay; Trip => stay; }
    }
}
"#,
        0,
        r#"warning[dead_rule]: this rule never fires: in every reachable state it applies to, another rule decides first
 --> dead_rule.detent:8:32
  |
7 |         preempt Trip => Off;
  |         ------- this rule is considered first
8 |         state On { Go => stay; Trip => stay; }
  |                                ^^^^
  |
  = note: in state `On` on event `Trip`, the rules before it take every valuation where it would fire
  = help: remove the rule, or change what overrides it (a `_` never hides a named rule; a member names the event to override its group)

detent: 0 errors, 1 warning
"#,
    ),
    (
        "repeated_action.detent",
        r#"machine Pump {
    events Go, Stop;
    actions beep;
    start Off;
    state Off { Go => On, do beep; Stop => stay; }
    state On { enter do beep; Go => stay; Stop => Off; }
}
"#,
        0,
        r#"warning[repeated_action]: this rule can run action `beep` twice in one step
 --> repeated_action.detent:5:17
  |
5 |     state Off { Go => On, do beep; Stop => stay; }
  |                 ^^
  |
  = note: in state `Off` on event `Go` the step runs `beep, beep` (leave actions, the rule's, enter actions)
  = help: run `beep` in one place: the rule's `do` list, or the `enter do`/`leave do` of one state or group

detent: 0 errors, 1 warning
"#,
    ),
];

#[test]
fn each_error_and_lint_has_its_exact_text() {
    let dir = scratch("texts");
    for (file, spec, exit, expected) in CASES {
        std::fs::write(dir.join(file), spec).expect("write spec");
        let o = detent_in(&dir, &["check", file]);
        assert_eq!(o.status.code(), Some(*exit), "{file}");
        assert_eq!(String::from_utf8_lossy(&o.stderr), *expected, "{file}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn sarif_and_lint_options_carry_the_new_lints() {
    let dir = scratch("sarif");
    let spec = |name: &str| {
        CASES
            .iter()
            .find(|c| c.0 == name)
            .map(|c| c.1)
            .expect("case")
    };
    std::fs::write(dir.join("dead_rule.detent"), spec("dead_rule.detent")).unwrap();
    std::fs::write(
        dir.join("repeated_action.detent"),
        spec("repeated_action.detent"),
    )
    .unwrap();
    let o = detent_in(
        &dir,
        &[
            "check",
            "--format",
            "sarif",
            "dead_rule.detent",
            "repeated_action.detent",
        ],
    );
    assert_eq!(o.status.code(), Some(0));
    let v: Value = serde_json::from_slice(&o.stdout).expect("sarif json");
    let run = &v["runs"][0];
    let rules: Vec<&str> = run["tool"]["driver"]["rules"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["id"].as_str().unwrap())
        .collect();
    assert!(rules.contains(&"dead_rule") && rules.contains(&"repeated_action"));
    let results: Vec<(&str, &str)> = run["results"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| (r["ruleId"].as_str().unwrap(), r["level"].as_str().unwrap()))
        .collect();
    assert_eq!(
        results,
        [("dead_rule", "warning"), ("repeated_action", "warning")]
    );
    // `--allow` silences each; `--deny warnings` makes them fail the check; a spec
    // attribute raises one to an error.
    let o = detent_in(&dir, &["check", "--allow", "dead_rule", "dead_rule.detent"]);
    assert_eq!(o.status.code(), Some(0));
    assert_eq!(String::from_utf8_lossy(&o.stderr), "");
    assert_eq!(
        String::from_utf8_lossy(&o.stdout),
        "detent: 1 machine checked, no findings\n"
    );
    let o = detent_in(
        &dir,
        &[
            "check",
            "--allow",
            "repeated_action",
            "repeated_action.detent",
        ],
    );
    assert!(!String::from_utf8_lossy(&o.stderr).contains("repeated_action"));
    let o = detent_in(&dir, &["check", "--deny", "warnings", "dead_rule.detent"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&o.stderr).starts_with("error[dead_rule]"));
    std::fs::write(
        dir.join("denied.detent"),
        format!(
            "#[deny(repeated_action)]\n{}",
            spec("repeated_action.detent")
        ),
    )
    .unwrap();
    let o = detent_in(&dir, &["check", "denied.detent"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&o.stderr).starts_with("error[repeated_action]"));
    let _ = std::fs::remove_dir_all(&dir);
}

/// The spec of issue 18 and its variants, from `tests/specs/inherit/`.
fn inherit_spec(name: &str) -> String {
    let p = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../tests/specs/inherit")
        .join(name);
    std::fs::read_to_string(p).expect("spec")
}

#[test]
fn the_pump_trips_from_a_member_with_a_wildcard() {
    let dir = scratch("pump");
    std::fs::write(
        dir.join("pump.detent"),
        inherit_spec("pump_member_wildcard.detent"),
    )
    .unwrap();
    std::fs::write(
        dir.join("trace"),
        "Start\nTick\nStop\nStart\nTick\nOverCurrent\nStart\n",
    )
    .unwrap();
    let o = detent_in(&dir, &["run", "pump.detent", "--trace", "trace"]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let lines: Vec<String> = String::from_utf8_lossy(&o.stdout)
        .lines()
        .map(str::to_owned)
        .collect();
    assert_eq!(
        lines,
        [
            r#"{"step":0,"state":"Idle","moore":[]}"#,
            r#"{"step":1,"from":"Idle","event":"Start","to":"Run","handled":true,"mealy":[],"moore":["motor"],"actions":[]}"#,
            r#"{"step":2,"from":"Run","event":"Tick","to":"Coast","handled":true,"mealy":[],"moore":["motor"],"actions":[]}"#,
            // Coast's `_` no longer hides the group's Stop ...
            r#"{"step":3,"from":"Coast","event":"Stop","to":"Idle","handled":true,"mealy":[],"moore":[],"actions":[]}"#,
            r#"{"step":4,"from":"Idle","event":"Start","to":"Run","handled":true,"mealy":[],"moore":["motor"],"actions":[]}"#,
            r#"{"step":5,"from":"Run","event":"Tick","to":"Coast","handled":true,"mealy":[],"moore":["motor"],"actions":[]}"#,
            // ... nor its over-current trip.
            r#"{"step":6,"from":"Coast","event":"OverCurrent","to":"Fault","handled":true,"mealy":[],"moore":["fault_lamp"],"actions":[]}"#,
            r#"{"step":7,"from":"Fault","event":"Start","to":"Fault","handled":true,"mealy":[],"moore":["fault_lamp"],"actions":[]}"#,
        ]
    );
    // The guarded trip: a hard over-current trips even from `Run`, which names the
    // event; a soft one is ignored there.
    std::fs::write(
        dir.join("guarded.detent"),
        inherit_spec("pump_guarded_trip.detent"),
    )
    .unwrap();
    std::fs::write(
        dir.join("trace2"),
        "Start\nOverCurrent\nOverCurrent hard=1\n",
    )
    .unwrap();
    let o = detent_in(&dir, &["run", "guarded.detent", "--trace", "trace2"]);
    let out = String::from_utf8_lossy(&o.stdout).into_owned();
    let last: Vec<&str> = out.lines().skip(2).collect();
    assert_eq!(
        last,
        [
            r#"{"step":2,"from":"Run","event":"OverCurrent","to":"Run","handled":true,"mealy":[],"moore":["motor"],"actions":[]}"#,
            r#"{"step":3,"from":"Run","event":"OverCurrent","to":"Fault","handled":true,"mealy":[],"moore":["fault_lamp"],"actions":["brake","log_trip"]}"#,
        ]
    );
    // Named in the member on purpose: `Coast` ignores the (non-preempt) trip.
    std::fs::write(
        dir.join("ignored.detent"),
        inherit_spec("pump_ignored_trip.detent"),
    )
    .unwrap();
    std::fs::write(
        dir.join("trace3"),
        "Start\nTick\nOverCurrent\nTick\nOverCurrent\n",
    )
    .unwrap();
    let o = detent_in(&dir, &["run", "ignored.detent", "--trace", "trace3"]);
    let states: Vec<String> = String::from_utf8_lossy(&o.stdout)
        .lines()
        .skip(1)
        .map(|l| {
            let v: Value = serde_json::from_str(l).unwrap();
            v["to"].as_str().unwrap().to_owned()
        })
        .collect();
    assert_eq!(states, ["Run", "Coast", "Coast", "Run", "Fault"]);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn views_mark_preempt_and_else_and_the_csv_round_trips() {
    let dir = scratch("views");
    std::fs::write(
        dir.join("guarded.detent"),
        inherit_spec("pump_guarded_trip.detent"),
    )
    .unwrap();
    let o = detent_in(&dir, &["table", "guarded.detent", "--format", "csv"]);
    let csv = String::from_utf8_lossy(&o.stdout).into_owned();
    assert!(
        csv.contains("Run,OverCurrent,preempt hard,Fault,,brake log_trip,motor\r\n"),
        "{csv}"
    );
    assert!(csv.contains("Run,Tick,else,stay,,,motor\r\n"), "{csv}");
    std::fs::write(dir.join("guarded.csv"), &csv).unwrap();
    let o = detent_in(&dir, &["import", "guarded.csv", "-o", "imported.detent"]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let imported = std::fs::read_to_string(dir.join("imported.detent")).unwrap();
    assert!(
        imported.contains("OverCurrent if !(hard) => stay;"),
        "{imported}"
    );
    let o = detent_in(&dir, &["equiv", "guarded.detent", "imported.detent"]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );
    // The diagram: the preempt rule's edge is bold and its label says `preempt`.
    let o = detent_in(&dir, &["draw", "guarded.detent", "--format", "dot"]);
    let dot = String::from_utf8_lossy(&o.stdout).into_owned();
    assert!(
        dot.contains(
            "label=\"preempt OverCurrent [hard] / do log_trip\\l\", style=bold, penwidth=2.5"
        ),
        "{dot}"
    );
    assert!(dot.contains("Tick [else]"), "{dot}");
    let o = detent_in(&dir, &["draw", "guarded.detent", "--format", "svg"]);
    let svg = String::from_utf8_lossy(&o.stdout).into_owned();
    assert!(svg.contains("stroke-width=\"2.8\""), "bold preempt edge");
    // The minimized spec keeps `else` and parses again.
    let o = detent_in(&dir, &["minimize", "guarded.detent", "--format", "spec"]);
    let spec = String::from_utf8_lossy(&o.stdout).into_owned();
    assert!(spec.contains("Tick else => stay;"), "{spec}");
    std::fs::write(dir.join("min.detent"), &spec).unwrap();
    let o = detent_in(&dir, &["equiv", "guarded.detent", "min.detent"]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );
    let _ = std::fs::remove_dir_all(&dir);
}
