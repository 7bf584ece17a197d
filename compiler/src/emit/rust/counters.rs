//! The counters of a machine, in generated Rust (DESIGN.md, "Generated Rust"; the
//! semantics are those of [`crate::emit::counters`]).
//!
//! `Machine` holds one private field per counter (`counter_<name>`, `u8` up to 255,
//! else `u16`) beside its state and timers: fields of `Machine` itself rather than a
//! nested struct, so that the compiler packs them with the state byte, as it does the
//! timers. `counters()` reads them as a `Counters` struct (`Copy`, one documented field
//! per counter), `restore_with` builds a machine from a stored state, counters (and
//! timers) and refuses a value out of range, and the steps change them with saturating
//! arithmetic that has no panic path: `saturating_add(k).min(N)`, `saturating_sub(k)`,
//! or a constant.
//!
//! A guard's comparison reads the field while the rule is chosen, before any operation
//! of the step runs: that is the value at the start of the step.

use super::tokens::{by_ref_allow, doc_attrs, doc_text, ident, long_fn_allow};
use super::Gen;
use crate::emit::counters::{atom_code, counter_doc, op_code, AtomCode, OpCode};
use crate::model::lower::SeqId;
use crate::model::{AtomId, CounterId, CounterOp, Op, TimerId};
use proc_macro2::{Literal, TokenStream};
use quote::quote;

/// How one counter appears in the generated code.
pub(super) struct CounterGen {
    /// Its field in `Counters`.
    pub(super) field: proc_macro2::Ident,
    /// Its field in `Machine` (`counter_<name>`).
    pub(super) slot: proc_macro2::Ident,
    /// `u8` (bound up to 255) or `u16`.
    pub(super) ty: TokenStream,
    /// Its bound.
    pub(super) max: u16,
}

impl CounterGen {
    /// The counter `c` of the machine.
    pub(super) fn new(m: &crate::model::Machine, c: CounterId) -> Self {
        let counter = &m.counters[c.index()];
        CounterGen {
            field: ident(&counter.name),
            slot: ident(&format!("counter_{}", counter.name)),
            ty: if crate::emit::counters::counter_bits(counter.max) == 8 {
                quote!(u8)
            } else {
                quote!(u16)
            },
            max: counter.max,
        }
    }
}

