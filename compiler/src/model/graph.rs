//! The machine as a graph: its (state, event-class) cells, successor states,
//! reachability and strongly connected components.
//!
//! Events are compressed per state into classes before any work: each event some
//! scope of the state names is its own class, and all other events form one "rest"
//! class that resolves to the first `_` rules on the scope chain. Work is therefore
//! linear in the spec's size, not in states x events.

use super::{EventId, Machine, RuleId, Scope, StateId};

/// The events of one cell.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum CellEvents {
    /// One event that some scope of the state names.
    One(EventId),
    /// Every event no scope of the state names ([`Machine::rest_events`]).
    Rest,
}

/// A class of events that resolve alike in one state, and the rules they resolve to.
#[derive(Clone, Debug)]
pub struct Cell<'a> {
    /// Which events.
    pub events: CellEvents,
    /// The scope used and its rules for these events; `None` when no scope has any.
    pub rules: Option<(Scope, &'a [RuleId])>,
}

impl Machine {
    /// The cells of a state: one per named event, then the rest class when some event
    /// falls in it.
    pub fn cells(&self, s: StateId) -> Vec<Cell<'_>> {
        let named = self.named_events(s);
        let mut out: Vec<Cell<'_>> = named
            .iter()
            .map(|&e| Cell {
                events: CellEvents::One(e),
                rules: self.rules_for(s, e),
            })
            .collect();
        if named.len() < self.events.len() {
            out.push(Cell {
                events: CellEvents::Rest,
                rules: self.rest_rules(s),
            });
        }
        out
    }

    /// The events of the rest class of a state, ascending.
    pub fn rest_events(&self, s: StateId) -> Vec<EventId> {
        let named = self.named_events(s);
        (0..self.events.len())
            .map(EventId::from_index)
            .filter(|e| named.binary_search(e).is_err())
            .collect()
    }

    /// The events of a cell, ascending.
    pub fn cell_events(&self, s: StateId, events: &CellEvents) -> Vec<EventId> {
        match events {
            CellEvents::One(e) => vec![*e],
            CellEvents::Rest => self.rest_events(s),
        }
    }

    /// The rules that can fire in state `s` (for some event and valuation), each once.
    pub fn live_rules(&self, s: StateId) -> Vec<RuleId> {
        let mut out = Vec::new();
        for cell in self.cells(s) {
            if let Some((_, rules)) = cell.rules {
                for &r in rules {
                    if !self.rules[r.index()].guard.is_false() && !out.contains(&r) {
                        out.push(r);
                    }
                }
            }
        }
        out
    }

    /// States one step can lead to from `s` (guards treated as satisfiable unless they
    /// are unsatisfiable), ascending, without duplicates; `s` itself included when a
    /// rule can stay or loop.
    pub fn successors(&self, s: StateId) -> Vec<StateId> {
        let mut out: Vec<StateId> = self
            .live_rules(s)
            .into_iter()
            .map(|r| self.target_of(s, r))
            .collect();
        out.sort_unstable();
        out.dedup();
        out
    }

    /// The successor lists of every state, indexed by state.
    pub fn successor_lists(&self) -> Vec<Vec<StateId>> {
        (0..self.states.len())
            .map(|i| self.successors(StateId::from_index(i)))
            .collect()
    }

    /// Which states a path from the start reaches.
    pub fn reachable_states(&self) -> Vec<bool> {
        reachable_from(&self.successor_lists(), &[self.start])
    }
}

/// Breadth-first reachability over successor lists from a set of roots.
pub fn reachable_from(succ: &[Vec<StateId>], roots: &[StateId]) -> Vec<bool> {
    let mut seen = vec![false; succ.len()];
    let mut queue: std::collections::VecDeque<StateId> = roots.iter().copied().collect();
    for r in roots {
        seen[r.index()] = true;
    }
    while let Some(s) = queue.pop_front() {
        for &t in &succ[s.index()] {
            if !seen[t.index()] {
                seen[t.index()] = true;
                queue.push_back(t);
            }
        }
    }
    seen
}

/// Strongly connected components (Tarjan 1972, iterative so deep graphs cannot overflow
/// the stack), restricted to the states where `include` is true. Returns the component
/// number of each included state (`u32::MAX` for excluded ones) and the number of
/// components. Components are numbered in reverse topological order: a component's
/// successors have smaller numbers.
pub fn strongly_connected(succ: &[Vec<StateId>], include: &[bool]) -> (Vec<u32>, usize) {
    const NONE: u32 = u32::MAX;
    let n = succ.len();
    let mut index = vec![NONE; n];
    let mut low = vec![0u32; n];
    let mut on_stack = vec![false; n];
    let mut comp = vec![NONE; n];
    let mut stack: Vec<usize> = Vec::new();
    let mut next_index = 0u32;
    let mut n_comp = 0usize;
    // Call stack frames: (node, next successor position).
    let mut frames: Vec<(usize, usize)> = Vec::new();
    for root in 0..n {
        if !include[root] || index[root] != NONE {
            continue;
        }
        frames.push((root, 0));
        index[root] = next_index;
        low[root] = next_index;
        next_index += 1;
        stack.push(root);
        on_stack[root] = true;
        while let Some(&mut (v, ref mut pos)) = frames.last_mut() {
            if *pos < succ[v].len() {
                let w = succ[v][*pos].index();
                *pos += 1;
                if !include[w] {
                    continue;
                }
                if index[w] == NONE {
                    index[w] = next_index;
                    low[w] = next_index;
                    next_index += 1;
                    stack.push(w);
                    on_stack[w] = true;
                    frames.push((w, 0));
                } else if on_stack[w] {
                    low[v] = low[v].min(index[w]);
                }
            } else {
                frames.pop();
                if let Some(&(parent, _)) = frames.last() {
                    low[parent] = low[parent].min(low[v]);
                }
                if low[v] == index[v] {
                    while let Some(w) = stack.pop() {
                        on_stack[w] = false;
                        comp[w] = n_comp as u32;
                        if w == v {
                            break;
                        }
                    }
                    n_comp += 1;
                }
            }
        }
    }
    (comp, n_comp)
}
