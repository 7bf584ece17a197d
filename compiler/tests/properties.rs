//! `never` and `recover to`: purpose-built specs with known verdicts and exact shortest
//! traces, replay of counterexamples through the interpreter, random machines checked
//! against a brute-force evaluation over every reachable (state, full valuation) step,
//! and a 100,000-state chain.

use detent_compiler::check::check_machine;
use detent_compiler::check::property::{check_never, check_recover, NeverViolation};
use detent_compiler::check::render::{render_text, Source};
use detent_compiler::diag::{Diagnostic, Lint};
use detent_compiler::driver::check_source;
use detent_compiler::interp::StepResult;
use detent_compiler::model::{
    ActionId, EventId, Machine, OutputId, Prop, Property, RuleId, Scope, ScopeRules, StateId,
    Target,
};
use detent_compiler::report::check::DiagnosticEntry;
use detent_compiler::report::trace_entries;
use detent_compiler::trace::{parse_trace, run_json_lines};
use detent_tests::gen::{random_spec, GenConfig, Rng};
use std::collections::VecDeque;

fn machine(text: &str) -> Machine {
    let ast = detent_compiler::syntax::parse_source(text).expect("parses");
    assert_eq!(ast.machines.len(), 1);
    detent_compiler::model::resolve(&ast.machines[0]).expect("resolves")
}

fn property_diags(m: &Machine) -> Vec<Diagnostic> {
    check_machine(m)
        .into_iter()
        .filter(|d| d.lint == Lint::Property)
        .collect()
}

fn never_prop(m: &Machine, i: usize) -> &Prop {
    match &m.properties[i] {
        Property::Never { prop, .. } => prop,
        p => panic!("property {i} is not `never`: {p:?}"),
    }
}

fn recover_prop(m: &Machine, i: usize) -> (StateId, &[StateId]) {
    match &m.properties[i] {
        Property::Recover { target, except, .. } => (*target, except),
        p => panic!("property {i} is not `recover`: {p:?}"),
    }
}

/// The trace as `Event a=1 b=0` words, for exact comparisons.
fn words(m: &Machine, trace: &[(EventId, Vec<bool>)]) -> Vec<String> {
    trace
        .iter()
        .map(|(e, v)| {
            let mut s = m.event_name(*e).to_string();
            for (i, b) in v.iter().enumerate() {
                s.push_str(&format!(" {}={}", m.inputs[i].name, u8::from(*b)));
            }
            s
        })
        .collect()
}

/// P on a step, straight from the language's definition (independent of the checker).
#[allow(clippy::too_many_arguments)]
fn eval(
    m: &Machine,
    p: &Prop,
    ev: Option<EventId>,
    to: StateId,
    outs: &[OutputId],
    acts: &[ActionId],
    ins: &[bool],
) -> bool {
    match p {
        Prop::Input(i) => ins.get(i.index()).copied().unwrap_or(false),
        Prop::Output(o) => outs.contains(o),
        Prop::Action(a) => acts.contains(a),
        Prop::Event(e) => ev == Some(*e),
        Prop::InState(s) => to == *s,
        Prop::InGroup(g) => m.groups[g.index()].states.contains(&to),
        Prop::Compare(..) => panic!("the random machines here have no counters"),
        Prop::Const(b) => *b,
        Prop::Not(a) => !eval(m, a, ev, to, outs, acts, ins),
        Prop::And(a, b) => {
            eval(m, a, ev, to, outs, acts, ins) && eval(m, b, ev, to, outs, acts, ins)
        }
        Prop::Or(a, b) => {
            eval(m, a, ev, to, outs, acts, ins) || eval(m, b, ev, to, outs, acts, ins)
        }
    }
}

fn eval_step(m: &Machine, p: &Prop, r: &StepResult, ins: &[bool]) -> bool {
    eval(m, p, Some(r.event), r.to, &r.outputs(), &r.actions, ins)
}

