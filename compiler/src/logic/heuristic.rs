//! Heuristic two-level minimization on cube lists, for functions too wide for minterms.
//!
//! The loop of the published Espresso method (Brayton, Hachtel, McMullen,
//! Sangiovanni-Vincentelli, 1984), simplified:
//!
//! * **complement**: the off-set `R` is the complement of `F ∪ D`, computed by the
//!   unate-recursive paradigm: Shannon expansion on the most binate variable, a
//!   De Morgan expansion at single cubes, and merging of the two halves (a cube found in
//!   both halves loses the splitting literal). Never by enumerating minterms.
//! * **expand**: each cube, largest first, drops literals one at a time as long as it
//!   stays disjoint from `R`; the literal order favours literals whose removal lets the
//!   cube swallow other cubes of the cover. Every expanded cube is prime. Cost
//!   O(|F| n |R|) cube operations.
//! * **irredundant**: a cube covered by the rest of the cover and `D` (a tautology check
//!   of the cofactor) is dropped, trying cubes with the most literals first.
//! * **reduce**: each cube shrinks to the smallest cube containing the part of it that no
//!   other cube (nor `D`) covers (the supercube of the complement of the cofactor), which
//!   lets the next expand move in another direction.
//!
//! The loop stops when a pass (reduce, expand, irredundant) no longer lowers the cost
//! (literals, then products). The result is a prime and irredundant cover, not
//! necessarily a minimum. The tautology check is the unate-recursive one as well.

use std::collections::HashSet;

use super::cube::Cube;
use super::exact::CoverCost;

/// Chooses the splitting variable for the recursive paradigm: the bit of the variable
/// that appears in the most cubes in both phases (most binate), else the most frequent.
/// `None` when no cube cares for any variable.
fn split_variable(cubes: &[Cube]) -> Option<(u64, bool)> {
    let mut ones = [0u32; 64];
    let mut zeros = [0u32; 64];
    let mut any = 0u64;
    for c in cubes {
        any |= c.care;
        let mut bits = c.care;
        while bits != 0 {
            let b = bits.trailing_zeros() as usize;
            bits &= bits - 1;
            if c.value >> b & 1 == 1 {
                ones[b] += 1;
            } else {
                zeros[b] += 1;
            }
        }
    }
    if any == 0 {
        return None;
    }
    let mut best: Option<(u64, bool, (u32, u32))> = None;
    for b in 0..64 {
        if any >> b & 1 == 0 {
            continue;
        }
        let binate = ones[b] > 0 && zeros[b] > 0;
        let key = (
            if binate { ones[b].min(zeros[b]) } else { 0 },
            ones[b] + zeros[b],
        );
        if best.is_none_or(|(_, _, k)| key > k) {
            best = Some((1u64 << b, binate, key));
        }
    }
    best.map(|(bit, binate, _)| (bit, binate))
}

/// Cofactors a cube list with respect to cube `by`.
pub fn cofactor(cubes: &[Cube], by: &Cube) -> Vec<Cube> {
    cubes.iter().filter_map(|c| c.cofactor(by)).collect()
}

/// Whether the union of the cubes is the whole space (unate-recursive tautology check).
pub fn tautology(cubes: &[Cube]) -> bool {
    if cubes.iter().any(|c| c.care == 0) {
        return true;
    }
    if cubes.is_empty() {
        return false;
    }
    match split_variable(cubes) {
        None => true,
        // A unate cover without the universal cube is never a tautology (the minterm
        // that takes every variable against its only phase is uncovered).
        Some((_, false)) => false,
        Some((bit, true)) => {
            let pos = Cube {
                value: bit,
                care: bit,
            };
            let neg = Cube {
                value: 0,
                care: bit,
            };
            tautology(&cofactor(cubes, &neg)) && tautology(&cofactor(cubes, &pos))
        }
    }
}

/// Whether cube `c` lies within the union of `cubes`.
pub fn cube_covered(c: &Cube, cubes: &[Cube]) -> bool {
    tautology(&cofactor(cubes, c))
}

/// Removes cubes contained in another cube of the list (single-cube containment).
pub fn remove_contained(cubes: &mut Vec<Cube>) {
    cubes.sort_unstable_by_key(|c| (c.literals(), c.care, c.value));
    cubes.dedup();
    let mut kept: Vec<Cube> = Vec::with_capacity(cubes.len());
    for c in cubes.iter() {
        if !kept.iter().any(|k| k.contains(c)) {
            kept.push(*c);
        }
    }
    *cubes = kept;
}

