//! The configuration graph: every reachable configuration (state and timers) of a
//! machine, and the steps between them, read off the lowered form.
//!
//! With `after` rules, a state alone does not say what a machine does next: its timers
//! do too (LANGUAGE.md, "Configurations"). The analyses that must be exact over
//! configurations (coverage, reachability, dead rules, properties, minimization,
//! equivalence, tours) read this graph instead of the state graph. A machine without
//! timers has one configuration per reachable state, and the graph is its state graph.
//!
//! # What an edge is
//!
//! From configuration `c` in state `S`, each cell of `S` (a class of events) has one
//! `Variant`: the one whose due timeouts are exactly those
//! `c`'s timers bring due on this event (none unless the cell is the time base's). Each
//! choice with a non-empty region in that variant is an [`Edge`] (its region: the input
//! valuations that take it), and so is the variant's unhandled region when it is not
//! empty (`choice: None`: time still passes on the time base).
//!
//! # Cost and limit
//!
//! Timers are kept exact: a timer is a number from 0 to its scope's largest duration,
//! so a scope with a 30 s timeout at a 1 ms time base has 30,001 values. Exploration is
//! breadth first from the start configuration, one visit per configuration and cell;
//! it stops with [`ConfigLimit`] past [`MAX_CONFIGS`] configurations, and never answers
//! from a part of the space it did not reach.

use crate::fxhash::FxMap;
use crate::interp::Config;
use crate::model::lower::{Cell, CellId};
use crate::model::{AtomId, Bdd, Machine, StateId, TimerId};

/// The most configurations an analysis explores before it stops with an error.
pub const MAX_CONFIGS: usize = 4_000_000;

/// The configuration space passed [`MAX_CONFIGS`].
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error(
    "machine `{machine}` has more than {limit} reachable configurations (states, timer and \
     counter values), the limit of exact analysis; shorten its longest timeouts, use a coarser \
     time base or give its counters smaller ranges"
)]
pub struct ConfigLimit {
    /// The machine.
    pub machine: String,
    /// The limit passed.
    pub limit: usize,
}

/// One step from a configuration: a cell's choice (or nothing) for a set of inputs.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Edge {
    /// The cell (state and class of events).
    pub cell: CellId,
    /// The index of the choice in the cell's `choices` that fires; `None`: no rule
    /// fires (ignored or rejected; on the time base, the timers still count).
    pub choice: Option<u32>,
    /// The valuations of the inputs that take this edge (non-empty).
    pub region: Bdd,
    /// The index of the configuration after the step.
    pub to: u32,
}

/// The reachable configurations of a machine and the steps between them.
#[derive(Clone, Debug, Default)]
pub struct ConfigGraph {
    /// Every reachable configuration; index 0 is the start configuration, and the
    /// order is breadth first from it.
    pub configs: Vec<Config>,
    /// `edges[edge_start[i]..edge_start[i + 1]]` are the edges out of configuration `i`,
    /// by cell, then choice order, then the unhandled edge.
    pub edges: Vec<Edge>,
    edge_start: Vec<u32>,
    /// For each configuration but the start, the edge (index into `edges`) by which
    /// breadth-first search first reached it: a shortest path back to the start.
    pub parent: Vec<Option<u32>>,
    /// For each edge, the configuration it leaves.
    pub edge_from: Vec<u32>,
    index: FxMap<Config, u32>,
}

impl ConfigGraph {
    /// The edges out of configuration `i`.
    pub fn out(&self, i: usize) -> &[Edge] {
        &self.edges[self.edge_start[i] as usize..self.edge_start[i + 1] as usize]
    }

    /// The index into `edges` of the `k`th edge out of configuration `i`.
    pub fn edge_index(&self, i: usize, k: usize) -> usize {
        self.edge_start[i] as usize + k
    }

    /// The index of a configuration, when it is reachable.
    pub fn find(&self, c: &Config) -> Option<usize> {
        self.index.get(c).map(|&i| i as usize)
    }

    /// The edges of a shortest path from the start to configuration `i`, in order.
    pub fn path_to(&self, mut i: usize) -> Vec<u32> {
        let mut path = Vec::new();
        while let Some(e) = self.parent[i] {
            path.push(e);
            i = self.edge_from[e as usize] as usize;
        }
        path.reverse();
        path
    }

    /// The graph of states the configurations give: `S -> T` when some reachable
    /// configuration of `S` has a step to one of `T`; ascending, without duplicates.
    pub fn state_successors(&self, n_states: usize) -> Vec<Vec<StateId>> {
        let mut succ: Vec<Vec<StateId>> = vec![Vec::new(); n_states];
        for (k, e) in self.edges.iter().enumerate() {
            let from = self.configs[self.edge_from[k] as usize].state;
            succ[from.index()].push(self.configs[e.to as usize].state);
        }
        for list in &mut succ {
            list.sort_unstable();
            list.dedup();
        }
        succ
    }

