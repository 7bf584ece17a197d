//! From a resolved [`Machine`] to a drawing: the labels shared by every diagram back end
//! ([`super::dot`] and [`super::svg`]) and the conversion to the SVG renderer's
//! [`Diagram`].
//!
//! What is drawn:
//! - one node per state, labelled with its name, then its Moore outputs (its own and
//!   every enclosing group's, on one line), then `enter do ..` / `leave do ..` lines;
//! - one cluster per group, nested as the groups are, headed by the group's name, its
//!   own Moore outputs (`emit ..`) and its enter/leave actions;
//! - a start marker with an arrow into the start state; terminal states with a double
//!   border;
//! - one edge per (source state, target state) pair, whose label has one line per rule
//!   that takes that way: `event [guard] / outputs; do actions` ([`rule_label`]); a
//!   `preempt` rule's line starts with `preempt` and its edge is drawn bold (DOT
//!   `style=bold`, a wider stroke in SVG), `[else]` marks an `else` rule.
//!
//! Rule choice comes from the machine's lowered form ([`crate::model::lower`]): the
//! rules drawn from a state are the choices of its cells, the rules that can fire there.
//! Inherited group rules are therefore drawn from each member state that actually uses
//! them (a member that overrides an event does not get the group's edge for it), so
//! that every edge is true of its source state, and a rule that can never fire is not
//! drawn. When
//! every member of a group uses one of the group's rules for the same events and the
//! rule leads out of the group, both back ends draw it once, from the cluster's border
//! ([`lifted_group_rules`]; DOT's `ltail`, the SVG's [`Edge::from_cluster`]): in the
//! greenhouse example that turns four long `WindAlarm` edges into one. A rule's trigger
//! is shown as
//! written for the events it governs in that state: its event names (only those whose
//! cell has it as a choice there), `any other event` for a wildcard rule (`_`, which a
//! lone underscore on a drawing does not say), nothing in a clocked machine. Actions on an edge are the rule's own (`do` list); the leave and enter
//! actions a transition also runs are shown on the states and clusters, as in the spec.
//! `=> stay` and an external self-transition `=> S` are both drawn as a loop on `S`.
//!
//! Cost: one cell lookup per (state, event) and one line per (state, rule) used, so
//! O(states x events x choices per cell).

use super::svg::{Cluster, Diagram, Edge, Node};
use crate::model::{EventId, GroupId, Machine, OutputId, RuleId, StateId, Trigger};
use crate::table::guard_text;

/// One edge of the drawing: every rule that leads from `from` to `to`, one label line
/// each.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Transition {
    /// The source state.
    pub from: StateId,
    /// The target state (the source itself for `stay` and self-transitions).
    pub to: StateId,
    /// One [`rule_label`] per rule, in the order the rules are first used.
    pub lines: Vec<String>,
    /// Some rule on the edge is a `preempt` rule: drawn bold (its line also starts
    /// with `preempt`), so that a reader sees no member can override it.
    pub preempt: bool,
}

fn output_list(m: &Machine, outs: &[OutputId]) -> String {
    outs.iter()
        .map(|o| m.outputs[o.index()].name.as_str())
        .collect::<Vec<_>>()
        .join(", ")
}

fn action_list(m: &Machine, acts: &[crate::model::Op]) -> String {
    m.ops_text(acts)
}

