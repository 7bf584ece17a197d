//! Tests as Rust conditions, and how the generated code reads inputs.
//!
//! A cell's tests come from the lowered form ([`crate::model::lower`]), already
//! constant-folded and in choice order; the code evaluates them in that order with
//! Rust's short-circuit `&&` and `||`, so it makes the same choice as
//! [`Lowered::choose`](crate::model::lower::Lowered::choose).
//!
//! **Each input is read at most once per step** (LANGUAGE.md, "Inputs"), the first time
//! a test that is evaluated needs it, as the lowered form's `Sampler` reads it. How a
//! test reads an input depends on the tests of its cell ([`Reads`]):
//!
//! - an input that appears once among the cell's tests is read where it appears,
//!   `hooks.raw()`: that occurrence is evaluated at most once in a step, and exactly
//!   when the interpreter reads the input;
//! - an input that appears more than once is read through the step's sampler,
//!   `inputs.raw(hooks)`: a private `StepInputs` struct with one `Option<bool>` per
//!   such input and one method per input that calls the hook the first time and
//!   returns the remembered value after that. It lives for one step (one cell), is
//!   created only in a cell that needs it, and after inlining the compiler keeps its
//!   fields in registers: where the code shows that an input was already read, the
//!   check of its `Option` folds away.
//!
//! A cell whose tests read no input twice (the common case: one guard, or `if x` and
//! `else`) pays nothing for sampling.

use super::tokens::{doc_text, ident};
use super::Gen;
use crate::model::{Guard, InputId};
use proc_macro2::TokenStream;
use quote::quote;

/// Precedence levels for parenthesizing test expressions.
#[derive(Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Prec {
    Or,
    And,
    /// A counter comparison: binds tighter than `&&`, looser than `!`.
    Cmp,
    Unary,
}

/// How the code of one cell (or of one test list of the table style) reads each input:
/// directly where it appears, or through the step's sampler.
#[derive(Clone, Debug, PartialEq, Eq)]
pub(super) struct Reads {
    /// Per input: read through the sampler (it appears in more than one place).
    sampled: Vec<bool>,
}

impl Reads {
    /// The reads of a cell whose tests are `tests`, evaluated in order, each at most
    /// once per step.
    pub(super) fn of<'g>(n_inputs: usize, tests: impl IntoIterator<Item = &'g Guard>) -> Reads {
        let mut count = vec![0usize; n_inputs];
        for t in tests {
            count_inputs(t, &mut count);
        }
        Reads {
            sampled: count.into_iter().map(|c| c > 1).collect(),
        }
    }

    /// Whether the cell needs the sampler at all.
    pub(super) fn any_sampled(&self) -> bool {
        self.sampled.iter().any(|s| *s)
    }

    /// Whether input `i` is read through the sampler.
    fn is_sampled(&self, i: InputId) -> bool {
        self.sampled.get(i.index()).copied().unwrap_or(false)
    }

    /// Marks in `into` the inputs this cell reads through the sampler.
    pub(super) fn add_to(&self, into: &mut [bool]) {
        for (slot, s) in into.iter_mut().zip(&self.sampled) {
            *slot |= *s;
        }
    }
}

/// Adds one to `count[i]` for every occurrence of input `i` in `g`.
fn count_inputs(g: &Guard, count: &mut [usize]) {
    match g {
        Guard::Input(i) => {
            if let Some(c) = count.get_mut(i.index()) {
                *c += 1;
            }
        }
        Guard::Const(_) | Guard::Atom(_) => {}
        Guard::Not(a) => count_inputs(a, count),
        Guard::And(a, b) | Guard::Or(a, b) => {
            count_inputs(a, count);
            count_inputs(b, count);
        }
    }
}

/// `Some(x)` when a test is written `!x` at the top level: a lone test of a cell is
/// then written `if x { .. } else { .. }` with the branches swapped (clippy's
/// `if_not_else`), which evaluates and reads exactly as `!x` does.
pub(super) fn negated(g: &Guard) -> Option<&Guard> {
    match g {
        Guard::Not(a) => Some(a),
        _ => None,
    }
}

