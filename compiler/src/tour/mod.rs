//! Transition tours: an input sequence from the start state that fires every reachable
//! transition at least once, as short as practical.
//!
//! **Transitions.** Rule choice comes from the machine's lowered form
//! ([`crate::model::lower`]). A transition is a (state, event, rule) triple: in a
//! reachable state, an event of a cell in which the rule is a choice (its firing region
//! is never empty; the steps are listed by [`crate::model::steps::StepTable`]). A `_`
//! rule or an `A | B` trigger gives one transition per event of the cell it fires in.
//! Ignored and rejected steps are no transitions (they fire no rule). Each transition is
//! driven by one concrete valuation of its region (`sat_one`, other inputs false); the
//! graph has the reachable states as nodes and the transitions as edges.
//!
//! **Strongly connected machines: a Chinese-postman tour** (Edmonds and Johnson,
//! "Matching, Euler tours and the Chinese postman", 1973, for the directed case). Every
//! edge must be walked; a node with more incoming than outgoing edges needs that many
//! extra walks leaving it, which end at nodes with more outgoing edges. The cheapest
//! extra walks are shortest paths (breadth-first search, unit cost per step), paired
//! by a minimum-cost assignment of surplus units to deficit units (the Hungarian
//! method, Kuhn 1955 and Munkres 1957, O(u^3) for u units; past [`HUNGARIAN_LIMIT`]
//! units a greedy nearest pairing is used instead). The balanced multigraph has an
//! Euler circuit, found by Hierholzer's algorithm (1873) from the start state; the
//! circuit is cut after the last edge it walks for the first time (the walk back to
//! the start is not needed). Cost O(u (n + E) + u^3 + E).
//!
//! **Otherwise: greedy cover.** From the current state, take an uncovered transition if
//! the state has one, else walk a shortest path (breadth-first) to the nearest state
//! that has one; when none is reachable from the current state, reset to the start
//! (marked [`TourStep::Reset`]). Resets happen only when nothing uncovered is
//! reachable. Cost O(E (n + E)) at worst, usually far less.
//!
//! **Machines with timers: greedy cover over configurations.** A timeout fires only
//! after enough time-base events, so the tour walks the configuration graph
//! ([`crate::configs`]) instead of the state graph, with ignored time-base steps as
//! steps (they advance the timers): from the current configuration, the nearest step
//! that fires an uncovered (state, event, rule), breadth first; a restart when none is
//! reachable. Every timeout rule that can fire is covered. Printed, runs of equal steps
//! become `Tick *N`.
//!
//! `covers` is counted by replaying the tour through the reference interpreter, not
//! taken from the construction.

use crate::configs::ConfigGraph;
use crate::model::graph::strongly_connected;
use crate::model::lower::CellId;
use crate::model::steps::{valuation, StepTable};
use crate::model::{EventId, Machine, RuleId, StateId};
use std::collections::{HashMap, HashSet, VecDeque};

/// Above this many surplus units, pairing is greedy instead of optimal.
pub const HUNGARIAN_LIMIT: usize = 600;

/// One element of a tour.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum TourStep {
    /// Back to the start state (a reset of the machine).
    Reset,
    /// One step: an event and the value of every input, in declaration order.
    Step {
        /// The event.
        event: EventId,
        /// Every input's value.
        inputs: Vec<bool>,
    },
}

/// A tour and what it covers.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Tour {
    /// The sequence, from the start state.
    pub steps: Vec<TourStep>,
    /// Distinct reachable transitions the tour fires (by replay).
    pub covers: usize,
    /// Reachable transitions in all.
    pub transitions: usize,
    /// True when the reachable part is strongly connected (a postman tour was built).
    pub strongly_connected: bool,
}

impl Tour {
    /// Number of event steps (resets not counted).
    pub fn len_steps(&self) -> usize {
        self.steps
            .iter()
            .filter(|s| matches!(s, TourStep::Step { .. }))
            .count()
    }

    /// Number of resets.
    pub fn resets(&self) -> usize {
        self.steps.len() - self.len_steps()
    }
}

/// A transition: the edge of the tour graph.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Transition {
    /// Source state.
    pub from: StateId,
    /// The event.
    pub event: EventId,
    /// The rule that fires.
    pub rule: RuleId,
    /// Target state.
    pub to: StateId,
    /// A valuation that fires the rule.
    pub inputs: Vec<bool>,
}

