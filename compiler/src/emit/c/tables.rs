//! The C tables of a machine, read off its lowered form.
//!
//! Nothing here decides which rule fires: each (state, event) cell lists the choices of
//! the lowered form ([`crate::model::lower`]) in their order, each with its test (the
//! folded guard; guard id 0 when it needs none), its target, its Mealy mask and its
//! operation sequence. The generated `step` takes the first transition of the cell
//! whose guard holds, which is [`crate::model::lower::Lowered::choose`], and reads each
//! input at most once through its sampler, as `choose` does.

use crate::fxhash::FxMap;
use crate::model::lower::{OutSetId, SeqId};
use crate::model::{ActionId, EventId, Guard, Machine, OutputId, StateId, TimerId};

/// One transition: a choice of the lowered form as one cell has it.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub(super) struct Trans {
    /// Guard id: 0 always holds, `g > 0` is `guards[g - 1]`.
    pub guard: usize,
    pub target: StateId,
    /// Mealy mask words.
    pub mealy: Vec<u64>,
    /// Index into the used sequences (`seq_start`).
    pub seq: usize,
    /// The set of timers it sets to 0: 0 none, `z > 0` is `zero_sets[z - 1]`.
    pub zero: usize,
}

/// What a transition tests: the timeout that must be due (timer, duration in ticks),
/// then the folded guard; each `None` when there is none.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub(super) struct Test {
    pub due: Option<(TimerId, u32)>,
    pub guard: Option<Guard>,
}

