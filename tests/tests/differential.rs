//! Differential test: the interpreter (the definition of meaning) against the
//! generated Rust in every form: `gen rust` table and match styles, the inline macro
//! and the file-form macro, on random machines (`build.rs`, fixed seeds) and random
//! traces. At every step the state, the outputs, the actions run (in order), whether
//! the event was rejected, and the inputs read (in order, one entry per hook call)
//! must agree.
//!
//! The hooks are hostile ([`Recorder`]): an input read a second time in one step reads
//! the opposite value. The interpreter reads each input at most once, the first time a
//! test needs it, so a generated `step` that reads an input twice disagrees in its
//! reads, and usually in the step it takes.

use detent_compiler::driver::check_source;
use detent_compiler::interp::Outcome;
use detent_compiler::model::{EventId, OutputId, Trigger};
use detent_tests::gen::{random_timed_trace, random_trace, Rng};

// The types the generated cases use, shared with `differential_all.rs`.
use detent_tests::rust_forms::{Case, Observed, Recorder};

include!(concat!(env!("OUT_DIR"), "/differential.rs"));

fn interpret(spec: &str, trace: &[(usize, Vec<bool>)]) -> Vec<Observed> {
    let report = check_source("case.detent", spec);
    let m = report.machines.into_iter().find_map(|m| m.machine).unwrap();
    let outputs = |set: &[OutputId]| -> Vec<bool> {
        (0..m.outputs.len())
            .map(|i| set.contains(&OutputId::from_index(i)))
            .collect()
    };
    let mut config = m.start_config();
    let mut out = vec![Observed {
        state: config.state.index(),
        outputs: outputs(&m.states[config.state.index()].moore),
        rejected: false,
        actions: vec![],
        reads: vec![],
        timers: config.timers.clone(),
        next_timeout: m.next_timeout(&config),
        counters: config.counters.clone(),
    }];
    for (e, ins) in trace {
        let r = m.step_config(&mut config, EventId::from_index(*e), ins);
        out.push(Observed {
            state: r.to.index(),
            outputs: outputs(&r.outputs()),
            rejected: r.outcome == Outcome::Rejected,
            actions: r.actions.iter().map(|a| a.index()).collect(),
            reads: r.inputs_read.iter().map(|i| i.index()).collect(),
            timers: config.timers.clone(),
            next_timeout: m.next_timeout(&config),
            counters: config.counters.clone(),
        });
    }
    out
}

#[test]
fn generated_rust_agrees_with_the_interpreter() {
    let mut steps = 0usize;
    let mut moved = 0usize;
    let mut rejected = 0usize;
    let mut acted = 0usize;
    let mut timed = 0usize;
    let mut timed_steps = 0usize;
    let mut timeouts = 0usize;
    // Counter machines: their steps, the steps that changed a counter, and those that
    // left a counter at its bound (the whole range is exercised).
    let (mut counted, mut counted_steps, mut counter_changes, mut at_bound) = (0, 0, 0, 0);
    for case in CASES {
        let report = check_source("case.detent", case.spec);
        let m = report.machines.into_iter().find_map(|m| m.machine).unwrap();
        let mut rng = Rng::new(case.name.len() as u64 * 7919 + case.spec.len() as u64);
        timed += usize::from(m.has_timers());
        counted += usize::from(!m.counters.is_empty());
        for t in 0..12 {
            let trace = if m.has_timers() {
                random_timed_trace(&mut rng, m.events.len(), m.inputs.len(), 300, 0.7)
            } else {
                random_trace(&mut rng, m.events.len(), m.inputs.len(), 60)
            };
            let expected = interpret(case.spec, &trace);
            if m.has_timers() {
                timed_steps += trace.len();
                let mut config = m.start_config();
                for (e, ins) in &trace {
                    let r = m.step_config(&mut config, EventId::from_index(*e), ins);
                    if r.rule().is_some_and(|rule| {
                        matches!(m.rules[rule.index()].trigger, Trigger::After(_))
                    }) {
                        timeouts += 1;
                    }
                }
            }
            for (form, run) in case.runners {
                let got = run(&trace);
                for (i, (g, x)) in got.iter().zip(&expected).enumerate() {
                    assert_eq!(
                        g, x,
                        "{} ({form}), trace {t}, step {i} (trace {trace:?}):\n{}",
                        case.name, case.spec
                    );
                }
                assert_eq!(got.len(), expected.len());
            }
            for w in expected.windows(2) {
                if !m.counters.is_empty() {
                    counted_steps += 1;
                    counter_changes += usize::from(w[0].counters != w[1].counters);
                    at_bound += usize::from(
                        w[1].counters
                            .iter()
                            .zip(&m.counters)
                            .any(|(&v, c)| v == c.max),
                    );
                }
                steps += 1;
                moved += usize::from(w[0].state != w[1].state);
                rejected += usize::from(w[1].rejected);
                acted += usize::from(!w[1].actions.is_empty());
            }
        }
    }
    eprintln!(
        "{} cases ({timed} timed: {timed_steps} steps, {timeouts} timeouts fired), {steps} steps, 4 Rust forms each",
        CASES.len()
    );
    eprintln!(
        "{counted} counter cases: {counted_steps} steps, {counter_changes} changed a counter, \
         {at_bound} ended with a counter at its bound"
    );
    assert!(timed >= 12, "{timed} timed cases");
    assert!(counted >= 15, "{counted} counter cases");
    assert!(
        counter_changes * 10 > counted_steps,
        "{counter_changes} of {counted_steps} steps changed a counter"
    );
    assert!(
        at_bound * 20 > counted_steps,
        "{at_bound} of {counted_steps} steps left a counter at its bound"
    );
    assert!(
        timeouts * 20 > timed_steps,
        "{timeouts} timeouts in {timed_steps} steps"
    );
    // The comparison means something only if the traces exercise the machines.
    assert!(CASES.len() >= 24, "{} cases", CASES.len());
    assert!(moved * 10 > steps, "{moved} of {steps} steps changed state");
    assert!(rejected > 0, "no step was rejected");
    assert!(acted * 10 > steps, "{acted} of {steps} steps ran actions");
}
