//! The lowered form: the one definition of which rule fires (DESIGN.md, "The lowered
//! form").
//!
//! **This file is the only place that decides rule choice.** The interpreter steps
//! through the [`Lowered`] table with [`Lowered::choose`]; the checker, the property
//! prover, the minimizer, the tour, the hardware port, the table and diagram, and every
//! code generator read the same table and decide nothing about rule choice on their
//! own. A language feature that changes which rule fires changes [`lower`], not its
//! consumers.
//!
//! # What a machine is, lowered
//!
//! For each state and each *class* of events that behave alike there (a
//! [`Cell`]: every event that some scope of the state names is its own class; all
//! other events form one "rest" class), the lowering lists:
//!
//! - the rules the lookup of LANGUAGE.md ("Rules and scopes") *reaches*, grouped by the
//!   lookup step and scope they come from ([`Reached`]): what the checker's overlap and
//!   dead-rule analyses read;
//! - the [`Choice`]s: the reached rules that can fire, in lookup order, each with
//!   - `test`, the condition a back end evaluates, *in order*: the first choice whose
//!     test holds fires. It is the rule's guard as written with constants folded away
//!     (`None`: always), except that the last choice of a cell that covers every
//!     valuation needs no test at all (nothing else can happen there);
//!   - `region`, the exact set of valuations where the choice fires (a BDD: its test
//!     minus the regions before it), which every analysis uses instead of re-deriving
//!     the order;
//!   - its effect: the target state, whether it moves (`stay` does not), its Mealy
//!     outputs and its sequence of operations (leave actions, the rule's, enter
//!     actions, in the order of LANGUAGE.md "Action order"), interned so that equal
//!     sets and sequences are stored once;
//! - the `unhandled` region, where no choice fires (ignored or rejected by policy).
//!
//! Rules that can never fire (an unsatisfiable guard, or one whose valuations the
//! rules before it always take) are not choices.
//!
//! # Inputs are sampled once
//!
//! Tests read inputs lazily: an input is read the first time a test that is evaluated
//! needs it, and the value read then is used by every later test of the step
//! ([`Sampler`]; LANGUAGE.md, "Inputs"). Every back end follows the same order of tests
//! and the same short-circuit evaluation of each test, so each reads the same inputs in
//! the same order as the interpreter; the hostile-hooks differential test checks it.
//!
//! # Timeouts
//!
//! The time-base event has a cell of its own in every state whose scopes have timers
//! (`after` rules). Its choices include the due timeouts (lookup step 2, after the
//! preempt rules, innermost scope first), each with a `due` condition (timer, ticks):
//! the choice is considered only on the time-base event that brings that timer to
//! that many ticks, which a back end tests first (it reads no input). Counting is part
//! of the step: on the time-base event, each timer of the cell ([`Cell::timers`]) adds
//! one, stopping at its largest duration, before the choice; a choice that fires sets
//! the timers in its [`Choice::resets`] to 0: for a move, those of the scopes it enters
//! (they restart) and every timer whose scope is not active after it, so that a timer
//! is 0 whenever its scope is not active. That list is the whole of it: no consumer
//! zeroes anything else (a step where nothing fires, or `stay`, zeroes nothing).
//!
//! Which timeouts are due depends on the timers, so a time-base cell has one exact set
//! of regions per combination of due timeouts ([`Variant`]; variant 0: nothing due,
//! whose regions are also [`Choice::region`] and [`Cell::unhandled`]). Analyses pick
//! the variant of a configuration ([`crate::configs::variant_at`]); a choice's test is
//! left out only when it takes everything left in every variant that reaches it.
//!
//! # Counters
//!
//! Operations are [`Op`]s: counter operations (`strikes += 1`) take their place in the
//! same interned sequences as the actions, in the order of LANGUAGE.md "Action order".
//! A guard that compares a counter reads it as it was at the start of the step, so
//! which choice fires depends on the values of the comparisons its cell's rules read
//! ([`Cell::atoms`]): like due timeouts, each combination of them is a [`Variant`]
//! whose regions are exact and over the inputs only (the rule's guard with the
//! comparisons fixed). A back end evaluates the comparisons in the tests in order, as
//! written; analyses pick the variant of a configuration
//! ([`crate::configs::variant_at`]), whose counters are part of it
//! ([`crate::interp::Config`]).
//!
//! # Cost
//!
//! One pass over the states; per state, one cell per event named on its scope chain
//! plus the rest class, and per cell one BDD `and`/`not` per reached rule (Bryant
//! 1986). The store is the machine's own, extended with the regions. A machine whose
//! regions pass the decision-diagram limit is refused here with an error, never left
//! to answer `false` later.

