//! Minimization of detent machines: hand-worked cases with known minima, policies
//! (`ignore` vs `=> stay`, `reject`), enter/leave attribution in the printed quotient,
//! the `equivalent_states` lint, and on random specs: the minimized machine (resolved
//! and printed) is equivalent to the original by `equiv` and by interpreter traces, and
//! is itself minimal.

use detent_compiler::diag::Lint;
use detent_compiler::driver::check_source;
use detent_compiler::interp::Outcome;
use detent_compiler::minimize::equiv::{distinguish_states, equiv};
use detent_compiler::minimize::machine::minimized_ast;
use detent_compiler::minimize::{minimize, minimized_machine, minimized_spec};
use detent_compiler::model::{EventId, Machine, StateId};
use detent_compiler::syntax::ast::{self, Body, Member};
use detent_compiler::syntax::print::print_machine;
use detent_tests::gen::{random_spec, random_trace, GenConfig, Rng};

fn machine(text: &str) -> Machine {
    let report = check_source("t.detent", text);
    let errors: Vec<_> = report.diagnostics().filter(|d| d.is_error()).collect();
    assert!(errors.is_empty(), "{text}\n{errors:#?}");
    report
        .machines
        .into_iter()
        .next()
        .and_then(|m| m.machine)
        .expect("a machine")
}

fn class_names(m: &Machine) -> Vec<Vec<String>> {
    minimize(m)
        .classes
        .iter()
        .map(|c| c.iter().map(|s| m.state_name(*s).to_string()).collect())
        .collect()
}

fn names(v: &[&str]) -> Vec<String> {
    v.iter().map(|s| s.to_string()).collect()
}

// ---------------------------------------------------------------------------------
// Hand-worked cases (reasoning by hand, written beside each; from memory of the usual
// exercises, not from a particular source).
// ---------------------------------------------------------------------------------

#[test]
fn mod_six_counter_observed_mod_three() {
    // Count `Inc` modulo 6, with `z` high when the count is 0 mod 3. Only the count mod
    // 3 is observable, so P_i and P_{i+3} are equivalent. Three classes remain and no
    // fewer: from P0, P1, P2 the first `z` after some Incs comes after 0 (already high),
    // 2 and 1 steps respectively, so they are pairwise distinguishable.
    let m = machine(
        "machine C { events Inc; outputs z; start P0;
           state P0 emit z { Inc => P1; }  state P1 { Inc => P2; }  state P2 { Inc => P3; }
           state P3 emit z { Inc => P4; }  state P4 { Inc => P5; }  state P5 { Inc => P0; } }",
    );
    assert_eq!(
        class_names(&m),
        vec![
            names(&["P0", "P3"]),
            names(&["P1", "P4"]),
            names(&["P2", "P5"])
        ]
    );
    let q = minimized_machine(&m);
    assert_eq!(q.states.len(), 3);
    assert!(equiv(&m, &q).unwrap().is_none());
}

#[test]
fn unreachable_states_are_dropped_and_reported() {
    // `Orphan` has no incoming rule; `Far` is entered only from `Orphan`. Both are
    // unreachable. `A` and `B` differ (B emits `o`), so two classes remain.
    let m = machine(
        "machine U { events Go; outputs o; start A; unhandled ignore;
           state A { Go => B; }  state B emit o { Go => A; }
           state Orphan { Go => Far; }  state Far { Go => A; } }",
    );
    let min = minimize(&m);
    let un: Vec<&str> = min.unreachable.iter().map(|s| m.state_name(*s)).collect();
    assert_eq!(un, vec!["Orphan", "Far"]);
    assert_eq!(class_names(&m), vec![names(&["A"]), names(&["B"])]);
    assert_eq!(min.states_before, 4);
    assert_eq!(min.states_after(), 2);
}

#[test]
fn ignore_is_stay_but_reject_is_not() {
    // Under `ignore`, `Tick` in A is ignored: no state change, no outputs, no actions;
    // in B it is `=> stay` with nothing. LANGUAGE.md: the two are the same behaviour.
    // On `Go` A and B swap, so A ~ B iff their Tick behaviour agrees: one class.
    let spec = |policy: &str| {
        format!(
            "machine P {{ events Go, Tick; start A; unhandled {policy};
               state A {{ Go => B; }}  state B {{ Go => A; Tick => stay; }} }}"
        )
    };
    let m = machine(&spec("ignore"));
    assert_eq!(class_names(&m), vec![names(&["A", "B"])]);
    // Under `reject` the caller is told that A rejected Tick, while B handled it.
    let m = machine(&spec("reject"));
    assert_eq!(class_names(&m), vec![names(&["A"]), names(&["B"])]);
    let w = distinguish_states(&m, StateId(0), StateId(1)).expect("distinguishable");
    assert_eq!(w.len(), 1);
    assert_eq!(w[0].event, "Tick");
}

