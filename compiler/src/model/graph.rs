//! Graph algorithms over successor lists: reachability and strongly connected
//! components.
//!
//! They know nothing about rules: the successor lists come from the lowered form
//! ([`super::lower::Lowered::successor_lists`], where rule choice is decided), so a
//! state's successors are the targets of the choices that can fire in it.

use super::StateId;

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