/// Every reachable transition, grouped by source state in state order. For a machine
/// with timers, reachability and the valuations come from the configuration graph, and
/// a transition's `inputs` fire it from the first configuration that can.
pub fn transitions(m: &Machine) -> Vec<Transition> {
    if m.has_configs() {
        return match crate::configs::explore(m) {
            Ok(g) => timed_transitions(m, &g).0,
            Err(_) => Vec::new(),
        };
    }
    let table = StepTable::build(m);
    let n = m.states.len();
    let mut seen = vec![false; n];
    seen[m.start.index()] = true;
    let mut queue = VecDeque::from([m.start]);
    while let Some(s) = queue.pop_front() {
        for step in table.of(s) {
            if step.choice.is_some() && !seen[step.to.index()] {
                seen[step.to.index()] = true;
                queue.push_back(step.to);
            }
        }
    }
    let mut out = Vec::new();
    for (si, &reached) in seen.iter().enumerate() {
        if !reached {
            continue;
        }
        let s = StateId::from_index(si);
        // The events of the cell the steps are in (a cell's steps are consecutive).
        let mut events: Option<(CellId, Vec<EventId>)> = None;
        for step in table.of(s) {
            let Some(rule) = step.rule(m) else { continue };
            let inputs = valuation(m.inputs.len(), &m.bdd, step.atom);
            if events.as_ref().is_none_or(|(c, _)| *c != step.cell) {
                let cell = m.lowered.cell(step.cell);
                events = Some((step.cell, m.lowered.cell_events(m.events.len(), cell)));
            }
            for &event in events.iter().flat_map(|(_, evs)| evs) {
                out.push(Transition {
                    from: s,
                    event,
                    rule,
                    to: step.to,
                    inputs: inputs.clone(),
                });
            }
        }
    }
    out
}

/// The distinct (state, event, rule) triples a sequence fires from the start
/// configuration, replayed through the reference interpreter.
pub fn fired(m: &Machine, steps: &[TourStep]) -> HashSet<(StateId, EventId, RuleId)> {
    let mut out = HashSet::new();
    let mut config = m.start_config();
    for step in steps {
        match step {
            TourStep::Reset => config = m.start_config(),
            TourStep::Step { event, inputs } => {
                let state = config.state;
                let r = m.step_config(&mut config, *event, inputs);
                if let crate::interp::Outcome::Fired(rule) = r.outcome {
                    out.insert((state, *event, rule));
                }
            }
        }
    }
    out
}

/// The transitions of a machine with timers (each (state, event, rule) once, from the
/// first configuration in breadth-first order that fires it) and, per edge of the
/// configuration graph, the transitions it stands for (indices into the first list).
fn timed_transitions(m: &Machine, g: &ConfigGraph) -> (Vec<Transition>, Vec<Vec<u32>>) {
    let mut index: HashMap<(StateId, EventId, RuleId), u32> = HashMap::new();
    let mut out: Vec<Transition> = Vec::new();
    let mut of_edge = vec![Vec::new(); g.edges.len()];
    for i in 0..g.configs.len() {
        let from = g.configs[i].state;
        for (k, e) in g.out(i).iter().enumerate() {
            let Some(choice) = e.choice else { continue };
            let cell = m.lowered.cell(e.cell);
            let ch = &cell.choices[choice as usize];
            for event in m.lowered.cell_events(m.events.len(), cell) {
                let key = (from, event, ch.rule);
                let t = *index.entry(key).or_insert_with(|| {
                    out.push(Transition {
                        from,
                        event,
                        rule: ch.rule,
                        to: ch.target,
                        inputs: valuation(m.inputs.len(), &m.bdd, e.region),
                    });
                    (out.len() - 1) as u32
                });
                of_edge[g.edge_index(i, k)].push(t);
            }
        }
    }
    (out, of_edge)
}