/// The complement of the union of `cubes`, as a cube list (unate-recursive paradigm).
pub fn complement(cubes: &[Cube]) -> Vec<Cube> {
    if cubes.is_empty() {
        return vec![Cube::UNIVERSE];
    }
    if cubes.iter().any(|c| c.care == 0) {
        return Vec::new();
    }
    if cubes.len() == 1 {
        // De Morgan, made disjoint: x1' + x1 x2' + x1 x2 x3' + ...
        let c = cubes[0];
        let mut out = Vec::with_capacity(c.literals());
        let mut prefix = Cube::UNIVERSE;
        let mut bits = c.care;
        while bits != 0 {
            let bit = bits & bits.wrapping_neg();
            bits &= !bit;
            let lit = c.value & bit;
            out.push(Cube::new(prefix.value | (lit ^ bit), prefix.care | bit));
            prefix = Cube::new(prefix.value | lit, prefix.care | bit);
        }
        return out;
    }
    let Some((bit, _)) = split_variable(cubes) else {
        return Vec::new();
    };
    let pos = Cube {
        value: bit,
        care: bit,
    };
    let neg = Cube {
        value: 0,
        care: bit,
    };
    let comp_neg = complement(&cofactor(cubes, &neg));
    let comp_pos = complement(&cofactor(cubes, &pos));
    merge_halves(bit, comp_neg, comp_pos)
}

/// `x'·A + x·B`, with cubes common to both halves (found by hashing) keeping no literal
/// of `x`. Single-cube containment is removed only while the halves are small (it is
/// quadratic); a few contained cubes in an off-set cost time, not correctness.
fn merge_halves(bit: u64, neg: Vec<Cube>, pos: Vec<Cube>) -> Vec<Cube> {
    let in_pos: HashSet<Cube> = pos.iter().copied().collect();
    let in_neg: HashSet<Cube> = neg.iter().copied().collect();
    let mut out = Vec::with_capacity(neg.len() + pos.len());
    for a in &neg {
        if in_pos.contains(a) {
            out.push(*a);
        } else {
            out.push(Cube::new(a.value, a.care | bit));
        }
    }
    for b in &pos {
        if !in_neg.contains(b) {
            out.push(Cube::new(b.value | bit, b.care | bit));
        }
    }
    if out.len() <= 512 {
        remove_contained(&mut out);
    }
    out
}

/// Expands every cube of `cover` to a prime against the off-set `off`, removing cubes
/// that an expanded cube contains.
pub fn expand(cover: &mut Vec<Cube>, off: &[Cube]) {
    cover.sort_unstable_by_key(|c| (c.literals(), c.care, c.value));
    let mut done: Vec<Cube> = Vec::with_capacity(cover.len());
    let mut covered = vec![false; cover.len()];
    for i in 0..cover.len() {
        if covered[i] {
            continue;
        }
        let mut cube = cover[i];
        // Literal order: literals whose removal brings more not-yet-covered cubes of the
        // cover closer (they disagree with them there) come first.
        let mut order: Vec<(usize, u64)> = Vec::new();
        let mut bits = cube.care;
        while bits != 0 {
            let bit = bits & bits.wrapping_neg();
            bits &= !bit;
            let score = cover
                .iter()
                .enumerate()
                .filter(|&(j, d)| j != i && !covered[j] && d.conflict(&cube) == bit)
                .count();
            order.push((score, bit));
        }
        order.sort_by(|a, b| b.0.cmp(&a.0).then(a.1.cmp(&b.1)));
        for &(_, bit) in &order {
            let raised = Cube::new(cube.value, cube.care & !bit);
            if off.iter().all(|r| r.conflict(&raised) != 0) {
                cube = raised;
            }
        }
        for j in i + 1..cover.len() {
            if !covered[j] && cube.contains(&cover[j]) {
                covered[j] = true;
            }
        }
        done.push(cube);
    }
    remove_contained(&mut done);
    *cover = done;
}

