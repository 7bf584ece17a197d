//! Steps of a machine: every (state, event class, firing region) of the lowered form, as
//! one flat table.
//!
//! Rule choice comes from [`super::lower`]: each cell of the lowered form already splits
//! the input space into the exact, disjoint regions where each of its choices fires,
//! plus the `unhandled` remainder (an ignored or rejected step). This table only lists
//! them, one [`Step`] per non-empty region, grouped by source state, so that searches
//! over the machine (the property checker, the tour) can name a step by a `u32` and
//! keep parent pointers in flat tables. No BDD operation happens here. Every valuation
//! in one region makes the same step, so one concrete valuation ([`valuation`]:
//! `sat_one`, unmentioned inputs false) stands for it; no `2^inputs` enumeration
//! happens. Cost: linear in the cells plus their choices.

use super::lower::{CellId, Choice};
use super::{Bdd, BddStore, EventId, Machine, RuleId, StateId};

/// One step out of a state: a cell of the lowered form and one of its regions.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Step {
    /// The cell (state and event class) the step is in.
    pub cell: CellId,
    /// The index of the choice that fires in the cell's `choices`; `None` for the
    /// cell's unhandled region (ignored or rejected).
    pub choice: Option<u32>,
    /// A representative event of the cell's event class.
    pub event: EventId,
    /// The inputs that make this step (disjoint from the other steps of its cell).
    pub atom: Bdd,
    /// The state after the step.
    pub to: StateId,
}

impl Step {
    /// The choice that fires in this step (`None`: ignored or rejected).
    pub fn fired<'m>(&self, m: &'m Machine) -> Option<&'m Choice> {
        let cell = m.lowered.cell(self.cell);
        self.choice.map(|i| &cell.choices[i as usize])
    }

    /// The rule that fires in this step, if any.
    pub fn rule(&self, m: &Machine) -> Option<RuleId> {
        self.fired(m).map(|c| c.rule)
    }
}

/// Every step of every state, as one flat table (`steps[start[s]..start[s + 1]]` are
/// the steps out of state `s`, in the lowered form's cell and choice order).
#[derive(Clone, Debug)]
pub struct StepTable {
    /// Offsets into `steps`, one per state plus one.
    pub start: Vec<u32>,
    /// The steps, grouped by source state.
    pub steps: Vec<Step>,
}

impl StepTable {
    /// Lists the regions of the machine's lowered form.
    pub fn build(m: &Machine) -> StepTable {
        let lowered = &m.lowered;
        let mut start = Vec::with_capacity(m.states.len() + 1);
        let mut steps = Vec::with_capacity(lowered.cells().len());
        for si in 0..m.states.len() {
            start.push(steps.len() as u32);
            let s = StateId::from_index(si);
            for id in lowered.cell_range(s) {
                let cell = &lowered.cells()[id];
                let cell_id = CellId(id as u32);
                for (k, choice) in cell.choices.iter().enumerate() {
                    steps.push(Step {
                        cell: cell_id,
                        choice: Some(k as u32),
                        event: cell.event,
                        atom: choice.region,
                        to: choice.target,
                    });
                }
                if !cell.unhandled.is_false() {
                    steps.push(Step {
                        cell: cell_id,
                        choice: None,
                        event: cell.event,
                        atom: cell.unhandled,
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
