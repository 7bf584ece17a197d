//! Every spec in `examples/` parses, resolves, checks clean, runs a hand-worked trace
//! through the reference interpreter, and satisfies its own `never` / `recover to`
//! properties by exhaustive exploration (an independent reference for the checker's
//! property search: plain breadth-first search over states x events x all input
//! valuations, fine for the few inputs the examples have).

use detent_compiler::driver::check_source;
use detent_compiler::interp::{Config, StepResult};
use detent_compiler::model::{Deadline, EventId, Machine, Prop, Property, StateId};
use detent_compiler::trace::parse_trace;
use std::collections::{HashMap, VecDeque};
use std::path::PathBuf;

fn examples_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../examples")
}

/// Every `examples/*.detent`, sorted by name.
fn example_files() -> Vec<(String, String)> {
    let mut files: Vec<(String, String)> = std::fs::read_dir(examples_dir())
        .expect("examples/ exists")
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "detent"))
        .map(|p| {
            let name = p
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_default();
            let text = std::fs::read_to_string(&p).expect("example is readable");
            (name, text)
        })
        .collect();
    files.sort();
    files
}

fn load(name: &str, text: &str) -> Machine {
    let file = detent_compiler::syntax::parse_source(text)
        .unwrap_or_else(|e| panic!("{name}: syntax error: {}", e.message));
    let (mut machines, errors) = detent_compiler::model::resolve_file(&file);
    assert!(errors.is_empty(), "{name}: resolve errors: {errors:?}");
    assert_eq!(machines.len(), 1, "{name}: one machine per example");
    machines.remove(0)
}

/// One step, compactly: `To [outputs] {actions}`, plus ` unhandled` when no rule fired.
fn show(m: &Machine, r: &StepResult) -> String {
    let outs: Vec<&str> = r
        .outputs()
        .iter()
        .map(|o| m.outputs[o.index()].name.as_str())
        .collect();
    let acts: Vec<&str> = r
        .actions
        .iter()
        .map(|a| m.actions[a.index()].name.as_str())
        .collect();
    let mut s = format!(
        "{} [{}] {{{}}}",
        m.state_name(r.to),
        outs.join(" "),
        acts.join(" ")
    );
    if !r.handled() {
        s.push_str(" unhandled");
    }
    s
}

/// The expected steps of each example's hand-worked trace `examples/<name>.trace`
/// (worked out by hand from LANGUAGE.md's meaning): (spec file, steps).
fn hand_traces() -> Vec<(&'static str, Vec<&'static str>)> {
    vec![
        (
            "debounce.detent",
            vec![
                "Pressing [] {} *10",
                "Released [] {}",
                "Pressing [] {} *20",
                "Pressed [pressed press_edge] {on_press}",
                "Pressed [pressed] {} *5",
                "Releasing [pressed] {} *20",
                "Released [] {on_release}",
            ],
        ),
        (
            "burner.detent",
            vec![
                "Purge [fan] {} *1000",
                "Trial [fan igniter gas_valve] {} *151",
                "Running [fan gas_valve] {} *501",
                "Idle [] {}",
                "Purge [fan] {} *1000",
                "Trial [fan igniter gas_valve] {} *300",
                "Repurge [fan] {} *700",
                "Lockout [lockout_lamp] {log_trip}",
                "Idle [] {}",
            ],
        ),
        (
            "frame_parser.detent",
            vec![
                "Hunt [] {} unhandled",
                "Length [receiving] {reset_frame}",
                "Payload [receiving] {store_length}",
                "Payload [receiving] {store_byte}",
                "Checksum [receiving] {store_byte}",
                "Hunt [frame_ready] {deliver_frame}",
                "Length [receiving] {reset_frame}",
                // InFrame's Sync rule from Length back to Length: a self-transition.
                "Length [receiving] {count_resync reset_frame}",
                "Hunt [] {count_gap}",
            ],
        ),
        (
            "greenhouse.detent",
            vec![
                "Heating [heater] {}",
                "Holding [] {}",
                "Venting [vent_open] {}",
                "Circulating [circulation_fan] {log_rain}",
                "StormHold [] {log_wind}",
                "StormHold [heater] {}",
                "Holding [] {log_wind}",
            ],
        ),
        (
            "kiln.detent",
            vec![
                "Idle [] {sound_buzzer}",
                "Ramping [heater lid_lock] {log_cycle_start close_contactor}",
                "Ramping [heater lid_lock] {}",
                "Soaking [lid_lock] {start_soak_timer}",
                "Soaking [heater lid_lock] {}",
                "Cooling [vent_fan lid_lock] {open_contactor}",
                "Idle [] {log_cycle_end sound_buzzer}",
                "Ramping [heater lid_lock] {log_cycle_start close_contactor}",
                "Fault [vent_fan fault_lamp] {open_contactor log_cycle_end log_fault}",
                "Fault [vent_fan fault_lamp] {}",
            ],
        ),
        (
            "locker.detent",
            vec![
                "Entering [keypad_lit] {buffer_digit}",
                "Locked [] {clear_buffer beep_error}",
                "Entering [keypad_lit] {buffer_digit}",
                "Locked [] {clear_buffer beep_error}",
                "Entering [keypad_lit] {buffer_digit}",
                "Lockout [lockout_lamp] {clear_buffer}",
                "Lockout [lockout_lamp] {beep_error}",
                "Lockout [lockout_lamp] {} *299",
                "Locked [] {}",
                "Entering [keypad_lit] {buffer_digit}",
                "Unlocked [bolt_released] {clear_buffer release_bolt}",
                "Unlocked [bolt_released] {} *49",
                "Ajar [bolt_released] {}",
                "Locked [] {engage_bolt}",
            ],
        ),
        (
            "pattern_detector.detent",
            vec![
                "Got1 [] {}",
                "Got10 [] {}",
                "Got101 [] {}",
                "Found [found] {}",
                "Got10 [] {}",
                "Got101 [] {}",
                "Found [found] {}",
                "Got10 [] {}",
                "Idle [] {}",
            ],
        ),
    ]
}