/// The label of a rule as used by some state for `events`:
/// `Ev1 | Ev2 [guard] / out1, out2; do act1, act2`. The trigger is `any other event`
/// for a `_` rule and absent in a clocked machine; a preempt rule's label starts with
/// `preempt`; the guard in brackets only when the rule has one (`[else]` for an `else`
/// rule); `/ ..` only when the rule has Mealy outputs or actions (`/ do act` when it has
/// actions only).
pub fn rule_label(m: &Machine, events: &[EventId], rule: RuleId) -> String {
    let r = &m.rules[rule.index()];
    let mut parts: Vec<String> = Vec::new();
    if r.preempt {
        parts.push("preempt".into());
    }
    match r.trigger {
        Trigger::Tick => {}
        Trigger::After(d) => parts.push(format!("after {}", m.duration_text(d))),
        // `_` reads as words on a drawing: the events no other rule of the scope names.
        Trigger::Wildcard => parts.push("any other event".into()),
        Trigger::Events(_) => parts.push(
            events
                .iter()
                .map(|e| m.event_name(*e))
                .collect::<Vec<_>>()
                .join(" | "),
        ),
    }
    if let Some(g) = &r.guard_expr {
        parts.push(format!("[{}]", guard_text(m, g)));
    } else if r.otherwise {
        parts.push("[else]".into());
    }
    let mut effects = Vec::new();
    if !r.mealy.is_empty() {
        effects.push(output_list(m, &r.mealy));
    }
    if !r.actions.is_empty() {
        effects.push(format!("do {}", action_list(m, &r.actions)));
    }
    if !effects.is_empty() {
        parts.push(format!("/ {}", effects.join("; ")));
    }
    parts.join(" ")
}

/// A group rule drawn once from its group's cluster (see [`lifted_group_rules`]).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct GroupTransition {
    /// The group whose cluster the edge leaves.
    pub group: GroupId,
    /// The target state, outside the group.
    pub to: StateId,
    /// The rules drawn on this edge.
    pub rules: Vec<RuleId>,
    /// One [`rule_label`] per rule.
    pub lines: Vec<String>,
}

/// The rules of each group that every member state uses for the same (non-empty) set of
/// events and that lead out of the group: drawing them once from the cluster says the
/// same as drawing them from every member. Merged per (group, target), groups in
/// declaration order.
pub fn lifted_group_rules(m: &Machine) -> Vec<GroupTransition> {
    let mut out: Vec<GroupTransition> = Vec::new();
    for (gi, group) in m.groups.iter().enumerate() {
        let g = GroupId::from_index(gi);
        let Some(&first) = group.states.first() else {
            continue;
        };
        let own: Vec<RuleId> = (0..m.rules.len())
            .map(RuleId::from_index)
            .filter(|r| m.rules[r.index()].scope == crate::model::Scope::Group(g))
            .collect();
        for r in own {
            let crate::model::Target::To(to) = m.rules[r.index()].target else {
                continue;
            };
            if m.group_contains(g, to) {
                continue;
            }
            let events_of = |s: StateId| -> Vec<EventId> {
                (0..m.events.len())
                    .map(EventId::from_index)
                    .filter(|&e| {
                        let cell = m.lowered.cell_of(s, e);
                        cell.choices.iter().any(|c| c.rule == r)
                    })
                    .collect()
            };
            let evs = events_of(first);
            if evs.is_empty() || group.states.iter().any(|&s| events_of(s) != evs) {
                continue;
            }
            let line = rule_label(m, &evs, r);
            match out.iter_mut().find(|t| t.group == g && t.to == to) {
                Some(t) => {
                    t.rules.push(r);
                    t.lines.push(line);
                }
                None => out.push(GroupTransition {
                    group: g,
                    to,
                    rules: vec![r],
                    lines: vec![line],
                }),
            }
        }
    }
    out
}

/// The edges of the drawing, sources in state order; the edges of one source in the
/// order of their first rule (events in declaration order, rules in source order).
pub fn transitions(m: &Machine) -> Vec<Transition> {
    transitions_except(m, &[])
}

/// [`transitions`] without the rules in `skip` (those drawn from a cluster instead).
pub fn transitions_except(m: &Machine, skip: &[RuleId]) -> Vec<Transition> {
    let mut out = Vec::new();
    for si in 0..m.states.len() {
        let s = StateId::from_index(si);
        // (target, rule, events it governs here), in first-use order.
        let mut used: Vec<(StateId, RuleId, Vec<EventId>)> = Vec::new();
        for ei in 0..m.events.len() {
            let e = EventId::from_index(ei);
            let cell = m.lowered.cell_of(s, e);
            for c in cell.choices.iter().filter(|c| !skip.contains(&c.rule)) {
                match used.iter_mut().find(|(_, u, _)| *u == c.rule) {
                    Some((_, _, evs)) => evs.push(e),
                    None => used.push((c.target, c.rule, vec![e])),
                }
            }
        }
        let mut edges: Vec<Transition> = Vec::new();
        for (to, r, evs) in used {
            let line = rule_label(m, &evs, r);
            let preempt = m.rules[r.index()].preempt;
            match edges.iter_mut().find(|t| t.to == to) {
                Some(t) => {
                    t.lines.push(line);
                    t.preempt |= preempt;
                }
                None => edges.push(Transition {
                    from: s,
                    to,
                    lines: vec![line],
                    preempt,
                }),
            }
        }
        out.extend(edges);
    }
    out
}