pub use super::Op;
use super::{
    ActionId, AtomId, Bdd, BddStore, EventId, Guard, InputId, Machine, OutputId, RuleId, Scope,
    StateId, Target, TimerId, Trigger,
};

/// Most due-timeout combinations one cell may have (the product over the state's
/// timers of one plus their number of distinct durations).
pub const MAX_VARIANTS: usize = 4096;
use crate::fxhash::FxMap;
use std::ops::Range;

/// A step of the lookup of LANGUAGE.md ("Rules and scopes"), in lookup order.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum LookupStep {
    /// `preempt` rules of the state's groups, outermost first.
    Preempt,
    /// Due `after` rules, the state first, then its groups outward.
    Timeout,
    /// Rules naming the event, in the scope the lookup uses.
    Named,
    /// `_` rules (every rule of a clocked machine), in the scope the lookup uses.
    Wildcard,
}

/// The number of an interned operation sequence ([`Lowered::seq`]); 0 is the empty one.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct SeqId(pub u32);

/// The number of an interned output set ([`Lowered::outputs`]); 0 is the empty one.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct OutSetId(pub u32);

/// The number of a cell ([`Lowered::cell`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct CellId(pub u32);

impl SeqId {
    /// The sequence that runs nothing.
    pub const EMPTY: SeqId = SeqId(0);
    /// The id as an index.
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

impl OutSetId {
    /// No output high.
    pub const EMPTY: OutSetId = OutSetId(0);
    /// The id as an index.
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

impl CellId {
    /// The id as an index.
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// The events of one cell.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum CellEvents {
    /// One event that some scope of the state names.
    One(EventId),
    /// Every event no scope of the state names ([`Lowered::rest_events`]).
    Rest,
}

/// The rules one lookup step reaches in one scope, in source order.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Reached {
    /// Which lookup step.
    pub step: LookupStep,
    /// The scope whose rules they are.
    pub scope: Scope,
    /// The rules, in source order (whether or not they can fire).
    pub rules: Vec<RuleId>,
}

/// A rule as it can fire in one cell.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Choice {
    /// The rule.
    pub rule: RuleId,
    /// The lookup step it comes from.
    pub step: LookupStep,
    /// The scope that holds it.
    pub scope: Scope,
    /// What a back end tests, in choice order (the first choice whose test holds
    /// fires): the guard with constants folded away; `None` when nothing needs testing.
    pub test: Option<Guard>,
    /// Exactly the valuations where this choice fires: its test minus every earlier
    /// choice's region. Disjoint from the other regions of the cell. In a cell with
    /// timers or counter comparisons this is variant 0 (nothing due, every comparison
    /// false); analyses of such machines read [`Cell::variants`] instead.
    pub region: Bdd,
    /// The state after the step (the current one for `stay`).
    pub target: StateId,
    /// False for `stay` (no enter/leave actions), true for `=> T` (even `T` = current).
    pub moves: bool,
    /// The rule's Mealy outputs.
    pub mealy: OutSetId,
    /// What runs, in order: leave actions, the rule's, enter actions.
    pub ops: SeqId,
    /// A timeout rule: the timer and duration (ticks) that must come due on this
    /// time-base event for the choice to be considered (tested before `test`, reads no
    /// input).
    pub due: Option<(TimerId, u32)>,
    /// Every timer this choice sets to 0 when it fires, ascending ([`zeroed_timers`]):
    /// for a move, the timers of the scopes it enters (the target, and its groups that
    /// do not hold the current state) and of every scope not active after it. Empty
    /// for `stay`. The interpreter, the configuration graph, every code generator and
    /// the hardware port read this list and zero nothing else.
    pub resets: Vec<TimerId>,
}

/// One state's class of events and how the lookup resolves it.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Cell {
    /// The state.
    pub state: StateId,
    /// Which events.
    pub events: CellEvents,
    /// An event of the class (the one event, or the first of the rest class), for
    /// traces and witnesses.
    pub event: EventId,
    /// The rules the lookup reaches, by lookup step and scope, in lookup order.
    pub reached: Vec<Reached>,
    /// The rules that can fire, in lookup order.
    pub choices: Vec<Choice>,
    /// The valuations where no choice fires (`FALSE` when the cell is covered).
    /// With timeouts: where nothing is due (variant 0).
    pub unhandled: Bdd,
    /// The timers whose timeouts this cell can consider (the time-base cell of a state
    /// whose scopes have timers: those timers, innermost scope first; empty otherwise).
    pub timers: Vec<TimerId>,
    /// The counter comparisons the guards of the reached rules read, ascending.
    pub atoms: Vec<AtomId>,
    /// The exact regions for each combination of due timeouts and values of the
    /// counter comparisons ([`Variant`]); one variant (nothing due) in a cell without
    /// timers and comparisons. Indexed in mixed radix: first over `timers` (digit `k` is
    /// 0 when timer `timers[k]` has nothing due, `j` when its `j`th duration, ascending
    /// from 1, is due), then one binary digit per comparison of `atoms` (1: it holds)
    /// ([`Lowered::variant_index_with`]).
    pub variants: Vec<Variant>,
}