#[test]
fn mealy_outputs_and_actions_separate_states() {
    // A and B agree on targets and Moore outputs; they differ only in the Mealy output
    // of `Go` (A) and in an action (C). None of them may merge.
    let m = machine(
        "machine S { events Go; outputs beep; actions log; start A;
           state A { Go => B, emit beep; }  state B { Go => C; }  state C { Go => A, do log; } }",
    );
    assert_eq!(minimize(&m).states_after(), 3);
}

#[test]
fn guards_split_symbols_without_enumerating() {
    // Two rules on `Go` guarded by x: A goes to Hi when x, else to Lo; B the same.
    // A ~ B. Hi emits h and Lo nothing; Hi and Lo return to A on Go. With 40 inputs
    // declared but only x used, the alphabet stays two atoms per event.
    let inputs: Vec<String> = (0..40).map(|i| format!("i{i}")).collect();
    let m = machine(&format!(
        "machine G {{ events Go; inputs x, {}; outputs h; start A;
           state A {{ Go if x => Hi; Go if !x => Lo; }}
           state B {{ Go if x => Hi; Go if !x => Lo; }}
           state Hi emit h {{ Go => B; }}  state Lo {{ Go => A; }} }}",
        inputs.join(", ")
    ));
    assert_eq!(
        class_names(&m),
        vec![names(&["A", "B"]), names(&["Hi"]), names(&["Lo"])]
    );
}

#[test]
fn enter_and_leave_actions_move_onto_rules() {
    // Run1 has `enter do beep; leave do boop`; Run2 has neither, but its rules run the
    // same sequences explicitly. From Run1: Back runs [boop]; Go (to Run2) runs
    // [boop, beep]. From Run2: Back runs [boop] (the rule's own); Go (to Run1) runs
    // [boop] then Run1's enter [beep]. Same observations, same targets up to the class:
    // Run1 ~ Run2. Idle's Go runs [beep] (Run1's enter). After merging, the quotient
    // has no enter/leave, so every transition must list its full sequence: Idle's
    // `Go => Run1, do beep`, and Run1's Go becomes an explicit self-transition with
    // [boop, beep].
    let m = machine(
        "machine E { events Go, Back; actions beep, boop; start Idle; unhandled ignore;
           state Idle { Go => Run1; }
           state Run1 { enter do beep; leave do boop; Back => Idle; Go => Run2, do beep; }
           state Run2 { Back => Idle, do boop; Go => Run1, do boop; } }",
    );
    assert_eq!(
        class_names(&m),
        vec![names(&["Idle"]), names(&["Run1", "Run2"])]
    );
    let text = minimized_spec(&m);
    assert!(
        !text.contains("enter do") && !text.contains("leave do"),
        "{text}"
    );
    assert!(text.contains("Go => Run1, do beep;"), "{text}");
    assert!(text.contains("Go => Run1, do boop, beep;"), "{text}");
    assert!(text.contains("Back => Idle, do boop;"), "{text}");
    let q = machine(&text);
    assert_eq!(q.states.len(), 2);
    assert!(equiv(&m, &q).unwrap().is_none());
    // Moving the enter action naively (keeping `enter do beep` on the merged state
    // and also on the rules) would double it: the re-parsed quotient would then differ.
    let doubled = text.replace("state Run1 {", "state Run1 {\n        enter do beep;");
    let bad = machine(&doubled);
    assert!(equiv(&m, &bad).unwrap().is_some());
}

