//! Reduced ordered binary decision diagrams (Bryant 1986) over a machine's inputs.
//!
//! Guards are kept as BDDs so that coverage ("do the guards of one (state, event)
//! cover every valuation?") and overlap ("can two guards both be true?") are exact
//! and cost what the guards cost, not `2^inputs`: a BDD only mentions the variables
//! its guard names, so 64 inputs are fine when each rule group names a few of them.
//! Variables are ordered by input id. Nodes are hash-consed in one flat table, so
//! equal functions have equal ids and equality is `==`. Operations are memoized
//! per call (`apply` with a computed table); their recursion depth is bounded by
//! the number of variables (at most 64).
//!
//! The size of a BDD depends on the variable order, and some guards have no small BDD
//! in declaration order (`(a0 && b0) || (a1 && b1) || ...` with every `a` declared
//! before every `b` needs 2^n nodes; Bryant 1986, section 3). So the store holds at most
//! [`MAX_BDD_NODES`] nodes: past that every operation returns `FALSE` at once and
//! [`BddStore::overflowed`] says so, and the resolver and the checker turn it into an
//! error instead of running for hours and exhausting memory.

use crate::fxhash::{FxMap, FxSet};

/// The most nodes one machine's store may hold (about 40 MB of table and hash index).
pub const MAX_BDD_NODES: usize = 1 << 20;

/// A node id in a [`BddStore`]. `FALSE` and `TRUE` are the terminals.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Bdd(u32);

impl Bdd {
    /// The constant false function.
    pub const FALSE: Bdd = Bdd(0);
    /// The constant true function.
    pub const TRUE: Bdd = Bdd(1);

    /// True for the constant false function.
    pub fn is_false(self) -> bool {
        self == Bdd::FALSE
    }