fn eval_step0(m: &Machine, p: &Prop) -> bool {
    let moore = &m.states[m.start.index()].moore;
    eval(
        m,
        p,
        None,
        m.start,
        moore,
        &[],
        &vec![false; m.inputs.len()],
    )
}

/// Replays a `never` counterexample through `Machine::step`: no earlier step violates P,
/// the last one does, and the reported facts are the interpreter's.
fn replay_never(m: &Machine, p: &Prop, v: &NeverViolation) -> Vec<StepResult> {
    let results = m.run(v.trace.iter().map(|(e, ins)| (*e, ins.as_slice())));
    assert_eq!(eval_step0(m, p), v.trace.is_empty(), "step 0");
    for (i, (r, (_, ins))) in results.iter().zip(&v.trace).enumerate() {
        let last = i + 1 == v.trace.len();
        assert_eq!(eval_step(m, p, r, ins), last, "step {} of the trace", i + 1);
        if last {
            assert_eq!(r.to, v.state);
            assert_eq!(r.outputs(), v.outputs);
            assert_eq!(r.actions, v.actions);
        }
    }
    results
}

const OVEN: &str = r#"
/// Two ways to reach `Heating`; venting with the door open keeps the heater on.
machine Oven {
    events Start, Heat, Vent, Stop;
    inputs door_closed;
    outputs heater, vent;
    actions log;
    start Off;
    unhandled ignore;
    never heater && vent;
    never heater && !door_closed;
    never vent && !heater && !in Cooling;
    never in Off;
    state Off {
        Start if door_closed => Ready;
        Heat => Warm;
    }
    state Warm { Heat => Hotter; Stop => Off; }
    state Hotter { Heat => Heating; Stop => Off; }
    state Ready { Heat => Heating; Stop => Off; }
    state Heating emit heater {
        Vent if !door_closed => stay, emit vent;
        Vent if door_closed => Cooling, do log;
        Stop => Off;
    }
    state Cooling emit vent { Stop => Off; }
}
"#;

#[test]
fn never_over_a_mealy_output_gives_the_exact_shortest_trace() {
    let m = machine(OVEN);
    let v = check_never(&m, never_prop(&m, 0))
        .unwrap()
        .expect("heater && vent is reachable");
    // Off -Start(door closed)-> Ready -Heat-> Heating -Vent(door open)-> stay + vent: three
    // steps; the other way (Warm, Hotter) needs four.
    assert_eq!(
        words(&m, &v.trace),
        [
            "Start door_closed=1",
            "Heat door_closed=0",
            "Vent door_closed=0"
        ]
    );
    assert_eq!(m.state_name(v.state), "Heating");
    let results = replay_never(&m, never_prop(&m, 0), &v);
    let names: Vec<&str> = results[2]
        .outputs()
        .iter()
        .map(|o| m.outputs[o.index()].name.as_str())
        .collect();
    assert_eq!(names, ["heater", "vent"]);
    assert_eq!(results[2].mealy.len(), 1, "vent is the rule's Mealy output");
}

#[test]
fn never_over_an_input_refines_the_step_atom() {
    let m = machine(OVEN);
    // heater is high in Heating whatever the door: the Heat step's atom is `true`, and
    // the witness picks door_closed = 0 from P.
    let v = check_never(&m, never_prop(&m, 1))
        .unwrap()
        .expect("violated");
    assert_eq!(
        words(&m, &v.trace),
        ["Start door_closed=1", "Heat door_closed=0"]
    );
    replay_never(&m, never_prop(&m, 1), &v);
    // vent without heater happens only in Cooling: holds.
    assert_eq!(check_never(&m, never_prop(&m, 2)).unwrap(), None);
    // Step 0 counts: the start state is Off.
    let v0 = check_never(&m, never_prop(&m, 3)).unwrap().expect("step 0");
    assert!(v0.trace.is_empty());
}

