//! Proved properties: `never P;` and `recover to S except T, U;` (LANGUAGE.md,
//! "Properties"), reported as the `property` lint with a shortest counterexample.
//!
//! **Steps.** Rule choice comes from the machine's lowered form
//! ([`crate::model::lower`]): each (state, event-class) cell splits the input space into
//! the exact, disjoint regions where each of its choices fires and the `unhandled`
//! remainder (an ignored or rejected step). A step of the machine is one such region
//! ([`StepTable`]); every valuation in it makes the same step, so one concrete valuation
//! (`sat_one`, unmentioned inputs false) stands for it, and the trace replays exactly
//! through the interpreter, which steps through the same lowered form. No `2^inputs`
//! enumeration happens anywhere.
//!
//! **`never P`.** P is evaluated symbolically on each step: the facts a step fixes
//! (the choice's target, the Moore outputs of the state after the step, the choice's
//! Mealy outputs and its operations, enter and leave actions included) turn
//! every non-input atom of P into a constant, leaving a BDD over the inputs P names;
//! the step violates P iff that BDD and the step's atom intersect, and the witness is
//! a satisfying valuation of the intersection. The search is breadth-first from the
//! start state over states (step 0 first: the start state, all inputs false, no
//! actions, no Mealy outputs), so the first violation found has the shortest trace;
//! parent pointers (one `u32` triple per state) rebuild it.
//!
//! **`recover to S`.** Forward breadth-first reachability from the start that does not
//! expand exempted states (so states reachable only through them are exempt too), and
//! backward reachability from S over the reversed step graph (paths through exempted
//! states count: some input sequence reaches S). The first reached state, in BFS
//! order, that cannot reach S is the violation with the shortest trace.
//!
//! **Configurations.** Both searches run over the configuration graph
//! ([`crate::configs`]): a configuration is a state and its timers' values, and each of
//! its steps one cell variant's region. A machine without timers has one configuration
//! per state, so the graph is its state graph; with timers, counterexamples are
//! shortest counting every time-base event, and they print with `Tick *N`.
//!
//! **Cost.** Listing the steps is linear in the cells plus their choices (the regions
//! are the lowered form's, built once at resolution); each search then visits
//! every step once: O(states + steps) time and memory, with flat `u32` tables and no
//! per-state copies.

use crate::configs::{self, ConfigGraph, ConfigLimit};
use crate::diag::{Diagnostic, Lint, TraceStep};
use crate::model::lower::{CellEvents, Op};
use crate::model::{
    ActionId, Bdd, BddStore, Deadline, EventId, Machine, OutputId, Prop, Property, StateId,
};
use std::collections::VecDeque;

const NONE: u32 = u32::MAX;

/// A concrete trace from the start state: (event, full input valuation) per step.
pub type Trace = Vec<(EventId, Vec<bool>)>;

/// A violated `never P`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct NeverViolation {
    /// The shortest trace whose last step makes P true (empty: step 0 does).
    pub trace: Trace,
    /// The state after the violating step.
    pub state: StateId,
    /// The timer values after it (one per timer of the machine; empty without timers).
    pub timers: Vec<u32>,
    /// The counter values after it (one per counter; empty without counters).
    pub counters: Vec<u16>,
    /// Outputs high after the violating step, ascending.
    pub outputs: Vec<OutputId>,
    /// Actions run in the violating step, in order.
    pub actions: Vec<ActionId>,
}

/// A violated `recover to S`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct RecoverViolation {
    /// The reachable state (closest to the start) from which S cannot be reached.
    pub state: StateId,
    /// Its timer values in the configuration that cannot recover (empty without
    /// timers).
    pub timers: Vec<u32>,
    /// Its counter values there (empty without counters).
    pub counters: Vec<u16>,
    /// The shortest trace from the start to it that avoids exempted states.
    pub trace: Trace,
    /// Every state with a reachable, non-exempt configuration that cannot reach S, in
    /// BFS order.
    pub stuck: Vec<StateId>,
}

