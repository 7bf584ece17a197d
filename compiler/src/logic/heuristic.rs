//! Heuristic two-level minimization on cube lists, for functions too wide for minterms.
//!
//! The expand / irredundant / reduce loop published by Brayton, Hachtel, McMullen and
//! Sangiovanni-Vincentelli (*Logic Minimization Algorithms for VLSI Synthesis*, 1984),
//! simplified:
//!
//! * **complement**: the off-set `R` is the complement of `F ∪ D`, computed by the
//!   unate-recursive paradigm: Shannon expansion on the most binate variable, a
//!   De Morgan expansion at single cubes, and merging of the two halves (a cube found in
//!   both halves loses the splitting literal). Never by enumerating minterms. The
//!   recursion is exponential in the worst case, so a caller that knows the off-set
//!   passes it ([`minimize_heuristic_against`]): the logic port takes it from the
//!   machine's regions ([`cut_where_cared`]), and complements nothing.
//! * **expand**: each cube, largest first, drops literals one at a time as long as it
//!   stays disjoint from `R`; the literal order favours literals whose removal lets the
//!   cube swallow other cubes of the cover. Every expanded cube is prime. Cost
//!   O(|F| n |R|) cube operations.
//! * **irredundant**: a cube covered by the rest of the cover and `D` (a tautology check
//!   of the cofactor) is dropped, trying cubes with the most literals first; a check
//!   past [`TAUTOLOGY_NODE_BUDGET`] keeps the cube.
//! * **reduce**: each cube shrinks to the smallest cube containing the part of it that no
//!   other cube (nor `D`) covers (the supercube of the complement of the cofactor), which
//!   lets the next expand move in another direction. That supercube is found by the
//!   same recursion, with a node budget ([`SUPERCUBE_NODE_BUDGET`]): past it the cube
//!   stays as it is (the cover stays correct, perhaps a literal larger).
//!
//! The loop stops when a pass (reduce, expand, irredundant) no longer lowers the cost
//! (literals, then products). The result is a prime and irredundant cover, not
//! necessarily a minimum. The tautology check is the unate-recursive one as well.

use super::cube::{remove_contained, CoverCost, Cube};

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
    let mut bits = any;
    while bits != 0 {
        let b = bits.trailing_zeros() as usize;
        bits &= bits - 1;
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
    let mut buf = cubes.to_vec();
    let mut unbounded = usize::MAX;
    tautology_in(&mut buf, 0, &mut unbounded) == Ok(true)
}

/// Sum of the cube volumes as a fraction of the space, in units of `2^-64` (a cube of
/// `l` literals covers `2^-l` of it): below `2^64` the cubes cannot cover the space.
fn volume(cubes: &[Cube]) -> u128 {
    cubes
        .iter()
        .map(|c| 1u128 << (64 - c.care.count_ones()))
        .sum()
}

/// [`tautology`] of `buf[start..]`, using the end of `buf` as scratch for the cofactors
/// of the recursion (no allocation per node); `buf` is left as it was.
///
/// `Err(())` when `budget` (recursion nodes left) runs out.
fn tautology_in(buf: &mut Vec<Cube>, start: usize, budget: &mut usize) -> Result<bool, ()> {
    if *budget == 0 {
        return Err(());
    }
    *budget -= 1;
    let end = buf.len();
    let cubes = &buf[start..end];
    if cubes.iter().any(|c| c.care == 0) {
        return Ok(true);
    }
    // Too little volume to cover the space (also catches the empty list).
    if volume(cubes) < 1u128 << 64 {
        return Ok(false);
    }
    let (mut ones, mut zeros) = (0u64, 0u64);
    for c in cubes {
        ones |= c.value;
        zeros |= c.care & !c.value;
    }
    let unate = ones ^ zeros;
    if unate != 0 {
        // Unate reduction: with `x` only ever a true literal, F is a tautology iff its
        // cofactor by `x'` is, and that cofactor is the cubes without `x`. So only the
        // cubes free of every unate variable matter (none left: not a tautology).
        for i in start..end {
            if buf[i].care & unate == 0 {
                let c = buf[i];
                buf.push(c);
            }
        }
        let holds = if buf.len() > end {
            tautology_in(buf, end, budget)
        } else {
            Ok(false)
        };
        buf.truncate(end);
        return holds;
    }
    match split_variable(cubes) {
        None => Ok(true),
        Some((_, false)) => Ok(false),
        Some((bit, true)) => {
            for value in [0, bit] {
                let by = Cube { value, care: bit };
                for i in start..end {
                    if let Some(c) = buf[i].cofactor(&by) {
                        buf.push(c);
                    }
                }
                let holds = tautology_in(buf, end, budget);
                buf.truncate(end);
                if holds != Ok(true) {
                    return holds;
                }
            }
            Ok(true)
        }
    }
}

