//! What a new user hits first (issue "First-use defects"): every sequence detent prints
//! replays through `detent run` exactly as printed (tours with restarts, property
//! counterexamples, `equiv` witnesses, text and JSON); `--check` suggests the command that
//! really regenerates the file; `equiv`'s exit codes; `draw`'s format from the extension;
//! output folders are never created silently; a file with no machine is an error.

use detent_compiler::driver::check_source;
use detent_compiler::model::Machine;
use detent_compiler::tour::{tour, TourStep};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-first-use-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn detent_in(dir: Option<&Path>, args: &[&str], stdin: Option<&str>) -> (i32, String, String) {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_detent"));
    cmd.args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    if let Some(d) = dir {
        cmd.current_dir(d);
    }
    let mut child = cmd.spawn().expect("detent runs");
    {
        use std::io::Write;
        let mut input = child.stdin.take().unwrap();
        if let Some(text) = stdin {
            input.write_all(text.as_bytes()).unwrap();
        }
    }
    let out = child.wait_with_output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn detent(args: &[&str]) -> (i32, String, String) {
    detent_in(None, args, None)
}

/// `detent run SPEC --trace -` with `trace` on standard input: the JSON lines.
fn replay(spec: &str, trace: &str) -> Vec<Value> {
    let (code, out, err) = detent_in(None, &["run", spec, "--trace", "-"], Some(trace));
    assert_eq!(
        code, 0,
        "the printed sequence must replay: {err}\n--- trace:\n{trace}"
    );
    out.lines()
        .map(|l| serde_json::from_str(l).expect("a JSON line"))
        .collect()
}

/// The state after each line of a run: the start, each step's `to`, each restart's state.
fn states(lines: &[Value]) -> Vec<String> {
    lines
        .iter()
        .map(|l| {
            l.get("to")
                .or_else(|| l.get("state"))
                .and_then(Value::as_str)
                .expect("every line names a state")
                .to_string()
        })
        .collect()
}

fn machine(name: &str, text: &str) -> Machine {
    let report = check_source(name, text);
    assert!(!report.has_errors(), "{name} checks clean");
    report.into_machines().remove(0)
}

/// A garage door: a jam latches until the machine restarts, so a tour needs restarts.
const GARAGE: &str = "
machine Garage {
    events Open, Close, Stop, Jam, Tick;
    inputs fully_open, fully_closed;
    outputs motor_up, motor_down, jam_lamp;
    start Closed;
    unhandled ignore;
    state Closed { Open => Opening; }
    state Opening emit motor_up {
        Tick if fully_open => Opened;
        Stop => Halted;
        Jam => Jammed;
    }
    state Opened { Close => Closing; }
    state Closing emit motor_down {
        Tick if fully_closed => Closed;
        Stop => Halted;
        Jam => Jammed;
    }
    state Halted { Open => Opening; Close => Closing; }
    terminal state Jammed emit jam_lamp;
}
";

/// The states a tour visits, worked out by the library: the start, each step's target,
/// and the start again at each restart.
fn tour_states(m: &Machine) -> (Vec<String>, usize) {
    let t = tour(m);
    let mut state = m.start;
    let mut out = vec![m.state_name(state).to_string()];
    for s in &t.steps {
        match s {
            TourStep::Reset => state = m.start,
            TourStep::Step { event, inputs } => state = m.step(state, *event, inputs).to,
        }
        out.push(m.state_name(state).to_string());
    }
    (out, t.resets())
}

/// Before: `# reset` was a comment to `run`, so a tour's replay stayed in the jam state
/// after the first restart; and `{"reset":true}` was refused.
#[test]
fn tours_replay_with_their_restarts_in_text_and_json() {
    let dir = scratch("tour");
    let garage = dir.join("garage.detent");
    std::fs::write(&garage, GARAGE).unwrap();
    let kiln = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/kiln.detent");
    for (spec, text) in [
        (garage.clone(), GARAGE.to_string()),
        (kiln.clone(), std::fs::read_to_string(&kiln).unwrap()),
    ] {
        let spec = spec.to_str().unwrap();
        let m = machine(spec, &text);
        let (expected, resets) = tour_states(&m);
        assert!(resets > 0, "{spec}: the test needs a tour with restarts");

        let (code, tour_text, err) = detent(&["tour", spec]);
        assert_eq!(code, 0, "{err}");
        assert_eq!(
            tour_text.lines().filter(|l| *l == "reset").count(),
            resets,
            "{tour_text}"
        );
        let lines = replay(spec, &tour_text);
        assert_eq!(states(&lines), expected, "{spec}: text tour");
        let restarts: Vec<&Value> = lines.iter().filter(|l| l["reset"] == true).collect();
        assert_eq!(restarts.len(), resets);
        for r in &restarts {
            assert_eq!(r["state"], m.state_name(m.start));
            assert!(r["moore"].is_array() && r.get("from").is_none(), "{r}");
        }
        // Numbering goes on: the last step's number is the count of events.
        let events = lines.iter().filter(|l| l.get("event").is_some()).count();
        assert_eq!(lines.last().unwrap()["step"], events);
        // Every transition the tour claims is fired by the replay.
        let fired: std::collections::BTreeSet<String> = lines
            .iter()
            .filter(|l| l["handled"] == true)
            .map(|l| format!("{} {} {}", l["from"], l["event"], l["to"]))
            .collect();
        assert!(!fired.is_empty());

        // The JSON report, as printed, replays to the same lines.
        let (code, json, err) = detent(&["tour", spec, "--format", "json"]);
        assert_eq!(code, 0, "{err}");
        assert_eq!(replay(spec, &json), lines, "{spec}: JSON tour");
        // And its step list alone.
        let v: Value = serde_json::from_str(&json).unwrap();
        assert_eq!(replay(spec, &v["steps"].to_string()), lines);
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn run_prints_the_reset_record_in_text_too() {
    let dir = scratch("run-text");
    let garage = dir.join("garage.detent");
    std::fs::write(&garage, GARAGE).unwrap();
    let g = garage.to_str().unwrap();
    let trace = "Open\nJam\nreset\nOpen\n";
    let (code, out, err) = detent_in(
        None,
        &["run", g, "--trace", "-", "--format", "text"],
        Some(trace),
    );
    assert_eq!(code, 0, "{err}");
    let lines: Vec<&str> = out.lines().collect();
    assert_eq!(
        lines,
        [
            "step 0: start in Closed; outputs: none",
            "step 1: Open (no inputs) Closed -> Opening; outputs: motor_up; actions: none",
            "step 2: Jam (no inputs) Opening -> Jammed; outputs: jam_lamp; actions: none",
            "step 2: reset to Closed; outputs: none",
            "step 3: Open (no inputs) Closed -> Opening; outputs: motor_up; actions: none",
        ]
    );
    let json = replay(g, trace);
    assert_eq!(
        json[3],
        serde_json::json!({"step":2,"reset":true,"state":"Closed","moore":[]})
    );
    let _ = std::fs::remove_dir_all(&dir);
}

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

/// Before: the text counterexample was numbered (`  1. Start door_closed=1`), and a
/// paste gave `unknown event '1.'`.
#[test]
fn the_text_counterexample_pastes_into_a_trace() {
    let dir = scratch("cex");
    let spec = dir.join("oven.detent");
    std::fs::write(&spec, OVEN).unwrap();
    let spec = spec.to_str().unwrap();
    let (code, _, err) = detent(&["check", spec]);
    assert_eq!(code, 1);
    // The note's step lines: after the headline, up to the next `= ` line.
    let mut pasted = String::new();
    let mut inside = false;
    for line in err.lines() {
        if line.contains("shortest trace from the start state") {
            assert!(line.contains("(3 steps"), "{line}");
            inside = true;
        } else if inside {
            if line.trim_start().starts_with('=') || line.trim().is_empty() {
                break;
            }
            pasted.push_str(line);
            pasted.push('\n');
        }
    }
    assert_eq!(pasted.lines().count(), 3, "{err}");
    let lines = replay(spec, &pasted);
    assert_eq!(states(&lines), ["Idle", "Warm", "Hot", "Hot"]);
    assert_eq!(lines[3]["mealy"], serde_json::json!(["vent"]));
    assert_eq!(lines[3]["moore"], serde_json::json!(["heater"]));
    let _ = std::fs::remove_dir_all(&dir);
}

/// Before: `equiv`'s text began with `different: ...` and numbered the steps, so it did
/// not replay; a spec with a violated property could not be compared at all (exit 1,
/// the same code as "different").
#[test]
fn equiv_witness_replays_and_exit_codes_say_what_happened() {
    let dir = scratch("equiv");
    let a = dir.join("a.detent");
    let b = dir.join("b.detent");
    let bad = dir.join("bad.detent");
    std::fs::write(&a, OVEN).unwrap();
    // The fix of the property: venting from Hot goes back to Warm. Still violates
    // nothing, and differs only after Start, Heat, Vent.
    std::fs::write(
        &b,
        OVEN.replace("Vent => stay, emit vent;", "Vent => Warm;"),
    )
    .unwrap();
    std::fs::write(&bad, OVEN.replace("=> Warm;", "=> Nowhere;")).unwrap();
    let (a, b, bad) = (
        a.to_str().unwrap(),
        b.to_str().unwrap(),
        bad.to_str().unwrap(),
    );

    // A has a violated property: it is compared all the same.
    let (code, text, err) = detent(&["equiv", a, b]);
    assert_eq!(code, 1, "different: {err}");
    let on_a = replay(a, &text);
    let on_b = replay(b, &text);
    assert_eq!(on_a.len(), 4, "{text}");
    assert_eq!(on_a[..3], on_b[..3], "alike before the last step");
    assert_ne!(on_a[3], on_b[3], "different at the last step");
    // JSON, as printed, replays to the same lines.
    let (code, json, _) = detent(&["equiv", a, b, "--format", "json"]);
    assert_eq!(code, 1);
    assert_eq!(replay(a, &json), on_a);
    assert_eq!(replay(b, &json), on_b);

    let (code, _, _) = detent(&["equiv", a, a]);
    assert_eq!(code, 0, "equivalent");
    let (code, _, err) = detent(&["equiv", a, bad]);
    assert_eq!(code, 2, "a spec with errors cannot be compared: {err}");
    assert!(err.contains("Nowhere"), "{err}");
    let (code, _, _) = detent(&["equiv", a, "/nonexistent/x.detent"]);
    assert_eq!(code, 2);
    let (code, _, _) = detent(&["equiv", a, b, "--machine", "Toaster"]);
    assert_eq!(code, 2);
    let _ = std::fs::remove_dir_all(&dir);
}

/// Before: `--check` after `--dispatch match` suggested a command without it; following
/// the advice wrote table dispatch and the check still failed.
#[test]
fn check_suggests_a_command_that_makes_the_check_pass() {
    let dir = scratch("regen");
    std::fs::write(
        dir.join("oven.detent"),
        OVEN.replace("never heater && vent;", ""),
    )
    .unwrap();
    let sub = dir.join("out dir");
    std::fs::create_dir_all(&sub).unwrap();
    let out = "out dir/oven.rs";
    let (code, _, err) = detent_in(
        Some(&dir),
        &[
            "gen",
            "rust",
            "oven.detent",
            "--dispatch",
            "match",
            "-o",
            out,
        ],
        None,
    );
    assert_eq!(code, 0, "{err}");
    let check = [
        "gen",
        "rust",
        "oven.detent",
        "--dispatch",
        "match",
        "-o",
        out,
        "--check",
    ];
    assert_eq!(detent_in(Some(&dir), &check, None).0, 0);
    std::fs::write(dir.join(out), "// edited by hand\n").unwrap();
    let (code, _, err) = detent_in(Some(&dir), &check, None);
    assert_eq!(code, 1);
    let command = err
        .split('`')
        .find(|s| s.starts_with("detent gen rust"))
        .unwrap_or_else(|| panic!("a suggested command: {err}"));
    assert!(command.contains("--dispatch match"), "{command}");
    // Follow the advice through a shell, as a user pastes it.
    let shell = format!(
        "{}{}",
        env!("CARGO_BIN_EXE_detent"),
        command.strip_prefix("detent").unwrap()
    );
    let status = Command::new("sh")
        .arg("-c")
        .arg(&shell)
        .current_dir(&dir)
        .status()
        .unwrap();
    assert!(status.success(), "{shell}");
    assert_eq!(
        detent_in(Some(&dir), &check, None).0,
        0,
        "the check passes now"
    );

    // `gen c --check` names its command too.
    let (code, _, err) = detent_in(
        Some(&dir),
        &["gen", "c", "oven.detent", "-o", "out dir", "--check"],
        None,
    );
    assert_eq!(code, 1);
    assert!(
        err.contains("`detent gen c oven.detent -o 'out dir'`"),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

/// Before: `draw -o x.svg` wrote DOT into the `.svg` file.
#[test]
fn draw_takes_the_format_from_the_extension() {
    let dir = scratch("draw");
    let spec = dir.join("garage.detent");
    std::fs::write(&spec, GARAGE).unwrap();
    let spec = spec.to_str().unwrap();
    for (name, starts) in [
        ("d.svg", "<?xml"),
        ("d.SVG", "<?xml"),
        ("d.dot", "digraph"),
        ("d.gv", "digraph"),
    ] {
        let path = dir.join(name);
        let (code, _, err) = detent(&["draw", spec, "-o", path.to_str().unwrap()]);
        assert_eq!(code, 0, "{err}");
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(
            text.starts_with(starts),
            "{name}: {}",
            &text[..40.min(text.len())]
        );
    }
    // `--format` wins over the extension.
    let path = dir.join("forced.svg");
    let (code, _, _) = detent(&[
        "draw",
        spec,
        "--format",
        "dot",
        "-o",
        path.to_str().unwrap(),
    ]);
    assert_eq!(code, 0);
    assert!(std::fs::read_to_string(&path)
        .unwrap()
        .starts_with("digraph"));
    // An extension that says nothing is a usage error, and nothing is written.
    for name in ["d.png", "diagram"] {
        let path = dir.join(name);
        let (code, _, err) = detent(&["draw", spec, "-o", path.to_str().unwrap()]);
        assert_eq!(code, 2, "{name}");
        assert!(err.contains("--format"), "{err}");
        assert!(!path.exists());
    }
    let (code, out, _) = detent(&["draw", spec]);
    assert_eq!(code, 0);
    assert!(out.starts_with("digraph"));
    let _ = std::fs::remove_dir_all(&dir);
}

/// Before: `gen c` without `-o` wrote into the current folder, and `-o /no/such/dir`
/// created the folders.
#[test]
fn outputs_go_only_where_asked_and_folders_are_not_created() {
    let dir = scratch("outdir");
    let spec = dir.join("oven.detent");
    std::fs::write(&spec, OVEN.replace("never heater && vent;", "")).unwrap();
    let (code, _, err) = detent_in(Some(&dir), &["gen", "c", "oven.detent"], None);
    assert_eq!(code, 2);
    assert!(err.contains("-o ."), "{err}");
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, ["oven.detent"], "nothing written");

    let missing = dir.join("no").join("such");
    let (code, _, err) = detent(&[
        "gen",
        "c",
        spec.to_str().unwrap(),
        "-o",
        missing.to_str().unwrap(),
    ]);
    assert_eq!(code, 2);
    assert!(
        err.contains(&format!("`{}` does not exist", missing.display())),
        "{err}"
    );
    assert!(!dir.join("no").exists(), "no folder created");
    let rs = missing.join("oven.rs");
    let (code, _, err) = detent(&[
        "gen",
        "rust",
        spec.to_str().unwrap(),
        "-o",
        rs.to_str().unwrap(),
    ]);
    assert_eq!(code, 2);
    assert!(
        err.contains(&format!("`{}` does not exist", missing.display())),
        "{err}"
    );
    assert!(!dir.join("no").exists());

    // `-o .` writes here.
    let (code, out, err) = detent_in(Some(&dir), &["gen", "c", "oven.detent", "-o", "."], None);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("oven.h") && dir.join("oven.c").exists());
    let _ = std::fs::remove_dir_all(&dir);
}

/// Before: an empty file checked as "0 machines checked, no findings", exit 0.
#[test]
fn a_file_with_no_machine_is_an_error_naming_it() {
    let dir = scratch("empty");
    for (name, text) in [
        ("empty.detent", ""),
        ("comments.detent", "// nothing yet\n/* still nothing */\n"),
    ] {
        let path = dir.join(name);
        std::fs::write(&path, text).unwrap();
        let p = path.to_str().unwrap();
        let (code, out, err) = detent(&["check", p]);
        assert_eq!(code, 1, "{out}{err}");
        assert!(err.contains(&format!("`{p}` has no machine")), "{err}");
        assert!(err.contains(&format!("--> {p}")), "{err}");
        let (code, json, _) = detent(&["check", p, "--format", "json"]);
        assert_eq!(code, 1);
        let v: Value = serde_json::from_str(&json).unwrap();
        assert_eq!(v["errors"], 1);
        for cmd in ["table", "tour", "minimize"] {
            let (code, _, err) = detent(&[cmd, p]);
            assert_eq!(code, 1, "{cmd}: {err}");
            assert!(err.contains("has no machine"), "{cmd}: {err}");
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
}
