//! The reference interpreter: what a [`Machine`] does, one step at a time.
//!
//! This is the single definition of meaning (LANGUAGE.md, "Meaning"). Every back end
//! (Rust table, Rust match, macro, C, Verilog) is tested against it on the same traces.
//!
//! A step in state `S` on event `E` with input valuation `v`:
//! 1. Find the scope used: innermost first, `S`'s rules naming `E`, `S`'s `_`, then
//!    each enclosing group's in turn ([`Machine::rules_for`]).
//! 2. Among its rules take the one whose guard `v` satisfies (the checker proves at
//!    most one can be).
//! 3. If one fires: move to its target (`stay` keeps `S`), run the actions of
//!    [`Machine::transition_actions`], and output the Moore outputs of the new state
//!    together with the rule's Mealy outputs.
//! 4. If none fires: no state change, no actions, no Mealy outputs; the step is
//!    `Ignored`, or `Rejected` under `unhandled reject`. (Under `unhandled complete`
//!    the checker rejects a spec where this can happen; the interpreter then treats it
//!    as ignored so that it stays total.)
//!
//! The start state is entered at construction without running its enter actions.

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
}

impl StepResult {
    /// True when a rule fired.
    pub fn handled(&self) -> bool {
        matches!(self.outcome, Outcome::Fired(_))
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
    /// The rule that fires for (state, event) under a valuation, if any.
    pub fn fired_rule(&self, state: StateId, event: EventId, inputs: &[bool]) -> Option<RuleId> {
        let (_, rules) = self.rules_for(state, event)?;
        self.first_enabled(rules, inputs)
    }

    /// The first of a scope's rules whose guard the valuation satisfies (step 2).
    pub fn first_enabled(&self, rules: &[RuleId], inputs: &[bool]) -> Option<RuleId> {
        rules.iter().copied().find(|r| {
            self.bdd
                .eval(self.rules[r.index()].guard, |v| value(inputs, InputId(v)))
        })
    }

    /// One step. `inputs[i]` is the value of input `i`; missing entries read as false.
    pub fn step(&self, state: StateId, event: EventId, inputs: &[bool]) -> StepResult {
        match self.fired_rule(state, event, inputs) {
            Some(rule) => {
                let r = &self.rules[rule.index()];
                let to = self.target_of(state, rule);
                StepResult {
                    from: state,
                    event,
                    to,
                    outcome: Outcome::Fired(rule),
                    mealy: r.mealy.clone(),
                    moore: self.states[to.index()].moore.clone(),
                    actions: self.transition_actions(state, rule),
                }
            }
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
                moore: self.states[state.index()].moore.clone(),
                actions: Vec::new(),
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