#[test]
fn groups_flatten_with_moore_sets_and_group_properties() {
    // The bilge pump of LANGUAGE.md with a duplicate of Draining (Draining2, entered
    // from Pumping on ManualOn).
    // Draining2 behaves as Draining: it inherits ManualOff from Running, emits pump,
    // and has the same Tick / FloatUp rules, so they merge. The `in Running` property
    // becomes a disjunction over the classes of Running's members.
    let m = machine(
        "machine BilgePump {
            events FloatUp, FloatDown, Tick, ManualOn, ManualOff;
            inputs pump_current_ok; outputs pump, alarm; actions start_timer, log_fault;
            start Idle; unhandled ignore;
            never in Running && alarm;
            state Idle { FloatUp | ManualOn => Pumping, do start_timer; FloatDown | Tick | ManualOff => stay; }
            group Running emit pump {
                ManualOff => Idle;
                state Pumping {
                    Tick if !pump_current_ok => DryRun, do log_fault;
                    Tick if pump_current_ok => stay;
                    FloatDown => Draining, do start_timer;
                    ManualOn => Draining2, do start_timer;
                }
                state Draining { Tick => Idle; FloatUp => Pumping; }
                state Draining2 { Tick => Idle; FloatUp => Pumping; }
            }
            terminal state DryRun emit alarm;
        }",
    );
    assert_eq!(
        class_names(&m),
        vec![
            names(&["Idle"]),
            names(&["Pumping"]),
            names(&["Draining", "Draining2"]),
            names(&["DryRun"])
        ]
    );
    let text = minimized_spec(&m);
    assert!(
        text.contains("never (in Pumping || in Draining) && alarm;"),
        "{text}"
    );
    assert!(text.contains("state Draining emit pump {"), "{text}");
    assert!(
        text.contains("ManualOn => Draining, do start_timer;"),
        "{text}"
    );
    let q = machine(&text);
    assert!(equiv(&m, &q).unwrap().is_none());
}

/// Found by the structured fuzz target: A (outside G) and B (in G) behave alike and
/// were merged, so `in G` became `in A` on the minimized machine, which holds at the
/// start: the minimized spec failed its own property. States the properties tell apart
/// are now kept apart (by `in` a group, `in` a state, and `recover`'s states), and the
/// minimized spec checks clean and keeps each property's meaning.
#[test]
fn states_that_properties_tell_apart_are_not_merged() {
    for (prop, kept) in [
        (
            "never in G && !Go;",
            vec![names(&["A", "C"]), names(&["B"])],
        ),
        (
            "never in B && !Go;",
            vec![names(&["A", "C"]), names(&["B"])],
        ),
        ("recover to B;", vec![names(&["A", "C"]), names(&["B"])]),
        (
            "recover to A except B;",
            vec![names(&["A"]), names(&["B"]), names(&["C"])],
        ),
        (
            "never in C && !Go;",
            vec![names(&["A"]), names(&["B"]), names(&["C"])],
        ),
    ] {
        let text = format!(
            "machine M {{
                events Go; start A;
                {prop}
                state A {{ Go => B; }}
                group G {{ state B {{ Go => C; }} }}
                state C {{ Go => B; }}
            }}"
        );
        let m = machine(&text);
        assert_eq!(class_names(&m), kept, "{prop}");
        let spec = minimized_spec(&m);
        let q = machine(&spec);
        assert!(equiv(&m, &q).unwrap().is_none(), "{spec}");
    }
    // Without properties the three states are one class.
    let m = machine(
        "machine M { events Go; start A;
            state A { Go => B; } group G { state B { Go => C; } } state C { Go => B; } }",
    );
    assert_eq!(class_names(&m), vec![names(&["A", "B", "C"])]);
}

/// Found by the structured fuzz target: in B the time base is named (`Tick if false`,
/// which never holds) and B has a timeout and a `_` rule. Tick in B is rejected when
/// the timeout is not due: the named rule shadows `_` (LANGUAGE.md, the lookup order).
/// The quotient wrote the timeout as B's `after` rule and nothing named Tick, so Tick
/// fell to `_` and moved to A. A cell whose only choices are timeouts now keeps its
/// event named with a rule that never fires, as an empty cell already did.
#[test]
fn a_named_event_whose_only_choices_are_timeouts_does_not_fall_to_the_wildcard() {
    let text = "#[allow(never_true_guard, dead_rule)]
        machine M {
            events Tick, Go;
            outputs b;
            timebase Tick 1 ms;
            start A;
            unhandled reject;
            state A { Go => B; }
            state B emit b {
                after 5 ms => stay;
                Tick if false => A;
                _ => A;
            }
        }";
    let m = machine(text);
    let q = minimized_machine(&m);
    assert!(equiv(&m, &q).unwrap().is_none(), "{}", minimized_spec(&m));
    // Go, then Tick: rejected in B on both.
    for mm in [&m, &q] {
        let mut c = mm.start_config();
        mm.step_config(&mut c, EventId(1), &[]);
        let r = mm.step_config(&mut c, EventId(0), &[]);
        assert!(!r.handled(), "{}", mm.name);
        assert_eq!(mm.state_name(c.state), "B");
    }
    let spec = minimized_spec(&m);
    assert!(spec.contains("Tick if false => stay;"), "{spec}");
    assert!(equiv(&m, &machine(&spec)).unwrap().is_none(), "{spec}");
}

