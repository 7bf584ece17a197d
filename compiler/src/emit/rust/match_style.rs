//! The match style (`#[dispatch(match)]`): `step` is `match self.state { S => match
//! event { .. } }`, one arm per cell of the lowered form ([`crate::model::lower`]),
//! events of one cell sharing an arm, the cell's choices as an `if`/`else if` chain in
//! choice order, and arms whose code comes out the same merged (clippy's
//! `match_same_arms`). Which rule fires is the lowered form's choice; nothing here
//! decides it.

use super::guards::{negated, Reads};
use super::tokens::{
    by_ref_allow, ident, line_estimate, long_fn_allow, merge_arms, param, uses_ident,
};
use super::Gen;
use crate::model::lower::{Cell, Choice, OutSetId};
use crate::model::{EventId, OutputId, StateId};
use proc_macro2::TokenStream;
use quote::quote;

impl Gen<'_> {
    /// `impl Machine { outputs, step }` in the match style, with the step's sampler
    /// when some cell reads an input twice.
    pub(super) fn match_dispatch(&self) -> TokenStream {
        let m = self.m;
        let lowered = &m.lowered;
        // Moore outputs: states grouped by their (interned) Moore set.
        let mut moore_groups: Vec<(OutSetId, Vec<TokenStream>)> = Vec::new();
        for i in 0..m.states.len() {
            let s = StateId::from_index(i);
            let set = lowered.moore(s);
            let v = self.state_variant(s);
            match moore_groups.iter_mut().find(|(id, _)| *id == set) {
                Some((_, vs)) => vs.push(v),
                None => moore_groups.push((set, vec![v])),
            }
        }
        let outputs_body = if m.outputs.is_empty() {
            quote!(Outputs {})
        } else if moore_groups.len() == 1 {
            self.outputs_literal(lowered.outputs(moore_groups[0].0))
        } else {
            let arms = moore_groups.iter().map(|(set, vs)| {
                let lit = self.outputs_literal(lowered.outputs(*set));
                quote!(#(#vs)|* => #lit)
            });
            quote!(match self.state { #(#arms,)* })
        };

        let unhandled = self.unhandled();
        // The inputs some cell reads through the sampler.
        let mut sampled = vec![false; m.inputs.len()];
        let mut state_arms = Vec::with_capacity(m.states.len());
        for si in 0..m.states.len() {
            let s = StateId::from_index(si);
            // Events grouped by their cell, in event order.
            let mut groups: Vec<(&Cell, Vec<EventId>)> = Vec::new();
            let mut unhandled_events = Vec::new();
            for ei in 0..m.events.len() {
                let e = EventId::from_index(ei);
                let id = lowered.cell_id(s, e);
                let cell = lowered.cell(id);
                // A cell without choices is unhandled, unless it is a time-base cell
                // whose timers still count.
                if cell.choices.is_empty() && cell.timers.is_empty() {
                    unhandled_events.push(e);
                    continue;
                }
                match groups.iter_mut().find(|(c, _)| std::ptr::eq(*c, cell)) {
                    Some((_, es)) => es.push(e),
                    None => groups.push((cell, vec![e])),
                }
            }
            if groups.is_empty() {
                state_arms.push((self.state_variant(s), unhandled.clone()));
                continue;
            }
            // Different cells can still compile to the same code (same target, outputs
            // and actions): one arm per distinct body, so no two arms repeat each other
            // (clippy's `match_same_arms`).
            let event_arms = merge_arms(groups.iter().map(|(cell, events)| {
                let pats = events.iter().map(|&e| self.event_variant(e)).collect();
                (pats, self.choice_chain(cell, &mut sampled))
            }));
            let event_arms = event_arms
                .iter()
                .map(|(pats, body)| quote!(#(#pats)|* => #body));
            // The events left over share the unhandled arm: `_`, or the variant itself
            // when only one is left (a wildcard standing for one variant is
            // `match_wildcard_for_single_variants`).
            let rest = match unhandled_events.as_slice() {
                [] => quote!(),
                [e] => {
                    let v = self.event_variant(*e);
                    quote!(#v => #unhandled)
                }
                _ => quote!(_ => #unhandled),
            };
            state_arms.push((
                self.state_variant(s),
                quote!(match event { #(#event_arms,)* #rest }),
            ));
        }
        // States whose arms come out the same (for instance two states without rules)
        // share one arm too.
        let state_arms = merge_arms(state_arms.into_iter().map(|(v, body)| (vec![v], body)));
        let state_arms: Vec<TokenStream> = state_arms
            .iter()
            .map(|(pats, body)| quote!(#(#pats)|* => #body))
            .collect();
        let step_doc = self.step_doc();
        let by_ref_allow = by_ref_allow();
        // Per group of states: a line per state pattern, then the `Outputs` literal.
        let outputs_lines = if moore_groups.len() > 1 {
            moore_groups
                .iter()
                .map(|(_, vs)| vs.len() + m.outputs.len() + 3)
                .sum::<usize>()
                + 2
        } else {
            m.outputs.len() + 2
        };
        let outputs_len_allow = long_fn_allow(
            outputs_lines,
            "one match arm per group of states with the same Moore outputs",
        );
        let arms = quote!(#(#state_arms)*);
        // Clippy's `too_many_lines` (pedantic, 100 lines) would count the spec here: the
        // body is the whole transition table written out, and splitting it into
        // functions would only add calls to the hot path. A long `step` gets the allow,
        // reason given.
        let step_attrs = self.step_attrs(line_estimate(&arms) + 2);
        // A machine without guards or actions (or without rules) leaves a parameter
        // unused: name it `_x` then, so the code builds warning-free.
        let hooks_param = param("hooks", uses_ident(&arms, "hooks"));
        let event_param = param("event", uses_ident(&arms, "event"));
        let sampler = self.sampler_items(&sampled);
        let timer_methods = self.timer_methods(false);
        quote! {
            #sampler
            #timer_methods

            impl Machine {
                /// The Moore outputs of the current state.
                #[must_use]
                #by_ref_allow
                #outputs_len_allow
                pub fn outputs(&self) -> Outputs {
                    #outputs_body
                }

                #step_doc
                #step_attrs
                pub fn step<H: Hooks + ?Sized>(
                    &mut self,
                    #event_param: Event,
                    #hooks_param: &mut H,
                ) -> Result<Outputs, ::detent::Rejected> {
                    let from = self.state;
                    match from {
                        #(#state_arms,)*
                    }
                }
            }
        }
    }

    /// One cell's code: `if t1 { fire c1 } else if t2 { fire c2 } [else { fire cn }]`,
    /// the choices in order, a choice without a test ending the chain, and the
    /// unhandled ending when the last choice has a test. Starts the step's sampler when
    /// the tests read an input twice, and marks those inputs in `sampled`.
    fn choice_chain(&self, cell: &Cell, sampled: &mut [bool]) -> TokenStream {
        let reads = Reads::of(
            self.m.inputs.len(),
            cell.choices.iter().filter_map(|c| c.test.as_ref()),
        );
        reads.add_to(sampled);
        // The choices with a condition (a test, a due timeout or both), up to the first
        // without one, which ends the chain.
        let mut guarded = Vec::new();
        let mut always = None;
        for choice in &cell.choices {
            if choice.test.is_none() && choice.due.is_none() {
                always = Some(choice);
                break;
            }
            guarded.push(choice);
        }
        let unhandled = self.unhandled();
        let mut chain = match always {
            Some(choice) => {
                let body = self.fire(choice);
                quote!({ #body })
            }
            None => quote!({ #unhandled }),
        };
        let single = guarded.len() == 1;
        for choice in guarded.into_iter().rev() {
            let body = self.fire(choice);
            // A lone test is `if t { .. } else { .. }`: when `t` is a negation, test its
            // positive form and swap the branches, so the code does not read
            // `if !x { .. } else { .. }` (clippy's `if_not_else`, which leaves `else if`
            // chains alone).
            if single && choice.due.is_none() {
                if let Some(positive) = choice.test.as_ref().and_then(negated) {
                    let cond = self.test_expr(positive, &reads);
                    chain = quote!(if #cond #chain else { #body });
                    continue;
                }
            }
            // A timeout is tested first: it reads no input.
            let due = choice.due.map(|(t, d)| self.due_expr(t, d));
            let cond = match (due, &choice.test) {
                (Some(d), Some(t)) => {
                    let t = self.test_operand(t, &reads);
                    quote!(#d && #t)
                }
                (Some(d), None) => d,
                (None, Some(t)) => self.test_expr(t, &reads),
                (None, None) => quote!(true),
            };
            chain = quote!(if #cond { #body } else #chain);
        }
        // The time-base event first counts the timers of the state's scopes, keeping
        // their values from before for the due tests.
        let count = if cell.timers.is_empty() {
            quote!()
        } else {
            let stmts = cell.timers.iter().map(|&t| self.count_stmt(t));
            let before = if super::tokens::uses_ident(&chain, "before") {
                quote!(let before = self.timers();)
            } else {
                quote!()
            };
            quote!(#before #(#stmts)*)
        };
        if reads.any_sampled() || !cell.timers.is_empty() {
            let start = self.sampler_start(&reads);
            quote!({ #count #start #chain })
        } else {
            chain
        }
    }

    /// The statements of a choice firing: its operations in order, the state assigned
    /// unless it stays, and the outputs (Moore of the target with the choice's Mealy
    /// outputs).
    fn fire(&self, choice: &Choice) -> TokenStream {
        let m = self.m;
        let lowered = &m.lowered;
        let actions = lowered.actions(choice.ops).map(|a| {
            let f = ident(&m.actions[a.index()].name);
            quote!(hooks.#f();)
        });
        let to_v = self.state_variant(choice.target);
        let assign = if choice.moves {
            quote!(self.state = to;)
        } else {
            quote!()
        };
        let zero = self.zero_stmts(&choice.resets);
        let high = union(
            lowered.outputs(lowered.moore(choice.target)),
            lowered.outputs(choice.mealy),
        );
        let outputs = self.outputs_literal(&high);
        let trace = self.trace();
        quote! {
            #(#actions)*
            let to = #to_v;
            #assign
            #zero
            #trace
            Ok(#outputs)
        }
    }

    /// `Outputs { a: true, b: false }` for a set of high outputs.
    fn outputs_literal(&self, high: &[OutputId]) -> TokenStream {
        let fields = self.m.outputs.iter().enumerate().map(|(i, o)| {
            let f = ident(&o.name);
            let v = high.contains(&OutputId::from_index(i));
            quote!(#f: #v)
        });
        quote!(Outputs { #(#fields),* })
    }
}

/// Two ascending output sets joined, ascending, without duplicates.
fn union(a: &[OutputId], b: &[OutputId]) -> Vec<OutputId> {
    let mut all = a.to_vec();
    all.extend_from_slice(b);
    all.sort_unstable();
    all.dedup();
    all
}