#[test]
fn there_are_enough_examples_and_each_has_a_trace() {
    let files: Vec<String> = example_files().into_iter().map(|(n, _)| n).collect();
    assert!(files.len() >= 5, "at least five examples, found {files:?}");
    let traced: Vec<&str> = hand_traces().iter().map(|t| t.0).collect();
    for f in &files {
        assert!(
            traced.contains(&f.as_str()),
            "{f} has no hand-worked trace in this test"
        );
    }
}

#[test]
fn examples_check_clean() {
    for (name, text) in example_files() {
        let report = check_source(&name, &text);
        let findings: Vec<String> = report.diagnostics().map(|d| d.message.clone()).collect();
        assert!(findings.is_empty(), "{name}: {findings:?}");
    }
}

#[test]
fn examples_run_hand_worked_traces() {
    let files = example_files();
    for (name, expected) in hand_traces() {
        let text = &files
            .iter()
            .find(|(n, _)| n == name)
            .unwrap_or_else(|| panic!("examples/{name} is missing"))
            .1;
        let m = load(name, text);
        let trace_path = examples_dir().join(name.replace(".detent", ".trace"));
        let trace = std::fs::read_to_string(&trace_path)
            .unwrap_or_else(|e| panic!("{}: {e}", trace_path.display()));
        let steps = parse_trace(&m, &trace).unwrap_or_else(|e| panic!("{name}: {e}"));
        let mut config = m.start_config();
        let shown: Vec<String> = steps
            .iter()
            .filter_map(|e| e.step())
            .map(|s| show(&m, &m.step_config(&mut config, s.event, &s.inputs)))
            .collect();
        // Runs of equal steps are written once with their count, as traces write them.
        let mut got: Vec<String> = Vec::new();
        let mut i = 0;
        while i < shown.len() {
            let n = shown[i..].iter().take_while(|x| **x == shown[i]).count();
            got.push(if n == 1 {
                shown[i].clone()
            } else {
                format!("{} *{n}", shown[i])
            });
            i += n;
        }
        assert_eq!(got, expected, "{name}");
    }
}

/// What a `never` property sees in one step.
struct StepView<'a> {
    m: &'a Machine,
    to: StateId,
    inputs: &'a [bool],
    result: Option<&'a StepResult>,
    /// The counters after the step.
    counters: &'a [u16],
}

fn eval(p: &Prop, v: &StepView) -> bool {
    match p {
        Prop::Input(i) => v.inputs.get(i.index()).copied().unwrap_or(false),
        Prop::Output(o) => match v.result {
            Some(r) => r.outputs().contains(o),
            None => v.m.states[v.to.index()].moore.contains(o),
        },
        Prop::Action(a) => v.result.is_some_and(|r| r.actions.contains(a)),
        Prop::Event(e) => v.result.is_some_and(|r| r.event == *e),
        Prop::InState(s) => v.to == *s,
        Prop::InGroup(g) => v.m.group_contains(*g, v.to),
        Prop::Compare(c, cmp, k) => cmp.holds(u64::from(v.counters[c.index()]), u64::from(*k)),
        Prop::Const(b) => *b,
        Prop::Not(a) => !eval(a, v),
        Prop::And(a, b) => eval(a, v) && eval(b, v),
        Prop::Or(a, b) => eval(a, v) || eval(b, v),
    }
}

