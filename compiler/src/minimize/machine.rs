//! Minimizing a resolved [`Machine`]: its state equivalence and its quotient machine.
//!
//! Rule choice comes from the machine's lowered form ([`crate::model::lower`]): the
//! encoding steps through it, and the quotient is built from its choices.
//!
//! **Method.** The machine is encoded as a complete DFA over the atoms of its guard
//! algebra ([`super::encode`]: symbols are (event class, guard atom) pairs, each
//! (state, symbol) resolved once through the lowered form). The initial
//! partition gives two states the same label only when they have the same Moore
//! outputs and the same observation (rejected or not, Mealy outputs, Moore outputs of
//! the next state, the whole action sequence including leave and enter actions) on
//! every symbol. States unreachable from the start are removed first (breadth-first
//! search) and reported; Hopcroft's algorithm (1971, O(k n log n) for n states and k
//! symbols, [`super::partition::hopcroft`]) then refines the partition until every
//! class is stable. Two states end in one class exactly when every input sequence
//! gives the same observations from both (see [`super::encode`] for why that is the
//! machine's behaviour).
//!
//! **The quotient machine** ([`quotient_machine`]), built directly as a [`Machine`] and
//! lowered like any resolved one. Groups are flattened: each class becomes a state
//! named after its first member in declaration order, with that member's full Moore
//! set. For each cell of the representative, its choices become rules of that state,
//! in choice order, with their original guards (so the lowering of the quotient finds
//! the same firing regions), targets mapped to classes, and as actions the choice's
//! FULL operation sequence (leave and enter actions included); the quotient has no
//! `enter`/`leave` at all, so an action that merging would move between a state and
//! its incoming rules is attributed to exactly the transitions that ran it. `=> stay`
//! stays `stay`; any other target (including another member of the same class)
//! becomes an explicit transition to the class's state, which runs nothing beyond the
//! listed actions. The rest-event class becomes `_` rules (every rule of a clocked
//! machine). An event that the representative names but where no rule can fire keeps
//! a rule `E if false => stay;` when the state has `_` rules, so that it stays
//! unhandled instead of falling to them. The policy, attributes and properties are kept
//! (state names mapped to classes; `in Group` becomes the disjunction of `in` the
//! classes of its reachable members; a `recover` whose target is unreachable is
//! dropped, since no class stands for it). So that they keep their meaning, states the
//! properties tell apart (by `in S`, `in G`, a `recover`'s target and exempted states)
//! are never merged: they start in different blocks of the refinement.
//!
//! **The quotient as a spec** ([`quotient_ast`], [`minimized_spec`]): the quotient
//! machine printed as a syntax tree, which resolves to the same machine again.
//!
//! **Cost.** Encoding O(states x symbols) region evaluations, refinement O(k n log n),
//! building and printing linear in the representatives' choices; the quotient's
//! lowering repeats the BDD operations of the representatives' cells.

use super::encode::{encode, Alphabet, Interner, Side};
use super::partition::{hopcroft, restrict_to_reachable};
use crate::model::lower::{CellEvents, LookupStep, Op};
use crate::model::{
    Bdd, Guard, Item, Machine, Prop, Property, Rule, RuleId, Scope, ScopeRules, State, StateId,
    Target, Trigger,
};
use crate::syntax::ast::{
    self, Attr, Body, Decl, DeclKind, DispatchStyle, DocIdent, Expr, Ident, MachineAst, Member,
    Policy, RuleAst, StateAst,
};
use proc_macro2::Span;

/// The state equivalence of a machine's reachable part.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Minimization {
    /// States of the machine as written.
    pub states_before: usize,
    /// States no input sequence reaches from the start, in declaration order.
    pub unreachable: Vec<StateId>,
    /// The classes of reachable states, in declaration order of their first member,
    /// members in declaration order.
    pub classes: Vec<Vec<StateId>>,
    /// The class of each state (`None` for unreachable states).
    pub class_of: Vec<Option<u32>>,
}

impl Minimization {
    /// Number of states of the minimized machine.
    pub fn states_after(&self) -> usize {
        self.classes.len()
    }

    /// The state that names a class: its first member.
    pub fn representative(&self, class: u32) -> StateId {
        self.classes[class as usize][0]
    }

    /// The representative of a state's class (`None` for unreachable states).
    pub fn representative_of(&self, s: StateId) -> Option<StateId> {
        self.class_of[s.index()].map(|c| self.representative(c))
    }

    /// True when no two reachable states are equivalent and none is unreachable.
    pub fn is_minimal(&self) -> bool {
        self.unreachable.is_empty() && self.classes.len() == self.states_before
    }
}

