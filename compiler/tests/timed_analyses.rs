//! Analyses of machines with timers, exact over configurations (state and timer
//! values): the checker's lints, properties with shortest traces printed with `*N`,
//! minimization and `equiv`, and tours that fire every timeout.

use detent_compiler::check::property::{check_never, check_recover};
use detent_compiler::diag::{Diagnostic, Lint};
use detent_compiler::model::Property;
use detent_compiler::report::{self, trace_entries, StepEntry};
use detent_tests::resolved_machine as resolve;

fn check(text: &str) -> Vec<Diagnostic> {
    detent_compiler::check::check_machine(&resolve(text))
}

fn of(diags: &[Diagnostic], lint: Lint) -> Vec<&Diagnostic> {
    diags.iter().filter(|d| d.lint == lint).collect()
}

/// A door left open for 1.5 s at a 1 ms time base raises the alarm.
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
fn a_violation_after_1500_ticks_has_the_shortest_trace_printed_with_a_count() {
    let m = resolve(DOOR);
    let Property::Never { prop, .. } = &m.properties[0] else {
        panic!("a never property")
    };
    let v = check_never(&m, prop)
        .unwrap()
        .expect("the alarm is reachable");
    // Open, then 1500 ticks: the 1500th brings the timer (at 1499) to 1500 ms.
    assert_eq!(v.trace.len(), 1501);
    assert_eq!(m.state_name(v.state), "Alarm");
    let d = check(DOOR);
    let p = of(&d, Lint::Property);
    assert_eq!(p.len(), 1, "{d:#?}");
    assert_eq!(
        p[0].message,
        "property `never alarm` is violated at step 1501"
    );
    let steps = p[0].trace.as_ref().expect("a trace");
    assert_eq!(steps.len(), 1501);
    let lines = detent_compiler::check::render::trace_lines(steps);
    assert_eq!(lines, ["Open", "Tick *1500"]);
    let json: Vec<String> = trace_entries(steps).iter().map(report::to_json).collect();
    assert_eq!(
        json,
        [
            r#"{"event":"Open","inputs":{}}"#,
            r#"{"event":"Tick","inputs":{},"repeat":1500}"#
        ]
    );
    // The lines replay through the trace reader and the interpreter to the alarm.
    let entries = detent_compiler::trace::parse_trace(&m, &lines.join("\n")).expect("parses");
    assert_eq!(entries.len(), 1501);
    let mut c = m.start_config();
    let mut last = None;
    for e in &entries {
        let s = e.step().expect("a step");
        last = Some(m.step_config(&mut c, s.event, &s.inputs));
    }
    let last = last.unwrap();
    assert_eq!(m.state_name(last.to), "Alarm");
    assert_eq!(m.state_name(last.from), "Opened");
}

#[test]
fn compress_merges_runs_and_keeps_restarts() {
    let t = |e: &str| StepEntry::step(e, &[("x".into(), false)]);
    let c = report::compress(vec![
        t("Tick"),
        t("Tick"),
        StepEntry::Reset { reset: true },
        t("Tick"),
        t("Go"),
        t("Tick"),
        t("Tick"),
        t("Tick"),
    ]);
    let lines = report::trace_lines(&c, true);
    assert_eq!(
        lines,
        ["Tick x=0 *2", "reset", "Tick x=0", "Go x=0", "Tick x=0 *3"]
    );
    assert_eq!(c.iter().map(StepEntry::steps).sum::<usize>(), 7);
}

#[test]
fn recover_is_decided_per_configuration() {
    // `Armed` recovers to `Idle` only while its timer has not run out: once the 3 ticks
    // have passed without `Disarm`, `Latched` follows, which never gets back.
    let m = resolve(
        "machine R { events Tick, Disarm; timebase Tick; start Idle; recover to Idle;
           state Idle { Tick => Armed; Disarm => stay; }
           state Armed { after 3 ticks => Latched; Disarm => Idle; Tick => stay; }
           state Latched { Tick | Disarm => stay; } }",
    );
    let Property::Recover { target, except, .. } = &m.properties[0] else {
        panic!("recover")
    };
    let v = check_recover(&m, *target, except)
        .unwrap()
        .expect("Latched is stuck");
    assert_eq!(m.state_name(v.state), "Latched");
    // Tick into Armed, then three ticks.
    assert_eq!(v.trace.len(), 4);
}

#[test]
fn coverage_counts_only_reachable_timer_values() {
    // `A` has no rule for `Tick`, but the first tick in `A` always brings its 1-tick
    // timeout due, and it always fires: no configuration leaves `Tick` unhandled.
    let d = check(
        "machine C { events Tick, Go; timebase Tick; start A;
           state A { after 1 ticks => B; Go => B; }
           state B { Tick | Go => A; } }",
    );
    assert!(of(&d, Lint::Incomplete).is_empty(), "{d:#?}");
}