/// The tour of a machine with timers: a greedy cover over its configuration graph.
/// From the current configuration, breadth-first search (every step counts, ignored
/// time-base events included, since they advance the timers) finds the nearest
/// configuration with a step that fires an uncovered transition; the path and that
/// step are walked; when no uncovered transition is reachable, the tour restarts from
/// the start configuration (when one is reachable from there). Every transition,
/// timeouts included, is reachable from the start, so the cover is complete. Cost
/// O(T (C + E)) for T transitions, C configurations and E steps between them.
fn tour_timed(m: &Machine) -> Tour {
    let Ok(g) = crate::configs::explore(m) else {
        return Tour {
            steps: Vec::new(),
            covers: 0,
            transitions: 0,
            strongly_connected: false,
        };
    };
    let (edges, of_edge) = timed_transitions(m, &g);
    let mut covered = vec![false; edges.len()];
    let mut left = edges.len();
    let mut steps = Vec::new();
    let n = g.configs.len();
    let mut cur = 0usize;
    let step_of = |e: usize, event: EventId| TourStep::Step {
        event,
        inputs: valuation(m.inputs.len(), &m.bdd, g.edges[e].region),
    };
    let mut parent = vec![u32::MAX; n];
    let mut seen = vec![false; n];
    while left > 0 {
        // Breadth first from `cur` to the nearest step that covers something new.
        parent.fill(u32::MAX);
        seen.fill(false);
        seen[cur] = true;
        let mut queue = VecDeque::from([cur as u32]);
        let mut found = None;
        'search: while let Some(i) = queue.pop_front() {
            let i = i as usize;
            for (k, e) in g.out(i).iter().enumerate() {
                let id = g.edge_index(i, k);
                if let Some(&t) = of_edge[id].iter().find(|&&t| !covered[t as usize]) {
                    found = Some((i, id, t));
                    break 'search;
                }
                let to = e.to as usize;
                if !seen[to] {
                    seen[to] = true;
                    parent[to] = id as u32;
                    queue.push_back(e.to);
                }
            }
        }
        let Some((at, id, t)) = found else {
            if cur == 0 {
                break;
            }
            steps.push(TourStep::Reset);
            cur = 0;
            continue;
        };
        let mut path = Vec::new();
        let mut x = at;
        while x != cur {
            let e = parent[x] as usize;
            path.push(e);
            x = g.edge_from[e] as usize;
        }
        for &e in path.iter().rev() {
            let event = m.lowered.cell(g.edges[e].cell).event;
            steps.push(step_of(e, event));
        }
        steps.push(step_of(id, edges[t as usize].event));
        covered[t as usize] = true;
        left -= 1;
        cur = g.edges[id].to as usize;
    }
    let want: HashSet<(StateId, EventId, RuleId)> =
        edges.iter().map(|e| (e.from, e.event, e.rule)).collect();
    let covers = fired(m, &steps).intersection(&want).count();
    Tour {
        steps,
        covers,
        transitions: want.len(),
        strongly_connected: false,
    }
}

/// Out-edge lists over edge ids.
fn out_lists(n: usize, edges: &[Transition]) -> Vec<Vec<u32>> {
    let mut adj = vec![Vec::new(); n];
    for (i, e) in edges.iter().enumerate() {
        adj[e.from.index()].push(i as u32);
    }
    adj
}

/// Breadth-first search from `src`: distance and parent edge per state.
fn bfs(n: usize, edges: &[Transition], adj: &[Vec<u32>], src: usize) -> (Vec<u32>, Vec<u32>) {
    let mut dist = vec![u32::MAX; n];
    let mut parent = vec![u32::MAX; n];
    dist[src] = 0;
    let mut queue = VecDeque::from([src]);
    while let Some(v) = queue.pop_front() {
        for &e in &adj[v] {
            let t = edges[e as usize].to.index();
            if dist[t] == u32::MAX {
                dist[t] = dist[v] + 1;
                parent[t] = e;
                queue.push_back(t);
            }
        }
    }
    (dist, parent)
}

/// The edge ids of the BFS path to `dst` (from the BFS root).
fn path_to(edges: &[Transition], parent: &[u32], dst: usize) -> Vec<u32> {
    let mut path = Vec::new();
    let mut v = dst;
    while parent[v] != u32::MAX {
        let e = parent[v];
        path.push(e);
        v = edges[e as usize].from.index();
    }
    path.reverse();
    path
}

