//! The hardware port: state assignment, excitation, two-level minimization, NAND/NOR.
//!
//! This module holds the pure-logic layer:
//!
//! * [`cube`]: product terms over at most 64 variables (variable 0 = most significant
//!   bit of a minterm number).
//! * [`exact`]: Quine-McCluskey prime implicants and an exact minimum cover by branch and
//!   bound (cost: literals, then products).
//! * [`heuristic`]: the published expand / irredundant / reduce loop (Brayton
//!   et al. 1984) on cube lists, with the off-set from unate-recursive complementation.
//! * [`gates`]: NAND-NAND and NOR-NOR mapping, gate costs, trade-notation equations.
//! * [`excitation`]: flip-flop excitation tables (D, T, JK, SR).
//! * [`assign`], [`search`]: state encodings and the search for a cheap one.
//!
//! [`minimize`] picks the method: exact up to [`EXACT_MAX_VARS`] variables (measured, see
//! that constant), the heuristic beyond, and the [`Cover`] says which one ran.

pub mod assign;
pub mod auto;
pub mod cube;
pub mod equations;
pub mod exact;
pub mod excitation;
pub mod gates;
pub mod heuristic;
pub mod search;
pub mod verilog;

pub use cube::Cube;

use cube::full_mask;

/// Largest number of variables for which [`minimize`] runs the exact method.
///
/// Measured (release build, shared 2-core machine at load 8-9, `cargo run --release -p
/// detent-compiler --example logic_export -- --measure --sizes 10,11,12 --count 3`) on
/// random functions with 1/3 of the minterms on and 1/6 don't-care: 6-8 variables take
/// well under 1 ms, 10 variables 2-50 ms (17-300 branch-and-bound nodes with the
/// Lagrangian bound), 11 variables 0.15-0.3 s, except one whose cyclic core exhausts the
/// node budget ([`exact::DEFAULT_NODE_BUDGET`], 10,000 nodes, about 6 s here), and at 12
/// variables (2,900 primes) all three exhaust it (2-15 s here) while the heuristic takes
/// about 0.1 s and is 9-12% above the best cover found. Sparse or structured functions
/// (state-machine equations) stay exact well past 10 variables, so the variable limit is
/// 12 and the node budget is the real guard: when it runs out the result is reported as
/// [`Method::Heuristic`].
pub const EXACT_MAX_VARS: usize = 12;

/// A single-output function in minterm form (for up to about 20 variables).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Function {
    /// Variable names; their order is the bit order of the minterm numbers, first = most
    /// significant.
    pub vars: Vec<String>,
    /// Minterms where the function is 1.
    pub on: Vec<u64>,
    /// Minterms where the function may be either (a minterm in both lists counts as on).
    pub dc: Vec<u64>,
}

/// A single-output function as cube lists (any width up to 64 variables).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CubeFunction {
    /// Variable names, as in [`Function::vars`].
    pub vars: Vec<String>,
    /// Cubes whose union is the on-set. Unlike [`Function`], where a minterm listed in
    /// both is on, a minterm in both an on-cube and a dc-cube is a don't-care here (the
    /// usual convention for cube lists; subtracting it would cost a complement).
    pub on: Vec<Cube>,
    /// Cubes whose union is the don't-care set.
    pub dc: Vec<Cube>,
}

/// Which minimizer produced a cover.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Method {
    /// Quine-McCluskey primes and a proven minimum cover (literals, then products).
    Exact,
    /// The expand / irredundant / reduce heuristic: prime and irredundant, not proven
    /// minimal. Also reported when the exact branch and bound ran out of its node budget.
    Heuristic,
}

/// A sum-of-products cover of a function.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Cover {
    /// The products (cubes over the function's variables). Empty = constant 0; a single
    /// cube without literals = constant 1.
    pub cubes: Vec<Cube>,
    /// Total literal count.
    pub literals: usize,
    /// The method that produced it.
    pub method: Method,
}

impl Cover {
    fn new(mut cubes: Vec<Cube>, method: Method) -> Cover {
        cubes.sort_unstable();
        let literals = cubes.iter().map(Cube::literals).sum();
        Cover {
            cubes,
            literals,
            method,
        }
    }

    /// The cube strings over `n` variables, e.g. `["1-0-", "01--"]`.
    pub fn cube_strings(&self, n: usize) -> Vec<String> {
        self.cubes.iter().map(|c| c.to_string(n)).collect()
    }
}

