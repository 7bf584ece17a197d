//! Exact two-level minimization from minterm lists.
//!
//! Two published steps:
//!
//! 1. **Prime implicants by Quine-McCluskey** (Quine 1952, McCluskey 1956): start from the
//!    on-set and don't-care minterms and repeatedly merge two cubes with the same `care`
//!    mask that differ in exactly one cared variable; cubes that never merge are prime.
//!    Merging is found by hash lookup (for each cube and each cared variable whose literal
//!    is 0, look up the cube with that literal 1), so one level costs
//!    O(cubes x variables) expected time; the number of implicants is at most 3^n.
//! 2. **Exact minimum cover** of the on-set minterms (rows) by primes (columns) by branch
//!    and bound, with the classic reductions applied at every node: essential columns,
//!    row dominance, column dominance; branching on the row with the fewest columns and a
//!    lower bound from a set of pairwise column-disjoint rows. Worst case exponential in
//!    the size of the cyclic core; a node budget turns it into "best found" (reported).
//!
//! **Cost** (used everywhere in this module, and by the comparison with sympy's
//! `SOPform`): the number of literals first, then the number of products. Every minimum
//! of that cost can be taken from primes alone (a prime containing an implicant has no
//! more literals), so restricting the columns to primes loses nothing.

use std::collections::{HashMap, HashSet};

use super::cube::{full_mask, Cube};

/// Cost of a cover: literals first, then products (lexicographic).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct CoverCost {
    /// Total number of literals.
    pub literals: usize,
    /// Number of products.
    pub products: usize,
}

impl CoverCost {
    /// The cost of a list of cubes.
    pub fn of(cubes: &[Cube]) -> CoverCost {
        CoverCost {
            literals: cubes.iter().map(Cube::literals).sum(),
            products: cubes.len(),
        }
    }
}

/// All prime implicants of the function of `n` variables with on-set `on` and don't-care
/// set `dc` (minterm numbers), by Quine-McCluskey merging. Sorted, without duplicates.
/// Minterms must be below `2^n`; `n <= 64`.
pub fn prime_implicants(n: usize, on: &[u64], dc: &[u64]) -> Vec<Cube> {
    let full = full_mask(n);
    let mut level: Vec<Cube> = on
        .iter()
        .chain(dc.iter())
        .map(|&m| Cube::minterm(n, m))
        .collect();
    level.sort_unstable();
    level.dedup();
    let mut primes = Vec::new();
    while !level.is_empty() {
        let present: HashSet<Cube> = level.iter().copied().collect();
        let mut merged = vec![false; level.len()];
        let index: HashMap<Cube, usize> = level.iter().enumerate().map(|(i, c)| (*c, i)).collect();
        let mut next: HashSet<Cube> = HashSet::new();
        for (i, cube) in level.iter().enumerate() {
            // Cared variables whose literal is complemented: try the partner with it true.
            let mut zeros = cube.care & !cube.value & full;
            while zeros != 0 {
                let bit = zeros & zeros.wrapping_neg();
                zeros &= !bit;
                let partner = Cube {
                    value: cube.value | bit,
                    care: cube.care,
                };
                if present.contains(&partner) {
                    merged[i] = true;
                    if let Some(&j) = index.get(&partner) {
                        merged[j] = true;
                    }
                    next.insert(Cube::new(cube.value, cube.care & !bit));
                }
            }
        }
        primes.extend(
            level
                .iter()
                .zip(merged.iter())
                .filter(|(_, &m)| !m)
                .map(|(c, _)| *c),
        );
        level = next.into_iter().collect();
        level.sort_unstable();
    }
    primes.sort_unstable();
    primes
}

/// Result of [`exact_cover`].
#[derive(Clone, Debug)]
pub struct ExactResult {
    /// The chosen primes.
    pub cubes: Vec<Cube>,
    /// Whether the branch and bound finished (the cover is a proven minimum).
    pub proven: bool,
    /// Number of prime implicants that were generated.
    pub primes: usize,
    /// Branch-and-bound nodes visited.
    pub nodes: u64,
}

/// Default node budget of the branch and bound in [`minimize_exact`].
pub const DEFAULT_NODE_BUDGET: u64 = 50_000;

/// Exact minimum sum of products (cost: literals, then products) of the function of `n`
/// variables with on-set `on` and don't-cares `dc` (a minterm listed in both counts as
/// on), with at most `node_budget` branch-and-bound nodes.
pub fn minimize_exact(n: usize, on: &[u64], dc: &[u64], node_budget: u64) -> ExactResult {
    let primes = prime_implicants(n, on, dc);
    let mut rows: Vec<u64> = on.to_vec();
    rows.sort_unstable();
    rows.dedup();
    exact_cover(n, &rows, &primes, node_budget)
}

