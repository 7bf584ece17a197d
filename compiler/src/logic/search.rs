//! The state-assignment search of `logic --encoding auto`: a cheap score ranks many
//! assignments, exact minimization judges only the few that can win.
//!
//! **Exact cost.** The cost of an assignment is the literal count of every flip-flop
//! input, output and action equation, each minimized as [`super::equations::synthesize`]
//! does it (exact up to [`super::EXACT_MAX_VARS`] variables, the expand / irredundant /
//! reduce heuristic beyond), so the search optimizes exactly what the report shows. One
//! such evaluation minimizes every function once; it is the only expensive step.
//!
//! **Cheap score (the proxy).** The weighted code distance
//! `sum w(a, b) * hamming(code a, code b)` ([`Adjacency::score`]) with the weights of the
//! classic adjacency rules: states with the same next state under the same event, the
//! successors of one state, and states with the same outputs should get codes that
//! differ in few bits, so that their product terms merge (Humphrey 1958, *Switching
//! Circuits with Computer Applications*, ch. 10; Armstrong 1962, "A programmed
//! algorithm for assigning internal codes to sequential machines", IRE Trans.
//! Electronic Computers EC-11(4); the weighted fan-in / fan-out form of Devadas, Ma,
//! Newton and Sangiovanni-Vincentelli 1988, "State assignment of finite state machines
//! targeting multilevel logic implementations", IEEE Trans. CAD 7(12)). A code
//! swap or a move to a free code changes it by an O(m) sum ([`swap_delta`],
//! [`move_delta`]), so a descent on the score visits thousands of assignments in the
//! time of one exact evaluation.
//!
//! **The search** (deterministic: the same machine gives the same assignment on any
//! number of threads, unless the time budget cuts it short):
//!
//! 1. *Pool.* Up to 8 states ([`super::assign::canonical_assignments`] has at most 840
//!    representatives up to bit permutation and complementation) the pool is every
//!    representative; beyond, it is the distinct local minima of the score reached by a
//!    swap-and-move descent from [`POOL_RESTARTS`] starts (the greedy adjacency
//!    placement of [`adjacency_assignment`] with several tie-breaks, then random
//!    assignments). Duplicates up to bit permutation are dropped. The pool is sorted by
//!    score.
//! 2. *Exact ranking.* Complete pools of narrow equations ([`EXHAUSTIVE_MAX_VARS`]) are
//!    costed exactly in full, best score first: this is the exhaustive search, with
//!    pruning. Otherwise the first [`POOL_EXACT`] of the pool are costed exactly.
//! 3. *Exact descent* (multi-start local search, as in the iterative-improvement state
//!    assignment of Hachtel and Somenzi 1996, *Logic Synthesis and Verification
//!    Algorithms*, ch. 8): from the best costed assignments, the neighbours (every code
//!    swap of two states, every move of a state to a free code) are costed exactly in
//!    order of their score change, in batches; the best improving neighbour of a batch
//!    is taken and the neighbourhood rebuilt, until no neighbour improves or the budget
//!    of exact evaluations ([`SearchOptions::max_exact`]) is spent.
//!
//! **Making exact evaluations cheap.**
//! * *Bounds that prune*: a candidate's functions are minimized one by one (the small
//!   state-only output functions first) and the evaluation stops as soon as the partial
//!   literal count passes the bound (the best cost so far, or the current cost in the
//!   descent), since the remaining functions can only add literals (branch and bound
//!   over the sum, Land and Doig 1960, "An automatic method of solving discrete
//!   programming problems", Econometrica 28(3)).
//! * *Memoized minimization*: each minimized function is stored under its cube lists,
//!   so a function shared by several candidates (outputs of states that kept their
//!   codes, revisited assignments) is minimized once.
//! * *Parallel batches*: the candidates of a batch are costed on every core (rayon);
//!   the winner of a batch is the lowest cost, then the earliest in the batch, so the
//!   result does not depend on the thread count.
//! * The exact minimizer itself takes its primes from the cube lists by consensus
//!   ([`super::exact::primes_from_cubes`]) rather than from minterms: unused state codes
//!   are a few large don't-care cubes whose minterms cost Quine-McCluskey a tenth of a
//!   second per function at 12 variables.
//!
//! **Time budget.** With [`SearchOptions::budget`], the search stops at the first batch
//! boundary past the deadline and returns the best assignment costed so far (always at
//! least one: with a zero budget, the first of the pool), and says it was cut short.

