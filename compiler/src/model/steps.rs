//! Steps of a machine: every (state, event class, guard atom) triple, as one flat table.
//!
//! For each (state, event-class) cell ([`Machine::cells`]) the input space is split with
//! BDDs (Bryant 1986) into the region where each rule of the scope used fires (rule
//! `i`'s guard minus the guards of rules `0..i`: the same first-match order as the
//! reference interpreter) and the uncovered remainder (an ignored or rejected step).
//! Every valuation in one region makes the same step, so one concrete valuation
//! ([`valuation`]: `sat_one`, unmentioned inputs false) stands for it. No `2^inputs`
//! enumeration happens. Cost: linear in the cells plus their rules, times the BDD
//! operations on those rules' guards. Shared by the property checker and the tour
//! generator.

use super::graph::CellEvents;
use super::{Bdd, BddStore, EventId, Machine, RuleId, StateId};

/// One step out of a state: an event, the input region (atom) that makes it, the rule
/// that fires (`None`: ignored or rejected) and the state after it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Step {
    /// A representative event of the step's event class.
    pub event: EventId,
    /// The inputs that make this step (disjoint from the other atoms of its cell).
    pub atom: Bdd,
    /// The rule that fires, if any.
    pub rule: Option<RuleId>,
    /// The state after the step.
    pub to: StateId,
}

/// Every step of every state, as one flat table (`steps[start[s]..start[s + 1]]` are
/// the steps out of state `s`).
#[derive(Clone, Debug)]
pub struct StepTable {
    /// Offsets into `steps`, one per state plus one.
    pub start: Vec<u32>,
    /// The steps, grouped by source state.
    pub steps: Vec<Step>,
}

impl StepTable {
    /// Builds the table; new BDD nodes (atoms) go into `bdd`, a copy of the machine's
    /// store.
    pub fn build(m: &Machine, bdd: &mut BddStore) -> StepTable {
        let mut start = Vec::with_capacity(m.states.len() + 1);
        let mut steps = Vec::new();
        for si in 0..m.states.len() {
            start.push(steps.len() as u32);
            let s = StateId::from_index(si);
            let mut rest_event = None;
            for cell in m.cells(s) {
                let event = match cell.events {
                    CellEvents::One(e) => e,
                    CellEvents::Rest => *rest_event.get_or_insert_with(|| m.rest_events(s)[0]),
                };
                let rules: &[RuleId] = cell.rules.map(|(_, r)| r).unwrap_or(&[]);
                // What no earlier rule takes, kept as it shrinks (complementing the
                // growing union for every rule would cost as much as the union each time).
                let mut untaken = Bdd::TRUE;
                for &r in rules {
                    let guard = m.rules[r.index()].guard;
                    let atom = bdd.and(guard, untaken);
                    if !atom.is_false() {
                        let not_guard = bdd.not(guard);
                        untaken = bdd.and(untaken, not_guard);
                        steps.push(Step {
                            event,
                            atom,
                            rule: Some(r),
                            to: m.target_of(s, r),
                        });
                    }
                }
                let rest = untaken;
                if !rest.is_false() {
                    steps.push(Step {
                        event,
                        atom: rest,
                        rule: None,
                        to: s,
                    });
                }
            }
        }
        start.push(steps.len() as u32);
        StepTable { start, steps }
    }

    /// The steps out of a state.
    pub fn of(&self, s: StateId) -> &[Step] {
        &self.steps[self.start[s.index()] as usize..self.start[s.index() + 1] as usize]
    }
}

/// A full valuation (`n_inputs` long) from a satisfying region: `sat_one`, inputs the
/// region does not mention false. All false when the region is unsatisfiable.
pub fn valuation(n_inputs: usize, bdd: &BddStore, region: Bdd) -> Vec<bool> {
    let mut v = vec![false; n_inputs];
    for (var, val) in bdd.sat_one(region).unwrap_or_default() {
        if let Some(slot) = v.get_mut(var as usize) {
            *slot = val;
        }
    }
    v
}
