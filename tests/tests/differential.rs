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
use detent_compiler::model::{EventId, OutputId, StateId};
use detent_tests::gen::{random_trace, Rng};

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
    let mut state: StateId = m.start;
    let mut out = vec![Observed {
        state: state.index(),
        outputs: outputs(&m.states[state.index()].moore),
        rejected: false,
        actions: vec![],
        reads: vec![],
    }];
    for (e, ins) in trace {
        let r = m.step(state, EventId::from_index(*e), ins);
        state = r.to;
        out.push(Observed {
            state: r.to.index(),
            outputs: outputs(&r.outputs()),
            rejected: r.outcome == Outcome::Rejected,
            actions: r.actions.iter().map(|a| a.index()).collect(),
            reads: r.inputs_read.iter().map(|i| i.index()).collect(),
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
    for case in CASES {
        let report = check_source("case.detent", case.spec);
        let m = report.machines.into_iter().find_map(|m| m.machine).unwrap();
        let mut rng = Rng::new(case.name.len() as u64 * 7919 + case.spec.len() as u64);
        for t in 0..12 {
            let trace = random_trace(&mut rng, m.events.len(), m.inputs.len(), 60);
            let expected = interpret(case.spec, &trace);
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
                steps += 1;
                moved += usize::from(w[0].state != w[1].state);
                rejected += usize::from(w[1].rejected);
                acted += usize::from(!w[1].actions.is_empty());
            }
        }
    }
    // The comparison means something only if the traces exercise the machines.
    assert!(CASES.len() >= 24, "{} cases", CASES.len());
    assert!(moved * 10 > steps, "{moved} of {steps} steps changed state");
    assert!(rejected > 0, "no step was rejected");
    assert!(acted * 10 > steps, "{acted} of {steps} steps ran actions");
}
