//! End to end in a real browser: `detent view -o` pages of the examples are clicked
//! through in headless Chromium (selenium and chromedriver, `tests/python/browser.py`)
//! as a user does (event picker, input toggles, Step; then Back), and what the page
//! shows after each step (the current state, the lit lamps, the actions run) must be
//! what `detent run` prints for the same trace. A screenshot is taken.
//!
//! Nothing is skipped: without Chromium, chromedriver or the Python environment
//! (`scripts/test.sh` installs them) the test fails and says so.

use serde_json::{json, Value};
use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

fn python() -> PathBuf {
    if let Some(p) = std::env::var_os("DETENT_PYTHON").filter(|p| !p.is_empty()) {
        let p = PathBuf::from(p);
        assert!(
            p.exists(),
            "DETENT_PYTHON={} does not exist; run scripts/test.sh",
            p.display()
        );
        return p;
    }
    let venv = root().join(".venv/bin/python");
    assert!(
        venv.exists(),
        "no Python: set DETENT_PYTHON or run scripts/test.sh (it installs selenium, chromium and chromium-driver)"
    );
    venv
}

/// The steps of a text trace as the page's JSON steps (`#` comments, `name=0|1`).
fn steps_of(trace: &str) -> Vec<Value> {
    let mut out = Vec::new();
    for line in trace.lines() {
        let words: Vec<&str> = line
            .split_whitespace()
            .take_while(|w| !w.starts_with('#'))
            .collect();
        let Some((event, mut rest)) = words.split_first() else {
            continue;
        };
        // `E ... *N`: N copies of the step.
        let mut repeat = 1;
        if let Some((last, head)) = rest.split_last() {
            if let Some(n) = last.strip_prefix('*') {
                repeat = n.parse::<usize>().expect("*N");
                rest = head;
            }
        }
        let mut inputs = serde_json::Map::new();
        for w in rest {
            let (name, v) = w.split_once('=').expect("name=value");
            inputs.insert(name.to_string(), json!(v == "1"));
        }
        for _ in 0..repeat {
            out.push(json!({ "event": event, "inputs": inputs }));
        }
    }
    out
}