    /// True for the constant true function.
    pub fn is_true(self) -> bool {
        self == Bdd::TRUE
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
struct Node {
    var: u32,
    lo: Bdd,
    hi: Bdd,
}

const TERMINAL_VAR: u32 = u32::MAX;

#[derive(Clone, Copy, PartialEq, Eq, Hash)]
enum Op {
    And,
    Or,
}

/// The node table shared by all guards of one machine.
#[derive(Clone, Debug)]
pub struct BddStore {
    nodes: Vec<Node>,
    unique: FxMap<Node, Bdd>,
    overflowed: bool,
}

impl Default for BddStore {
    fn default() -> Self {
        Self::new()
    }
}

impl BddStore {
    /// A store holding only the two terminals.
    pub fn new() -> Self {
        let terminal = |b| Node {
            var: TERMINAL_VAR,
            lo: Bdd(b),
            hi: Bdd(b),
        };
        BddStore {
            nodes: vec![terminal(0), terminal(1)],
            unique: FxMap::default(),
            overflowed: false,
        }
    }

    /// True once an operation needed more than [`MAX_BDD_NODES`] nodes; every result
    /// computed since is meaningless (operations return `FALSE` at once).
    pub fn overflowed(&self) -> bool {
        self.overflowed
    }

    /// Number of nodes, terminals included.
    pub fn len(&self) -> usize {
        self.nodes.len()
    }

    /// True when only the terminals exist.
    pub fn is_empty(&self) -> bool {
        self.nodes.len() == 2
    }

    fn mk(&mut self, var: u32, lo: Bdd, hi: Bdd) -> Bdd {
        if lo == hi {
            return lo;
        }
        let node = Node { var, lo, hi };
        if let Some(&id) = self.unique.get(&node) {
            return id;
        }
        if self.nodes.len() >= MAX_BDD_NODES {
            self.overflowed = true;
            return Bdd::FALSE;
        }
        let id = Bdd(self.nodes.len() as u32);
        self.nodes.push(node);
        self.unique.insert(node, id);
        id
    }

    fn node(&self, b: Bdd) -> Node {
        self.nodes[b.0 as usize]
    }

    /// The function that is true exactly when variable `var` is true.
    pub fn var(&mut self, var: u32) -> Bdd {
        self.mk(var, Bdd::FALSE, Bdd::TRUE)
    }

    /// A constant.
    pub fn constant(&self, value: bool) -> Bdd {
        if value {
            Bdd::TRUE
        } else {
            Bdd::FALSE
        }
    }

    /// Negation.
    pub fn not(&mut self, a: Bdd) -> Bdd {
        let mut memo = FxMap::default();
        self.not_rec(a, &mut memo)
    }

    fn not_rec(&mut self, a: Bdd, memo: &mut FxMap<Bdd, Bdd>) -> Bdd {
        if self.overflowed {
            return Bdd::FALSE;
        }
        if a.is_false() {
            return Bdd::TRUE;
        }
        if a.is_true() {
            return Bdd::FALSE;
        }
        if let Some(&r) = memo.get(&a) {
            return r;
        }
        let n = self.node(a);
        let lo = self.not_rec(n.lo, memo);
        let hi = self.not_rec(n.hi, memo);
        let r = self.mk(n.var, lo, hi);
        memo.insert(a, r);
        r
    }

    /// Conjunction.
    pub fn and(&mut self, a: Bdd, b: Bdd) -> Bdd {
        let mut memo = FxMap::default();
        self.apply(Op::And, a, b, &mut memo)
    }

    /// Disjunction.
    pub fn or(&mut self, a: Bdd, b: Bdd) -> Bdd {
        let mut memo = FxMap::default();
        self.apply(Op::Or, a, b, &mut memo)
    }

    /// `a && !b`.
    pub fn and_not(&mut self, a: Bdd, b: Bdd) -> Bdd {
        let nb = self.not(b);
        self.and(a, nb)
    }

    fn apply(&mut self, op: Op, a: Bdd, b: Bdd, memo: &mut FxMap<(Bdd, Bdd), Bdd>) -> Bdd {
        if self.overflowed {
            return Bdd::FALSE;
        }
        match op {
            Op::And => {
                if a.is_false() || b.is_false() {
                    return Bdd::FALSE;
                }
                if a.is_true() {
                    return b;
                }
                if b.is_true() || a == b {
                    return a;
                }
            }
            Op::Or => {
                if a.is_true() || b.is_true() {
                    return Bdd::TRUE;
                }
                if a.is_false() {
                    return b;
                }
                if b.is_false() || a == b {
                    return a;
                }
            }
        }
        let key = if a <= b { (a, b) } else { (b, a) };
        if let Some(&r) = memo.get(&key) {
            return r;
        }
        let na = self.node(a);
        let nb = self.node(b);
        let var = na.var.min(nb.var);
        let (a_lo, a_hi) = if na.var == var {
            (na.lo, na.hi)
        } else {
            (a, a)
        };
        let (b_lo, b_hi) = if nb.var == var {
            (nb.lo, nb.hi)
        } else {
            (b, b)
        };
        let lo = self.apply(op, a_lo, b_lo, memo);
        let hi = self.apply(op, a_hi, b_hi, memo);
        let r = self.mk(var, lo, hi);
        memo.insert(key, r);
        r
    }

    /// The function with some variables fixed (`value(var)`: `Some(b)` fixes `var` to
    /// `b`, `None` leaves it free): the cofactor.
    pub fn restrict(&mut self, a: Bdd, value: &dyn Fn(u32) -> Option<bool>) -> Bdd {
        let mut memo: FxMap<Bdd, Bdd> = FxMap::default();
        self.restrict_memo(a, value, &mut memo)
    }

    fn restrict_memo(
        &mut self,
        a: Bdd,
        value: &dyn Fn(u32) -> Option<bool>,
        memo: &mut FxMap<Bdd, Bdd>,
    ) -> Bdd {
        if a.is_false() || a.is_true() || self.overflowed {
            return a;
        }
        if let Some(&r) = memo.get(&a) {
            return r;
        }
        let n = self.node(a);
        let r = match value(n.var) {
            Some(true) => self.restrict_memo(n.hi, value, memo),
            Some(false) => self.restrict_memo(n.lo, value, memo),
            None => {
                let lo = self.restrict_memo(n.lo, value, memo);
                let hi = self.restrict_memo(n.hi, value, memo);
                self.mk(n.var, lo, hi)
            }
        };
        memo.insert(a, r);
        r
    }

    /// Is `a` satisfiable with some variables fixed (`value(var)` as in
    /// [`BddStore::restrict`])? Builds no node.
    pub fn sat_under(&self, a: Bdd, value: &dyn Fn(u32) -> Option<bool>) -> bool {
        let mut memo: FxMap<Bdd, bool> = FxMap::default();
        self.sat_under_memo(a, value, &mut memo)
    }

    fn sat_under_memo(
        &self,
        a: Bdd,
        value: &dyn Fn(u32) -> Option<bool>,
        memo: &mut FxMap<Bdd, bool>,
    ) -> bool {
        if a.is_false() || a.is_true() {
            return a.is_true();
        }
        if let Some(&r) = memo.get(&a) {
            return r;
        }
        let n = self.node(a);
        let r = match value(n.var) {
            Some(true) => self.sat_under_memo(n.hi, value, memo),
            Some(false) => self.sat_under_memo(n.lo, value, memo),
            None => {
                self.sat_under_memo(n.lo, value, memo) || self.sat_under_memo(n.hi, value, memo)
            }
        };
        memo.insert(a, r);
        r
    }

    /// Evaluates under a valuation.
    pub fn eval(&self, mut a: Bdd, value: impl Fn(u32) -> bool) -> bool {
        while !a.is_false() && !a.is_true() {
            let n = self.node(a);
            a = if value(n.var) { n.hi } else { n.lo };
        }
        a.is_true()
    }

    /// One satisfying partial valuation (variables on one path to `TRUE`), preferring
    /// `false` for each variable, or `None` when `a` is unsatisfiable.
    pub fn sat_one(&self, mut a: Bdd) -> Option<Vec<(u32, bool)>> {
        if a.is_false() {
            return None;
        }
        let mut path = Vec::new();
        while !a.is_true() {
            let n = self.node(a);
            if !n.lo.is_false() {
                path.push((n.var, false));
                a = n.lo;
            } else {
                path.push((n.var, true));
                a = n.hi;
            }
        }
        Some(path)
    }

    /// The variables the function depends on, ascending.
    pub fn support(&self, a: Bdd) -> Vec<u32> {
        let mut seen = FxSet::default();
        let mut vars = std::collections::BTreeSet::new();
        let mut stack = vec![a];
        while let Some(b) = stack.pop() {
            if b.is_false() || b.is_true() || !seen.insert(b) {
                continue;
            }
            let n = self.node(b);
            vars.insert(n.var);
            stack.push(n.lo);
            stack.push(n.hi);
        }
        vars.into_iter().collect()
    }

    /// The function's cubes: disjoint paths to `TRUE`, each a list of (var, value).
    /// Their number can grow with the BDD's size; callers use it on guards.
    pub fn cubes(&self, a: Bdd) -> Vec<Vec<(u32, bool)>> {
        let mut out = Vec::new();
        let mut stack = vec![(a, Vec::new())];
        while let Some((b, path)) = stack.pop() {
            if b.is_false() {
                continue;
            }
            if b.is_true() {
                out.push(path);
                continue;
            }
            let n = self.node(b);
            let mut hi = path.clone();
            hi.push((n.var, true));
            stack.push((n.hi, hi));
            let mut lo = path;
            lo.push((n.var, false));
            stack.push((n.lo, lo));
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tautology_and_contradiction() {
        let mut s = BddStore::new();
        let x = s.var(0);
        let nx = s.not(x);
        assert!(s.or(x, nx).is_true());
        assert!(s.and(x, nx).is_false());
    }

    #[test]
    fn canonical_form_makes_equal_functions_equal() {
        let mut s = BddStore::new();
        let (a, b, c) = (s.var(0), s.var(1), s.var(2));
        // a && (b || c) == (a && b) || (a && c)
        let bc = s.or(b, c);
        let left = s.and(a, bc);
        let ab = s.and(a, b);
        let ac = s.and(a, c);
        let right = s.or(ab, ac);
        assert_eq!(left, right);
        assert_eq!(s.support(left), vec![0, 1, 2]);
    }

    #[test]
    fn sat_one_satisfies() {
        let mut s = BddStore::new();
        let (a, b) = (s.var(3), s.var(60));
        let nb = s.not(b);
        let f = s.and(a, nb);
        let path = s.sat_one(f).unwrap();
        assert!(s.eval(f, |v| path.iter().any(|&(x, val)| x == v && val)));
        assert_eq!(s.sat_one(Bdd::FALSE), None);
    }

    #[test]
    fn sixty_four_variables_stay_small() {
        // The conjunction of 64 variables is a chain of 64 nodes, not 2^64. Building it
        // one variable at a time leaves the intermediate chains in the table too
        // (no garbage collection): 64 * 65 / 2 = 2080 nodes at most, still polynomial.
        let mut s = BddStore::new();
        let mut f = Bdd::TRUE;
        for v in 0..64 {
            let x = s.var(v);
            f = s.and(f, x);
        }
        assert_eq!(s.cubes(f).len(), 1);
        assert_eq!(s.support(f).len(), 64);
        assert!(s.len() <= 2 + 64 * 65 / 2, "{} nodes", s.len());
        assert!(s.eval(f, |_| true));
        assert!(!s.eval(f, |v| v != 63));
    }

    #[test]
    fn a_function_with_no_small_bdd_in_this_order_overflows_instead_of_hanging() {
        // (x0 && y0) || ... || (x23 && y23) with every x ordered before every y has
        // 2^24 nodes (Bryant 1986); the store stops at MAX_BDD_NODES.
        let mut s = BddStore::new();
        let mut f = Bdd::FALSE;
        for i in 0..24 {
            let x = s.var(i);
            let y = s.var(24 + i);
            let both = s.and(x, y);
            f = s.or(f, both);
        }
        assert!(s.overflowed());
        assert!(s.len() <= MAX_BDD_NODES);
        // Interleaved, the same function is a chain of 2 nodes per pair.
        let mut t = BddStore::new();
        let mut g = Bdd::FALSE;
        for i in 0..24 {
            let x = t.var(2 * i);
            let y = t.var(2 * i + 1);
            let both = t.and(x, y);
            g = t.or(g, both);
        }
        assert!(!t.overflowed());
        assert!(t.len() < 10_000, "{}", t.len());
    }
}
