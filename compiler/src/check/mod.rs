//! The checker: every lint of LANGUAGE.md over a resolved [`Machine`].
//!
//! Rule choice comes from the machine's lowered form ([`crate::model::lower`]); the
//! checker reads it and decides nothing about which rule fires. Coverage is each
//! cell's `unhandled` region (a witness is one satisfying path of it); overlap tests
//! the guards of the rules that one lookup step reaches in one scope (a cell's
//! [`Reached`](crate::model::lower::Reached) groups) pairwise on BDDs, so neither
//! enumerates `2^inputs`. Reachability and dead ends use the lowered form's successor
//! lists (the targets of the choices that can fire); traps are bottom strongly
//! connected components (Tarjan). Work is linear in the number of cells plus the rules
//! they reach.
//!
//! A machine with timers is checked over its configurations (state and timer values,
//! [`crate::configs`]): coverage at each reachable configuration's variant (states no
//! configuration reaches at every timer value), reachability, dead ends and dead rules on
//! the configuration graph (docs/language-decisions.md, "Analyses of machines with
//! timers"). Past the configuration limit one error names it.
//!
//! Levels: hard errors (`syntax`, `name`, `incomplete`, `overlapping_rules`,
//! `property`) always stay errors. Every other lint takes the innermost
//! `#[allow/warn/deny]` naming it on the state, its groups outward, then the machine;
//! [`Options`] (`--allow`, `--deny warnings`) apply after that.

pub mod property;
pub mod render;

use crate::diag::{Diagnostic, Lint, Severity};
use crate::fxhash::FxSet;
use crate::model::bdd::BddStore;
use crate::model::graph::{reachable_from, strongly_connected};
use crate::model::lower::SeqId;
use crate::model::{ActionId, Bdd, EventId, Guard, InputId, Machine, RuleId, Site, StateId};
use crate::naming::{is_snake, is_upper_camel, to_snake, to_upper_camel};
use crate::syntax::ast::{LevelAttr, Policy};

/// Command-line level changes, applied after the spec's own attributes.
#[derive(Clone, Debug, Default)]
pub struct Options {
    /// Lints to silence (`--allow LINT`).
    pub allow: Vec<Lint>,
    /// Turn every remaining warning into an error (`--deny warnings`).
    pub deny_warnings: bool,
}

/// Applies command-line options to diagnostics.
pub fn apply_options(diags: Vec<Diagnostic>, opts: &Options) -> Vec<Diagnostic> {
    diags
        .into_iter()
        .filter(|d| d.lint.is_hard_error() || !opts.allow.contains(&d.lint))
        .map(|mut d| {
            if opts.deny_warnings && d.severity == Severity::Warning {
                d.severity = Severity::Error;
            }
            d
        })
        .collect()
}

/// Runs every lint on a machine and applies the spec's lint attributes.
pub fn check_machine(m: &Machine) -> Vec<Diagnostic> {
    // A machine with timers is analysed over its configurations (state and timer
    // values); one without has one configuration per state and keeps the state graph.
    let (configs, limit) = if m.has_configs() {
        match crate::configs::explore(m) {
            Ok(g) => (Some(g), None),
            Err(e) => (None, Some(e)),
        }
    } else {
        (None, None)
    };
    let mut c = Checker {
        m,
        out: Vec::new(),
        configs,
    };
    // The firing regions were built within the decision-diagram budget when the machine
    // was lowered (a machine past it does not resolve); the overlap check's own
    // conjunctions must fit it too, or its results would be meaningless.
    if c.coverage_and_overlap() {
        c.out.clear();
        c.out.push(Diagnostic::name_error(
            m.span,
            crate::model::bdd_overflow_message(
                &m.name,
                "the coverage and overlap checks of this machine",
            ),
        ));
        return c.out;
    }
    if let Some(limit) = limit {
        // Coverage, reachability, dead rules, dead ends, equivalence and properties
        // need the configuration graph: one error says they were not decided.
        c.out.clear();
        c.out.push(property::limit_diagnostic(
            m,
            &limit,
            "coverage, reachability, dead rules, dead ends, state equivalence and the \
             properties",
        ));
        c.overlap_only();
        c.never_true_guards();
        c.unused_declarations();
        c.naming();
        sort_diagnostics(&mut c.out);
        return c.out;
    }
    c.reachability();
    c.counter_range();
    c.dead_rules_and_repeated_actions();
    c.never_true_guards();
    c.unused_declarations();
    c.naming();
    c.equivalent_states();
    c.out.extend(property::check_properties(m));
    sort_diagnostics(&mut c.out);
    c.out
}

/// Orders diagnostics by source position, then lint.
pub fn sort_diagnostics(diags: &mut [Diagnostic]) {
    diags.sort_by_key(|d| {
        let pos = d
            .span
            .map(|s| {
                let lc = s.start();
                (lc.line, lc.column)
            })
            .unwrap_or((0, 0));
        (pos, d.lint)
    });
}

struct Checker<'a> {
    m: &'a Machine,
    out: Vec<Diagnostic>,
    /// The configuration graph of a machine with timers (`None` without timers: the
    /// state graph is exact there).
    configs: Option<crate::configs::ConfigGraph>,
}

