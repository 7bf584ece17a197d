//! Two-level gate forms of sum-of-products covers, their costs, and equation text.
//!
//! * **NAND-NAND** of `f = p1 + p2 + ...`: `f = NAND(NAND(p1 literals), NAND(p2 ...))`
//!   (common practice: De Morgan on the AND-OR form).
//! * **NOR-NOR** from the product-of-sums of `f`, i.e. from a sum-of-products cover of
//!   the complement `f' = p1 + p2 + ...`: `f = (p1)'·(p2)'·... = NOR(NOR(s1), NOR(s2))`
//!   where the sum `si = (pi)'` has the complemented literals of `pi`.
//!
//! Counting conventions (used by every cost here):
//! * Primary inputs come in true form only. Every variable needed complemented anywhere
//!   in the set of outputs costs one inverter, shared by all outputs; inverters count as
//!   gates of one input and are also reported on their own.
//! * A first-level term with two or more literals is a gate with one input per literal;
//!   identical terms of different outputs share one gate (the saving is reported).
//! * A single-literal term feeds the second level directly, as the complement of its
//!   literal (for NAND-NAND: `x` feeds `x'`, so it may need an inverter).
//! * The second level is one gate with one input per term; an output with a single term
//!   of two or more literals needs an extra inverter gate (the first-level gate inverts),
//!   one with a single-literal term is that literal (a wire or an input inverter), and the
//!   constants 0 and 1 need no gate.
//!
//! All costs are linear in the total number of literals.

use std::collections::HashSet;

use super::cube::{var_bit, Cube};
use super::Cover;

/// Gate-level cost of a set of two-level outputs.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct GateCost {
    /// Literals in the first-level terms (products, or sums for NOR-NOR).
    pub literals: usize,
    /// Gates, input inverters included.
    pub gates: usize,
    /// Sum of the inputs of all gates.
    pub gate_inputs: usize,
    /// Input inverters (included in `gates`).
    pub inverters: usize,
    /// First-level gates saved by sharing identical terms between outputs.
    pub shared_terms: usize,
}

/// Which two-level form.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Form {
    /// NAND-NAND from the sum of products of `f`.
    NandNand,
    /// NOR-NOR from the sum of products of the complement `f'`.
    NorNor,
}

/// An output constant, if the cover is one: `Some(false)` for no products, `Some(true)`
/// for a product without literals.
fn sop_constant(cover: &Cover) -> Option<bool> {
    if cover.cubes.is_empty() {
        Some(false)
    } else if cover.cubes.iter().any(|c| c.care == 0) {
        Some(true)
    } else {
        None
    }
}

/// The cost of the outputs in `form`. For [`Form::NandNand`] each cover is the SOP of an
/// output; for [`Form::NorNor`] each cover is the SOP of the output's complement.
pub fn two_level_cost(form: Form, covers: &[&Cover]) -> GateCost {
    let mut cost = GateCost::default();
    let mut need_inverted = 0u64;
    let mut first_level: HashSet<Cube> = HashSet::new();
    let mut first_level_total = 0usize;
    for cover in covers {
        if sop_constant(cover).is_some() {
            continue;
        }
        // The first-level terms as cubes of the literals that enter the gates.
        let terms: Vec<Cube> = cover
            .cubes
            .iter()
            .map(|p| match form {
                Form::NandNand => *p,
                Form::NorNor => Cube::new(!p.value, p.care),
            })
            .collect();
        for t in &terms {
            cost.literals += t.literals();
            if t.literals() >= 2 {
                // Complemented literals entering the gate need inverters.
                need_inverted |= t.care & !t.value;
                first_level_total += 1;
                if first_level.insert(*t) {
                    cost.gates += 1;
                    cost.gate_inputs += t.literals();
                }
            } else if terms.len() >= 2 {
                // Fed to the second level as the complement of its literal: a true
                // literal then needs an inverter.
                need_inverted |= t.care & t.value;
            } else {
                // The output is the literal itself.
                need_inverted |= t.care & !t.value;
            }
        }
        if terms.len() >= 2 {
            cost.gates += 1;
            cost.gate_inputs += terms.len();
        } else if terms[0].literals() >= 2 {
            cost.gates += 1;
            cost.gate_inputs += 1;
        }
    }
    cost.inverters = need_inverted.count_ones() as usize;
    cost.gates += cost.inverters;
    cost.gate_inputs += cost.inverters;
    cost.shared_terms = first_level_total - first_level.len();
    cost
}