/// The exact regions of a cell's choices for one set of due timeouts.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Variant {
    /// The due timeouts, one per timer at most.
    pub due: Vec<(TimerId, u32)>,
    /// The value of each counter comparison of [`Cell::atoms`] in this variant.
    pub atoms: Vec<bool>,
    /// Per choice (parallel to [`Cell::choices`]): where it fires, given this due set
    /// (`FALSE` for a timeout choice that is not due).
    pub regions: Vec<Bdd>,
    /// Where no choice fires, given this due set.
    pub unhandled: Bdd,
}

/// The lowered transition table of a machine (see the module documentation).
#[derive(Clone, Debug, Default)]
pub struct Lowered {
    cells: Vec<Cell>,
    /// `cells[state_cells[s]..state_cells[s + 1]]` are the cells of state `s`: its named
    /// events ascending, then its rest class (when some event falls in it).
    state_cells: Vec<u32>,
    seqs: Vec<Vec<Op>>,
    out_sets: Vec<Vec<OutputId>>,
    moore: Vec<OutSetId>,
}

impl Lowered {
    /// Every cell, grouped by state.
    pub fn cells(&self) -> &[Cell] {
        &self.cells
    }

    /// The cells of a state: its named events ascending, then the rest class.
    pub fn cells_of(&self, s: StateId) -> &[Cell] {
        &self.cells[self.cell_range(s)]
    }

    /// The ids of a state's cells.
    pub fn cell_range(&self, s: StateId) -> Range<usize> {
        self.state_cells[s.index()] as usize..self.state_cells[s.index() + 1] as usize
    }

    /// A cell by id.
    pub fn cell(&self, c: CellId) -> &Cell {
        &self.cells[c.index()]
    }

    /// The cell that resolves event `e` in state `s`.
    pub fn cell_id(&self, s: StateId, e: EventId) -> CellId {
        let range = self.cell_range(s);
        let cells = &self.cells[range.clone()];
        let named = match cells.last() {
            Some(c) if c.events == CellEvents::Rest => &cells[..cells.len() - 1],
            _ => cells,
        };
        let i = match named.binary_search_by_key(&e, |c| c.event) {
            Ok(i) => i,
            // Not named on the scope chain: the rest class, which is then present.
            Err(_) => named.len(),
        };
        CellId((range.start + i) as u32)
    }

    /// The cell that resolves event `e` in state `s`.
    pub fn cell_of(&self, s: StateId, e: EventId) -> &Cell {
        self.cell(self.cell_id(s, e))
    }

    /// An interned operation sequence.
    pub fn seq(&self, id: SeqId) -> &[Op] {
        &self.seqs[id.index()]
    }

    /// Every interned operation sequence (index 0: the empty one).
    pub fn seqs(&self) -> &[Vec<Op>] {
        &self.seqs
    }

