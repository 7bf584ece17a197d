//! The table style (`#[dispatch(table)]`, the default): flash-resident `static`
//! tables in the narrowest integer types, written from the lowered form
//! ([`crate::model::lower`]), which alone decides which rule fires.
//!
//! `CELLS[state][event]` is a `Cell`: the first choice of the (state, event) cell
//! written out (a `Rule`: its target, its operation-sequence number and its Mealy
//! outputs as masks), `seq`, the number of the cell's list of tests, and `rest`, where
//! the cell's other choices start in `RULES`. Below [`NUMERIC_TABLE_CELLS`] cells a
//! `Rule` is `(State, [numbers])` and a `Cell` `(Rule, [seq, rest])`, and `step` picks
//! the rule that fires by reference; from there on both are arrays of numbers, targets
//! included, which rustc checks about twice as fast as tables full of `State::..`
//! paths, and `step` turns the target number into a `State` with `State::from_raw` (a
//! `match` the compiler makes one compare). A cell whose first choice needs no test
//! (an unguarded rule, the common case) costs one load from the state to the next
//! state: the benchmark steps one machine, each step waiting for the state of the one
//! before, and every dependent load on that path counts (BENCHMARKS.md, "Dispatch").
//! Because the actions of a rule depend on the state it fires in (enter/leave actions),
//! a rule entry belongs to a cell; identical runs of entries in `RULES` are stored
//! once.
//!
//! A step costs two small `match`es besides the table loads: `select` on the test-list
//! number (one arm per distinct list, its tests as an `if`/`else if` chain in choice
//! order giving the position of the choice taken, reading each input at most once as
//! `guards.rs` describes) and `run_actions` on the operation-sequence number (one arm
//! per interned sequence the tables use, numbered as the lowered form numbers it, the
//! hook calls in order), so the code grows with the distinct test lists and
//! sequences, not with states x events. Every table access is `.get()` with a
//! fallback, so `step` has no panic path whatever the optimizer proves.

use super::guards::{negated, Reads};
use super::tokens::{
    by_ref_allow, doc_text, ident, line_estimate, lit, long_fn_allow, param, uint, uses_ident,
};
use super::Gen;
use crate::model::lower::{Choice, SeqId};
use crate::model::{EventId, Guard, OutputId, StateId, TimerId};
use proc_macro2::{Literal, TokenStream};
use quote::quote;
use std::collections::HashMap;

/// From this many cells (states x events) on, the table style writes its tables as
/// plain numbers (see the module documentation).
pub const NUMERIC_TABLE_CELLS: usize = 1024;

