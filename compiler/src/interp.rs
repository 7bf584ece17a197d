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
//!
//! # Time
//!
//! With `after` rules, what the machine remembers is a [`Config`]: the state and one
//! timer per scope with timeouts (LANGUAGE.md, "Time and counts"). On the time-base
//! event, each timer of the state's scopes first adds one (stopping at its largest
//! duration); a timeout is due when that brings its timer to its duration. A rule that
//! fires sets the timers of its choice's `resets` to 0 (for a move: the scopes it
//! enters, and every scope not active after it), and nothing else is zeroed, so timers
//! of scopes that are not active stay at 0 and equal configurations compare equal.
//!
//! # Counters
//!
//! Counters are part of the configuration too. Guards compare them as they were at the
//! start of the step ([`Sampler::with_atoms`]); the operations of the choice that fires
//! then run in order with its actions ([`apply_counter_ops`]), each kept in `0..=N`
//! (the checker's `counter_range` error says when a reachable step would leave it).

use crate::model::lower::{Lowered, Sampler};
use crate::model::{ActionId, EventId, InputId, Machine, Op, OutputId, RuleId, StateId, TimerId};
use crate::syntax::ast::Policy;

/// What a machine remembers between steps: its state, its timers and its counters.
#[derive(Clone, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Config {
    /// The current state.
    pub state: StateId,
    /// One value per timer of the machine ([`Machine::timers`]): time-base events
    /// counted since its scope was entered, at most its largest duration; 0 for timers
    /// of scopes that are not active.
    pub timers: Vec<u32>,
    /// One value per counter of the machine ([`Machine::counters`]), in `0..=max`.
    pub counters: Vec<u16>,
}

impl Config {
    /// The state `s` just entered: every timer and counter at 0.
    pub fn at(m: &Machine, s: StateId) -> Config {
        Config {
            state: s,
            timers: vec![0; m.timers.len()],
            counters: vec![0; m.counters.len()],
        }
    }
}

/// Runs the counter operations of `ops` on `counters`, in order (actions are the
/// host's): each keeps its counter in `0..=max`, stopping at the end of the range. The
/// first operation that would have left the range, if any: its index in `ops`.
pub fn apply_counter_ops(m: &Machine, ops: &[Op], counters: &mut [u16]) -> Option<usize> {
    let mut first = None;
    for (k, op) in ops.iter().enumerate() {
        if let Op::Counter(c) = op {
            let i = c.counter.index();
            let (v, out) = c.apply(counters[i], m.counters[i].max);
            counters[i] = v;
            if out && first.is_none() {
                first = Some(k);
            }
        }
    }
    first
}

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
    /// The start configuration: the start state, every timer at 0.
    pub fn start_config(&self) -> Config {
        Config::at(self, self.start)
    }

    /// One step from `state` with every timer at 0 (the state just entered). `inputs[i]`
    /// is the value of input `i`; missing entries read as false. Machines with timers
    /// step through [`Machine::step_config`].
    pub fn step(&self, state: StateId, event: EventId, inputs: &[bool]) -> StepResult {
        self.step_reading(state, event, &mut |i: InputId| value(inputs, i))
    }

    /// One step from a configuration, which it updates (state and timers).
    pub fn step_config(&self, config: &mut Config, event: EventId, inputs: &[bool]) -> StepResult {
        self.step_config_reading(config, event, &mut |i: InputId| value(inputs, i))
    }

    /// One step from a configuration that reads inputs through `read` (at most once
    /// each, as [`Machine::step_reading`]).
    pub fn step_config_reading(
        &self,
        config: &mut Config,
        event: EventId,
        read: &mut dyn FnMut(InputId) -> bool,
    ) -> StepResult {
        let state = config.state;
        let lowered: &Lowered = &self.lowered;
        let cell = lowered.cell_of(state, event);
        let is_tb = self.timebase.as_ref().is_some_and(|t| t.event == event);
        // The timers before this event (for the due test), then counted.
        let before: Vec<u32> = config.timers.clone();
        if is_tb {
            for &t in &cell.timers {
                let max = self.timers[t.index()].max();
                let v = &mut config.timers[t.index()];
                *v = (*v + 1).min(max);
            }
        }
        let due = |t: TimerId, d: u32| {
            is_tb
                && cell.timers.contains(&t)
                && before
                    .get(t.index())
                    .is_some_and(|&v| u64::from(v) + 1 == u64::from(d))
        };
        let atoms = self.atom_values(&config.counters);
        let mut sample = Sampler::new(self.inputs.len(), read).with_atoms(atoms);
        let fired = lowered.choose_due(cell, &due, &mut sample).cloned();
        let inputs_read = sample.read_order().to_vec();
        let result = self.result_of(state, event, fired.as_ref(), inputs_read);
        if let Some(choice) = &fired {
            apply_counter_ops(self, lowered.seq(choice.ops), &mut config.counters);
            for t in &choice.resets {
                config.timers[t.index()] = 0;
            }
            config.state = choice.target;
        }
        result
    }

    /// The number of time-base events after which a timeout of the configuration comes
    /// due (guards aside), or `None` when none is pending: what a tickless host may
    /// sleep for.
    pub fn next_timeout(&self, config: &Config) -> Option<u32> {
        self.chain_timers(config.state)
            .into_iter()
            .filter_map(|t| {
                let v = config.timers[t.index()];
                self.timers[t.index()]
                    .durations
                    .iter()
                    .find(|&&d| d > v)
                    .map(|&d| d - v)
            })
            .min()
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
        let mut config = Config::at(self, state);
        self.step_config_reading(&mut config, event, read)
    }

    /// What a step did, from the choice that fired (`None`: nothing fired).
    fn result_of(
        &self,
        state: StateId,
        event: EventId,
        fired: Option<&crate::model::lower::Choice>,
        inputs_read: Vec<InputId>,
    ) -> StepResult {
        let lowered: &Lowered = &self.lowered;
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
        let mut config = self.start_config();
        let mut out = Vec::new();
        for (event, inputs) in steps {
            out.push(self.step_config(&mut config, event, inputs));
        }
        out
    }
}

fn value(inputs: &[bool], i: InputId) -> bool {
    inputs.get(i.index()).copied().unwrap_or(false)
}