use super::assign::{
    adjacency_assignment, canonical_assignments, canonical_under_permutation, dense_bits,
    raw_assignment_count, Adjacency, Encoding, EncodingKind,
};
use super::cube::Cube;
use super::equations::{function_sets, minimize_sets, tabulate, FunctionSet, LogicSpec, Role};
use super::excitation::FlipFlop;
use super::{CubeFunction, EXACT_MAX_VARS};
use crate::fxhash::FxMap;
use crate::rng::Rng;
use rayon::prelude::*;
use std::collections::HashSet;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Starts of the score descent that builds the pool beyond 8 states.
pub const POOL_RESTARTS: u64 = 64;

/// Starts that use the greedy adjacency placement (the rest are random).
const GREEDY_STARTS: u64 = 8;

/// Pool assignments costed exactly before the descent (beyond the exhaustive limit).
pub const POOL_EXACT: usize = 4;

/// Default cap on exact evaluations (see [`SearchOptions::max_exact`]).
pub const DEFAULT_MAX_EXACT: u64 = 200;

/// Default of [`SearchOptions::slack_per_mille`].
pub const DEFAULT_SLACK_PER_MILLE: u32 = 15;

/// Smallest slack of the descent's heuristic stop, in literals.
pub const MIN_SLACK: usize = 8;

/// Candidates costed in parallel between two looks at the clock and the incumbent.
const BATCH: usize = 4;

/// Widest equations (state bits + event bits + inputs) for which a complete pool (up to
/// 8 states: at most 840 assignments) is costed in full by default. Up to 12 variables
/// the exact minimizer runs and, with the pruning and the memo, 840 assignments take
/// well under a second; past 12 the expand / irredundant / reduce heuristic runs instead, about 1 ms
/// per function, and a full pool would take seconds.
pub const EXHAUSTIVE_MAX_VARS: usize = 12;

/// How hard the search works.
#[derive(Clone, Debug)]
pub struct SearchOptions {
    /// Wall-clock budget: past it the best assignment so far is returned, reported as
    /// cut short. `None`: no limit (the result is then deterministic).
    pub budget: Option<Duration>,
    /// Most exact evaluations of the pool ranking and descent together (an exhaustive
    /// search of a small pool is not capped).
    pub max_exact: u64,
    /// Widest equations for which a complete pool is costed in full (see
    /// [`EXHAUSTIVE_MAX_VARS`]); 0 always runs the guided search (used by the tests that
    /// compare it with the exhaustive one).
    pub exhaustive_max_vars: usize,
    /// In the descent, a neighbour is dropped once the functions costed so far cost
    /// more than this many thousandths of the current assignment's literals (at least
    /// [`MIN_SLACK`]) above the same functions of the current assignment. `None`: only
    /// the exact bound stops an evaluation.
    pub slack_per_mille: Option<u32>,
}

impl Default for SearchOptions {
    fn default() -> Self {
        SearchOptions {
            budget: None,
            max_exact: DEFAULT_MAX_EXACT,
            exhaustive_max_vars: EXHAUSTIVE_MAX_VARS,
            slack_per_mille: Some(DEFAULT_SLACK_PER_MILLE),
        }
    }
}

/// What the search did.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct SearchStats {
    /// Assignments scored by the cheap proxy (pool building and neighbour ordering).
    pub scored: u64,
    /// Assignments whose exact evaluation started.
    pub evaluated: u64,
    /// Of those, evaluations stopped early by the bound.
    pub pruned: u64,
    /// Functions minimized.
    pub minimized: u64,
    /// Functions found in the memo instead.
    pub memo_hits: u64,
    /// Whether every assignment up to bit permutation and complementation was costed.
    pub exhaustive: bool,
    /// Whether the time budget stopped the search early.
    pub cut_short: bool,
}

