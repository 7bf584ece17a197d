//! The timers of a machine with timeout rules, in generated Rust (DESIGN.md,
//! "Generated Rust"; the semantics are those of [`crate::emit::timers`]).
//!
//! `Machine` holds a `Timers` struct beside its state: one field per scope with `after`
//! rules, in the narrowest unsigned type that holds the scope's largest duration, each
//! documented with what it counts. `Machine::timers` reads them, `next_timeout` says how
//! many time-base events until a timeout comes due (guards aside), and two private
//! helpers serve `step`: `count` (the time-base event: each active timer adds one,
//! stopping at its largest duration) and, in the table style, `zero_timers` (the timers
//! a rule sets to 0, by the number of the set in the tables). The match style writes
//! both inline, since each arm knows its state and rule.

use super::tokens::{doc_text, lit, long_fn_allow};
use super::Gen;
use crate::emit::timers::timer_doc;
use crate::model::TimerId;
use proc_macro2::{Literal, TokenStream};
use quote::quote;

impl Gen<'_> {
    /// Whether the machine has timers.
    pub(super) fn timed(&self) -> bool {
        !self.timers.is_empty()
    }

    /// The `Timers` struct (inside the runtime's derive wrapper), or nothing.
    pub(super) fn timers_struct(&self) -> TokenStream {
        if !self.timed() {
            return quote!();
        }
        let m = self.m;
        let fields = self.timers.iter().enumerate().map(|(i, t)| {
            let doc = doc_text(&timer_doc(m, TimerId::from_index(i)));
            let f = &t.field;
            let ty = &t.ty;
            quote!(#doc pub #f: #ty)
        });
        let doc = doc_text(&format!(
            "The timers of `{}`: one per state or group with `after` rules.",
            m.name
        ));
        quote! {
            #doc
            #[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
            pub struct Timers {
                #(#fields,)*
            }
        }
    }

    /// `, timer_a: 0, ..`: the timer fields of `Machine` at 0, for its constructors.
    pub(super) fn timers_zero(&self) -> TokenStream {
        let fields = self.timers.iter().map(|t| {
            let f = &t.slot;
            quote!(, #f: 0)
        });
        quote!(#(#fields)*)
    }

    /// The timer fields of `Machine` (`timer_a: u8, ..`).
    pub(super) fn timer_slots(&self) -> TokenStream {
        let fields = self.timers.iter().map(|t| {
            let f = &t.slot;
            let ty = &t.ty;
            let doc = doc_text(&format!("Timer `{}` (see `Timers`).", t.field));
            quote!(#doc #f: #ty,)
        });
        quote!(#(#fields)*)
    }

    /// The statement that counts one time-base event for timer `t`: add one, stopping
    /// at its largest duration.
    pub(super) fn count_stmt(&self, t: TimerId) -> TokenStream {
        let tg = &self.timers[t.index()];
        let f = &tg.slot;
        let type_max: u64 = match tg.ty.to_string().as_str() {
            "u8" => u64::from(u8::MAX),
            "u16" => u64::from(u16::MAX),
            _ => u64::from(u32::MAX),
        };
        if u64::from(tg.max) == type_max {
            quote!(self.#f = self.#f.saturating_add(1);)
        } else {
            let max = Literal::u32_unsuffixed(tg.max);
            quote!(self.#f = self.#f.saturating_add(1).min(#max);)
        }
    }

    /// The due test of a timeout choice: its timer was at `ticks - 1` before this
    /// time-base event (`before` holds the timers as they were).
    pub(super) fn due_expr(&self, t: TimerId, ticks: u32) -> TokenStream {
        let f = &self.timers[t.index()].field;
        let v = Literal::u32_unsuffixed(ticks.saturating_sub(1));
        quote!(before.#f == #v)
    }

    /// The methods of `impl Machine` for timers (`timers`, `next_timeout`, and `count`
    /// for the table style) and the free helpers of `next_timeout`; nothing without
    /// timers.
    pub(super) fn timer_methods(&self, with_count: bool) -> TokenStream {
        if !self.timed() {
            return quote!();
        }
        let m = self.m;
        let state = quote!(self.state);
        let per_timer: Vec<TokenStream> = self
            .timers
            .iter()
            .enumerate()
            .map(|(i, t)| {
                let durations = m.timers[i]
                    .durations
                    .iter()
                    .map(|&d| Literal::u32_unsuffixed(d));
                let f = &t.slot;
                let value = if t.wide {
                    quote!(self.#f)
                } else {
                    quote!(u32::from(self.#f))
                };
                let cond = self.in_states(&state, &t.states);
                quote! {
                    if #cond {
                        next = sooner(next, until(&[#(#durations),*], #value));
                    }
                }
            })
            .collect();
        let next_allow = long_fn_allow(per_timer.len() * 3 + 3, "one test per timer of the spec");
        let count = if with_count {
            let stmts = self.timers.iter().enumerate().map(|(i, t)| {
                let cond = self.in_states(&state, &t.states);
                let stmt = self.count_stmt(TimerId::from_index(i));
                quote!(if #cond { #stmt })
            });
            let allow = long_fn_allow(self.timers.len() * 3 + 2, "one test per timer of the spec");
            quote! {
                /// Counts one time-base event: each timer of the current state's scopes
                /// adds one, stopping at its largest duration.
                #allow
                fn count(&mut self) {
                    #(#stmts)*
                }
            }
        } else {
            quote!()
        };
        let by_ref = super::tokens::by_ref_allow();
        let read = self.timers.iter().map(|t| {
            let (f, slot) = (&t.field, &t.slot);
            quote!(#f: self.#slot)
        });
        quote! {
            impl Machine {
                /// The timers now (a timer whose scope the machine is not in is 0).
                #[must_use]
                #by_ref
                pub const fn timers(&self) -> Timers {
                    Timers { #(#read),* }
                }

                /// The number of time-base events after which a timeout of the current
                /// state or its groups comes due (its guard aside), or `None` when none is
                /// pending: how long a tickless host may sleep before the next time-base
                /// event matters.
                #[must_use]
                #by_ref
                #next_allow
                pub fn next_timeout(&self) -> Option<u32> {
                    let mut next = None;
                    #(#per_timer)*
                    next
                }

                #count
            }

            /// The time-base events from `count` to the first of `durations` (ascending)
            /// that is later, if one is.
            fn until(durations: &[u32], count: u32) -> Option<u32> {
                durations
                    .iter()
                    .find_map(|&d| d.checked_sub(count).filter(|&n| n > 0))
            }

            /// The sooner of two optional counts.
            fn sooner(a: Option<u32>, b: Option<u32>) -> Option<u32> {
                match (a, b) {
                    (Some(x), Some(y)) => Some(x.min(y)),
                    (x, None) => x,
                    (None, y) => y,
                }
            }
        }
    }

    /// `zero_timers(set)` of the table style: one arm per set of timers some rule sets
    /// to 0 (`sets[k - 1]` is set `k`; 0: none).
    pub(super) fn zero_timers_fn(&self, sets: &[Vec<TimerId>], num: &TokenStream) -> TokenStream {
        let arms: Vec<TokenStream> = sets
            .iter()
            .enumerate()
            .map(|(k, set)| {
                let id = lit(k + 1);
                let stmts = self.zero_stmts(set);
                quote!(#id => { #stmts })
            })
            .collect();
        let body = if arms.len() == 1 {
            let stmts = self.zero_stmts(&sets[0]);
            quote!(if set == 1 { #stmts })
        } else {
            quote! {
                match set {
                    #(#arms)*
                    _ => {}
                }
            }
        };
        let allow = long_fn_allow(
            sets.iter().map(|s| s.len() + 2).sum::<usize>() + 3,
            "one match arm per set of timers the spec's rules reset",
        );
        quote! {
            impl Machine {
                /// Sets the timers of set `set` to 0 (`0`: none): the timers of the scopes
                /// a rule enters (they restart) and of those it leaves.
                #allow
                fn zero_timers(&mut self, set: #num) {
                    #body
                }
            }
        }
    }
}