/// Minimum-cost cover of the minterms `rows` (sorted, distinct) by the cubes `primes`
/// (every row must lie in some prime), by branch and bound with essential, row- and
/// column-dominance reductions.
pub fn exact_cover(n: usize, rows: &[u64], primes: &[Cube], node_budget: u64) -> ExactResult {
    let matrix = Matrix::build(n, rows, primes);
    let mut search = Search {
        matrix: &matrix,
        best_cost: u64::MAX,
        best: Vec::new(),
        nodes: 0,
        budget: node_budget,
        exhausted: false,
    };
    let state = State {
        row_alive: vec![true; matrix.row_cols.len()],
        col_alive: vec![true; matrix.col_rows.len()],
        chosen: Vec::new(),
        cost: 0,
    };
    search.branch(state);
    let mut cubes: Vec<Cube> = search.best.iter().map(|&c| primes[c as usize]).collect();
    cubes.sort_unstable();
    ExactResult {
        cubes,
        proven: !search.exhausted,
        primes: primes.len(),
        nodes: search.nodes,
    }
}

/// The covering matrix in both orientations, as sorted sparse lists of dense ids.
struct Matrix {
    /// For each row (on-set minterm), the columns (primes) that cover it.
    row_cols: Vec<Vec<u32>>,
    /// For each column, the rows it covers.
    col_rows: Vec<Vec<u32>>,
    /// Cost of each column: literals weighted above products.
    col_cost: Vec<u64>,
}

impl Matrix {
    fn build(n: usize, rows: &[u64], primes: &[Cube]) -> Matrix {
        let row_of: HashMap<u64, u32> = rows
            .iter()
            .enumerate()
            .map(|(i, &m)| (m, i as u32))
            .collect();
        let mut col_rows: Vec<Vec<u32>> = Vec::with_capacity(primes.len());
        for p in primes {
            let mut list = Vec::new();
            if p.minterm_count(n) <= rows.len() as u64 {
                p.for_each_minterm(n, |m| {
                    if let Some(&r) = row_of.get(&m) {
                        list.push(r);
                    }
                });
                list.sort_unstable();
            } else {
                for (r, &m) in rows.iter().enumerate() {
                    if p.contains_minterm(m) {
                        list.push(r as u32);
                    }
                }
            }
            col_rows.push(list);
        }
        let mut row_cols: Vec<Vec<u32>> = vec![Vec::new(); rows.len()];
        for (c, list) in col_rows.iter().enumerate() {
            for &r in list {
                row_cols[r as usize].push(c as u32);
            }
        }
        // Literals dominate products: one literal outweighs any number of products.
        let weight = rows.len() as u64 + 1;
        let col_cost = primes
            .iter()
            .map(|p| p.literals() as u64 * weight + 1)
            .collect();
        Matrix {
            row_cols,
            col_rows,
            col_cost,
        }
    }
}

#[derive(Clone)]
struct State {
    row_alive: Vec<bool>,
    col_alive: Vec<bool>,
    chosen: Vec<u32>,
    cost: u64,
}

struct Search<'a> {
    matrix: &'a Matrix,
    best_cost: u64,
    best: Vec<u32>,
    nodes: u64,
    budget: u64,
    exhausted: bool,
}

/// Whether the alive elements of `small` all occur in `big` (both sorted).
fn alive_subset(small: &[u32], big: &[u32], alive: &[bool]) -> bool {
    let mut j = 0;
    for &x in small {
        if !alive[x as usize] {
            continue;
        }
        while j < big.len() && big[j] < x {
            j += 1;
        }
        if j == big.len() || big[j] != x {
            return false;
        }
    }
    true
}