/// What `detent run` says after each step: state, every output high, actions.
fn run_says(spec: &str, trace: &Path) -> Vec<Value> {
    let o = Command::new(env!("CARGO_BIN_EXE_detent"))
        .current_dir(root())
        .args(["run", spec, "--trace"])
        .arg(trace)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let outputs_of = |m: &Value, declared: &[String]| -> Vec<String> {
        let mut high: Vec<String> = Vec::new();
        for k in ["moore", "mealy"] {
            for v in m[k].as_array().into_iter().flatten() {
                high.push(v.as_str().unwrap().to_string());
            }
        }
        declared
            .iter()
            .filter(|d| high.contains(d))
            .cloned()
            .collect()
    };
    let lines: Vec<Value> = String::from_utf8(o.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    let declared: Vec<String> = declared_outputs(spec);
    lines
        .iter()
        .map(|l| {
            let state = l.get("to").or_else(|| l.get("state")).unwrap().clone();
            json!({
                "state": state,
                "outputs": outputs_of(l, &declared),
                "actions": l.get("actions").cloned().unwrap_or(json!([])),
            })
        })
        .collect()
}

/// The outputs of a spec in declaration order (its `outputs` list).
fn declared_outputs(spec: &str) -> Vec<String> {
    let text = std::fs::read_to_string(root().join(spec)).unwrap();
    let code: String = text
        .lines()
        .map(|l| l.split("//").next().unwrap_or(""))
        .collect::<Vec<_>>()
        .join("\n");
    let Some(i) = code.find("outputs ") else {
        return Vec::new();
    };
    let list = &code[i + "outputs ".len()..];
    let list = &list[..list.find(';').unwrap()];
    list.split(',')
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .collect()
}

#[test]
fn clicking_a_trace_through_example_pages_matches_detent_run() {
    let tmp = PathBuf::from(env!("CARGO_TARGET_TMPDIR"));
    for ex in [
        "greenhouse",
        "locker",
        "debounce",
        "kiln",
        "frame_parser",
        "pattern_detector",
    ] {
        let spec = format!("examples/{ex}.detent");
        let trace = root().join(format!("examples/{ex}.trace"));
        let page = tmp.join(format!("{ex}.html"));
        let st = Command::new(env!("CARGO_BIN_EXE_detent"))
            .current_dir(root())
            .args(["view", &spec, "-o"])
            .arg(&page)
            .status()
            .unwrap();
        assert!(st.success());
        let steps = steps_of(&std::fs::read_to_string(&trace).unwrap());
        let steps_file = tmp.join(format!("{ex}.steps.json"));
        std::fs::write(&steps_file, Value::Array(steps.clone()).to_string()).unwrap();
        let shot = tmp.join(format!("{ex}.png"));
        let o = Command::new(python())
            .arg(root().join("tests/python/browser.py"))
            .arg("click")
            .arg(&page)
            .arg(&steps_file)
            .arg(&shot)
            .output()
            .unwrap();
        assert!(
            o.status.success(),
            "browser.py failed (scripts/test.sh installs chromium, chromium-driver and selenium):\n{}",
            String::from_utf8_lossy(&o.stderr)
        );
        let shown: Vec<Value> = serde_json::from_slice(&o.stdout).unwrap();
        let want = run_says(&spec, &trace);
        assert_eq!(shown.len(), steps.len() + 1, "{ex}");
        assert_eq!(want.len(), shown.len(), "{ex}");
        for (k, (w, s)) in want.iter().zip(&shown).enumerate() {
            let mut s = s.clone();
            let marked = s
                .as_object_mut()
                .and_then(|o| o.remove("marked"))
                .expect("the marked edges");
            assert_eq!(
                w, &s,
                "{ex}: after step {k}: detent run (left) and the page (right) differ"
            );
            // A step that moved marks the edge it took (for a group's rule drawn once
            // from the group's border, that edge), and only edges into the new state
            // from the old one.
            if k > 0 && want[k - 1]["state"] != w["state"] {
                let marked = marked.as_array().expect("a list");
                assert!(!marked.is_empty(), "{ex}: step {k} marks no edge");
                for e in marked {
                    assert_eq!(e["to"], w["state"], "{ex}: step {k} marks {e}");
                    assert!(
                        e["from"]
                            .as_array()
                            .expect("sources")
                            .contains(&want[k - 1]["state"]),
                        "{ex}: step {k} marks {e}"
                    );
                }
            }
            if ex == "greenhouse" && k == 5 {
                // WindAlarm in Circulating: the Auto group's rule, drawn once.
                assert_eq!(
                    marked[0]["from"].as_array().map(Vec::len),
                    Some(4),
                    "{ex}: the group's edge stands for its four members: {marked}"
                );
            }
        }
        let png = std::fs::read(&shot).unwrap();
        assert!(
            png.starts_with(b"\x89PNG") && png.len() > 10_000,
            "{ex}: screenshot"
        );
    }
}

fn browser(args: &[&std::ffi::OsStr]) -> Value {
    let o = Command::new(python())
        .arg(root().join("tests/python/browser.py"))
        .args(args)
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "browser.py {args:?} failed (scripts/test.sh installs chromium, chromium-driver and selenium):\n{}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).unwrap()
}

const PUMP: &str = "machine Pump {
    events Start, Stop, Tick;
    inputs dry;
    outputs motor, alarm;
    actions beep;
    start Idle;

    never alarm;

    state Idle { Start => Running; Stop | Tick => stay; }
    state Running emit motor {
        Start => stay;
        Stop => Idle, do beep;
        Tick if dry => Dry;
        Tick if !dry => stay;
    }
    state Dry emit alarm { Start | Stop | Tick => Idle, do beep; }
}
";

fn detent_json(args: &[&str]) -> Value {
    let o = Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(args)
        .output()
        .unwrap();
    serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("{args:?}: {e}: {}", String::from_utf8_lossy(&o.stdout)))
}

