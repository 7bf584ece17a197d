//! Encoding resolved machines as complete DFAs over a shared, finite alphabet.
//!
//! **What is compared, and why it is the machine's real behaviour.** A step of a
//! machine consumes an event and reads a valuation of the inputs (LANGUAGE.md,
//! "Meaning"). What the host can observe of the step is: whether the event was
//! rejected (under `unhandled reject` only), the Mealy outputs of the rule, the Moore
//! outputs of the state after the step, and the sequence of actions that ran (the
//! leave actions, the rule's own, the enter actions, in the order the lowered form
//! records them). Under `ignore` (and `complete`, where the interpreter treats an
//! uncovered step as ignored) an ignored step is observed exactly like a `=> stay` rule
//! with no outputs and no actions, as LANGUAGE.md prescribes: the `handled` flag is
//! information, not behaviour. The state after the step is not observable itself, only
//! through what later steps do. Two states are equivalent when every finite sequence of
//! (event, valuation) steps produces the same observations from both, and so is a pair
//! of machines from their start states.
//!
//! **Alphabet.** Valuations are never enumerated. Events are first compressed: each
//! event that is a cell of its own in some state of some machine (the lowered form's
//! classes) is its own class; every other event falls in the rest class of every state
//! of every machine, so they all form one "rest" class, represented by its first event.
//! Per class, the input space is split into the atoms of the guard algebra: the
//! coarsest partition refined by the guard of every choice the class has in any state
//! of any machine (BDD splitting, Bryant 1986). Every firing region of the lowered form
//! is a Boolean combination of those guards, so all valuations in one atom make every
//! state of every machine take the same choice; one concrete valuation per atom
//! (`sat_one`, unmentioned inputs false) stands for it. The lowered form, which the
//! interpreter steps through too, is thus the only definition of meaning used. A
//! symbol is an (event class, atom) pair.
//!
//! **Several machines.** For equivalence two machines share one alphabet: the first is
//! the reference, whose event, input, output and action numbers are used; the second's
//! are mapped to them by name and its guards rebuilt over the reference's BDD variables.
//!
//! **Cost.** Building the alphabet visits every (state, event class) cell's rules once:
//! O(cells + rules) BDD operations, plus the atom splitting (at most the number of
//! distinct guards times the atoms so far). Encoding finds each (state, symbol)'s choice
//! once: O(states x symbols) region evaluations, one observation per (state, event
//! class, choice used), one `u32` successor and one `u32` observation id per transition.

use super::partition::Dfa;
use crate::fxhash::{FxMap, FxSet};
use crate::model::lower::CellEvents;
use crate::model::steps::valuation;
use crate::model::{Bdd, BddStore, EventId, Guard, Machine, StateId};
use crate::syntax::ast::Policy;

/// One letter of the shared alphabet: an event (reference numbering) and one input
/// valuation standing for a whole atom.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Symbol {
    /// The representative event of the symbol's event class.
    pub event: EventId,
    /// The atom, in the alphabet's BDD store.
    pub atom: Bdd,
    /// A full valuation inside the atom, in reference input numbering.
    pub inputs: Vec<bool>,
}

/// How one machine's names map onto the reference machine's numbering.
#[derive(Clone, Debug)]
pub struct Side<'a> {
    /// The machine.
    pub m: &'a Machine,
    /// The machine's event for each reference event.
    pub event_of_ref: Vec<EventId>,
    /// The reference input for each of the machine's inputs.
    pub input_to_ref: Vec<u32>,
    /// The reference output for each of the machine's outputs.
    pub output_to_ref: Vec<u32>,
    /// The reference action for each of the machine's actions.
    pub action_to_ref: Vec<u32>,
}

