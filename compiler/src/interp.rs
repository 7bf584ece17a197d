//! The reference interpreter: what a [`Machine`] does, one step at a time.
//!
//! This is the single definition of meaning (LANGUAGE.md, "Meaning"), and it decides
//! nothing on its own: it steps through the machine's lowered form
//! ([`crate::model::lower`]), the one place that says which rule fires. Every back end
//! (Rust table, Rust match, macro, C, Verilog) is tested against it on the same traces.
//!
//! A step in state `S` on event `E`:
//! 1. Take the cell of `(S, E)` ([`Lowered::cell_of`]).
//! 2. Take its first choice whose test holds ([`Lowered::choose`]), reading each input
//!    the first time a test needs it and never again in the step ([`Sampler`]).
//! 3. If one fires: move to its target (`stay` keeps `S`), run its operations in order
//!    (leave actions, the rule's, enter actions), and output the Moore outputs of the
//!    new state together with the rule's Mealy outputs.
//! 4. If none fires: no state change, no actions, no Mealy outputs; the step is
//!    `Ignored`, or `Rejected` under `unhandled reject`. (Under `unhandled complete`
//!    the checker rejects a spec where this can happen; the interpreter then treats it
//!    as ignored so that it stays total.)
//!
//! The start state is entered at construction without running its enter actions.

use crate::model::lower::{Lowered, Sampler};
use crate::model::{ActionId, EventId, InputId, Machine, OutputId, RuleId, StateId};
use crate::syntax::ast::Policy;

/// How a step ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Outcome {
    /// A rule fired.
    Fired(RuleId),
    /// No rule applied; nothing happened.
    Ignored,
    /// No rule applied and the policy is `reject`: the caller is told.
    Rejected,
}

/// Everything one step did.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct StepResult {
    /// State before the step.
    pub from: StateId,
    /// The event consumed.
    pub event: EventId,
    /// State after the step.
    pub to: StateId,
    /// Which rule fired, if any.
    pub outcome: Outcome,
    /// Mealy outputs of the rule, ascending.
    pub mealy: Vec<OutputId>,
    /// Moore outputs of the state after the step, ascending.
    pub moore: Vec<OutputId>,
    /// Actions in the order they ran.
    pub actions: Vec<ActionId>,
    /// The inputs the step read, in the order it read them (each at most once).
    pub inputs_read: Vec<InputId>,
}

impl StepResult {
    /// True when a rule fired.
    pub fn handled(&self) -> bool {
        matches!(self.outcome, Outcome::Fired(_))
    }

    /// The rule that fired, if one did.
    pub fn rule(&self) -> Option<RuleId> {
        match self.outcome {
            Outcome::Fired(r) => Some(r),
            Outcome::Ignored | Outcome::Rejected => None,
        }
    }

    /// Every output high after the step (Moore of the new state and Mealy of the rule),
    /// ascending.
    pub fn outputs(&self) -> Vec<OutputId> {
        let mut all = self.moore.clone();
        all.extend_from_slice(&self.mealy);
        all.sort_unstable();
        all.dedup();
        all
    }
}

impl Machine {
    /// One step. `inputs[i]` is the value of input `i`; missing entries read as false.
    pub fn step(&self, state: StateId, event: EventId, inputs: &[bool]) -> StepResult {
        self.step_reading(state, event, &mut |i: InputId| value(inputs, i))
    }

    /// One step that reads inputs through `read`, as generated code reads its hooks:
    /// each input at most once, the first time a test of the step needs it. The
    /// inputs read, in order, are in [`StepResult::inputs_read`].
    pub fn step_reading(
        &self,
        state: StateId,
        event: EventId,
        read: &mut dyn FnMut(InputId) -> bool,
    ) -> StepResult {
        let lowered: &Lowered = &self.lowered;
        let cell = lowered.cell_of(state, event);
        let mut sample = Sampler::new(self.inputs.len(), read);
        let fired = lowered.choose(cell, &mut sample).cloned();
        let inputs_read = sample.read_order().to_vec();
        match fired {
            Some(choice) => StepResult {
                from: state,
                event,
                to: choice.target,
                outcome: Outcome::Fired(choice.rule),
                mealy: lowered.outputs(choice.mealy).to_vec(),
                moore: lowered.outputs(lowered.moore(choice.target)).to_vec(),
                actions: lowered.actions(choice.ops).collect(),
                inputs_read,
            },
            None => StepResult {
                from: state,
                event,
                to: state,
                outcome: if self.policy == Policy::Reject {
                    Outcome::Rejected
                } else {
                    Outcome::Ignored
                },
                mealy: Vec::new(),
                moore: lowered.outputs(lowered.moore(state)).to_vec(),
                actions: Vec::new(),
                inputs_read,
            },
        }
    }

    /// Runs a sequence of (event, inputs) steps from the start state.
    pub fn run<'a>(
        &self,
        steps: impl IntoIterator<Item = (EventId, &'a [bool])>,
    ) -> Vec<StepResult> {
        let mut state = self.start;
        let mut out = Vec::new();
        for (event, inputs) in steps {
            let r = self.step(state, event, inputs);
            state = r.to;
            out.push(r);
        }
        out
    }
}

fn value(inputs: &[bool], i: InputId) -> bool {
    inputs.get(i.index()).copied().unwrap_or(false)
}
