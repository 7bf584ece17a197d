//! The `auto` encoding of `logic --encoding auto`: the searched state assignment
//! ([`super::search`]) costed beside binary, gray and one-hot, the cheapest chosen, and
//! the report of what the search did. The search this replaced is kept as
//! [`auto_assign_baseline`], the baseline of the benchmark and of the quality test.
//!
//! This module sits above both [`super::equations`] (synthesis of one design) and
//! [`super::search`] (which scores candidates with the equations' function sets), so
//! neither of them imports the other's caller.

use super::assign::{
    adjacency_assignment, canonical_assignments, raw_assignment_count, Encoding, EncodingKind,
    EXHAUSTIVE_MAX_RAW,
};
use super::equations::{synthesize, LogicDesign, LogicSpec, Map, AUTO_MAX_STATES};
use super::excitation::FlipFlop;
use super::gates::GateCost;
use super::search::{search_assignment, SearchOptions, SearchStats};

/// Restarts of the adjacency heuristic (different tie-breaking), each costed exactly.
const HEURISTIC_RESTARTS: u64 = 6;

/// Exact-cost improvement steps after the heuristic (pairwise code swaps, each costed by
/// minimizing every function).
const HEURISTIC_SWAP_BUDGET: u64 = 120;

/// One row of the `auto` cost table.
#[derive(Clone, Debug)]
pub struct CostRow {
    /// The encoding.
    pub encoding: Encoding,
    /// Flip-flops (state bits).
    pub flip_flops: usize,
    /// Literals of all sums of products.
    pub literals: usize,
    /// Gate cost in the chosen form.
    pub cost: GateCost,
}

/// What the `auto` search did.
#[derive(Clone, Debug)]
pub struct AutoReport {
    /// binary, gray, one-hot (up to 64 states) and the searched assignment.
    pub rows: Vec<CostRow>,
    /// Index of the chosen (cheapest) row.
    pub chosen: usize,
    /// Assignments costed by the search (exact evaluations started).
    pub evaluated: u64,
    /// Whether every assignment up to symmetry was tried.
    pub exhaustive: bool,
    /// Whether the time budget stopped the search before it finished.
    pub cut_short: bool,
    /// The search's counters (scored by the proxy, pruned, memo hits).
    pub stats: SearchStats,
}

/// Searches for a cheap state assignment and returns the cheapest design among binary,
/// gray, one-hot and the searched assignment, by literal count (then gates, gate inputs
/// and flip-flops), with the table of all four. The search is
/// [`super::search::search_assignment`] with default options (no time budget).
/// `progress(done, total)` is called as assignments are costed.
pub fn auto_assign(
    spec: &LogicSpec,
    ff: FlipFlop,
    map: Map,
    progress: &mut dyn FnMut(u64, u64),
) -> Result<(LogicDesign, AutoReport), String> {
    auto_assign_with(spec, ff, map, &SearchOptions::default(), progress)
}

/// [`auto_assign`] with search options (a time budget, a cap on exact evaluations).
pub fn auto_assign_with(
    spec: &LogicSpec,
    ff: FlipFlop,
    map: Map,
    opts: &SearchOptions,
    progress: &mut dyn FnMut(u64, u64),
) -> Result<(LogicDesign, AutoReport), String> {
    let found = search_assignment(spec, ff, opts, progress)?;
    let stats = found.stats.clone();
    cost_table(spec, ff, map, Some(found.codes), stats)
}