#[test]
fn an_uncovered_step_names_the_timer_value() {
    let d = check(
        "machine W { events Tick, Go; inputs ok; timebase Tick 1 ms; start Wait;
           state Wait { after 5 ms if ok => Done; Tick if !ok => stay; Go => Done; }
           state Done { Tick | Go => Wait; } }",
    );
    let inc = of(&d, Lint::Incomplete);
    assert_eq!(inc.len(), 1, "{d:#?}");
    assert_eq!(
        inc[0].message,
        "state `Wait` does not handle event `Tick` for every input value"
    );
    assert!(
        inc[0]
            .notes
            .iter()
            .any(|n| n == "no rule fires when ok = true"),
        "{:#?}",
        inc[0].notes
    );
    assert!(
        inc[0]
            .notes
            .iter()
            .any(|n| n == "in state `Wait` with the timer of state `Wait` at 0 ms"),
        "{:#?}",
        inc[0].notes
    );
}

#[test]
fn a_timeout_that_never_comes_due_is_dead_and_its_target_unreachable() {
    // Every tick in `A` leaves it before its timer reaches 5.
    let d = check(
        "machine U { events Tick, Go; timebase Tick; start A;
           state A { after 5 ticks => C; Tick | Go => B; }
           state B { Tick | Go => A; }
           state C { Tick | Go => A; } }",
    );
    let unreachable = of(&d, Lint::UnreachableState);
    assert_eq!(unreachable.len(), 1, "{d:#?}");
    assert_eq!(unreachable[0].state.as_deref(), Some("C"));
    let dead = of(&d, Lint::DeadRule);
    assert_eq!(dead.len(), 1, "{d:#?}");
    assert_eq!(
        dead[0].message,
        "this timeout never fires: no reachable configuration of state `A` counts to 5 ticks"
    );
}

#[test]
fn a_timeout_that_a_preempt_rule_always_takes_is_dead() {
    let d = check(
        "machine P { events Tick, Go; timebase Tick; start A;
           group G { preempt Tick => B; state A { after 2 ticks => C; Go => stay; } }
           state B { Tick | Go => A; }
           state C { Tick | Go => A; } }",
    );
    let dead = of(&d, Lint::DeadRule);
    assert_eq!(dead.len(), 1, "{d:#?}");
    assert!(
        dead[0].message.starts_with("this timeout never fires"),
        "{dead:#?}"
    );
    assert_eq!(
        of(&d, Lint::UnreachableState)[0].state.as_deref(),
        Some("C")
    );
}

#[test]
fn a_timeout_that_comes_due_but_a_guard_never_lets_fire_is_dead() {
    // At 3 ticks the inner timeout comes due first and always fires.
    let d = check(
        "machine I { events Tick, Go; timebase Tick; start A;
           group G { after 3 ticks => C; state A { after 3 ticks => B; Tick | Go => stay; } }
           state B { Tick | Go => A; }
           state C { Tick | Go => A; } }",
    );
    let dead = of(&d, Lint::DeadRule);
    assert_eq!(dead.len(), 1, "{d:#?}");
    assert!(
        dead[0].notes[0].starts_with("its timeout comes due in state `A` with the timers of"),
        "{:#?}",
        dead[0].notes
    );
}

#[test]
fn same_duration_timeouts_of_one_scope_must_be_exclusive() {
    let d = check(
        "machine O { events Tick; inputs a, b; timebase Tick; start A;
           state A { after 2 ticks if a => B; after 2 ticks if b => B; after 3 ticks => B; Tick => stay; }
           state B { Tick => A; } }",
    );
    let o = of(&d, Lint::OverlappingRules);
    assert_eq!(o.len(), 1, "{d:#?}");
    assert_eq!(o[0].notes, ["both fire when a = true, b = true"]);
}

#[test]
fn a_dead_end_reached_only_by_a_timeout_is_found() {
    let d = check(
        "machine D { events Tick, Go; timebase Tick; start A;
           state A { after 2 ticks => Stuck; Go => A; Tick => stay; }
           state Stuck { Tick | Go => stay; } }",
    );
    let de = of(&d, Lint::DeadEnd);
    assert_eq!(de.len(), 1, "{d:#?}");
    assert_eq!(de[0].state.as_deref(), Some("Stuck"));
}

#[test]
fn the_configuration_limit_is_an_error_naming_it() {
    // The group's timer and `A`'s run apart (`Go` re-enters `A` only): about 3000^2 / 2
    // configurations, past the limit of 4,000,000.
    let d = check(
        "machine L { events Tick, Go; timebase Tick; start A;
           group G { after 3000 ticks => A; state A { after 3000 ticks => A; Go => A; Tick => stay; } } }",
    );
    let e: Vec<&Diagnostic> = d.iter().filter(|d| d.is_error()).collect();
    assert_eq!(e.len(), 1, "{d:#?}");
    assert!(
        e[0].message
            .contains("more than 4000000 reachable configurations"),
        "{}",
        e[0].message
    );
    assert!(e[0].notes[0].contains("MAX_CONFIGS"), "{:#?}", e[0].notes);
}
