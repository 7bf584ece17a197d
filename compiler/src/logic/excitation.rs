//! Flip-flop excitation: the inputs a D, T, JK or SR flip-flop needs to go from its
//! present state `q` to a required next state `q+`, with every don't-care it allows.
//!
//! The tables are the standard excitation tables of digital design practice (from
//! memory / common practice, not copied from a particular handbook); they are derived
//! from, and tested against, each flip-flop's characteristic equation:
//! D: `q+ = D`; T: `q+ = T ⊕ q`; JK: `q+ = J·q' + K'·q`; SR: `q+ = S + R'·q` with
//! `S = R = 1` not allowed. Lookup is O(1).

/// A flip-flop type.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum FlipFlop {
    /// Data: `q+ = D`.
    D,
    /// Toggle: `q+ = T ⊕ q`.
    T,
    /// J-K: `q+ = J·q' + K'·q`.
    JK,
    /// Set-reset: `q+ = S + R'·q`, `S·R = 0` required.
    SR,
}

/// A required input value: 0, 1 or don't-care.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Excite {
    /// Must be 0.
    Zero,
    /// Must be 1.
    One,
    /// Either value gives the required next state.
    DontCare,
}

impl Excite {
    /// The values this requirement allows.
    pub fn allowed(self) -> &'static [bool] {
        match self {
            Excite::Zero => &[false],
            Excite::One => &[true],
            Excite::DontCare => &[false, true],
        }
    }
}

impl FlipFlop {
    /// All four types.
    pub const ALL: [FlipFlop; 4] = [FlipFlop::D, FlipFlop::T, FlipFlop::JK, FlipFlop::SR];

    /// Names of the inputs, in the order of [`FlipFlop::excitation`].
    pub fn input_names(self) -> &'static [&'static str] {
        match self {
            FlipFlop::D => &["D"],
            FlipFlop::T => &["T"],
            FlipFlop::JK => &["J", "K"],
            FlipFlop::SR => &["S", "R"],
        }
    }

    /// The inputs needed to go from `q` to `next` (one entry per input name).
    pub fn excitation(self, q: bool, next: bool) -> &'static [Excite] {
        use Excite::{DontCare as X, One as I, Zero as O};
        match (self, q, next) {
            (FlipFlop::D, _, false) => &[O],
            (FlipFlop::D, _, true) => &[I],
            (FlipFlop::T, q, n) if q == n => &[O],
            (FlipFlop::T, _, _) => &[I],
            (FlipFlop::JK, false, false) => &[O, X],
            (FlipFlop::JK, false, true) => &[I, X],
            (FlipFlop::JK, true, false) => &[X, I],
            (FlipFlop::JK, true, true) => &[X, O],
            (FlipFlop::SR, false, false) => &[O, X],
            (FlipFlop::SR, false, true) => &[I, O],
            (FlipFlop::SR, true, false) => &[O, I],
            (FlipFlop::SR, true, true) => &[X, O],
        }
    }

    /// The characteristic equation: the next state from `q` and the input values (in
    /// [`FlipFlop::input_names`] order). `None` for the forbidden `S = R = 1` or a wrong
    /// number of inputs.
    pub fn next_state(self, q: bool, inputs: &[bool]) -> Option<bool> {
        match (self, inputs) {
            (FlipFlop::D, &[d]) => Some(d),
            (FlipFlop::T, &[t]) => Some(t ^ q),
            (FlipFlop::JK, &[j, k]) => Some((j && !q) || (!k && q)),
            (FlipFlop::SR, &[true, true]) => None,
            (FlipFlop::SR, &[s, r]) => Some(s || (!r && q)),
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use Excite::{DontCare as X, One as I, Zero as O};

    /// The excitation tables pinned row by row. Source: from memory / common practice
    /// (the tables every digital design text gives; not checked against a named book).
    #[test]
    fn tables_are_the_standard_ones() {
        let rows = [(false, false), (false, true), (true, false), (true, true)];
        let expect: [(FlipFlop, [&[Excite]; 4]); 4] = [
            (FlipFlop::D, [&[O], &[I], &[O], &[I]]),
            (FlipFlop::T, [&[O], &[I], &[I], &[O]]),
            (FlipFlop::JK, [&[O, X], &[I, X], &[X, I], &[X, O]]),
            (FlipFlop::SR, [&[O, X], &[I, O], &[O, I], &[X, O]]),
        ];
        for (ff, table) in expect {
            for (k, &(q, next)) in rows.iter().enumerate() {
                assert_eq!(ff.excitation(q, next), table[k], "{ff:?} {q}->{next}");
            }
        }
    }

    /// Every choice of the don't-cares, fed to the characteristic equation, gives the
    /// required next state; and the don't-cares are as many as allowed (a fixed value
    /// is never a value the other choice would also satisfy).
    #[test]
    fn excitation_drives_characteristic_equation() {
        for ff in FlipFlop::ALL {
            for q in [false, true] {
                for next in [false, true] {
                    let need = ff.excitation(q, next);
                    assert_eq!(need.len(), ff.input_names().len());
                    // Enumerate all input vectors; those allowed must work, and each
                    // working vector must be allowed (so no don't-care is missed).
                    let k = need.len();
                    for bits in 0..(1u32 << k) {
                        let inputs: Vec<bool> = (0..k).map(|i| bits >> i & 1 == 1).collect();
                        let allowed = inputs
                            .iter()
                            .zip(need.iter())
                            .all(|(v, e)| e.allowed().contains(v));
                        let works = ff.next_state(q, &inputs) == Some(next);
                        assert_eq!(allowed, works, "{ff:?} q={q} q+={next} in={inputs:?}");
                    }
                }
            }
        }
    }
}