/// The cheapest assignment found.
#[derive(Clone, Debug)]
pub struct SearchResult {
    /// The code of each state.
    pub codes: Vec<u64>,
    /// Its literal count.
    pub literals: usize,
    /// What the search did.
    pub stats: SearchStats,
}

/// A minimized function's identity in the memo: variable count and cube lists (sorted).
#[derive(Clone, PartialEq, Eq, Hash)]
struct FunctionKey {
    vars: usize,
    on: Vec<Cube>,
    dc: Vec<Cube>,
}

/// Memo of exact function costs, keyed by the function; hashed with the crate's Fx
/// hasher (see [`crate::fxhash`]): the keys are word lists, for which SipHash was about
/// 3% of a search on the generated 16-state machine.
type Memo = FxMap<FunctionKey, usize>;

/// When an exact evaluation may stop early.
#[derive(Clone, Copy, Debug)]
enum Stop<'r> {
    /// Once the literals so far pass this total (exact: the functions not yet costed can
    /// only add literals).
    Above(usize),
    /// Against a reference assignment (the current one of a descent), whose functions
    /// cost `reference[i]` each: once the literals so far pass `bound`, or once the
    /// functions costed so far cost more than `slack` literals above the reference's
    /// same functions. The second test is a heuristic: it predicts that the functions
    /// not yet costed will not win those literals back (see the module documentation).
    Against {
        bound: usize,
        reference: &'r [usize],
        slack: usize,
    },
}

/// Costs assignments exactly, with the memo and the bound.
pub struct Evaluator<'a> {
    spec: &'a LogicSpec,
    ff: FlipFlop,
    bits: usize,
    memo: Mutex<Memo>,
    evaluated: AtomicU64,
    pruned: AtomicU64,
    minimized: AtomicU64,
    memo_hits: AtomicU64,
}