    /// The states some reachable configuration is in, as a mask indexed by state.
    pub fn reachable_states(&self, n_states: usize) -> Vec<bool> {
        let mut out = vec![false; n_states];
        for c in &self.configs {
            out[c.state.index()] = true;
        }
        out
    }
}

/// The timers of a configuration's state, as a witness says them: `the timer of state
/// `Wait` at 0 ms`, `the timers of state `A` at 2 ticks and of group `G` at 5 ticks`
/// (innermost scope first). `None` when the state's scopes have no timers.
pub fn timers_text(m: &Machine, c: &Config) -> Option<String> {
    let timers = m.chain_timers(c.state);
    if timers.is_empty() {
        return None;
    }
    let parts: Vec<String> = timers
        .iter()
        .map(|t| {
            let scope = match m.timers[t.index()].scope {
                crate::model::Scope::State(s) => format!("state `{}`", m.state_name(s)),
                crate::model::Scope::Group(g) => format!("group `{}`", m.groups[g.index()].name),
            };
            format!("{scope} at {}", timer_value_text(m, c.timers[t.index()]))
        })
        .collect();
    Some(if parts.len() == 1 {
        format!("the timer of {}", parts[0])
    } else {
        format!("the timers of {}", parts.join(" and of "))
    })
}

/// A timer value in the unit of the time base's period (`0 ms`, `1499 ms`, `40 us`), or
/// in ticks when the time base has no period.
pub fn timer_value_text(m: &Machine, ticks: u32) -> String {
    match m.timebase.as_ref().and_then(|t| t.period_us) {
        Some(p) => {
            let (unit, name) = if p.is_multiple_of(1_000_000) {
                (1_000_000, "s")
            } else if p.is_multiple_of(1_000) {
                (1_000, "ms")
            } else {
                (1, "us")
            };
            format!("{} {name}", u64::from(ticks) * p / unit)
        }
        None => format!("{ticks} ticks"),
    }
}

/// The counters of a configuration as a witness says them: `strikes = 2, retries = 0`
/// (`None` without counters).
pub fn counters_text(m: &Machine, c: &Config) -> Option<String> {
    if m.counters.is_empty() {
        return None;
    }
    Some(
        m.counters
            .iter()
            .zip(&c.counters)
            .map(|(k, v)| format!("{} = {v}", k.name))
            .collect::<Vec<_>>()
            .join(", "),
    )
}

/// `state `Wait` with the timer of state `Wait` at 0 ms`, or `state `Idle`` when
/// the state counts no time, and `and counters strikes = 2` with counters: a
/// configuration as diagnostics name it.
pub fn config_text(m: &Machine, c: &Config) -> String {
    let mut out = match timers_text(m, c) {
        Some(t) => format!("state `{}` with {t}", m.state_name(c.state)),
        None => format!("state `{}`", m.state_name(c.state)),
    };
    if let Some(k) = counters_text(m, c) {
        out.push_str(&format!(" and counters {k}"));
    }
    out
}

/// The variant of `cell` that applies in configuration `c`: the timeouts that the
/// cell's event brings due from `c`'s timers (none unless the cell counts time).
pub fn variant_at(m: &Machine, cell: &Cell, c: &Config) -> usize {
    m.lowered.variant_index_with(
        m,
        cell,
        &|t: TimerId| {
            // Due on this event: the timer is one short of a duration.
            Some(c.timers[t.index()] + 1)
        },
        &|a: AtomId| m.atoms[a.index()].holds(c.counters[m.atoms[a.index()].counter.index()]),
    )
}

/// The configuration after `choice` (or nothing, `None`) fires in `cell` from `c`.
pub fn next_config(m: &Machine, cell: &Cell, choice: Option<usize>, c: &Config) -> Config {
    let mut next = c.clone();
    for &t in &cell.timers {
        let max = m.timers[t.index()].max();
        let v = &mut next.timers[t.index()];
        *v = (*v + 1).min(max);
    }
    if let Some(i) = choice {
        let ch = &cell.choices[i];
        crate::interp::apply_counter_ops(m, m.lowered.seq(ch.ops), &mut next.counters);
        for t in &ch.resets {
            next.timers[t.index()] = 0;
        }
        next.state = ch.target;
    }
    next
}

/// Explores every configuration reachable from the start configuration, breadth
/// first; stops with [`ConfigLimit`] past `limit` configurations.
pub fn explore_with_limit(m: &Machine, limit: usize) -> Result<ConfigGraph, ConfigLimit> {
    explore_from(m, &[m.start_config()], limit)
}

/// [`explore_with_limit`] with [`MAX_CONFIGS`].
pub fn explore(m: &Machine) -> Result<ConfigGraph, ConfigLimit> {
    explore_with_limit(m, MAX_CONFIGS)
}