/// The lines under a state's name: its Moore outputs (all of them, inherited ones too)
/// on one line, then `enter do ..` and `leave do ..` when it has such actions.
pub fn state_detail(m: &Machine, s: StateId) -> Vec<String> {
    let st = &m.states[s.index()];
    let mut lines = Vec::new();
    if !st.moore.is_empty() {
        lines.push(output_list(m, &st.moore));
    }
    if !st.enter.is_empty() {
        lines.push(format!("enter do {}", action_list(m, &st.enter)));
    }
    if !st.leave.is_empty() {
        lines.push(format!("leave do {}", action_list(m, &st.leave)));
    }
    lines
}

/// The heading lines of a group's cluster: the name, then `emit ..` for the group's own
/// Moore outputs, `enter do ..`, `leave do ..` when present.
pub fn group_header(m: &Machine, g: GroupId) -> Vec<String> {
    let gr = &m.groups[g.index()];
    let mut lines = vec![gr.name.clone()];
    if !gr.emit.is_empty() {
        lines.push(format!("emit {}", output_list(m, &gr.emit)));
    }
    if !gr.enter.is_empty() {
        lines.push(format!("enter do {}", action_list(m, &gr.enter)));
    }
    if !gr.leave.is_empty() {
        lines.push(format!("leave do {}", action_list(m, &gr.leave)));
    }
    lines
}