impl<'a> Evaluator<'a> {
    /// An evaluator for dense assignments (`ceil(log2 m)` bits) of `spec` with `ff`.
    pub fn new(spec: &'a LogicSpec, ff: FlipFlop) -> Evaluator<'a> {
        Evaluator {
            spec,
            ff,
            bits: dense_bits(spec.n_states),
            memo: Mutex::new(Memo::default()),
            evaluated: AtomicU64::new(0),
            pruned: AtomicU64::new(0),
            minimized: AtomicU64::new(0),
            memo_hits: AtomicU64::new(0),
        }
    }

    /// The literal count of the design under `codes` (what [`super::equations::synthesize`]
    /// would report), or `None` as soon as it is known to exceed `bound`.
    pub fn cost(&self, codes: &[u64], bound: usize) -> Result<Option<usize>, String> {
        Ok(self
            .evaluate(codes, Stop::Above(bound))?
            .map(|per| per.iter().sum()))
    }

    /// The literal count of each function under `codes`, in the order of
    /// [`function_sets`], or `None` when `stop` ended the evaluation.
    fn evaluate(&self, codes: &[u64], stop: Stop<'_>) -> Result<Option<Vec<usize>>, String> {
        self.evaluated.fetch_add(1, Ordering::Relaxed);
        let enc = Encoding {
            kind: EncodingKind::Searched,
            bits: self.bits,
            codes: codes.to_vec(),
        };
        let sets = function_sets(self.spec, &enc, self.ff)?.functions;
        // Narrow (state-only) functions first: cheap, and they tighten the bound early.
        // Then the flip-flop inputs, which change the most from one assignment to the
        // next (the next-state codes move as well as the present-state ones).
        let group = |f: &FunctionSet| (f.vars.len(), !matches!(f.role, Role::FlipFlop { .. }));
        let mut order: Vec<usize> = (0..sets.len()).collect();
        order.sort_by_key(|&i| group(&sets[i]));
        let groups: Vec<(usize, bool)> = order.iter().map(|&i| group(&sets[i])).collect();
        let mut sets: Vec<Option<FunctionSet>> = sets.into_iter().map(Some).collect();
        let mut per = vec![0usize; sets.len()];
        let (mut total, mut delta) = (0usize, 0i64);
        let mut remaining: usize = match stop {
            Stop::Against { reference, .. } => reference.iter().sum(),
            Stop::Above(_) => 0,
        };
        for (k, &i) in order.iter().enumerate() {
            let Some(set) = sets[i].take() else { continue };
            let literals = self.function_literals(set)?;
            per[i] = literals;
            total += literals;
            let stopped = match stop {
                Stop::Above(bound) => total > bound,
                Stop::Against {
                    bound,
                    reference,
                    slack,
                } => {
                    delta += literals as i64 - reference[i] as i64;
                    remaining -= reference[i];
                    let allowed = (remaining * slack / 1000).max(MIN_SLACK);
                    let group_done = groups.get(k + 1) != Some(&groups[k]);
                    total > bound || (group_done && delta > allowed as i64)
                }
            };
            if stopped {
                self.pruned.fetch_add(1, Ordering::Relaxed);
                return Ok(None);
            }
        }
        Ok(Some(per))
    }

    /// The literal count of one function's cover, from the memo or minimized.
    fn function_literals(&self, set: FunctionSet) -> Result<usize, String> {
        let mut key = FunctionKey {
            vars: set.vars.len(),
            on: set.on,
            dc: set.dc,
        };
        key.on.sort_unstable();
        key.on.dedup();
        key.dc.sort_unstable();
        key.dc.dedup();
        if let Some(&l) = self.lock_memo().get(&key) {
            self.memo_hits.fetch_add(1, Ordering::Relaxed);
            return Ok(l);
        }
        self.minimized.fetch_add(1, Ordering::Relaxed);
        let cf = CubeFunction {
            vars: set.vars,
            on: key.on.clone(),
            dc: key.dc.clone(),
        };
        // The minterm table serves the exact method only.
        let table = if cf.vars.len() <= EXACT_MAX_VARS {
            tabulate(&cf.vars, &cf.on, &cf.dc)
        } else {
            None
        };
        let cover = minimize_sets(&cf, &set.off, table.as_ref())
            .map_err(|e| format!("function {}: {e}", set.name))?;
        self.lock_memo().insert(key, cover.literals);
        Ok(cover.literals)
    }

    fn lock_memo(&self) -> std::sync::MutexGuard<'_, Memo> {
        // A panic while holding the lock leaves a usable map (entries are complete).
        self.memo.lock().unwrap_or_else(|p| p.into_inner())
    }

    fn stats(&self) -> SearchStats {
        SearchStats {
            evaluated: self.evaluated.load(Ordering::Relaxed),
            pruned: self.pruned.load(Ordering::Relaxed),
            minimized: self.minimized.load(Ordering::Relaxed),
            memo_hits: self.memo_hits.load(Ordering::Relaxed),
            ..SearchStats::default()
        }
    }
}

/// Score change of swapping the codes of states `a` and `b` (O(m)).
pub fn swap_delta(adj: &Adjacency, codes: &[u64], a: usize, b: usize) -> i64 {
    let m = adj.m;
    let (ca, cb) = (codes[a], codes[b]);
    let mut delta = 0i64;
    for (t, &ct) in codes.iter().enumerate() {
        if t == a || t == b {
            continue;
        }
        let dw = i64::from(adj.w[a * m + t]) - i64::from(adj.w[b * m + t]);
        if dw != 0 {
            let dh = i64::from((cb ^ ct).count_ones()) - i64::from((ca ^ ct).count_ones());
            delta += dw * dh;
        }
    }
    delta
}

/// Score change of moving state `a` to the (free) code `c` (O(m)).
pub fn move_delta(adj: &Adjacency, codes: &[u64], a: usize, c: u64) -> i64 {
    let m = adj.m;
    let ca = codes[a];
    let mut delta = 0i64;
    for (t, &ct) in codes.iter().enumerate() {
        let w = i64::from(adj.w[a * m + t]);
        if t != a && w != 0 {
            delta += w * (i64::from((c ^ ct).count_ones()) - i64::from((ca ^ ct).count_ones()));
        }
    }
    delta
}