/// The facts one step fixes, against which P is evaluated.
struct Facts<'a> {
    to: StateId,
    moore: &'a [OutputId],
    mealy: &'a [OutputId],
    /// The operations the step runs, in order.
    ops: &'a [Op],
    /// Step 0: every input reads false.
    step0: bool,
    /// The event the step consumed (`None` at step 0).
    event: Option<EventId>,
    /// The counters after the step.
    counters: &'a [u16],
}

/// P on one step, as a BDD over the inputs P names (a constant when it names none).
fn prop_bdd(m: &Machine, bdd: &mut BddStore, p: &Prop, f: &Facts) -> Bdd {
    match p {
        Prop::Input(i) => {
            if f.step0 {
                Bdd::FALSE
            } else {
                bdd.var(i.0)
            }
        }
        Prop::Output(o) => bdd.constant(f.moore.binary_search(o).is_ok() || f.mealy.contains(o)),
        Prop::Action(a) => bdd.constant(f.ops.contains(&Op::Action(*a))),
        Prop::Event(e) => bdd.constant(f.event == Some(*e)),
        Prop::InState(s) => bdd.constant(f.to == *s),
        Prop::InGroup(g) => bdd.constant(m.group_contains(*g, f.to)),
        Prop::Compare(c, cmp, k) => bdd.constant(cmp.holds(
            u64::from(f.counters.get(c.index()).copied().unwrap_or(0)),
            u64::from(*k),
        )),
        Prop::Const(b) => bdd.constant(*b),
        Prop::Not(a) => {
            let x = prop_bdd(m, bdd, a, f);
            bdd.not(x)
        }
        Prop::And(a, b) => {
            let x = prop_bdd(m, bdd, a, f);
            if x.is_false() {
                return x;
            }
            let y = prop_bdd(m, bdd, b, f);
            bdd.and(x, y)
        }
        Prop::Or(a, b) => {
            let x = prop_bdd(m, bdd, a, f);
            if x.is_true() {
                return x;
            }
            let y = prop_bdd(m, bdd, b, f);
            bdd.or(x, y)
        }
    }
}

fn valuation(m: &Machine, bdd: &BddStore, region: Bdd) -> Vec<bool> {
    crate::model::steps::valuation(m.inputs.len(), bdd, region)
}

/// The trace from the start along `edges` of the configuration graph.
pub fn trace_of_edges(m: &Machine, g: &ConfigGraph, edges: &[u32]) -> Trace {
    trace_of(m, &m.bdd, g, edges)
}

/// The trace from the start along `edges` of the configuration graph.
fn trace_of(m: &Machine, bdd: &BddStore, g: &ConfigGraph, edges: &[u32]) -> Trace {
    edges
        .iter()
        .map(|&e| {
            let edge = &g.edges[e as usize];
            (
                m.lowered.cell(edge.cell).event,
                valuation(m, bdd, edge.region),
            )
        })
        .collect()
}

/// The events a property names, each once.
fn prop_events(p: &Prop, out: &mut Vec<EventId>) {
    match p {
        Prop::Event(e) if !out.contains(e) => out.push(*e),
        Prop::Not(a) => prop_events(a, out),
        Prop::And(a, b) | Prop::Or(a, b) => {
            prop_events(a, out);
            prop_events(b, out);
        }
        _ => {}
    }
}

/// The events a step of `cell` (in state `s`) can stand for, as far as a property
/// can tell them apart: the cell's one event, or, for the rest class, each event of it
/// that the property names (`named`) and one that it does not.
fn class_events(
    m: &Machine,
    s: StateId,
    cell_id: crate::model::lower::CellId,
    named: &[EventId],
    events: &mut Vec<EventId>,
) {
    let lowered = &m.lowered;
    let cell = lowered.cell(cell_id);
    events.clear();
    match cell.events {
        CellEvents::One(e) => events.push(e),
        CellEvents::Rest => {
            events.extend(
                named
                    .iter()
                    .copied()
                    .filter(|&e| lowered.cell_id(s, e) == cell_id),
            );
            if !named.contains(&cell.event) {
                events.push(cell.event);
            } else if let Some(e) = lowered
                .rest_events(m.events.len(), s)
                .into_iter()
                .find(|e| !named.contains(e))
            {
                events.push(e);
            }
        }
    }
}