/// Computes the state equivalence of `m` (see the module doc).
pub fn minimize(m: &Machine) -> Minimization {
    if m.has_configs() {
        return minimize_timed(m);
    }
    let side = Side::reference(m);
    let alphabet = Alphabet::build(std::slice::from_ref(&side));
    let mut interner = Interner::default();
    let enc = encode(&side, &alphabet, &mut interner);
    let mut restricted = restrict_to_reachable(&enc.dfa, m.start.0);
    let labels = property_labels(m);
    let old_of_new = &restricted.old_of_new;
    refine_initial(&mut restricted.dfa.initial, |i| {
        labels[old_of_new[i] as usize]
    });
    let partition = hopcroft(&restricted.dfa);
    let classes: Vec<Vec<StateId>> = partition
        .classes()
        .into_iter()
        .map(|members| {
            members
                .into_iter()
                .map(|s| StateId(restricted.old_of_new[s as usize]))
                .collect()
        })
        .collect();
    finish(m, classes)
}

/// Per state, an id of the property atoms it satisfies: `in S` and `in G` of the
/// machine's `never` properties, a `recover`'s target and its exempted states. States
/// with different ids are not merged (they start in different blocks of the
/// refinement, so the classes are the coarsest equivalence that also keeps them
/// apart), so that a property of the minimized machine, written over its classes
/// ([`class_prop`]), means what it meant: merging a member of a group with a state
/// outside it would make `in G` hold where it did not. All zeros without properties.
fn property_labels(m: &Machine) -> Vec<u32> {
    fn atoms(m: &Machine, p: &Prop, out: &mut Vec<Vec<bool>>) {
        match p {
            Prop::InState(s) => {
                out.push((0..m.states.len()).map(|t| t == s.index()).collect());
            }
            Prop::InGroup(g) => {
                let mut set = vec![false; m.states.len()];
                for s in &m.groups[g.index()].states {
                    set[s.index()] = true;
                }
                out.push(set);
            }
            Prop::Not(a) => atoms(m, a, out),
            Prop::And(a, b) | Prop::Or(a, b) => {
                atoms(m, a, out);
                atoms(m, b, out);
            }
            Prop::Input(_)
            | Prop::Output(_)
            | Prop::Action(_)
            | Prop::Event(_)
            | Prop::Compare(..)
            | Prop::Const(_) => {}
        }
    }
    let mut sets: Vec<Vec<bool>> = Vec::new();
    for p in &m.properties {
        match p {
            Property::Never { prop, .. } => atoms(m, prop, &mut sets),
            Property::Ensure {
                response, trigger, ..
            } => {
                atoms(m, response, &mut sets);
                atoms(m, trigger, &mut sets);
            }
            Property::Recover { target, except, .. } => {
                for s in std::iter::once(target).chain(except) {
                    sets.push((0..m.states.len()).map(|t| t == s.index()).collect());
                }
            }
        }
    }
    let mut ids: crate::fxhash::FxMap<Vec<bool>, u32> = Default::default();
    (0..m.states.len())
        .map(|s| {
            let key: Vec<bool> = sets.iter().map(|set| set[s]).collect();
            let next = ids.len() as u32;
            *ids.entry(key).or_insert(next)
        })
        .collect()
}

/// Splits the blocks of `initial` by `label(i)` of each DFA state `i`.
fn refine_initial(initial: &mut [u32], label: impl Fn(usize) -> u32) {
    let mut ids: crate::fxhash::FxMap<(u32, u32), u32> = Default::default();
    for (i, block) in initial.iter_mut().enumerate() {
        let next = ids.len() as u32;
        *block = *ids.entry((*block, label(i))).or_insert(next);
    }
}

/// The shape of a state's timers, as merging compares them: per timer of its scopes
/// (innermost first), its durations; `None` when one of them is a group's (its timer runs
/// across the group's members, which a quotient without groups cannot keep: such a
/// state is never merged).
fn timer_shape(m: &Machine, s: StateId) -> Option<Vec<Vec<u32>>> {
    m.chain_timers(s)
        .into_iter()
        .map(|t| {
            let timer = &m.timers[t.index()];
            matches!(timer.scope, Scope::State(_)).then(|| timer.durations.clone())
        })
        .collect()
}

/// True when a group has `after` rules: its timer runs across its members' moves, which
/// a quotient without groups cannot keep, so such a machine is not minimized.
pub fn has_group_timer(m: &Machine) -> bool {
    m.timers.iter().any(|t| matches!(t.scope, Scope::Group(_)))
}

