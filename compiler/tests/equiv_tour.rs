//! Equivalence with shortest distinguishing sequences, and transition tours.

use detent_compiler::driver::check_source;
use detent_compiler::interp::Outcome;
use detent_compiler::minimize::equiv::equiv;
use detent_compiler::model::{EventId, Machine, RuleId, StateId};
use detent_compiler::tour::{tour, transitions, TourStep};
use detent_tests::gen::{random_spec, GenConfig};
use std::collections::{HashSet, VecDeque};

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

// ---------------------------------------------------------------------------------
// Equivalence.
// ---------------------------------------------------------------------------------

/// A chain S0 -> S1 -> S2 -> S3 on `Go if x`; `Go if !x` stays. In A, S3 emits `o`;
/// in B it does not. Worked by hand: only S3's Moore output differs, S3 is first
/// entered after three `Go` steps with x high, and any step with x low stays put. So
/// the shortest distinguishing sequence is `Go x=1` three times, and the machines
/// disagree at step 3 (A's Moore outputs after it are [o], B's are []).
fn chain(emit_last: bool, names: [&str; 4]) -> String {
    let [s0, s1, s2, s3] = names;
    let emit = if emit_last { " emit o" } else { "" };
    format!(
        "machine Chain {{ events Go, Stop; inputs x; outputs o; start {s0};
           state {s0} {{ Go if x => {s1}; Go if !x => stay; Stop => stay; }}
           state {s1} {{ Go if x => {s2}; Go if !x => stay; Stop => {s0}; }}
           state {s2} {{ Go if x => {s3}; Go if !x => stay; Stop => {s0}; }}
           state {s3}{emit} {{ Go => stay; Stop => {s0}; }} }}"
    )
}

#[test]
fn difference_after_three_steps_has_a_three_step_witness() {
    let a = machine(&chain(true, ["S0", "S1", "S2", "S3"]));
    let b = machine(&chain(false, ["S0", "S1", "S2", "S3"]));
    let d = equiv(&a, &b).unwrap().expect("different");
    assert_eq!(d.step, 3);
    assert_eq!(d.witness.len(), 3);
    for w in &d.witness {
        assert_eq!(w.event, "Go");
        assert_eq!(w.inputs, vec![("x".to_string(), true)]);
    }
    assert_eq!(d.a.moore, vec!["o".to_string()]);
    assert!(d.b.moore.is_empty());
    assert_eq!((d.a.from.as_str(), d.a.to.as_str()), ("S2", "S3"));
}

#[test]
fn start_states_that_differ_give_an_empty_witness() {
    let a = machine("machine M { events Go; outputs o; start A; state A emit o { Go => stay; } }");
    let b = machine("machine M { events Go; outputs o; start A; state A { Go => stay; } }");
    let d = equiv(&a, &b).unwrap().expect("different");
    assert!(d.witness.is_empty());
    assert_eq!(d.step, 0);
}

#[test]
fn renamed_and_duplicated_states_are_equivalent() {
    // B renames every state, declares inputs/outputs/events in another order, and
    // splits S3 into two copies that alternate on `Go`: same behaviour.
    let a = machine(&chain(true, ["S0", "S1", "S2", "S3"]));
    let b = machine(
        "machine Other { events Stop, Go; inputs x; outputs o; start Zero;
           state Zero { Go if !x => stay; Go if x => One; Stop => stay; }
           state One { Go if x => Two; Go if !x => stay; Stop => Zero; }
           state Two { Go if x => ThreeA; Go if !x => stay; Stop => Zero; }
           state ThreeA emit o { Go => ThreeB; Stop => Zero; }
           state ThreeB emit o { Go => ThreeA; Stop => Zero; } }",
    );
    assert!(equiv(&a, &b).unwrap().is_none());
    assert!(equiv(&b, &a).unwrap().is_none());
}

#[test]
fn ignore_equals_stay_across_machines_but_reject_does_not() {
    let stay = machine("machine M { events Go, Tick; start A; unhandled ignore; state A { Go => stay; Tick => stay; } }");
    let ign = machine(
        "machine M { events Go, Tick; start A; unhandled ignore; state A { Go => stay; } }",
    );
    let rej = machine(
        "machine M { events Go, Tick; start A; unhandled reject; state A { Go => stay; } }",
    );
    assert!(equiv(&stay, &ign).unwrap().is_none());
    let d = equiv(&stay, &rej)
        .unwrap()
        .expect("rejection is observable");
    assert_eq!(d.witness.len(), 1);
    assert_eq!(d.witness[0].event, "Tick");
    assert_eq!(d.b.outcome, "rejected");
}