/// Proves `never P`, or returns the shortest counterexample; an error when the
/// machine has more reachable configurations than exact analysis explores.
pub fn check_never(m: &Machine, prop: &Prop) -> Result<Option<NeverViolation>, ConfigLimit> {
    let mut bdd = m.bdd.clone();
    let g = configs::explore(m)?;
    Ok(check_never_in(m, &mut bdd, &g, prop))
}

fn check_never_in(
    m: &Machine,
    bdd: &mut BddStore,
    g: &ConfigGraph,
    prop: &Prop,
) -> Option<NeverViolation> {
    let lowered = &m.lowered;
    let start = m.start;
    let start_moore = lowered.outputs(lowered.moore(start));
    let start_config = m.start_config();
    let step0 = Facts {
        to: start,
        moore: start_moore,
        mealy: &[],
        ops: &[],
        step0: true,
        event: None,
        counters: &start_config.counters,
    };
    if prop_bdd(m, bdd, prop, &step0).is_true() {
        return Some(NeverViolation {
            trace: Vec::new(),
            state: start,
            timers: start_config.timers,
            counters: start_config.counters,
            outputs: start_moore.to_vec(),
            actions: Vec::new(),
        });
    }
    let mut named = Vec::new();
    prop_events(prop, &mut named);
    let mut events = Vec::new();
    // The configurations are in breadth-first order from the start: the first one with
    // a violating step has the shortest trace.
    for i in 0..g.configs.len() {
        let s = g.configs[i].state;
        for edge in g.out(i) {
            let cell = lowered.cell(edge.cell);
            let fired = edge.choice.map(|k| &cell.choices[k as usize]);
            let (mealy, ops): (&[OutputId], &[Op]) = match fired {
                Some(c) => (lowered.outputs(c.mealy), lowered.seq(c.ops)),
                None => (&[], &[]),
            };
            let after = &g.configs[edge.to as usize];
            let to = after.state;
            class_events(m, s, edge.cell, &named, &mut events);
            let mut hit = None;
            for &event in &events {
                let facts = Facts {
                    to,
                    moore: lowered.outputs(lowered.moore(to)),
                    mealy,
                    ops,
                    step0: false,
                    event: Some(event),
                    counters: &after.counters,
                };
                let p = prop_bdd(m, bdd, prop, &facts);
                let h = bdd.and(p, edge.region);
                if !h.is_false() {
                    hit = Some((event, h, facts.moore));
                    break;
                }
            }
            if let Some((event, hit, moore)) = hit {
                let mut trace = trace_of(m, bdd, g, &g.path_to(i));
                trace.push((event, valuation(m, bdd, hit)));
                let mut outputs = moore.to_vec();
                outputs.extend_from_slice(mealy);
                outputs.sort_unstable();
                outputs.dedup();
                let actions = match fired {
                    Some(c) => lowered.actions(c.ops).collect(),
                    None => Vec::new(),
                };
                return Some(NeverViolation {
                    trace,
                    state: to,
                    timers: after.timers.clone(),
                    counters: after.counters.clone(),
                    outputs,
                    actions,
                });
            }
        }
    }
    None
}

/// A violated `ensure R within SPAN after T`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct EnsureViolation {
    /// The shortest trace whose last step completes the span with `R` never true since
    /// the step that made `T` true.
    pub trace: Trace,
    /// The step that made `T` true (0: the start).
    pub trigger_step: usize,
    /// The state after the last step.
    pub state: StateId,
}