/// A neighbour of an assignment: a code swap of two states or a move to a free code.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Move {
    Swap(usize, usize),
    To(usize, u64),
}

impl Move {
    fn apply(self, codes: &mut [u64]) {
        match self {
            Move::Swap(a, b) => codes.swap(a, b),
            Move::To(a, c) => codes[a] = c,
        }
    }
}

/// Every neighbour of `codes` with its score change, best first (ties in generation
/// order).
fn neighbours(adj: &Adjacency, codes: &[u64], bits: usize) -> Vec<(i64, Move)> {
    let m = codes.len();
    let mut used = vec![false; 1usize << bits];
    for &c in codes {
        used[c as usize] = true;
    }
    let mut out = Vec::new();
    for a in 0..m {
        for b in a + 1..m {
            out.push((swap_delta(adj, codes, a, b), Move::Swap(a, b)));
        }
        for c in (0..1u64 << bits).filter(|&c| !used[c as usize]) {
            out.push((move_delta(adj, codes, a, c), Move::To(a, c)));
        }
    }
    // Stable: equal deltas keep generation order.
    out.sort_by_key(|&(d, _)| d);
    out
}

/// Descends on the score from `codes` (best improving neighbour each step) to a local
/// minimum; returns the number of assignments scored.
fn score_descent(adj: &Adjacency, codes: &mut [u64], bits: usize) -> u64 {
    let mut scored = 0u64;
    loop {
        let list = neighbours(adj, codes, bits);
        scored += list.len() as u64;
        match list.first() {
            Some(&(d, mv)) if d < 0 => mv.apply(codes),
            _ => return scored,
        }
    }
}

/// A random assignment of distinct codes with `start` at code 0.
fn random_assignment(rng: &mut Rng, m: usize, start: usize, bits: usize) -> Vec<u64> {
    let mut free: Vec<u64> = (1..1u64 << bits).collect();
    // Fisher-Yates.
    for i in (1..free.len()).rev() {
        let j = rng.below(i as u64 + 1) as usize;
        free.swap(i, j);
    }
    let mut codes = vec![0u64; m];
    let mut next = free.into_iter();
    for (s, code) in codes.iter_mut().enumerate() {
        if s != start {
            *code = next.next().unwrap_or(0);
        }
    }
    codes
}

/// The pool of candidate assignments with their scores, sorted by score, and whether it
/// is every assignment up to symmetry.
fn build_pool(spec: &LogicSpec, adj: &Adjacency, stats: &mut SearchStats) -> (Vec<Vec<u64>>, bool) {
    let m = spec.n_states;
    let bits = dense_bits(m);
    let mut scored: Vec<(u64, Vec<u64>)> = Vec::new();
    let complete = raw_assignment_count(m) <= super::assign::EXHAUSTIVE_MAX_RAW;
    if complete {
        canonical_assignments(m, spec.start, |codes| {
            scored.push((adj.score(codes), codes.to_vec()));
            true
        });
        stats.scored += scored.len() as u64;
    } else {
        let mut seen: HashSet<Vec<u64>> = HashSet::new();
        let mut rng = Rng::from_state(0x5eed_a551);
        for start in 0..POOL_RESTARTS {
            let mut codes = if start < GREEDY_STARTS {
                adjacency_assignment(adj, spec.start, start)
            } else {
                random_assignment(&mut rng, m, spec.start, bits)
            };
            stats.scored += 1 + score_descent(adj, &mut codes, bits);
            if seen.insert(canonical_under_permutation(&codes, bits)) {
                scored.push((adj.score(&codes), codes));
            }
        }
    }
    // Stable: equal scores keep enumeration (or start) order.
    scored.sort_by_key(|(s, _)| *s);
    (scored.into_iter().map(|(_, c)| c).collect(), complete)
}

