//! The JavaScript simulator of `detent view` (`emit::js`) against the reference
//! interpreter, run in a real browser: Debian's headless Chromium, driven through
//! chromedriver by selenium (`tests/python/browser.py`).
//!
//! Machines: every example, and random machines of the spec generator (`gen.rs`) over
//! every policy, clocked and event-driven, with and without inputs and groups. Traces:
//! random events; the input hooks are hostile: every input flips its level on every
//! call (as a bouncing pin or a register cleared on read does) and every call is
//! recorded. At every step the hook calls (which inputs, in what order: each at most
//! once, as the interpreter's sampler reads them), the next state, the rule that fired,
//! the rejection, the outputs, the actions, the timers and the counters must equal the
//! interpreter's, stepped through `Machine::step_config_reading` over the same flipping
//! levels. The running object's
//! `reset()` must bring the machine back to the start state.
//!
//! All machines go on one page (one browser start), so the test takes seconds. Nothing
//! is skipped: without chromium, chromedriver or the Python environment the test fails
//! and says to run `scripts/test.sh`.

use detent_compiler::driver::check_source;
use detent_compiler::emit::js::to_js;
use detent_compiler::interp::Outcome;
use detent_compiler::model::{EventId, InputId, Machine};
use detent_compiler::rng::Rng;
use detent_tests::gen::{random_spec, random_timed_trace, GenConfig};
use serde_json::{json, Value};
use std::path::{Path, PathBuf};
use std::process::Command;

fn machines_of(name: &str, text: &str) -> Vec<Machine> {
    let report = check_source(name, text);
    let ms: Vec<Machine> = report
        .machines
        .into_iter()
        .filter_map(|m| m.machine)
        .collect();
    assert!(!ms.is_empty(), "{name}: no machine resolved");
    ms
}

/// One case: a machine and its trace of (event, levels at the start of the step).
struct Case {
    label: String,
    machine: Machine,
    steps: Vec<(usize, Vec<bool>)>,
}

/// What the interpreter does on the case with flipping hooks, in the page's form.
fn expected(c: &Case) -> Value {
    let m = &c.machine;
    let mut config = m.start_config();
    let mut out = Vec::new();
    for (event, levels) in &c.steps {
        let mut levels = levels.clone();
        let mut calls = Vec::new();
        let r = m.step_config_reading(
            &mut config,
            EventId::from_index(*event),
            &mut |i: InputId| {
                calls.push(i.index());
                let v = levels[i.index()];
                levels[i.index()] = !v;
                v
            },
        );
        let rule = match r.outcome {
            Outcome::Fired(rule) => json!(rule.index()),
            Outcome::Ignored | Outcome::Rejected => Value::Null,
        };
        out.push(json!({
            "to": r.to.index(),
            "rule": rule,
            "rejected": r.outcome == Outcome::Rejected,
            "outputs": r.outputs().iter().map(|o| o.index()).collect::<Vec<_>>(),
            "actions": r.actions.iter().map(|a| a.index()).collect::<Vec<_>>(),
            "calls": calls,
            "timers": config.timers,
            "counters": config.counters,
            "next": m.next_timeout(&config),
        }));
    }
    json!({ "steps": out, "reset": m.start.index() })
}

const RUNNER: &str = r#"
window.detentResults = CASES.map(([sim, steps]) => {
  try {
    let state = sim.start;
    let timers = [];
    let counters = [];
    const out = steps.map(([event, start]) => {
      const levels = start.slice();
      const calls = [];
      const read = (i) => { calls.push(i); const v = levels[i]; levels[i] = !v; return v; };
      const r = sim.step(state, event, read, timers, counters);
      state = r.to;
      timers = r.timers;
      counters = r.counters;
      return { to: r.to, rule: r.rule, rejected: r.rejected, outputs: r.outputs,
               actions: r.actions, calls, timers: r.timers, counters: r.counters,
               next: r.nextTimeout };
    });
    const running = sim.create();
    for (const [event, start] of steps) running.step(event, (i) => start[i]);
    running.reset();
    if (running.timers.some((t) => t !== 0)) throw new Error("reset kept a timer");
    if (running.counters.some((c) => c !== 0)) throw new Error("reset kept a counter");
    return { steps: out, reset: running.state };
  } catch (e) {
    return { error: String(e && e.stack || e) };
  }
});
window.detentDone = true;
"#;