/// Every step from a configuration: all events x all input valuations, each with
/// the configuration after it.
fn successors(m: &Machine, c: &Config) -> Vec<(Vec<bool>, StepResult, Config)> {
    let n = m.inputs.len();
    assert!(n <= 12, "exhaustive exploration is for small examples");
    let mut out = Vec::new();
    for e in 0..m.events.len() {
        for bits in 0..(1u32 << n) {
            let inputs: Vec<bool> = (0..n).map(|i| bits >> i & 1 == 1).collect();
            let mut next = c.clone();
            let r = m.step_config(&mut next, EventId::from_index(e), &inputs);
            out.push((inputs, r, next));
        }
    }
    out
}

/// Every configuration reachable from the start, by brute force (the interpreter's
/// steps over every event and valuation; independent of `configs.rs`), with the steps
/// out of each: (configurations, edges as (from, inputs, step, to)).
type Edges = Vec<(usize, Vec<bool>, StepResult, usize)>;
fn explore(m: &Machine) -> (Vec<Config>, Edges) {
    let mut index: HashMap<Config, usize> = HashMap::new();
    let mut configs = vec![m.start_config()];
    index.insert(m.start_config(), 0);
    let mut edges = Vec::new();
    let mut queue = VecDeque::from([0usize]);
    while let Some(i) = queue.pop_front() {
        let c = configs[i].clone();
        for (inputs, r, next) in successors(m, &c) {
            let j = match index.get(&next) {
                Some(&j) => j,
                None => {
                    let j = configs.len();
                    index.insert(next.clone(), j);
                    configs.push(next);
                    queue.push_back(j);
                    j
                }
            };
            edges.push((i, inputs, r, j));
        }
        assert!(configs.len() < 200_000, "examples stay small");
    }
    (configs, edges)
}

/// Configurations reachable from the start without expanding through `blocked` states.
fn reachable(configs: &[Config], edges: &Edges, blocked: &[StateId]) -> Vec<bool> {
    let mut out_edges: Vec<Vec<usize>> = vec![Vec::new(); configs.len()];
    for (a, _, _, b) in edges {
        out_edges[*a].push(*b);
    }
    let mut seen = vec![false; configs.len()];
    seen[0] = true;
    let mut queue = VecDeque::from([0usize]);
    while let Some(i) = queue.pop_front() {
        if blocked.contains(&configs[i].state) {
            continue;
        }
        for &j in &out_edges[i] {
            if !seen[j] {
                seen[j] = true;
                queue.push_back(j);
            }
        }
    }
    seen
}

#[test]
fn examples_satisfy_their_properties_exhaustively() {
    let mut checked = 0;
    for (name, text) in example_files() {
        let m = load(&name, &text);
        let (configs, edges) = explore(&m);
        for p in &m.properties {
            checked += 1;
            match p {
                Property::Never { prop, text, .. } => {
                    let start = StepView {
                        m: &m,
                        to: m.start,
                        inputs: &[],
                        result: None,
                        counters: &configs[0].counters,
                    };
                    assert!(!eval(prop, &start), "{name}: `{text}` holds at step 0");
                    for (a, inputs, r, b) in &edges {
                        let v = StepView {
                            m: &m,
                            to: r.to,
                            inputs,
                            result: Some(r),
                            counters: &configs[*b].counters,
                        };
                        assert!(
                            !eval(prop, &v),
                            "{name}: `{text}` holds after {} --{}--> {} (from {:?})",
                            m.state_name(r.from),
                            m.event_name(r.event),
                            m.state_name(r.to),
                            configs[*a]
                        );
                    }
                }
                Property::Ensure {
                    response,
                    within,
                    trigger,
                    text,
                    ..
                } => {
                    // Every (configuration, steps left for an open obligation) the
                    // machine can be in, by brute force over the steps; no step may
                    // use up the last one without the response.
                    let (span, tb) = match within {
                        Deadline::Ticks(t) => (*t, m.timebase.as_ref().map(|t| t.event)),
                        Deadline::Steps(k) => (*k, None),
                    };
                    let counts = |e| match within {
                        Deadline::Ticks(_) => Some(e) == tb,
                        Deadline::Steps(_) => true,
                    };
                    let start = StepView {
                        m: &m,
                        to: m.start,
                        inputs: &[],
                        result: None,
                        counters: &configs[0].counters,
                    };
                    let open0 = !eval(response, &start) && eval(trigger, &start);
                    assert!(!(open0 && span == 0), "{name}: `{text}` fails at step 0");
                    let first = if open0 { span } else { 0 };
                    let mut seen: std::collections::HashSet<(usize, u32)> =
                        std::collections::HashSet::from([(0, first)]);
                    let mut queue = VecDeque::from([(0usize, first)]);
                    let mut out_edges: Vec<Vec<usize>> = vec![Vec::new(); configs.len()];
                    for (k, (a, _, _, _)) in edges.iter().enumerate() {
                        out_edges[*a].push(k);
                    }
                    while let Some((c, left)) = queue.pop_front() {
                        for &k in &out_edges[c] {
                            let (_, inputs, r, b) = &edges[k];
                            let v = StepView {
                                m: &m,
                                to: r.to,
                                inputs,
                                result: Some(r),
                                counters: &configs[*b].counters,
                            };
                            let next = if eval(response, &v) {
                                0
                            } else if left > 0 {
                                let l = if counts(r.event) { left - 1 } else { left };
                                assert!(
                                    l > 0,
                                    "{name}: `{text}` is late after {} --{}--> {}",
                                    m.state_name(r.from),
                                    m.event_name(r.event),
                                    m.state_name(r.to)
                                );
                                l
                            } else if eval(trigger, &v) {
                                assert!(span > 0, "{name}: `{text}` fails at once");
                                span
                            } else {
                                0
                            };
                            if seen.insert((*b, next)) {
                                queue.push_back((*b, next));
                            }
                        }
                    }
                }
                Property::Recover {
                    target,
                    except,
                    text,
                    ..
                } => {
                    // Backward reachability to the target over every step.
                    let mut reaches: Vec<bool> =
                        configs.iter().map(|c| c.state == *target).collect();
                    let mut changed = true;
                    while changed {
                        changed = false;
                        for (a, _, _, b) in &edges {
                            if reaches[*b] && !reaches[*a] {
                                reaches[*a] = true;
                                changed = true;
                            }
                        }
                    }
                    let obliged = reachable(&configs, &edges, except);
                    for (i, c) in configs.iter().enumerate() {
                        if obliged[i] && !except.contains(&c.state) {
                            assert!(
                                reaches[i],
                                "{name}: `{text}` fails from `{}` {:?}",
                                m.state_name(c.state),
                                c.timers
                            );
                        }
                    }
                }
            }
        }
    }
    assert!(
        checked >= 10,
        "the examples declare properties ({checked} checked)"
    );
}