#[test]
fn property_diagnostic_text_and_json() {
    let m = machine(OVEN);
    let diags = property_diags(&m);
    let msgs: Vec<&str> = diags.iter().map(|d| d.message.as_str()).collect();
    assert_eq!(
        msgs,
        [
            "property `never heater && vent` is violated at step 3",
            "property `never heater && !door_closed` is violated at step 2",
            "property `never in Off` is violated at step 0",
        ]
    );
    let d = &diags[0];
    assert!(d.is_error());
    let line = detent_compiler::check::render::line_col(d.span.expect("span")).0;
    assert_eq!(
        OVEN.lines().nth(line - 1).map(str::trim),
        Some("never heater && vent;")
    );
    assert_eq!(d.trace.as_ref().map(Vec::len), Some(3));
    assert!(d.notes[0].contains("`Heating`") && d.notes[0].contains("`heater`, `vent`"));
    let text = render_text(d, &Source::new("oven.detent", OVEN));
    assert!(text.contains("error[property]"), "{text}");
    assert!(
        text.contains(" Vent door_closed=0\n") && !text.contains("3."),
        "{text}"
    );
    let json = serde_json::to_value(DiagnosticEntry::new(d, "oven.detent")).expect("json");
    assert_eq!(json["lint"], "property");
    assert_eq!(json["trace"][0]["event"], "Start");
    assert_eq!(json["trace"][0]["inputs"]["door_closed"], true);
    assert_eq!(json["trace"][2]["inputs"]["door_closed"], false);
    // The whole check path reports them too.
    let report = check_source("oven.detent", OVEN);
    assert_eq!(
        report
            .diagnostics()
            .filter(|d| d.lint == Lint::Property)
            .count(),
        3
    );
}

#[test]
fn json_counterexample_replays_through_the_trace_reader() {
    // The JSON trace the checker prints is what `detent run --trace` reads
    // (compiler::trace); running it shows the violating step's outputs.
    let m = machine(OVEN);
    let d = &property_diags(&m)[0];
    let json =
        serde_json::to_string(&trace_entries(d.trace.as_ref().expect("trace"))).expect("json");
    let steps = parse_trace(&m, &json).expect("the trace reader accepts the checker's JSON");
    let lines = run_json_lines(&m, &steps);
    assert_eq!(lines.len(), 4);
    let last: serde_json::Value = serde_json::from_str(&lines[3]).expect("json");
    assert_eq!(last["to"], "Heating");
    assert_eq!(last["mealy"], serde_json::json!(["vent"]));
    assert_eq!(last["moore"], serde_json::json!(["heater"]));
    // The text form too.
    let text =
        detent_compiler::check::render::trace_lines(d.trace.as_ref().expect("trace")).join("\n");
    let from_text = parse_trace(&m, &text).expect("text trace");
    let key = |t: &[detent_compiler::trace::TraceEntry]| -> Vec<(EventId, Vec<bool>)> {
        t.iter()
            .filter_map(|e| e.step())
            .map(|s| (s.event, s.inputs.clone()))
            .collect()
    };
    assert_eq!(key(&from_text), key(&steps));
}

const CONVEYOR: &str = r#"
machine Conveyor {
    events Go, Up, Down, Halt;
    outputs motor, lamp;
    actions brake, chime;
    start Idle;
    unhandled reject;
    never brake && in Moving;
    never brake;
    never chime && !in Quick;
    never in Moving && lamp;
    never in Moving;
    state Idle emit lamp { Go => Slow; }
    group Moving emit motor {
        leave do brake;
        state Slow { Up => Quick; Down => Slow; }
        state Quick {
            enter do chime;
            Down => Slow;
            Halt => Idle;
        }
    }
}
"#;