/// Minimum-cost perfect assignment on a square cost matrix (Hungarian method with
/// potentials, from memory of the Kuhn-Munkres formulation): `result[row] = column`.
pub fn assignment(cost: &[Vec<i64>]) -> Vec<usize> {
    let n = cost.len();
    const INF: i64 = i64::MAX / 4;
    // 1-based arrays; column 0 is the virtual start.
    let mut u = vec![0i64; n + 1];
    let mut v = vec![0i64; n + 1];
    let mut p = vec![0usize; n + 1];
    let mut way = vec![0usize; n + 1];
    for i in 1..=n {
        p[0] = i;
        let mut j0 = 0usize;
        let mut minv = vec![INF; n + 1];
        let mut used = vec![false; n + 1];
        loop {
            used[j0] = true;
            let i0 = p[j0];
            let mut delta = INF;
            let mut j1 = 0usize;
            for j in 1..=n {
                if !used[j] {
                    let cur = cost[i0 - 1][j - 1] - u[i0] - v[j];
                    if cur < minv[j] {
                        minv[j] = cur;
                        way[j] = j0;
                    }
                    if minv[j] < delta {
                        delta = minv[j];
                        j1 = j;
                    }
                }
            }
            for j in 0..=n {
                if used[j] {
                    u[p[j]] += delta;
                    v[j] -= delta;
                } else {
                    minv[j] -= delta;
                }
            }
            j0 = j1;
            if p[j0] == 0 {
                break;
            }
        }
        loop {
            let j1 = way[j0];
            p[j0] = p[j1];
            j0 = j1;
            if j0 == 0 {
                break;
            }
        }
    }
    let mut result = vec![0usize; n];
    for j in 1..=n {
        if p[j] != 0 {
            result[p[j] - 1] = j - 1;
        }
    }
    result
}

/// Postman tour over a strongly connected graph: edge ids in walking order.
fn postman(n: usize, start: usize, edges: &[Transition]) -> Vec<u32> {
    let adj = out_lists(n, edges);
    let mut balance = vec![0i64; n]; // out - in
    for e in edges {
        balance[e.from.index()] += 1;
        balance[e.to.index()] -= 1;
    }
    // Surplus units: nodes with more in than out, where extra walks start.
    let mut surplus = Vec::new();
    let mut deficit = Vec::new();
    for (v, &b) in balance.iter().enumerate() {
        for _ in 0..(-b).max(0) {
            surplus.push(v);
        }
        for _ in 0..b.max(0) {
            deficit.push(v);
        }
    }
    // Distances from each distinct surplus node.
    let mut sources: Vec<usize> = surplus.clone();
    sources.dedup();
    let mut bfs_of: Vec<Option<(Vec<u32>, Vec<u32>)>> = vec![None; n];
    for &s in &sources {
        bfs_of[s] = Some(bfs(n, edges, &adj, s));
    }
    let dist = |s: usize, d: usize| -> i64 {
        bfs_of[s]
            .as_ref()
            .map(|(dist, _)| dist[d] as i64)
            .unwrap_or(i64::MAX / 8)
    };
    let pairs: Vec<(usize, usize)> = if surplus.len() <= HUNGARIAN_LIMIT {
        let cost: Vec<Vec<i64>> = surplus
            .iter()
            .map(|&s| deficit.iter().map(|&d| dist(s, d)).collect())
            .collect();
        let a = assignment(&cost);
        surplus
            .iter()
            .enumerate()
            .map(|(i, &s)| (s, deficit[a[i]]))
            .collect()
    } else {
        let mut taken = vec![false; deficit.len()];
        surplus
            .iter()
            .map(|&s| {
                let (j, _) = deficit
                    .iter()
                    .enumerate()
                    .filter(|(j, _)| !taken[*j])
                    .min_by_key(|(_, &d)| dist(s, d))
                    .unwrap_or((0, &s));
                taken[j] = true;
                (s, deficit[j])
            })
            .collect()
    };
    // The balanced multigraph: every edge once, plus the paths' edges again.
    let mut multi: Vec<Vec<u32>> = adj.clone();
    for (s, d) in pairs {
        if let Some((_, parent)) = &bfs_of[s] {
            for e in path_to(edges, parent, d) {
                multi[edges[e as usize].from.index()].push(e);
            }
        }
    }
    // Hierholzer, iterative.
    let mut next = vec![0usize; n];
    let mut stack: Vec<(usize, u32)> = vec![(start, u32::MAX)];
    let mut circuit = Vec::new();
    while let Some(&(v, via)) = stack.last() {
        if next[v] < multi[v].len() {
            let e = multi[v][next[v]];
            next[v] += 1;
            stack.push((edges[e as usize].to.index(), e));
        } else {
            stack.pop();
            if via != u32::MAX {
                circuit.push(via);
            }
        }
    }
    circuit.reverse();
    // Cut after the last first-time edge.
    let mut seen = vec![false; edges.len()];
    let mut keep = 0;
    for (i, &e) in circuit.iter().enumerate() {
        if !seen[e as usize] {
            seen[e as usize] = true;
            keep = i + 1;
        }
    }
    circuit.truncate(keep);
    circuit
}