/// The machine as a [`Diagram`] for [`super::svg::render_svg`]: nodes in state order,
/// clusters in group order, edges from [`transitions`] with their lines joined by `\n`.
/// The SVG renderer draws a cluster's name on one line, so the group header's lines are
/// joined by ` · ` there.
pub fn to_diagram(m: &Machine) -> Diagram {
    let lifted = lifted_group_rules(m);
    let skip: Vec<RuleId> = lifted
        .iter()
        .flat_map(|t| t.rules.iter().copied())
        .collect();
    Diagram {
        title: m.name.clone(),
        nodes: (0..m.states.len())
            .map(|i| {
                let st = &m.states[i];
                Node {
                    name: st.name.clone(),
                    detail: state_detail(m, StateId::from_index(i)),
                    cluster: st.parent.map(GroupId::index),
                    terminal: st.terminal,
                }
            })
            .collect(),
        edges: lifted
            .iter()
            .map(|t| Edge {
                from: m.groups[t.group.index()].states[0].index(),
                to: t.to.index(),
                label: t.lines.join("\n"),
                from_cluster: Some(t.group.index()),
            })
            .chain(transitions_except(m, &skip).into_iter().map(|t| Edge {
                from: t.from.index(),
                to: t.to.index(),
                label: t.lines.join("\n"),
                from_cluster: None,
            }))
            .collect(),
        clusters: (0..m.groups.len())
            .map(|i| Cluster {
                name: group_header(m, GroupId::from_index(i)).join(" · "),
                parent: m.groups[i].parent.map(GroupId::index),
            })
            .collect(),
        start: Some(m.start.index()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::machine;

    /// The bilge pump of LANGUAGE.md, with a member that overrides its group's rule.
    const PUMP: &str = "
        machine BilgePump {
            events FloatUp, FloatDown, Tick, ManualOn, ManualOff;
            inputs pump_current_ok;
            outputs pump, alarm;
            actions start_timer, log_fault;
            start Idle;
            unhandled ignore;
            state Idle {
                FloatUp | ManualOn => Pumping, do start_timer;
                FloatDown | Tick | ManualOff => stay;
            }
            group Running emit pump {
                enter do start_timer;
                ManualOff => Idle;
                Tick => DryRun;
                state Pumping {
                    Tick if !pump_current_ok => DryRun, emit alarm, do log_fault;
                    Tick if pump_current_ok => stay;
                    FloatDown => Draining, do start_timer;
                }
                state Draining {
                    FloatUp => Pumping;
                }
            }
            terminal state DryRun emit alarm { _ => stay; }
        }";

    #[test]
    fn labels_follow_scope_lookup() {
        let m = machine(PUMP);
        let t = transitions(&m);
        let show: Vec<String> = t
            .iter()
            .map(|t| {
                format!(
                    "{} -> {}: {}",
                    m.state_name(t.from),
                    m.state_name(t.to),
                    t.lines.join(" // ")
                )
            })
            .collect();
        // Worked by hand: Pumping overrides the group's Tick rule, so only Draining gets
        // the inherited `Tick => DryRun` edge; both get `ManualOff => Idle`.
        assert_eq!(
            show,
            [
                "Idle -> Pumping: FloatUp | ManualOn / do start_timer",
                "Idle -> Idle: FloatDown | Tick | ManualOff",
                "Pumping -> Draining: FloatDown / do start_timer",
                "Pumping -> DryRun: Tick [!pump_current_ok] / alarm; do log_fault",
                "Pumping -> Pumping: Tick [pump_current_ok]",
                "Pumping -> Idle: ManualOff",
                "Draining -> Pumping: FloatUp",
                "Draining -> DryRun: Tick",
                "Draining -> Idle: ManualOff",
                "DryRun -> DryRun: any other event",
            ]
        );
        assert_eq!(state_detail(&m, StateId(1)), ["pump"]);
        assert_eq!(
            group_header(&m, GroupId(0)),
            ["Running", "emit pump", "enter do start_timer"]
        );
    }

    #[test]
    fn group_rules_used_by_every_member_are_lifted() {
        let m = machine(PUMP);
        let lifted = lifted_group_rules(&m);
        // `ManualOff => Idle` is used by both members; `Tick => DryRun` is overridden in
        // Pumping, so it stays on Draining alone.
        assert_eq!(lifted.len(), 1);
        assert_eq!(lifted[0].group, GroupId(0));
        assert_eq!(m.state_name(lifted[0].to), "Idle");
        assert_eq!(lifted[0].lines, ["ManualOff"]);
        let rest = transitions_except(&m, &lifted[0].rules);
        assert_eq!(rest.len(), 8);
        assert!(rest
            .iter()
            .all(|t| !(m.state_name(t.to) == "Idle" && t.from != StateId(0))));
    }

    #[test]
    fn diagram_mirrors_the_machine() {
        let m = machine(PUMP);
        let d = to_diagram(&m);
        assert_eq!(d.title, "BilgePump");
        let names: Vec<&str> = d.nodes.iter().map(|n| n.name.as_str()).collect();
        assert_eq!(names, ["Idle", "Pumping", "Draining", "DryRun"]);
        assert_eq!(d.nodes[1].cluster, Some(0));
        assert_eq!(d.nodes[0].cluster, None);
        assert!(d.nodes[3].terminal && !d.nodes[0].terminal);
        assert_eq!(d.nodes[3].detail, ["alarm"]);
        assert_eq!(
            d.clusters[0].name,
            "Running · emit pump · enter do start_timer"
        );
        assert_eq!(d.start, Some(0));
        // The group's `ManualOff` rule is one edge from the group's border.
        assert_eq!(d.edges.len(), 9);
        assert!(
            d.edges
                .iter()
                .any(|e| e.label == "FloatDown | Tick | ManualOff"),
            "one edge per (from, to) pair: {:?}",
            d.edges.iter().map(|e| &e.label).collect::<Vec<_>>()
        );
    }

    #[test]
    fn clocked_labels_have_no_event_and_parallel_rules_merge() {
        let m = machine(
            "machine Det {
                inputs bit;
                outputs found, edge;
                start S0;
                state S0 { if bit => S1, emit edge; if !bit => S1; }
                state S1 emit found { if true => S0; }
            }",
        );
        let t = transitions(&m);
        assert_eq!(t.len(), 2);
        assert_eq!(t[0].lines, ["[bit] / edge", "[!bit]"]);
        assert_eq!(t[1].lines, ["[true]"]);
    }
}