#[test]
fn never_over_actions_groups_and_enter_leave() {
    let m = machine(CONVEYOR);
    // brake runs only on leaving the group, so never inside it.
    assert_eq!(check_never(&m, never_prop(&m, 0)).unwrap(), None);
    let v = check_never(&m, never_prop(&m, 1))
        .unwrap()
        .expect("brake runs on Halt");
    assert_eq!(words(&m, &v.trace), ["Go", "Up", "Halt"]);
    let names: Vec<&str> = v
        .actions
        .iter()
        .map(|a| m.actions[a.index()].name.as_str())
        .collect();
    assert_eq!(names, ["brake"]);
    replay_never(&m, never_prop(&m, 1), &v);
    // chime is Quick's enter action: only when arriving in Quick. `Slow => Slow` is an
    // external self-transition of Slow and does not re-run the group's actions.
    assert_eq!(check_never(&m, never_prop(&m, 2)).unwrap(), None);
    assert_eq!(check_never(&m, never_prop(&m, 3)).unwrap(), None);
    let v = check_never(&m, never_prop(&m, 4))
        .unwrap()
        .expect("in Moving after Go");
    assert_eq!(words(&m, &v.trace), ["Go"]);
    assert_eq!(property_diags(&m).len(), 2);
}

#[test]
fn never_in_a_clocked_machine_with_guards_on_p_inputs() {
    let m = machine(
        r#"
        machine Latch {
            inputs set;
            outputs q;
            start Low;
            never in High && !set;
            never in High && set;
            never q && in Low;
            state Low { if set => High; if !set => stay; }
            state High emit q { if set => stay; if !set => Low; }
        }
        "#,
    );
    // Being in High after a step needs set = 1 in that step.
    assert_eq!(check_never(&m, never_prop(&m, 0)).unwrap(), None);
    let v = check_never(&m, never_prop(&m, 1))
        .unwrap()
        .expect("violated");
    assert_eq!(words(&m, &v.trace), ["Tick set=1"]);
    assert_eq!(check_never(&m, never_prop(&m, 2)).unwrap(), None);
}

const PUMP: &str = r#"
machine Pump {
    events Go, Fail, Reset, Jam, Limp;
    outputs alarm;
    start Idle;
    unhandled ignore;
    recover to Idle except Fault;
    recover to Idle;
    recover to Run except Fault, Stuck;
    state Idle { Go => Run; }
    state Run { Reset => Idle; Fail => Fault; Limp => Limping; }
    state Limping { Fail => Fault; }
    state Fault emit alarm { Jam => Stuck; Reset => Idle; }
    terminal state Stuck emit alarm;
}
"#;

#[test]
fn recover_with_an_exception_that_hides_a_stuck_state() {
    let m = machine(PUMP);
    // Stuck is reachable only through the exempted Fault; Limping recovers through
    // Fault (paths through exempted states count).
    let (t, ex) = recover_prop(&m, 0);
    assert_eq!(check_recover(&m, t, ex).unwrap(), None);
    // Without the exception, Stuck is the state that cannot get back.
    let (t, ex) = recover_prop(&m, 1);
    let v = check_recover(&m, t, ex)
        .unwrap()
        .expect("Stuck cannot recover");
    assert_eq!(m.state_name(v.state), "Stuck");
    assert_eq!(words(&m, &v.trace), ["Go", "Fail", "Jam"]);
    assert_eq!(v.stuck, [v.state]);
    let (t, ex) = recover_prop(&m, 2);
    assert_eq!(check_recover(&m, t, ex).unwrap(), None);
    let diags = property_diags(&m);
    assert_eq!(diags.len(), 1);
    assert_eq!(
        diags[0].message,
        "property `recover to Idle` is violated: state `Stuck` cannot get back to `Idle`"
    );
    assert_eq!(diags[0].state.as_deref(), Some("Stuck"));
    assert_eq!(diags[0].trace.as_ref().map(Vec::len), Some(3));
}

#[test]
fn recover_fails_when_a_stuck_state_is_reachable_around_the_exception() {
    let m = machine(&PUMP.replace("Limp => Limping; }", "Limp => Limping; Jam => Stuck; }"));
    let (t, ex) = recover_prop(&m, 0);
    let v = check_recover(&m, t, ex)
        .unwrap()
        .expect("Stuck is reachable without Fault");
    assert_eq!(words(&m, &v.trace), ["Go", "Jam"]);
    let r = m.run(v.trace.iter().map(|(e, i)| (*e, i.as_slice())));
    assert_eq!(r.last().map(|r| r.to), Some(v.state));
}