    /// The actions of a sequence, in order (counter operations left out).
    pub fn actions(&self, id: SeqId) -> impl Iterator<Item = ActionId> + '_ {
        self.seq(id).iter().filter_map(Op::action)
    }

    /// An interned output set, ascending.
    pub fn outputs(&self, id: OutSetId) -> &[OutputId] {
        &self.out_sets[id.index()]
    }

    /// Every interned output set (index 0: the empty one).
    pub fn output_sets(&self) -> &[Vec<OutputId>] {
        &self.out_sets
    }

    /// The Moore outputs of a state (its own `emit` and its groups').
    pub fn moore(&self, s: StateId) -> OutSetId {
        self.moore[s.index()]
    }

    /// The events of a cell, ascending.
    pub fn cell_events(&self, n_events: usize, cell: &Cell) -> Vec<EventId> {
        match cell.events {
            CellEvents::One(e) => vec![e],
            CellEvents::Rest => self.rest_events(n_events, cell.state),
        }
    }

    /// The events of a state's rest class (named on none of its scopes), ascending.
    pub fn rest_events(&self, n_events: usize, s: StateId) -> Vec<EventId> {
        let named: Vec<EventId> = self
            .cells_of(s)
            .iter()
            .filter_map(|c| match c.events {
                CellEvents::One(e) => Some(e),
                CellEvents::Rest => None,
            })
            .collect();
        (0..n_events)
            .map(EventId::from_index)
            .filter(|e| named.binary_search(e).is_err())
            .collect()
    }

    /// The choice that fires in `cell`: the first whose test holds, each input read
    /// through `sample` (at most once per step). `None`: no rule handles the step.
    /// Timeout choices are never due here (see [`Lowered::choose_due`]).
    ///
    /// This is the rule choice of the language; every back end emits code that makes
    /// the same choice with the same reads.
    pub fn choose<'c>(&self, cell: &'c Cell, sample: &mut Sampler<'_>) -> Option<&'c Choice> {
        self.choose_due(cell, &|_, _| false, sample)
    }

    /// The choice that fires in `cell` when `due(timer, ticks)` says which timeouts are
    /// due: the first choice whose due condition (if any) holds and then whose test
    /// holds. The due condition is checked first and reads no input.
    pub fn choose_due<'c>(
        &self,
        cell: &'c Cell,
        due: &dyn Fn(TimerId, u32) -> bool,
        sample: &mut Sampler<'_>,
    ) -> Option<&'c Choice> {
        cell.choices.iter().find(|c| {
            c.due.is_none_or(|(t, d)| due(t, d))
                && match &c.test {
                    None => true,
                    Some(t) => sample.holds(t),
                }
        })
    }

    /// The variant of `cell` for a due set given per timer of [`Cell::timers`] as the
    /// due duration (`None`: nothing due), every counter comparison false. Durations
    /// that are not the timer's are read as nothing due.
    pub fn variant_index(
        &self,
        m: &Machine,
        cell: &Cell,
        due: &dyn Fn(TimerId) -> Option<u32>,
    ) -> usize {
        self.variant_index_with(m, cell, due, &|_| false)
    }

    /// The variant of `cell` for a due set (as [`Lowered::variant_index`]) and the
    /// values of the counter comparisons ([`Cell::atoms`]) at the start of the step.
    pub fn variant_index_with(
        &self,
        m: &Machine,
        cell: &Cell,
        due: &dyn Fn(TimerId) -> Option<u32>,
        atom: &dyn Fn(AtomId) -> bool,
    ) -> usize {
        let mut index = 0;
        let mut stride = 1;
        for &t in &cell.timers {
            let durations = &m.timers[t.index()].durations;
            let digit = due(t)
                .and_then(|d| durations.binary_search(&d).ok())
                .map_or(0, |j| j + 1);
            index += digit * stride;
            stride *= durations.len() + 1;
        }
        for &a in &cell.atoms {
            if atom(a) {
                index += stride;
            }
            stride *= 2;
        }
        index
    }

    /// The choice of `cell` whose region holds a full valuation (exact; reads nothing).
    pub fn choice_at<'c>(
        &self,
        bdd: &BddStore,
        cell: &'c Cell,
        inputs: &[bool],
    ) -> Option<&'c Choice> {
        cell.choices.iter().find(|c| {
            bdd.eval(c.region, |v| {
                inputs.get(v as usize).copied().unwrap_or(false)
            })
        })
    }

    /// States one step can lead to from `s` (some choice fires), ascending, without
    /// duplicates; `s` itself when a choice stays or loops.
    pub fn successors(&self, s: StateId) -> Vec<StateId> {
        let mut out: Vec<StateId> = self
            .cells_of(s)
            .iter()
            .flat_map(|c| c.choices.iter().map(|ch| ch.target))
            .collect();
        out.sort_unstable();
        out.dedup();
        out
    }

    /// The successor lists of every state, indexed by state.
    pub fn successor_lists(&self) -> Vec<Vec<StateId>> {
        (0..self.state_cells.len().saturating_sub(1))
            .map(|i| self.successors(StateId::from_index(i)))
            .collect()
    }

    /// The rules that can fire in state `s`, each once, in cell order.
    pub fn live_rules(&self, s: StateId) -> Vec<RuleId> {
        let mut out = Vec::new();
        for c in self.cells_of(s) {
            for ch in &c.choices {
                if !out.contains(&ch.rule) {
                    out.push(ch.rule);
                }
            }
        }
        out
    }
}

/// The inputs of one step, each read at most once: the first time a test needs it.
pub struct Sampler<'a> {
    values: Vec<Option<bool>>,
    read: &'a mut dyn FnMut(InputId) -> bool,
    order: Vec<InputId>,
    atoms: Vec<bool>,
}

impl<'a> Sampler<'a> {
    /// A sampler over `n_inputs` inputs that reads through `read`.
    pub fn new(n_inputs: usize, read: &'a mut dyn FnMut(InputId) -> bool) -> Self {
        Sampler {
            values: vec![None; n_inputs],
            read,
            order: Vec::new(),
            atoms: Vec::new(),
        }
    }

    /// The same sampler, with the value of each counter comparison
    /// ([`Machine::atoms`]) at the start of the step (missing ones read false).
    pub fn with_atoms(mut self, atoms: Vec<bool>) -> Self {
        self.atoms = atoms;
        self
    }