/// The search state shared by the phases: the evaluator, the best so far, the clock.
struct Run<'a, 'p> {
    eval: Evaluator<'a>,
    deadline: Option<Instant>,
    cut_short: bool,
    best: Option<(usize, Vec<u64>)>,
    progress: &'p mut dyn FnMut(u64, u64),
    total: u64,
}

/// Per-function literal counts of each candidate of a batch (`None`: stopped early).
type BatchCosts = Vec<Option<Vec<usize>>>;

impl Run<'_, '_> {
    fn past_deadline(&self) -> bool {
        self.deadline.is_some_and(|d| Instant::now() >= d)
    }

    /// Costs `batch` in parallel under `stop` and records the best. The first
    /// evaluation of the search is never skipped; after that, a deadline already passed
    /// costs nothing (`None`) and marks the run cut short.
    fn cost_batch(
        &mut self,
        batch: &[Vec<u64>],
        stop: Stop<'_>,
    ) -> Result<Option<BatchCosts>, String> {
        let first = self.best.is_none();
        if self.past_deadline() && !first {
            self.cut_short = true;
            return Ok(None);
        }
        let batch = if first && self.past_deadline() {
            self.cut_short = batch.len() > 1 || self.cut_short;
            &batch[..batch.len().min(1)]
        } else {
            batch
        };
        let eval = &self.eval;
        let costs: BatchCosts = batch
            .par_iter()
            .map(|codes| eval.evaluate(codes, stop))
            .collect::<Result<_, _>>()?;
        for (codes, per) in batch.iter().zip(costs.iter()) {
            if let Some(per) = per {
                let c: usize = per.iter().sum();
                if self.best.as_ref().is_none_or(|(b, _)| c < *b) {
                    self.best = Some((c, codes.clone()));
                }
            }
        }
        let done = self.eval.evaluated.load(Ordering::Relaxed);
        (self.progress)(done.min(self.total), self.total);
        Ok(Some(costs))
    }

    fn bound(&self) -> usize {
        self.best.as_ref().map_or(usize::MAX, |(b, _)| *b)
    }

    fn evaluated(&self) -> u64 {
        self.eval.evaluated.load(Ordering::Relaxed)
    }
}