/// Proves `ensure response within SPAN after trigger`, or returns the shortest
/// counterexample; an error past the configuration limit.
pub fn check_ensure(
    m: &Machine,
    response: &Prop,
    within: Deadline,
    trigger: &Prop,
) -> Result<Option<EnsureViolation>, ConfigLimit> {
    let mut bdd = m.bdd.clone();
    let g = configs::explore(m)?;
    check_ensure_in(m, &mut bdd, &g, response, within, trigger)
}

/// The deadline monitor of one search node: 0 when no obligation is open, else the
/// number of counted steps (time-base events, or any steps) that may still pass, the
/// last of them included, before the response is late. Only the oldest open
/// obligation matters: a response discharges every open one, and a later trigger's
/// deadline is never earlier.
type Budget = u32;

/// One node of the search over (configuration, monitor).
struct Node {
    config: u32,
    budget: Budget,
    /// The node it was reached from (`NONE` for the root), by which edge, event and
    /// input region.
    parent: u32,
    event: EventId,
    region: Bdd,
    /// The step at which the open obligation began (meaningful when `budget > 0`).
    since: u32,
    depth: u32,
}

/// Breadth first over pairs of a configuration and the deadline monitor: the first
/// step found that completes a span with no response is the end of a shortest
/// counterexample. Each edge of the configuration graph is split by the input
/// valuations that make the response and the trigger true or false.
fn check_ensure_in(
    m: &Machine,
    bdd: &mut BddStore,
    g: &ConfigGraph,
    response: &Prop,
    within: Deadline,
    trigger: &Prop,
) -> Result<Option<EnsureViolation>, ConfigLimit> {
    let lowered = &m.lowered;
    let (span, counts): (u32, Box<dyn Fn(EventId) -> bool>) = match within {
        Deadline::Steps(k) => (k, Box::new(|_| true)),
        Deadline::Ticks(t) => {
            let tb = m.timebase.as_ref().map(|t| t.event);
            (t, Box::new(move |e| Some(e) == tb))
        }
    };
    let mut named = Vec::new();
    prop_events(response, &mut named);
    prop_events(trigger, &mut named);
    if let Some(tb) = m.timebase.as_ref().map(|t| t.event) {
        if !named.contains(&tb) {
            named.push(tb);
        }
    }
    let start = m.start;
    let start_config = m.start_config();
    let step0 = Facts {
        to: start,
        moore: lowered.outputs(lowered.moore(start)),
        mealy: &[],
        ops: &[],
        step0: true,
        event: None,
        counters: &start_config.counters,
    };
    let r0 = prop_bdd(m, bdd, response, &step0).is_true();
    let t0 = prop_bdd(m, bdd, trigger, &step0).is_true();
    let budget0 = if !r0 && t0 {
        if span == 0 {
            return Ok(Some(EnsureViolation {
                trace: Vec::new(),
                trigger_step: 0,
                state: start,
            }));
        }
        span
    } else {
        0
    };
    let limit = configs::MAX_CONFIGS;
    let mut nodes: Vec<Node> = vec![Node {
        config: 0,
        budget: budget0,
        parent: NONE,
        event: EventId(0),
        region: Bdd::TRUE,
        since: 0,
        depth: 0,
    }];
    let mut seen: crate::fxhash::FxMap<(u32, Budget), ()> = Default::default();
    seen.insert((0, budget0), ());
    let mut events = Vec::new();
    let mut head = 0;
    while head < nodes.len() {
        let (ci, budget, since, depth) = {
            let n = &nodes[head];
            (n.config as usize, n.budget, n.since, n.depth)
        };
        let s = g.configs[ci].state;
        for edge in g.out(ci) {
            let cell = lowered.cell(edge.cell);
            let fired = edge.choice.map(|c| &cell.choices[c as usize]);
            let (mealy, ops): (&[OutputId], &[Op]) = match fired {
                Some(c) => (lowered.outputs(c.mealy), lowered.seq(c.ops)),
                None => (&[], &[]),
            };
            let after = &g.configs[edge.to as usize];
            class_events(m, s, edge.cell, &named, &mut events);
            for &event in &events {
                let facts = Facts {
                    to: after.state,
                    moore: lowered.outputs(lowered.moore(after.state)),
                    mealy,
                    ops,
                    step0: false,
                    event: Some(event),
                    counters: &after.counters,
                };
                let r = prop_bdd(m, bdd, response, &facts);
                let t = prop_bdd(m, bdd, trigger, &facts);
                let not_r = bdd.not(r);
                let not_t = bdd.not(t);
                let counted = counts(event);
                // (response, trigger) for each part of the edge's region.
                for (resp, trig) in [(true, false), (true, true), (false, false), (false, true)] {
                    let a = bdd.and(edge.region, if resp { r } else { not_r });
                    let part = bdd.and(a, if trig { t } else { not_t });
                    if part.is_false() {
                        continue;
                    }
                    let step = depth + 1;
                    let (next, next_since, late) = if resp {
                        (0, 0, false)
                    } else if budget > 0 {
                        let left = if counted { budget - 1 } else { budget };
                        (left, since, left == 0)
                    } else if trig {
                        (span, step, span == 0)
                    } else {
                        (0, 0, false)
                    };
                    if late {
                        let mut steps = vec![(event, valuation(m, bdd, part))];
                        let mut cur = head;
                        while nodes[cur].parent != NONE {
                            let n = &nodes[cur];
                            steps.push((n.event, valuation(m, bdd, n.region)));
                            cur = n.parent as usize;
                        }
                        steps.reverse();
                        return Ok(Some(EnsureViolation {
                            trace: steps,
                            trigger_step: next_since as usize,
                            state: after.state,
                        }));
                    }
                    if seen.insert((edge.to, next), ()).is_none() {
                        if nodes.len() >= limit {
                            return Err(ConfigLimit {
                                machine: m.name.clone(),
                                limit,
                            });
                        }
                        nodes.push(Node {
                            config: edge.to,
                            budget: next,
                            parent: head as u32,
                            event,
                            region: part,
                            since: next_since,
                            depth: step,
                        });
                    }
                }
            }
        }
        head += 1;
    }
    Ok(None)
}