#[test]
fn equivalent_states_lint_lists_each_class() {
    let report = check_source(
        "t.detent",
        "machine C { events Inc; outputs z; start P0;
           state P0 emit z { Inc => P1; }  state P1 { Inc => P2; }  state P2 { Inc => P3; }
           state P3 emit z { Inc => P4; }  state P4 { Inc => P5; }  state P5 { Inc => P0; } }",
    );
    let found: Vec<_> = report
        .diagnostics()
        .filter(|d| d.lint == Lint::EquivalentStates)
        .collect();
    assert_eq!(found.len(), 3);
    assert_eq!(found[0].states, names(&["P0", "P3"]));
    assert_eq!(found[0].state.as_deref(), Some("P0"));
    assert!(!found[0].is_error());
    let lc = found[0].span.expect("span").start();
    assert_eq!(lc.line, 2, "at P0's name");
    // Allowed on the machine: silent.
    let report = check_source(
        "t.detent",
        "#[allow(equivalent_states)] machine C { events Inc; outputs z; start P0;
           state P0 emit z { Inc => P1; }  state P1 { Inc => P0; }
           state P3 emit z { Inc => P1; } }",
    );
    assert!(report
        .diagnostics()
        .all(|d| d.lint != Lint::EquivalentStates));
}

// ---------------------------------------------------------------------------------
// Random specs.
// ---------------------------------------------------------------------------------

/// Runs the same random traces through `m` and its quotient `q` and compares every
/// step: outputs, actions, rejection, and that q's state is the class of m's.
fn traces_agree(m: &Machine, q: &Machine, seed: u64) {
    let min = minimize(m);
    let mut rng = Rng::new(seed);
    for _ in 0..20 {
        let trace = random_trace(&mut rng, m.events.len(), m.inputs.len(), 25);
        let (mut sm, mut sq) = (m.start, q.start);
        for (i, (e, ins)) in trace.iter().enumerate() {
            let ev = EventId::from_index(*e);
            let evq = q.event_id(m.event_name(ev)).expect("same events");
            let rm = m.step(sm, ev, ins);
            let rq = q.step(sq, evq, ins);
            let on = |mm: &Machine, v: Vec<detent_compiler::model::OutputId>| -> Vec<String> {
                v.into_iter()
                    .map(|o| mm.outputs[o.index()].name.clone())
                    .collect()
            };
            let an = |mm: &Machine, v: &[detent_compiler::model::ActionId]| -> Vec<String> {
                v.iter()
                    .map(|a| mm.actions[a.index()].name.clone())
                    .collect()
            };
            let ctx = format!(
                "seed {seed}, step {i}, {} in {}",
                m.event_name(ev),
                m.state_name(sm)
            );
            assert_eq!(on(m, rm.outputs()), on(q, rq.outputs()), "{ctx}");
            assert_eq!(an(m, &rm.actions), an(q, &rq.actions), "{ctx}");
            assert_eq!(
                rm.outcome == Outcome::Rejected,
                rq.outcome == Outcome::Rejected,
                "{ctx}"
            );
            let rep = min
                .representative_of(rm.to)
                .expect("reached states are reachable");
            assert_eq!(m.state_name(rep), q.state_name(rq.to), "{ctx}");
            sm = rm.to;
            sq = rq.to;
        }
    }
}

/// Every check of the pipeline on one machine; returns (had merges, unreachable count).
fn check_pipeline(m: &Machine, seed: u64, spec: &str) -> (bool, usize) {
    let min = minimize(m);
    // The resolved quotient and the printed spec.
    let q = minimized_machine(m);
    assert_eq!(q.states.len(), min.states_after());
    let text = minimized_spec(m);
    let p = machine(&text); // parses, resolves, checks without errors
    assert_eq!(p.states.len(), q.states.len());

    // Equivalent by the product search and by interpreter traces.
    assert!(
        equiv(m, &q).unwrap().is_none(),
        "seed {seed}\n{spec}\n{text}"
    );
    assert!(equiv(m, &p).unwrap().is_none(), "seed {seed}\n{text}");
    traces_agree(m, &q, seed);

    // Within a class: no distinguishing word.
    for class in &min.classes {
        for &s in &class[1..] {
            assert!(distinguish_states(m, class[0], s).is_none(), "seed {seed}");
        }
    }
    // Minimality: the quotient minimizes to itself, and its states are pairwise
    // distinguishable.
    assert!(minimize(&q).is_minimal(), "seed {seed}\n{text}");
    let n = q.states.len().min(8);
    for i in 0..n {
        for j in i + 1..n {
            assert!(
                distinguish_states(&q, StateId::from_index(i), StateId::from_index(j)).is_some(),
                "seed {seed}: {} ~ {}\n{text}",
                q.state_name(StateId::from_index(i)),
                q.state_name(StateId::from_index(j))
            );
        }
    }
    (
        min.classes.iter().any(|c| c.len() > 1),
        min.unreachable.len(),
    )
}