impl Function {
    /// Checks the sizes: at most 64 variables and every minterm below `2^n`.
    pub fn validate(&self) -> Result<(), String> {
        let n = self.vars.len();
        if n > 64 {
            return Err(format!("{n} variables; at most 64 are supported"));
        }
        let full = full_mask(n);
        if let Some(m) = self
            .on
            .iter()
            .chain(self.dc.iter())
            .find(|&&m| m & !full != 0)
        {
            return Err(format!("minterm {m} does not fit in {n} variables"));
        }
        Ok(())
    }

    /// The don't-care list without the minterms that are also on.
    fn pure_dc(&self) -> Vec<u64> {
        let mut on = self.on.clone();
        on.sort_unstable();
        let mut dc: Vec<u64> = self
            .dc
            .iter()
            .copied()
            .filter(|m| on.binary_search(m).is_err())
            .collect();
        dc.sort_unstable();
        dc.dedup();
        dc
    }

    /// The complement function: on and off swapped, the same don't-cares.
    pub fn complement(&self) -> Result<Function, String> {
        self.validate()?;
        let n = self.vars.len();
        if n > 24 {
            return Err(format!(
                "{n} variables: too many to complement as minterms; use CubeFunction"
            ));
        }
        let mut care_or_on = vec![false; 1usize << n];
        for &m in self.on.iter().chain(self.dc.iter()) {
            care_or_on[m as usize] = true;
        }
        let off = (0..1u64 << n)
            .filter(|&m| !care_or_on[m as usize])
            .collect();
        Ok(Function {
            vars: self.vars.clone(),
            on: off,
            dc: self.pure_dc(),
        })
    }

    /// The same function as cube lists (one minterm cube each; don't-cares that are
    /// also on are left out, since in a [`CubeFunction`] the overlap is don't-care).
    pub fn to_cubes(&self) -> CubeFunction {
        let n = self.vars.len();
        CubeFunction {
            vars: self.vars.clone(),
            on: self.on.iter().map(|&m| Cube::minterm(n, m)).collect(),
            dc: self
                .pure_dc()
                .iter()
                .map(|&m| Cube::minterm(n, m))
                .collect(),
        }
    }
}

impl CubeFunction {
    /// Checks the sizes: at most 64 variables, every cube within them.
    pub fn validate(&self) -> Result<(), String> {
        let n = self.vars.len();
        if n > 64 {
            return Err(format!("{n} variables; at most 64 are supported"));
        }
        let full = full_mask(n);
        if let Some(c) = self
            .on
            .iter()
            .chain(self.dc.iter())
            .find(|c| c.care & !full != 0)
        {
            return Err(format!(
                "cube {c:?} uses a variable beyond the {n} declared"
            ));
        }
        Ok(())
    }

    /// The complement function (on-set = off-set of `self`, same don't-cares), computed
    /// by cube-list complementation.
    pub fn complement(&self) -> Result<CubeFunction, String> {
        self.validate()?;
        let all: Vec<Cube> = self.on.iter().chain(self.dc.iter()).copied().collect();
        Ok(CubeFunction {
            vars: self.vars.clone(),
            on: heuristic::complement(&all),
            dc: self.dc.clone(),
        })
    }
}

/// Minimizes a minterm-form function: exact (Quine-McCluskey and branch and bound) up
/// to [`EXACT_MAX_VARS`] variables, the heuristic beyond (or when the exact search runs
/// out of its node budget and the heuristic does no worse). Errors on malformed input.
pub fn minimize(f: &Function) -> Result<Cover, String> {
    minimize_with_cubes(f, None)
}

/// [`minimize`] for a function that is also known as cube lists (`cubes`, the same
/// on-set and don't-care set): the exact method then takes its prime implicants from
/// the cubes by consensus ([`exact::primes_from_cubes`]) instead of merging minterms, the
/// same primes far faster when the don't-care set is a few large cubes (unused state
/// codes). The cover is the one [`minimize`] returns.
pub fn minimize_with_cubes(f: &Function, cubes: Option<&CubeFunction>) -> Result<Cover, String> {
    f.validate()?;
    let n = f.vars.len();
    if n <= EXACT_MAX_VARS {
        // Past 10 variables one node costs far more (thousands of primes) and dense
        // functions exhaust any budget: cap the search so that `detent logic` stays
        // responsive (a tenth of the budget: about 1 s at worst on 12 variables here).
        let budget = if n > 10 {
            exact::DEFAULT_NODE_BUDGET / 10
        } else {
            exact::DEFAULT_NODE_BUDGET
        };
        let primes = cubes.and_then(|cf| {
            let all: Vec<Cube> = cf.on.iter().chain(cf.dc.iter()).copied().collect();
            exact::primes_from_cubes(&all)
        });
        let result = match primes {
            Some(primes) => {
                let mut rows = f.on.clone();
                rows.sort_unstable();
                rows.dedup();
                exact::exact_cover(n, &rows, &primes, budget)
            }
            None => exact::minimize_exact(n, &f.on, &f.pure_dc(), budget),
        };
        if result.proven {
            return Ok(Cover::new(result.cubes, Method::Exact));
        }
        let cf = f.to_cubes();
        let (heur, _) = heuristic::minimize_heuristic(&cf.on, &cf.dc);
        let best = if cube::CoverCost::of(&heur) < cube::CoverCost::of(&result.cubes) {
            heur
        } else {
            result.cubes
        };
        return Ok(Cover::new(best, Method::Heuristic));
    }
    let cf = f.to_cubes();
    let (cubes, _) = heuristic::minimize_heuristic(&cf.on, &cf.dc);
    Ok(Cover::new(cubes, Method::Heuristic))
}