/// Whether the union of `cover` (the cubes with `keep` true, all of them when `keep`
/// is `None`) and `extra` contains cube `c`: the tautology of their cofactor by `c`,
/// built in `buf` (cleared first). `Err(())` when `budget` runs out.
fn covered_by(
    c: &Cube,
    cover: &[Cube],
    keep: Option<&[bool]>,
    extra: &[Cube],
    buf: &mut Vec<Cube>,
    budget: &mut usize,
) -> Result<bool, ()> {
    buf.clear();
    for (j, d) in cover.iter().enumerate() {
        if keep.is_none_or(|k| k[j]) {
            if let Some(x) = d.cofactor(c) {
                buf.push(x);
            }
        }
    }
    buf.extend(extra.iter().filter_map(|d| d.cofactor(c)));
    tautology_in(buf, 0, budget)
}

/// Whether cube `c` lies within the union of `cubes`.
pub fn cube_covered(c: &Cube, cubes: &[Cube]) -> bool {
    let mut unbounded = usize::MAX;
    covered_by(c, cubes, None, &[], &mut Vec::new(), &mut unbounded) == Ok(true)
}

/// The complement of the union of `cubes`, as a cube list (unate-recursive paradigm),
/// without contained cubes and in the order of [`remove_contained`].
pub fn complement(cubes: &[Cube]) -> Vec<Cube> {
    let mut buf = cubes.to_vec();
    complement_in(&mut buf, 0)
}

/// [`complement`] of `buf[start..]`, with the cofactors of the recursion built at the
/// end of `buf` (as in [`tautology_in`]).
fn complement_in(buf: &mut Vec<Cube>, start: usize) -> Vec<Cube> {
    let end = buf.len();
    let cubes = &buf[start..end];
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
        push_outside(&Cube::UNIVERSE, &c, &mut out);
        return out;
    }
    let Some((bit, _)) = split_variable(cubes) else {
        return Vec::new();
    };
    let mut halves = [Vec::new(), Vec::new()];
    for (half, value) in [0, bit].into_iter().enumerate() {
        let by = Cube { value, care: bit };
        for i in start..end {
            if let Some(c) = buf[i].cofactor(&by) {
                buf.push(c);
            }
        }
        halves[half] = complement_in(buf, end);
        buf.truncate(end);
    }
    let [neg, pos] = halves;
    merge_halves(bit, neg, pos)
}

/// Pushes the disjoint pieces of cube `a` outside cube `b` (which meets it): for each
/// literal of `b` that `a` leaves free, `a` with that literal opposed and the earlier
/// ones held to `b`'s value (`x1' + x1 x2' + ...`; De Morgan made disjoint when `a` is
/// the universe). Nothing when `b` contains `a`.
fn push_outside(a: &Cube, b: &Cube, out: &mut Vec<Cube>) {
    let mut held = *a;
    let mut free = b.care & !a.care;
    while free != 0 {
        let bit = free & free.wrapping_neg();
        free &= !bit;
        let lit = b.value & bit;
        out.push(Cube::new(held.value | (lit ^ bit), held.care | bit));
        held = Cube::new(held.value | lit, held.care | bit);
    }
}

/// The order [`remove_contained`] and [`complement`] leave cube lists in: fewest
/// literals first, then by masks.
fn size_order(c: &Cube) -> (u32, u64, u64) {
    (c.care.count_ones(), c.care, c.value)
}