fn page(cases: &[Case]) -> String {
    let mut html = String::from("<!DOCTYPE html><html><head><meta charset=\"utf-8\"><title>detent js differential</title></head><body><script>\n\"use strict\";\nconst CASES = [\n");
    for c in cases {
        let steps: Vec<Value> = c.steps.iter().map(|(e, l)| json!([e, l])).collect();
        html.push_str(&format!(
            "[{}, {}],\n",
            to_js(&c.machine),
            Value::Array(steps)
        ));
    }
    html.push_str("];\n");
    html.push_str(RUNNER);
    html.push_str("</script></body></html>\n");
    html
}

/// Runs `browser.py ARGS` and returns its standard output; panics with its error.
pub fn browser(args: &[&str]) -> String {
    let python = detent_tests::python().unwrap_or_else(|e| panic!("{e}"));
    let script = detent_tests::workspace_root().join("tests/python/browser.py");
    let out = Command::new(&python)
        .arg(&script)
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("cannot run {}: {e}", python.display()));
    assert!(
        out.status.success(),
        "browser.py {args:?} failed (run scripts/test.sh to install chromium, chromium-driver and selenium):\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).expect("utf-8")
}

fn run_cases(cases: &[Case], name: &str) {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"));
    let file: &Path = &dir.join(format!("{name}.html"));
    std::fs::write(file, page(cases)).unwrap();
    let got: Value = serde_json::from_str(&browser(&["results", file.to_str().unwrap()]))
        .expect("browser.py prints JSON");
    let got = got.as_array().expect("one result per case");
    assert_eq!(got.len(), cases.len());
    let mut steps = 0;
    for (c, g) in cases.iter().zip(got) {
        assert!(g.get("error").is_none(), "{}: {}", c.label, g["error"]);
        let want = expected(c);
        for (k, (w, s)) in want["steps"]
            .as_array()
            .unwrap()
            .iter()
            .zip(g["steps"].as_array().unwrap())
            .enumerate()
        {
            assert_eq!(
                w,
                s,
                "{}: step {} (event {}, levels {:?}) differs: interpreter left, browser right",
                c.label,
                k + 1,
                c.steps[k].0,
                c.steps[k].1
            );
            steps += 1;
        }
        assert_eq!(
            want["steps"].as_array().unwrap().len(),
            g["steps"].as_array().unwrap().len()
        );
        assert_eq!(want["reset"], g["reset"], "{}: reset", c.label);
    }
    assert!(steps > 0);
    eprintln!("{} machines, {steps} steps agree in Chromium", cases.len());
}

fn trace(rng: &mut Rng, m: &Machine, len: usize) -> Vec<(usize, Vec<bool>)> {
    (0..len)
        .map(|_| {
            (
                rng.index(m.events.len()),
                (0..m.inputs.len()).map(|_| rng.chance(0.5)).collect(),
            )
        })
        .collect()
}

#[test]
fn simulator_agrees_with_the_interpreter_in_chromium() {
    let mut rng = Rng::new(0x5eed_0021);
    let mut cases = Vec::new();
    for path in detent_tests::spec_files("examples") {
        let text = std::fs::read_to_string(&path).unwrap();
        for m in machines_of(&path.display().to_string(), &text) {
            let steps = trace(&mut rng, &m, 60);
            cases.push(Case {
                label: format!("{} machine {}", path.display(), m.name),
                machine: m,
                steps,
            });
        }
    }
    let configs = [
        GenConfig::default(),
        GenConfig {
            events: 0,
            inputs: 3,
            ..GenConfig::default()
        },
        GenConfig {
            states: (1, 12),
            events: 4,
            inputs: 4,
            outputs: 3,
            actions: 3,
            ..GenConfig::default()
        },
        GenConfig {
            inputs: 0,
            groups: false,
            ..GenConfig::default()
        },
        GenConfig {
            policy: Some("reject"),
            inputs: 3,
            ..GenConfig::default()
        },
    ];
    for seed in 0..400u64 {
        let cfg = &configs[seed as usize % configs.len()];
        let text = random_spec(seed, cfg);
        for m in machines_of(&format!("Random{seed}"), &text) {
            let steps = trace(&mut rng, &m, 40);
            cases.push(Case {
                label: format!("Random{seed} ({cfg:?})"),
                machine: m,
                steps,
            });
        }
    }
    run_cases(&cases, "js_differential");
}