// ---------------------------------------------------------------------------------------
// Random machines against brute force.

/// Shortest violating step count by brute force over every reachable (state, event, full
/// valuation), or `None` when P holds.
fn brute_never(m: &Machine, p: &Prop) -> Option<usize> {
    if eval_step0(m, p) {
        return Some(0);
    }
    let n_in = m.inputs.len();
    let mut depth = vec![usize::MAX; m.states.len()];
    depth[m.start.index()] = 0;
    let mut queue = VecDeque::from([m.start]);
    while let Some(s) = queue.pop_front() {
        for e in 0..m.events.len() {
            for bits in 0..1u32 << n_in {
                let ins: Vec<bool> = (0..n_in).map(|i| bits >> i & 1 == 1).collect();
                let r = m.step(s, EventId::from_index(e), &ins);
                if eval_step(m, p, &r, &ins) {
                    return Some(depth[s.index()] + 1);
                }
                if depth[r.to.index()] == usize::MAX {
                    depth[r.to.index()] = depth[s.index()] + 1;
                    queue.push_back(r.to);
                }
            }
        }
    }
    None
}

fn brute_succ(m: &Machine, s: StateId) -> Vec<StateId> {
    let n_in = m.inputs.len();
    let mut out = Vec::new();
    for e in 0..m.events.len() {
        for bits in 0..1u32 << n_in {
            let ins: Vec<bool> = (0..n_in).map(|i| bits >> i & 1 == 1).collect();
            out.push(m.step(s, EventId::from_index(e), &ins).to);
        }
    }
    out
}

/// (stuck states with their BFS depth) by brute force.
fn brute_recover(m: &Machine, target: StateId, except: &[StateId]) -> Vec<(StateId, usize)> {
    let n = m.states.len();
    let mut depth = vec![usize::MAX; n];
    depth[m.start.index()] = 0;
    let mut queue = VecDeque::from([m.start]);
    let mut stuck = Vec::new();
    while let Some(s) = queue.pop_front() {
        if except.contains(&s) {
            continue;
        }
        // Can s reach the target (any path)?
        let mut seen = vec![false; n];
        seen[s.index()] = true;
        let mut q2 = VecDeque::from([s]);
        while let Some(x) = q2.pop_front() {
            for t in brute_succ(m, x) {
                if !seen[t.index()] {
                    seen[t.index()] = true;
                    q2.push_back(t);
                }
            }
        }
        if !seen[target.index()] {
            stuck.push((s, depth[s.index()]));
        }
        for t in brute_succ(m, s) {
            if depth[t.index()] == usize::MAX {
                depth[t.index()] = depth[s.index()] + 1;
                queue.push_back(t);
            }
        }
    }
    stuck
}

fn random_prop(rng: &mut Rng, names: &[String], depth: usize) -> String {
    if depth == 0 || rng.chance(0.3) {
        let atom = names[rng.index(names.len())].clone();
        return if rng.chance(0.3) {
            format!("!{atom}")
        } else {
            atom
        };
    }
    let a = random_prop(rng, names, depth - 1);
    let b = random_prop(rng, names, depth - 1);
    match rng.index(4) {
        0 => format!("({a} || {b})"),
        3 => format!("!({a} && {b})"),
        _ => format!("({a} && {b})"),
    }
}