/// Minimizes a cube-list function with the heuristic (cube lists are for functions too
/// wide for minterm enumeration; convert small ones to [`Function`] for the exact method).
pub fn minimize_cubes(f: &CubeFunction) -> Result<Cover, String> {
    f.validate()?;
    let (cubes, _) = heuristic::minimize_heuristic(&f.on, &f.dc);
    Ok(Cover::new(cubes, Method::Heuristic))
}

/// [`minimize_cubes`] with the off-set known (`off`: every point outside `on ∪ dc`, no
/// point of `on` outside `dc`), so no cube list is complemented: the same cover, at a
/// cost linear in the off-set instead of the complement's worst-case exponential one.
pub fn minimize_cubes_against(f: &CubeFunction, off: &[Cube]) -> Result<Cover, String> {
    f.validate()?;
    let full = full_mask(f.vars.len());
    if let Some(c) = off.iter().find(|c| c.care & !full != 0) {
        return Err(format!(
            "off-set cube {c:?} uses a variable beyond the {} declared",
            f.vars.len()
        ));
    }
    let (cubes, _) = heuristic::minimize_heuristic_against(&f.on, &f.dc, off);
    Ok(Cover::new(cubes, Method::Heuristic))
}

/// Checks a cover of a minterm-form function: every on-minterm is covered and no cube
/// contains a minterm outside on ∪ dc (by enumeration, so for up to about 24 variables).
pub fn check_cover(f: &Function, cover: &Cover) -> Result<(), String> {
    f.validate()?;
    let n = f.vars.len();
    if n > 24 {
        return Err(format!(
            "{n} variables: too many to check by minterms; use check_cube_cover"
        ));
    }
    let full = full_mask(n);
    let mut allowed = vec![false; 1usize << n];
    for &m in f.on.iter().chain(f.dc.iter()) {
        allowed[m as usize] = true;
    }
    for c in &cover.cubes {
        if c.care & !full != 0 {
            return Err(format!(
                "cube {c:?} uses a variable beyond the {n} declared"
            ));
        }
        let mut bad = None;
        c.for_each_minterm(n, |m| {
            if bad.is_none() && !allowed[m as usize] {
                bad = Some(m);
            }
        });
        if let Some(m) = bad {
            return Err(format!(
                "cube {} contains off-set minterm {m}",
                c.to_string(n)
            ));
        }
    }
    for &m in &f.on {
        if !cover.cubes.iter().any(|c| c.contains_minterm(m)) {
            return Err(format!("on-set minterm {m} is not covered"));
        }
    }
    if cover.literals != cover.cubes.iter().map(Cube::literals).sum::<usize>() {
        return Err("literal count does not match the cubes".to_string());
    }
    Ok(())
}

/// Validates `f` and checks that every on-cube lies in cover ∪ dc (a tautology check of
/// the cover and don't-cares cofactored by the on-cube).
fn check_on_set_covered(f: &CubeFunction, cover: &Cover) -> Result<(), String> {
    f.validate()?;
    let with_dc: Vec<Cube> = cover.cubes.iter().chain(f.dc.iter()).copied().collect();
    match f.on.iter().find(|c| !heuristic::cube_covered(c, &with_dc)) {
        Some(c) => Err(format!(
            "on-set cube {} is not covered",
            c.to_string(f.vars.len())
        )),
        None => Ok(()),
    }
}