/// Searches for the assignment of `ceil(log2 m)` bits with the fewest literals (see the
/// module documentation). `progress(done, total)` is called after each batch of exact
/// evaluations. Errors when a function cannot be built or minimized.
pub fn search_assignment(
    spec: &LogicSpec,
    ff: FlipFlop,
    opts: &SearchOptions,
    progress: &mut dyn FnMut(u64, u64),
) -> Result<SearchResult, String> {
    let started = Instant::now();
    let m = spec.n_states;
    let bits = dense_bits(m);
    let adj = spec.adjacency();
    let mut stats = SearchStats::default();
    let (pool, complete) = build_pool(spec, adj, &mut stats);
    let vars = bits + spec.ev_bits + spec.inputs.len() + spec.dues.len() + spec.compares.len();
    // A complete pool is costed in full when its equations are narrow, or when it is no
    // larger than the exact evaluations the guided search would spend anyway.
    let exhaustive =
        complete && (vars <= opts.exhaustive_max_vars || pool.len() as u64 <= opts.max_exact);
    let total = if exhaustive {
        pool.len() as u64
    } else {
        opts.max_exact
    };
    let mut run = Run {
        eval: Evaluator::new(spec, ff),
        deadline: opts.budget.map(|b| started + b),
        cut_short: false,
        best: None,
        progress,
        total,
    };

    // Exact ranking of the pool: all of it when exhaustive, else its best-scored part.
    let ranked = if exhaustive {
        pool.len()
    } else {
        pool.len().min(POOL_EXACT).min(opts.max_exact as usize)
    };
    // (cost, pool index, cost of each function)
    let mut pool_costs: Vec<(usize, usize, Vec<usize>)> = Vec::new();
    for (chunk_no, chunk) in pool[..ranked].chunks(BATCH).enumerate() {
        // The descent starts from the best few, so the ranking needs their exact costs:
        // no pruning there; the exhaustive search prunes against the best so far.
        let bound = if exhaustive { run.bound() } else { usize::MAX };
        let Some(costs) = run.cost_batch(chunk, Stop::Above(bound))? else {
            break;
        };
        for (i, per) in costs.into_iter().enumerate() {
            if let Some(per) = per {
                pool_costs.push((per.iter().sum(), chunk_no * BATCH + i, per));
            }
        }
    }

    if !exhaustive && !run.cut_short {
        pool_costs.sort_unstable();
        let mut visited: HashSet<Vec<u64>> = pool[..ranked]
            .iter()
            .map(|c| canonical_under_permutation(c, bits))
            .collect();
        // Multi-start descent. Starts: the costed part of the pool, cheapest first, then
        // the rest of the pool in score order (costed when reached), while exact
        // evaluations remain.
        let mut starts: Vec<(Option<Vec<usize>>, usize)> = pool_costs
            .into_iter()
            .map(|(_, i, per)| (Some(per), i))
            .collect();
        starts.extend((ranked..pool.len()).map(|i| (None, i)));
        'starts: for (known, index) in starts {
            let mut current = pool[index].clone();
            let mut current_per = match known {
                Some(per) => per,
                None => {
                    if run.evaluated() >= opts.max_exact {
                        break 'starts;
                    }
                    if !visited.insert(canonical_under_permutation(&current, bits)) {
                        continue;
                    }
                    let Some(mut costs) =
                        run.cost_batch(std::slice::from_ref(&current), Stop::Above(usize::MAX))?
                    else {
                        break 'starts;
                    };
                    match costs.pop().flatten() {
                        Some(per) => per,
                        None => continue,
                    }
                }
            };
            loop {
                let current_cost: usize = current_per.iter().sum();
                let list = neighbours(adj, &current, bits);
                stats.scored += list.len() as u64;
                let mut improved = false;
                // Unvisited neighbours, best score change first, costed in batches; a
                // neighbour counts as visited once it is costed.
                let mut pending = list.iter().map(|&(_, mv)| {
                    let mut next = current.clone();
                    mv.apply(&mut next);
                    next
                });
                loop {
                    let left = opts.max_exact.saturating_sub(run.evaluated()) as usize;
                    if left == 0 {
                        break 'starts;
                    }
                    let mut chunk: Vec<Vec<u64>> = Vec::with_capacity(BATCH);
                    for next in pending.by_ref() {
                        if visited.insert(canonical_under_permutation(&next, bits)) {
                            chunk.push(next);
                            if chunk.len() == BATCH.min(left) {
                                break;
                            }
                        }
                    }
                    if chunk.is_empty() {
                        break;
                    }
                    // Only strictly better neighbours matter.
                    let stop = match opts.slack_per_mille {
                        Some(per_mille) => Stop::Against {
                            bound: current_cost.saturating_sub(1),
                            reference: &current_per,
                            slack: per_mille as usize,
                        },
                        None => Stop::Above(current_cost.saturating_sub(1)),
                    };
                    let Some(costs) = run.cost_batch(&chunk, stop)? else {
                        break 'starts;
                    };
                    let winner = costs
                        .iter()
                        .enumerate()
                        .filter_map(|(i, per)| per.as_ref().map(|p| (p.iter().sum::<usize>(), i)))
                        .min();
                    if let Some((_, i)) = winner {
                        current = chunk.swap_remove(i);
                        current_per = costs.into_iter().nth(i).flatten().unwrap_or_default();
                        improved = true;
                        break;
                    }
                }
                if !improved {
                    break;
                }
            }
        }
    }

    let mut stats_out = run.eval.stats();
    stats_out.scored = stats.scored;
    stats_out.exhaustive = exhaustive && !run.cut_short;
    stats_out.cut_short = run.cut_short;
    let (literals, codes) = run
        .best
        .ok_or_else(|| "the assignment search costed no assignment".to_string())?;
    Ok(SearchResult {
        codes,
        literals,
        stats: stats_out,
    })
}
