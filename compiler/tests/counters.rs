//! Counters and deadlines (LANGUAGE.md, "Counters", "Deadlines"): `counter_range` and
//! `ensure` with shortest traces checked for length and replayed through the trace
//! reader and the interpreter; a deadline met with a margin of zero ticks is proved and
//! the same machine one tick slower is refused; overlap and coverage over counter
//! values; the errors a spec with counters can get.

use detent_compiler::check::property::check_ensure;
use detent_compiler::diag::{Diagnostic, Lint};
use detent_compiler::model::{Machine, Property};
use detent_tests::resolved_machine as resolve;

fn check(text: &str) -> Vec<Diagnostic> {
    detent_compiler::check::check_machine(&resolve(text))
}

fn of(diags: &[Diagnostic], lint: Lint) -> Vec<&Diagnostic> {
    diags.iter().filter(|d| d.lint == lint).collect()
}

/// Name and resolution errors (messages), for specs that do not resolve.
fn errors(text: &str) -> Vec<String> {
    let report = detent_compiler::driver::check_source("t.detent", text);
    report
        .diagnostics()
        .filter(|d| d.is_error())
        .map(|d| d.message.clone())
        .collect()
}

/// Replays printed trace lines through the trace reader and the interpreter: the
/// configurations after each step.
fn replay(m: &Machine, lines: &[String]) -> Vec<detent_compiler::interp::Config> {
    let entries = detent_compiler::trace::parse_trace(m, &lines.join("\n")).expect("parses");
    let mut c = m.start_config();
    let mut out = Vec::new();
    for e in &entries {
        let s = e.step().expect("a step");
        m.step_config(&mut c, s.event, &s.inputs);
        out.push(c.clone());
    }
    out
}

/// A keypad that counts wrong codes; the fourth wrong code overflows `strikes`.
const KEYPAD_OVERFLOW: &str = "
machine Keypad {
    events Code, Reset;
    inputs code_ok;
    counters strikes to 3;
    start Locked;
    state Locked {
        Code if code_ok => stay, do strikes = 0;
        Code if !code_ok => stay, do strikes += 1;
        Reset => stay;
    }
}
";

#[test]
fn counter_range_gives_the_shortest_trace_and_it_replays() {
    let d = check(KEYPAD_OVERFLOW);
    let r = of(&d, Lint::CounterRange);
    assert_eq!(r.len(), 1, "{d:#?}");
    assert_eq!(
        r[0].message,
        "`strikes += 1` can take counter `strikes` outside 0..=3 at step 4"
    );
    let steps = r[0].trace.as_ref().expect("a trace");
    assert_eq!(steps.len(), 4);
    let lines = detent_compiler::check::render::trace_lines(steps);
    assert_eq!(lines, ["Code code_ok=0 *4"]);
    let m = resolve(KEYPAD_OVERFLOW);
    let configs = replay(&m, &lines);
    // Three wrong codes reach the bound; the fourth would pass it (the interpreter stops
    // the counter at the end of its range, as generated code does).
    let values: Vec<u16> = configs.iter().map(|c| c.counters[0]).collect();
    assert_eq!(values, [1, 2, 3, 3]);
}

#[test]
fn a_guard_on_the_counter_removes_the_counter_range_error() {
    let fixed = KEYPAD_OVERFLOW.replace(
        "Code if !code_ok => stay, do strikes += 1;",
        "Code if !code_ok && strikes < 3 => stay, do strikes += 1;\n        Code if !code_ok && strikes == 3 => stay;",
    );
    let d = check(&fixed);
    assert!(d.iter().all(|x| !x.is_error()), "{d:#?}");
}