#[test]
fn mismatched_declarations_are_reported() {
    let a =
        machine("machine M { events Go; inputs x; outputs o; start A; state A { Go => stay; } }");
    let b = machine(
        "machine M { events Go, Halt; outputs o, p; actions log; start A; unhandled ignore;
           state A { Go => stay; } }",
    );
    let detent_compiler::minimize::equiv::EquivError::Decl(err) =
        equiv(&a, &b).expect_err("declarations differ")
    else {
        panic!("declarations differ")
    };
    let kinds: Vec<&str> = err.diffs.iter().map(|d| d.0).collect();
    assert_eq!(kinds, vec!["events", "inputs", "outputs", "actions"]);
    let text = err.to_string();
    assert!(
        text.contains("`Halt`")
            && text.contains("`x`")
            && text.contains("`p`")
            && text.contains("`log`"),
        "{text}"
    );
}

// ---------------------------------------------------------------------------------
// Tours.
// ---------------------------------------------------------------------------------

/// Replays a tour through the interpreter (independently of the tour module) and
/// returns the (state, event, rule) triples it fired.
fn replay(m: &Machine, steps: &[TourStep]) -> HashSet<(StateId, EventId, RuleId)> {
    let mut fired = HashSet::new();
    let mut s = m.start;
    for st in steps {
        match st {
            TourStep::Reset => s = m.start,
            TourStep::Step { event, inputs } => {
                let r = m.step(s, *event, inputs);
                if let Outcome::Fired(rule) = r.outcome {
                    fired.insert((s, *event, rule));
                }
                s = r.to;
            }
        }
    }
    fired
}

/// Every reachable (state, event, rule) by brute force over all valuations (small
/// machines only): the independent count of what a tour must cover.
fn brute_transitions(m: &Machine) -> HashSet<(StateId, EventId, RuleId)> {
    let n_in = m.inputs.len();
    assert!(n_in <= 6);
    let vals: Vec<Vec<bool>> = (0..1u32 << n_in)
        .map(|v| (0..n_in).map(|i| v >> i & 1 == 1).collect())
        .collect();
    let mut seen = vec![false; m.states.len()];
    seen[m.start.index()] = true;
    let mut q = VecDeque::from([m.start]);
    let mut out = HashSet::new();
    while let Some(s) = q.pop_front() {
        for e in 0..m.events.len() {
            for v in &vals {
                let r = m.step(s, EventId::from_index(e), v);
                if let Outcome::Fired(rule) = r.outcome {
                    out.insert((s, EventId::from_index(e), rule));
                }
                if !seen[r.to.index()] {
                    seen[r.to.index()] = true;
                    q.push_back(r.to);
                }
            }
        }
    }
    out
}

/// The state a rule leads to from `s`, from the choice that fires it there.
fn choice_target(m: &Machine, s: StateId, rule: RuleId) -> StateId {
    m.lowered
        .cells_of(s)
        .iter()
        .flat_map(|c| &c.choices)
        .find(|c| c.rule == rule)
        .map_or(s, |c| c.target)
}

/// At every reset, nothing uncovered may be reachable from the state the tour was in.
fn resets_only_when_needed(m: &Machine, steps: &[TourStep]) {
    let all = brute_transitions(m);
    let mut covered = HashSet::new();
    let mut s = m.start;
    for st in steps {
        match st {
            TourStep::Reset => {
                // States reachable from s.
                let mut seen = vec![false; m.states.len()];
                seen[s.index()] = true;
                let mut q = VecDeque::from([s]);
                while let Some(x) = q.pop_front() {
                    for &(from, _, rule) in &all {
                        if from == x {
                            let t = choice_target(m, x, rule);
                            if !seen[t.index()] {
                                seen[t.index()] = true;
                                q.push_back(t);
                            }
                        }
                    }
                }
                let open = all
                    .iter()
                    .find(|t| seen[t.0.index()] && !covered.contains(*t));
                assert!(open.is_none(), "reset while {open:?} was still reachable");
                s = m.start;
            }
            TourStep::Step { event, inputs } => {
                let r = m.step(s, *event, inputs);
                if let Outcome::Fired(rule) = r.outcome {
                    covered.insert((s, *event, rule));
                }
                s = r.to;
            }
        }
    }
}