impl Gen<'_> {
    /// Whether the machine has counters.
    pub(super) fn counted(&self) -> bool {
        !self.counters.is_empty()
    }

    /// The `Counters` struct (inside the runtime's derive wrapper), or nothing.
    pub(super) fn counters_struct(&self) -> TokenStream {
        if !self.counted() {
            return quote!();
        }
        let m = self.m;
        let fields = self.counters.iter().enumerate().map(|(i, c)| {
            let doc = doc_attrs(&counter_doc(m, CounterId::from_index(i)));
            let (f, ty) = (&c.field, &c.ty);
            quote!(#doc pub #f: #ty)
        });
        let doc = doc_text(&format!(
            "The counters of `{}`, one field per counter of the spec, each in `0..=` its \
             bound.",
            m.name
        ));
        quote! {
            #doc
            #[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
            pub struct Counters {
                #(#fields,)*
            }
        }
    }

    /// The counter fields of `Machine` (`counter_a: u8, ..`).
    pub(super) fn counter_slots(&self) -> TokenStream {
        let fields = self.counters.iter().map(|c| {
            let (f, ty) = (&c.slot, &c.ty);
            let doc = doc_text(&format!("Counter `{}` (see `Counters`).", c.field));
            quote!(#doc #f: #ty,)
        });
        quote!(#(#fields)*)
    }

    /// `, counter_a: 0, ..`: the counter fields of `Machine` at 0, for its
    /// constructors.
    pub(super) fn counters_zero(&self) -> TokenStream {
        let fields = self.counters.iter().map(|c| {
            let f = &c.slot;
            quote!(, #f: 0)
        });
        quote!(#(#fields)*)
    }

    /// A guard's comparison: `self.counter_a < 2` (the caller parenthesizes it under
    /// `!`), or a constant when it has one value
    /// over the whole range ([`crate::emit::counters`]).
    pub(super) fn atom_expr(&self, a: AtomId) -> TokenStream {
        match atom_code(self.m, &self.m.atoms[a.index()]) {
            AtomCode::Const(b) => quote!(#b),
            AtomCode::Cmp(c, cmp, k) => {
                let f = &self.counters[c.index()].slot;
                let k = Literal::u16_unsuffixed(k);
                let op: TokenStream = match cmp.symbol().parse() {
                    Ok(op) => op,
                    Err(_) => quote!(==),
                };
                quote!(self.#f #op #k)
            }
        }
    }

    /// Whether a test reads a counter in the generated code (a comparison that is not
    /// constant over the counter's range).
    pub(super) fn reads_counter(&self, g: &crate::model::Guard) -> bool {
        g.atoms().iter().any(|a| {
            matches!(
                atom_code(self.m, &self.m.atoms[a.index()]),
                AtomCode::Cmp(..)
            )
        })
    }

    /// The statement of one counter operation (nothing for `+= 0`).
    fn op_stmt(&self, op: &CounterOp) -> TokenStream {
        let c = &self.counters[op.counter.index()];
        let f = &c.slot;
        let type_max = if c.ty.to_string() == "u8" {
            u16::from(u8::MAX)
        } else {
            u16::MAX
        };
        match op_code(self.m, op) {
            OpCode::Nothing => quote!(),
            OpCode::Set(k) => {
                let k = Literal::u16_unsuffixed(k);
                quote!(self.#f = #k;)
            }
            OpCode::Add(k) => {
                let k = Literal::u16_unsuffixed(k);
                if c.max == type_max {
                    quote!(self.#f = self.#f.saturating_add(#k);)
                } else {
                    let max = Literal::u16_unsuffixed(c.max);
                    quote!(self.#f = self.#f.saturating_add(#k).min(#max);)
                }
            }
            OpCode::Sub(k) => {
                let k = Literal::u16_unsuffixed(k);
                quote!(self.#f = self.#f.saturating_sub(#k);)
            }
        }
    }

    /// The statements of an operation sequence, in order: `hooks.a();` per action and
    /// the counter operations between them.
    pub(super) fn ops_stmts(&self, seq: SeqId) -> TokenStream {
        let stmts = self.m.lowered.seq(seq).iter().map(|op| match op {
            Op::Action(a) => {
                let f = ident(&self.m.actions[a.index()].name);
                quote!(hooks.#f();)
            }
            Op::Counter(op) => self.op_stmt(op),
        });
        quote!(#(#stmts)*)
    }

    /// `counters()` and `restore_with` for a machine with counters; nothing otherwise.
    pub(super) fn counter_methods(&self) -> TokenStream {
        if !self.counted() {
            return quote!();
        }
        let m = self.m;
        let by_ref = by_ref_allow();
        let read = self.counters.iter().map(|c| {
            let (f, slot) = (&c.field, &c.slot);
            quote!(#f: self.#slot)
        });
        let state_ty = &self.state_ty;
        // `InvalidState` carries a `u16`: widen with `From`, saturate a `u32` timer.
        let widen = |v: TokenStream, ty: &str| match ty {
            "u8" => quote!(u16::from(#v)),
            "u16" => v,
            _ => quote!(match u16::try_from(#v) { Ok(v) => v, Err(_) => u16::MAX }),
        };
        let mut checks = Vec::new();
        let mut writes = Vec::new();
        for c in &self.counters {
            let (f, slot) = (&c.field, &c.slot);
            let type_max = if c.ty.to_string() == "u8" { 255 } else { 65535 };
            if c.max < type_max {
                let max = Literal::u16_unsuffixed(c.max);
                let raw = widen(quote!(counters.#f), &c.ty.to_string());
                checks.push(quote! {
                    if counters.#f > #max {
                        return Err(::detent::InvalidState { raw: #raw });
                    }
                });
            }
            writes.push(quote!(machine.#slot = counters.#f;));
        }
        let (timers_param, timers_doc) = if self.timed() {
            for (i, t) in self.timers.iter().enumerate() {
                let (f, slot) = (&t.field, &t.slot);
                let ty = t.ty.to_string();
                let type_max: u64 = match ty.as_str() {
                    "u8" => u64::from(u8::MAX),
                    "u16" => u64::from(u16::MAX),
                    _ => u64::from(u32::MAX),
                };
                let raw = widen(quote!(timers.#f), &ty);
                let inactive = {
                    let states = &self.timers[TimerId::from_index(i).index()].states;
                    let active = self.in_states(&quote!(machine.state), states);
                    quote!(timers.#f != 0 && !#active)
                };
                let cond = if u64::from(t.max) < type_max {
                    let max = Literal::u32_unsuffixed(t.max);
                    quote!(timers.#f > #max || #inactive)
                } else {
                    inactive
                };
                checks.push(quote! {
                    if #cond {
                        return Err(::detent::InvalidState { raw: #raw });
                    }
                });
                writes.push(quote!(machine.#slot = timers.#f;));
            }
            (
                quote!(, timers: Timers),
                quote! {
                    /// A timer above its longest timeout, or not 0 while the machine is not
                    /// in its state or group, is refused too (`raw`: the timer's value,
                    /// `u16::MAX` when it does not fit).
                },
            )
        } else {
            (quote!(), quote!())
        };
        let n = m.states.len();
        let counters_line = doc_text(&format!(
            "`InvalidState` carrying `raw` when no state has that number (the states are \
             numbered 0 to {}), or carrying a counter's value when it is past the \
             counter's bound.",
            n - 1
        ));
        let allow = long_fn_allow(
            checks.len() * 3 + writes.len() + 3,
            "one check per counter and timer of the spec",
        );
        quote! {
            impl Machine {
                /// The counters now.
                #[must_use]
                #by_ref
                pub const fn counters(&self) -> Counters {
                    Counters { #(#read),* }
                }

                /// A machine in the state numbered `raw` with the given counters (and
                /// timers): a configuration stored as a whole, for instance in flash.
                /// `restore(raw)` alone starts every counter and timer at 0.
                ///
                /// # Errors
                ///
                #counters_line
                #timers_doc
                #allow
                pub fn restore_with(
                    raw: #state_ty,
                    counters: Counters
                    #timers_param
                ) -> Result<Self, ::detent::InvalidState> {
                    let mut machine = Machine::restore(raw)?;
                    #(#checks)*
                    #(#writes)*
                    Ok(machine)
                }
            }
        }
    }
}