/// Explores from several roots (the first is configuration 0); each root has no
/// parent edge.
pub fn explore_from(
    m: &Machine,
    roots: &[Config],
    limit: usize,
) -> Result<ConfigGraph, ConfigLimit> {
    let mut g = ConfigGraph::default();
    let over = || ConfigLimit {
        machine: m.name.clone(),
        limit,
    };
    for r in roots {
        if g.index.contains_key(r) {
            continue;
        }
        g.index.insert(r.clone(), g.configs.len() as u32);
        g.configs.push(r.clone());
        g.parent.push(None);
    }
    let mut i = 0;
    while i < g.configs.len() {
        g.edge_start.push(g.edges.len() as u32);
        let c = g.configs[i].clone();
        let range = m.lowered.cell_range(c.state);
        for cell_index in range {
            let cell_id = CellId(cell_index as u32);
            let cell = m.lowered.cell(cell_id);
            let v = &cell.variants[variant_at(m, cell, &c)];
            let mut targets: Vec<(Option<usize>, Bdd)> = v
                .regions
                .iter()
                .enumerate()
                .filter(|(_, r)| !r.is_false())
                .map(|(k, r)| (Some(k), *r))
                .collect();
            if !v.unhandled.is_false() {
                targets.push((None, v.unhandled));
            }
            for (choice, region) in targets {
                let next = next_config(m, cell, choice, &c);
                let to = match g.index.get(&next) {
                    Some(&to) => to,
                    None => {
                        if g.configs.len() >= limit {
                            return Err(over());
                        }
                        let to = g.configs.len() as u32;
                        g.index.insert(next.clone(), to);
                        g.configs.push(next);
                        g.parent.push(Some(g.edges.len() as u32));
                        to
                    }
                };
                g.edge_from.push(i as u32);
                g.edges.push(Edge {
                    cell: cell_id,
                    choice: choice.map(|k| k as u32),
                    region,
                    to,
                });
            }
        }
        i += 1;
    }
    g.edge_start.push(g.edges.len() as u32);
    Ok(g)
}

/// The configurations of state `s` with every combination of its active timers' and
/// the counters' values: what an analysis of a state no configuration reaches covers.
pub fn all_configs_of(m: &Machine, s: StateId, limit: usize) -> Result<Vec<Config>, ConfigLimit> {
    let mut out = vec![Config::at(m, s)];
    for (k, counter) in m.counters.iter().enumerate() {
        let mut next = Vec::new();
        for c in &out {
            for v in 0..=counter.max {
                if next.len() >= limit {
                    return Err(ConfigLimit {
                        machine: m.name.clone(),
                        limit,
                    });
                }
                let mut c = c.clone();
                c.counters[k] = v;
                next.push(c);
            }
        }
        out = next;
    }
    for t in m.chain_timers(s) {
        let max = m.timers[t.index()].max();
        let mut next = Vec::new();
        for c in &out {
            for v in 0..=max {
                if next.len() >= limit {
                    return Err(ConfigLimit {
                        machine: m.name.clone(),
                        limit,
                    });
                }
                let mut c = c.clone();
                c.timers[t.index()] = v;
                next.push(c);
            }
        }
        out = next;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::machine;

    #[test]
    fn a_timer_is_counted_exactly_and_saturates() {
        let m = machine(
            "machine T { events Tick, Go; timebase Tick; start A; \
             state A { after 3 ticks => B; Go => A; Tick => stay; } \
             state B { Go => A; Tick => stay; } }",
        );
        let g = explore(&m).unwrap();
        // A at 0, 1, 2 (the third tick leaves), B.
        let mut seen: Vec<(String, Vec<u32>)> = g
            .configs
            .iter()
            .map(|c| (m.state_name(c.state).to_string(), c.timers.clone()))
            .collect();
        seen.sort();
        assert_eq!(
            seen,
            vec![
                ("A".into(), vec![0]),
                ("A".into(), vec![1]),
                ("A".into(), vec![2]),
                ("B".into(), vec![0]),
            ]
        );
        // The shortest path to B is three ticks.
        let b = g
            .configs
            .iter()
            .position(|c| m.state_name(c.state) == "B")
            .unwrap();
        assert_eq!(g.path_to(b).len(), 3);
    }

    #[test]
    fn the_limit_is_an_error_not_a_bound() {
        let m = machine(
            "machine T { events Tick; timebase Tick; start A; \
             state A { after 1000 ticks => A; Tick => stay; } }",
        );
        assert_eq!(explore(&m).unwrap().configs.len(), 1000);
        let e = explore_with_limit(&m, 999).unwrap_err();
        assert_eq!(e.limit, 999);
        assert!(e
            .to_string()
            .contains("more than 999 reachable configurations"));
    }
}