/// [`minimize`] for a machine with timers (docs/language-decisions.md, "Minimizing
/// machines with timers").
///
/// Reachable states are those of the configuration graph. Every configuration of
/// every reachable state, at every value of its timers ([`crate::configs::all_configs_of`]),
/// is a root of a configuration encoding ([`super::encode::encode_configs`]), whose
/// equivalence Hopcroft's algorithm computes. Two states merge exactly when their timer
/// shapes are equal (the same durations, timer by timer) and, at every
/// timer value, their configurations are equivalent (the values taken position by
/// position). The quotient keeps the representative's timeouts. A machine with a group
/// timer ([`has_group_timer`]) merges nothing. Past
/// [`crate::configs::MAX_CONFIGS`] configurations nothing merges (no merge is always
/// sound).
fn minimize_timed(m: &Machine) -> Minimization {
    let limit = crate::configs::MAX_CONFIGS;
    let reachable = match crate::configs::explore(m) {
        Ok(g) => g.reachable_states(m.states.len()),
        Err(_) => crate::model::graph::reachable_from(&m.lowered.successor_lists(), &[m.start]),
    };
    let states: Vec<StateId> = (0..m.states.len())
        .filter(|&s| reachable[s])
        .map(StateId::from_index)
        .collect();
    let singletons = || {
        let classes: Vec<Vec<StateId>> = states.iter().map(|&s| vec![s]).collect();
        finish(m, classes)
    };
    if has_group_timer(m) {
        return singletons();
    }
    let mut roots = Vec::new();
    let mut ranges = Vec::with_capacity(states.len());
    for &s in &states {
        let Ok(all) = crate::configs::all_configs_of(m, s, limit) else {
            return singletons();
        };
        let start = roots.len();
        roots.extend(all);
        if roots.len() > limit {
            return singletons();
        }
        ranges.push(start..roots.len());
    }
    let side = Side::reference(m);
    let alphabet = Alphabet::build(std::slice::from_ref(&side));
    let mut interner = Interner::default();
    let Ok(mut enc) = super::encode::encode_configs(&side, &alphabet, &mut interner, &roots, limit)
    else {
        return singletons();
    };
    let labels = property_labels(m);
    let configs = &enc.configs;
    refine_initial(&mut enc.enc.dfa.initial, |i| {
        labels[configs[i].state.index()]
    });
    let partition = hopcroft(&enc.enc.dfa);
    // States with the same key merge; a state that must not merge keys on itself.
    type Key = (Option<Vec<Vec<u32>>>, Vec<u32>, Option<StateId>);
    let mut by_key: crate::fxhash::FxMap<Key, usize> = Default::default();
    let mut classes: Vec<Vec<StateId>> = Vec::new();
    for (k, &s) in states.iter().enumerate() {
        let shape = timer_shape(m, s);
        let alone = shape.is_none().then_some(s);
        let blocks: Vec<u32> = ranges[k].clone().map(|i| partition.class_of[i]).collect();
        let key = (shape, blocks, alone);
        match by_key.get(&key) {
            Some(&c) => classes[c].push(s),
            None => {
                by_key.insert(key, classes.len());
                classes.push(vec![s]);
            }
        }
    }
    finish(m, classes)
}

/// A [`Minimization`] from classes of reachable states (each ascending, ordered by
/// first member).
fn finish(m: &Machine, classes: Vec<Vec<StateId>>) -> Minimization {
    let mut class_of = vec![None; m.states.len()];
    for (c, members) in classes.iter().enumerate() {
        for s in members {
            class_of[s.index()] = Some(c as u32);
        }
    }
    let unreachable = (0..m.states.len())
        .filter(|&s| class_of[s].is_none())
        .map(StateId::from_index)
        .collect();
    Minimization {
        states_before: m.states.len(),
        unreachable,
        classes,
        class_of,
    }
}

fn ident(name: &str) -> Ident {
    Ident {
        name: name.to_string(),
        span: Span::call_site(),
    }
}

fn doc_list(items: &[Item]) -> Vec<DocIdent> {
    items
        .iter()
        .map(|it| DocIdent {
            doc: it.doc.clone(),
            ident: ident(&it.name),
        })
        .collect()
}

fn decl(kind: DeclKind) -> Decl {
    Decl {
        kind,
        span: Span::call_site(),
    }
}

fn lint_attrs(levels: &crate::model::LintLevels) -> Vec<Attr> {
    levels
        .iter()
        .map(|(lint, level)| Attr::Lint(*level, vec![ident(lint.name())], Span::call_site()))
        .collect()
}

/// A resolved guard back as an expression over input names.
pub fn guard_expr(m: &Machine, g: &Guard) -> Expr {
    let sp = Span::call_site();
    match g {
        Guard::Input(i) => Expr::Name(ident(&m.inputs[i.index()].name)),
        Guard::Atom(a) => {
            let atom = &m.atoms[a.index()];
            Expr::Compare {
                name: ident(&m.counters[atom.counter.index()].name),
                cmp: atom.cmp,
                value: u64::from(atom.value),
                value_span: sp,
            }
        }
        Guard::Const(b) => Expr::Const(*b, sp),
        Guard::Not(a) => Expr::Not(Box::new(guard_expr(m, a)), sp),
        Guard::And(a, b) => Expr::And(Box::new(guard_expr(m, a)), Box::new(guard_expr(m, b))),
        Guard::Or(a, b) => Expr::Or(Box::new(guard_expr(m, a)), Box::new(guard_expr(m, b))),
    }
}