/// Timed machines (issue 19): random specs with time bases and `after` rules in
/// states and nested groups, guarded, to self and `stay`, clocked and event-driven,
/// every policy, over traces of 300 steps where the time base is 70% of the events; at
/// every step the timers and `nextTimeout` must equal the interpreter's too.
#[test]
fn timed_simulator_agrees_with_the_interpreter_in_chromium() {
    let mut rng = Rng::new(0x5eed_0019);
    let mut cases = Vec::new();
    let policies = [None, Some("ignore"), Some("reject")];
    for seed in 0..60u64 {
        let cfg = GenConfig {
            events: [0usize, 3, 5][seed as usize % 3],
            policy: policies[(seed / 3) as usize % 3],
            timeouts: true,
            ..GenConfig::default()
        };
        let text = random_spec(9000 + seed, &cfg);
        for m in machines_of(&format!("Timed{seed}"), &text) {
            if !m.has_timers() {
                continue;
            }
            let steps = random_timed_trace(&mut rng, m.events.len(), m.inputs.len(), 300, 0.7);
            cases.push(Case {
                label: format!("Timed{seed} ({cfg:?})"),
                machine: m,
                steps,
            });
        }
    }
    assert!(cases.len() >= 40, "{} timed machines", cases.len());
    run_cases(&cases, "js_timed");
}

/// Machines with counters (issue 20): random specs with one or two counters compared
/// in guards (alone and with inputs) and changed by `+=`, `-=` and `=` in rules and in
/// enter/leave lists, some also with timers, every policy, clocked and event-driven,
/// over traces of 300 steps; at every step the counters after the step (read as
/// at its start by the guards, changed by the operations of the rule that fired,
/// saturating) must equal the interpreter's, with everything else.
#[test]
fn counter_simulator_agrees_with_the_interpreter_in_chromium() {
    let mut rng = Rng::new(0x5eed_0020);
    let mut cases = Vec::new();
    let policies = [None, Some("ignore"), Some("reject")];
    for seed in 0..80u64 {
        let cfg = GenConfig {
            events: [0usize, 3, 5, 2][seed as usize % 4],
            policy: policies[(seed / 4) as usize % 3],
            counters: 1 + (seed as usize / 2) % 2,
            timeouts: seed % 5 == 0,
            ..GenConfig::default()
        };
        let text = random_spec(20_000 + seed, &cfg);
        for m in machines_of(&format!("Counted{seed}"), &text) {
            assert!(m.has_counters(), "Counted{seed}: no counter\n{text}");
            let steps = if m.has_timers() {
                random_timed_trace(&mut rng, m.events.len(), m.inputs.len(), 300, 0.6)
            } else {
                trace(&mut rng, &m, 300)
            };
            cases.push(Case {
                label: format!("Counted{seed} ({cfg:?})"),
                machine: m,
                steps,
            });
        }
    }
    // The traces move the counters: steps where some counter changed, and counters
    // that reached their largest value, in the interpreter's run.
    let (mut changed, mut topped, mut counters) = (0usize, 0usize, 0usize);
    for c in &cases {
        let m = &c.machine;
        let mut config = m.start_config();
        let mut top = vec![false; m.counters.len()];
        for (e, levels) in &c.steps {
            let before = config.counters.clone();
            m.step_config(&mut config, EventId::from_index(*e), levels);
            changed += usize::from(before != config.counters);
            for (k, &v) in config.counters.iter().enumerate() {
                top[k] |= v == m.counters[k].max;
            }
        }
        topped += top.iter().filter(|&&t| t).count();
        counters += m.counters.len();
    }
    eprintln!(
        "{} machines with {counters} counters: {changed} steps changed a counter, {topped} \
         counters reached their largest value",
        cases.len()
    );
    assert_eq!(cases.len(), 80);
    assert!(changed > 1000, "only {changed} steps changed a counter");
    assert!(
        topped * 4 > counters,
        "only {topped} of {counters} counters topped out"
    );
    run_cases(&cases, "js_counters");
}