#[test]
fn random_machines_agree_with_brute_force() {
    let configs = [
        GenConfig {
            inputs: 4,
            ..GenConfig::default()
        },
        GenConfig {
            events: 0,
            inputs: 3,
            ..GenConfig::default()
        },
        GenConfig {
            states: (3, 10),
            events: 4,
            inputs: 2,
            outputs: 3,
            actions: 3,
            ..GenConfig::default()
        },
        GenConfig {
            inputs: 0,
            ..GenConfig::default()
        },
    ];
    let (mut never_held, mut never_failed, mut rec_held, mut rec_failed) = (0, 0, 0, 0);
    for (ci, cfg) in configs.iter().enumerate() {
        for seed in 0..120u64 {
            let seed = seed * 7 + ci as u64 * 1000 + 1;
            let spec = random_spec(seed, cfg);
            let mut rng = Rng::new(seed ^ 0xABCD);
            // Names P may use: events, outputs, actions, inputs, `in S`, `in G`.
            let mut names: Vec<String> = Vec::new();
            if cfg.events == 0 {
                names.push("Tick".into());
            }
            names.extend((0..cfg.events).map(|i| format!("Ev{i}")));
            names.extend((0..cfg.outputs).map(|i| format!("out{i}")));
            names.extend((0..cfg.actions).map(|i| format!("act{i}")));
            names.extend((0..cfg.inputs).map(|i| format!("in{i}")));
            let n_states = (0..)
                .take_while(|i| spec.contains(&format!("state S{i} ")))
                .count();
            names.extend((0..n_states).map(|i| format!("in S{i}")));
            let n_groups = (0..)
                .take_while(|i| spec.contains(&format!("group G{i} ")))
                .count();
            names.extend((0..n_groups).map(|i| format!("in G{i}")));
            let mut decls = String::new();
            for _ in 0..3 {
                decls.push_str(&format!(
                    "    never {};\n",
                    random_prop(&mut rng, &names, 3)
                ));
            }
            for _ in 0..2 {
                let t = rng.index(n_states);
                let ex: Vec<String> = (0..rng.index(3))
                    .map(|_| format!("S{}", rng.index(n_states)))
                    .collect();
                let mut ex = ex;
                ex.dedup();
                if ex.is_empty() {
                    decls.push_str(&format!("    recover to S{t};\n"));
                } else {
                    decls.push_str(&format!("    recover to S{t} except {};\n", ex.join(", ")));
                }
            }
            let anchor = spec.find("    unhandled").expect("policy line");
            let spec = format!("{}{}{}", &spec[..anchor], decls, &spec[anchor..]);
            let m = machine(&spec);
            assert_eq!(m.properties.len(), 5, "{spec}");
            for p in &m.properties {
                match p {
                    Property::Never { prop, text, .. } => {
                        let got = check_never(&m, prop).unwrap();
                        let want = brute_never(&m, prop);
                        assert_eq!(got.as_ref().map(|v| v.trace.len()), want, "{text}\n{spec}");
                        match got {
                            Some(v) => {
                                replay_never(&m, prop, &v);
                                never_failed += 1;
                            }
                            None => never_held += 1,
                        }
                    }
                    Property::Ensure { .. } => panic!("only never and recover are declared here"),
                    Property::Recover {
                        target,
                        except,
                        text,
                        ..
                    } => {
                        let got = check_recover(&m, *target, except).unwrap();
                        let want = brute_recover(&m, *target, except);
                        match got {
                            None => {
                                assert!(want.is_empty(), "{text}: brute force {want:?}\n{spec}");
                                rec_held += 1;
                            }
                            Some(v) => {
                                let min = want.iter().map(|w| w.1).min();
                                assert_eq!(Some(v.trace.len()), min, "{text}\n{spec}");
                                let mut a: Vec<StateId> = want.iter().map(|w| w.0).collect();
                                let mut b = v.stuck.clone();
                                a.sort_unstable();
                                b.sort_unstable();
                                assert_eq!(a, b, "{text}\n{spec}");
                                let r = m.run(v.trace.iter().map(|(e, i)| (*e, i.as_slice())));
                                assert_eq!(r.last().map_or(m.start, |r| r.to), v.state);
                                assert!(!except.contains(&m.start) || v.trace.is_empty());
                                for step in &r[..r.len().saturating_sub(1)] {
                                    assert!(
                                        !except.contains(&step.to),
                                        "trace passes an exempt state"
                                    );
                                }
                                rec_failed += 1;
                            }
                        }
                    }
                }
            }
            // The lint reports exactly the violated ones.
            let n_bad = property_diags(&m).len();
            let n_want = m
                .properties
                .iter()
                .filter(|p| match p {
                    Property::Never { prop, .. } => brute_never(&m, prop).is_some(),
                    Property::Recover { target, except, .. } => {
                        !brute_recover(&m, *target, except).is_empty()
                    }
                    Property::Ensure { .. } => panic!("only never and recover are declared here"),
                })
                .count();
            assert_eq!(n_bad, n_want, "{spec}");
        }
    }
    // Both verdicts occur often enough to mean something.
    for (what, n) in [
        ("never holds", never_held),
        ("never fails", never_failed),
        ("recover holds", rec_held),
        ("recover fails", rec_failed),
    ] {
        assert!(n >= 40, "{what}: only {n} cases");
    }
}