#[test]
fn an_enter_list_can_overflow_too_and_is_found_after_the_rule() {
    // The rule's `+= 1` is guarded, but the target's enter list adds one more.
    let text = "
machine Pump {
    events Start, Stop;
    counters restarts to 3;
    start Idle;
    state Idle {
        Start if restarts < 3 => Running, do restarts += 1;
        Start if restarts == 3 => stay;
        Stop => stay;
    }
    state Running {
        enter do restarts += 1;
        Stop => Idle;
        Start => stay;
    }
}";
    let d = check(text);
    let r = of(&d, Lint::CounterRange);
    assert_eq!(r.len(), 1, "{d:#?}");
    // Start (0 -> 2), Stop, Start (2 -> 3 by the rule, then the enter list passes the
    // bound).
    assert_eq!(r[0].trace.as_ref().unwrap().len(), 3);
    assert!(
        r[0].notes[0].contains("an enter or leave list"),
        "{:?}",
        r[0].notes
    );
}

/// A heater: over-temperature opens a drain interval of `DRAIN` before the heater is
/// off. The deadline asks for the heater off within 100 ms of an over-temperature.
fn heater(drain_ms: u32) -> String {
    format!(
        "
machine Heater {{
    events OverTemp, Cool, Tick;
    outputs heater;
    timebase Tick 1 ms;
    start Heating;
    ensure !heater within 100 ms after OverTemp;
    state Heating emit heater {{
        OverTemp => Draining;
        Cool | Tick => stay;
    }}
    state Draining emit heater {{
        after {drain_ms} ms => Off;
        OverTemp | Cool | Tick => stay;
    }}
    state Off {{
        Cool => Heating;
        OverTemp | Tick => stay;
    }}
}}"
    )
}

#[test]
fn a_deadline_met_with_zero_margin_holds_and_one_tick_slower_fails() {
    let on_time = heater(100);
    let d = check(&on_time);
    assert!(of(&d, Lint::Property).is_empty(), "{d:#?}");

    let late = heater(101);
    let d = check(&late);
    let p = of(&d, Lint::Property);
    assert_eq!(p.len(), 1, "{d:#?}");
    assert_eq!(
        p[0].message,
        "property `ensure !heater within 100 ms after OverTemp` is violated at step 101"
    );
    let lines = detent_compiler::check::render::trace_lines(p[0].trace.as_ref().unwrap());
    assert_eq!(lines, ["OverTemp", "Tick *100"]);
    // The replay: the heater stays on from the over-temperature through the 100th tick.
    let m = resolve(&late);
    let entries = detent_compiler::trace::parse_trace(&m, &lines.join("\n")).unwrap();
    let mut c = m.start_config();
    for e in &entries {
        let s = e.step().unwrap();
        let r = m.step_config(&mut c, s.event, &s.inputs);
        assert!(r
            .outputs()
            .iter()
            .any(|o| m.outputs[o.index()].name == "heater"));
    }
    assert_eq!(m.state_name(c.state), "Draining");
    // The direct API agrees.
    let Property::Ensure {
        response,
        within,
        trigger,
        ..
    } = &m.properties[0]
    else {
        panic!("an ensure property")
    };
    let v = check_ensure(&m, response, *within, trigger)
        .unwrap()
        .expect("violated");
    assert_eq!(v.trace.len(), 101);
    assert_eq!(v.trigger_step, 1);
}

#[test]
fn other_events_do_not_advance_a_time_deadline() {
    // `Cool` steps in between do not count: the 101 ms drain fails after exactly 100
    // ticks, and the shortest trace has no `Cool` in it.
    let m = resolve(&heater(101));
    let Property::Ensure {
        response,
        within,
        trigger,
        ..
    } = &m.properties[0]
    else {
        panic!()
    };
    let v = check_ensure(&m, response, *within, trigger)
        .unwrap()
        .unwrap();
    assert!(v.trace.iter().all(|(e, _)| m.event_name(*e) != "Cool"));
}