impl Gen<'_> {
    /// The tables, `select`, `run_actions`, the sampler when a test list reads an
    /// input twice, and `impl Machine { outputs, step }` in the table style.
    pub(super) fn table_dispatch(&self) -> TokenStream {
        let m = self.m;
        let lowered = &m.lowered;
        let t = Tables::build(self);
        let k = lit(self.mask_bytes);
        let has_outputs = !m.outputs.is_empty();
        let has_actions = !t.used_seqs.is_empty();
        let has_mealy = has_outputs
            && t.rules
                .iter()
                .chain(t.cells.iter().flatten().map(|c| &c.first))
                .any(|r| r.mealy.iter().any(|b| *b != 0));
        let has_rest = !t.rules.is_empty();
        let has_zero = !t.zero_sets.is_empty();
        // How the tables are written. Big machines: arrays of numbers of one type, the
        // narrowest that holds every number in them, targets included; rustc checks
        // those far faster than the same table holding `State` paths (BENCHMARKS.md,
        // "Macro": 0.58 s -> 0.31 s for a 1,000-state crate), and `step` turns a target
        // number into a `State` with one compare. Smaller machines, whose tables cost
        // rustc little either way: each cell and rule keeps its target as a `State`
        // beside its numbers, which saves `step` that compare (BENCHMARKS.md,
        // "Dispatch").
        let cells = m.states.len() * m.events.len();
        let numeric = cells >= NUMERIC_TABLE_CELLS;
        let widest = [
            if numeric {
                m.states.len().saturating_sub(1)
            } else {
                0
            },
            t.guard_seqs.len(),
            t.max_seq(),
            t.rules.len(),
            t.zero_sets.len(),
            if has_mealy { 0xff } else { 0 },
        ]
        .into_iter()
        .max()
        .unwrap_or(0);
        let num = uint(widest);
        // The output masks are numbers of the tables' type when rules carry Mealy bits.
        let mask_ty = if has_mealy { num.clone() } else { quote!(u8) };
        let step_doc = self.step_doc();
        let unhandled = self.unhandled();

        let moore_table = if has_outputs {
            let n_states = lit(m.states.len());
            let rows = (0..m.states.len())
                .map(|i| self.mask_literal(lowered.outputs(lowered.moore(StateId::from_index(i)))));
            quote! {
                /// Moore outputs per state: bit `i % 8` of mask `i / 8` is output `i`.
                static MOORE: [[#mask_ty; #k]; #n_states] = [#(#rows),*];
            }
        } else {
            quote!()
        };
        let outputs_from = if has_outputs {
            let fields = m.outputs.iter().enumerate().map(|(i, o)| {
                let f = ident(&o.name);
                let byte = lit(i / 8);
                let bit = Literal::u8_unsuffixed(1 << (i % 8));
                quote!(#f: ((moore[#byte] | mealy[#byte]) & #bit) != 0)
            });
            let allow = long_fn_allow(m.outputs.len() + 2, "one line per output of the spec");
            quote! {
                /// The outputs whose bits are set in either mask.
                #allow
                fn outputs_from(moore: [#mask_ty; #k], mealy: [#mask_ty; #k]) -> Outputs {
                    Outputs { #(#fields),* }
                }
            }
        } else {
            quote!()
        };
        let outputs_body = if has_outputs {
            quote! {
                let moore = match MOORE.get(self.state as usize) {
                    Some(mask) => *mask,
                    None => [0; #k],
                };
                outputs_from(moore, [0; #k])
            }
        } else {
            quote!(Outputs {})
        };
        let step_attrs = self.step_attrs(0);
        let by_ref_allow = by_ref_allow();
        let outputs_fn = quote! {
            /// The Moore outputs of the current state.
            #[must_use]
            #by_ref_allow
            pub fn outputs(&self) -> Outputs {
                #outputs_body
            }
        };

        // `outputs` and `step`, given `step`'s parameter names and body.
        let machine_impl = |event: TokenStream, hooks: TokenStream, body: TokenStream| {
            quote! {
                impl Machine {
                    #outputs_fn

                    #step_doc
                    #step_attrs
                    pub fn step<H: Hooks + ?Sized>(
                        &mut self,
                        #event: Event,
                        #hooks: &mut H,
                    ) -> Result<Outputs, ::detent::Rejected> {
                        #body
                    }
                }
            }
        };

        // The time-base event counts the timers of the state's scopes first.
        let count = match &m.timebase {
            Some(tb) if self.timed() => {
                if m.events.len() == 1 {
                    quote!(self.count();)
                } else {
                    let tb = self.event_variant(tb.event);
                    quote!(if event == #tb { self.count(); })
                }
            }
            _ => quote!(),
        };
        let timer_methods = self.timer_methods(true);
        if t.guard_seqs.is_empty() {
            // No rule can fire anywhere: no tables to consult.
            let event = param("event", uses_ident(&count, "event"));
            let machine_impl =
                machine_impl(quote!(#event), quote!(_hooks), quote!(#count #unhandled));
            return quote! {
                #moore_table
                #outputs_from
                #timer_methods
                #machine_impl
            };
        }

        let n_states = lit(m.states.len());
        let n_events = lit(m.events.len());

        // A rule's numbers are `[actions, mealy..]`, a cell's `[actions, mealy.., seq,
        // rest]`, leaving out the columns this machine does not need; numeric tables put
        // the target's number first, the others pair a `State` with the numbers.
        let mut rule_numbers_width = usize::from(has_actions) + usize::from(has_zero);
        if has_mealy {
            rule_numbers_width += self.mask_bytes;
        }
        let cell_numbers_width = rule_numbers_width + 1 + usize::from(has_rest);
        let rule_numbers = |r: &RuleRow| {
            let mut n = Vec::new();
            if has_actions {
                n.push(lit(r.actions));
            }
            if has_zero {
                n.push(lit(r.zero));
            }
            if has_mealy {
                n.extend(r.mealy.iter().map(|b| lit(usize::from(*b))));
            }
            n
        };
        // A table entry from its target and numbers, and its type.
        let entry = |target: usize, numbers: Vec<Literal>| {
            if numeric {
                let target = lit(target);
                quote!([#target, #(#numbers),*])
            } else {
                let target = self.state_variant(StateId::from_index(target));
                if numbers.is_empty() {
                    quote!(#target)
                } else {
                    quote!((#target, [#(#numbers),*]))
                }
            }
        };
        let entry_ty = |width: usize| {
            if numeric {
                let w = lit(width + 1);
                quote!([#num; #w])
            } else if width == 0 {
                quote!(State)
            } else {
                let w = lit(width);
                quote!((State, [#num; #w]))
            }
        };
        let entry_pattern = |numbers: &[TokenStream]| {
            if numeric {
                quote!([target, #(#numbers),*])
            } else if numbers.is_empty() {
                quote!(target)
            } else if !has_actions && !has_zero && numbers.len() == 1 && has_mealy {
                // The numbers are the Mealy masks alone: bind the array itself
                // (clippy's `redundant_at_rest_pattern`).
                quote!((target, mealy))
            } else {
                quote!((target, [#(#numbers),*]))
            }
        };
        // Typed tables pair the cell's first rule, written as in `RULES`, with `[seq,
        // rest]`, so that `step` can pick a rule by reference and read it once.
        let cell_rows = t.cells.iter().map(|row| {
            let cells = row.iter().map(|c| {
                let mut place = vec![lit(c.seq)];
                if has_rest {
                    place.push(lit(c.rest));
                }
                if numeric {
                    let mut n = rule_numbers(&c.first);
                    n.extend(place);
                    entry(c.first.target, n)
                } else {
                    let first = entry(c.first.target, rule_numbers(&c.first));
                    quote!((#first, [#(#place),*]))
                }
            });
            quote!([#(#cells),*])
        });
        let rule_ty = entry_ty(rule_numbers_width);
        let cell_ty = if numeric {
            entry_ty(cell_numbers_width)
        } else {
            let place = lit(1 + usize::from(has_rest));
            quote!((Rule, [#num; #place]))
        };
        let mut rule_columns = Vec::new();
        if has_actions {
            rule_columns.push(quote!(actions));
        }
        if has_zero {
            rule_columns.push(quote!(zero));
        }
        if has_mealy {
            rule_columns.push(quote!(mealy @ ..));
        }
        let rule_values = {
            let mut v = vec![quote!(target)];
            if has_actions {
                v.push(quote!(actions));
            }
            if has_zero {
                v.push(quote!(zero));
            }
            if has_mealy {
                v.push(quote!(mealy));
            }
            v
        };
        // `(target, actions, mealy)`, or `target` alone (no parentheses around one name).
        let rule_values = if rule_values.len() == 1 {
            rule_values[0].clone()
        } else {
            quote!((#(#rule_values),*))
        };
        let mut cell_columns = rule_columns.clone();
        cell_columns.push(quote!(seq));
        if has_rest {
            cell_columns.push(quote!(rest));
        }
        let (rule_pattern, cell_pattern) =
            (entry_pattern(&rule_columns), entry_pattern(&cell_columns));
        let numbers_doc = {
            let mut d = Vec::new();
            if has_actions {
                d.push("actions");
            }
            if has_zero {
                d.push("zero");
            }
            if has_mealy {
                d.extend(std::iter::repeat_n("mealy", self.mask_bytes));
            }
            d
        };
        let shape = |extra: &[&str]| {
            let numbers: Vec<&str> = numbers_doc.iter().chain(extra).copied().collect();
            if numeric {
                format!("`[target, {}]`", numbers.join(", ")).replace(", ]", "]")
            } else if extra.is_empty() {
                if numbers.is_empty() {
                    "`target`".to_string()
                } else {
                    format!("`(target, [{}])`", numbers.join(", "))
                }
            } else {
                format!("`(first, [{}])`", extra.join(", "))
            }
        };
        let target_doc = if numeric {
            "the target state's number (the state itself for `stay`)"
        } else {
            "the target state (the state itself for `stay`)"
        };
        let rule_parts = format!(
            "{target_doc}{}{}{}",
            if has_actions {
                ", the operation sequence (`0`: none, see `run_actions`)"
            } else {
                ""
            },
            if has_zero {
                ", the set of timers it sets to 0 (`0`: none, see `zero_timers`)"
            } else {
                ""
            },
            if has_mealy {
                ", the Mealy output masks (bit `i % 8` of mask `i / 8` is output `i`)"
            } else {
                ""
            },
        );
        // A `Rule` alias when something names it: typed cells hold one, and `RULES`.
        let has_rule_alias = !numeric || has_rest;
        let rule_doc = format!("A rule, {}: {rule_parts}.", shape(&[]));
        let first_doc = if !numeric {
            "its first `Rule`".to_string()
        } else if has_rest {
            "its first rule (the numbers of a `Rule`)".to_string()
        } else {
            format!("its rule ({rule_parts})")
        };
        let cell_doc = format!(
            "A cell, {}: {first_doc}, its test list (`0`: no rules, see `select`){}.",
            shape(if has_rest { &["seq", "rest"] } else { &["seq"] }),
            if has_rest {
                " and where its later rules are: rule `at` (from 1) of the cell is \
                 `RULES[rest + at - 1]`"
            } else {
                ""
            },
        );
        let rule_alias = if has_rule_alias {
            let doc = doc_text(&rule_doc);
            quote! {
                #doc
                type Rule = #rule_ty;
            }
        } else {
            quote!()
        };
        let cell_doc = doc_text(&cell_doc);
        let rules_table = if has_rest {
            let n_rules = lit(t.rules.len());
            let rows = t.rules.iter().map(|r| entry(r.target, rule_numbers(r)));
            quote! {
                /// The rules after the first of each cell, in runs that the cells' `rest`
                /// point at (equal runs stored once).
                static RULES: [Rule; #n_rules] = [#(#rows),*];
            }
        } else {
            quote!()
        };
        // Where rule `at` of the cell is in `RULES`; `rest` is a reference in the typed
        // form. `usize::from` takes `u8` and `u16`; wider numbers (more than 65,535
        // later rules) go through `try_from`.
        let rest = if numeric { quote!(rest) } else { quote!(*rest) };
        let rest_index = if widest <= usize::from(u16::MAX) {
            quote!(usize::from(#rest) + at - 1)
        } else {
            quote! {
                match usize::try_from(#rest) {
                    Ok(rest) => rest + at - 1,
                    Err(_) => return #unhandled,
                }
            }
        };
        // The rule that fires, from the cell's test list `seq`, its first rule `first`
        // and, for a later rule found in `RULES`, the arm `found` that yields it. A cell
        // whose only rule has no guard (test list 1 when there is one, see
        // `Tables::build`) skips `select`: a compare and a branch instead of a jump
        // through `select`'s table, which the benchmark measured at about 5% of a step
        // on small machines (BENCHMARKS.md, "Dispatch").
        let before_arg = if self.timed() {
            quote!(before,)
        } else {
            quote!()
        };
        // Some test compares a counter: `select` is a method of `Machine`.
        let select_self = t
            .guard_seqs
            .iter()
            .flatten()
            .filter_map(|(_, g)| *g)
            .any(|g| self.reads_counter(g));
        let select_fn_path = if select_self {
            quote!(self.select)
        } else {
            quote!(select)
        };
        let choose = |seq: TokenStream, first: TokenStream, found: TokenStream| {
            let later = if has_rest {
                quote! {
                    Some(at) => match RULES.get(#rest_index) {
                        #found,
                        None => return #unhandled,
                    },
                    None => return #unhandled,
                }
            } else {
                // Every cell has one rule at most: `select` finds it or none.
                quote!(Some(_) | None => return #unhandled,)
            };
            let selected = quote! {
                match #select_fn_path(#seq, #before_arg hooks) {
                    Some(0) => #first,
                    #later
                }
            };
            if t.unconditional_first() {
                quote!(if #seq == 1 { #first } else { #selected })
            } else {
                selected
            }
        };

        // Finding the rule: numeric tables read the cell's numbers and then, when a later
        // rule fires, that rule's, and turn the target number into a `State` through
        // `from_raw`, a compare (see `types`; a number no state has, never written by
        // detent, ends the step as an unhandled event would); typed tables pick the rule
        // by reference (the cell's `first` or an entry of `RULES`) and read it once,
        // which measured fewer instructions per step (BENCHMARKS.md, "Dispatch").
        let lookup = if numeric {
            let rule = choose(
                quote!(seq),
                rule_values.clone(),
                quote!(Some(&#rule_pattern) => #rule_values),
            );
            let to_state = if self.state_ty.to_string() == num.to_string() {
                quote!(State::from_raw(target))
            } else {
                let state_ty = &self.state_ty;
                quote!(#state_ty::try_from(target).ok().and_then(State::from_raw))
            };
            quote! {
                let Some(&#cell_pattern) = CELLS.get(from as usize).and_then(|row| row.get(event as usize)) else {
                    return #unhandled;
                };
                let #rule_values = #rule;
                let Some(to) = #to_state else {
                    return #unhandled;
                };
            }
        } else {
            let place = if has_rest {
                quote!([seq, rest])
            } else {
                quote!([seq])
            };
            let rule = choose(quote!(*seq), quote!(first), quote!(Some(rule) => rule));
            quote! {
                let Some((first, #place)) = CELLS.get(from as usize).and_then(|row| row.get(event as usize)) else {
                    return #unhandled;
                };
                let rule = #rule;
                let &#rule_pattern = rule;
                let to = target;
            }
        };

        let step_outputs = if has_outputs {
            let mealy = if has_mealy {
                quote!(mealy)
            } else {
                quote!([0; #k])
            };
            quote! {
                let moore = match MOORE.get(to as usize) {
                    Some(mask) => *mask,
                    None => [0; #k],
                };
                Ok(outputs_from(moore, #mealy))
            }
        } else {
            quote!(Ok(Outputs {}))
        };

        // `select`: one arm per test list, its tests as an `if`/`else if` chain in
        // choice order, preceded by the step's sampler when the list reads an input
        // twice (`guards.rs`).
        let mut sampled = vec![false; m.inputs.len()];
        let seq_bodies: Vec<(TokenStream, TokenStream)> = t
            .guard_seqs
            .iter()
            .map(|seq| {
                let reads = Reads::of(m.inputs.len(), seq.iter().filter_map(|(_, g)| *g));
                reads.add_to(&mut sampled);
                // A block (`{ None }`, `{ Some(i) }`) or an `if` chain.
                let mut chain = quote!({ None });
                // A lone test that is a negation is tested in its positive form with
                // the branches swapped (clippy's `if_not_else`), as in the match style.
                let single = seq
                    .iter()
                    .filter(|(due, g)| due.is_some() || g.is_some())
                    .count()
                    == 1;
                for (i, entry) in seq.iter().enumerate().rev() {
                    let at = lit(i);
                    chain = match *entry {
                        (None, None) => quote!({ Some(#at) }),
                        (None, Some(g)) => match negated(g).filter(|_| single) {
                            Some(positive) => {
                                let cond = self.test_expr(positive, &reads);
                                quote!(if #cond #chain else { Some(#at) })
                            }
                            None => {
                                let cond = self.test_expr(g, &reads);
                                quote!(if #cond { Some(#at) } else #chain)
                            }
                        },
                        // A timeout is tested first: it reads no input.
                        (Some((timer, d)), test) => {
                            let due = self.due_expr(timer, d);
                            let cond = match test {
                                Some(g) => {
                                    let g = self.test_operand(g, &reads);
                                    quote!(#due && #g)
                                }
                                None => due,
                            };
                            quote!(if #cond { Some(#at) } else #chain)
                        }
                    };
                }
                (self.sampler_start(&reads), chain)
            })
            .collect();
        let select_body = if let [(start, body)] = seq_bodies.as_slice() {
            if start.is_empty() && matches!(t.guard_seqs[0].first(), Some((None, None))) {
                quote!(if seq == 1 #body else { None })
            } else {
                quote!(if seq == 1 { #start #body } else { None })
            }
        } else {
            let arms = seq_bodies.iter().enumerate().map(|(i, (start, body))| {
                let id = lit(i + 1);
                if start.is_empty() {
                    quote!(#id => #body)
                } else {
                    quote!(#id => { #start #body })
                }
            });
            quote! {
                match seq {
                    #(#arms,)*
                    _ => None,
                }
            }
        };
        let sampler = self.sampler_items(&sampled);
        let select_hooks = param("hooks", uses_ident(&select_body, "hooks"));
        let select_before = if self.timed() {
            let before = param("before", uses_ident(&select_body, "before"));
            quote!(#before: Timers,)
        } else {
            quote!()
        };
        let select_allow = long_fn_allow(
            line_estimate(&select_body) + 2,
            "one match arm per distinct test list of the spec",
        );
        let select_timed_doc = if self.timed() {
            quote! {
                ///
                /// A timeout rule is only tried when it is due: its timer was at its
                /// duration minus one `before` this time-base event.
            }
        } else {
            quote!()
        };
        // A guard that compares a counter reads the machine: `select` is then a method
        // (`&self`, before any operation of the step runs, so it sees the counters as
        // they were at the start of the step).
        let select_recv = if select_self {
            quote!(&self,)
        } else {
            quote!()
        };
        // Pedantic clippy asks for `self` by value while the machine is small; a
        // reference keeps `select` the same whatever the machine's size.
        let select_by_ref = if select_self {
            quote! {
                #[allow(
                    clippy::trivially_copy_pass_by_ref,
                    reason = "`select` reads the counters in place, whatever the machine's size"
                )]
            }
        } else {
            quote!()
        };
        let select_counted_doc = if select_self {
            quote! {
                ///
                /// Counter comparisons read the counters as they were at the start of the
                /// step: `select` runs before any operation of the step.
            }
        } else {
            quote!()
        };
        let select_item = quote! {
            /// The position among a cell's rules of the first whose test holds (`0`:
            /// the cell's own first rule, `at`: `RULES[rest + at - 1]`), for the cell's
            /// test list `seq` (`0`: no rules), reading each input through `hooks` at
            /// most once; `None` when no test holds.
            #select_timed_doc
            #select_counted_doc
            #select_allow
            #select_by_ref
            fn select<H: Hooks + ?Sized>(#select_recv seq: #num, #select_before #select_hooks: &mut H) -> Option<usize> {
                #select_body
            }
        };
        let select_fn = if select_self {
            quote!(impl Machine { #select_item })
        } else {
            select_item
        };

        let (actions_fn, run_actions) = if has_actions {
            let arms: Vec<(usize, TokenStream)> = t
                .used_seqs
                .iter()
                .map(|&seq| {
                    let stmts = self.ops_stmts(seq);
                    (seq.index(), quote!({ #stmts }))
                })
                .collect();
            let body = if let [(id, b)] = arms.as_slice() {
                let id = lit(*id);
                quote!(if actions == #id #b)
            } else {
                let arms = arms.iter().map(|(id, b)| {
                    let id = lit(*id);
                    quote!(#id => #b)
                });
                quote! {
                    match actions {
                        #(#arms)*
                        _ => {}
                    }
                }
            };
            let run_actions_allow = long_fn_allow(
                line_estimate(&body) + 2,
                "one match arm per distinct operation sequence of the spec",
            );
            let hooks = param("hooks", uses_ident(&body, "hooks"));
            // Counter operations change the machine: `run_actions` is then a method.
            if uses_ident(&body, "self") {
                (
                    quote! {
                        impl Machine {
                            /// Runs operation sequence `actions` (`0`: none): the leave
                            /// actions, the rule's actions and the enter actions through
                            /// `hooks`, and the counter operations between them, in order
                            /// (each stops at the end of its counter's range).
                            #run_actions_allow
                            fn run_actions<H: Hooks + ?Sized>(&mut self, actions: #num, #hooks: &mut H) {
                                #body
                            }
                        }
                    },
                    quote!(self.run_actions(actions, hooks);),
                )
            } else {
                (
                    quote! {
                        /// Runs operation sequence `actions` (`0`: none) through `hooks`: the
                        /// leave actions, the rule's actions and the enter actions, in order.
                        #run_actions_allow
                        fn run_actions<H: Hooks + ?Sized>(actions: #num, #hooks: &mut H) {
                            #body
                        }
                    },
                    quote!(run_actions(actions, hooks);),
                )
            }
        } else {
            (quote!(), quote!())
        };
        let trace = self.trace();
        let before = if self.timed() {
            quote!(let before = self.timers();)
        } else {
            quote!()
        };
        let (zero, zero_fn) = if has_zero {
            (
                quote!(self.zero_timers(zero);),
                self.zero_timers_fn(&t.zero_sets, &num),
            )
        } else {
            (quote!(), quote!())
        };
        let machine_impl = machine_impl(
            quote!(event),
            quote!(hooks),
            quote! {
                let from = self.state;
                #before
                #count
                #lookup
                #run_actions
                self.state = to;
                #zero
                #trace
                #step_outputs
            },
        );
        quote! {
            #rule_alias

            #cell_doc
            type Cell = #cell_ty;

            /// `CELLS[state][event]`. Each cell holds its first rule, so that a cell whose
            /// first rule fires (the common case) is one table load.
            static CELLS: [[Cell; #n_events]; #n_states] = [#(#cell_rows),*];

            #rules_table
            #moore_table
            #sampler
            #select_fn
            #actions_fn
            #outputs_from
            #timer_methods
            #zero_fn

            #machine_impl
        }
    }

    /// A mask literal `[b0, b1, ..]`: bit `i % 8` of byte `i / 8` is output `i`.
    fn mask_literal(&self, high: &[OutputId]) -> TokenStream {
        let bytes = self.mask(high);
        let bytes = bytes.iter().map(|b| lit(usize::from(*b)));
        quote!([#(#bytes),*])
    }

    /// The output mask of a set of high outputs.
    fn mask(&self, high: &[OutputId]) -> Vec<u8> {
        let mut bytes = vec![0u8; self.mask_bytes];
        for o in high {
            bytes[o.index() / 8] |= 1 << (o.index() % 8);
        }
        bytes
    }
}

/// One row of the rule table: what a choice does.
#[derive(Clone, PartialEq, Eq, Hash)]
struct RuleRow {
    /// The target state's number (the cell's state for `stay`).
    target: usize,
    /// The Mealy output masks.
    mealy: Vec<u8>,
    /// The operation sequence's number in the lowered form (`0`: none).
    actions: usize,
    /// The set of timers it sets to 0 (`0`: none; `k` is `Tables::zero_sets[k - 1]`).
    zero: usize,
}

/// One cell of the table: the cell's first choice, its test list and where its other
/// choices are.
#[derive(Clone)]
struct CellRow {
    /// The first choice of the cell (a placeholder when `seq` is 0).
    first: RuleRow,
    /// Test list id (`0`: no choices; `i + 1` is `Tables::guard_seqs[i]`).
    seq: usize,
    /// Choice `at >= 1` of the cell is `rules[rest + at - 1]`.
    rest: usize,
}

/// The table style's data, before it becomes tokens.
struct Tables<'g> {
    /// `cells[state][event]`.
    cells: Vec<Vec<CellRow>>,
    /// The choices after the first of each cell, runs stored once.
    rules: Vec<RuleRow>,
    /// Distinct test lists of the cells, in choice order (`None`: no test, which ends a
    /// list); list id `i + 1` is `guard_seqs[i]`.
    guard_seqs: Vec<Vec<TestEntry<'g>>>,
    /// The non-empty operation sequences some choice runs, ascending (their numbers
    /// are the lowered form's [`SeqId`]s).
    used_seqs: Vec<SeqId>,
    /// The distinct non-empty sets of timers some choice sets to 0; set `k` is
    /// `zero_sets[k - 1]`.
    zero_sets: Vec<Vec<TimerId>>,
}

/// One entry of a test list: the timeout that must be due (timer and duration) and the
/// test, each `None` when there is none.
type TestEntry<'g> = (Option<(TimerId, u32)>, Option<&'g Guard>);

impl<'g> Tables<'g> {
    /// The tables of every (state, event) pair, one cell of the lowered form per pair:
    /// the events of one cell share its row.
    fn build(g: &Gen<'g>) -> Self {
        let m = g.m;
        let lowered = &m.lowered;
        let mut t = Tables {
            cells: Vec::with_capacity(m.states.len()),
            rules: Vec::new(),
            guard_seqs: Vec::new(),
            used_seqs: Vec::new(),
            zero_sets: Vec::new(),
        };
        let mut zero_ids: HashMap<Vec<TimerId>, usize> = HashMap::new();
        let mut seq_ids: HashMap<Vec<String>, usize> = HashMap::new();
        let (mut cells, mut rules, mut guard_seqs, mut used_seqs) = (
            Vec::with_capacity(m.states.len()),
            Vec::new(),
            Vec::new(),
            Vec::new(),
        );
        let mut runs: HashMap<Vec<RuleRow>, usize> = HashMap::new();
        // The row of every lowered cell, built the first time a pair uses it.
        let mut built: Vec<Option<CellRow>> = vec![None; lowered.cells().len()];
        let mut row_of = |choice: &Choice| {
            let zeroed = choice.resets.clone();
            let zero = if zeroed.is_empty() {
                0
            } else {
                let next = t.zero_sets.len() + 1;
                let id = *zero_ids.entry(zeroed.clone()).or_insert(next);
                if id == next {
                    t.zero_sets.push(zeroed);
                }
                id
            };
            RuleRow {
                target: choice.target.index(),
                mealy: g.mask(lowered.outputs(choice.mealy)),
                actions: choice.ops.index(),
                zero,
            }
        };
        for si in 0..m.states.len() {
            let s = StateId::from_index(si);
            let mut row = Vec::with_capacity(m.events.len());
            for ei in 0..m.events.len() {
                let id = lowered.cell_id(s, EventId::from_index(ei));
                if let Some(cell) = &built[id.index()] {
                    row.push(cell.clone());
                    continue;
                }
                let cell = lowered.cell(id);
                let mut run: Vec<RuleRow> = Vec::with_capacity(cell.choices.len());
                let mut guards: Vec<TestEntry<'g>> = Vec::with_capacity(cell.choices.len());
                for choice in &cell.choices {
                    if choice.ops != SeqId::EMPTY {
                        used_seqs.push(choice.ops);
                    }
                    run.push(row_of(choice));
                    guards.push((choice.due, choice.test.as_ref()));
                }
                let row_cell = if run.is_empty() {
                    CellRow {
                        first: RuleRow {
                            target: si,
                            mealy: vec![0u8; g.mask_bytes],
                            actions: 0,
                            zero: 0,
                        },
                        seq: 0,
                        rest: 0,
                    }
                } else {
                    // Equal test lists share a `select` arm: the key is the tests as
                    // printed (how a list reads its inputs follows from the list).
                    let key: Vec<String> = guards
                        .iter()
                        .map(|(due, x)| {
                            let test = x.map_or_else(String::new, |e| {
                                g.test_expr(e, &Reads::of(0, [])).to_string()
                            });
                            match due {
                                Some((timer, d)) => format!("{}@{d} {test}", timer.index()),
                                None => test,
                            }
                        })
                        .collect();
                    let next = guard_seqs.len() + 1;
                    let seq = *seq_ids.entry(key).or_insert(next);
                    if seq == next {
                        guard_seqs.push(guards);
                    }
                    let others = run.split_off(1);
                    let rest = if others.is_empty() {
                        0
                    } else {
                        let next = rules.len();
                        match runs.get(&others) {
                            Some(&rest) => rest,
                            None => {
                                rules.extend_from_slice(&others);
                                runs.insert(others, next);
                                next
                            }
                        }
                    };
                    CellRow {
                        first: run.swap_remove(0),
                        seq,
                        rest,
                    }
                };
                built[id.index()] = Some(row_cell.clone());
                row.push(row_cell);
            }
            cells.push(row);
        }
        t.cells = cells;
        t.rules = rules;
        t.guard_seqs = guard_seqs;
        t.used_seqs = used_seqs;
        t.used_seqs.sort_unstable();
        t.used_seqs.dedup();
        t.unconditional_to_front();
        t
    }

    /// Renumbers the test lists so that the list of one choice without a test, when
    /// some cell has it, is list 1 (`step` tests for it before calling `select`).
    fn unconditional_to_front(&mut self) {
        let Some(at) = self
            .guard_seqs
            .iter()
            .position(|seq| matches!(seq.as_slice(), [(None, None)]))
        else {
            return;
        };
        if at == 0 {
            return;
        }
        self.guard_seqs.swap(0, at);
        let (one, other) = (1, at + 1);
        for cell in self.cells.iter_mut().flatten() {
            if cell.seq == one {
                cell.seq = other;
            } else if cell.seq == other {
                cell.seq = one;
            }
        }
    }

    /// Whether test list 1 is a single choice without a test.
    fn unconditional_first(&self) -> bool {
        self.guard_seqs
            .first()
            .is_some_and(|seq| matches!(seq.as_slice(), [(None, None)]))
    }

    /// The largest operation-sequence number the tables hold (`0`: none).
    fn max_seq(&self) -> usize {
        self.used_seqs.last().map_or(0, |s| s.index())
    }
}
