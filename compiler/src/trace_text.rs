//! `detent run --format text`: one readable line per step (the JSON lines are in
//! [`crate::trace`]).
//!
//! ```text
//! step 0: start in Idle; outputs: none
//! step 1: FloatUp (pump_current_ok=1) Idle -> Pumping; outputs: pump; actions: start_timer
//! step 2: Tick (no inputs) Pumping -> Pumping, ignored; outputs: pump; actions: none
//! step 2: reset to Idle; outputs: none
//! ```
//!
//! Each step line has the step number, the event, the inputs the trace set to 1 (an
//! input the trace leaves out is 0, so the ones at 1 say everything), `from -> to`,
//! `ignored` or `rejected` when no rule handled the event, every output high after the
//! step (Moore and Mealy together, declaration order) and the actions in the order they
//! ran. A `reset` line of the trace prints the restart with the number of the step
//! before it, as the JSON reset record does. A machine with counters ends each step
//! line with their values after the step (`; counters: strikes = 2`). The JSON lines of DESIGN.md stay the default and the stable format; this one is
//! for reading.

use crate::interp::{Outcome, StepResult};
use crate::model::Machine;
use crate::model::StateId;
use crate::trace::{TraceEntry, TraceStep};

/// The text lines of a run of `entries` from the start state (restarts included).
pub fn run_text_lines(m: &Machine, entries: &[TraceEntry]) -> Vec<String> {
    let mut out = Vec::with_capacity(entries.len() + 1);
    out.push(format!("step 0: start in {}", at_start(m, m.start)));
    let mut config = m.start_config();
    let mut n = 0;
    for entry in entries {
        match entry {
            TraceEntry::Step(s) => {
                let r = m.step_config(&mut config, s.event, &s.inputs);
                n += 1;
                let mut line = step_line(m, n, s, &r);
                if let Some(k) = crate::configs::counters_text(m, &config) {
                    line.push_str(&format!("; counters: {k}"));
                }
                out.push(line);
            }
            TraceEntry::Reset { .. } => {
                config = m.start_config();
                out.push(format!("step {n}: reset to {}", at_start(m, m.start)));
            }
        }
    }
    out
}

/// `Idle; outputs: ..`: a state and its Moore outputs.
fn at_start(m: &Machine, s: StateId) -> String {
    let st = &m.states[s.index()];
    format!(
        "{}; outputs: {}",
        st.name,
        names(st.moore.iter().map(|o| m.outputs[o.index()].name.as_str()))
    )
}

fn names<'a>(items: impl Iterator<Item = &'a str>) -> String {
    let v: Vec<&str> = items.collect();
    if v.is_empty() {
        "none".to_string()
    } else {
        v.join(", ")
    }
}

fn step_line(m: &Machine, n: usize, s: &TraceStep, r: &StepResult) -> String {
    let given: Vec<String> = s
        .inputs
        .iter()
        .enumerate()
        .filter(|(_, v)| **v)
        .map(|(i, _)| format!("{}=1", m.inputs[i].name))
        .collect();
    let given = if given.is_empty() {
        "no inputs".to_string()
    } else {
        given.join(" ")
    };
    let unhandled = match r.outcome {
        Outcome::Fired(_) => "",
        Outcome::Ignored => ", ignored",
        Outcome::Rejected => ", rejected",
    };
    format!(
        "step {n}: {} ({given}) {} -> {}{unhandled}; outputs: {}; actions: {}",
        m.event_name(r.event),
        m.states[r.from.index()].name,
        m.states[r.to.index()].name,
        names(
            r.outputs()
                .iter()
                .map(|o| m.outputs[o.index()].name.as_str())
        ),
        names(r.actions.iter().map(|a| m.actions[a.index()].name.as_str())),
    )
}