/// The comparison fails when the simulator differs: a simulator with one rule's target
/// changed, or one that reads an input twice, is caught.
#[test]
fn a_wrong_simulator_is_caught() {
    let text =
        std::fs::read_to_string(detent_tests::workspace_root().join("examples/greenhouse.detent"))
            .unwrap();
    let m = machines_of("greenhouse", &text).remove(0);
    let mut rng = Rng::new(7);
    let steps = trace(&mut rng, &m, 200);
    let case = Case {
        label: "greenhouse".into(),
        machine: m,
        steps,
    };
    let want = expected(&case);
    // Read every input twice: the hostile hooks see it.
    let js = to_js(&case.machine).replace("const inp = (i) => {", "const inp = (i) => { read(i);");
    assert_ne!(js, to_js(&case.machine));
    let steps: Vec<Value> = case.steps.iter().map(|(e, l)| json!([e, l])).collect();
    let html = format!(
        "<!DOCTYPE html><html><body><script>\"use strict\";\nconst CASES = [[{js}, {}]];\n{RUNNER}</script></body></html>",
        Value::Array(steps)
    );
    let file = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("js_wrong.html");
    std::fs::write(&file, html).unwrap();
    let got: Value = serde_json::from_str(&browser(&["results", file.to_str().unwrap()])).unwrap();
    assert_ne!(
        got[0]["steps"], want["steps"],
        "a double read went unnoticed"
    );
}

/// A simulator that subtracts one too many, or whose guards read the counters after
/// the step's operations instead of before, is caught.
#[test]
fn a_wrong_counter_simulator_is_caught() {
    let text = "machine Tries {
        events Fail, Ok;
        outputs stuck;
        counters tries to 2;
        start Run;
        unhandled ignore;
        state Run {
            Fail if tries < 2 => stay, do tries += 1;
            Fail if tries == 2 => Stuck;
            Ok if tries > 0 => stay, do tries -= 1, tries = 0;
        }
        state Stuck emit stuck {
            Ok => Run, do tries = 0;
            Fail => stay, do tries -= 1, tries += 1;
        }
    }";
    let m = machines_of("tries", text).remove(0);
    let mut rng = Rng::new(11);
    let steps = trace(&mut rng, &m, 200);
    let case = Case {
        label: "tries".into(),
        machine: m,
        steps,
    };
    let want = expected(&case);
    let js = to_js(&case.machine);
    let steps: Vec<Value> = case.steps.iter().map(|(e, l)| json!([e, l])).collect();
    let run = |js: &str, tag: &str| -> Value {
        let html = format!(
            "<!DOCTYPE html><html><body><script>\"use strict\";\nconst CASES = [[{js}, {}]];\n{RUNNER}</script></body></html>",
            Value::Array(steps.clone())
        );
        let file = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(format!("js_wrong_{tag}.html"));
        std::fs::write(&file, html).unwrap();
        serde_json::from_str(&browser(&["results", file.to_str().unwrap()])).unwrap()
    };
    assert_eq!(run(&js, "counter_ok")[0]["steps"], want["steps"]);
    let wrong_sub = js.replace(
        "out[c] = Math.max(out[c] - v, 0);",
        "out[c] = Math.max(out[c] - v - 1, 0);",
    );
    assert_ne!(wrong_sub, js);
    assert_ne!(
        run(&wrong_sub, "sub")[0]["steps"],
        want["steps"],
        "a wrong subtraction went unnoticed"
    );
    let late = js.replace(
        "const c = choose(state, event, s.inp, before, cnt);",
        "const c = choose(state, event, s.inp, before, cnt.map((v, k) => Math.min(v + 1, COUNTERS[k].max)));",
    );
    assert_ne!(late, js);
    assert_ne!(
        run(&late, "late")[0]["steps"],
        want["steps"],
        "a late read went unnoticed"
    );
}
