//! Minimizing a resolved [`Machine`]: its state equivalence and its quotient as a spec.
//!
//! **Method.** The machine is encoded as a complete DFA over the atoms of its guard
//! algebra ([`super::encode`]: symbols are (event class, guard atom) pairs, each
//! (state, symbol) stepped once through the reference interpreter). The initial
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
//! **The quotient as a spec** ([`minimized_ast`]). Groups are flattened: each class
//! becomes a state named after its first member in declaration order, with that
//! member's full Moore set. For each cell of the representative, its rules are written
//! with their original guards (same order, so first-match semantics are kept), targets
//! mapped to class names, and on each rule's `do` list the FULL action sequence of the
//! transition from the representative (leave and enter actions included); the printed
//! machine has no `enter`/`leave` at all, so an action that merging would move between
//! a state and its incoming rules is attributed to exactly the transitions that ran it.
//! `=> stay` stays `stay`; any other target (including another member of the same
//! class) becomes an explicit transition to the class's state, which runs nothing
//! beyond the listed actions. The rest-event class becomes a `_` rule. The policy,
//! attributes and properties are kept (state names mapped to classes; `in Group`
//! becomes the disjunction of `in` the classes of its reachable members; a `recover`
//! whose target is unreachable is dropped, since no class stands for it).
//!
//! **Cost.** Encoding O(states x symbols) interpreter steps, refinement O(k n log n),
//! printing linear in the representatives' rules.

use super::encode::{encode, Alphabet, Interner, Side};
use super::partition::{hopcroft, restrict_to_reachable};
use crate::model::graph::CellEvents;
use crate::model::{Guard, Machine, Prop, Property, StateId, Target};
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
    let side = Side::reference(m);
    let alphabet = Alphabet::build(std::slice::from_ref(&side));
    let mut interner = Interner::default();
    let enc = encode(&side, &alphabet, &mut interner);
    let restricted = restrict_to_reachable(&enc.dfa, m.start.0);
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

fn doc_list(items: &[crate::model::Item]) -> Vec<DocIdent> {
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
        Guard::Const(b) => Expr::Const(*b, sp),
        Guard::Not(a) => Expr::Not(Box::new(guard_expr(m, a)), sp),
        Guard::And(a, b) => Expr::And(Box::new(guard_expr(m, a)), Box::new(guard_expr(m, b))),
        Guard::Or(a, b) => Expr::Or(Box::new(guard_expr(m, a)), Box::new(guard_expr(m, b))),
    }
}

fn disjunction(mut terms: Vec<Expr>) -> Expr {
    let Some(first) = (!terms.is_empty()).then(|| terms.remove(0)) else {
        return Expr::Const(false, Span::call_site());
    };
    terms
        .into_iter()
        .fold(first, |acc, t| Expr::Or(Box::new(acc), Box::new(t)))
}

fn prop_expr(m: &Machine, min: &Minimization, p: &Prop) -> Expr {
    let sp = Span::call_site();
    let class_name = |c: u32| ident(m.state_name(min.representative(c)));
    match p {
        Prop::Input(i) => Expr::Name(ident(&m.inputs[i.index()].name)),
        Prop::Output(o) => Expr::Name(ident(&m.outputs[o.index()].name)),
        Prop::Action(a) => Expr::Name(ident(&m.actions[a.index()].name)),
        Prop::InState(s) => match min.class_of[s.index()] {
            Some(c) => Expr::In(class_name(c)),
            None => Expr::Const(false, sp),
        },
        Prop::InGroup(g) => {
            let mut cs: Vec<u32> = m.groups[g.index()]
                .states
                .iter()
                .filter_map(|s| min.class_of[s.index()])
                .collect();
            cs.sort_unstable();
            cs.dedup();
            disjunction(cs.into_iter().map(|c| Expr::In(class_name(c))).collect())
        }
        Prop::Const(b) => Expr::Const(*b, sp),
        Prop::Not(a) => Expr::Not(Box::new(prop_expr(m, min, a)), sp),
        Prop::And(a, b) => Expr::And(
            Box::new(prop_expr(m, min, a)),
            Box::new(prop_expr(m, min, b)),
        ),
        Prop::Or(a, b) => Expr::Or(
            Box::new(prop_expr(m, min, a)),
            Box::new(prop_expr(m, min, b)),
        ),
    }
}