/// `x'·A + x·B`, with cubes common to both halves keeping no literal of `x`, in
/// [`size_order`]. `neg` (A) and `pos` (B) come in that order, so the common cubes are
/// found by one merge walk.
///
/// No cube of the result contains another when none of A does and none of B does:
/// `x'a` and `x b` are never contained in each other, a common cube `c` has no `x`, so
/// `x'a ⊆ c` would mean `a ⊆ c` within A (and likewise for B). The leaves of
/// [`complement`] (the empty list, the universe, De Morgan's disjoint cubes) have no
/// contained cubes, so by induction no complement has, and there is nothing to remove.
fn merge_halves(bit: u64, neg: Vec<Cube>, pos: Vec<Cube>) -> Vec<Cube> {
    let mut out = Vec::with_capacity(neg.len() + pos.len());
    let (mut a, mut b) = (neg.iter().peekable(), pos.iter().peekable());
    loop {
        match (a.peek(), b.peek()) {
            (Some(x), Some(y)) if x == y => {
                out.push(**x);
                a.next();
                b.next();
            }
            (Some(x), Some(y)) if size_order(x) < size_order(y) => {
                out.push(Cube::new(x.value, x.care | bit));
                a.next();
            }
            (Some(x), None) => {
                out.push(Cube::new(x.value, x.care | bit));
                a.next();
            }
            (_, Some(y)) => {
                out.push(Cube::new(y.value | bit, y.care | bit));
                b.next();
            }
            (None, None) => break,
        }
    }
    out.sort_unstable_by_key(size_order);
    out
}

/// Recursion nodes one tautology check of irredundant may visit before the cube counts
/// as needed (kept: the cover stays correct, perhaps a cube larger). Unbounded for
/// [`tautology`] and [`cube_covered`], whose answers must be exact.
pub const TAUTOLOGY_NODE_BUDGET: usize = 200_000;

/// Recursion nodes one [`complement_supercube`] may visit before reduce gives up on
/// the cube (and leaves it as it is: the cover stays correct, perhaps less small).
/// The recursion is exponential in the worst case; random 41-variable one-hot machines
/// of the soak ran for hours without a bound.
pub const SUPERCUBE_NODE_BUDGET: usize = 200_000;

/// The smallest cube containing the complement of the union of `buf[start..]`, `None`
/// when that union is the whole space. The same recursion as [`complement`] without
/// building the complement: the supercube of `x'·A + x·B` is the supercube of the two
/// halves' supercubes (Brayton et al. 1984, the reduce step's "smallest cube containing
/// the complement"). Cubes that share no variable with the rest form components of
/// their own: `(F1 + F2)' = F1'·F2'`, whose supercube is the two supercubes together
/// (over disjoint variables), each found alone. `buf` is scratch as in
/// [`tautology_in`]. `Err(())` when `budget` (nodes left) runs out.
fn complement_supercube(
    buf: &mut Vec<Cube>,
    start: usize,
    budget: &mut usize,
) -> Result<Option<Cube>, ()> {
    if *budget == 0 {
        return Err(());
    }
    *budget -= 1;
    let end = buf.len();
    let cubes = &buf[start..end];
    if cubes.is_empty() {
        return Ok(Some(Cube::UNIVERSE));
    }
    if cubes.iter().any(|c| c.care == 0) {
        return Ok(None);
    }
    if cubes.len() == 1 {
        // One literal: its opposite; more: the opposite literals span every variable.
        let c = cubes[0];
        return Ok(Some(if c.care.count_ones() == 1 {
            Cube::new(!c.value, c.care)
        } else {
            Cube::UNIVERSE
        }));
    }
    let components = components(cubes);
    if components.len() > 1 {
        let mut together = Cube::UNIVERSE;
        for vars in components {
            for i in start..end {
                if buf[i].care & vars != 0 {
                    let c = buf[i];
                    buf.push(c);
                }
            }
            let part = complement_supercube(buf, end, budget);
            buf.truncate(end);
            match part? {
                None => return Ok(None),
                Some(p) => together = Cube::new(together.value | p.value, together.care | p.care),
            }
        }
        return Ok(Some(together));
    }
    let Some((bit, _)) = split_variable(cubes) else {
        return Ok(None);
    };
    let mut halves = [None; 2];
    for (half, value) in [0, bit].into_iter().enumerate() {
        let by = Cube { value, care: bit };
        for i in start..end {
            if let Some(c) = buf[i].cofactor(&by) {
                buf.push(c);
            }
        }
        let result = complement_supercube(buf, end, budget);
        buf.truncate(end);
        halves[half] = result?;
    }
    Ok(match halves {
        [None, None] => None,
        [Some(a), None] => Some(Cube::new(a.value, a.care | bit)),
        [None, Some(b)] => Some(Cube::new(b.value | bit, b.care | bit)),
        [Some(a), Some(b)] => Some(a.supercube(&b)),
    })
}