/// The search `auto` used before [`super::search`], kept as the baseline of the
/// benchmark and of the quality test: up to [`EXHAUSTIVE_MAX_RAW`] raw assignments (8
/// states) every assignment up to symmetry ([`canonical_assignments`]) is costed by
/// minimizing all functions, without pruning; beyond, the adjacency heuristic
/// ([`adjacency_assignment`], [`HEURISTIC_RESTARTS`] restarts) followed by a descent over
/// pairwise code swaps costed exactly (at most [`HEURISTIC_SWAP_BUDGET`] evaluations).
pub fn auto_assign_baseline(
    spec: &LogicSpec,
    ff: FlipFlop,
    map: Map,
    progress: &mut dyn FnMut(u64, u64),
) -> Result<(LogicDesign, AutoReport), String> {
    let m = spec.n_states;
    let literal_cost = |codes: &[u64]| -> Result<usize, String> {
        let enc = Encoding {
            kind: EncodingKind::Searched,
            bits: super::assign::dense_bits(m),
            codes: codes.to_vec(),
        };
        Ok(synthesize(spec, &enc, ff, false)?.literals())
    };
    let raw = raw_assignment_count(m);
    let exhaustive = raw <= EXHAUSTIVE_MAX_RAW;
    let mut evaluated = 0u64;
    let mut best: Option<(usize, Vec<u64>)> = None;
    let mut failure: Option<String> = None;
    if exhaustive {
        let mut reps: Vec<Vec<u64>> = Vec::new();
        canonical_assignments(m, spec.start, |codes| {
            reps.push(codes.to_vec());
            true
        });
        let total = reps.len() as u64;
        for codes in reps {
            match literal_cost(&codes) {
                Ok(c) => {
                    if best.as_ref().is_none_or(|(b, _)| c < *b) {
                        best = Some((c, codes));
                    }
                }
                Err(e) => failure = Some(e),
            }
            evaluated += 1;
            progress(evaluated, total);
        }
    } else if m <= AUTO_MAX_STATES {
        let pairs = (m * (m - 1) / 2) as u64;
        let total = HEURISTIC_RESTARTS + HEURISTIC_SWAP_BUDGET.min(pairs);
        for seed in 0..HEURISTIC_RESTARTS {
            let codes = adjacency_assignment(spec.adjacency(), spec.start, seed);
            let c = literal_cost(&codes)?;
            if best.as_ref().is_none_or(|(b, _)| c < *b) {
                best = Some((c, codes));
            }
            evaluated += 1;
            progress(evaluated, total);
        }
        // Exact-cost descent: try swapping the codes of pairs of states, in order of
        // the largest affinity first, keeping improvements, within the budget.
        if let Some((mut cost, mut codes)) = best.take() {
            let mut order: Vec<(u32, usize, usize)> = Vec::new();
            for a in 0..m {
                for b in a + 1..m {
                    order.push((spec.adjacency().w[a * m + b], a, b));
                }
            }
            order.sort_unstable_by(|x, y| y.cmp(x));
            for &(_, a, b) in order.iter().take(HEURISTIC_SWAP_BUDGET as usize) {
                codes.swap(a, b);
                let c = literal_cost(&codes)?;
                if c < cost {
                    cost = c;
                } else {
                    codes.swap(a, b);
                }
                evaluated += 1;
                progress(evaluated, total);
            }
            best = Some((cost, codes));
        }
    }
    if let Some(e) = failure {
        return Err(e);
    }
    let stats = SearchStats {
        evaluated,
        minimized: evaluated * spec_function_count(spec, ff) as u64,
        exhaustive,
        ..SearchStats::default()
    };
    cost_table(spec, ff, map, best.map(|(_, codes)| codes), stats)
}

/// Functions per design: the flip-flop inputs of the dense encoding, outputs, actions,
/// timer clears, counter controls.
fn spec_function_count(spec: &LogicSpec, ff: FlipFlop) -> usize {
    super::assign::dense_bits(spec.n_states) * ff.input_names().len()
        + spec.outputs.len()
        + spec.actions.len()
        + spec.timers.len()
        + spec.controls.len()
}

/// The `auto` table: binary, gray, one-hot (up to 64 states) and the searched
/// assignment, each synthesized (with complements for NOR-NOR), the cheapest chosen.
fn cost_table(
    spec: &LogicSpec,
    ff: FlipFlop,
    map: Map,
    searched: Option<Vec<u64>>,
    stats: SearchStats,
) -> Result<(LogicDesign, AutoReport), String> {
    let m = spec.n_states;
    let complements = map == Map::Nor;
    let mut candidates = vec![Encoding::binary(m), Encoding::gray(m)];
    if let Ok(oh) = Encoding::one_hot(m) {
        candidates.push(oh);
    }
    if let Some(codes) = searched {
        candidates.push(Encoding {
            kind: EncodingKind::Searched,
            bits: super::assign::dense_bits(m),
            codes,
        });
    }
    let mut rows = Vec::new();
    let mut designs = Vec::new();
    for enc in candidates {
        let d = synthesize(spec, &enc, ff, complements)?;
        rows.push(CostRow {
            flip_flops: enc.bits,
            literals: d.literals(),
            cost: d.cost(map)?,
            encoding: enc,
        });
        designs.push(d);
    }
    let chosen = (0..rows.len())
        .min_by_key(|&i| {
            let r = &rows[i];
            (r.literals, r.cost.gates, r.cost.gate_inputs, r.flip_flops)
        })
        .unwrap_or(0);
    let design = designs.swap_remove(chosen);
    Ok((
        design,
        AutoReport {
            rows,
            chosen,
            evaluated: stats.evaluated,
            exhaustive: stats.exhaustive,
            cut_short: stats.cut_short,
            stats,
        },
    ))
}