#[test]
fn a_step_deadline_counts_every_event() {
    let text = "
machine Ack {
    events Req, Other, Done;
    outputs busy;
    start Idle;
    ensure !busy within 2 steps after Req;
    state Idle { Req => Busy; Other | Done => stay; }
    state Busy emit busy { Done => Idle; Req | Other => stay; }
}";
    let d = check(text);
    let p = of(&d, Lint::Property);
    assert_eq!(p.len(), 1, "{d:#?}");
    // Req, then two more steps that are not `Done` (another `Req` is the first event
    // in declaration order).
    let lines = detent_compiler::check::render::trace_lines(p[0].trace.as_ref().unwrap());
    assert_eq!(lines, ["Req *3"]);
    // `within 0 steps` asks for the response in the trigger step itself.
    let zero = text.replace("within 2 steps", "within 0 steps");
    let d = check(&zero);
    let p = of(&d, Lint::Property);
    assert_eq!(p[0].trace.as_ref().unwrap().len(), 1);
    // A response in the trigger step meets the deadline.
    let ok = text.replace(
        "ensure !busy within 2 steps after Req;",
        "ensure busy within 0 steps after Req && in Busy;",
    );
    assert!(of(&check(&ok), Lint::Property).is_empty());
}

#[test]
fn properties_read_counters_after_the_step() {
    let text = "
machine Keypad {
    events Code, Reset;
    inputs code_ok;
    outputs open;
    counters strikes to 3;
    start Locked;
    never open && strikes > 0;
    never strikes == 3;
    state Locked {
        Code if code_ok => Open;
        Code if !code_ok && strikes < 3 => stay, do strikes += 1;
        Code if !code_ok && strikes == 3 => stay;
        Reset => stay, do strikes = 0;
    }
    state Open emit open {
        Code | Reset => Locked, do strikes = 0;
    }
}";
    let d = check(text);
    let p = of(&d, Lint::Property);
    // `open && strikes > 0`: a right code after a wrong one opens with strikes at 1.
    // `strikes == 3`: three wrong codes.
    assert_eq!(p.len(), 2, "{d:#?}");
    let lens: Vec<usize> = p.iter().map(|x| x.trace.as_ref().unwrap().len()).collect();
    assert_eq!(lens, [2, 3]);
    assert!(
        p[1].notes.iter().any(|n| n.contains("strikes = 3")),
        "{:?}",
        p[1].notes
    );
}

#[test]
fn overlap_is_over_counter_values_and_names_them() {
    let text = "
machine O {
    events Go;
    counters n to 7;
    start A;
    state A {
        Go if n < 2 => stay;
        Go if n > 0 && n < 5 => stay, do n += 1;
        Go if n >= 5 => stay, do n = 0;
    }
}";
    let d = check(text);
    let o = of(&d, Lint::OverlappingRules);
    assert_eq!(o.len(), 1, "{d:#?}");
    let w = o[0].witness.as_ref().unwrap();
    assert!(w.iter().any(|(n, _)| n == "n = 1"), "{w:?}");
    // Comparisons no counter value makes true together do not overlap.
    let ok = text.replace("Go if n > 0 && n < 5", "Go if n >= 2 && n < 5");
    assert!(of(&check(&ok), Lint::OverlappingRules).is_empty());
}

#[test]
fn coverage_is_over_reachable_counter_values() {
    // `n` never passes 2, so the guards need not cover n == 3.
    let text = "
machine C {
    events Go, Back;
    counters n to 3;
    start A;
    state A {
        Go if n < 2 => stay, do n += 1;
        Go if n == 2 => stay;
        Back => stay, do n = 0;
    }
}";
    let d = check(text);
    assert!(of(&d, Lint::Incomplete).is_empty(), "{d:#?}");
    // Reachable: n == 2 uncovered once its rule is gone, named in the note.
    let gap = text.replace("        Go if n == 2 => stay;\n", "");
    let d = check(&gap);
    let i = of(&d, Lint::Incomplete);
    assert_eq!(i.len(), 1, "{d:#?}");
    assert!(
        i[0].notes.iter().any(|n| n.contains("n = 2")),
        "{:?}",
        i[0].notes
    );
}