/// Names of the inputs a guard expression mentions, in declaration order.
pub fn guard_mentions(g: &Guard, out: &mut Vec<InputId>) {
    match g {
        Guard::Input(i) => {
            if !out.contains(i) {
                out.push(*i);
            }
        }
        Guard::Const(_) | Guard::Atom(_) => {}
        Guard::Not(a) => guard_mentions(a, out),
        Guard::And(a, b) | Guard::Or(a, b) => {
            guard_mentions(a, out);
            guard_mentions(b, out);
        }
    }
}

impl Checker<'_> {
    /// Adds a diagnostic whose level the spec's attributes at `site` may change.
    fn emit(&mut self, mut d: Diagnostic, site: Site) {
        if !d.lint.is_hard_error() {
            match self.m.lint_attr(d.lint, site) {
                Some(LevelAttr::Allow) => return,
                Some(LevelAttr::Warn) => d.severity = Severity::Warning,
                Some(LevelAttr::Deny) => d.severity = Severity::Error,
                None => {}
            }
        }
        self.out.push(d);
    }

    /// A witness over the inputs that `rules` mention: the values of `path` (a partial
    /// valuation from the BDD), others false.
    fn witness(&self, rules: &[RuleId], path: &[(u32, bool)]) -> Vec<(String, bool)> {
        let mut mentioned = Vec::new();
        for r in rules {
            if let Some(g) = &self.m.rules[r.index()].guard_expr {
                guard_mentions(g, &mut mentioned);
            }
        }
        for &(v, _) in path {
            if v < crate::model::ATOM_VAR_BASE && !mentioned.contains(&InputId(v)) {
                mentioned.push(InputId(v));
            }
        }
        mentioned.sort_unstable();
        mentioned
            .into_iter()
            .map(|i| {
                let val = path
                    .iter()
                    .find(|(v, _)| *v == i.0)
                    .map(|(_, b)| *b)
                    .unwrap_or(false);
                (self.m.inputs[i.index()].name.clone(), val)
            })
            .collect()
    }

    /// Overlap and coverage of every cell of the lowered form. Returns true when the
    /// decision diagrams overflowed (see [`MAX_BDD_NODES`]).
    ///
    /// [`MAX_BDD_NODES`]: crate::model::bdd::MAX_BDD_NODES
    fn coverage_and_overlap(&mut self) -> bool {
        self.coverage_and_overlap_with(true)
    }

    /// The overlap check alone (coverage needs the configurations).
    fn overlap_only(&mut self) {
        self.coverage_and_overlap_with(false);
    }

    /// Per cell, where coverage is decided: the unhandled region to show and the
    /// configuration (or due set) it holds in. Without timers: the cell's `unhandled`.
    /// With timers: in a state some configuration reaches, the first configuration in
    /// breadth-first order whose variant leaves valuations unhandled (exact: only
    /// reachable timer values count); in a state none reaches, the first variant that
    /// does (every timer value).
    fn uncovered(&self) -> Vec<(Bdd, Uncovered)> {
        let m = self.m;
        let cells = m.lowered.cells();
        let Some(g) = &self.configs else {
            return cells
                .iter()
                .map(|c| (c.unhandled, Uncovered::Always))
                .collect();
        };
        let mut out: Vec<(Bdd, Uncovered)> = vec![(Bdd::FALSE, Uncovered::Always); cells.len()];
        let reachable = g.reachable_states(m.states.len());
        for (i, c) in g.configs.iter().enumerate() {
            for id in m.lowered.cell_range(c.state) {
                if !out[id].0.is_false() {
                    continue;
                }
                let cell = &cells[id];
                let v = &cell.variants[crate::configs::variant_at(m, cell, c)];
                if !v.unhandled.is_false() {
                    out[id] = (v.unhandled, Uncovered::Config(i));
                }
            }
        }
        for (id, cell) in cells.iter().enumerate() {
            if reachable[cell.state.index()] {
                continue;
            }
            if let Some((k, v)) = cell
                .variants
                .iter()
                .enumerate()
                .find(|(_, v)| !v.unhandled.is_false() && variant_feasible(m, cell, v))
            {
                out[id] = (v.unhandled, Uncovered::Variant(k));
            }
        }
        out
    }

    fn coverage_and_overlap_with(&mut self, coverage: bool) -> bool {
        let m = self.m;
        let lowered = &m.lowered;
        let uncovered = if coverage {
            self.uncovered()
        } else {
            Vec::new()
        };
        let mut bdd = m.bdd.clone();
        let mut reported_pairs: FxSet<(RuleId, RuleId)> = FxSet::default();
        for (cell_index, cell) in lowered.cells().iter().enumerate() {
            let s = cell.state;
            let state_name = &m.states[s.index()].name;
            for group in &cell.reached {
                // An `else` rule takes what the others leave: it overlaps none of them.
                let rules: Vec<RuleId> = group
                    .rules
                    .iter()
                    .copied()
                    .filter(|r| !m.rules[r.index()].otherwise)
                    .collect();
                let rules = &rules;
                // Overlap: any two guards of one lookup step's rules in one scope that
                // can both be true. A rule can be the later one of an overlapping pair
                // only if its guard meets the union of the guards before it, and the
                // earlier one only if it meets the union of those after it: two linear
                // passes find those rules, and the pairs are tested among them alone, in
                // the same order as all pairs would be. A cell of thousands of exclusive
                // rules (a decoded opcode table) then costs two passes, not a test per
                // pair.
                let (earlier, later) = overlap_candidates(&mut bdd, m, rules);
                for (i, &a) in rules.iter().enumerate() {
                    if !earlier[i] {
                        continue;
                    }
                    for (j, &b) in rules.iter().enumerate().skip(i + 1) {
                        if !later[j] {
                            continue;
                        }
                        let mut both = bdd.and(m.rules[a.index()].guard, m.rules[b.index()].guard);
                        if !m.atoms.is_empty() {
                            // Only comparison values some counter values give.
                            both = bdd.and(both, m.atom_domain);
                        }
                        if both.is_false() || !reported_pairs.insert((a, b)) {
                            continue;
                        }
                        let event = m.event_name(cell.event);
                        let path = bdd.sat_one(both).unwrap_or_default();
                        let mut witness = self.witness(&[a, b], &path);
                        witness.extend(counter_witness(m, &path));
                        let mut d = Diagnostic::new(
                            Lint::OverlappingRules,
                            Some(m.rules[b.index()].span),
                            format!(
                                "two rules can both fire in state `{state_name}` on event `{event}`"
                            ),
                        )
                        .with_state(state_name)
                        .with_event(event);
                        d.related
                            .push((m.rules[a.index()].span, "the other rule".into()));
                        d.notes.push(format!(
                            "both fire when {}",
                            render::valuation_text(&witness)
                        ));
                        d.helps
                            .push("make the guards exclusive; rule order does not pick one".into());
                        d.witness = Some(witness);
                        self.emit(d, Site::State(s));
                    }
                }
            }
            if bdd.overflowed() {
                break;
            }
            // Coverage: the valuations where no choice fires.
            if !coverage || m.policy != Policy::Complete {
                continue;
            }
            let (unhandled, at) = uncovered[cell_index];
            if unhandled.is_false() {
                continue;
            }
            let rules: Vec<RuleId> = cell
                .reached
                .iter()
                .flat_map(|g| g.rules.iter().copied())
                .collect();
            let path = m.bdd.sat_one(unhandled).unwrap_or_default();
            let witness = self.witness(&rules, &path);
            let when = match at {
                Uncovered::Always => None,
                Uncovered::Config(i) => self.configs.as_ref().and_then(|g| {
                    let c = &g.configs[i];
                    match (
                        crate::configs::timers_text(m, c),
                        crate::configs::counters_text(m, c),
                    ) {
                        (None, None) => None,
                        (Some(t), None) => Some(format!("in state `{state_name}` with {t}")),
                        (None, Some(k)) => {
                            Some(format!("in state `{state_name}` with the counters at {k}"))
                        }
                        (Some(t), Some(k)) => Some(format!(
                            "in state `{state_name}` with {t}, and the counters at {k}"
                        )),
                    }
                }),
                Uncovered::Variant(0) => None,
                Uncovered::Variant(k) => Some(format!(
                    "in state `{state_name}` (no configuration reaches it) when {} due",
                    due_text(m, &cell.variants[k].due)
                )),
            };
            for e in lowered.cell_events(m.events.len(), cell) {
                let event = m.event_name(e);
                let message = if rules.is_empty() {
                    format!("state `{state_name}` has no rule for event `{event}`")
                } else {
                    format!(
                        "state `{state_name}` does not handle event `{event}` for every input value"
                    )
                };
                let mut d =
                    Diagnostic::new(Lint::Incomplete, Some(m.states[s.index()].span), message)
                        .with_state(state_name)
                        .with_event(event);
                if !rules.is_empty() {
                    d.notes.push(format!(
                        "no rule fires when {}",
                        render::valuation_text(&witness)
                    ));
                    if let Some(when) = &when {
                        d.notes.push(when.clone());
                    }
                    if let Some(note) = hidden_wildcard_note(m, cell, event) {
                        d.notes.push(note);
                    }
                    d.witness = Some(witness.clone());
                } else if !witness.is_empty() {
                    d.witness = Some(witness.clone());
                }
                d.helps.push(if m.clocked {
                    "add a rule for the uncovered case, or declare `unhandled ignore;` to \
                     hold the state"
                        .to_string()
                } else {
                    format!(
                        "add a rule for `{event}` here or in an enclosing group, or declare \
                         `unhandled ignore;` (or `reject`) to leave it unhandled"
                    )
                });
                self.emit(d, Site::State(s));
            }
        }
        bdd.overflowed()
    }

    /// The graph of states (from the configurations when the machine has timers) and
    /// the states reachable from the start.
    fn state_graph(&self) -> (Vec<Vec<StateId>>, Vec<bool>) {
        let m = self.m;
        match &self.configs {
            Some(g) => (
                g.state_successors(m.states.len()),
                g.reachable_states(m.states.len()),
            ),
            None => {
                let succ = m.lowered.successor_lists();
                let reachable = reachable_from(&succ, &[m.start]);
                (succ, reachable)
            }
        }
    }

    fn reachability(&mut self) {
        let m = self.m;
        let (succ, reachable) = self.state_graph();
        for (i, st) in m.states.iter().enumerate() {
            if !reachable[i] {
                let d = Diagnostic::new(
                    Lint::UnreachableState,
                    Some(st.span),
                    format!(
                        "state `{}` is unreachable from the start state `{}`",
                        st.name,
                        m.state_name(m.start)
                    ),
                )
                .with_state(&st.name)
                .help("add a rule that leads here, or remove the state");
                self.emit(d, Site::State(StateId::from_index(i)));
            }
        }
        // Traps: bottom strongly connected components of the reachable part, unless the
        // whole reachable part is one component.
        let (comp, n_comp) = strongly_connected(&succ, &reachable);
        if n_comp <= 1 {
            return;
        }
        let mut leaves = vec![false; n_comp];
        let mut members: Vec<Vec<StateId>> = vec![Vec::new(); n_comp];
        for (i, &c) in comp.iter().enumerate() {
            if c == u32::MAX {
                continue;
            }
            members[c as usize].push(StateId::from_index(i));
            if succ[i].iter().any(|t| comp[t.index()] != c) {
                leaves[c as usize] = true;
            }
        }
        for c in 0..n_comp {
            if leaves[c] || members[c].is_empty() {
                continue;
            }
            let states = &members[c];
            if states.iter().any(|s| m.states[s.index()].terminal) {
                continue;
            }
            let first = states[0];
            let names: Vec<&str> = states.iter().map(|s| m.state_name(*s)).collect();
            let mut d = if states.len() == 1 {
                Diagnostic::new(
                    Lint::DeadEnd,
                    Some(m.states[first.index()].span),
                    format!(
                        "state `{}` is a dead end: no rule leads out of it",
                        names[0]
                    ),
                )
                .help("add a way out, or mark the state `terminal` if it is a latched fault")
            } else {
                Diagnostic::new(
                    Lint::DeadEnd,
                    Some(m.states[first.index()].span),
                    format!(
                        "states {} trap the machine: no rule leads out of them",
                        names
                            .iter()
                            .map(|n| format!("`{n}`"))
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                )
                .help("add a way out of the set, or mark one of its states `terminal`")
            };
            d = d.with_state(names[0]);
            d.states = names.iter().map(|s| s.to_string()).collect();
            self.emit(d, Site::State(first));
        }
    }

    /// `equivalent_states`: each class of more than one state that minimization merges
    /// (crate::minimize::machine), at its first member. Not reported under
    /// `#[minimize]`: there the author asked for the merge.
    fn equivalent_states(&mut self) {
        let m = self.m;
        if m.minimize {
            return;
        }
        let min = crate::minimize::minimize(m);
        for class in min.classes.iter().filter(|c| c.len() > 1) {
            let first = class[0];
            let names: Vec<&str> = class.iter().map(|s| m.state_name(*s)).collect();
            let mut d = Diagnostic::new(
                Lint::EquivalentStates,
                Some(m.states[first.index()].span),
                format!(
                    "states {} behave the same: minimization merges them into `{}`",
                    names
                        .iter()
                        .map(|n| format!("`{n}`"))
                        .collect::<Vec<_>>()
                        .join(", "),
                    names[0]
                ),
            )
            .with_state(names[0])
            .note(
                "every input sequence gives the same outputs and actions from each of them",
            )
            .help("remove the duplicates, or `#[allow(equivalent_states)]` if they are kept apart on purpose");
            d.states = names.iter().map(|s| s.to_string()).collect();
            self.emit(d, Site::State(first));
        }
    }

    /// `dead_rule`: a rule of a scope with a reachable state that is no choice (with a
    /// non-empty firing region) in any cell of a reachable state. `repeated_action`: a
    /// choice of a reachable state whose operation sequence runs an action twice. Both
    /// read the lowered form only; reachability is the successor graph's, as for
    /// `unreachable_state`.
    /// `counter_range`: a reachable step whose operations take a counter outside
    /// `0..=N`, with the shortest trace (the configurations are in breadth-first order
    /// and their edges in order, so the first such step found ends a shortest trace).
    fn counter_range(&mut self) {
        let Some(g) = self.configs.take() else {
            return;
        };
        self.counter_range_in(&g);
        self.configs = Some(g);
    }

    fn counter_range_in(&mut self, g: &crate::configs::ConfigGraph) {
        let m = self.m;
        if m.counters.is_empty() {
            return;
        }
        let lowered = &m.lowered;
        let mut reported: FxSet<RuleId> = FxSet::default();
        for (i, c) in g.configs.iter().enumerate() {
            for edge in g.out(i) {
                let Some(k) = edge.choice else {
                    continue;
                };
                let cell = lowered.cell(edge.cell);
                let choice = &cell.choices[k as usize];
                let ops = lowered.seq(choice.ops);
                let mut counters = c.counters.clone();
                let Some(bad) = crate::interp::apply_counter_ops(m, ops, &mut counters) else {
                    continue;
                };
                if !reported.insert(choice.rule) {
                    continue;
                }
                let crate::model::Op::Counter(op) = ops[bad] else {
                    continue;
                };
                // The counter's value just before the operation.
                let mut before = c.counters.clone();
                crate::interp::apply_counter_ops(m, &ops[..bad], &mut before);
                let counter = &m.counters[op.counter.index()];
                let v = before[op.counter.index()];
                let mut trace = crate::check::property::trace_of_edges(m, g, &g.path_to(i));
                trace.push((
                    cell.event,
                    crate::model::steps::valuation(m.inputs.len(), &m.bdd, edge.region),
                ));
                let n = trace.len();
                let rule = &m.rules[choice.rule.index()];
                // The sequence is the leave lists, the rule's list, the enter lists.
                let leave_len = match rule.target {
                    crate::model::Target::Stay => 0,
                    crate::model::Target::To(to) => {
                        m.states[c.state.index()].leave.len()
                            + m.ancestors(c.state)
                                .into_iter()
                                .filter(|g| !m.group_contains(*g, to))
                                .map(|g| m.groups[g.index()].leave.len())
                                .sum::<usize>()
                    }
                };
                let whose = if (leave_len..leave_len + rule.actions.len()).contains(&bad) {
                    "the rule's"
                } else {
                    "an enter or leave list of this move"
                };
                let mut d = Diagnostic::new(
                    Lint::CounterRange,
                    Some(rule.span),
                    format!(
                        "`{}` can take counter `{}` outside 0..={} at step {n}",
                        m.op_text(&ops[bad]),
                        counter.name,
                        counter.max
                    ),
                )
                .with_state(m.state_name(c.state))
                .with_event(m.event_name(cell.event))
                .note(format!(
                    "at step {n} the counter is {v} when {whose} `{}` runs, in state `{}` on \
                     event `{}`",
                    m.op_text(&ops[bad]),
                    m.state_name(c.state),
                    m.event_name(cell.event)
                ));
                d.trace = Some(property::trace_steps(m, &trace));
                d.helps.push(format!(
                    "guard the rule with a comparison (`if {} < {}`), or widen the range",
                    counter.name, counter.max
                ));
                self.emit(d, m.rule_site(choice.rule));
            }
        }
    }

    fn dead_rules_and_repeated_actions(&mut self) {
        let m = self.m;
        let lowered = &m.lowered;
        let (_, reachable) = self.state_graph();
        let mut fires = vec![false; m.rules.len()];
        // Per rule, the first reachable (state, cell, repeated action) where it repeats.
        let mut repeats: Vec<Option<(StateId, EventId, SeqId, ActionId)>> =
            vec![None; m.rules.len()];
        for (si, _) in reachable.iter().enumerate().filter(|(_, r)| **r) {
            let s = StateId::from_index(si);
            for cell in lowered.cells_of(s) {
                for ch in &cell.choices {
                    let r = ch.rule.index();
                    if self.configs.is_none() {
                        fires[r] = true;
                    }
                    if repeats[r].is_some() {
                        continue;
                    }
                    let acts: Vec<ActionId> = lowered.actions(ch.ops).collect();
                    let dup = acts
                        .iter()
                        .enumerate()
                        .find(|(i, a)| acts[..*i].contains(a))
                        .map(|(_, a)| *a);
                    if let Some(a) = dup {
                        repeats[r] = Some((s, cell.event, ch.ops, a));
                    }
                }
            }
        }
        // With timers, a rule fires when some step of the configuration graph takes it.
        if let Some(g) = &self.configs {
            for e in &g.edges {
                if let Some(k) = e.choice {
                    fires[lowered.cell(e.cell).choices[k as usize].rule.index()] = true;
                }
            }
        }
        let mut scratch: Option<BddStore> = None;
        for (ri, rule) in m.rules.iter().enumerate() {
            let r = RuleId::from_index(ri);
            if let Some((s, e, ops, a)) = repeats[ri] {
                let name = &m.actions[a.index()].name;
                let seq: Vec<&str> = lowered
                    .actions(ops)
                    .map(|x| m.actions[x.index()].name.as_str())
                    .collect();
                let d = Diagnostic::new(
                    Lint::RepeatedAction,
                    Some(rule.span),
                    format!("this rule can run action `{name}` twice in one step"),
                )
                .with_state(m.state_name(s))
                .with_event(m.event_name(e))
                .note(format!(
                    "in state `{}` on event `{}` the step runs `{}` (leave actions, the \
                     rule's, enter actions)",
                    m.state_name(s),
                    m.event_name(e),
                    seq.join(", ")
                ))
                .help(format!(
                    "run `{name}` in one place: the rule's `do` list, or the `enter do`/`leave \
                     do` of one state or group"
                ));
                self.emit(d, m.rule_site(r));
            }
            if fires[ri] || rule.guard.is_false() {
                continue;
            }
            // The reachable states the rule's scope governs.
            let members: Vec<StateId> = match rule.scope {
                crate::model::Scope::State(s) => vec![s],
                crate::model::Scope::Group(g) => m.groups[g.index()].states.clone(),
            };
            let Some(&s) = members.iter().find(|s| reachable[s.index()]) else {
                continue;
            };
            // Why it does not fire in `s`: the first cell of `s` that reaches it (earlier
            // rules take its valuations), else one of its events' cells (a scope nearer
            // to the state decides the event).
            let cells = lowered.cells_of(s);
            let reaching = cells
                .iter()
                .find(|c| c.reached.iter().any(|g| g.rules.contains(&r)));
            // A timeout that never fires: why, read off the configurations.
            if let (crate::model::Trigger::After(ticks), Some(g)) = (&rule.trigger, &self.configs) {
                let d = self.dead_timeout(g, r, *ticks, &members, &reachable);
                self.emit(d, m.rule_site(r));
                continue;
            }
            // A rule whose valuations an earlier rule of its own step and scope takes
            // overlaps it: `overlapping_rules` (an error) already says so.
            if let Some(cell) = reaching {
                let bdd = scratch.get_or_insert_with(|| m.bdd.clone());
                let overlapped = cell.reached.iter().any(|g| {
                    let Some(i) = g.rules.iter().position(|x| *x == r) else {
                        return false;
                    };
                    !rule.otherwise
                        && g.rules[..i].iter().any(|x| {
                            let other = &m.rules[x.index()];
                            !other.otherwise && !bdd.and(other.guard, rule.guard).is_false()
                        })
                });
                if overlapped {
                    continue;
                }
            }
            let mut d = Diagnostic::new(
                Lint::DeadRule,
                Some(rule.span),
                "this rule never fires: in every reachable state it applies to, another rule \
                 decides first",
            )
            .with_state(m.state_name(s));
            match reaching {
                Some(cell) => {
                    let event = m.event_name(cell.event);
                    d.notes.push(format!(
                        "in state `{}` on event `{event}`, the rules before it take every \
                         valuation where it would fire",
                        m.state_name(s)
                    ));
                    if let Some(ch) = cell.choices.first() {
                        d.related.push((
                            m.rules[ch.rule.index()].span,
                            "this rule is considered first".into(),
                        ));
                    }
                    d = d.with_event(event);
                }
                None => {
                    let cell = match &rule.trigger {
                        crate::model::Trigger::Events(evs) => Some(lowered.cell_of(s, evs[0])),
                        _ => cells.iter().find(|c| !c.reached.is_empty()),
                    };
                    if let Some(cell) = cell {
                        let event = m.event_name(cell.event);
                        d.notes.push(format!(
                            "in state `{}`, event `{event}` is decided by a scope nearer to the \
                             state",
                            m.state_name(s)
                        ));
                        if let Some(first) = cell.reached.first().and_then(|g| g.rules.first()) {
                            d.related
                                .push((m.rules[first.index()].span, "this rule decides".into()));
                        }
                        d = d.with_event(event);
                    }
                }
            }
            d.helps.push(
                "remove the rule, or change what overrides it (a `_` never hides a named rule; \
                 a member names the event to override its group)"
                    .into(),
            );
            self.emit(d, m.rule_site(r));
        }
    }

    /// `dead_rule` for a timeout rule `r` (`after ticks`) of a reachable scope that no
    /// step of the configuration graph takes: either its timeout never comes due in a
    /// reachable configuration (every way time passes there leaves the scope first, or
    /// the time base is taken by a `preempt` rule each time), or it comes due and an
    /// earlier choice (a preempt rule, an inner scope's timeout, an earlier rule of the
    /// same timeout) takes every valuation where it would fire.
    fn dead_timeout(
        &self,
        g: &crate::configs::ConfigGraph,
        r: RuleId,
        ticks: u32,
        members: &[StateId],
        reachable: &[bool],
    ) -> Diagnostic {
        let m = self.m;
        let rule = &m.rules[r.index()];
        let timer = rule.scope_timer(m);
        let s = members
            .iter()
            .copied()
            .find(|s| reachable[s.index()])
            .unwrap_or(m.start);
        let base = m.timebase.as_ref().map(|tb| tb.event);
        let scope = scope_text(m, rule.scope);
        let when = m.duration_text(ticks);
        // A reachable configuration in the scope on which the time base brings it due.
        let due_at = timer.and_then(|t| {
            g.configs
                .iter()
                .position(|c| members.contains(&c.state) && c.timers[t.index()] + 1 == ticks)
        });
        let mut d = Diagnostic::new(
            Lint::DeadRule,
            Some(rule.span),
            "this rule never fires: in every reachable state it applies to, another rule \
             decides first",
        )
        .with_state(m.state_name(s));
        if let Some(e) = base {
            d = d.with_event(m.event_name(e));
        }
        match due_at {
            None => {
                d.message = format!(
                    "this timeout never fires: no reachable configuration of {scope} counts \
                     to {when}"
                );
                d.notes.push(format!(
                    "every way through {scope} leaves it, or has the time base taken by \
                     another rule, before its timer reaches {when}"
                ));
            }
            Some(i) => {
                let c = &g.configs[i];
                let cell = m.lowered.cell_of(c.state, base.unwrap_or(EventId(0)));
                let at = crate::configs::config_text(m, c);
                d.notes.push(format!(
                    "its timeout comes due in {at}, and the choices before it take every \
                     valuation where it would fire"
                ));
                if let Some(ch) = cell.choices.first() {
                    d.related.push((
                        m.rules[ch.rule.index()].span,
                        "this rule is considered first".into(),
                    ));
                }
            }
        }
        d.helps.push(
            "remove the rule, shorten the timeout, or change what decides the time base first"
                .into(),
        );
        d
    }

    fn never_true_guards(&mut self) {
        let m = self.m;
        for (i, r) in m.rules.iter().enumerate() {
            if r.guard_expr.is_some() && r.guard.is_false() {
                let d = Diagnostic::new(
                    Lint::NeverTrueGuard,
                    Some(r.guard_span),
                    "this guard is never true: no input values satisfy it",
                )
                .note("the rule can never fire");
                self.emit(d, m.rule_site(RuleId::from_index(i)));
            }
        }
    }

    fn unused_declarations(&mut self) {
        let m = self.m;
        let mut event_used = vec![m.clocked; m.events.len()];
        if let Some(tb) = &m.timebase {
            // Named by the `timebase` declaration: it makes the timers count.
            event_used[tb.event.index()] = true;
        }
        let mut input_used = vec![false; m.inputs.len()];
        let mut output_used = vec![false; m.outputs.len()];
        let mut action_used = vec![false; m.actions.len()];
        let mut any_wildcard = false;
        for r in &m.rules {
            match &r.trigger {
                crate::model::Trigger::Events(evs) => {
                    for e in evs {
                        event_used[e.index()] = true;
                    }
                }
                crate::model::Trigger::Wildcard => any_wildcard = true,
                crate::model::Trigger::Tick | crate::model::Trigger::After(_) => {}
            }
            if let Some(g) = &r.guard_expr {
                let mut ins = Vec::new();
                guard_mentions(g, &mut ins);
                for i in ins {
                    input_used[i.index()] = true;
                }
            }
            for o in &r.mealy {
                output_used[o.index()] = true;
            }
            for a in crate::model::actions_of(&r.actions) {
                action_used[a.index()] = true;
            }
        }
        for st in &m.states {
            for o in &st.emit {
                output_used[o.index()] = true;
            }
            for a in st
                .enter
                .iter()
                .chain(&st.leave)
                .filter_map(|op| op.action())
            {
                action_used[a.index()] = true;
            }
        }
        for g in &m.groups {
            for o in &g.emit {
                output_used[o.index()] = true;
            }
            for a in g.enter.iter().chain(&g.leave).filter_map(|op| op.action()) {
                action_used[a.index()] = true;
            }
        }
        let groups: [(&str, &[crate::model::Item], Vec<bool>); 4] = [
            ("event", &m.events, {
                if any_wildcard {
                    vec![true; m.events.len()]
                } else {
                    event_used
                }
            }),
            ("input", &m.inputs, input_used),
            ("output", &m.outputs, output_used),
            ("action", &m.actions, action_used),
        ];
        for (kind, items, used) in groups {
            for (item, used) in items.iter().zip(used) {
                if !used {
                    let what = match kind {
                        "event" => "no rule names it",
                        "input" => "no guard reads it",
                        "output" => "no state, group or rule emits it",
                        _ => "no rule, `enter` or `leave` runs it",
                    };
                    let d = Diagnostic::new(
                        Lint::UnusedDeclaration,
                        Some(item.span),
                        format!("{kind} `{}` is never used: {what}", item.name),
                    );
                    self.emit(d, Site::Machine);
                }
            }
        }
    }

    fn naming(&mut self) {
        let m = self.m;
        let mut found: Vec<(Diagnostic, Site)> = Vec::new();
        let camel = |kind: &str, name: &str, span, site, found: &mut Vec<(Diagnostic, Site)>| {
            if !is_upper_camel(name) {
                found.push((
                    Diagnostic::new(
                        Lint::Naming,
                        Some(span),
                        format!("{kind} `{name}` should have an UpperCamelCase name"),
                    )
                    .help(format!("rename it `{}`", to_upper_camel(name))),
                    site,
                ));
            }
        };
        camel("machine", &m.name, m.span, Site::Machine, &mut found);
        for (i, s) in m.states.iter().enumerate() {
            camel(
                "state",
                &s.name,
                s.span,
                Site::State(StateId::from_index(i)),
                &mut found,
            );
        }
        for (i, g) in m.groups.iter().enumerate() {
            let site = Site::Group(crate::model::GroupId::from_index(i));
            camel("group", &g.name, g.span, site, &mut found);
        }
        if !m.clocked {
            for e in &m.events {
                camel("event", &e.name, e.span, Site::Machine, &mut found);
            }
        }
        for (kind, items) in [
            ("input", &m.inputs),
            ("output", &m.outputs),
            ("action", &m.actions),
        ] {
            for it in items {
                if !is_snake(&it.name) {
                    found.push((
                        Diagnostic::new(
                            Lint::Naming,
                            Some(it.span),
                            format!("{kind} `{}` should have a snake_case name", it.name),
                        )
                        .help(format!("rename it `{}`", to_snake(&it.name))),
                        Site::Machine,
                    ));
                }
            }
        }
        for (d, site) in found {
            self.emit(d, site);
        }
    }
}

