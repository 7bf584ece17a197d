//! The generated API that both dispatch styles share (DESIGN.md, "Generated Rust"):
//! `State`, `Event`, `Outputs` and `Machine` with their derives and inherent impls, the
//! `Hooks` trait, `new`/`state`/`restore`, `Default` and the runtime's `StateMachine`;
//! and the pieces of `step` that do not depend on the style (its doc comment, lint
//! attributes, the unhandled ending and the trace hook). Rule choice is not decided
//! here: the styles write `step` from the lowered form ([`crate::model::lower`]).

use super::tokens::{by_ref_allow, doc_attrs, doc_or, doc_text, ident, lit, long_fn_allow, wrap};
use super::Gen;
use crate::model::{EventId, StateId};
use crate::syntax::ast::Policy;
use proc_macro2::TokenStream;
use quote::quote;

impl Gen<'_> {
    /// `State`, `Event`, `Outputs` and the `Machine` struct, with the runtime's
    /// feature derives, and the `State`/`Event` inherent impls.
    pub(super) fn types(&self) -> TokenStream {
        let m = self.m;
        let name = &m.name;
        let state_ty = &self.state_ty;
        let event_ty = &self.event_ty;
        let n_states = lit(m.states.len());
        let n_events = lit(m.events.len());

        let state_variants = m.states.iter().enumerate().map(|(i, s)| {
            let doc = doc_or(&s.doc, format!("State `{}`.", s.name));
            let v = ident(&s.name);
            let n = lit(i);
            quote!(#doc #v = #n)
        });
        let event_variants = m.events.iter().enumerate().map(|(i, e)| {
            let fallback = if m.clocked {
                "The clock tick: one step of the clocked machine.".to_string()
            } else {
                format!("Event `{}`.", e.name)
            };
            let doc = doc_or(&e.doc, fallback);
            let v = ident(&e.name);
            let n = lit(i);
            quote!(#doc #v = #n)
        });
        let output_fields = m.outputs.iter().map(|o| {
            let doc = doc_or(&o.doc, format!("Output `{}`.", o.name));
            let f = ident(&o.name);
            quote!(#doc pub #f: bool)
        });
        let all_states = (0..m.states.len()).map(|i| self.state_variant(StateId::from_index(i)));
        let all_events = (0..m.events.len()).map(|i| self.event_variant(EventId::from_index(i)));
        // A `match`, not a lookup in `ALL`: the numbers are the discriminants in
        // order, so the compiler turns it into one compare (no load), which the table
        // style's `step` relies on to turn a table's target number into a `State`.
        let from_raw_arms = (0..m.states.len()).map(|i| {
            let v = self.state_variant(StateId::from_index(i));
            let n = lit(i);
            quote!(#n => Some(#v))
        });
        let state_names = m.states.iter().enumerate().map(|(i, s)| {
            let v = self.state_variant(StateId::from_index(i));
            let text = &s.name;
            quote!(#v => #text)
        });
        let event_names = m.events.iter().enumerate().map(|(i, e)| {
            let v = self.event_variant(EventId::from_index(i));
            let text = &e.name;
            quote!(#v => #text)
        });
        let state_doc = doc_text(&format!(
            "The states of `{name}`, numbered in declaration order (the numbers the C and \
             Verilog back ends use)."
        ));
        let event_doc = doc_text(&if m.clocked {
            format!("The event of the clocked machine `{name}`: one clock tick.")
        } else {
            format!("The events of `{name}`, numbered in declaration order.")
        });
        let outputs_doc = doc_text(&format!(
            "The output lines of `{name}` after a step: the Moore outputs of the state \
             together with the Mealy outputs of the rule taken."
        ));
        // `name` is a `match` with one line per variant inside `match self { .. }`.
        let state_name_allow =
            long_fn_allow(m.states.len() + 2, "one match arm per state of the spec");
        let from_raw_allow =
            long_fn_allow(m.states.len() + 3, "one match arm per state of the spec");
        let event_name_allow =
            long_fn_allow(m.events.len() + 2, "one match arm per event of the spec");
        // Clippy's `struct_excessive_bools` (pedantic, more than 3 `bool` fields by
        // default) suggests enums or a state machine; these fields are the spec's
        // declared output lines, each one a pin that is on or off, so the lint does not
        // fit. Allowed on this one struct, with the reason in the attribute.
        let bools_allow = if m.outputs.len() > 3 {
            quote! {
                #[allow(
                    clippy::struct_excessive_bools,
                    reason = "each field is one of the spec's boolean output lines"
                )]
            }
        } else {
            quote!()
        };
        let state_bytes = if m.states.len() <= 256 {
            "one byte"
        } else {
            "two bytes"
        };
        let machine_doc = doc_text(&match (self.timed(), self.counted()) {
            (true, false) => format!(
                "The `{name}` machine: its current state ({state_bytes}) and its timers \
                 (`Timers`)."
            ),
            (false, true) => format!(
                "The `{name}` machine: its current state ({state_bytes}) and its counters \
                 (`Counters`)."
            ),
            (true, true) => format!(
                "The `{name}` machine: its current state ({state_bytes}), its timers \
                 (`Timers`) and its counters (`Counters`)."
            ),
            (false, false) => {
                format!("The `{name}` machine: its current state, {state_bytes} of RAM.")
            }
        });
        let timers_struct = self.timers_struct();
        let timers_field = self.timer_slots();
        let counters_struct = self.counters_struct();
        let counters_field = self.counter_slots();
        quote! {
            ::detent::__derive_extras! {
                #state_doc
                #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
                #[repr(#state_ty)]
                pub enum State {
                    #(#state_variants,)*
                }

                #event_doc
                #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
                #[repr(#event_ty)]
                pub enum Event {
                    #(#event_variants,)*
                }

                #outputs_doc
                #[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
                #bools_allow
                pub struct Outputs {
                    #(#output_fields,)*
                }

                #machine_doc
                #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
                pub struct Machine {
                    state: State,
                    #timers_field
                    #counters_field
                }

                #timers_struct
                #counters_struct
            }

            impl State {
                /// Every state, in declaration order (index = state number).
                pub const ALL: [State; #n_states] = [#(#all_states),*];

                /// The state's name as written in the spec.
                #[must_use]
                #state_name_allow
                pub const fn name(self) -> &'static str {
                    match self {
                        #(#state_names,)*
                    }
                }

                /// The state numbered `raw`, or `None` when no state has that number.
                #[must_use]
                #from_raw_allow
                pub const fn from_raw(raw: #state_ty) -> Option<State> {
                    match raw {
                        #(#from_raw_arms,)*
                        _ => None,
                    }
                }
            }

            impl Event {
                /// Every event, in declaration order (index = event number).
                pub const ALL: [Event; #n_events] = [#(#all_events),*];

                /// The event's name as written in the spec.
                #[must_use]
                #event_name_allow
                pub const fn name(self) -> &'static str {
                    match self {
                        #(#event_names,)*
                    }
                }
            }
        }
    }

    /// The `Hooks` trait (and `impl Hooks for ()` when it is empty).
    pub(super) fn hooks(&self) -> TokenStream {
        let m = self.m;
        let inputs = m.inputs.iter().map(|i| {
            let doc = doc_or(
                &i.doc,
                format!(
                    "Reads input `{}` (called at most once per step, when a guard first needs \
                     it).",
                    i.name
                ),
            );
            let f = ident(&i.name);
            quote!(#doc fn #f(&mut self) -> bool;)
        });
        let actions = m.actions.iter().map(|a| {
            let doc = doc_or(&a.doc, format!("Runs action `{}`.", a.name));
            let f = ident(&a.name);
            quote!(#doc fn #f(&mut self);)
        });
        let unit = if m.inputs.is_empty() && m.actions.is_empty() {
            quote! {
                /// The machine reads no inputs and runs no actions: `()` will do.
                impl Hooks for () {}
            }
        } else {
            quote!()
        };
        let doc = doc_text(&format!(
            "What `{}` needs from the host: one function per input (read at most once per \
             step, the first time a guard needs it) and one per action (run in the order of \
             the transition).",
            m.name
        ));
        quote! {
            #doc
            pub trait Hooks {
                #(#inputs)*
                #(#actions)*
            }
            #unit
        }
    }

    /// `impl Machine` (all but `step` and `outputs`, which the dispatch style writes),
    /// `Default` and the runtime's `StateMachine`.
    pub(super) fn machine_impl(&self) -> TokenStream {
        let m = self.m;
        let start = self.state_variant(m.start);
        let state_ty = &self.state_ty;
        let start_doc = doc_text(&format!(
            "A machine in its start state `{}`, entered without running its enter actions.",
            m.state_name(m.start)
        ));
        let by_ref_allow = by_ref_allow();
        let n = m.states.len();
        let restore_errors = doc_text(&if n == 1 {
            "`InvalidState` carrying `raw` when no state has that number: the only state is \
             numbered 0, so when `raw` is not 0."
                .to_string()
        } else {
            format!(
                "`InvalidState` carrying `raw` when no state has that number: the states are \
                 numbered 0 to {}, so when `raw` is {n} or more.",
                n - 1
            )
        });
        // `InvalidState` carries a `u16`: widen a `u8` with `From` (not `as`), and pass
        // a `u16` as it is.
        let invalid_fields = if m.states.len() <= 256 {
            quote!(raw: u16::from(raw))
        } else {
            quote!(raw)
        };
        let restore_raw = if m.states.len() <= 256 {
            quote! {
                match u8::try_from(raw) {
                    Ok(raw) => Machine::restore(raw),
                    Err(_) => Err(::detent::InvalidState { raw }),
                }
            }
        } else {
            quote!(Machine::restore(raw))
        };
        let timers_zero = self.timers_zero();
        let counters_zero = self.counters_zero();
        let timers_init = quote!(#timers_zero #counters_zero);
        let restore_doc = match (self.timed(), self.counted()) {
            (true, false) => quote! {
                ///
                /// Every timer starts at 0, as if the state had just been entered.
            },
            (false, true) => quote! {
                ///
                /// Every counter starts at 0 (`restore_with` takes stored counters).
            },
            (true, true) => quote! {
                ///
                /// Every timer starts at 0, as if the state had just been entered, and
                /// every counter at 0 (`restore_with` takes stored counters and timers).
            },
            (false, false) => quote!(),
        };
        let counter_methods = self.counter_methods();
        quote! {
            impl Machine {
                /// The start state.
                pub const START: State = #start;

                #start_doc
                #[must_use]
                pub const fn new() -> Self {
                    Machine { state: #start #timers_init }
                }

                /// The current state.
                #[must_use]
                #by_ref_allow
                pub const fn state(&self) -> State {
                    self.state
                }

                /// A machine in the state numbered `raw` (for instance read back from
                /// flash).
                #restore_doc
                ///
                /// # Errors
                ///
                #restore_errors
                pub fn restore(raw: #state_ty) -> Result<Self, ::detent::InvalidState> {
                    match State::from_raw(raw) {
                        Some(state) => Ok(Machine { state #timers_init }),
                        None => Err(::detent::InvalidState { #invalid_fields }),
                    }
                }
            }

            #counter_methods

            impl Default for Machine {
                fn default() -> Self {
                    Machine::new()
                }
            }

            impl ::detent::StateMachine for Machine {
                type State = State;
                type Event = Event;
                type Outputs = Outputs;
                const STATES: &'static [State] = &State::ALL;
                const EVENTS: &'static [Event] = &Event::ALL;

                fn start() -> Self {
                    Machine::new()
                }

                fn state(&self) -> State {
                    self.state
                }

                fn outputs(&self) -> Outputs {
                    Machine::outputs(self)
                }

                fn raw_state(&self) -> u16 {
                    self.state as u16
                }

                fn restore_raw(raw: u16) -> Result<Self, ::detent::InvalidState> {
                    #restore_raw
                }
            }
        }
    }

    /// The statement ending a step that no rule handled.
    pub(super) fn unhandled(&self) -> TokenStream {
        if self.m.policy == Policy::Reject {
            quote!(Err(::detent::Rejected))
        } else {
            quote!(Ok(self.outputs()))
        }
    }

    /// The lint attributes of `step`, whose body is about `lines` long.
    ///
    /// A machine that never rejects keeps the `Result` of the common signature, which
    /// clippy's `unnecessary_wraps` (pedantic) flags where `step` is not exported.
    pub(super) fn step_attrs(&self, lines: usize) -> TokenStream {
        let wraps = if self.m.policy == Policy::Reject {
            quote!()
        } else {
            quote! {
                #[allow(
                    clippy::unnecessary_wraps,
                    reason = "every generated `step` returns `Result`; this machine never rejects"
                )]
            }
        };
        let long = long_fn_allow(
            lines,
            "the body is the spec's transition table written out as one match",
        );
        quote!(#wraps #long)
    }

    /// The doc comment of `step`, with the `# Errors` section saying when it fails.
    pub(super) fn step_doc(&self) -> TokenStream {
        let (tail, errors) = match self.m.policy {
            Policy::Reject => (
                None,
                "`Rejected` when no rule handles `event` in the current state: the innermost \
                 scope with rules for `event` (the state, then its groups outward) has none \
                 whose guard holds, or no scope has a rule for it. The state is left as it is \
                 and no action runs (`unhandled reject`).",
            ),
            Policy::Ignore => (
                Some(
                    "An event no rule handles leaves the state as it is, runs nothing and \
                     returns the Moore outputs of the state.",
                ),
                "Never: this machine ignores the events no rule handles (`unhandled \
                 ignore`), so `step` always returns `Ok`.",
            ),
            Policy::Complete => (
                Some(
                    "An event no rule handles leaves the state as it is, runs nothing and \
                     returns the Moore outputs of the state.",
                ),
                "Never: the checker found a rule for every event in every state and for \
                 every input value (`unhandled complete`), so `step` always returns `Ok`.",
            ),
        };
        let mut lines = wrap(
            "Takes one event: finds the rule that fires (the groups' `preempt` rules, then \
             the innermost scope naming the event, then the innermost `_` rules; the guards \
             read each input at most once, the first time one needs it), runs the \
             leave actions, the rule's actions and the enter actions in order, moves to the \
             target and returns the Moore outputs of the new state with the rule's Mealy \
             outputs.",
        );
        if let Some(tb) = self.m.timebase.as_ref().filter(|_| self.timed()) {
            let event = &self.m.events[tb.event.index()].name;
            lines.push(String::new());
            lines.extend(wrap(&format!(
                "On the time-base event `{event}`, each timer of the state and its groups \
                 first adds one (stopping at its longest timeout); an `after` rule is due \
                 when that brings its timer to its duration, and due rules are tried after \
                 the `preempt` rules and before the rules naming the event, the state's \
                 first. A rule that moves restarts the timers of the scopes it enters."
            )));
        }
        if let Some(tail) = tail {
            lines.push(String::new());
            lines.extend(wrap(tail));
        }
        lines.push(String::new());
        lines.push("# Errors".to_string());
        lines.push(String::new());
        lines.extend(wrap(errors));
        doc_attrs(&lines)
    }

    /// The runtime's trace hook of a transition (`defmt-trace`).
    pub(super) fn trace(&self) -> TokenStream {
        let name = &self.m.name;
        quote!(::detent::__trace_transition!(#name, from, event, to);)
    }
}