/// A deadline's span as the spec writes it (`100 ms`, `3 steps`).
pub fn within_ast(m: &Machine, w: crate::model::Deadline) -> ast::Within {
    match w {
        crate::model::Deadline::Steps(k) => ast::Within::Steps(u64::from(k), Span::call_site()),
        crate::model::Deadline::Ticks(t) => {
            ast::Within::Time(match m.timebase.as_ref().and_then(|tb| tb.period_us) {
                Some(us) => duration_in_units(us, t),
                None => ast::Duration {
                    value: u64::from(t),
                    unit: ast::TimeUnit::Ticks,
                    span: Span::call_site(),
                },
            })
        }
    }
}

/// A property back as an expression over the machine's names (`in G` for a group).
fn prop_expr(m: &Machine, p: &Prop) -> Expr {
    let sp = Span::call_site();
    match p {
        Prop::Input(i) => Expr::Name(ident(&m.inputs[i.index()].name)),
        Prop::Output(o) => Expr::Name(ident(&m.outputs[o.index()].name)),
        Prop::Action(a) => Expr::Name(ident(&m.actions[a.index()].name)),
        Prop::Event(e) => Expr::Name(ident(m.event_name(*e))),
        Prop::InState(s) => Expr::In(ident(m.state_name(*s))),
        Prop::InGroup(g) => Expr::In(ident(&m.groups[g.index()].name)),
        Prop::Compare(c, cmp, v) => Expr::Compare {
            name: ident(&m.counters[c.index()].name),
            cmp: *cmp,
            value: u64::from(*v),
            value_span: sp,
        },
        Prop::Const(b) => Expr::Const(*b, sp),
        Prop::Not(a) => Expr::Not(Box::new(prop_expr(m, a)), sp),
        Prop::And(a, b) => Expr::And(Box::new(prop_expr(m, a)), Box::new(prop_expr(m, b))),
        Prop::Or(a, b) => Expr::Or(Box::new(prop_expr(m, a)), Box::new(prop_expr(m, b))),
    }
}

/// The disjunction of `terms` as a balanced tree (depth log2 n, so a group of many
/// states does not make every later pass recurse deeply); `false` when empty.
fn any_of(mut terms: Vec<Prop>) -> Prop {
    match terms.len() {
        0 => Prop::Const(false),
        1 => terms.remove(0),
        n => {
            let right = terms.split_off(n.div_ceil(2));
            Prop::Or(Box::new(any_of(terms)), Box::new(any_of(right)))
        }
    }
}

/// A property of `m` over the classes of `min`: `in S` becomes `in` S's class (`false`
/// when S is unreachable), `in G` the disjunction over the classes of G's members.
fn class_prop(m: &Machine, min: &Minimization, p: &Prop) -> Prop {
    let go = |x: &Prop| Box::new(class_prop(m, min, x));
    match p {
        Prop::InState(s) => match min.class_of[s.index()] {
            Some(c) => Prop::InState(StateId(c)),
            None => Prop::Const(false),
        },
        Prop::InGroup(g) => {
            let mut cs: Vec<u32> = m.groups[g.index()]
                .states
                .iter()
                .filter_map(|s| min.class_of[s.index()])
                .collect();
            cs.sort_unstable();
            cs.dedup();
            any_of(cs.into_iter().map(|c| Prop::InState(StateId(c))).collect())
        }
        Prop::Not(a) => Prop::Not(go(a)),
        Prop::And(a, b) => Prop::And(go(a), go(b)),
        Prop::Or(a, b) => Prop::Or(go(a), go(b)),
        Prop::Input(_)
        | Prop::Output(_)
        | Prop::Action(_)
        | Prop::Event(_)
        | Prop::Compare(..)
        | Prop::Const(_) => p.clone(),
    }
}

/// The items of a list with the spans of generated code.
fn plain_items(items: &[Item]) -> Vec<Item> {
    items
        .iter()
        .map(|it| Item {
            name: it.name.clone(),
            span: Span::call_site(),
            doc: it.doc.clone(),
        })
        .collect()
}

/// One minimization of a machine: its state equivalence and its quotient machine.
#[derive(Clone, Debug)]
pub struct Quotient {
    /// The classes of equivalent states.
    pub minimization: Minimization,
    /// The quotient machine ([`quotient_machine`]), lowered.
    pub machine: Machine,
}