/// Where a cell's coverage gap was found.
/// Counter values that make the comparisons of a BDD path (a partial valuation of
/// inputs and comparisons) hold: one `(name, value)` per counter the path compares,
/// the smallest value that fits.
fn counter_witness(m: &Machine, path: &[(u32, bool)]) -> Vec<(String, bool)> {
    let mut out = Vec::new();
    for (ci, c) in m.counters.iter().enumerate() {
        let lits: Vec<(crate::model::AtomId, bool)> = path
            .iter()
            .filter_map(|&(v, b)| m.atom_of_var(v).map(|a| (a, b)))
            .filter(|(a, _)| m.atoms[a.index()].counter.index() == ci)
            .collect();
        if lits.is_empty() {
            continue;
        }
        if let Some(v) =
            (0..=c.max).find(|&v| lits.iter().all(|(a, b)| m.atoms[a.index()].holds(v) == *b))
        {
            // A witness entry is a name and a flag; the value rides in the name.
            out.push((format!("{} = {v}", c.name), true));
        }
    }
    out
}

/// Can some counter values give the comparison values of a variant?
fn variant_feasible(
    m: &Machine,
    cell: &crate::model::lower::Cell,
    v: &crate::model::lower::Variant,
) -> bool {
    cell.atoms.is_empty()
        || m.bdd.sat_under(m.atom_domain, &|var| {
            m.atom_of_var(var)
                .and_then(|a| cell.atoms.binary_search(&a).ok())
                .map(|k| v.atoms[k])
        })
}