/// Splits RFC 4180 CSV into records of fields (quoted fields, doubled quotes, CRLF).
fn csv_records(text: &str) -> Vec<Vec<String>> {
    let mut records = Vec::new();
    let mut record = Vec::new();
    let mut field = String::new();
    let mut quoted = false;
    let mut chars = text.chars().peekable();
    while let Some(c) = chars.next() {
        match (quoted, c) {
            (true, '"') if chars.peek() == Some(&'"') => {
                chars.next();
                field.push('"');
            }
            (true, '"') => quoted = false,
            (true, c) => field.push(c),
            (false, '"') if field.is_empty() => quoted = true,
            (false, ',') => record.push(std::mem::take(&mut field)),
            (false, '\r') if chars.peek() == Some(&'\n') => {}
            (false, '\n') => {
                record.push(std::mem::take(&mut field));
                records.push(std::mem::take(&mut record));
            }
            (false, c) => field.push(c),
        }
    }
    records
}

#[test]
fn examples_tables_render_consistently() {
    use detent_compiler::table;
    for (name, text) in example_files() {
        let m = load(&name, &text);
        let rows = table::rows(&m);
        // Clean examples are complete or use a policy: no `missing` rows.
        assert!(
            rows.iter().all(|r| r.kind != table::RowKind::Missing),
            "{name}: missing rows"
        );
        let json: serde_json::Value =
            serde_json::from_str(&table::to_json(&m)).expect("table JSON parses");
        assert_eq!(
            json["rows"].as_array().map(Vec::len),
            Some(rows.len()),
            "{name}"
        );
        let text_table = table::to_text(&m);
        // Title, header, rows, and the line that says what `moore(state)` is.
        assert_eq!(text_table.lines().count(), rows.len() + 3, "{name}");

        let records = csv_records(&table::to_csv(&m));
        assert!(records.iter().all(|r| r.len() == 7), "{name}: 7 fields");
        assert_eq!(
            records[0],
            ["state", "event", "guard", "next", "mealy", "actions", "moore"]
        );
        let state_rows: Vec<&str> = records
            .iter()
            .filter(|r| !r[0].starts_with('@') && r[1].is_empty())
            .map(|r| r[0].as_str())
            .collect();
        let names: Vec<&str> = m.states.iter().map(|s| s.name.as_str()).collect();
        assert_eq!(
            state_rows,
            names[..],
            "{name}: one state row per state, in order"
        );
        let rule_rows = records
            .iter()
            .skip(1)
            .filter(|r| !r[0].starts_with('@') && !r[1].is_empty())
            .count();
        assert_eq!(
            rule_rows,
            rows.iter().filter(|r| !r.kind.is_unhandled()).count(),
            "{name}"
        );
        let properties = records
            .iter()
            .filter(|r| r[0] == "@never" || r[0] == "@recover" || r[0] == "@ensure")
            .count();
        assert_eq!(properties, m.properties.len(), "{name}");
    }
}
