//! What every code generator needs to know about a machine's counters (LANGUAGE.md,
//! "Counters"; docs/language-decisions.md, "Counters in generated code"): their
//! storage type, what each one counts (for generated documentation), how a guard's
//! comparison reads in code, and what an operation does.
//!
//! The semantics the generated code follows are those of
//! [`crate::model::CounterOp::apply`] (run by [`crate::interp`]): a counter holds
//! `0..=N`, starts at 0, and an operation that would leave the range stops at its end
//! (saturating). Guards read the counters as they were at the start of the step: the
//! choice is made before any operation of the step runs, so reading the stored value
//! while choosing is exactly that.
//!
//! Comparisons are folded over the counter's range `0..=N` before they are written:
//! one that holds for every value (`n >= 0`, `n <= N`) or for none (`n > N`) becomes a
//! constant, and `n <= 0` becomes `n == 0`, so no generated comparison is one that a C
//! or Rust compiler warns about as always true or false for its type (`-Wtype-limits`,
//! clippy's `absurd_extreme_comparisons`), and no constant overflows the field's type.
//! A counter of a valid machine never holds a value outside `0..=N` (Rust's `restore`
//! refuses one, C's step returns -1 on one), so the folding changes nothing a program
//! can observe.

use crate::model::{Atom, Cmp, CounterId, CounterOp, CounterOpKind, Machine};

/// A counter's storage type: 8 bits up to 255, else 16 bits.
pub fn counter_bits(max: u16) -> u32 {
    if max <= u16::from(u8::MAX) {
        8
    } else {
        16
    }
}

/// One sentence saying what a counter counts: its range, that it starts at 0 and
/// saturates, with the spec's doc comment before it.
pub fn counter_doc(m: &Machine, c: CounterId) -> Vec<String> {
    let counter = &m.counters[c.index()];
    let mut lines = counter.doc.clone();
    if !lines.is_empty() {
        lines.push(String::new());
    }
    lines.push(format!(
        "Counter `{}`: 0 to {} (`counters {} to {}`), 0 at the start; `+=` stops at {}, \
         `-=` at 0 (saturating).",
        counter.name, counter.max, counter.name, counter.max, counter.max
    ));
    lines
}

/// A counter comparison as generated code writes it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum AtomCode {
    /// The comparison has this value for every counter value in `0..=N`.
    Const(bool),
    /// `counter cmp value`, with a value the counter's type holds.
    Cmp(CounterId, Cmp, u16),
}

/// How a comparison is written: folded over the counter's range (module docs).
pub fn atom_code(m: &Machine, atom: &Atom) -> AtomCode {
    let max = m.counters[atom.counter.index()].max;
    let holds_some = (0..=max).any(|v| atom.holds(v));
    let holds_all = (0..=max).all(|v| atom.holds(v));
    if holds_all {
        return AtomCode::Const(true);
    }
    if !holds_some {
        return AtomCode::Const(false);
    }
    // Not constant over 0..=max, so the value is in 0..=max for `==`, `!=`, and in
    // 1..=max for `<`, `>=`, 0..max for `<=`, `>`: it fits the type. `<= 0` reads as
    // `== 0` (an unsigned `<= 0` is a comparison compilers flag), and `>= T` for the
    // type's largest `T` as `== T`.
    let type_max = if counter_bits(max) == 8 {
        u16::from(u8::MAX)
    } else {
        u16::MAX
    };
    let cmp = match atom.cmp {
        Cmp::Le if atom.value == 0 => Cmp::Eq,
        Cmp::Ge if atom.value == type_max => Cmp::Eq,
        c => c,
    };
    AtomCode::Cmp(atom.counter, cmp, atom.value)
}

/// What an operation does to a counter whose value is in `0..=max`, as code writes it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OpCode {
    /// Nothing (`+= 0`, `-= 0`).
    Nothing,
    /// The counter becomes this constant (`= k`, or a step that always reaches an end
    /// of the range: `+= k` with `k >= max`, `-= k` with `k >= max`).
    Set(u16),
    /// Add `k` (`0 < k < max`), stopping at `max`.
    Add(u16),
    /// Subtract `k` (`0 < k < max`), stopping at 0.
    Sub(u16),
}

/// How an operation is written (the result is [`CounterOp::apply`] for every value in
/// `0..=max`; `tests` checks it value by value).
pub fn op_code(m: &Machine, op: &CounterOp) -> OpCode {
    let max = m.counters[op.counter.index()].max;
    let k = op.value;
    match op.kind {
        CounterOpKind::Set => OpCode::Set(k.min(max)),
        _ if k == 0 => OpCode::Nothing,
        CounterOpKind::Add if k >= max => OpCode::Set(max),
        CounterOpKind::Sub if k >= max => OpCode::Set(0),
        CounterOpKind::Add => OpCode::Add(k),
        CounterOpKind::Sub => OpCode::Sub(k),
    }
}

impl OpCode {
    /// The value after the operation from `v` (what the generated code computes).
    pub fn eval(self, v: u16, max: u16) -> u16 {
        match self {
            OpCode::Nothing => v,
            OpCode::Set(k) => k,
            OpCode::Add(k) => v.saturating_add(k).min(max),
            OpCode::Sub(k) => v.saturating_sub(k),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The written form of every operation agrees with `CounterOp::apply` at every
    /// value of the range, and every comparison with `Atom::holds`.
    #[test]
    fn written_forms_agree_with_the_model() {
        let m = crate::test_support::machine(
            "machine M { counters a to 1, b to 3, c to 255, d to 256, e to 65535; \
             events Go; start S; state S { Go => S; } }",
        );
        for ci in 0..m.counters.len() {
            let c = CounterId::from_index(ci);
            let max = m.counters[ci].max;
            let values: Vec<u16> = [0u16, 1, 2, 3, 4, 100, 254, 255, 256, 257, 65534, 65535]
                .into_iter()
                .chain([max.saturating_sub(1), max])
                .filter(|&v| v <= max)
                .collect();
            for kind in [CounterOpKind::Add, CounterOpKind::Sub, CounterOpKind::Set] {
                for &k in &values {
                    if kind == CounterOpKind::Set && k > max {
                        continue;
                    }
                    let op = CounterOp {
                        counter: c,
                        kind,
                        value: k,
                    };
                    let code = op_code(&m, &op);
                    for &v in &values {
                        assert_eq!(code.eval(v, max), op.apply(v, max).0, "{op:?} at {v}");
                    }
                }
            }
            for cmp in [Cmp::Eq, Cmp::Ne, Cmp::Lt, Cmp::Le, Cmp::Gt, Cmp::Ge] {
                for k in [0u16, 1, 3, 255, 256, 65535] {
                    let atom = Atom {
                        counter: c,
                        cmp,
                        value: k,
                    };
                    let code = atom_code(&m, &atom);
                    let type_max = if counter_bits(max) == 8 { 255 } else { 65535 };
                    if let AtomCode::Cmp(_, cmp2, k2) = code {
                        assert!(k2 <= type_max);
                        assert!(!(cmp2 == Cmp::Le && k2 == 0));
                        assert!(!(cmp2 == Cmp::Ge && k2 == type_max));
                    }
                    for &v in &values {
                        let got = match code {
                            AtomCode::Const(b) => b,
                            AtomCode::Cmp(_, cmp2, k2) => Atom {
                                counter: c,
                                cmp: cmp2,
                                value: k2,
                            }
                            .holds(v),
                        };
                        assert_eq!(got, atom.holds(v), "{atom:?} at {v}");
                    }
                }
            }
        }
    }
}