/// `m` flattened (each reachable state its own class) with every state duplicated as
/// `<name>Dup` and about half of the transitions redirected to the duplicates. The
/// result behaves exactly like `m`, and its minimum has as many states as `m`'s.
fn with_duplicates(m: &Machine, rng: &mut Rng) -> String {
    let min = minimize(m);
    let reachable: Vec<StateId> = min.classes.iter().flatten().copied().collect();
    let mut ident = min.clone();
    ident.classes = reachable.iter().map(|s| vec![*s]).collect();
    ident.class_of = vec![None; m.states.len()];
    for (c, s) in reachable.iter().enumerate() {
        ident.class_of[s.index()] = Some(c as u32);
    }
    let mut ast = minimized_ast(m, &ident);
    let mut dups = Vec::new();
    for member in &ast.members {
        if let Member::State(st) = member {
            let mut d = st.clone();
            d.name.name = format!("{}Dup", st.name.name);
            d.doc.clear();
            dups.push(Member::State(d));
        }
    }
    ast.members.extend(dups);
    for member in &mut ast.members {
        if let Member::State(st) = member {
            for b in &mut st.body {
                if let Body::Rule(r) = b {
                    if let ast::Target::State(t) = &mut r.target {
                        if rng.chance(0.5) {
                            t.name = format!("{}Dup", t.name);
                        }
                    }
                }
            }
        }
    }
    let mut out = String::new();
    print_machine(&mut out, &ast);
    out
}

#[test]
fn random_specs_minimize_to_equivalent_minimal_machines() {
    let configs = [
        GenConfig {
            states: (2, 10),
            ..GenConfig::default()
        },
        GenConfig {
            states: (3, 12),
            events: 0,
            ..GenConfig::default()
        },
        GenConfig {
            states: (3, 12),
            inputs: 0,
            groups: false,
            outputs: 1,
            actions: 1,
            ..GenConfig::default()
        },
        GenConfig {
            states: (6, 16),
            events: 4,
            inputs: 3,
            outputs: 1,
            ..GenConfig::default()
        },
    ];
    let (mut merged, mut total, mut dropped) = (0, 0, 0);
    for (ci, cfg) in configs.iter().enumerate() {
        for seed in 0..40u64 {
            let seed = seed * 7 + ci as u64;
            let spec = random_spec(seed, cfg);
            let m = machine(&spec);
            let (mg, un) = check_pipeline(&m, seed, &spec);
            merged += usize::from(mg);
            dropped += un;
            total += 1;

            // The duplicated machine: equivalent to m, same minimum size, merges.
            let dup_text = with_duplicates(&m, &mut Rng::new(seed));
            let d = machine(&dup_text);
            assert!(equiv(&m, &d).unwrap().is_none(), "seed {seed}\n{dup_text}");
            assert_eq!(
                minimize(&d).states_after(),
                minimize(&m).states_after(),
                "seed {seed}\n{dup_text}"
            );
            let dmin = minimize(&d);
            for s in 0..m.states.len() {
                // Unreachable states of m are not in the flattened copy.
                let Some(a) = d.state_id(m.state_name(StateId::from_index(s))) else {
                    continue;
                };
                let b = d.state_id(&format!("{}Dup", m.state_name(StateId::from_index(s))));
                if let (Some(ca), Some(cb)) = (
                    dmin.class_of[a.index()],
                    b.and_then(|b| dmin.class_of[b.index()]),
                ) {
                    assert_eq!(ca, cb, "seed {seed}: a state and its duplicate must merge");
                }
            }
            let (mg, un) = check_pipeline(&d, seed, &dup_text);
            merged += usize::from(mg);
            dropped += un;
            total += 1;
        }
    }
    // The corpus must exercise merging and unreachable states, or the test proves little.
    assert!(
        merged >= total / 3,
        "only {merged} of {total} specs had merges"
    );
    assert!(dropped > 0, "no spec had unreachable states");
}