/// Minimizes `m` once and builds its quotient: what `#[minimize]` generates from (the
/// classes name the aliases, the machine the code).
///
/// # Panics
///
/// Only on an internal error (see [`quotient_machine`]).
pub fn quotient(m: &Machine) -> Quotient {
    if has_group_timer(m) {
        // Not minimized: the machine itself, every state its own class.
        let n = m.states.len();
        return Quotient {
            minimization: Minimization {
                states_before: n,
                unreachable: Vec::new(),
                classes: (0..n).map(|s| vec![StateId::from_index(s)]).collect(),
                class_of: (0..n).map(|s| Some(s as u32)).collect(),
            },
            machine: m.clone(),
        };
    }
    let minimization = minimize(m);
    let machine = quotient_machine(m, &minimization);
    Quotient {
        minimization,
        machine,
    }
}

/// The quotient of `m` by the classes of `min`, as a lowered [`Machine`] (see the module
/// doc for its shape). Its states are the classes, named and numbered after their first
/// members in declaration order. `min` may be any partition of reachable states into
/// classes (each class behaves as its first member).
///
/// # Panics
///
/// Only on an internal error: the quotient's firing regions are the representatives'
/// own, already within the decision-diagram limit when `m` was lowered.
pub fn quotient_machine(m: &Machine, min: &Minimization) -> Machine {
    match build_quotient(m, min).lowered_or_error() {
        Ok(q) => q,
        Err(errors) => panic!(
            "internal error: the minimized `{}` does not lower: {}",
            m.name,
            errors
                .iter()
                .map(|d| d.message.as_str())
                .collect::<Vec<_>>()
                .join("; ")
        ),
    }
}

/// `ticks` periods of `period_us` microseconds in the largest unit that states it
/// exactly (`1500 ms`, `30 s`, `250 us`).
fn duration_in_units(period_us: u64, ticks: u32) -> ast::Duration {
    let us = period_us * u64::from(ticks);
    let (value, unit) = if us.is_multiple_of(1_000_000) {
        (us / 1_000_000, ast::TimeUnit::S)
    } else if us.is_multiple_of(1_000) {
        (us / 1_000, ast::TimeUnit::Ms)
    } else {
        (us, ast::TimeUnit::Us)
    };
    ast::Duration {
        value,
        unit,
        span: Span::call_site(),
    }
}

/// The operands of a chain of `&&`, in order.
fn and_operands(g: Guard, out: &mut Vec<Guard>) {
    match g {
        Guard::And(a, b) => {
            and_operands(*a, out);
            and_operands(*b, out);
        }
        other => out.push(other),
    }
}

/// A chain of `&&` joined as the parser joins one (`syntax::ast::balanced`): halves,
/// the left one the larger.
fn balanced_and(mut operands: Vec<Guard>) -> Guard {
    if operands.len() == 1 {
        return operands.remove(0);
    }
    let right = operands.split_off(operands.len().div_ceil(2));
    Guard::And(
        Box::new(balanced_and(operands)),
        Box::new(balanced_and(right)),
    )
}