/// A literal in trade notation: `x` or `x'`.
fn literal(vars: &[String], var: usize, positive: bool) -> String {
    if positive {
        vars[var].clone()
    } else {
        format!("{}'", vars[var])
    }
}

/// The literals of a cube, in variable order, as (variable, phase).
fn literals_of(n: usize, c: &Cube) -> Vec<(usize, bool)> {
    (0..n)
        .filter(|&v| c.care & var_bit(n, v) != 0)
        .map(|v| (v, c.value & var_bit(n, v) != 0))
        .collect()
}

/// A sum of products in trade notation, e.g. `D1 = q1·x' + q0·ev1` (`0` and `1` for
/// the constants).
pub fn format_sop(name: &str, vars: &[String], cover: &Cover) -> String {
    let n = vars.len();
    let rhs = match sop_constant(cover) {
        Some(false) => "0".to_string(),
        Some(true) => "1".to_string(),
        None => cover
            .cubes
            .iter()
            .map(|c| {
                literals_of(n, c)
                    .into_iter()
                    .map(|(v, p)| literal(vars, v, p))
                    .collect::<Vec<_>>()
                    .join("·")
            })
            .collect::<Vec<_>>()
            .join(" + "),
    };
    format!("{name} = {rhs}")
}

/// The product of sums of `f` from a sum-of-products cover of its complement, in trade
/// notation, e.g. `D1 = (q1 + x')·(q0' + ev1)`.
pub fn format_pos(name: &str, vars: &[String], complement: &Cover) -> String {
    let n = vars.len();
    let rhs = match sop_constant(complement) {
        Some(false) => "1".to_string(),
        Some(true) => "0".to_string(),
        None => {
            let several = complement.cubes.len() >= 2;
            complement
                .cubes
                .iter()
                .map(|c| {
                    let lits = literals_of(n, c);
                    let sum = lits
                        .iter()
                        .map(|&(v, p)| literal(vars, v, !p))
                        .collect::<Vec<_>>()
                        .join(" + ");
                    if lits.len() >= 2 && several {
                        format!("({sum})")
                    } else {
                        sum
                    }
                })
                .collect::<Vec<_>>()
                .join("·")
        }
    };
    format!("{name} = {rhs}")
}