/// Proves `recover to target except ...`, or returns the closest configuration that
/// cannot recover, with the shortest trace to it; an error past the configuration
/// limit.
pub fn check_recover(
    m: &Machine,
    target: StateId,
    except: &[StateId],
) -> Result<Option<RecoverViolation>, ConfigLimit> {
    let g = configs::explore(m)?;
    Ok(check_recover_in(m, &m.bdd, &g, target, except))
}

/// Which configurations can reach a configuration in state `target` (those included),
/// by a backward breadth-first search over the reversed configuration graph (a flat
/// CSR table).
pub fn can_reach(g: &ConfigGraph, target: StateId) -> Vec<bool> {
    let n = g.configs.len();
    let mut offsets = vec![0u32; n + 1];
    for e in &g.edges {
        offsets[e.to as usize + 1] += 1;
    }
    for i in 0..n {
        offsets[i + 1] += offsets[i];
    }
    let mut fill = offsets.clone();
    let mut preds = vec![0u32; g.edges.len()];
    for (k, e) in g.edges.iter().enumerate() {
        let slot = &mut fill[e.to as usize];
        preds[*slot as usize] = g.edge_from[k];
        *slot += 1;
    }
    let mut ok = vec![false; n];
    let mut queue = VecDeque::new();
    for (i, c) in g.configs.iter().enumerate() {
        if c.state == target {
            ok[i] = true;
            queue.push_back(i as u32);
        }
    }
    while let Some(t) = queue.pop_front() {
        let t = t as usize;
        for &p in &preds[offsets[t] as usize..offsets[t + 1] as usize] {
            if !ok[p as usize] {
                ok[p as usize] = true;
                queue.push_back(p);
            }
        }
    }
    ok
}