/// The variable sets (as masks) of the connected components of `cubes`, two cubes
/// being connected when they share a variable.
fn components(cubes: &[Cube]) -> Vec<u64> {
    let mut sets: Vec<u64> = Vec::new();
    for c in cubes {
        let mut merged = c.care;
        sets.retain(|&s| {
            if s & merged != 0 {
                merged |= s;
                false
            } else {
                true
            }
        });
        // A merged set may now meet sets kept before it: merge until none does.
        while let Some(i) = sets.iter().position(|&s| s & merged != 0) {
            merged |= sets.swap_remove(i);
        }
        sets.push(merged);
    }
    sets
}

/// Expands every cube of `cover` to a prime against the off-set `off`, removing cubes
/// that an expanded cube contains.
pub fn expand(cover: &mut Vec<Cube>, off: &[Cube]) {
    cover.sort_unstable_by_key(|c| (c.literals(), c.care, c.value));
    let mut done: Vec<Cube> = Vec::with_capacity(cover.len());
    let mut covered = vec![false; cover.len()];
    let mut conflicts: Vec<u64> = Vec::with_capacity(off.len());
    for i in 0..cover.len() {
        if covered[i] {
            continue;
        }
        let mut cube = cover[i];
        // Literal order: literals whose removal brings more not-yet-covered cubes of the
        // cover closer (they disagree with them there) come first.
        // One pass over the cover: a cube that disagrees in exactly one variable counts
        // for that variable.
        let mut counts = [0usize; 64];
        for (j, d) in cover.iter().enumerate() {
            let conflict = d.conflict(&cube);
            if j != i && !covered[j] && conflict.is_power_of_two() {
                counts[conflict.trailing_zeros() as usize] += 1;
            }
        }
        let mut order: Vec<(usize, u64)> = Vec::new();
        let mut bits = cube.care;
        while bits != 0 {
            let bit = bits & bits.wrapping_neg();
            bits &= !bit;
            order.push((counts[bit.trailing_zeros() as usize], bit));
        }
        order.sort_by(|a, b| b.0.cmp(&a.0).then(a.1.cmp(&b.1)));
        // The variables where each off-set cube disagrees with the cube: dropping the
        // literal of `bit` keeps the cube off the off-set unless some cube disagrees in
        // `bit` alone. (A cube that already meets the off-set is left as it is.)
        conflicts.clear();
        conflicts.extend(off.iter().map(|r| r.conflict(&cube)));
        if !conflicts.contains(&0) {
            for &(_, bit) in &order {
                if !conflicts.contains(&bit) {
                    cube = Cube::new(cube.value, cube.care & !bit);
                    for x in conflicts.iter_mut() {
                        *x &= !bit;
                    }
                }
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
    let mut buf = Vec::new();
    for i in order {
        alive[i] = false;
        // Past the budget the cube counts as needed: kept, the cover stays correct.
        let mut budget = TAUTOLOGY_NODE_BUDGET;
        if covered_by(&cover[i], cover, Some(&alive), dc, &mut buf, &mut budget) != Ok(true) {
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
    let mut buf = Vec::new();
    let mut i = 0;
    while i < cover.len() {
        let c = cover[i];
        // The cofactor of the other cubes and dc by c.
        buf.clear();
        for (j, d) in cover.iter().enumerate() {
            if j != i {
                if let Some(x) = d.cofactor(&c) {
                    buf.push(x);
                }
            }
        }
        buf.extend(dc.iter().filter_map(|d| d.cofactor(&c)));
        let mut budget = SUPERCUBE_NODE_BUDGET;
        let sup = match complement_supercube(&mut buf, 0, &mut budget) {
            Ok(Some(sup)) => sup,
            Ok(None) => {
                cover.remove(i);
                continue;
            }
            // Too costly to tell: the cube stays as it is.
            Err(()) => {
                i += 1;
                continue;
            }
        };
        // Back into the space of c: the cofactor space lacks c's own literals.
        cover[i] = Cube::new(sup.value | c.value, (sup.care & !c.care) | c.care);
        i += 1;
    }
}

/// The part of the union of `cubes` outside the union of `by` (the sharp operation):
/// each cube of `by` in turn cuts every cube it meets into the disjoint pieces outside
/// it (`a # b` is `a` with one literal of `b` opposed, for each literal of `b` that `a`
/// leaves free, the earlier ones held to `b`'s value). The pieces of one cube are
/// disjoint; pieces of different cubes may overlap (no containment pass: the list is
/// read as a set).
///
/// The cuts go largest cube of `by` first (fewest literals): a one-hot state pair
/// `q_i q_j` turns `q_i x` into the single cube of the exact code before the narrower
/// cubes of other states would cut it into pieces. The result is the same set in any
/// order.
pub fn sharp(cubes: &[Cube], by: &[Cube]) -> Vec<Cube> {
    cut(cubes, by, false)
}

/// [`sharp`], except that a piece is cut only by the cubes of `by` that constrain one of
/// its literals (share a variable it cares for): a cube of `by` over variables the piece
/// leaves free is left overlapping it. In the result every piece is disjoint from each
/// cube of `by` or shares no variable with it; the result lies between `cubes # by`
/// and `cubes`.
///
/// This is how the logic port takes a function's off-set from the regions where it is
/// 0 (instead of complementing the on- and don't-care sets, which is exponential in the
/// worst case; one-hot machines of 41 variables ran for minutes): the exact sharp by
/// the structural don't-cares multiplies each region by the "at most one due" patterns
/// of every timer outside its scope (160,000 cubes for one function of a 12-state
/// machine), while those don't-cares only ever sit over variables the region leaves
/// free. The off-set then overlaps the don't-care set there, which keeps covers
/// correct; that the covers stay the ones the complement gives is tested on random
/// machines (`compiler/tests/logic_off_sets.rs`).
pub fn cut_where_cared(cubes: &[Cube], by: &[Cube]) -> Vec<Cube> {
    cut(cubes, by, true)
}

fn cut(cubes: &[Cube], by: &[Cube], only_cared: bool) -> Vec<Cube> {
    let mut by = by.to_vec();
    by.sort_unstable_by_key(size_order);
    by.dedup();
    let mut out: Vec<Cube> = cubes.to_vec();
    let mut next = Vec::with_capacity(out.len());
    // One pass cuts by every cube of `by`; only cared, a later cut can fix a variable
    // that an earlier cube of `by` constrains, so passes repeat until none cuts.
    let mut cutting = true;
    while cutting {
        cutting = false;
        for b in &by {
            next.clear();
            for a in &out {
                if a.conflict(b) != 0 || (only_cared && a.care & b.care == 0) {
                    next.push(*a);
                    continue;
                }
                cutting = true;
                push_outside(a, b, &mut next);
            }
            std::mem::swap(&mut out, &mut next);
        }
        cutting &= only_cared;
    }
    out.sort_unstable_by_key(size_order);
    out.dedup();
    out
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
///
/// The off-set is computed by [`complement`]; a caller that knows it already (see
/// [`minimize_heuristic_against`]) should pass it instead.
pub fn minimize_heuristic(on: &[Cube], dc: &[Cube]) -> (Vec<Cube>, HeuristicStats) {
    let all: Vec<Cube> = on.iter().chain(dc.iter()).copied().collect();
    minimize_heuristic_against(on, dc, &complement(&all))
}

/// [`minimize_heuristic`] with the off-set `off` given: it must cover every point
/// outside `on ∪ dc` and meet no point of `on` outside `dc`. Only expand reads it, and
/// only as a set (whether a cube meets it), so every cube list of the same set gives
/// the same cover; a larger one (overlapping `dc`) gives a correct, maybe larger cover.
pub fn minimize_heuristic_against(
    on: &[Cube],
    dc: &[Cube],
    off: &[Cube],
) -> (Vec<Cube>, HeuristicStats) {
    let mut stats = HeuristicStats {
        off_cubes: off.len(),
        ..HeuristicStats::default()
    };
    let mut cover: Vec<Cube> = on.to_vec();
    remove_contained(&mut cover);
    expand(&mut cover, off);
    irredundant(&mut cover, dc);
    let mut best = cover.clone();
    let mut best_cost = CoverCost::of(&best);
    loop {
        reduce(&mut cover, dc);
        expand(&mut cover, off);
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

    use crate::logic::cube::full_mask;
    use crate::rng::Rng as SplitMix64;

    /// A random cube over `n` variables with about `density` in 8 of them cared for.
    fn random_cube(rng: &mut SplitMix64, n: usize, density: u64) -> Cube {
        let mut care = 0u64;
        for v in 0..n {
            if rng.below(8) < density {
                care |= 1 << v;
            }
        }
        Cube::new(rng.next_u64(), care)
    }

    fn random_list(rng: &mut SplitMix64, n: usize) -> Vec<Cube> {
        let len = rng.below(14) as usize;
        let density = 2 + rng.below(5);
        (0..len).map(|_| random_cube(rng, n, density)).collect()
    }

    fn in_union(cubes: &[Cube], m: u64) -> bool {
        cubes.iter().any(|c| c.contains_minterm(m))
    }

    /// The rewritten tautology, complement (no contained cubes, in size order) and
    /// supercube of the complement against enumeration on random cube lists.
    #[test]
    fn recursive_operations_match_enumeration() {
        let mut rng = SplitMix64::from_state(11);
        for _ in 0..3000 {
            let n = 1 + rng.below(7) as usize;
            let f = random_list(&mut rng, n);
            let space = 1u64 << n;
            // Cubes beyond n variables do not occur: random_cube cares for v < n only.
            let covered = (0..space).all(|m| in_union(&f, m));
            assert_eq!(tautology(&f), covered, "{f:?}");
            let r = complement(&f);
            for m in 0..space {
                assert_ne!(in_union(&f, m), in_union(&r, m), "{f:?} minterm {m}");
            }
            for (a, x) in r.iter().enumerate() {
                for (b, y) in r.iter().enumerate() {
                    assert!(a == b || !x.contains(y), "{r:?} has a contained cube");
                }
            }
            assert!(r.windows(2).all(|w| size_order(&w[0]) < size_order(&w[1])));
            let expected = (0..space)
                .filter(|&m| !in_union(&f, m))
                .map(|m| Cube::minterm(n, m))
                .reduce(|a, b| a.supercube(&b));
            let mut buf = f.clone();
            let mut unbounded = usize::MAX;
            let got = complement_supercube(&mut buf, 0, &mut unbounded)
                .unwrap()
                .map(|c| Cube::new(c.value, c.care & full_mask(n)));
            assert_eq!(got, expected, "{f:?}");
            assert_eq!(buf, f, "the scratch buffer is restored");
        }
    }

    /// The straightforward forms the faster expand, irredundant and reduce replaced;
    /// they must give the same covers, cube for cube.
    fn expand_reference(cover: &mut Vec<Cube>, off: &[Cube]) {
        cover.sort_unstable_by_key(|c| (c.literals(), c.care, c.value));
        let mut done: Vec<Cube> = Vec::new();
        let mut covered = vec![false; cover.len()];
        for i in 0..cover.len() {
            if covered[i] {
                continue;
            }
            let mut cube = cover[i];
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

    fn irredundant_reference(cover: &mut Vec<Cube>, dc: &[Cube]) {
        let mut order: Vec<usize> = (0..cover.len()).collect();
        order.sort_by_key(|&i| std::cmp::Reverse(cover[i].literals()));
        let mut alive = vec![true; cover.len()];
        for i in order {
            alive[i] = false;
            let rest: Vec<Cube> = (0..cover.len())
                .filter(|&j| alive[j])
                .map(|j| cover[j])
                .chain(dc.iter().copied())
                .collect();
            if !tautology(&cofactor(&rest, &cover[i])) {
                alive[i] = true;
            }
        }
        *cover = (0..cover.len())
            .filter(|&j| alive[j])
            .map(|j| cover[j])
            .collect();
    }

    fn reduce_reference(cover: &mut Vec<Cube>, dc: &[Cube]) {
        cover.sort_unstable_by_key(|c| (c.literals(), c.care, c.value));
        let mut i = 0;
        while i < cover.len() {
            let c = cover[i];
            let others: Vec<Cube> = (0..cover.len())
                .filter(|&j| j != i)
                .map(|j| cover[j])
                .chain(dc.iter().copied())
                .collect();
            let uncovered = complement(&cofactor(&others, &c));
            if uncovered.is_empty() {
                cover.remove(i);
                continue;
            }
            let sup = uncovered[1..]
                .iter()
                .fold(uncovered[0], |a, u| a.supercube(u));
            cover[i] = Cube::new(sup.value | c.value, (sup.care & !c.care) | c.care);
            i += 1;
        }
    }

    /// The complement as first written (hash sets to find the common cubes, then
    /// containment removal); the faster one must give the same list.
    fn complement_reference(cubes: &[Cube]) -> Vec<Cube> {
        if cubes.is_empty() {
            return vec![Cube::UNIVERSE];
        }
        if cubes.iter().any(|c| c.care == 0) {
            return Vec::new();
        }
        if cubes.len() == 1 {
            let c = cubes[0];
            let mut out = Vec::new();
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
        let neg = complement_reference(&cofactor(cubes, &Cube::new(0, bit)));
        let pos = complement_reference(&cofactor(cubes, &Cube::new(bit, bit)));
        let in_pos: std::collections::HashSet<Cube> = pos.iter().copied().collect();
        let in_neg: std::collections::HashSet<Cube> = neg.iter().copied().collect();
        let mut out = Vec::new();
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
        remove_contained(&mut out);
        out
    }

    /// The sharp (and the cut only where cared) against enumeration; and the heuristic
    /// given the off-set as a sharp gives the cover the complement gives, cube for cube.
    #[test]
    fn sharp_matches_enumeration_and_serves_as_the_off_set() {
        let mut rng = SplitMix64::from_state(14);
        for _ in 0..3000 {
            let n = 1 + rng.below(9) as usize;
            let a = random_list(&mut rng, n);
            let b = random_list(&mut rng, n);
            let d = sharp(&a, &b);
            for m in 0..1u64 << n {
                let want = in_union(&a, m) && !in_union(&b, m);
                assert_eq!(in_union(&d, m), want, "{a:?} # {b:?} minterm {m}");
            }
            // Cutting only where cared: between the sharp and the cubes, and a cube of
            // `by` is left over a piece only where the piece leaves all its variables free.
            let c = cut_where_cared(&a, &b);
            for m in 0..1u64 << n {
                if in_union(&d, m) {
                    assert!(in_union(&c, m), "{a:?} cut by {b:?}: minterm {m} lost");
                }
                if in_union(&c, m) {
                    assert!(in_union(&a, m), "{a:?} cut by {b:?}: minterm {m} added");
                }
            }
            for p in &c {
                for x in &b {
                    assert!(
                        p.conflict(x) != 0 || p.care & x.care == 0,
                        "{a:?} cut by {b:?}: piece {p:?} meets {x:?} on its own variables"
                    );
                }
            }
            // On-set a, don't-care b: the off-set is the universe minus both, here
            // written as a sharp of the universe.
            let all: Vec<Cube> = a.iter().chain(&b).copied().collect();
            let off = sharp(&[Cube::UNIVERSE], &all);
            assert_eq!(
                minimize_heuristic_against(&a, &b, &off).0,
                minimize_heuristic(&a, &b).0,
                "{a:?} with don't-cares {b:?}"
            );
        }
    }

    #[test]
    fn complement_matches_its_reference_form() {
        let mut rng = SplitMix64::from_state(13);
        for _ in 0..3000 {
            let n = 1 + rng.below(12) as usize;
            let mut f = random_list(&mut rng, n);
            f.extend(random_list(&mut rng, n));
            assert_eq!(complement(&f), complement_reference(&f), "{f:?}");
        }
    }

    #[test]
    fn loop_steps_match_their_reference_forms() {
        let mut rng = SplitMix64::from_state(12);
        for _ in 0..1500 {
            let n = 2 + rng.below(9) as usize;
            let on = random_list(&mut rng, n);
            let dc: Vec<Cube> = random_list(&mut rng, n).into_iter().take(4).collect();
            let all: Vec<Cube> = on.iter().chain(&dc).copied().collect();
            let off = complement(&all);
            let mut fast = on.clone();
            let mut slow = on.clone();
            remove_contained(&mut fast);
            remove_contained(&mut slow);
            expand(&mut fast, &off);
            expand_reference(&mut slow, &off);
            assert_eq!(fast, slow, "expand of {on:?}");
            irredundant(&mut fast, &dc);
            irredundant_reference(&mut slow, &dc);
            assert_eq!(fast, slow, "irredundant of {on:?}");
            reduce(&mut fast, &dc);
            reduce_reference(&mut slow, &dc);
            assert_eq!(fast, slow, "reduce of {on:?}");
        }
    }
}