#[derive(Clone, Copy, Debug)]
enum Uncovered {
    /// No timers: the cell's own `unhandled`.
    Always,
    /// At this reachable configuration (index into the configuration graph).
    Config(usize),
    /// In a state no configuration reaches, with this variant's timeouts due.
    Variant(usize),
}

/// `the `after 20 ms` timeout of state `Wait` is` / `... timeouts ... are`: a due set.
fn due_text(m: &Machine, due: &[(crate::model::TimerId, u32)]) -> String {
    let parts: Vec<String> = due
        .iter()
        .map(|&(t, d)| {
            format!(
                "`after {}` of {}",
                m.duration_text(d),
                scope_text(m, m.timers[t.index()].scope)
            )
        })
        .collect();
    if parts.len() == 1 {
        format!("the timeout {} is", parts[0])
    } else {
        format!("the timeouts {} are", parts.join(" and "))
    }
}

/// For the rules of one cell, in order: whether each rule's guard meets the union of the
/// guards after it (it can be the earlier rule of an overlapping pair), and whether it
/// meets the union of those before it (the later rule of one). Every overlapping pair
/// `(a, b)`, `a` before `b`, has `a` marked in the first and `b` in the second.
fn overlap_candidates(bdd: &mut BddStore, m: &Machine, rules: &[RuleId]) -> (Vec<bool>, Vec<bool>) {
    // A handful of rules: testing every pair is cheaper than the two passes.
    if rules.len() <= 8 {
        return (vec![true; rules.len()], vec![true; rules.len()]);
    }
    let guard = |r: RuleId| m.rules[r.index()].guard;
    let mut later = vec![false; rules.len()];
    let mut union = Bdd::FALSE;
    for (j, &r) in rules.iter().enumerate() {
        later[j] = !bdd.and(union, guard(r)).is_false();
        union = bdd.or(union, guard(r));
    }
    let mut earlier = vec![false; rules.len()];
    if later.iter().any(|&l| l) {
        let mut union = Bdd::FALSE;
        for (i, &r) in rules.iter().enumerate().rev() {
            earlier[i] = !bdd.and(union, guard(r)).is_false();
            union = bdd.or(union, guard(r));
        }
    }
    (earlier, later)
}