impl<'a> Side<'a> {
    /// The reference side: every map is the identity.
    pub fn reference(m: &'a Machine) -> Side<'a> {
        Side {
            m,
            event_of_ref: (0..m.events.len()).map(EventId::from_index).collect(),
            input_to_ref: (0..m.inputs.len() as u32).collect(),
            output_to_ref: (0..m.outputs.len() as u32).collect(),
            action_to_ref: (0..m.actions.len() as u32).collect(),
        }
    }

    /// `m` mapped onto `reference` by name. `None` when some event, input, output or
    /// action of either machine has no namesake in the other.
    pub fn by_name(reference: &Machine, m: &'a Machine) -> Option<Side<'a>> {
        fn map(from: &[crate::model::Item], to: &[crate::model::Item]) -> Option<Vec<u32>> {
            if from.len() != to.len() {
                return None;
            }
            let index: FxMap<&str, u32> = to
                .iter()
                .enumerate()
                .map(|(i, it)| (it.name.as_str(), i as u32))
                .collect();
            from.iter()
                .map(|it| index.get(it.name.as_str()).copied())
                .collect()
        }
        let ev_to_ref = map(&m.events, &reference.events)?;
        let mut event_of_ref = vec![EventId(0); ev_to_ref.len()];
        for (mine, &r) in ev_to_ref.iter().enumerate() {
            event_of_ref[r as usize] = EventId::from_index(mine);
        }
        Some(Side {
            m,
            event_of_ref,
            input_to_ref: map(&m.inputs, &reference.inputs)?,
            output_to_ref: map(&m.outputs, &reference.outputs)?,
            action_to_ref: map(&m.actions, &reference.actions)?,
        })
    }

    /// A reference valuation in this machine's input numbering.
    pub fn local_inputs(&self, reference_inputs: &[bool]) -> Vec<bool> {
        self.input_to_ref
            .iter()
            .map(|&r| reference_inputs.get(r as usize).copied().unwrap_or(false))
            .collect()
    }
}

/// The shared alphabet of one or more machines.
#[derive(Clone, Debug)]
pub struct Alphabet {
    /// BDD store of the atoms (a copy of the reference machine's, extended).
    pub store: BddStore,
    /// The symbols, grouped by event class in reference event order.
    pub symbols: Vec<Symbol>,
    /// The event classes: the reference events of each class, ascending; the first is
    /// the class's representative.
    pub classes: Vec<Vec<EventId>>,
    /// Number of reference inputs (length of every symbol's valuation).
    pub n_inputs: usize,
}

/// Rebuilds a BDD of machine `m`'s store over the reference BDD variables (its
/// cubes are disjoint, so their union is the function).
fn translate(m: &Machine, a: Bdd, to_ref: &[u32], store: &mut BddStore) -> Bdd {
    let mut out = Bdd::FALSE;
    for cube in m.bdd.cubes(a) {
        let mut c = Bdd::TRUE;
        for (var, value) in cube {
            let x = store.var(to_ref[var as usize]);
            let lit = if value { x } else { store.not(x) };
            c = store.and(c, lit);
        }
        out = store.or(out, c);
    }
    out
}

/// Rebuilds a guard over reference BDD variables. A counter comparison has no
/// reference variable: cells whose guards read counters are taken from their
/// input-only variant regions instead ([`Alphabet::build`]), so it never reaches here
/// but reads as `true` if it did.
fn guard_bdd(g: &Guard, to_ref: &[u32], store: &mut BddStore) -> Bdd {
    match g {
        Guard::Input(i) => store.var(to_ref[i.index()]),
        Guard::Atom(_) => Bdd::TRUE,
        Guard::Const(b) => store.constant(*b),
        Guard::Not(a) => {
            let x = guard_bdd(a, to_ref, store);
            store.not(x)
        }
        Guard::And(a, b) => {
            let x = guard_bdd(a, to_ref, store);
            let y = guard_bdd(b, to_ref, store);
            store.and(x, y)
        }
        Guard::Or(a, b) => {
            let x = guard_bdd(a, to_ref, store);
            let y = guard_bdd(b, to_ref, store);
            store.or(x, y)
        }
    }
}

impl Alphabet {
    /// Builds the alphabet of `sides`; `sides[0]` must be [`Side::reference`].
    pub fn build(sides: &[Side<'_>]) -> Alphabet {
        let reference = sides[0].m;
        let n_events = reference.events.len();
        let mut store = reference.bdd.clone();

        // Event classes.
        let mut named = vec![false; n_events];
        for side in sides {
            let mut ref_of_local = vec![0usize; side.event_of_ref.len()];
            for (r, e) in side.event_of_ref.iter().enumerate() {
                ref_of_local[e.index()] = r;
            }
            for cell in side.m.lowered.cells() {
                if let CellEvents::One(e) = cell.events {
                    named[ref_of_local[e.index()]] = true;
                }
            }
        }
        let mut classes: Vec<Vec<EventId>> = Vec::new();
        let mut rest = Vec::new();
        for (e, &is_named) in named.iter().enumerate() {
            if is_named {
                classes.push(vec![EventId::from_index(e)]);
            } else {
                rest.push(EventId::from_index(e));
            }
        }
        if !rest.is_empty() {
            classes.push(rest);
        }
        classes.sort_by_key(|c| c[0]);

        // Guards that can apply to each class, then its atoms.
        let mut symbols = Vec::new();
        for class in &classes {
            let rep = class[0];
            let mut guards: Vec<Bdd> = Vec::new();
            let mut seen_guard: FxSet<Bdd> = FxSet::default();
            for (k, side) in sides.iter().enumerate() {
                let m = side.m;
                let local = side.event_of_ref[rep.index()];
                let mut seen_rule = FxSet::default();
                for si in 0..m.states.len() {
                    let cell = m.lowered.cell_of(StateId::from_index(si), local);
                    if !cell.atoms.is_empty() {
                        // Guards that read counters: the input regions of every
                        // combination of comparison values (input-only, exact).
                        for v in &cell.variants {
                            for &region in &v.regions {
                                let g = if k == 0 {
                                    region
                                } else {
                                    translate(m, region, &side.input_to_ref, &mut store)
                                };
                                if !g.is_true() && !g.is_false() && seen_guard.insert(g) {
                                    guards.push(g);
                                }
                            }
                        }
                        continue;
                    }
                    for r in cell.choices.iter().map(|c| c.rule) {
                        if !seen_rule.insert(r) {
                            continue;
                        }
                        let g = if k == 0 {
                            m.rules[r.index()].guard
                        } else {
                            match &m.rules[r.index()].guard_expr {
                                Some(g) => guard_bdd(g, &side.input_to_ref, &mut store),
                                None => Bdd::TRUE,
                            }
                        };
                        if !g.is_true() && !g.is_false() && seen_guard.insert(g) {
                            guards.push(g);
                        }
                    }
                }
            }
            let mut atoms = vec![Bdd::TRUE];
            // The atoms refine the input space by each guard in turn. Points outside
            // every guard so far form one atom, at `outside_at` (`None` once the guards
            // cover everything): a guard disjoint from the guards before it (the rules of
            // a cell are exclusive, so this is the common case) only cuts that atom,
            // which is split in place, giving the same atoms in the same order as the
            // full pass. Other guards take the full pass: each splits the atoms it cuts,
            // its complement taken once, an atom it misses or contains left whole. With
            // thousands of exclusive guards (a decoded opcode table) the full pass for
            // every guard took seconds; the split in place takes milliseconds.
            let mut covered = Bdd::FALSE;
            let mut outside_at: Option<usize> = Some(0);
            for &g in &guards {
                let not_g = store.not(g);
                let disjoint = store.and(covered, g).is_false();
                if let (true, Some(i)) = (disjoint, outside_at) {
                    let a = atoms[i];
                    let inside = store.and(a, g);
                    if inside == a {
                        outside_at = None;
                    } else if !inside.is_false() {
                        let outside = store.and(a, not_g);
                        atoms[i] = inside;
                        atoms.insert(i + 1, outside);
                        outside_at = Some(i + 1);
                    }
                } else {
                    let rest = outside_at.map(|i| store.and(atoms[i], not_g));
                    let mut next = Vec::with_capacity(atoms.len() + 1);
                    for &a in &atoms {
                        let inside = store.and(a, g);
                        if inside.is_false() || inside == a {
                            next.push(a);
                            continue;
                        }
                        next.push(inside);
                        let outside = store.and(a, not_g);
                        if !outside.is_false() {
                            next.push(outside);
                        }
                    }
                    atoms = next;
                    outside_at = rest
                        .filter(|r| !r.is_false())
                        .and_then(|r| atoms.iter().position(|&a| a == r));
                }
                covered = store.or(covered, g);
            }
            for atom in atoms {
                symbols.push(Symbol {
                    event: rep,
                    atom,
                    inputs: valuation(reference.inputs.len(), &store, atom),
                });
            }
        }
        Alphabet {
            store,
            symbols,
            classes,
            n_inputs: reference.inputs.len(),
        }
    }
}

/// What one step shows, in reference numbering.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub struct Observation {
    /// The event was rejected (`unhandled reject`).
    pub rejected: bool,
    /// Mealy outputs of the rule, ascending.
    pub mealy: Vec<u32>,
    /// Moore outputs of the state after the step, ascending.
    pub moore: Vec<u32>,
    /// Actions in the order they ran.
    pub actions: Vec<u32>,
}

/// Dense ids for observations and Moore sets, shared by every machine encoded with it
/// so that ids compare across machines.
#[derive(Clone, Debug, Default)]
pub struct Interner {
    obs: FxMap<Observation, u32>,
    moore: FxMap<Vec<u32>, u32>,
    rows: FxMap<(u32, Vec<u32>), u32>,
}

impl Interner {
    /// The id of an observation.
    pub fn observation(&mut self, o: Observation) -> u32 {
        let next = self.obs.len() as u32;
        *self.obs.entry(o).or_insert(next)
    }

    /// The id of a Moore output set (reference numbering, ascending).
    pub fn moore(&mut self, set: Vec<u32>) -> u32 {
        let next = self.moore.len() as u32;
        *self.moore.entry(set).or_insert(next)
    }

    fn row(&mut self, moore: u32, row: Vec<u32>) -> u32 {
        let next = self.rows.len() as u32;
        *self.rows.entry((moore, row)).or_insert(next)
    }
}

/// One machine over an [`Alphabet`].
#[derive(Clone, Debug)]
pub struct Encoded {
    /// Successors; `initial[s]` is the id of (s's Moore set, s's row of observations),
    /// the initial partition of the refinement.
    pub dfa: Dfa,
    /// Observation id per transition, row-major like `dfa.delta`.
    pub obs: Vec<u32>,
    /// Moore set id per state.
    pub moore: Vec<u32>,
}

fn mapped_sorted(ids: impl Iterator<Item = u32>) -> Vec<u32> {
    let mut v: Vec<u32> = ids.collect();
    v.sort_unstable();
    v
}

/// Steps every (state, symbol) of `side` through the machine's lowered form.
///
/// Which rule fires for a (state, symbol) is the choice of the lowered form whose
/// region holds the symbol's valuation ([`crate::model::lower::Lowered::choice_at`]):
/// the one definition of rule choice, read, not re-derived. What the step does once
/// its choice is known (target, outputs, actions) does not depend on the inputs, so its
/// observation is interned once per (state, event class, choice or none) and shared by
/// the other symbols of that cell that pick the same choice: O(states x symbols)
/// region evaluations, but allocation and interning only per choice used.
pub fn encode(side: &Side<'_>, alphabet: &Alphabet, interner: &mut Interner) -> Encoded {
    let m = side.m;
    let lowered = &m.lowered;
    let k = alphabet.symbols.len();
    let n = m.states.len();
    let local: Vec<(EventId, Vec<bool>)> = alphabet
        .symbols
        .iter()
        .map(|sym| {
            (
                side.event_of_ref[sym.event.index()],
                side.local_inputs(&sym.inputs),
            )
        })
        .collect();
    // Runs of symbols of one event class (the alphabet keeps each class together).
    let mut runs: Vec<std::ops::Range<usize>> = Vec::new();
    for (i, sym) in alphabet.symbols.iter().enumerate() {
        match runs.last_mut() {
            Some(r) if alphabet.symbols[r.start].event == sym.event => r.end = i + 1,
            _ => runs.push(i..i + 1),
        }
    }
    let moore_set = |s: StateId| {
        mapped_sorted(
            lowered
                .outputs(lowered.moore(s))
                .iter()
                .map(|o| side.output_to_ref[o.index()]),
        )
    };
    let moore: Vec<u32> = (0..n)
        .map(|s| interner.moore(moore_set(StateId::from_index(s))))
        .collect();
    let rejects = m.policy == Policy::Reject;
    let mut delta = Vec::with_capacity(n * k);
    let mut obs = Vec::with_capacity(n * k);
    let mut initial = Vec::with_capacity(n);
    // (choice fired, successor, observation id) of the steps met in the current cell.
    let mut cell_steps: Vec<(Option<usize>, u32, u32)> = Vec::new();
    for s in 0..n {
        let from = StateId::from_index(s);
        for run in &runs {
            let event = local[run.start].0;
            let cell = lowered.cell_of(from, event);
            cell_steps.clear();
            for (_, inputs) in &local[run.clone()] {
                let fired = cell
                    .choices
                    .iter()
                    .position(|c| m.bdd.eval(c.region, |v| value(inputs, v)));
                let (to, o) = match cell_steps.iter().find(|c| c.0 == fired) {
                    Some(&(_, to, o)) => (to, o),
                    None => {
                        let (to, observation) = match fired.map(|i| &cell.choices[i]) {
                            Some(c) => (
                                c.target,
                                Observation {
                                    rejected: false,
                                    mealy: mapped_sorted(
                                        lowered
                                            .outputs(c.mealy)
                                            .iter()
                                            .map(|o| side.output_to_ref[o.index()]),
                                    ),
                                    moore: moore_set(c.target),
                                    actions: lowered
                                        .actions(c.ops)
                                        .map(|a| side.action_to_ref[a.index()])
                                        .collect(),
                                },
                            ),
                            None => (
                                from,
                                Observation {
                                    rejected: rejects,
                                    mealy: Vec::new(),
                                    moore: moore_set(from),
                                    actions: Vec::new(),
                                },
                            ),
                        };
                        let o = interner.observation(observation);
                        cell_steps.push((fired, to.0, o));
                        (to.0, o)
                    }
                };
                delta.push(to);
                obs.push(o);
            }
        }
        let row = obs[s * k..(s + 1) * k].to_vec();
        initial.push(interner.row(moore[s], row));
    }
    Encoded {
        dfa: Dfa {
            n_states: n,
            n_symbols: k,
            delta,
            initial,
        },
        obs,
        moore,
    }
}

fn value(inputs: &[bool], v: u32) -> bool {
    inputs.get(v as usize).copied().unwrap_or(false)
}

/// The input names and values of a reference valuation, in declaration order.
pub fn named_inputs(reference: &Machine, inputs: &[bool]) -> Vec<(String, bool)> {
    reference
        .inputs
        .iter()
        .enumerate()
        .map(|(i, it)| (it.name.clone(), inputs.get(i).copied().unwrap_or(false)))
        .collect()
}

/// One machine with timers over an [`Alphabet`], its states being configurations.
#[derive(Clone, Debug)]
pub struct EncodedConfigs {
    /// The encoding; DFA state `i` is `configs[i]`.
    pub enc: Encoded,
    /// The configurations, the roots first, then breadth first from them.
    pub configs: Vec<crate::interp::Config>,
}

/// [`encode`] over configurations (state and timer values): every configuration
/// reachable from `roots` on the alphabet's symbols is a DFA state, and each symbol's
/// step is the choice of the configuration's variant
/// ([`crate::configs::variant_at`]) whose region holds the symbol's valuation, with the
/// timers counted and reset as [`crate::configs::next_config`] does. What a step shows is
/// what [`encode`] records (timers are not observable, only what they make happen).
/// Stops with [`crate::configs::ConfigLimit`] past `limit` configurations.
pub fn encode_configs(
    side: &Side<'_>,
    alphabet: &Alphabet,
    interner: &mut Interner,
    roots: &[crate::interp::Config],
    limit: usize,
) -> Result<EncodedConfigs, crate::configs::ConfigLimit> {
    use crate::configs::{next_config, variant_at};
    let m = side.m;
    let lowered = &m.lowered;
    let k = alphabet.symbols.len();
    let local: Vec<(EventId, Vec<bool>)> = alphabet
        .symbols
        .iter()
        .map(|sym| {
            (
                side.event_of_ref[sym.event.index()],
                side.local_inputs(&sym.inputs),
            )
        })
        .collect();
    let moore_set = |s: StateId| {
        mapped_sorted(
            lowered
                .outputs(lowered.moore(s))
                .iter()
                .map(|o| side.output_to_ref[o.index()]),
        )
    };
    let rejects = m.policy == Policy::Reject;
    let mut configs: Vec<crate::interp::Config> = Vec::new();
    let mut index: FxMap<crate::interp::Config, u32> = FxMap::default();
    for r in roots {
        if !index.contains_key(r) {
            index.insert(r.clone(), configs.len() as u32);
            configs.push(r.clone());
        }
    }
    let over = || crate::configs::ConfigLimit {
        machine: m.name.clone(),
        limit,
    };
    if configs.len() > limit {
        return Err(over());
    }
    let mut delta = Vec::new();
    let mut obs = Vec::new();
    let mut moore = Vec::new();
    let mut initial = Vec::new();
    let mut i = 0;
    while i < configs.len() {
        let c = configs[i].clone();
        let from = c.state;
        let moore_id = interner.moore(moore_set(from));
        moore.push(moore_id);
        for (event, inputs) in &local {
            let cell = lowered.cell_of(from, *event);
            let v = &cell.variants[variant_at(m, cell, &c)];
            let fired = v
                .regions
                .iter()
                .position(|r| m.bdd.eval(*r, |x| value(inputs, x)));
            let next = next_config(m, cell, fired, &c);
            let observation = match fired.map(|j| &cell.choices[j]) {
                Some(ch) => Observation {
                    rejected: false,
                    mealy: mapped_sorted(
                        lowered
                            .outputs(ch.mealy)
                            .iter()
                            .map(|o| side.output_to_ref[o.index()]),
                    ),
                    moore: moore_set(ch.target),
                    actions: lowered
                        .actions(ch.ops)
                        .map(|a| side.action_to_ref[a.index()])
                        .collect(),
                },
                None => Observation {
                    rejected: rejects,
                    mealy: Vec::new(),
                    moore: moore_set(from),
                    actions: Vec::new(),
                },
            };
            obs.push(interner.observation(observation));
            let to = match index.get(&next) {
                Some(&to) => to,
                None => {
                    if configs.len() >= limit {
                        return Err(over());
                    }
                    let to = configs.len() as u32;
                    index.insert(next.clone(), to);
                    configs.push(next);
                    to
                }
            };
            delta.push(to);
        }
        let row = obs[i * k..(i + 1) * k].to_vec();
        initial.push(interner.row(moore_id, row));
        i += 1;
    }
    Ok(EncodedConfigs {
        enc: Encoded {
            dfa: Dfa {
                n_states: configs.len(),
                n_symbols: k,
                delta,
                initial,
            },
            obs,
            moore,
        },
        configs,
    })
}