#[test]
fn counter_errors_say_what_is_wrong() {
    let base = |decl: &str, rule: &str| {
        format!("machine E {{ events Go; actions beep; {decl} start A; state A {{ {rule} }} }}")
    };
    let cases = [
        (
            base("counters n to 0;", "Go => stay;"),
            "largest value is from 1 to 65535",
        ),
        (
            base("counters n to 70000;", "Go => stay;"),
            "largest value is from 1 to 65535",
        ),
        (
            base("counters n to 3;", "Go => stay, do n = 4;"),
            "ranges over 0..=3",
        ),
        (
            base("counters n to 3;", "Go if n => stay;"),
            "is a counter: compare it",
        ),
        (
            base("counters n to 3;", "Go => stay, do n;"),
            "is a counter, not an action",
        ),
        (
            base("counters n to 3;", "Go if m < 2 => stay;"),
            "undefined counter `m`",
        ),
        (
            base("counters n to 3;", "Go => stay, do beep += 1;"),
            "is an action, not a counter",
        ),
        (
            base("counters beep to 3;", "Go => stay;"),
            "already declared as an action",
        ),
        (
            base("counters n to 3;", "Go if n < 70000 => stay;"),
            "over 65535",
        ),
        (
            base(
                "ensure n > 1 within 3 ms after Go; counters n to 3;",
                "Go => stay;",
            ),
            "needs a time base",
        ),
    ];
    for (text, want) in cases {
        let e = errors(&text);
        assert!(
            e.iter().any(|m| m.contains(want)),
            "{text}\nwant `{want}` in {e:?}"
        );
    }
}

/// Two states that treat the counter alike at every value (`n < 1` is `n == 0` on
/// 0..=2) merge; make them differ at `n == 1` and they stay apart, `equiv` finding the
/// shortest sequence that reaches that value; the tour fires every counter-guarded
/// rule.
const TWINS: &str = "machine M {
    events Go, Inc, Dec;
    outputs x;
    counters n to 2;
    start A;
    state A {
        Go if n < 1 => B, emit x;
        Go if n >= 1 => B;
        Inc if n < 2 => stay, do n += 1;
        Inc if n == 2 => stay;
        Dec if n > 0 => stay, do n -= 1;
        Dec if n == 0 => stay;
    }
    state B {
        Go if n == 0 => A, emit x;
        Go if n != 0 => A;
        Inc if n < 2 => stay, do n += 1;
        Inc if n == 2 => stay;
        Dec if n > 0 => stay, do n -= 1;
        Dec if n == 0 => stay;
    }
}
";

#[test]
fn minimization_and_equiv_treat_counters_as_part_of_the_configuration() {
    let m = resolve(TWINS);
    let min = detent_compiler::minimize::minimize(&m);
    assert_eq!(min.classes.len(), 1, "{:?}", min.classes);
    let apart = TWINS.replace(
        "Go if n != 0 => A;",
        "Go if n == 1 => A, emit x;\n        Go if n == 2 => A;",
    );
    let m2 = resolve(&apart);
    assert_eq!(detent_compiler::minimize::minimize(&m2).classes.len(), 2);
    let d = detent_compiler::minimize::equiv::equiv(&m, &m2)
        .unwrap()
        .expect("they differ");
    // Go (to B), Inc (n = 1), Go: B emits `x` at n == 1 in one machine only.
    assert_eq!(d.witness.len(), 3);
    // The minimized spec (with its counter) behaves as the original.
    let spec = detent_compiler::minimize::machine::minimized_spec(&m);
    assert!(spec.contains("counters n to 2;"), "{spec}");
    let again = resolve(&spec);
    assert!(detent_compiler::minimize::equiv::equiv(&m, &again)
        .unwrap()
        .is_none());
    let t = detent_compiler::tour::tour(&m2);
    assert_eq!(t.covers, t.transitions);
}