fn check_recover_in(
    m: &Machine,
    bdd: &BddStore,
    g: &ConfigGraph,
    target: StateId,
    except: &[StateId],
) -> Option<RecoverViolation> {
    let ok = can_reach(g, target);
    let mut exempt = vec![false; m.states.len()];
    for e in except {
        exempt[e.index()] = true;
    }
    // Breadth first from the start, not expanding exempt configurations: its parent
    // edges give shortest traces that avoid them.
    let n = g.configs.len();
    let mut parent = vec![NONE; n];
    let mut seen = vec![false; n];
    seen[0] = true;
    let mut queue = VecDeque::from([0u32]);
    let mut first: Option<u32> = None;
    let mut stuck_seen = vec![false; m.states.len()];
    let mut stuck = Vec::new();
    while let Some(i) = queue.pop_front() {
        let c = &g.configs[i as usize];
        if exempt[c.state.index()] {
            continue;
        }
        if !ok[i as usize] {
            first.get_or_insert(i);
            if !stuck_seen[c.state.index()] {
                stuck_seen[c.state.index()] = true;
                stuck.push(c.state);
            }
        }
        for (k, e) in g.out(i as usize).iter().enumerate() {
            let t = e.to as usize;
            if !seen[t] {
                seen[t] = true;
                parent[t] = g.edge_index(i as usize, k) as u32;
                queue.push_back(e.to);
            }
        }
    }
    let first = first? as usize;
    let mut edges = Vec::new();
    let mut cur = first;
    while parent[cur] != NONE {
        edges.push(parent[cur]);
        cur = g.edge_from[parent[cur] as usize] as usize;
    }
    edges.reverse();
    Some(RecoverViolation {
        state: g.configs[first].state,
        timers: g.configs[first].timers.clone(),
        counters: g.configs[first].counters.clone(),
        trace: trace_of(m, bdd, g, &edges),
        stuck,
    })
}

/// A trace in the diagnostic's form: event names and every input's value per step.
pub fn trace_steps(m: &Machine, trace: &Trace) -> Vec<TraceStep> {
    trace
        .iter()
        .map(|(e, v)| TraceStep {
            event: m.event_name(*e).to_string(),
            inputs: m
                .inputs
                .iter()
                .enumerate()
                .map(|(i, it)| (it.name.clone(), v.get(i).copied().unwrap_or(false)))
                .collect(),
        })
        .collect()
}

fn name_list(names: impl Iterator<Item = String>) -> String {
    let v: Vec<String> = names.map(|n| format!("`{n}`")).collect();
    if v.is_empty() {
        "none".into()
    } else {
        v.join(", ")
    }
}

/// The error of an analysis that stopped at the configuration limit: at the machine,
/// naming the limit and what could not be decided.
pub fn limit_diagnostic(m: &Machine, limit: &ConfigLimit, what: &str) -> Diagnostic {
    Diagnostic::name_error(m.span, limit.to_string()).note(format!(
        "{what} of `{}` are not decided: exact analysis stops at {} configurations \
         (MAX_CONFIGS)",
        m.name, limit.limit
    ))
}