/// The tables, computed once and printed by the header and source writers.
pub(super) struct Layout {
    /// Range id of each cell, row-major by state.
    pub cell: Vec<usize>,
    /// First transition of each range, plus the end.
    pub range_start: Vec<usize>,
    pub trans: Vec<Trans>,
    /// Distinct tests; guard id `g > 0` is `guards[g - 1]`.
    pub guards: Vec<Test>,
    /// Distinct non-empty sets of timers a transition sets to 0, ascending each.
    pub zero_sets: Vec<Vec<TimerId>>,
    /// First action entry of each used sequence, plus the end; sequence 0 is empty.
    pub seq_start: Vec<usize>,
    pub act_list: Vec<ActionId>,
    /// Moore mask words of each state.
    pub moore: Vec<Vec<u64>>,
    /// Output mask words per row (0 when the machine has no outputs).
    pub out_words: usize,
    /// Bits per output mask word.
    pub out_word_bits: usize,
    pub out_word_bytes: usize,
    /// Inputs some guard reads.
    pub inputs_used: Vec<bool>,
    /// Actions some transition runs.
    pub actions_used: Vec<bool>,
    pub range_ty: (&'static str, usize),
    pub trans_ty: (&'static str, usize),
    pub guard_ty: (&'static str, usize),
    pub target_ty: (&'static str, usize),
    pub seq_ty: (&'static str, usize),
    pub seq_start_ty: (&'static str, usize),
    pub action_ty: (&'static str, usize),
    pub zero_ty: (&'static str, usize),
}

/// The narrowest C unsigned type holding `max`, and its size in bytes.
pub(super) fn uint_for(max: u64) -> (&'static str, usize) {
    if max <= u64::from(u8::MAX) {
        ("uint8_t", 1)
    } else if max <= u64::from(u16::MAX) {
        ("uint16_t", 2)
    } else if max <= u64::from(u32::MAX) {
        ("uint32_t", 4)
    } else {
        ("uint64_t", 8)
    }
}

impl Layout {
    pub fn new(m: &Machine) -> Layout {
        let lowered = &m.lowered;
        let n_out = m.outputs.len();
        let (out_words, out_word_bits) = match n_out {
            0 => (0, 8),
            1..=8 => (1, 8),
            9..=16 => (1, 16),
            17..=32 => (1, 32),
            33..=64 => (1, 64),
            _ => (n_out.div_ceil(32), 32),
        };
        let mask = |outs: &[OutputId]| -> Vec<u64> {
            let mut words = vec![0u64; out_words];
            for o in outs {
                words[o.index() / out_word_bits] |= 1u64 << (o.index() % out_word_bits);
            }
            words
        };
        let mut mealy_masks: FxMap<OutSetId, Vec<u64>> = FxMap::default();
        let mut guard_ids: FxMap<Test, usize> = FxMap::default();
        let mut guards: Vec<Test> = Vec::new();
        let mut zero_ids: FxMap<Vec<TimerId>, usize> = FxMap::default();
        let mut zero_sets: Vec<Vec<TimerId>> = Vec::new();
        // Used sequences: index 0 is the empty one.
        let mut seq_index: FxMap<SeqId, usize> = FxMap::default();
        seq_index.insert(SeqId::EMPTY, 0);
        let mut seq_start = vec![0usize, 0usize];
        let mut act_list: Vec<ActionId> = Vec::new();
        let mut inputs_used = vec![false; m.inputs.len()];
        let mut actions_used = vec![false; m.actions.len()];
        // Cells with the same transitions (the rest class of a state, or states with
        // the same inherited rules and effects) share one range.
        let mut ranges: FxMap<Vec<Trans>, usize> = FxMap::default();
        let mut range_of_cell: FxMap<usize, usize> = FxMap::default();
        let mut range_start = vec![0usize, 0usize];
        let mut trans: Vec<Trans> = Vec::new();
        let mut cell = Vec::with_capacity(super::cell_count(m));
        for si in 0..m.states.len() {
            let s = StateId::from_index(si);
            for ei in 0..m.events.len() {
                let id = lowered.cell_id(s, EventId::from_index(ei));
                if let Some(&r) = range_of_cell.get(&id.index()) {
                    cell.push(r);
                    continue;
                }
                let c = lowered.cell(id);
                let mut list = Vec::with_capacity(c.choices.len());
                for ch in &c.choices {
                    let guard = if ch.test.is_none() && ch.due.is_none() {
                        0
                    } else {
                        if let Some(g) = &ch.test {
                            mark_inputs(g, &mut inputs_used);
                        }
                        let test = Test {
                            due: ch.due,
                            guard: ch.test.clone(),
                        };
                        let next = guards.len() + 1;
                        let gid = *guard_ids.entry(test.clone()).or_insert(next);
                        if gid == next {
                            guards.push(test);
                        }
                        gid
                    };
                    let zeroed = ch.resets.clone();
                    let zero = if zeroed.is_empty() {
                        0
                    } else {
                        let next = zero_sets.len() + 1;
                        let z = *zero_ids.entry(zeroed.clone()).or_insert(next);
                        if z == next {
                            zero_sets.push(zeroed);
                        }
                        z
                    };
                    let next = seq_start.len() - 1;
                    let seq = *seq_index.entry(ch.ops).or_insert(next);
                    if seq == next {
                        for a in lowered.actions(ch.ops) {
                            actions_used[a.index()] = true;
                            act_list.push(a);
                        }
                        seq_start.push(act_list.len());
                    }
                    let mealy = mealy_masks
                        .entry(ch.mealy)
                        .or_insert_with(|| mask(lowered.outputs(ch.mealy)))
                        .clone();
                    list.push(Trans {
                        guard,
                        target: ch.target,
                        mealy,
                        seq,
                        zero,
                    });
                }
                let r = if list.is_empty() {
                    0
                } else {
                    let next = range_start.len() - 1;
                    let r = *ranges.entry(list.clone()).or_insert(next);
                    if r == next {
                        trans.extend(list);
                        range_start.push(trans.len());
                    }
                    r
                };
                range_of_cell.insert(id.index(), r);
                cell.push(r);
            }
        }
        let moore = (0..m.states.len())
            .map(|s| mask(lowered.outputs(lowered.moore(StateId::from_index(s)))))
            .collect();
        let n_ranges = range_start.len() - 1;
        let n_seqs = seq_start.len() - 1;
        Layout {
            cell,
            range_ty: uint_for(n_ranges.saturating_sub(1) as u64),
            trans_ty: uint_for(trans.len() as u64),
            guard_ty: uint_for(guards.len() as u64),
            target_ty: uint_for(m.states.len().saturating_sub(1) as u64),
            seq_ty: uint_for(n_seqs.saturating_sub(1) as u64),
            seq_start_ty: uint_for(act_list.len() as u64),
            action_ty: uint_for(m.actions.len().saturating_sub(1) as u64),
            zero_ty: uint_for(zero_sets.len() as u64),
            range_start,
            trans,
            guards,
            zero_sets,
            seq_start,
            act_list,
            moore,
            out_words,
            out_word_bits,
            out_word_bytes: out_word_bits / 8,
            inputs_used,
            actions_used,
        }
    }

    pub fn has_mealy(&self) -> bool {
        self.trans.iter().any(|t| t.mealy.iter().any(|&w| w != 0))
    }

    pub fn has_guards(&self) -> bool {
        !self.guards.is_empty()
    }

    /// Whether some transition sets timers to 0.
    pub fn has_zero(&self) -> bool {
        !self.zero_sets.is_empty()
    }

    pub fn needs_hooks(&self) -> bool {
        self.inputs_used.iter().any(|&b| b) || self.actions_used.iter().any(|&b| b)
    }

    /// Number of used operation sequences, the empty one included.
    pub fn seq_count(&self) -> usize {
        self.seq_start.len() - 1
    }
}

fn mark_inputs(g: &Guard, used: &mut [bool]) {
    match g {
        Guard::Input(i) => used[i.index()] = true,
        Guard::Const(_) | Guard::Atom(_) => {}
        Guard::Not(a) => mark_inputs(a, used),
        Guard::And(a, b) | Guard::Or(a, b) => {
            mark_inputs(a, used);
            mark_inputs(b, used);
        }
    }
}