    /// The input's value in this step: read now if no test has needed it yet.
    pub fn get(&mut self, i: InputId) -> bool {
        match self.values.get(i.index()).copied().flatten() {
            Some(v) => v,
            None => {
                let v = (self.read)(i);
                if let Some(slot) = self.values.get_mut(i.index()) {
                    *slot = Some(v);
                }
                self.order.push(i);
                v
            }
        }
    }

    /// Evaluates a test left to right with short-circuit `&&` and `||`, as the
    /// generated code does.
    pub fn holds(&mut self, g: &Guard) -> bool {
        match g {
            Guard::Input(i) => self.get(*i),
            Guard::Atom(a) => self.atoms.get(a.index()).copied().unwrap_or(false),
            Guard::Const(b) => *b,
            Guard::Not(a) => !self.holds(a),
            Guard::And(a, b) => self.holds(a) && self.holds(b),
            Guard::Or(a, b) => self.holds(a) || self.holds(b),
        }
    }

    /// The inputs read so far, in the order they were first read.
    pub fn read_order(&self) -> &[InputId] {
        &self.order
    }

    /// The values read so far (`None`: not read).
    pub fn values(&self) -> &[Option<bool>] {
        &self.values
    }
}

/// A guard with its constants folded away: `Ok` with an expression that holds no
/// constant, or `Err(b)` when the guard is the constant `b`. Double negations go too.
/// Neither changes which inputs a left-to-right evaluation reads, nor in what order.
pub fn fold(g: &Guard) -> Result<Guard, bool> {
    match g {
        Guard::Const(b) => Err(*b),
        Guard::Input(_) | Guard::Atom(_) => Ok(g.clone()),
        Guard::Not(a) => match fold(a) {
            Err(b) => Err(!b),
            Ok(Guard::Not(inner)) => Ok(*inner),
            Ok(x) => Ok(Guard::Not(Box::new(x))),
        },
        Guard::And(a, b) => match (fold(a), fold(b)) {
            (Err(false), _) => Err(false),
            (Err(true), x) => x,
            // `a && false`: never true, but `a` is evaluated first; the rule never fires,
            // so no test of it is ever emitted.
            (Ok(_), Err(false)) => Err(false),
            (Ok(x), Err(true)) => Ok(x),
            (Ok(x), Ok(y)) => Ok(Guard::And(Box::new(x), Box::new(y))),
        },
        Guard::Or(a, b) => match (fold(a), fold(b)) {
            (Err(true), _) => Err(true),
            (Err(false), x) => x,
            (Ok(_), Err(true)) => Err(true),
            (Ok(x), Err(false)) => Ok(x),
            (Ok(x), Ok(y)) => Ok(Guard::Or(Box::new(x), Box::new(y))),
        },
    }
}

/// Interning tables for sequences and output sets.
struct Interner {
    seqs: Vec<Vec<Op>>,
    seq_ids: FxMap<Vec<Op>, SeqId>,
    out_sets: Vec<Vec<OutputId>>,
    out_ids: FxMap<Vec<OutputId>, OutSetId>,
}

impl Interner {
    fn new() -> Interner {
        let mut i = Interner {
            seqs: Vec::new(),
            seq_ids: FxMap::default(),
            out_sets: Vec::new(),
            out_ids: FxMap::default(),
        };
        i.seq(Vec::new());
        i.out_set(Vec::new());
        i
    }

    fn seq(&mut self, ops: Vec<Op>) -> SeqId {
        if let Some(&id) = self.seq_ids.get(&ops) {
            return id;
        }
        let id = SeqId(self.seqs.len() as u32);
        self.seqs.push(ops.clone());
        self.seq_ids.insert(ops, id);
        id
    }

    fn out_set(&mut self, outs: Vec<OutputId>) -> OutSetId {
        if let Some(&id) = self.out_ids.get(&outs) {
            return id;
        }
        let id = OutSetId(self.out_sets.len() as u32);
        self.out_sets.push(outs.clone());
        self.out_ids.insert(outs, id);
        id
    }
}

/// What went wrong lowering a machine.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum LowerError {
    /// The firing regions need more decision-diagram nodes than the limit.
    TooManyNodes,
    /// A state's cell has more combinations of due timeouts and counter comparisons
    /// than [`MAX_VARIANTS`].
    TooManyVariants(StateId),
}