// ---------------------------------------------------------------------------------------
// Scale: a 100,000-state chain (past the spec language's 65,535-state limit, so the
// machine is built directly from a parsed template).

fn chain(n: usize, back: bool) -> Machine {
    let mut m = machine(
        r#"
        machine Chain {
            events Next, Back;
            outputs done;
            actions step;
            start C0;
            unhandled ignore;
            never done;
            recover to C0;
            never step && in C1;
            state C0 { Next => C1, do step; Back => C0; }
            state C1 emit done;
        }
        "#,
    );
    let template = m.states[0].clone();
    let last = m.states[1].clone();
    let next_rule = m.rules[0].clone();
    let back_rule = m.rules[1].clone();
    let (next, back_ev) = (EventId(0), EventId(1));
    m.states.clear();
    m.rules.clear();
    for i in 0..n {
        let s = StateId::from_index(i);
        let mut st = if i + 1 == n {
            last.clone()
        } else {
            template.clone()
        };
        st.name = format!("C{i}");
        st.rules = ScopeRules::default();
        if i + 1 < n {
            let mut r = next_rule.clone();
            r.scope = Scope::State(s);
            r.target = Target::To(StateId::from_index(i + 1));
            st.rules
                .named
                .push((next, vec![RuleId::from_index(m.rules.len())]));
            m.rules.push(r);
        }
        if back {
            let mut r = back_rule.clone();
            r.scope = Scope::State(s);
            r.target = Target::To(StateId(0));
            st.rules
                .named
                .push((back_ev, vec![RuleId::from_index(m.rules.len())]));
            m.rules.push(r);
        }
        m.states.push(st);
    }
    // Built by hand: lower it again so that it matches its states and rules.
    m.lowered_or_error().expect("the chain lowers")
}

#[test]
fn hundred_thousand_state_chain() {
    const N: usize = 100_000;
    let m = chain(N, true);
    let v = check_never(&m, never_prop(&m, 0))
        .unwrap()
        .expect("the last state emits done");
    assert_eq!(v.trace.len(), N - 1);
    assert_eq!(v.state, StateId::from_index(N - 1));
    let (t, ex) = recover_prop(&m, 2);
    assert_eq!(check_recover(&m, t, ex).unwrap(), None);
    // `step` runs on every Next, including the one into C1 (step 1).
    let v = check_never(&m, never_prop(&m, 1))
        .unwrap()
        .expect("step into C1");
    assert_eq!(v.trace.len(), 1);

    let m = chain(N, false);
    let (t, ex) = recover_prop(&m, 2);
    let v = check_recover(&m, t, ex).unwrap().expect("no way back");
    assert_eq!(m.state_name(v.state), "C1");
    assert_eq!(v.stuck.len(), N - 1);
    // Informal timing for the report (printed with --nocapture; never asserted).
    let t0 = std::time::Instant::now();
    let props = detent_compiler::check::property::check_properties(&m);
    let t1 = std::time::Instant::now();
    let diags = property_diags(&m);
    eprintln!(
        "100k chain: check_properties (3 properties) {:?}; full check_machine {:?}",
        t1 - t0,
        t1.elapsed()
    );
    assert_eq!(props.len(), 3);
    assert_eq!(diags.len(), 3);
}
