//! `detent tour --format json|text`: a transition tour, the steps from the start state
//! that fire every reachable rule at least once, with restarts where needed.

use super::StepEntry;
use crate::check::render::plural;
use crate::minimize::encode::named_inputs;
use crate::model::Machine;
use crate::tour::{Tour, TourStep};
use serde::Serialize;

/// The report of one `detent tour`.
#[derive(Debug, Serialize)]
pub struct TourReport {
    /// The steps, restarts as `{"reset":true}`.
    pub steps: Vec<StepEntry>,
    /// Distinct reachable transitions the tour fires.
    pub covers: usize,
    /// Reachable transitions in all.
    pub transitions: usize,
    /// The summary line of the text form (it goes to standard error).
    #[serde(skip)]
    pub summary: String,
}

impl TourReport {
    /// The report of tour `t` of machine `m`.
    pub fn new(m: &Machine, t: &Tour) -> TourReport {
        let steps = super::compress(t.steps.iter().map(|s| match s {
            TourStep::Reset => StepEntry::Reset { reset: true },
            TourStep::Step { event, inputs } => {
                StepEntry::step(m.event_name(*event), &named_inputs(m, inputs))
            }
        }));
        let summary = format!(
            "tour of `{}`: {}, {}, covers {} of {} ({})",
            m.name,
            plural(t.len_steps(), "step"),
            plural(t.resets(), "reset"),
            t.covers,
            plural(t.transitions, "transition"),
            if m.has_configs() {
                "timers: greedy cover over configurations"
            } else if t.strongly_connected {
                "strongly connected: postman tour"
            } else {
                "not strongly connected: greedy cover with resets"
            }
        );
        TourReport {
            steps,
            covers: t.covers,
            transitions: t.transitions,
            summary,
        }
    }

    /// The text form: one step per line in the trace format of `detent run --trace`
    /// (inputs that are 1 written out), a restart as the line `reset`: the whole text
    /// replays through `run` as printed.
    pub fn lines(&self) -> Vec<String> {
        super::trace_lines(&self.steps, false)
    }
}