/// Lowers a resolved machine: the cells of every state, with their choices, in the
/// machine's own BDD store (extended with the regions).
pub fn lower(m: &Machine, bdd: &mut BddStore) -> Result<Lowered, LowerError> {
    let mut intern = Interner::new();
    let mut cells = Vec::new();
    let mut state_cells = Vec::with_capacity(m.states.len() + 1);
    let n_events = m.events.len();
    for si in 0..m.states.len() {
        state_cells.push(cells.len() as u32);
        let s = StateId::from_index(si);
        let chain = m.scope_chain(s);
        let mut named = named_events(m, &chain);
        let chain_timers = m.chain_timers(s);
        let tb = m.timebase.as_ref().map(|t| t.event);
        if let (Some(tb), false) = (tb, chain_timers.is_empty()) {
            // The time base gets a cell of its own where timeouts can come due.
            if let Err(i) = named.binary_search(&tb) {
                named.insert(i, tb);
            }
            let variants: usize = chain_timers
                .iter()
                .map(|t| m.timers[t.index()].durations.len() + 1)
                .try_fold(1usize, |acc, n| {
                    acc.checked_mul(n).filter(|&x| x <= MAX_VARIANTS)
                })
                .unwrap_or(usize::MAX);
            if variants > MAX_VARIANTS {
                return Err(LowerError::TooManyVariants(s));
            }
        }
        for &e in &named {
            let mut reached = reach(m, &chain, Some(e));
            let timers = if Some(e) == tb && !chain_timers.is_empty() {
                insert_timeouts(m, &chain, &mut reached);
                chain_timers.clone()
            } else {
                Vec::new()
            };
            cells.push(build_cell(
                m,
                bdd,
                &mut intern,
                s,
                CellEvents::One(e),
                e,
                reached,
                timers,
            )?);
        }
        if named.len() < n_events {
            // The rest class: the first event no scope of the chain names.
            let rep = (0..n_events)
                .map(EventId::from_index)
                .find(|e| named.binary_search(e).is_err())
                .unwrap_or(EventId(0));
            let reached = reach(m, &chain, None);
            cells.push(build_cell(
                m,
                bdd,
                &mut intern,
                s,
                CellEvents::Rest,
                rep,
                reached,
                Vec::new(),
            )?);
        }
        if bdd.overflowed() {
            return Err(LowerError::TooManyNodes);
        }
    }
    state_cells.push(cells.len() as u32);
    let moore = m
        .states
        .iter()
        .map(|st| intern.out_set(st.moore.clone()))
        .collect();
    Ok(Lowered {
        cells,
        state_cells,
        seqs: intern.seqs,
        out_sets: intern.out_sets,
        moore,
    })
}

/// The events some scope of the chain names (in a rule or a `preempt` rule),
/// ascending.
fn named_events(m: &Machine, chain: &[Scope]) -> Vec<EventId> {
    let mut evs: Vec<EventId> = chain
        .iter()
        .flat_map(|&sc| {
            let rules = m.scope_rules(sc);
            rules.named.iter().chain(&rules.preempt).map(|(e, _)| *e)
        })
        .collect();
    evs.sort_unstable();
    evs.dedup();
    evs
}

/// The lookup of LANGUAGE.md ("Rules and scopes") for one event (`None`: an event no
/// scope of the chain names): the rules it reaches, by step and scope, in lookup order.
///
/// 1. *Preempt*: the `preempt` rules naming the event in each group of the chain,
///    outermost group first (one [`Reached`] per group).
/// 2. *Timeouts*: added for the time-base event by [`insert_timeouts`].
/// 3. *Named*: the innermost scope with a (non-preempt) rule naming the event; only
///    its rules naming the event.
/// 4. *Wildcard*: only when no scope names the event in step 3: the innermost scope
///    with a `_` rule; only its `_` rules.
///
/// Within one step and scope, an `else` rule comes after the other rules (its guard is
/// `TRUE`, so it takes what they leave); the rest keep source order. Valuations that
/// the reached rules leave are unhandled (no fall-through to outer scopes).
fn reach(m: &Machine, chain: &[Scope], event: Option<EventId>) -> Vec<Reached> {
    let mut out = Vec::new();
    let Some(e) = event else {
        // No scope names the event: only `_` rules can apply.
        if let Some(r) = wildcard_step(m, chain) {
            out.push(r);
        }
        return out;
    };
    for &scope in chain.iter().rev() {
        let rules = m.scope_rules(scope);
        if let Ok(i) = rules.preempt.binary_search_by_key(&e, |(x, _)| *x) {
            out.push(Reached {
                step: LookupStep::Preempt,
                scope,
                rules: else_last(m, &rules.preempt[i].1),
            });
        }
    }
    let named = chain.iter().find_map(|&scope| {
        let rules = m.scope_rules(scope);
        rules
            .named
            .binary_search_by_key(&e, |(x, _)| *x)
            .ok()
            .map(|i| Reached {
                step: LookupStep::Named,
                scope,
                rules: else_last(m, &rules.named[i].1),
            })
    });
    match named {
        Some(r) => out.push(r),
        None => out.extend(wildcard_step(m, chain)),
    }
    out
}