/// `state `Ramp`` or `group `Firing``.
fn scope_text(m: &Machine, scope: crate::model::Scope) -> String {
    match scope {
        crate::model::Scope::State(s) => format!("state `{}`", m.state_name(s)),
        crate::model::Scope::Group(g) => format!("group `{}`", m.groups[g.index()].name),
    }
}

/// When the lookup of a cell reached rules naming the event, and a `_` rule of the
/// state's scopes was not reached: why that `_` does not cover what the named rules
/// leave open. Worded from the cell's `reached` list, so that it follows whatever
/// lookup order the lowered form implements.
fn hidden_wildcard_note(
    m: &Machine,
    cell: &crate::model::lower::Cell,
    event: &str,
) -> Option<String> {
    let named = cell
        .reached
        .iter()
        .find(|g| g.step == crate::model::lower::LookupStep::Named)?;
    let hidden = m.scope_chain(cell.state).into_iter().find(|&sc| {
        !m.scope_rules(sc).wildcard.is_empty()
            && !cell
                .reached
                .iter()
                .any(|g| g.scope == sc && g.step == crate::model::lower::LookupStep::Wildcard)
    })?;
    Some(format!(
        "the `_` rule of {} does not cover `{event}` here: the lookup takes the rules naming \
         `{event}` in {} instead, and what their guards leave open is unhandled",
        scope_text(m, hidden),
        scope_text(m, named.scope)
    ))
}