#[test]
fn a_counterexample_and_an_equiv_witness_replay_step_by_step() {
    let tmp = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("replay");
    std::fs::create_dir_all(&tmp).unwrap();
    let spec = tmp.join("pump.detent");
    std::fs::write(&spec, PUMP).unwrap();
    let spec_s = spec.to_str().unwrap();
    let page = tmp.join("pump.html");
    let st = Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(["view", spec_s, "-o"])
        .arg(&page)
        .status()
        .unwrap();
    assert!(st.success(), "a violated property still makes a page");
    // The counterexample of `check`, as `detent run` replays it.
    let report = detent_json(&["check", spec_s, "--format", "json"]);
    let trace = report["machines"][0]["diagnostics"][0]["trace"].clone();
    let trace_file = tmp.join("cx.trace");
    std::fs::write(&trace_file, trace.to_string()).unwrap();
    let want = run_says(spec_s, &trace_file);
    let got = browser(&["replay".as_ref(), page.as_os_str(), "finding".as_ref()]);
    assert_eq!(got["steps"], Value::Array(want), "counterexample replay");
    assert_eq!(
        got["steps"].as_array().unwrap().last().unwrap()["outputs"],
        json!(["alarm"])
    );
    assert!(
        got["marked"].as_u64().unwrap() >= 1,
        "the finding marks its state: {got}"
    );

    // An `equiv` witness, pasted as equiv's JSON output.
    let a = tmp.join("a.detent");
    let b = tmp.join("b.detent");
    let plain = PUMP.replace("never alarm;", "");
    std::fs::write(&a, &plain).unwrap();
    std::fs::write(
        &b,
        plain.replace("Tick if !dry => stay;", "Tick if !dry => Idle;"),
    )
    .unwrap();
    let eq = detent_json(&[
        "equiv",
        a.to_str().unwrap(),
        b.to_str().unwrap(),
        "--format",
        "json",
    ]);
    assert_eq!(eq["equivalent"], json!(false));
    let w = tmp.join("w.json");
    std::fs::write(&w, eq.to_string()).unwrap();
    let wt = tmp.join("w.trace");
    std::fs::write(&wt, eq["witness"].to_string()).unwrap();
    let page_a = tmp.join("a.html");
    assert!(Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(["view", a.to_str().unwrap(), "-o"])
        .arg(&page_a)
        .status()
        .unwrap()
        .success());
    let got = browser(&["replay".as_ref(), page_a.as_os_str(), w.as_os_str()]);
    assert_eq!(
        got["steps"],
        Value::Array(run_says(a.to_str().unwrap(), &wt)),
        "witness replay"
    );
}

#[test]
fn a_save_reloads_the_served_page_and_keeps_the_trace() {
    use std::io::BufRead;
    let tmp = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("live");
    std::fs::create_dir_all(&tmp).unwrap();
    let spec = tmp.join("pump.detent");
    std::fs::write(&spec, PUMP).unwrap();
    let renamed = tmp.join("renamed.detent.new");
    std::fs::write(&renamed, PUMP.replace("machine Pump", "machine Pump2")).unwrap();
    let mut child = Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(["view", "--port", "0"])
        .arg(&spec)
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let mut line = String::new();
    std::io::BufReader::new(child.stdout.take().unwrap())
        .read_line(&mut line)
        .unwrap();
    let url = line
        .split_whitespace()
        .find(|w| w.starts_with("http://127.0.0.1:"))
        .unwrap_or_else(|| panic!("no address in {line:?}"))
        .to_string();
    let got = Command::new(python())
        .arg(root().join("tests/python/browser.py"))
        .args(["live", &url])
        .arg(&spec)
        .arg(&renamed)
        .output()
        .unwrap();
    let _ = child.kill();
    let _ = child.wait();
    assert!(
        got.status.success(),
        "{}",
        String::from_utf8_lossy(&got.stderr)
    );
    let got: Value = serde_json::from_slice(&got.stdout).unwrap();
    assert_eq!(
        got["title"],
        json!("Pump2"),
        "the page shows the saved machine"
    );
    assert_eq!(got["status"], json!("reloaded; kept 2 of 2 trace steps"));
    assert_eq!(got["before"], got["after"]);
    assert_eq!(got["after"]["state"], json!("Running"));
}

/// A trace with repeated lines (`Tick raw=1 *21`, JSON `"repeat"`) replays in the page
/// of a timed example step by step, as `detent run` runs it: the debouncer's press is
/// confirmed on the 21st high sample.
#[test]
fn a_repeated_trace_line_replays_on_a_timed_page() {
    let tmp = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("repeat");
    std::fs::create_dir_all(&tmp).unwrap();
    let spec = root().join("examples/debounce.detent");
    let page = tmp.join("debounce.html");
    assert!(Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(["view", spec.to_str().unwrap(), "-o"])
        .arg(&page)
        .status()
        .unwrap()
        .success());
    let trace = tmp.join("t.trace");
    std::fs::write(
        &trace,
        "Tick raw=1 *3\nTick\n{\"event\":\"Tick\",\"inputs\":{\"raw\":1},\"repeat\":21}\n",
    )
    .unwrap();
    let got = browser(&["replay".as_ref(), page.as_os_str(), trace.as_os_str()]);
    let want = run_says(spec.to_str().unwrap(), &trace);
    assert_eq!(want.len(), 26, "step 0 and 25 steps");
    assert_eq!(got["steps"], Value::Array(want), "repeated trace replay");
}
