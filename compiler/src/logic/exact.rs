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
//!    row dominance, column dominance. Then, per node:
//!    * **independent components**: the alive rows are split into connected components
//!      (rows linked by a shared alive column), and each component is searched on its
//!      own against the upper bound left by the others, so the work adds up instead of
//!      multiplying;
//!    * **lower bounds**, all standard set-covering bounds (feasible solutions of the
//!      dual of the covering linear program): a set of rows pairwise sharing no column
//!      (independent-set bound), the cheapest per-row share, greedy dual ascent, and the
//!      strongest, the **Lagrangian relaxation** of the covering constraints maximized
//!      by subgradient optimization (warm-started from the parent's multipliers), which
//!      approaches the linear-programming bound;
//!    * **Lagrangian cost fixing**: a column whose reduced cost alone lifts the bound to
//!      the incumbent is dropped;
//!    * branching on the row with the fewest alive columns, its columns in order of
//!      Lagrangian reduced cost.
//!
//!    Cost per node: O(nonzeros) for the reductions' passes and O(iterations x
//!    nonzeros) for the subgradient steps (150 at the root, 15 below). Worst case
//!    exponential in the size of the cyclic core; a node budget turns it into "best
//!    found" (reported). On the random 10-variable benchmark functions (about 100-row
//!    cyclic cores) the Lagrangian bound cut the search from up to 40,000 nodes to a few
//!    hundred.
//!
//! **Cost** (used everywhere in this module, and by the comparison with sympy's
//! `SOPform`): the number of literals first, then the number of products. Every minimum
//! of that cost can be taken from primes alone (a prime containing an implicant has no
//! more literals), so restricting the columns to primes loses nothing.

use std::collections::{HashMap, HashSet};

use super::cube::{full_mask, remove_contained, Cube};

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

/// Largest intermediate cube set [`primes_from_cubes`] builds before it gives up (the
/// caller then falls back to [`prime_implicants`] on minterms).
pub const CONSENSUS_MAX_CUBES: usize = 50_000;