/// Proves every declared property of a machine; one `property` error per violated one.
pub fn check_properties(m: &Machine) -> Vec<Diagnostic> {
    if m.properties.is_empty() {
        return Vec::new();
    }
    let mut bdd = m.bdd.clone();
    let g = match configs::explore(m) {
        Ok(g) => g,
        Err(limit) => return vec![limit_diagnostic(m, &limit, "the properties")],
    };
    let mut out = Vec::new();
    for p in &m.properties {
        match p {
            Property::Never { prop, span, text } => {
                let Some(v) = check_never_in(m, &mut bdd, &g, prop) else {
                    continue;
                };
                let n = v.trace.len();
                let state = m.state_name(v.state);
                let mut d = Diagnostic::new(
                    Lint::Property,
                    Some(*span),
                    format!("property `{text}` is violated at step {n}"),
                )
                .with_state(state)
                .note(format!(
                    "after step {n} the machine is in `{state}`; outputs high: {}; actions run: {}",
                    name_list(v.outputs.iter().map(|o| m.outputs[o.index()].name.clone())),
                    name_list(v.actions.iter().map(|a| m.actions[a.index()].name.clone())),
                ));
                let after = crate::interp::Config {
                    state: v.state,
                    timers: v.timers.clone(),
                    counters: v.counters.clone(),
                };
                if let Some(t) = configs::timers_text(m, &after) {
                    d = d.note(format!("after step {n}, {t}"));
                }
                if let Some(k) = configs::counters_text(m, &after) {
                    d = d.note(format!("after step {n}, the counters are {k}"));
                }
                if n == 0 {
                    d = d
                        .note("step 0 is the start state before any event, with every input false");
                } else if let Some((e, _)) = v.trace.last() {
                    d = d.with_event(m.event_name(*e));
                }
                d.trace = Some(trace_steps(m, &v.trace));
                d.helps
                    .push("replay the trace with `detent run --trace` to see each step".into());
                out.push(d);
            }
            Property::Ensure {
                response,
                within,
                trigger,
                span,
                text,
            } => {
                let v = match check_ensure_in(m, &mut bdd, &g, response, *within, trigger) {
                    Ok(None) => continue,
                    Ok(Some(v)) => v,
                    Err(limit) => {
                        out.push(limit_diagnostic(m, &limit, "the properties"));
                        continue;
                    }
                };
                let n = v.trace.len();
                let state = m.state_name(v.state);
                let span_text = match within {
                    Deadline::Ticks(t) => m.duration_text(*t),
                    Deadline::Steps(k) => format!("{k} steps"),
                };
                let mut d = Diagnostic::new(
                    Lint::Property,
                    Some(*span),
                    format!("property `{text}` is violated at step {n}"),
                )
                .with_state(state)
                .note(format!(
                    "the condition after `after` holds at step {}, and the response does not \
                     hold at any step from there to step {n}, which completes {span_text}",
                    v.trigger_step
                ));
                if let Some((e, _)) = v.trace.last() {
                    d = d.with_event(m.event_name(*e));
                }
                d.trace = Some(trace_steps(m, &v.trace));
                d.helps
                    .push("replay the trace with `detent run --trace` to see each step".into());
                out.push(d);
            }
            Property::Recover {
                target,
                except,
                span,
                text,
            } => {
                let Some(v) = check_recover_in(m, &bdd, &g, *target, except) else {
                    continue;
                };
                let state = m.state_name(v.state);
                let goal = m.state_name(*target);
                let mut d = Diagnostic::new(
                    Lint::Property,
                    Some(*span),
                    format!(
                        "property `{text}` is violated: state `{state}` cannot get back to `{goal}`"
                    ),
                )
                .with_state(state)
                .note(format!(
                    "`{state}` is reached in {} step(s), and no input sequence leads from it to `{goal}`",
                    v.trace.len()
                ));
                let at = crate::interp::Config {
                    state: v.state,
                    timers: v.timers.clone(),
                    counters: v.counters.clone(),
                };
                if let Some(t) = configs::timers_text(m, &at) {
                    d = d.note(format!("`{state}` cannot recover with {t}"));
                }
                if let Some(k) = configs::counters_text(m, &at) {
                    d = d.note(format!("`{state}` cannot recover with the counters at {k}"));
                }
                if v.stuck.len() > 1 {
                    const SHOWN: usize = 8;
                    let more = v.stuck.len().saturating_sub(SHOWN);
                    let mut list = name_list(
                        v.stuck
                            .iter()
                            .take(SHOWN)
                            .map(|s| m.state_name(*s).to_string()),
                    );
                    if more > 0 {
                        list.push_str(&format!(" and {more} more"));
                    }
                    d = d.note(format!("states that cannot recover: {list}"));
                }
                d.trace = Some(trace_steps(m, &v.trace));
                d.helps.push(format!(
                    "add a way from `{state}` back to `{goal}`, or list it after `except` if it is a latched fault"
                ));
                out.push(d);
            }
        }
    }
    out
}