/// Drops cubes covered by the rest of the cover together with the don't-cares `dc`,
/// most literals first.
pub fn irredundant(cover: &mut Vec<Cube>, dc: &[Cube]) {
    let mut order: Vec<usize> = (0..cover.len()).collect();
    order.sort_by_key(|&i| std::cmp::Reverse(cover[i].literals()));
    let mut alive = vec![true; cover.len()];
    for i in order {
        alive[i] = false;
        let rest: Vec<Cube> = cover
            .iter()
            .enumerate()
            .filter(|&(j, _)| alive[j])
            .map(|(_, c)| *c)
            .chain(dc.iter().copied())
            .collect();
        if !cube_covered(&cover[i], &rest) {
            alive[i] = true;
        }
    }
    let kept: Vec<Cube> = cover
        .iter()
        .zip(alive.iter())
        .filter(|(_, &a)| a)
        .map(|(c, _)| *c)
        .collect();
    *cover = kept;
}

/// Shrinks each cube to the supercube of the part of it that only it covers (largest
/// cubes first); cubes that turn out fully redundant are dropped.
pub fn reduce(cover: &mut Vec<Cube>, dc: &[Cube]) {
    cover.sort_unstable_by_key(|c| (c.literals(), c.care, c.value));
    let mut i = 0;
    while i < cover.len() {
        let c = cover[i];
        let others: Vec<Cube> = cover
            .iter()
            .enumerate()
            .filter(|&(j, _)| j != i)
            .map(|(_, d)| *d)
            .chain(dc.iter().copied())
            .collect();
        let uncovered = complement(&cofactor(&others, &c));
        if uncovered.is_empty() {
            cover.remove(i);
            continue;
        }
        let mut sup = uncovered[0];
        for u in &uncovered[1..] {
            sup = sup.supercube(u);
        }
        // Back into the space of c: the cofactor space lacks c's own literals.
        cover[i] = Cube::new(sup.value | c.value, (sup.care & !c.care) | c.care);
        i += 1;
    }
}

/// Statistics of a heuristic run.
#[derive(Clone, Copy, Debug, Default)]
pub struct HeuristicStats {
    /// Cubes in the computed off-set.
    pub off_cubes: usize,
    /// Reduce/expand/irredundant passes after the first expand.
    pub passes: usize,
}

/// Minimizes the function whose on-set is the union of `on` and whose don't-care set is
/// the union of `dc` (cubes where both overlap count as don't-care for the cover and
/// the on-set part outside `dc` must be covered). Returns a prime, irredundant cover.
pub fn minimize_heuristic(on: &[Cube], dc: &[Cube]) -> (Vec<Cube>, HeuristicStats) {
    let mut stats = HeuristicStats::default();
    let all: Vec<Cube> = on.iter().chain(dc.iter()).copied().collect();
    let off = complement(&all);
    stats.off_cubes = off.len();
    let mut cover: Vec<Cube> = on.to_vec();
    remove_contained(&mut cover);
    expand(&mut cover, &off);
    irredundant(&mut cover, dc);
    let mut best = cover.clone();
    let mut best_cost = CoverCost::of(&best);
    loop {
        reduce(&mut cover, dc);
        expand(&mut cover, &off);
        irredundant(&mut cover, dc);
        stats.passes += 1;
        let cost = CoverCost::of(&cover);
        if cost < best_cost {
            best_cost = cost;
            best = cover.clone();
        } else {
            break;
        }
    }
    best.sort_unstable();
    (best, stats)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cubes(list: &[&str]) -> Vec<Cube> {
        list.iter().map(|s| Cube::parse(s).unwrap()).collect()
    }

    #[test]
    fn tautology_and_complement_small() {
        assert!(tautology(&cubes(&["1-", "0-"])));
        assert!(!tautology(&cubes(&["1-", "01"])));
        assert!(tautology(&cubes(&["1-", "01", "00"])));
        let f = cubes(&["1-0", "-11"]);
        let r = complement(&f);
        // Check point by point: every minterm is in exactly one of f, r.
        for m in 0..8u64 {
            let in_f = f.iter().any(|c| c.contains_minterm(m));
            let in_r = r.iter().any(|c| c.contains_minterm(m));
            assert_ne!(in_f, in_r, "minterm {m}");
        }
    }

    #[test]
    fn heuristic_finds_single_literal() {
        // f = a b + a b' over 3 variables = a.
        let (cover, _) = minimize_heuristic(&cubes(&["11-", "10-"]), &[]);
        assert_eq!(cover, cubes(&["1--"]));
    }
}