/// Step 2 of the lookup, for the time-base event: the `after` rules of each scope of
/// the chain, innermost first, one [`Reached`] per scope and duration (durations
/// ascending), placed after the preempt steps.
fn insert_timeouts(m: &Machine, chain: &[Scope], reached: &mut Vec<Reached>) {
    let at = reached
        .iter()
        .position(|r| r.step != LookupStep::Preempt)
        .unwrap_or(reached.len());
    let timeouts: Vec<Reached> = chain
        .iter()
        .flat_map(|&scope| {
            m.scope_rules(scope)
                .timeouts
                .iter()
                .map(move |(_, rules)| Reached {
                    step: LookupStep::Timeout,
                    scope,
                    rules: rules.clone(),
                })
        })
        .collect();
    reached.splice(at..at, timeouts);
}

/// Step 4 of the lookup: the innermost scope's `_` rules (every rule of a clocked
/// machine), its `else` rule last.
fn wildcard_step(m: &Machine, chain: &[Scope]) -> Option<Reached> {
    chain.iter().find_map(|&scope| {
        let rules = m.scope_rules(scope);
        (!rules.wildcard.is_empty()).then(|| Reached {
            step: LookupStep::Wildcard,
            scope,
            rules: else_last(m, &rules.wildcard),
        })
    })
}

/// The rules in source order, with the (at most one) `else` rule moved last.
fn else_last(m: &Machine, rules: &[RuleId]) -> Vec<RuleId> {
    let (mut out, otherwise): (Vec<RuleId>, Vec<RuleId>) =
        rules.iter().partition(|r| !m.rules[r.index()].otherwise);
    out.extend(otherwise);
    out
}

/// One cell: the choices of its reached rules in lookup order, with their regions in
/// every variant (combination of due timeouts).
#[allow(clippy::too_many_arguments)]
fn build_cell(
    m: &Machine,
    bdd: &mut BddStore,
    intern: &mut Interner,
    s: StateId,
    events: CellEvents,
    event: EventId,
    reached: Vec<Reached>,
    timers: Vec<TimerId>,
) -> Result<Cell, LowerError> {
    // The counter comparisons the reached rules' guards read.
    let mut atoms: Vec<AtomId> = reached
        .iter()
        .flat_map(|g| &g.rules)
        .filter_map(|r| m.rules[r.index()].guard_expr.as_ref())
        .flat_map(|g| g.atoms())
        .collect();
    atoms.sort_unstable();
    atoms.dedup();
    // The due sets, in mixed radix over `timers` (variant 0: nothing due).
    let mut due_sets: Vec<Vec<(TimerId, u32)>> = vec![Vec::new()];
    for &t in &timers {
        let durations = &m.timers[t.index()].durations;
        let mut next = Vec::with_capacity(due_sets.len() * (durations.len() + 1));
        for digit in 0..=durations.len() {
            for set in &due_sets {
                let mut set = set.clone();
                if digit > 0 {
                    set.push((t, durations[digit - 1]));
                }
                next.push(set);
            }
        }
        due_sets = next;
    }
    // Then one binary digit per comparison: the variants are (due set, comparison
    // values), the due sets varying fastest.
    let n_due = due_sets.len();
    let n_variants = Some(atoms.len())
        .filter(|&n| n <= 12)
        .map(|n| n_due << n)
        .filter(|&n| n <= MAX_VARIANTS)
        .ok_or(LowerError::TooManyVariants(s))?;
    let atom_sets: Vec<Vec<bool>> = (0..n_variants / n_due)
        .map(|bits| (0..atoms.len()).map(|k| bits >> k & 1 == 1).collect())
        .collect();
    let due_sets: Vec<Vec<(TimerId, u32)>> = (0..n_variants)
        .map(|v| due_sets[v % n_due].clone())
        .collect();
    // Each rule's guard with the comparisons of each comparison set fixed.
    let mut fixed: FxMap<(RuleId, usize), Bdd> = FxMap::default();
    // Per variant, what no earlier choice takes, kept as it shrinks (complementing the
    // growing union for every rule would cost as much as the union each time).
    let mut untaken = vec![Bdd::TRUE; due_sets.len()];
    let mut regions: Vec<Vec<Bdd>> = vec![Vec::new(); due_sets.len()];
    let mut choices = Vec::new();
    for group in &reached {
        for &r in &group.rules {
            let rule = &m.rules[r.index()];
            let due = match rule.trigger {
                Trigger::After(d) => match rule.scope_timer(m) {
                    Some(t) => Some((t, d)),
                    None => continue,
                },
                _ => None,
            };
            let test = match &rule.guard_expr {
                None => None,
                Some(g) => match fold(g) {
                    Err(true) => None,
                    Err(false) => continue,
                    Ok(t) => Some(t),
                },
            };
            let mut any = false;
            let mut needs_test = false;
            let mut here = Vec::with_capacity(due_sets.len());
            for (v, set) in due_sets.iter().enumerate() {
                if untaken[v].is_false() || due.is_some_and(|d| !set.contains(&d)) {
                    here.push(Bdd::FALSE);
                    continue;
                }
                let a = v / n_due;
                let guard = match fixed.get(&(r, a)) {
                    Some(&g) => g,
                    None => {
                        let values = &atom_sets[a];
                        let g = if atoms.is_empty() {
                            rule.guard
                        } else {
                            bdd.restrict(rule.guard, &|var| {
                                m.atom_of_var(var).map(|id| {
                                    atoms.binary_search(&id).map(|k| values[k]).unwrap_or(false)
                                })
                            })
                        };
                        fixed.insert((r, a), g);
                        g
                    }
                };
                let not_guard = bdd.not(guard);
                let region = bdd.and(guard, untaken[v]);
                if region.is_false() {
                    // Reached in this variant but never taking anything: the test must
                    // stay, or the choice would take what this variant leaves.
                    needs_test = true;
                    here.push(Bdd::FALSE);
                    continue;
                }
                any = true;
                untaken[v] = bdd.and(untaken[v], not_guard);
                // The last choice of a covered variant takes every valuation left:
                // nothing needs testing there, unless another variant needs the test.
                if !untaken[v].is_false() {
                    needs_test = true;
                }
                here.push(region);
            }
            if !any {
                continue;
            }
            for (v, region) in here.into_iter().enumerate() {
                regions[v].push(region);
            }
            let (target, moves) = match rule.target {
                Target::Stay => (s, false),
                Target::To(t) => (t, true),
            };
            let ops = transition_ops(m, s, r);
            choices.push(Choice {
                rule: r,
                step: group.step,
                scope: group.scope,
                test: if needs_test { test } else { None },
                region: regions[0].last().copied().unwrap_or(Bdd::FALSE),
                target,
                moves,
                mealy: intern.out_set(rule.mealy.clone()),
                ops: intern.seq(ops),
                due,
                resets: if moves {
                    zeroed_timers(m, s, target)
                } else {
                    Vec::new()
                },
            });
        }
    }
    let variants: Vec<Variant> = due_sets
        .into_iter()
        .zip(regions)
        .zip(untaken.iter().copied())
        .enumerate()
        .map(|(v, ((due, regions), unhandled))| Variant {
            due,
            atoms: atom_sets[v / n_due].clone(),
            regions,
            unhandled,
        })
        .collect();
    Ok(Cell {
        state: s,
        events,
        event,
        reached,
        choices,
        unhandled: untaken[0],
        timers,
        atoms,
        variants,
    })
}