/// The quotient of `m` by `min` as a syntax tree (see the module doc for the shape).
pub fn minimized_ast(m: &Machine, min: &Minimization) -> MachineAst {
    let mut attrs = Vec::new();
    if m.dispatch == DispatchStyle::Match {
        attrs.push(Attr::Dispatch(DispatchStyle::Match, Span::call_site()));
    }
    if m.minimize {
        attrs.push(Attr::Minimize(Span::call_site()));
    }
    attrs.extend(lint_attrs(&m.lints));

    let class_name = |c: u32| m.state_name(min.representative(c));
    let mut decls = Vec::new();
    if !m.clocked {
        decls.push(decl(DeclKind::Events(doc_list(&m.events))));
    }
    if !m.inputs.is_empty() {
        decls.push(decl(DeclKind::Inputs(doc_list(&m.inputs))));
    }
    if !m.outputs.is_empty() {
        decls.push(decl(DeclKind::Outputs(doc_list(&m.outputs))));
    }
    if !m.actions.is_empty() {
        decls.push(decl(DeclKind::Actions(doc_list(&m.actions))));
    }
    // The start state is always reachable, so it has a class.
    let start_class = min.class_of[m.start.index()].unwrap_or(0);
    decls.push(decl(DeclKind::Start(ident(class_name(start_class)))));
    if m.policy != Policy::Complete {
        decls.push(decl(DeclKind::Unhandled(m.policy)));
    }
    for p in &m.properties {
        match p {
            Property::Never { prop, .. } => {
                decls.push(decl(DeclKind::Never(prop_expr(m, min, prop))));
            }
            Property::Recover { target, except, .. } => {
                let Some(tc) = min.class_of[target.index()] else {
                    continue;
                };
                let mut ex: Vec<u32> = except
                    .iter()
                    .filter_map(|s| min.class_of[s.index()])
                    .collect();
                ex.sort_unstable();
                ex.dedup();
                decls.push(decl(DeclKind::Recover {
                    target: ident(class_name(tc)),
                    except: ex.into_iter().map(|c| ident(class_name(c))).collect(),
                }));
            }
        }
    }

    let mut members = Vec::new();
    for class in &min.classes {
        let rep = class[0];
        let st = &m.states[rep.index()];
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
        let mut state_attrs = Vec::new();
        for g in m.ancestors(rep).into_iter().rev() {
            state_attrs.extend(lint_attrs(&m.groups[g.index()].lints));
        }
        state_attrs.extend(lint_attrs(&st.lints));
        let mut body = Vec::new();
        for cell in m.cells(rep) {
            let Some((_, rules)) = cell.rules else {
                continue;
            };
            let trigger = if m.clocked {
                None
            } else {
                Some(match cell.events {
                    CellEvents::One(e) => ast::Trigger::Events(vec![ident(m.event_name(e))]),
                    CellEvents::Rest => ast::Trigger::Wildcard(Span::call_site()),
                })
            };
            for &r in rules {
                let rule = &m.rules[r.index()];
                let target = match rule.target {
                    Target::Stay => ast::Target::Stay(Span::call_site()),
                    // A target without a class is unreachable, so this rule cannot fire
                    // from a reachable state; any target keeps the spec valid.
                    Target::To(t) => match min.class_of[t.index()] {
                        Some(tc) => ast::Target::State(ident(class_name(tc))),
                        None => ast::Target::Stay(Span::call_site()),
                    },
                };
                let actions = m
                    .transition_actions(rep, r)
                    .into_iter()
                    .map(|a| ident(&m.actions[a.index()].name))
                    .collect();
                body.push(Body::Rule(RuleAst {
                    trigger: trigger.clone(),
                    guard: rule.guard_expr.as_ref().map(|g| guard_expr(m, g)),
                    target,
                    emit: rule
                        .mealy
                        .iter()
                        .map(|o| ident(&m.outputs[o.index()].name))
                        .collect(),
                    actions,
                    span: Span::call_site(),
                }));
            }
        }
        members.push(Member::State(StateAst {
            attrs: state_attrs,
            doc,
            terminal: st.terminal,
            name: ident(&st.name),
            emit: st
                .moore
                .iter()
                .map(|o| ident(&m.outputs[o.index()].name))
                .collect(),
            body,
        }));
    }

    MachineAst {
        attrs,
        doc: m.doc.clone(),
        vis: m.vis,
        name: ident(&m.name),
        decls,
        members,
    }
}

/// The minimized machine as spec text that parses again (`minimize --format spec`).
pub fn minimized_spec(m: &Machine) -> String {
    let min = minimize(m);
    let mut out = String::new();
    crate::syntax::print::print_machine(&mut out, &minimized_ast(m, &min));
    out
}

/// The minimized machine, resolved from exactly the syntax tree that
/// `minimize --format spec` prints. Its states are the classes, named and numbered after
/// their first members in declaration order. This is what `#[minimize]` generates from.
///
/// # Panics
///
/// Only on an internal error: the tree is built from a resolved machine, so every name
/// in it resolves.
pub fn minimized_machine(m: &Machine) -> Machine {
    let min = minimize(m);
    let ast = minimized_ast(m, &min);
    match crate::model::resolve(&ast) {
        Ok(q) => q,
        Err(errors) => panic!(
            "internal error: the minimized `{}` does not resolve: {}",
            m.name,
            errors
                .iter()
                .map(|d| d.message.as_str())
                .collect::<Vec<_>>()
                .join("; ")
        ),
    }
}