/// All prime implicants of the union of `cubes` (on-set and don't-care cubes together),
/// by Tison's method (Tison 1967, "Generalization of consensus theory and application to
/// the minimization of Boolean functions", IEEE Trans. Electronic Computers EC-16(4)):
/// for each variable in turn, add the consensus of every pair of cubes with opposite
/// literals in that variable alone, and drop every cube contained in another. After the
/// last variable the set is exactly the set of primes. Sorted, without duplicates, so
/// the result equals [`prime_implicants`] of the same function.
///
/// The work follows the number of cubes, not `2^n`: a state-machine equation of 12
/// variables with seven unused state codes has about 1,800 don't-care minterms but seven
/// don't-care cubes, and its primes come out of a few dozen cubes in microseconds where
/// the minterm merging takes a tenth of a second. `None` when an intermediate set
/// passes [`CONSENSUS_MAX_CUBES`] (Tison's method can blow up where minterms would not).
pub fn primes_from_cubes(cubes: &[Cube]) -> Option<Vec<Cube>> {
    let mut set: Vec<Cube> = cubes.to_vec();
    remove_contained(&mut set);
    let vars = set.iter().fold(0u64, |acc, c| acc | c.care);
    let mut bits = vars;
    while bits != 0 {
        let bit = bits & bits.wrapping_neg();
        bits &= !bit;
        let (pos, neg): (Vec<Cube>, Vec<Cube>) = set
            .iter()
            .filter(|c| c.care & bit != 0)
            .partition(|c| c.value & bit != 0);
        let before = set.len();
        for p in &pos {
            for q in &neg {
                if let Some(c) = p.consensus(q) {
                    set.push(c);
                }
            }
            if set.len() > CONSENSUS_MAX_CUBES {
                return None;
            }
        }
        if set.len() > before {
            remove_contained(&mut set);
        }
    }
    set.sort_unstable();
    Some(set)
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

/// Default node budget of the branch and bound in [`minimize_exact`]. With the
/// Lagrangian bound a node costs more but proves much more than with the older
/// independent-set bound (which needed 50,000 nodes); see [`super::EXACT_MAX_VARS`] for
/// the measurements.
pub const DEFAULT_NODE_BUDGET: u64 = 10_000;

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
/// column-dominance reductions, independent components solved separately, and a
/// dual-ascent lower bound (see [`Search::lower_bound`]).
pub fn exact_cover(n: usize, rows: &[u64], primes: &[Cube], node_budget: u64) -> ExactResult {
    let matrix = Matrix::build(n, rows, primes);
    let (chosen, proven, nodes) = solve_matrix(&matrix, node_budget, true);
    let mut cubes: Vec<Cube> = chosen.iter().map(|&c| primes[c as usize]).collect();
    cubes.sort_unstable();
    ExactResult {
        cubes,
        proven,
        primes: primes.len(),
        nodes,
    }
}

/// Runs the branch and bound on a covering matrix: the chosen columns, whether the
/// minimum is proven, and the nodes visited. `split` enables the component splitting.
fn solve_matrix(matrix: &Matrix, node_budget: u64, split: bool) -> (Vec<u32>, bool, u64) {
    let mut search = Search {
        matrix,
        nodes: 0,
        budget: node_budget,
        exhausted: false,
        split,
    };
    let state = State {
        row_alive: vec![true; matrix.row_cols.len()],
        col_alive: vec![true; matrix.col_rows.len()],
        chosen: Vec::new(),
        cost: 0,
        mult: Vec::new(),
    };
    let chosen = search
        .solve(state, u64::MAX)
        .map(|(_, chosen)| chosen)
        .unwrap_or_default();
    (chosen, !search.exhausted, search.nodes)
}

/// The covering matrix in both orientations, as sorted sparse lists of dense ids.
struct Matrix {
    /// For each row (on-set minterm), the columns (primes) that cover it.
    row_cols: Lists,
    /// For each column, the rows it covers.
    col_rows: Lists,
    /// Cost of each column: literals weighted above products.
    col_cost: Vec<u64>,
}

/// Lists of ids stored end to end in one allocation (list `i` is `items[ends[i - 1]..
/// ends[i]]`): building and dropping a matrix of thousands of short lists then costs
/// two allocations instead of thousands.
struct Lists {
    items: Vec<u32>,
    ends: Vec<usize>,
}

impl Lists {
    fn new() -> Lists {
        Lists {
            items: Vec::new(),
            ends: Vec::new(),
        }
    }

    /// Number of lists.
    fn len(&self) -> usize {
        self.ends.len()
    }

    /// Ends the list being built (the items pushed since the last end).
    fn close(&mut self) {
        self.ends.push(self.items.len());
    }

    /// The transpose of `lists` over `targets` ids: list `t` holds every `i` whose list
    /// contains `t`, ascending.
    fn transpose(&self, targets: usize) -> Lists {
        let mut ends = vec![0usize; targets];
        for &t in &self.items {
            ends[t as usize] += 1;
        }
        let mut sum = 0;
        for e in ends.iter_mut() {
            sum += *e;
            *e = sum;
        }
        let mut fill: Vec<usize> = std::iter::once(0)
            .chain(ends.iter().copied())
            .take(targets)
            .collect();
        let mut items = vec![0u32; self.items.len()];
        for i in 0..self.len() {
            for &t in &self[i] {
                items[fill[t as usize]] = i as u32;
                fill[t as usize] += 1;
            }
        }
        Lists { items, ends }
    }
}

impl std::ops::Index<usize> for Lists {
    type Output = [u32];

    fn index(&self, i: usize) -> &[u32] {
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.items[start..self.ends[i]]
    }
}

/// Widest functions whose minterm-to-row index is a direct table (`2^n` entries).
const DENSE_ROW_VARS: usize = 16;

/// The row number of each on-set minterm.
enum RowIndex {
    Dense(Vec<u32>),
    Hashed(HashMap<u64, u32>),
}

impl RowIndex {
    fn new(n: usize, rows: &[u64]) -> RowIndex {
        if n <= DENSE_ROW_VARS {
            let mut table = vec![u32::MAX; 1usize << n];
            for (i, &m) in rows.iter().enumerate() {
                table[m as usize] = i as u32;
            }
            RowIndex::Dense(table)
        } else {
            RowIndex::Hashed(
                rows.iter()
                    .enumerate()
                    .map(|(i, &m)| (m, i as u32))
                    .collect(),
            )
        }
    }

    fn get(&self, m: u64) -> Option<u32> {
        match self {
            RowIndex::Dense(table) => table.get(m as usize).copied().filter(|&r| r != u32::MAX),
            RowIndex::Hashed(map) => map.get(&m).copied(),
        }
    }
}

impl Matrix {
    fn build(n: usize, rows: &[u64], primes: &[Cube]) -> Matrix {
        // Row of each minterm: a direct table up to DENSE_ROW_VARS variables (the exact
        // method's sizes; a hash lookup per minterm cost more than the whole cover
        // search on the state-machine equations), a hash map beyond.
        let row_of = RowIndex::new(n, rows);
        let mut col_rows = Lists::new();
        for p in primes {
            let start = col_rows.items.len();
            if p.minterm_count(n) <= rows.len() as u64 {
                p.for_each_minterm(n, |m| {
                    if let Some(r) = row_of.get(m) {
                        col_rows.items.push(r);
                    }
                });
                col_rows.items[start..].sort_unstable();
            } else {
                for (r, &m) in rows.iter().enumerate() {
                    if p.contains_minterm(m) {
                        col_rows.items.push(r as u32);
                    }
                }
            }
            col_rows.close();
        }
        // Literals dominate products: one literal outweighs any number of products.
        let weight = rows.len() as u64 + 1;
        let col_cost = primes
            .iter()
            .map(|p| p.literals() as u64 * weight + 1)
            .collect();
        Matrix {
            row_cols: col_rows.transpose(rows.len()),
            col_rows,
            col_cost,
        }
    }

    /// A matrix from its columns (sorted row lists) and their costs.
    #[cfg(test)]
    fn from_columns(rows: usize, columns: Vec<Vec<u32>>, col_cost: Vec<u64>) -> Matrix {
        let mut col_rows = Lists::new();
        for list in &columns {
            col_rows.items.extend_from_slice(list);
            col_rows.close();
        }
        Matrix {
            row_cols: col_rows.transpose(rows),
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
    /// Lagrange multipliers of the rows from the parent node (a warm start for
    /// [`Search::lagrangian`]); empty at the root.
    mult: Vec<f64>,
}

struct Search<'a> {
    matrix: &'a Matrix,
    nodes: u64,
    budget: u64,
    /// Set once the node budget ran out: from then on the search only completes the
    /// current first dive greedily (if no cover is known yet) and drops every other open
    /// node; the result is no longer a proven minimum.
    exhausted: bool,
    /// Whether independent components are solved separately.
    split: bool,
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

/// `upper - used`, keeping "no bound" (`u64::MAX`) unbounded.
fn remaining(upper: u64, used: u64) -> u64 {
    if upper == u64::MAX {
        u64::MAX
    } else {
        upper.saturating_sub(used)
    }
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

    /// Lower bound on the cost still to pay for the alive rows, the largest of three
    /// standard set-covering bounds (each is a feasible solution of the dual of the
    /// covering linear program, so none exceeds the optimum):
    /// * rows that pairwise share no alive column need distinct columns, each costing at
    ///   least that row's cheapest alive column (independent-set bound);
    /// * every row pays at least the smallest share `cost(c) / alive rows of c` over its
    ///   columns, since a cover's cost splits over the rows its columns cover
    ///   (fractional bound);
    /// * dual ascent: rows in order of fewest alive columns each take a price `y_r`
    ///   equal to the least remaining slack of their columns, which is then subtracted
    ///   from those columns' slack (starting from their costs). Every column's prices
    ///   sum to at most its cost, so any cover costs at least `sum y_r` (LP duality).
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
        let mut slack = m.col_cost.clone();
        let mut independent = 0;
        let mut dual = 0;
        for &(_, r) in &order {
            let cols = || {
                m.row_cols[r]
                    .iter()
                    .map(|&c| c as usize)
                    .filter(|&c| state.col_alive[c])
            };
            let price = cols().map(|c| slack[c]).min().unwrap_or(0);
            dual += price;
            for c in cols() {
                slack[c] -= price;
            }
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
        independent.max(fractional).max(dual)
    }

    /// Lagrangian lower bound on the cost still to pay, by subgradient optimization of
    /// the row multipliers (the standard Lagrangian relaxation of set covering: relax
    /// "every row covered" with multipliers `u_r >= 0`; for any `u`,
    /// `L(u) = sum u_r + sum_c min(0, cost_c - sum_{r in c} u_r)` is at most the cost
    /// of every cover, and its maximum over `u` is the linear-programming bound). It
    /// starts from the parent's multipliers (or the dual-ascent prices at the root),
    /// stores the best multipliers in `state.mult` for the children, and applies
    /// Lagrangian cost fixing against `upper` (the cost a cover must stay below): a
    /// column with reduced cost `rc > 0` and `L + rc >= upper` is in no cheaper cover,
    /// so it is removed. Returns the bound (rounded up; costs are integers) and the
    /// number of columns removed. O(iterations x nonzeros).
    fn lagrangian(&self, state: &mut State, upper: u64) -> (u64, usize) {
        let m = self.matrix;
        let rows: Vec<usize> = (0..m.row_cols.len())
            .filter(|&r| state.row_alive[r])
            .collect();
        let cols: Vec<usize> = (0..m.col_rows.len())
            .filter(|&c| state.col_alive[c])
            .collect();
        if rows.is_empty() {
            return (0, 0);
        }
        let mut u = vec![0f64; m.row_cols.len()];
        if state.mult.len() == u.len() {
            for &r in &rows {
                u[r] = state.mult[r];
            }
        } else {
            // Dual-ascent prices as a start (fewest columns first).
            let mut order: Vec<(usize, usize)> = rows
                .iter()
                .map(|&r| {
                    let d = m.row_cols[r]
                        .iter()
                        .filter(|&&c| state.col_alive[c as usize])
                        .count();
                    (d, r)
                })
                .collect();
            order.sort_unstable();
            let mut slack: Vec<f64> = m.col_cost.iter().map(|&c| c as f64).collect();
            for (_, r) in order {
                let alive = m.row_cols[r]
                    .iter()
                    .map(|&c| c as usize)
                    .filter(|&c| state.col_alive[c]);
                let price = alive
                    .clone()
                    .map(|c| slack[c])
                    .fold(f64::INFINITY, f64::min);
                let price = if price.is_finite() { price } else { 0.0 };
                u[r] = price;
                for c in alive {
                    slack[c] -= price;
                }
            }
        }
        let eval = |u: &[f64], rc: &mut Vec<f64>| -> f64 {
            let mut value: f64 = rows.iter().map(|&r| u[r]).sum();
            for &c in &cols {
                let mut x = m.col_cost[c] as f64;
                for &r in &m.col_rows[c] {
                    if state.row_alive[r as usize] {
                        x -= u[r as usize];
                    }
                }
                rc[c] = x;
                if x < 0.0 {
                    value += x;
                }
            }
            value
        };
        let mut rc = vec![0f64; m.col_rows.len()];
        let mut best_value = eval(&u, &mut rc);
        let mut best_u = u.clone();
        let mut best_rc = rc.clone();
        let iterations = if state.mult.is_empty() { 150 } else { 15 };
        let mut step = 1.0f64;
        let mut stale = 0;
        let mut g = vec![0f64; m.row_cols.len()];
        for _ in 0..iterations {
            let value = eval(&u, &mut rc);
            if value > best_value + 1e-9 {
                best_value = value;
                best_u.clone_from(&u);
                best_rc.clone_from(&rc);
                stale = 0;
            } else {
                stale += 1;
                if stale >= 5 {
                    step /= 2.0;
                    stale = 0;
                }
            }
            if upper != u64::MAX && best_value - 1e-6 >= upper as f64 {
                break;
            }
            // Subgradient: 1 - (number of chosen columns covering the row), where a
            // column is chosen when its reduced cost is negative.
            for &r in &rows {
                g[r] = 1.0;
            }
            for &c in &cols {
                if rc[c] < 0.0 {
                    for &r in &m.col_rows[c] {
                        g[r as usize] -= 1.0;
                    }
                }
            }
            let norm: f64 = rows.iter().map(|&r| g[r] * g[r]).sum();
            if norm == 0.0 || step < 1e-4 {
                break;
            }
            let target = if upper == u64::MAX {
                value.abs() * 1.05 + 1.0
            } else {
                (upper as f64).max(value + 1.0)
            };
            let t = step * (target - value) / norm;
            for &r in &rows {
                u[r] = (u[r] + t * g[r]).max(0.0);
            }
        }
        let bound = (best_value - 1e-6).ceil().max(0.0) as u64;
        let mut fixed = 0;
        if upper != u64::MAX {
            for &c in &cols {
                if best_rc[c] > 0.0 && best_value + best_rc[c] - 1e-6 >= upper as f64 {
                    state.col_alive[c] = false;
                    fixed += 1;
                }
            }
        }
        state.mult = best_u;
        (bound, fixed)
    }

    /// The connected components of the alive rows (two rows are connected when some
    /// alive column covers both), each as a list of rows; smallest first.
    fn components(&self, state: &State) -> Vec<Vec<u32>> {
        let m = self.matrix;
        let mut seen = vec![false; m.row_cols.len()];
        let mut col_seen = vec![false; m.col_rows.len()];
        let mut out: Vec<Vec<u32>> = Vec::new();
        for start in 0..m.row_cols.len() {
            if !state.row_alive[start] || seen[start] {
                continue;
            }
            seen[start] = true;
            let mut comp = vec![start as u32];
            let mut k = 0;
            while k < comp.len() {
                let r = comp[k] as usize;
                k += 1;
                for &c in &m.row_cols[r] {
                    let c = c as usize;
                    if !state.col_alive[c] || col_seen[c] {
                        continue;
                    }
                    col_seen[c] = true;
                    for &r2 in &m.col_rows[c] {
                        let r2 = r2 as usize;
                        if state.row_alive[r2] && !seen[r2] {
                            seen[r2] = true;
                            comp.push(r2 as u32);
                        }
                    }
                }
            }
            out.push(comp);
        }
        out.sort_by_key(Vec::len);
        out
    }

    /// Completes `state` greedily (cheapest cost per newly covered row), for when the
    /// node budget has run out.
    fn greedy(&self, mut state: State) -> Option<(u64, Vec<u32>)> {
        let m = self.matrix;
        loop {
            if !self.reduce(&mut state) {
                return None;
            }
            let best = (0..m.col_rows.len())
                .filter(|&c| state.col_alive[c])
                .filter_map(|c| {
                    let k = m.col_rows[c]
                        .iter()
                        .filter(|&&r| state.row_alive[r as usize])
                        .count() as u64;
                    (k > 0).then(|| (m.col_cost[c] * 1024 / k, c))
                })
                .min();
            match best {
                Some((_, c)) => self.choose(&mut state, c as u32),
                None => return Some((state.cost, state.chosen)),
            }
        }
    }

    /// The cheapest cover of the alive rows that extends `state`, if its total cost
    /// (`state.cost` included) is below `upper`; `None` if there is none.
    fn solve(&mut self, mut state: State, upper: u64) -> Option<(u64, Vec<u32>)> {
        self.nodes += 1;
        if self.nodes > self.budget {
            self.exhausted = true;
        }
        if self.exhausted {
            // Only the first dive (no cover found yet on this path) is completed, once;
            // every other open node is dropped, keeping the best cover found.
            if upper != u64::MAX {
                return None;
            }
            return self.greedy(state);
        }
        let m = self.matrix;
        let mut rounds = 0;
        let row = loop {
            if !self.reduce(&mut state) || state.cost >= upper {
                return None;
            }
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
                return Some((state.cost, state.chosen));
            };
            if state.cost.saturating_add(self.lower_bound(&state)) >= upper {
                return None;
            }
            let rest = remaining(upper, state.cost);
            let (bound, fixed) = self.lagrangian(&mut state, rest);
            if state.cost.saturating_add(bound) >= upper {
                return None;
            }
            rounds += 1;
            if fixed == 0 || rounds == 2 {
                if fixed > 0 && !self.reduce(&mut state) {
                    return None;
                }
                break row;
            }
        };
        if !state.row_alive[row] {
            // The last reduction covered the picked row; search the rest afresh.
            return self.solve(state, upper);
        }
        if self.split {
            let comps = self.components(&state);
            if comps.len() > 1 {
                return self.solve_components(state, comps, upper);
            }
        }
        let mut cols: Vec<u32> = m.row_cols[row]
            .iter()
            .copied()
            .filter(|&c| state.col_alive[c as usize])
            .collect();
        // Columns by Lagrangian reduced cost (cost minus the multipliers of the rows it
        // covers), lowest first: the columns the relaxation likes, so that good covers
        // come early and the bound bites.
        let reduced = |c: u32| {
            m.col_cost[c as usize] as f64
                - m.col_rows[c as usize]
                    .iter()
                    .filter(|&&r| state.row_alive[r as usize])
                    .map(|&r| state.mult.get(r as usize).copied().unwrap_or(0.0))
                    .sum::<f64>()
        };
        cols.sort_by(|&a, &b| reduced(a).total_cmp(&reduced(b)).then(a.cmp(&b)));
        let mut best: Option<(u64, Vec<u32>)> = None;
        let mut upper = upper;
        for (k, &c) in cols.iter().enumerate() {
            let mut child = state.clone();
            // Columns tried before are excluded in later branches (they lose nothing:
            // any cover using them was explored in their own branch).
            for &earlier in &cols[..k] {
                child.col_alive[earlier as usize] = false;
            }
            self.choose(&mut child, c);
            if let Some(found) = self.solve(child, upper) {
                upper = found.0;
                best = Some(found);
            }
            if self.exhausted && best.is_some() {
                break;
            }
        }
        best
    }

    /// Solves independent components one by one (their minimum costs add up, so the
    /// search is a sum of small searches instead of their product), each against the
    /// upper bound left after the others' exact costs or lower bounds.
    fn solve_components(
        &mut self,
        state: State,
        comps: Vec<Vec<u32>>,
        upper: u64,
    ) -> Option<(u64, Vec<u32>)> {
        let only = |rows: &[u32]| {
            let mut sub = State {
                row_alive: vec![false; state.row_alive.len()],
                col_alive: state.col_alive.clone(),
                chosen: Vec::new(),
                cost: 0,
                mult: state.mult.clone(),
            };
            for &r in rows {
                sub.row_alive[r as usize] = true;
            }
            sub
        };
        let subs: Vec<State> = comps.iter().map(|rows| only(rows)).collect();
        let bounds: Vec<u64> = subs.iter().map(|s| self.lower_bound(s)).collect();
        let mut pending: u64 = bounds.iter().sum();
        let mut cost = state.cost;
        let mut chosen = state.chosen.clone();
        for (sub, bound) in subs.into_iter().zip(bounds) {
            pending -= bound;
            let limit = remaining(upper, cost.saturating_add(pending));
            let (c, cols) = self.solve(sub, limit)?;
            cost += c;
            chosen.extend(cols);
        }
        (cost < upper).then_some((cost, chosen))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::logic::cube::CoverCost;

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

    /// Tison's consensus on cube lists finds exactly the primes that Quine-McCluskey
    /// finds on the same function's minterms (random cube functions of 2-9 variables,
    /// some with don't-care cubes, and the textbook function given as minterm cubes).
    #[test]
    fn primes_from_cubes_match_quine_mccluskey() {
        let mut rng = SplitMix64::new(23);
        for round in 0..300u64 {
            let n = 2 + (round % 8) as usize;
            let on = (0..1 + rng.below(8))
                .map(|_| crate::testing::logic::random_cube(&mut rng, n, 600))
                .collect::<Vec<Cube>>();
            let dc = (0..rng.below(4))
                .map(|_| crate::testing::logic::random_cube(&mut rng, n, 700))
                .collect::<Vec<Cube>>();
            let mut on_m = Vec::new();
            let mut dc_m = Vec::new();
            for c in &on {
                c.for_each_minterm(n, |m| on_m.push(m));
            }
            for c in &dc {
                c.for_each_minterm(n, |m| dc_m.push(m));
            }
            let all: Vec<Cube> = on.iter().chain(dc.iter()).copied().collect();
            assert_eq!(
                primes_from_cubes(&all),
                Some(prime_implicants(n, &on_m, &dc_m)),
                "round {round}: n={n} on={on:?} dc={dc:?}"
            );
        }
        let on = [0u64, 1, 2, 5, 6, 7, 8, 9, 10, 14];
        let cubes: Vec<Cube> = on.iter().map(|&m| Cube::minterm(4, m)).collect();
        assert_eq!(
            primes_from_cubes(&cubes),
            Some(prime_implicants(4, &on, &[]))
        );
        assert_eq!(primes_from_cubes(&[]), Some(Vec::new()));
        assert_eq!(
            primes_from_cubes(&[Cube::UNIVERSE]),
            Some(vec![Cube::UNIVERSE])
        );
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

    use crate::testing::Rng as SplitMix64;

    /// A random covering matrix: `blocks` independent blocks of rows and columns (so the
    /// component splitting has something to split), every row in at least one column,
    /// costs 1-4 literals weighted as in [`Matrix::build`].
    fn random_matrix(rng: &mut SplitMix64, blocks: usize) -> Matrix {
        let mut col_rows: Vec<Vec<u32>> = Vec::new();
        let mut col_cost = Vec::new();
        let mut rows = 0u32;
        for _ in 0..blocks {
            let r = 2 + rng.below(4) as u32;
            let c = 2 + rng.below(4) as usize;
            let first = col_rows.len();
            for _ in 0..c {
                let list: Vec<u32> = (0..r)
                    .filter(|_| rng.below(100) < 45)
                    .map(|i| rows + i)
                    .collect();
                col_rows.push(list);
                col_cost.push(0);
            }
            // Every row gets a column.
            for i in 0..r {
                if !col_rows[first..].iter().any(|l| l.contains(&(rows + i))) {
                    let k = first + rng.below(c as u64) as usize;
                    col_rows[k].push(rows + i);
                    col_rows[k].sort_unstable();
                }
            }
            rows += r;
        }
        let weight = rows as u64 + 1;
        for cost in col_cost.iter_mut() {
            *cost = (1 + rng.below(4)) * weight + 1;
        }
        Matrix::from_columns(rows as usize, col_rows, col_cost)
    }

    /// Minimum cost over all column subsets covering the alive rows, using only alive
    /// columns (`u64::MAX` if none covers). Independent of the search.
    fn brute_force(m: &Matrix, row_alive: &[bool], col_alive: &[bool]) -> u64 {
        let cols = m.col_rows.len();
        assert!(cols <= 20);
        let mut best = u64::MAX;
        for set in 0u32..(1 << cols) {
            if (0..cols).any(|c| set >> c & 1 == 1 && !col_alive[c]) {
                continue;
            }
            let mut covered = vec![false; m.row_cols.len()];
            let mut cost = 0;
            for c in (0..cols).filter(|&c| set >> c & 1 == 1) {
                cost += m.col_cost[c];
                for &r in &m.col_rows[c] {
                    covered[r as usize] = true;
                }
            }
            if (0..covered.len()).all(|r| covered[r] || !row_alive[r]) {
                best = best.min(cost);
            }
        }
        best
    }

    fn cost_of(m: &Matrix, cols: &[u32]) -> u64 {
        cols.iter().map(|&c| m.col_cost[c as usize]).sum()
    }

    /// Component splitting gives the same cost as the unsplit search, and both the
    /// brute-force minimum, on random block-structured covering problems.
    #[test]
    fn component_splitting_matches_unsplit_search_and_brute_force() {
        let mut rng = SplitMix64::new(91);
        for _ in 0..300 {
            let blocks = 1 + rng.below(4) as usize;
            let m = random_matrix(&mut rng, blocks);
            if m.col_rows.len() > 16 {
                continue;
            }
            let all_rows = vec![true; m.row_cols.len()];
            let all_cols = vec![true; m.col_rows.len()];
            let truth = brute_force(&m, &all_rows, &all_cols);
            let (split, proven_s, _) = solve_matrix(&m, u64::MAX, true);
            let (whole, proven_w, _) = solve_matrix(&m, u64::MAX, false);
            assert!(proven_s && proven_w);
            assert_eq!(cost_of(&m, &split), truth);
            assert_eq!(cost_of(&m, &whole), truth);
            let mut covered = vec![false; m.row_cols.len()];
            for &c in &split {
                for &r in &m.col_rows[c as usize] {
                    covered[r as usize] = true;
                }
            }
            assert!(
                covered.iter().all(|&x| x),
                "split search must cover every row"
            );
        }
    }

    /// The components of a block-structured matrix are its blocks (or finer).
    #[test]
    fn components_never_join_independent_blocks() {
        let mut rng = SplitMix64::new(5);
        let m = random_matrix(&mut rng, 3);
        let search = Search {
            matrix: &m,
            nodes: 0,
            budget: 0,
            exhausted: false,
            split: true,
        };
        let state = State {
            row_alive: vec![true; m.row_cols.len()],
            col_alive: vec![true; m.col_rows.len()],
            chosen: Vec::new(),
            cost: 0,
            mult: Vec::new(),
        };
        let comps = search.components(&state);
        assert!(comps.len() >= 3);
        assert_eq!(comps.iter().map(Vec::len).sum::<usize>(), m.row_cols.len());
        for comp in &comps {
            for &r in comp {
                for &c in &m.row_cols[r as usize] {
                    assert!(m.col_rows[c as usize].iter().all(|x| comp.contains(x)));
                }
            }
        }
    }

    /// The lower bound never exceeds the true optimum of the remaining subproblem, on
    /// random matrices with random rows covered and columns excluded.
    #[test]
    fn lower_bound_never_exceeds_brute_force_optimum() {
        let mut rng = SplitMix64::new(17);
        let mut tight = 0;
        for _ in 0..400 {
            let blocks = 1 + rng.below(2) as usize;
            let m = random_matrix(&mut rng, blocks);
            if m.col_rows.len() > 14 {
                continue;
            }
            let row_alive: Vec<bool> = (0..m.row_cols.len()).map(|_| rng.below(4) > 0).collect();
            let col_alive: Vec<bool> = (0..m.col_rows.len()).map(|_| rng.below(5) > 0).collect();
            let truth = brute_force(&m, &row_alive, &col_alive);
            if truth == u64::MAX {
                continue;
            }
            let search = Search {
                matrix: &m,
                nodes: 0,
                budget: 0,
                exhausted: false,
                split: true,
            };
            let state = State {
                row_alive,
                col_alive,
                chosen: Vec::new(),
                cost: 0,
                mult: Vec::new(),
            };
            let bound = search.lower_bound(&state);
            assert!(bound <= truth, "bound {bound} above optimum {truth}");
            let mut fixed = state.clone();
            let (lagrange, _) = search.lagrangian(&mut fixed, truth.saturating_add(1));
            assert!(
                lagrange <= truth,
                "Lagrangian bound {lagrange} above optimum {truth}"
            );
            if truth < u64::MAX {
                assert_eq!(
                    brute_force(&m, &fixed.row_alive, &fixed.col_alive),
                    truth,
                    "cost fixing removed a column every optimum needs"
                );
            }
            tight += usize::from(lagrange == truth);
        }
        // The bound must be useful, not just 0.
        assert!(tight > 50, "bound tight only {tight} times");
    }

    /// With a tiny node budget the search still returns a valid (unproven) cover. The
    /// function is the second 10-variable benchmark function (the one with the hardest
    /// cyclic core, about 200 nodes), so 3 nodes cannot prove it.
    #[test]
    fn budget_exhaustion_still_covers() {
        let f = &crate::testing::logic::benchmark_functions(0xde7e_4e71, &[10], 2)[1];
        let r = minimize_exact(10, &f.on, &f.dc, 3);
        assert!(!r.proven);
        for &m in &f.on {
            assert!(r.cubes.iter().any(|c| c.contains_minterm(m)));
        }
        let full = minimize_exact(10, &f.on, &f.dc, DEFAULT_NODE_BUDGET);
        assert!(full.proven);
        assert!(CoverCost::of(&r.cubes) >= CoverCost::of(&full.cubes));
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