impl Search<'_> {
    fn choose(&self, state: &mut State, col: u32) {
        state.col_alive[col as usize] = false;
        state.chosen.push(col);
        state.cost += self.matrix.col_cost[col as usize];
        for &r in &self.matrix.col_rows[col as usize] {
            state.row_alive[r as usize] = false;
        }
    }

    /// Applies the reductions until none applies. `false` if some row became uncoverable.
    fn reduce(&self, state: &mut State) -> bool {
        let m = self.matrix;
        loop {
            let mut changed = false;
            // Essential columns: a row with a single alive column forces it.
            for r in 0..m.row_cols.len() {
                if !state.row_alive[r] {
                    continue;
                }
                let mut alive_cols = m.row_cols[r]
                    .iter()
                    .filter(|&&c| state.col_alive[c as usize]);
                match (alive_cols.next(), alive_cols.next()) {
                    (None, _) => return false,
                    (Some(&c), None) => {
                        self.choose(state, c);
                        changed = true;
                    }
                    _ => {}
                }
            }
            // Column dominance: drop a column whose alive rows are a subset of another's
            // at no lower cost (ties broken by id so that one of two equals survives).
            for c2 in 0..m.col_rows.len() {
                if !state.col_alive[c2] {
                    continue;
                }
                let Some(&r) = m.col_rows[c2]
                    .iter()
                    .find(|&&r| state.row_alive[r as usize])
                else {
                    state.col_alive[c2] = false;
                    changed = true;
                    continue;
                };
                for &c1 in &m.row_cols[r as usize] {
                    let c1 = c1 as usize;
                    if c1 == c2 || !state.col_alive[c1] || m.col_cost[c1] > m.col_cost[c2] {
                        continue;
                    }
                    if alive_subset(&m.col_rows[c2], &m.col_rows[c1], &state.row_alive)
                        && (m.col_cost[c1] < m.col_cost[c2]
                            || !alive_subset(&m.col_rows[c1], &m.col_rows[c2], &state.row_alive)
                            || c1 < c2)
                    {
                        state.col_alive[c2] = false;
                        changed = true;
                        break;
                    }
                }
            }
            // Row dominance: if every alive column of row r1 also covers row r2, then
            // covering r1 covers r2; drop r2 (ties by id). r2 must contain r1's first
            // alive column, so only the rows of that column are candidates.
            for r1 in 0..m.row_cols.len() {
                if !state.row_alive[r1] {
                    continue;
                }
                let Some(&c) = m.row_cols[r1]
                    .iter()
                    .find(|&&c| state.col_alive[c as usize])
                else {
                    return false;
                };
                for &r2 in &m.col_rows[c as usize] {
                    let r2 = r2 as usize;
                    if r1 == r2 || !state.row_alive[r2] {
                        continue;
                    }
                    if alive_subset(&m.row_cols[r1], &m.row_cols[r2], &state.col_alive)
                        && (r1 < r2
                            || !alive_subset(&m.row_cols[r2], &m.row_cols[r1], &state.col_alive))
                    {
                        state.row_alive[r2] = false;
                        changed = true;
                    }
                }
            }
            if !changed {
                return true;
            }
        }
    }

    /// Lower bound on the cost still to pay, the larger of two classic bounds:
    /// * rows that pairwise share no alive column need distinct columns, each costing at
    ///   least that row's cheapest alive column (independent-set bound);
    /// * every row pays at least the smallest share `cost(c) / alive rows of c` over its
    ///   columns, since a cover's cost splits over the rows its columns cover
    ///   (fractional bound).
    fn lower_bound(&self, state: &State) -> u64 {
        let m = self.matrix;
        let alive_rows_of = |c: usize| {
            m.col_rows[c]
                .iter()
                .filter(|&&r| state.row_alive[r as usize])
                .count()
        };
        let share: Vec<f64> = (0..m.col_rows.len())
            .map(|c| {
                if state.col_alive[c] {
                    m.col_cost[c] as f64 / alive_rows_of(c).max(1) as f64
                } else {
                    f64::INFINITY
                }
            })
            .collect();
        let mut order: Vec<(usize, usize)> = Vec::new();
        let mut fractional = 0f64;
        for r in 0..m.row_cols.len() {
            if !state.row_alive[r] {
                continue;
            }
            let mut degree = 0;
            let mut least = f64::INFINITY;
            for &c in &m.row_cols[r] {
                if state.col_alive[c as usize] {
                    degree += 1;
                    least = least.min(share[c as usize]);
                }
            }
            fractional += least;
            order.push((degree, r));
        }
        order.sort_unstable();
        let mut used = vec![false; m.col_rows.len()];
        let mut independent = 0;
        for (_, r) in order {
            let cols = || {
                m.row_cols[r]
                    .iter()
                    .map(|&c| c as usize)
                    .filter(|&c| state.col_alive[c])
            };
            if cols().any(|c| used[c]) {
                continue;
            }
            independent += cols().map(|c| m.col_cost[c]).min().unwrap_or(0);
            for c in cols() {
                used[c] = true;
            }
        }
        // Round the fractional bound up, allowing for float error.
        let fractional = (fractional - 1e-6).ceil().max(0.0) as u64;
        independent.max(fractional)
    }

    fn branch(&mut self, mut state: State) {
        self.nodes += 1;
        if self.nodes > self.budget && self.best_cost != u64::MAX {
            self.exhausted = true;
            return;
        }
        if !self.reduce(&mut state) {
            return;
        }
        if state.cost >= self.best_cost {
            return;
        }
        let m = self.matrix;
        // Branch on the alive row with the fewest alive columns.
        let pick = (0..m.row_cols.len())
            .filter(|&r| state.row_alive[r])
            .min_by_key(|&r| {
                m.row_cols[r]
                    .iter()
                    .filter(|&&c| state.col_alive[c as usize])
                    .count()
            });
        let Some(row) = pick else {
            self.best_cost = state.cost;
            self.best = state.chosen.clone();
            return;
        };
        if state.cost + self.lower_bound(&state) >= self.best_cost {
            return;
        }
        let mut cols: Vec<u32> = m.row_cols[row]
            .iter()
            .copied()
            .filter(|&c| state.col_alive[c as usize])
            .collect();
        // Cheap, wide columns first: good covers early make the bound bite.
        cols.sort_by_key(|&c| {
            let covered = m.col_rows[c as usize]
                .iter()
                .filter(|&&r| state.row_alive[r as usize])
                .count() as u64;
            (m.col_cost[c as usize] * 1024) / covered.max(1)
        });
        for (k, &c) in cols.iter().enumerate() {
            let mut child = state.clone();
            // Columns tried before are excluded in later branches (they lose nothing:
            // any cover using them was explored in their own branch).
            for &earlier in &cols[..k] {
                child.col_alive[earlier as usize] = false;
            }
            self.choose(&mut child, c);
            self.branch(child);
            if self.exhausted {
                return;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn strings(n: usize, cubes: &[Cube]) -> Vec<String> {
        let mut v: Vec<String> = cubes.iter().map(|c| c.to_string(n)).collect();
        v.sort();
        v
    }

    /// f(a,b,c,d) = Σm(0,1,2,5,6,7,8,9,10,14): a textbook-style exercise, from memory (not
    /// checked against any particular book). Prime implicants, worked by hand:
    /// b'c' (-00-), b'd' (-0-0), cd' (--10), a'bd (01-1), a'bc (011-), a'c'd (0-01).
    /// b'c' (only prime of 9) and cd' (only prime of 14) are essential; together they
    /// cover all but 5 and 7, which a'bd alone covers. Minimum: b'c' + cd' + a'bd
    /// (3 products, 7 literals); b'd' is redundant.
    #[test]
    fn textbook_example_primes_and_cover() {
        let on = [0, 1, 2, 5, 6, 7, 8, 9, 10, 14];
        let primes = prime_implicants(4, &on, &[]);
        assert_eq!(
            strings(4, &primes),
            vec!["--10", "-0-0", "-00-", "0-01", "01-1", "011-"]
        );
        let r = minimize_exact(4, &on, &[], DEFAULT_NODE_BUDGET);
        assert!(r.proven);
        assert_eq!(CoverCost::of(&r.cubes).literals, 7);
        assert_eq!(strings(4, &r.cubes), vec!["--10", "-00-", "01-1"]);
    }

    /// The cyclic function Σm(0,1,2,5,6,7) of 3 variables (common practice: the standard
    /// example with no essential prime). Six primes of 2 literals; minimum: 3 of them.
    #[test]
    fn cyclic_core_needs_branching() {
        let on = [0, 1, 2, 5, 6, 7];
        let primes = prime_implicants(3, &on, &[]);
        assert_eq!(primes.len(), 6);
        let r = minimize_exact(3, &on, &[], DEFAULT_NODE_BUDGET);
        assert!(r.proven);
        assert_eq!(r.cubes.len(), 3);
        assert_eq!(CoverCost::of(&r.cubes).literals, 6);
    }

    #[test]
    fn constants_and_dont_cares() {
        let r = minimize_exact(2, &[0, 1, 2, 3], &[], DEFAULT_NODE_BUDGET);
        assert_eq!(r.cubes, vec![Cube::UNIVERSE]);
        let r = minimize_exact(2, &[], &[1], DEFAULT_NODE_BUDGET);
        assert!(r.cubes.is_empty());
        // on = {3}, dc = {1, 2}: a single literal suffices.
        let r = minimize_exact(2, &[3], &[1, 2], DEFAULT_NODE_BUDGET);
        assert_eq!(CoverCost::of(&r.cubes).literals, 1);
    }
}