#[test]
fn example_tours_cover_every_transition() {
    let dir = detent_tests::workspace_root().join("examples");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("examples/")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "detent"))
        .collect();
    files.sort();
    assert!(files.len() >= 6);
    for f in files {
        let m = machine(&std::fs::read_to_string(&f).unwrap());
        if m.has_timers() {
            // This brute force steps states, not configurations; timed tours are
            // checked over configurations in `timed_analyses.rs` and
            // `lowered_agreement.rs`.
            continue;
        }
        let t = tour(&m);
        let want = brute_transitions(&m);
        let got = replay(&m, &t.steps);
        assert_eq!(want.len(), t.transitions, "{}", f.display());
        assert!(
            want.is_subset(&got),
            "{}: missed {:?}",
            f.display(),
            want.difference(&got).collect::<Vec<_>>()
        );
        assert_eq!(t.covers, t.transitions);
        resets_only_when_needed(&m, &t.steps);
        println!(
            "{}: {} steps, {} resets, {} transitions, strongly connected: {}",
            m.name,
            t.len_steps(),
            t.resets(),
            t.transitions,
            t.strongly_connected
        );
    }
}

#[test]
fn hand_worked_postman_tour() {
    // A -a-> B, B -b-> A, B -c-> A: out(A)=1, in(A)=2; out(B)=2, in(B)=1. A needs one
    // extra walk out to B (1 step). Euler circuit of 4 edges from A, e.g. a b a c; the
    // circuit ends back at A after c, so nothing is cut: 4 steps, the postman optimum
    // (3 edges + 1 duplicate).
    let m = machine(
        "machine P { events Ea, Eb, Ec; start A; unhandled ignore;
           state A { Ea => B; }  state B { Eb => A; Ec => A; } }",
    );
    let t = tour(&m);
    assert!(t.strongly_connected);
    assert_eq!(t.transitions, 3);
    assert_eq!(t.len_steps(), 4);
    assert_eq!(t.covers, 3);
    // A wildcard rule is one transition per event it covers.
    let m = machine(
        "machine W { events E1, E2, E3; start A; state A { _ => B; }  state B { _ => A; } }",
    );
    let t = tour(&m);
    assert_eq!(t.transitions, 6);
    assert_eq!(
        t.len_steps(),
        6,
        "balanced already: an Euler circuit, no repeats"
    );
}

#[test]
fn random_tours_cover_everything_and_stay_short() {
    let configs = [
        GenConfig {
            states: (3, 12),
            ..GenConfig::default()
        },
        GenConfig {
            states: (4, 16),
            events: 4,
            inputs: 3,
            ..GenConfig::default()
        },
        GenConfig {
            states: (3, 10),
            events: 0,
            ..GenConfig::default()
        },
    ];
    let (mut sc, mut steps_sc, mut trans_sc, mut worst) = (0, 0, 0, 0f64);
    let mut non_sc = 0;
    for (ci, cfg) in configs.iter().enumerate() {
        for seed in 0..80u64 {
            let m = machine(&random_spec(seed * 5 + ci as u64, cfg));
            let t = tour(&m);
            let want = brute_transitions(&m);
            let got = replay(&m, &t.steps);
            assert!(want.is_subset(&got), "seed {seed}");
            assert_eq!(t.transitions, want.len());
            assert_eq!(t.transitions, transitions(&m).len());
            assert_eq!(t.covers, t.transitions);
            if t.strongly_connected {
                sc += 1;
                assert_eq!(t.resets(), 0);
                steps_sc += t.len_steps();
                trans_sc += t.transitions;
                worst = worst.max(t.len_steps() as f64 / t.transitions.max(1) as f64);
            } else {
                non_sc += 1;
                resets_only_when_needed(&m, &t.steps);
            }
        }
    }
    println!(
        "strongly connected: {sc} machines, {steps_sc} steps for {trans_sc} transitions \
         (ratio {:.2}, worst {worst:.2}); not strongly connected: {non_sc}",
        steps_sc as f64 / trans_sc.max(1) as f64
    );
    assert!(sc >= 20 && non_sc >= 20, "corpus: {sc} sc, {non_sc} not");
    // A postman tour walks each edge once plus shortest detours; on these small random
    // machines it stays well under twice the edge count on average (measured ~1.3).
    assert!(steps_sc as f64 <= 2.0 * trans_sc as f64);
    assert!(worst <= 4.0, "worst ratio {worst}");
}