/// Checks a cover of a cube-list function with tautology checks: every on-cube lies in
/// cover ∪ dc and every cover cube lies in on ∪ dc.
pub fn check_cube_cover(f: &CubeFunction, cover: &Cover) -> Result<(), String> {
    check_on_set_covered(f, cover)?;
    let n = f.vars.len();
    let allowed: Vec<Cube> = f.on.iter().chain(f.dc.iter()).copied().collect();
    for c in &cover.cubes {
        if !heuristic::cube_covered(c, &allowed) {
            return Err(format!("cover cube {} meets the off-set", c.to_string(n)));
        }
    }
    Ok(())
}

/// [`check_cube_cover`] for a function whose off-set `off` is known and covers, with
/// the on- and don't-care sets, the whole space (the logic port's regions partition
/// it): every on-cube lies in cover ∪ dc (tautology checks of small cofactors), and no
/// cover cube meets `off` (pairwise, linear). The second half of [`check_cube_cover`]
/// checks the same by a tautology of the on- and don't-care sets cofactored by each
/// cover cube, which is exponential in the worst case: large cover cubes of 40-variable
/// one-hot functions ran for minutes.
pub fn check_cube_cover_against(
    f: &CubeFunction,
    off: &[Cube],
    cover: &Cover,
) -> Result<(), String> {
    check_on_set_covered(f, cover)?;
    let n = f.vars.len();
    for c in &cover.cubes {
        if let Some(o) = off.iter().find(|o| o.conflict(c) == 0) {
            return Err(format!(
                "cover cube {} meets off-set cube {}",
                c.to_string(n),
                o.to_string(n)
            ));
        }
    }
    if cover.literals != cover.cubes.iter().map(Cube::literals).sum::<usize>() {
        return Err("literal count does not match the cubes".to_string());
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(n: usize) -> Vec<String> {
        (0..n).map(|i| format!("x{i}")).collect()
    }

    /// The off-set check accepts the heuristic's cover and rejects a cover that meets
    /// the off-set or leaves an on-cube out.
    #[test]
    fn the_cover_check_against_the_off_set_rejects_broken_covers() {
        let cube = |s: &str| Cube::parse(s).unwrap();
        // f = x0 x1 + x2 over 3 variables, off-set written as the regions would.
        let f = CubeFunction {
            vars: names(3),
            on: vec![cube("11-"), cube("--1")],
            dc: Vec::new(),
        };
        let off = vec![cube("0-0"), cube("100")];
        let good = minimize_cubes_against(&f, &off).unwrap();
        assert_eq!(good.cubes, minimize_cubes(&f).unwrap().cubes);
        check_cube_cover_against(&f, &off, &good).unwrap();
        let meets = Cover::new(vec![cube("1--"), cube("--1")], Method::Heuristic);
        let err = check_cube_cover_against(&f, &off, &meets).unwrap_err();
        assert!(err.contains("meets off-set cube 100"), "{err}");
        let short = Cover::new(vec![cube("11-")], Method::Heuristic);
        let err = check_cube_cover_against(&f, &off, &short).unwrap_err();
        assert!(err.contains("on-set cube --1 is not covered"), "{err}");
    }

    #[test]
    fn minimize_reports_method_and_rejects_bad_input() {
        let f = Function {
            vars: names(3),
            on: vec![1, 3, 5, 7],
            dc: vec![],
        };
        let c = minimize(&f).unwrap();
        assert_eq!(c.method, Method::Exact);
        assert_eq!(c.cube_strings(3), vec!["--1"]);
        check_cover(&f, &c).unwrap();
        let bad = Function {
            vars: names(2),
            on: vec![4],
            dc: vec![],
        };
        assert!(minimize(&bad).is_err());
    }

    #[test]
    fn check_cover_catches_errors() {
        let f = Function {
            vars: names(2),
            on: vec![3],
            dc: vec![],
        };
        let too_big = Cover::new(vec![Cube::parse("1-").unwrap()], Method::Exact);
        assert!(check_cover(&f, &too_big).is_err());
        let empty = Cover::new(vec![], Method::Exact);
        assert!(check_cover(&f, &empty).is_err());
        let cf = f.to_cubes();
        assert!(check_cube_cover(&cf, &too_big).is_err());
        assert!(check_cube_cover(&cf, &empty).is_err());
        let right = Cover::new(vec![Cube::parse("11").unwrap()], Method::Exact);
        check_cube_cover(&cf, &right).unwrap();
    }

    #[test]
    fn zero_variable_constants() {
        let one = Function {
            vars: vec![],
            on: vec![0],
            dc: vec![],
        };
        assert_eq!(minimize(&one).unwrap().cubes, vec![Cube::UNIVERSE]);
        let zero = Function {
            vars: vec![],
            on: vec![],
            dc: vec![],
        };
        assert!(minimize(&zero).unwrap().cubes.is_empty());
    }
}