/// The timers a move from `from` to `to` sets to 0, ascending: those of the scopes it
/// enters (`to` itself, and its groups that do not hold `from`), which restart, and
/// every timer whose scope is not active in `to` (those of the scopes it leaves, and
/// the rest, which are 0 already unless a stored value was corrupted; zeroing them
/// again keeps a corrupt value from lasting). Only the timers of the groups holding
/// both `from` and `to` keep counting.
pub fn zeroed_timers(m: &Machine, from: StateId, to: StateId) -> Vec<TimerId> {
    let mut keep = Vec::new();
    for g in m.ancestors(to) {
        if m.group_contains(g, from) {
            keep.extend(m.groups[g.index()].rules.timer);
        }
    }
    (0..m.timers.len())
        .map(TimerId::from_index)
        .filter(|t| !keep.contains(t))
        .collect()
}

/// The actions a rule runs when it fires in state `from`, in order: leave actions of
/// `from`, then of each group of `from` that does not contain the target (innermost
/// first); the rule's actions; then enter actions of each group of the target that
/// does not contain `from` (outermost first), then the target's. `stay` runs only the
/// rule's actions; a rule back to `from` runs `from`'s leave and enter actions but not
/// its groups' (LANGUAGE.md, "Action order").
fn transition_ops(m: &Machine, from: StateId, rule: RuleId) -> Vec<Op> {
    let r = &m.rules[rule.index()];
    let to = match r.target {
        Target::Stay => return r.actions.clone(),
        Target::To(t) => t,
    };
    let mut out = m.states[from.index()].leave.clone();
    for g in m.ancestors(from) {
        if !m.group_contains(g, to) {
            out.extend_from_slice(&m.groups[g.index()].leave);
        }
    }
    out.extend_from_slice(&r.actions);
    for g in m.ancestors(to).into_iter().rev() {
        if !m.group_contains(g, from) {
            out.extend_from_slice(&m.groups[g.index()].enter);
        }
    }
    out.extend_from_slice(&m.states[to.index()].enter);
    out
}