impl Gen<'_> {
    /// A test as a Rust boolean expression over `hooks` (and the sampler `inputs`
    /// where `reads` says so). Tests come folded from the lowered form; a constant that
    /// is left is printed as such.
    pub(super) fn test_expr(&self, g: &Guard, reads: &Reads) -> TokenStream {
        self.test_at(g, reads, Prec::Or)
    }

    /// A test as the right operand of `&&` (after a due timeout): parenthesized when it
    /// is an `||`, so that it binds as one condition.
    pub(super) fn test_operand(&self, g: &Guard, reads: &Reads) -> TokenStream {
        self.test_at(g, reads, Prec::And)
    }

    fn test_at(&self, g: &Guard, reads: &Reads, outer: Prec) -> TokenStream {
        let (tokens, prec) = match g {
            Guard::Input(i) => {
                let f = ident(&self.m.inputs[i.index()].name);
                if reads.is_sampled(*i) {
                    (quote!(inputs.#f(hooks)), Prec::Unary)
                } else {
                    (quote!(hooks.#f()), Prec::Unary)
                }
            }
            Guard::Atom(a) => {
                let prec = if self.reads_counter(g) {
                    Prec::Cmp
                } else {
                    Prec::Unary
                };
                (self.atom_expr(*a), prec)
            }
            Guard::Const(b) => (quote!(#b), Prec::Unary),
            Guard::Not(a) => {
                let inner = self.test_at(a, reads, Prec::Unary);
                (quote!(!#inner), Prec::Unary)
            }
            Guard::And(a, b) => {
                let a = self.test_at(a, reads, Prec::And);
                let b = self.test_at(b, reads, Prec::And);
                (quote!(#a && #b), Prec::And)
            }
            Guard::Or(a, b) => {
                let a = self.test_at(a, reads, Prec::Or);
                let b = self.test_at(b, reads, Prec::Or);
                (quote!(#a || #b), Prec::Or)
            }
        };
        if prec < outer {
            quote!((#tokens))
        } else {
            tokens
        }
    }

    /// `let mut inputs = StepInputs::default();` at the top of a cell's code when the
    /// cell reads some input through the sampler; nothing otherwise.
    pub(super) fn sampler_start(&self, reads: &Reads) -> TokenStream {
        if !reads.any_sampled() {
            return quote!();
        }
        // An input named `default` gives `StepInputs` an inherent method of that name,
        // which `StepInputs::default()` would find before the trait's.
        if self.m.inputs.iter().any(|i| i.name == "default") {
            quote!(let mut inputs = <StepInputs as Default>::default();)
        } else {
            quote!(let mut inputs = StepInputs::default();)
        }
    }

    /// The `StepInputs` struct and its methods, for the inputs `sampled` marks (the
    /// union over every cell of the inputs read through the sampler); nothing when no
    /// cell needs it.
    pub(super) fn sampler_items(&self, sampled: &[bool]) -> TokenStream {
        let inputs: Vec<_> = self
            .m
            .inputs
            .iter()
            .zip(sampled)
            .filter(|(_, s)| **s)
            .map(|(i, _)| i)
            .collect();
        if inputs.is_empty() {
            return quote!();
        }
        let fields = inputs.iter().map(|i| {
            let f = ident(&i.name);
            let doc = doc_text(&format!(
                "`{}` as read in this step (`None`: not read yet).",
                i.name
            ));
            quote!(#doc #f: Option<bool>)
        });
        let methods = inputs.iter().map(|i| {
            let f = ident(&i.name);
            let doc = doc_text(&format!(
                "Input `{}`: read through `hooks` the first time a test of the step needs \
                 it, the same value after that.",
                i.name
            ));
            quote! {
                #doc
                fn #f<H: Hooks + ?Sized>(&mut self, hooks: &mut H) -> bool {
                    *self.#f.get_or_insert_with(|| hooks.#f())
                }
            }
        });
        quote! {
            /// The inputs of one step that several tests of a cell can need: each is read
            /// through `Hooks` at most once, the first time a test needs it, and the later
            /// tests of the step see that value (an input that bounces between two reads
            /// cannot leave a covered step without a rule).
            #[derive(Default)]
            struct StepInputs {
                #(#fields,)*
            }

            impl StepInputs {
                #(#methods)*
            }
        }
    }
}