/// The gate form as nested calls, e.g. `D1 = NAND(NAND(q1, x'), NAND(q0, ev1))`; for
/// NOR-NOR `cover` is the SOP of the complement.
pub fn format_gates(form: Form, name: &str, vars: &[String], cover: &Cover) -> String {
    let n = vars.len();
    let (gate, constant_if_empty) = match form {
        Form::NandNand => ("NAND", "0"),
        Form::NorNor => ("NOR", "1"),
    };
    let flip = form == Form::NorNor;
    let rhs = match sop_constant(cover) {
        Some(false) => constant_if_empty.to_string(),
        Some(true) => if flip { "0" } else { "1" }.to_string(),
        None => {
            let terms: Vec<String> = cover
                .cubes
                .iter()
                .map(|c| {
                    let lits = literals_of(n, c);
                    if lits.len() == 1 && cover.cubes.len() >= 2 {
                        // A single-literal term enters the second level complemented.
                        let (v, p) = lits[0];
                        literal(vars, v, if flip { p } else { !p })
                    } else if lits.len() == 1 {
                        let (v, p) = lits[0];
                        literal(vars, v, if flip { !p } else { p })
                    } else {
                        let inner = lits
                            .iter()
                            .map(|&(v, p)| literal(vars, v, if flip { !p } else { p }))
                            .collect::<Vec<_>>()
                            .join(", ");
                        format!("{gate}({inner})")
                    }
                })
                .collect();
            if terms.len() >= 2 {
                format!("{gate}({})", terms.join(", "))
            } else if cover.cubes[0].literals() >= 2 {
                format!("{gate}({})", terms[0])
            } else {
                terms[0].clone()
            }
        }
    };
    format!("{name} = {rhs}")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::logic::Method;

    fn cover(list: &[&str]) -> Cover {
        let cubes: Vec<Cube> = list.iter().map(|s| Cube::parse(s).unwrap()).collect();
        let literals = cubes.iter().map(Cube::literals).sum();
        Cover {
            cubes,
            literals,
            method: Method::Exact,
        }
    }

    fn vars() -> Vec<String> {
        ["q1", "q0", "x", "ev1"]
            .iter()
            .map(|s| s.to_string())
            .collect()
    }

    #[test]
    fn trade_notation() {
        let c = cover(&["1-0-", "-1-1"]);
        assert_eq!(format_sop("D1", &vars(), &c), "D1 = q1·x' + q0·ev1");
        assert_eq!(format_sop("Z", &vars(), &cover(&[])), "Z = 0");
        assert_eq!(format_sop("U", &vars(), &cover(&["----"])), "U = 1");
        // POS from the complement's SOP: f' = q1·x' + q0  =>  f = (q1' + x)·q0'.
        let comp = cover(&["1-0-", "-1--"]);
        assert_eq!(format_pos("D1", &vars(), &comp), "D1 = (q1' + x)·q0'");
        assert_eq!(
            format_gates(Form::NandNand, "D1", &vars(), &c),
            "D1 = NAND(NAND(q1, x'), NAND(q0, ev1))"
        );
        assert_eq!(
            format_gates(Form::NorNor, "D1", &vars(), &comp),
            "D1 = NOR(NOR(q1', x), q0)"
        );
    }

    #[test]
    fn costs_follow_the_documented_conventions() {
        // f = q1·x' + q0·ev1: two 2-input NANDs, one 2-input NAND, an inverter on x.
        let c = cover(&["1-0-", "-1-1"]);
        let cost = two_level_cost(Form::NandNand, &[&c]);
        assert_eq!(
            cost,
            GateCost {
                literals: 4,
                gates: 4,
                gate_inputs: 7,
                inverters: 1,
                shared_terms: 0
            }
        );
        // The same product in two outputs is built once.
        let d = cover(&["1-0-", "--11"]);
        let both = two_level_cost(Form::NandNand, &[&c, &d]);
        assert_eq!(both.shared_terms, 1);
        assert_eq!(both.gates, 4 + 2); // + NAND(x, ev1) + output NAND
                                       // f = x (single literal): a wire. f = x': an inverter. Constants: nothing.
        let wire = two_level_cost(Form::NandNand, &[&cover(&["--1-"])]);
        assert_eq!((wire.gates, wire.gate_inputs), (0, 0));
        let inv = two_level_cost(Form::NandNand, &[&cover(&["--0-"])]);
        assert_eq!((inv.gates, inv.inverters), (1, 1));
        assert_eq!(two_level_cost(Form::NorNor, &[&cover(&[])]).gates, 0);
        // NOR-NOR of f with f' = q1·x' + q0: NOR(q1', x) needs an inverter on q1; q0
        // enters the output NOR directly.
        let comp = cover(&["1-0-", "-1--"]);
        let nor = two_level_cost(Form::NorNor, &[&comp]);
        assert_eq!((nor.gates, nor.gate_inputs, nor.inverters), (3, 5, 1));
    }
}