/// The quotient machine before lowering.
fn build_quotient(m: &Machine, min: &Minimization) -> Machine {
    let lowered = &m.lowered;
    let sp = Span::call_site();
    let class_state = |s: StateId| min.class_of[s.index()].map(StateId);
    let mut states = Vec::with_capacity(min.classes.len());
    let mut rules: Vec<Rule> = Vec::new();
    // Guards of choices that follow a preempt rule are narrowed here.
    let mut bdd = m.bdd.clone();
    let mut timers = Vec::new();
    for (c, class) in min.classes.iter().enumerate() {
        let rep = class[0];
        let me = Scope::State(StateId::from_index(c));
        let st = &m.states[rep.index()];
        let cells = lowered.cells_of(rep);
        // The class state gets `_` rules: a choice of the rest cell that is not a timeout
        // (timeouts become `after` rules).
        let wildcard_fires = cells.iter().any(|cell| {
            cell.events == CellEvents::Rest && cell.choices.iter().any(|c| c.due.is_none())
        });
        let mut own = ScopeRules::default();
        for cell in cells {
            let trigger = match cell.events {
                _ if m.clocked => Trigger::Tick,
                CellEvents::One(e) => Trigger::Events(vec![e]),
                CellEvents::Rest => Trigger::Wildcard,
            };
            let mut ids = Vec::with_capacity(cell.choices.len());
            // Per rule added: the choice it stands for (`None` for a placeholder).
            let mut fired: Vec<Option<(crate::model::TimerId, u32)>> = Vec::new();
            let mut add = |rule: Rule, due: Option<(crate::model::TimerId, u32)>| {
                ids.push(RuleId::from_index(rules.len()));
                rules.push(rule);
                fired.push(due);
            };
            // The quotient has no groups, so a cell's choices all become rules of one
            // state scope. Choices of one lookup step and scope are exclusive (or the
            // last is `else`, which stays `else`: it takes what the others leave); a
            // choice after a preempt rule's is narrowed by `!(its guard)`, so that the
            // rules of the state are exclusive and keep the order's meaning.
            let mut before: Vec<(LookupStep, Scope, &Guard, Bdd)> = Vec::new();
            for choice in &cell.choices {
                let rule = &m.rules[choice.rule.index()];
                let (mut guard_expr, mut guard) = (rule.guard_expr.clone(), rule.guard);
                let mut narrowed = false;
                if !rule.otherwise {
                    for &(step, scope, g, b) in &before {
                        if (step, scope) == (choice.step, choice.scope) {
                            continue;
                        }
                        if bdd.and(guard, b).is_false() {
                            continue;
                        }
                        let not_b = bdd.not(b);
                        guard = bdd.and(guard, not_b);
                        let narrow = Guard::Not(Box::new(g.clone()));
                        narrowed = true;
                        guard_expr = Some(match guard_expr {
                            None => narrow,
                            Some(x) => Guard::And(Box::new(x), Box::new(narrow)),
                        });
                    }
                }
                if narrowed {
                    // The shape the printed spec parses back to: one `&&` chain, joined
                    // as the parser joins chains.
                    guard_expr = guard_expr.map(|g| {
                        let mut operands = Vec::new();
                        and_operands(g, &mut operands);
                        balanced_and(operands)
                    });
                }
                if choice.step == LookupStep::Preempt {
                    if let Some(g) = &rule.guard_expr {
                        before.push((choice.step, choice.scope, g, rule.guard));
                    }
                }
                let target = match (choice.moves, class_state(choice.target)) {
                    (true, Some(t)) => Target::To(t),
                    // A target without a class is unreachable, so this choice cannot fire
                    // from a reachable state; any target keeps the machine valid.
                    (true, None) | (false, _) => Target::Stay,
                };
                let actions = lowered.seq(choice.ops).to_vec();
                add(
                    Rule {
                        span: sp,
                        guard_span: sp,
                        scope: me,
                        preempt: false,
                        otherwise: rule.otherwise,
                        trigger: trigger.clone(),
                        guard_expr,
                        guard,
                        target,
                        mealy: lowered.outputs(choice.mealy).to_vec(),
                        actions,
                    },
                    choice.due,
                );
            }
            // Timeout choices become the class state's own `after` rules (the quotient
            // has no groups: only machines whose timers are states' own merge, see
            // [`minimize_timed`]), grouped by duration.
            let mut plain = Vec::with_capacity(ids.len());
            for (&id, choice) in ids.iter().zip(fired.iter()) {
                match *choice {
                    Some((_, ticks)) => {
                        rules[id.index()].trigger = Trigger::After(ticks);
                        match own.timeouts.iter_mut().find(|(d, _)| *d == ticks) {
                            Some((_, list)) => list.push(id),
                            None => own.timeouts.push((ticks, vec![id])),
                        }
                    }
                    None => plain.push(id),
                }
            }
            let mut ids = plain;
            if ids.is_empty() {
                match cell.events {
                    CellEvents::One(_) if !m.clocked && wildcard_fires => {
                        // Named, yet no rule naming the event fires (none does, or
                        // only timeouts do, which become `after` rules): keep it named
                        // with a rule that never fires, so it does not fall to `_`.
                        ids.push(RuleId::from_index(rules.len()));
                        rules.push(Rule {
                            span: sp,
                            guard_span: sp,
                            scope: me,
                            preempt: false,
                            otherwise: false,
                            trigger: trigger.clone(),
                            guard_expr: Some(Guard::Const(false)),
                            guard: Bdd::FALSE,
                            target: Target::Stay,
                            mealy: Vec::new(),
                            actions: Vec::new(),
                        });
                    }
                    _ => continue,
                }
            }
            match cell.events {
                CellEvents::One(e) if !m.clocked => own.named.push((e, ids)),
                CellEvents::One(_) | CellEvents::Rest => own.wildcard.extend(ids),
            }
        }
        if !own.timeouts.is_empty() {
            own.timeouts.sort_by_key(|(d, _)| *d);
            own.timer = Some(crate::model::TimerId::from_index(timers.len()));
            timers.push(crate::model::Timer {
                scope: me,
                durations: own.timeouts.iter().map(|(d, _)| *d).collect(),
            });
        }
        let mut doc = st.doc.clone();
        if class.len() > 1 {
            let others: Vec<String> = class[1..]
                .iter()
                .map(|s| format!("`{}`", m.state_name(*s)))
                .collect();
            if !doc.is_empty() {
                doc.push(String::new());
            }
            doc.push(format!(
                "Also stands for {}: equivalent states merged by minimization.",
                others.join(", ")
            ));
        }
        // Lint levels: the groups' outermost first, then the state's own, so that the
        // innermost still wins.
        let mut lints = Vec::new();
        for g in m.ancestors(rep).into_iter().rev() {
            lints.extend(m.groups[g.index()].lints.iter().cloned());
        }
        lints.extend(st.lints.iter().cloned());
        let moore = lowered.outputs(lowered.moore(rep)).to_vec();
        states.push(State {
            name: st.name.clone(),
            span: sp,
            doc,
            terminal: st.terminal,
            parent: None,
            emit: moore.clone(),
            moore,
            enter: Vec::new(),
            leave: Vec::new(),
            rules: own,
            lints,
        });
    }
    let mut q = Machine {
        name: m.name.clone(),
        span: sp,
        doc: m.doc.clone(),
        vis: m.vis,
        clocked: m.clocked,
        timebase: m.timebase.clone(),
        timers,
        events: plain_items(&m.events),
        inputs: plain_items(&m.inputs),
        outputs: plain_items(&m.outputs),
        actions: plain_items(&m.actions),
        states,
        groups: Vec::new(),
        rules,
        // The start state is always reachable, so it has a class.
        start: class_state(m.start).unwrap_or(StateId(0)),
        policy: m.policy,
        policy_span: (m.policy != Policy::Complete).then_some(sp),
        dispatch: m.dispatch,
        minimize: m.minimize,
        properties: Vec::new(),
        lints: m.lints.clone(),
        counters: m.counters.clone(),
        atoms: m.atoms.clone(),
        atom_domain: m.atom_domain,
        bdd,
        lowered: Default::default(),
    };
    for p in &m.properties {
        match p {
            Property::Never { prop, .. } => {
                let prop = class_prop(m, min, prop);
                let text = format!(
                    "never {}",
                    crate::syntax::print::print_expr(&prop_expr(&q, &prop))
                );
                q.properties.push(Property::Never {
                    prop,
                    span: sp,
                    text,
                });
            }
            Property::Ensure {
                response,
                within,
                trigger,
                ..
            } => {
                let response = class_prop(m, min, response);
                let trigger = class_prop(m, min, trigger);
                let text = format!(
                    "ensure {} within {} after {}",
                    crate::syntax::print::print_expr(&prop_expr(&q, &response)),
                    crate::syntax::print::print_within(&within_ast(&q, *within)),
                    crate::syntax::print::print_expr(&prop_expr(&q, &trigger))
                );
                q.properties.push(Property::Ensure {
                    response,
                    within: *within,
                    trigger,
                    span: sp,
                    text,
                });
            }
            Property::Recover { target, except, .. } => {
                let Some(target) = class_state(*target) else {
                    continue;
                };
                let mut except: Vec<StateId> =
                    except.iter().filter_map(|s| class_state(*s)).collect();
                except.sort_unstable();
                except.dedup();
                let mut text = format!("recover to {}", q.state_name(target));
                if !except.is_empty() {
                    let names: Vec<&str> = except.iter().map(|s| q.state_name(*s)).collect();
                    text = format!("{text} except {}", names.join(", "));
                }
                q.properties.push(Property::Recover {
                    target,
                    except,
                    span: sp,
                    text,
                });
            }
        }
    }
    q
}