/// Greedy cover with resets: edge ids, `u32::MAX` marking a reset.
fn greedy(n: usize, start: usize, edges: &[Transition]) -> Vec<u32> {
    let adj = out_lists(n, edges);
    let mut covered = vec![false; edges.len()];
    let mut remaining = edges.len();
    let mut first_open = vec![0usize; n];
    let mut out = Vec::new();
    let mut cur = start;
    let open_edge = |v: usize, covered: &[bool], first_open: &mut [usize]| -> Option<u32> {
        while first_open[v] < adj[v].len() && covered[adj[v][first_open[v]] as usize] {
            first_open[v] += 1;
        }
        adj[v].get(first_open[v]).copied()
    };
    while remaining > 0 {
        if let Some(e) = open_edge(cur, &covered, &mut first_open) {
            covered[e as usize] = true;
            remaining -= 1;
            out.push(e);
            cur = edges[e as usize].to.index();
            continue;
        }
        let (dist, parent) = bfs(n, edges, &adj, cur);
        // Nearest state with an uncovered edge (ties: lowest id).
        let target = (0..n)
            .filter(|&v| dist[v] != u32::MAX && open_edge(v, &covered, &mut first_open).is_some())
            .min_by_key(|&v| dist[v]);
        match target {
            Some(v) => {
                for e in path_to(edges, &parent, v) {
                    if !covered[e as usize] {
                        covered[e as usize] = true;
                        remaining -= 1;
                    }
                    out.push(e);
                }
                cur = v;
            }
            None if cur != start => {
                out.push(u32::MAX);
                cur = start;
            }
            None => break, // unreachable from the start: cannot happen for reachable edges
        }
    }
    out
}

/// A tour of `m` (see the module doc).
pub fn tour(m: &Machine) -> Tour {
    if m.has_configs() {
        return tour_timed(m);
    }
    let edges = transitions(m);
    let n = m.states.len();
    let start = m.start.index();
    let mut succ = vec![Vec::new(); n];
    let mut include = vec![false; n];
    include[start] = true;
    for e in &edges {
        succ[e.from.index()].push(e.to);
        include[e.from.index()] = true;
        include[e.to.index()] = true;
    }
    let (_, n_comp) = strongly_connected(&succ, &include);
    let sc = n_comp <= 1;
    let order = if edges.is_empty() {
        Vec::new()
    } else if sc {
        postman(n, start, &edges)
    } else {
        greedy(n, start, &edges)
    };
    let steps: Vec<TourStep> = order
        .into_iter()
        .map(|e| match edges.get(e as usize) {
            Some(t) => TourStep::Step {
                event: t.event,
                inputs: t.inputs.clone(),
            },
            None => TourStep::Reset,
        })
        .collect();
    let want: HashSet<(StateId, EventId, RuleId)> =
        edges.iter().map(|e| (e.from, e.event, e.rule)).collect();
    let covers = fired(m, &steps).intersection(&want).count();
    Tour {
        steps,
        covers,
        transitions: want.len(),
        strongly_connected: sc,
    }
}

#[cfg(test)]
mod tests {
    use super::assignment;

    /// The cheapest assignment by trying every permutation (small n only).
    fn brute(cost: &[Vec<i64>]) -> i64 {
        fn go(cost: &[Vec<i64>], row: usize, used: &mut Vec<bool>) -> i64 {
            if row == cost.len() {
                return 0;
            }
            let mut best = i64::MAX;
            for j in 0..cost.len() {
                if !used[j] {
                    used[j] = true;
                    best = best.min(cost[row][j] + go(cost, row + 1, used));
                    used[j] = false;
                }
            }
            best
        }
        go(cost, 0, &mut vec![false; cost.len()])
    }

    #[test]
    fn hungarian_matches_brute_force() {
        let mut x: u64 = 12345;
        let mut next = || {
            x = x
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (x >> 33) % 20
        };
        for n in 1..=6 {
            for _ in 0..30 {
                let cost: Vec<Vec<i64>> = (0..n)
                    .map(|_| (0..n).map(|_| next() as i64).collect())
                    .collect();
                let a = assignment(&cost);
                let mut cols = a.clone();
                cols.sort_unstable();
                assert_eq!(cols, (0..n).collect::<Vec<_>>(), "a permutation");
                let total: i64 = a.iter().enumerate().map(|(i, &j)| cost[i][j]).sum();
                assert_eq!(total, brute(&cost), "{cost:?}");
            }
        }
    }
}