/// A machine without groups, such as a [`quotient_machine`], as a syntax tree that
/// resolves to the same machine: every state with its Moore outputs, `enter`/`leave`
/// actions and own rules (each with its trigger, guard as written, target, Mealy
/// outputs and actions), in rule order. Rules of groups are not printed.
pub fn quotient_ast(q: &Machine) -> MachineAst {
    let mut attrs = Vec::new();
    if q.dispatch == DispatchStyle::Match {
        attrs.push(Attr::Dispatch(DispatchStyle::Match, Span::call_site()));
    }
    if q.minimize {
        attrs.push(Attr::Minimize(Span::call_site()));
    }
    attrs.extend(lint_attrs(&q.lints));

    let mut decls = Vec::new();
    if !q.clocked {
        decls.push(decl(DeclKind::Events(doc_list(&q.events))));
    }
    if !q.inputs.is_empty() {
        decls.push(decl(DeclKind::Inputs(doc_list(&q.inputs))));
    }
    if !q.outputs.is_empty() {
        decls.push(decl(DeclKind::Outputs(doc_list(&q.outputs))));
    }
    if !q.actions.is_empty() {
        decls.push(decl(DeclKind::Actions(doc_list(&q.actions))));
    }
    if !q.counters.is_empty() {
        decls.push(decl(DeclKind::Counters(
            q.counters
                .iter()
                .map(|c| ast::CounterDecl {
                    doc: Vec::new(),
                    ident: ident(&c.name),
                    max: u64::from(c.max),
                    max_span: Span::call_site(),
                })
                .collect(),
        )));
    }
    if let Some(tb) = &q.timebase {
        decls.push(decl(DeclKind::Timebase {
            // A clocked machine's time base is its clock: the event is left out.
            event: (!q.clocked).then(|| ident(q.event_name(tb.event))),
            period: tb.period_us.map(|us| duration_in_units(us, 1)),
        }));
    }
    decls.push(decl(DeclKind::Start(ident(q.state_name(q.start)))));
    if q.policy != Policy::Complete {
        decls.push(decl(DeclKind::Unhandled(q.policy)));
    }
    for p in &q.properties {
        match p {
            Property::Never { prop, .. } => {
                decls.push(decl(DeclKind::Never(prop_expr(q, prop))));
            }
            Property::Ensure {
                response,
                within,
                trigger,
                ..
            } => {
                decls.push(decl(DeclKind::Ensure {
                    response: prop_expr(q, response),
                    within: within_ast(q, *within),
                    trigger: prop_expr(q, trigger),
                }));
            }
            Property::Recover { target, except, .. } => {
                decls.push(decl(DeclKind::Recover {
                    target: ident(q.state_name(*target)),
                    except: except.iter().map(|s| ident(q.state_name(*s))).collect(),
                }));
            }
        }
    }

    let names = |list: &[crate::model::OutputId]| -> Vec<Ident> {
        list.iter()
            .map(|o| ident(&q.outputs[o.index()].name))
            .collect()
    };
    let action_names = |list: &[Op]| -> Vec<ast::OpAst> {
        list.iter()
            .map(|op| match op {
                Op::Action(a) => ast::OpAst::Action(ident(&q.actions[a.index()].name)),
                Op::Counter(c) => ast::OpAst::Counter {
                    name: ident(&q.counters[c.counter.index()].name),
                    kind: c.kind,
                    value: u64::from(c.value),
                    value_span: Span::call_site(),
                },
            })
            .collect()
    };
    let mut bodies: Vec<Vec<Body>> = vec![Vec::new(); q.states.len()];
    for (si, st) in q.states.iter().enumerate() {
        if !st.enter.is_empty() {
            bodies[si].push(Body::Enter(action_names(&st.enter), Span::call_site()));
        }
        if !st.leave.is_empty() {
            bodies[si].push(Body::Leave(action_names(&st.leave), Span::call_site()));
        }
    }
    for rule in &q.rules {
        let Scope::State(s) = rule.scope else {
            continue;
        };
        let trigger = match &rule.trigger {
            Trigger::Tick | Trigger::After(_) => None,
            Trigger::Wildcard => Some(ast::Trigger::Wildcard(Span::call_site())),
            Trigger::Events(evs) => Some(ast::Trigger::Events(
                evs.iter().map(|e| ident(q.event_name(*e))).collect(),
            )),
        };
        let target = match rule.target {
            Target::Stay => ast::Target::Stay(Span::call_site()),
            Target::To(t) => ast::Target::State(ident(q.state_name(t))),
        };
        bodies[s.index()].push(Body::Rule(RuleAst {
            preempt: None,
            after: match rule.trigger {
                Trigger::After(d) => Some(match q.timebase.as_ref().and_then(|t| t.period_us) {
                    Some(us) => duration_in_units(us, d),
                    None => ast::Duration {
                        value: u64::from(d),
                        unit: ast::TimeUnit::Ticks,
                        span: Span::call_site(),
                    },
                }),
                _ => None,
            },
            trigger,
            otherwise: rule.otherwise.then(Span::call_site),
            guard: rule.guard_expr.as_ref().map(|g| guard_expr(q, g)),
            target,
            emit: names(&rule.mealy),
            actions: action_names(&rule.actions),
            span: Span::call_site(),
        }));
    }
    let members = q
        .states
        .iter()
        .zip(bodies)
        .map(|(st, body)| {
            Member::State(StateAst {
                attrs: lint_attrs(&st.lints),
                doc: st.doc.clone(),
                terminal: st.terminal,
                name: ident(&st.name),
                emit: names(&st.emit),
                body,
            })
        })
        .collect();

    MachineAst {
        attrs,
        doc: q.doc.clone(),
        vis: q.vis,
        name: ident(&q.name),
        decls,
        members,
    }
}

/// The quotient of `m` by `min` as a syntax tree: [`quotient_ast`] of
/// [`quotient_machine`].
pub fn minimized_ast(m: &Machine, min: &Minimization) -> MachineAst {
    quotient_ast(&quotient_machine(m, min))
}

/// The minimized machine as spec text that parses again (`minimize --format spec`).
pub fn minimized_spec(m: &Machine) -> String {
    let mut out = String::new();
    crate::syntax::print::print_machine(&mut out, &quotient_ast(&quotient(m).machine));
    out
}

/// The minimized machine ([`quotient`]'s machine): its states are the classes, named
/// and numbered after their first members in declaration order. `minimize --format
/// spec` prints it.
///
/// # Panics
///
/// Only on an internal error (see [`quotient_machine`]).
pub fn minimized_machine(m: &Machine) -> Machine {
    quotient(m).machine
}
