//! The Rust back end: a resolved [`Machine`] to `no_std` Rust, table- or match-dispatched.
//!
//! Both styles emit the API of DESIGN.md ("Generated Rust"): a module holding `State`,
//! `Event` (`#[repr(u8)]`, `u16` past 256 variants, numbers in declaration order),
//! `Outputs`, `Hooks`, `Machine` (one byte of state up to 256 states) and the
//! runtime's `StateMachine` impl. The meaning is the interpreter's ([`crate::interp`]):
//! the scope lookup of [`Machine::rules_for`], the first rule whose guard holds, the
//! action order of [`Machine::transition_actions`], the Moore outputs of the new state
//! together with the rule's Mealy outputs, and `ignore`/`reject` for the rest.
//!
//! **Table style** (`#[dispatch(table)]`, the default): flash-resident `static` tables in
//! the narrowest integer types. `CELLS[state][event]` is a `Cell`: the first rule of the
//! scope used for that pair written out (a `Rule`: its target, an action-sequence number
//! and its Mealy outputs as masks), `seq`, the number of the cell's list of guards, and
//! `rest`, where the cell's other rules start in `RULES`. Below [`NUMERIC_TABLE_CELLS`]
//! cells a `Rule` is `(State, [numbers])` and a `Cell` `(Rule, [seq, rest])`, and `step`
//! picks the rule that fires by reference; from there on both are arrays of numbers,
//! targets included, which rustc checks about twice as fast as tables full of
//! `State::..` paths, and `step` turns the target number into a `State` with
//! `State::from_raw` (a `match` the compiler makes one compare).
//! A cell whose first rule fires (an unguarded rule, the common case) costs one load
//! from the state to the next state: the benchmark steps one machine, each step waiting
//! for the state of the one before, and every dependent load on that path counts
//! (BENCHMARKS.md, "Dispatch"). Because the actions of a rule depend on the state it
//! fires in (enter/leave actions), a rule entry belongs to a (state, rule) pair;
//! identical runs of entries in `RULES` are stored once. A step costs two small
//! `match`es besides the table loads: `select` on the guard-list number (one arm per
//! distinct list, its guards as an `if`/`else if` chain giving the position of the rule
//! taken) and `run_actions` on the action-sequence number (one arm per distinct
//! sequence, the hook calls in order), so the code grows with the distinct guard lists
//! and action sequences, not with states x events. Every table access is `.get()` with
//! a fallback, so `step` has no panic path whatever the optimizer proves.
//!
//! **Match style** (`#[dispatch(match)]`): `match self.state { S => match event { .. } }`,
//! events that resolve to the same rules sharing an arm, guards as `if`/`else if` chains.
//!
//! Cost: one pass over the (state, event) cells, each resolved with
//! [`Machine::rules_for`] (scope depth), so time and output size are
//! O(states x events) for tables and O(states x named events) for `match`.
//!
//! Guard expressions are emitted as written, after folding constants (`a && true` is
//! `a`); a guard that folds to `false` never fires, as its BDD says, and is left out.
//!
//! The output is clean under `clippy::pedantic` (`tests/tests/generated_hygiene.rs`):
//! `#[must_use]` accessors, `# Errors` sections, `From` widening, no repeated match arms.
//! Where a lint does not fit generated code, the one item carries an
//! `#[allow(clippy::..., reason = "...")]`: `struct_excessive_bools` on `Outputs`,
//! `too_many_lines` on functions as long as the spec (only when they are),
//! `trivially_copy_pass_by_ref` on the `&self` accessors of the API and
//! `unnecessary_wraps` on the `step` of a machine that never rejects.

use crate::model::{ActionId, Guard, Machine, OutputId, RuleId, StateId, Target};
use crate::naming::to_snake;
use crate::syntax::ast::{DispatchStyle, Policy, Vis};
use proc_macro2::{Ident, Literal, Span, TokenStream};
use quote::quote;
use std::collections::HashMap;

/// The generated module for one machine: `<vis> mod <snake_name> { ... }`, with the
/// machine's doc comment. `style` picks table or match dispatch (callers usually pass
/// `m.dispatch`).
pub fn machine_tokens(m: &Machine, style: DispatchStyle) -> TokenStream {
    let vis = match m.vis {
        Vis::Private => quote!(),
        Vis::Pub => quote!(pub),
        Vis::PubCrate => quote!(pub(crate)),
    };
    let name = ident(&module_name(m));
    let doc = module_doc(m);
    let items = machine_items(m, style);
    quote! {
        #doc
        #[allow(non_camel_case_types, non_snake_case, clippy::nonminimal_bool, clippy::if_same_then_else)]
        #vis mod #name {
            #items
        }
    }
}

/// The name of the module generated for a machine (`BilgePump` -> `bilge_pump`).
pub fn module_name(m: &Machine) -> String {
    to_snake(&m.name)
}

/// The machine's doc comment for its module: the spec's doc lines, then a generated
/// line naming the machine.
pub fn module_doc(m: &Machine) -> TokenStream {
    let mut lines = m.doc.clone();
    if !lines.is_empty() {
        lines.push(String::new());
    }
    lines.push(format!(
        "The `{}` state machine (generated by detent from its spec).",
        m.name
    ));
    doc_attrs(&lines)
}

/// The items inside the generated module (without the `mod` around them), for front
/// ends that place them in a module of their own, such as the file form of the macro.
///
/// Under `#[minimize]` the items are generated from the minimized machine
/// ([`crate::minimize::minimized_machine`]): each class of equivalent states keeps the
/// name of its first member in declaration order, and every other member becomes an
/// associated constant of `State` naming that state (`State::Draining` then means
/// `State::Pumping`), so code written against the spec's names still compiles.
/// Unreachable states are dropped.
pub fn machine_items(m: &Machine, style: DispatchStyle) -> TokenStream {
    if !m.minimize {
        return items_of(m, style);
    }
    let classes = crate::minimize::minimize(m);
    let reduced = crate::minimize::minimized_machine(m);
    let items = items_of(&reduced, style);
    let aliases = classes.classes.iter().flat_map(|class| {
        let rep = &m.states[class[0].index()].name;
        let rep_ident = ident(rep);
        class[1..].iter().map(move |s| {
            let name = &m.states[s.index()].name;
            let alias = ident(name);
            let doc =
                format!("`{name}` has the same behaviour as `{rep}`: `#[minimize]` merged them.");
            quote! {
                #[doc = #doc]
                #[allow(non_upper_case_globals)]
                pub const #alias: State = State::#rep_ident;
            }
        })
    });
    let aliases: Vec<TokenStream> = aliases.collect();
    if aliases.is_empty() {
        return items;
    }
    quote! {
        #items
        impl State {
            #(#aliases)*
        }
    }
}

fn items_of(m: &Machine, style: DispatchStyle) -> TokenStream {
    let g = Gen::new(m);
    let types = g.types();
    let hooks = g.hooks();
    let machine_impl = g.machine_impl();
    let body = match style {
        DispatchStyle::Table => g.table_dispatch(),
        DispatchStyle::Match => g.match_dispatch(),
    };
    quote! {
        #types
        #hooks
        #machine_impl
        #body
    }
}

/// The text of a generated file: a banner (source, do-not-edit, safety caution), then
/// every machine's module, formatted by prettyplease. `source` names the spec file in
/// the banner; `style` overrides each machine's `#[dispatch(..)]` when given.
pub fn generate_file(source: &str, machines: &[Machine], style: Option<DispatchStyle>) -> String {
    let modules = machines
        .iter()
        .map(|m| machine_tokens(m, style.unwrap_or(m.dispatch)));
    let tokens = quote!(#(#modules)*);
    let body = match syn::parse2::<syn::File>(tokens.clone()) {
        Ok(mut file) => {
            // prettyplease leaves macro bodies as raw tokens: format the items inside
            // `__derive_extras!` apart and put them back in place of a marker item.
            let mut extras = Vec::new();
            take_extras(&mut file.items, &mut extras);
            let mut text = prettyplease::unparse(&file);
            for (i, inner) in extras.iter().enumerate() {
                let marker = format!("const __DETENT_EXTRAS_{i}: () = ();");
                let Some(at) = text.find(&marker) else {
                    continue;
                };
                let line_start = text[..at].rfind('\n').map_or(0, |p| p + 1);
                let indent = text[line_start..at].to_string();
                let mut block = String::from("::detent::__derive_extras! {\n");
                for line in inner.lines() {
                    if line.is_empty() {
                        block.push('\n');
                    } else {
                        block.push_str(&format!("{indent}    {line}\n"));
                    }
                }
                block.push_str(&format!("{indent}}}"));
                text.replace_range(at..at + marker.len(), &block);
            }
            text
        }
        // Not expected (the tokens are built from checked names); unformatted output
        // still compiles, so prefer it to failing.
        Err(_) => tokens.to_string(),
    };
    format!("{}\n{body}", banner(source))
}

/// Replaces each `::detent::__derive_extras! { .. }` item (in nested modules too) by a
/// marker constant, collecting its items formatted.
fn take_extras(items: &mut [syn::Item], extras: &mut Vec<String>) {
    for item in items.iter_mut() {
        match item {
            syn::Item::Mod(module) => {
                if let Some((_, inner)) = &mut module.content {
                    take_extras(inner, extras);
                }
            }
            syn::Item::Macro(mac)
                if mac
                    .mac
                    .path
                    .segments
                    .last()
                    .is_some_and(|s| s.ident == "__derive_extras") =>
            {
                if let Ok(inner) = syn::parse2::<syn::File>(mac.mac.tokens.clone()) {
                    let marker = quote::format_ident!("__DETENT_EXTRAS_{}", extras.len());
                    extras.push(prettyplease::unparse(&inner));
                    *item = syn::parse_quote!(const #marker: () = (););
                }
            }
            _ => {}
        }
    }
}

/// The comment block at the top of a generated file. Plain `//` comments, so the file
/// can be `include!`d as well as used as a module.
pub fn banner(source: &str) -> String {
    format!(
        "// @generated by detent from {source}. Do not edit: change the spec and run\n\
         // `detent gen rust` again.\n\
         //\n\
         // This is tool output, not a certified component; for safety functions follow the\n\
         // applicable functional-safety standard (IEC 61508 or your sector's) and local\n\
         // codes, and have the design reviewed by qualified people.\n"
    )
}

/// A Rust identifier for a spec name, raw (`r#type`) when the name is a Rust keyword.
fn ident(name: &str) -> Ident {
    if syn::parse_str::<Ident>(name).is_ok() {
        Ident::new(name, Span::call_site())
    } else {
        Ident::new_raw(name, Span::call_site())
    }
}

/// `#[doc = " line"]` per line (prettyplease prints them as `///` comments).
fn doc_attrs(lines: &[String]) -> TokenStream {
    let lines = lines.iter().map(|l| {
        let text = if l.is_empty() {
            String::new()
        } else {
            format!(" {l}")
        };
        quote!(#[doc = #text])
    });
    quote!(#(#lines)*)
}

/// Splits text into lines of at most 80 characters at spaces.
fn wrap(text: &str) -> Vec<String> {
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        if !line.is_empty() && line.len() + 1 + word.len() > 80 {
            lines.push(std::mem::take(&mut line));
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

/// A generated doc comment, wrapped.
fn doc_text(text: &str) -> TokenStream {
    doc_attrs(&wrap(text))
}

/// Spec doc lines, or a generated line when there are none.
fn doc_or(doc: &[String], fallback: String) -> TokenStream {
    if doc.is_empty() {
        doc_text(&fallback)
    } else {
        doc_attrs(doc)
    }
}

/// From this many cells (states x events) on, the table style writes its tables as
/// plain numbers (see `table_dispatch`).
pub const NUMERIC_TABLE_CELLS: usize = 1024;

/// The narrowest unsigned type holding every value up to `max`.
fn uint(max: usize) -> TokenStream {
    if max <= u8::MAX as usize {
        quote!(u8)
    } else if max <= u16::MAX as usize {
        quote!(u16)
    } else if max <= u32::MAX as usize {
        quote!(u32)
    } else {
        quote!(u64)
    }
}

/// Functions whose length grows with the spec (one `match` arm per state, guard, ...)
/// get `#[allow(clippy::too_many_lines)]` past this many lines (estimated from the
/// arms, a margin under the lint's default limit of 100).
const LONG_FN_LINES: usize = 90;

/// `#[allow(clippy::too_many_lines)]` with `reason` when a function of about `lines`
/// lines would trip the lint (pedantic, 100 lines by default): the length is the spec's
/// size, and splitting the function up would only add calls.
fn long_fn_allow(lines: usize, reason: &str) -> TokenStream {
    if lines > LONG_FN_LINES {
        quote!(#[allow(clippy::too_many_lines, reason = #reason)])
    } else {
        quote!()
    }
}

/// An upper estimate of the lines prettyplease gives `tokens`: one per `;`, `,`, `|` and
/// `>` (of `=>`), and two per `{ .. }` block (its first and last line). Nearly every
/// formatted line ends at one of these, and many hold more than one, so this overcounts.
fn line_estimate(tokens: &TokenStream) -> usize {
    tokens
        .clone()
        .into_iter()
        .map(|t| match t {
            proc_macro2::TokenTree::Punct(p) => {
                usize::from(matches!(p.as_char(), ';' | ',' | '|' | '>'))
            }
            proc_macro2::TokenTree::Group(g) => {
                let own = if g.delimiter() == proc_macro2::Delimiter::Brace {
                    2
                } else {
                    0
                };
                own + line_estimate(&g.stream())
            }
            _ => 0,
        })
        .sum()
}

/// `#[allow(clippy::trivially_copy_pass_by_ref)]` for the accessors that DESIGN.md gives
/// `&self`: the lint (pedantic) asks for `self` since `Machine` is one or two bytes, but
/// only where the item is not exported, as in a firmware binary that includes the file.
fn by_ref_allow() -> TokenStream {
    quote! {
        #[allow(
            clippy::trivially_copy_pass_by_ref,
            reason = "the generated API reads the machine through `&self`, like `StateMachine`"
        )]
    }
}

/// Whether `tokens` mention the identifier `name` anywhere (macro arguments too).
fn uses_ident(tokens: &TokenStream, name: &str) -> bool {
    tokens.clone().into_iter().any(|t| match t {
        proc_macro2::TokenTree::Ident(i) => i == name,
        proc_macro2::TokenTree::Group(g) => uses_ident(&g.stream(), name),
        _ => false,
    })
}

/// A parameter name, `_`-prefixed when the body does not use it.
fn param(name: &str, used: bool) -> Ident {
    if used {
        ident(name)
    } else {
        ident(&format!("_{name}"))
    }
}

fn lit(n: usize) -> Literal {
    Literal::usize_unsuffixed(n)
}

/// A guard after constant folding.
enum Folded<'a> {
    Const(bool),
    Expr(&'a Guard),
}

fn fold(g: &Guard) -> Folded<'_> {
    match g {
        Guard::Const(b) => Folded::Const(*b),
        Guard::Input(_) => Folded::Expr(g),
        Guard::Not(a) => match fold(a) {
            Folded::Const(b) => Folded::Const(!b),
            Folded::Expr(_) => Folded::Expr(g),
        },
        Guard::And(a, b) => match (fold(a), fold(b)) {
            (Folded::Const(false), _) | (_, Folded::Const(false)) => Folded::Const(false),
            (Folded::Const(true), x) | (x, Folded::Const(true)) => x,
            _ => Folded::Expr(g),
        },
        Guard::Or(a, b) => match (fold(a), fold(b)) {
            (Folded::Const(true), _) | (_, Folded::Const(true)) => Folded::Const(true),
            (Folded::Const(false), x) | (x, Folded::Const(false)) => x,
            _ => Folded::Expr(g),
        },
    }
}

/// What a rule's guard means for code generation.
enum RuleGuard<'a> {
    /// No guard, or one that folds to `true`.
    Always,
    /// Folds to `false`: the rule never fires.
    Never,
    /// A real condition.
    When(&'a Guard),
}

/// Precedence levels for parenthesizing guard expressions.
#[derive(Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Prec {
    Or,
    And,
    Unary,
}

struct Gen<'a> {
    m: &'a Machine,
    state_ty: TokenStream,
    event_ty: TokenStream,
    /// Bytes of an output mask (`ceil(outputs / 8)`).
    mask_bytes: usize,
}

impl<'a> Gen<'a> {
    fn new(m: &'a Machine) -> Self {
        Gen {
            m,
            state_ty: uint(m.states.len().saturating_sub(1)),
            event_ty: uint(m.events.len().saturating_sub(1)),
            mask_bytes: m.outputs.len().div_ceil(8),
        }
    }

    fn state_variant(&self, s: StateId) -> TokenStream {
        let v = ident(&self.m.states[s.index()].name);
        quote!(State::#v)
    }

    fn event_variant(&self, e: usize) -> TokenStream {
        let v = ident(&self.m.events[e].name);
        quote!(Event::#v)
    }

    fn rule_guard(&self, r: RuleId) -> RuleGuard<'a> {
        match &self.m.rules[r.index()].guard_expr {
            None => RuleGuard::Always,
            Some(g) => match fold(g) {
                Folded::Const(true) => RuleGuard::Always,
                Folded::Const(false) => RuleGuard::Never,
                Folded::Expr(g) => RuleGuard::When(g),
            },
        }
    }

    /// A guard as a Rust boolean expression over `hooks`, constants folded away.
    fn guard_expr(&self, g: &Guard) -> TokenStream {
        self.guard_at(g, Prec::Or)
    }

    fn guard_at(&self, g: &Guard, outer: Prec) -> TokenStream {
        let (tokens, prec) = match g {
            Guard::Input(i) => {
                let f = ident(&self.m.inputs[i.index()].name);
                (quote!(hooks.#f()), Prec::Unary)
            }
            Guard::Const(b) => (quote!(#b), Prec::Unary),
            Guard::Not(a) => match fold(a) {
                Folded::Const(b) => {
                    let v = !b;
                    (quote!(#v), Prec::Unary)
                }
                Folded::Expr(Guard::Not(inner)) => return self.guard_at(inner, outer),
                Folded::Expr(a) => {
                    let inner = self.guard_at(a, Prec::Unary);
                    (quote!(!#inner), Prec::Unary)
                }
            },
            Guard::And(a, b) => match (fold(a), fold(b)) {
                (Folded::Const(false), _) | (_, Folded::Const(false)) => {
                    (quote!(false), Prec::Unary)
                }
                (Folded::Const(true), Folded::Expr(x)) | (Folded::Expr(x), Folded::Const(true)) => {
                    return self.guard_at(x, outer)
                }
                (Folded::Const(true), Folded::Const(true)) => (quote!(true), Prec::Unary),
                (Folded::Expr(a), Folded::Expr(b)) => {
                    let a = self.guard_at(a, Prec::And);
                    let b = self.guard_at(b, Prec::And);
                    (quote!(#a && #b), Prec::And)
                }
            },
            Guard::Or(a, b) => match (fold(a), fold(b)) {
                (Folded::Const(true), _) | (_, Folded::Const(true)) => (quote!(true), Prec::Unary),
                (Folded::Const(false), Folded::Expr(x))
                | (Folded::Expr(x), Folded::Const(false)) => return self.guard_at(x, outer),
                (Folded::Const(false), Folded::Const(false)) => (quote!(false), Prec::Unary),
                (Folded::Expr(a), Folded::Expr(b)) => {
                    let a = self.guard_at(a, Prec::Or);
                    let b = self.guard_at(b, Prec::Or);
                    (quote!(#a || #b), Prec::Or)
                }
            },
        };
        if prec < outer {
            quote!((#tokens))
        } else {
            tokens
        }
    }

    /// `Some(x)` when [`Self::guard_expr`] writes `g` as `!x` at the top level (after
    /// the same constant folding and double-negation removal).
    fn negated(g: &Guard) -> Option<&Guard> {
        match g {
            Guard::Not(a) => match fold(a) {
                Folded::Const(_) => None,
                Folded::Expr(Guard::Not(inner)) => Self::negated(inner),
                Folded::Expr(x) => Some(x),
            },
            Guard::And(a, b) => match (fold(a), fold(b)) {
                (Folded::Const(true), Folded::Expr(x)) | (Folded::Expr(x), Folded::Const(true)) => {
                    Self::negated(x)
                }
                _ => None,
            },
            Guard::Or(a, b) => match (fold(a), fold(b)) {
                (Folded::Const(false), Folded::Expr(x))
                | (Folded::Expr(x), Folded::Const(false)) => Self::negated(x),
                _ => None,
            },
            Guard::Input(_) | Guard::Const(_) => None,
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

    /// A mask literal `[b0, b1, ..]`: bit `i % 8` of byte `i / 8` is output `i`.
    fn mask_literal(&self, high: &[OutputId]) -> TokenStream {
        let mut bytes = vec![0u8; self.mask_bytes];
        for o in high {
            bytes[o.index() / 8] |= 1 << (o.index() % 8);
        }
        let bytes = bytes.iter().map(|b| lit(*b as usize));
        quote!([#(#bytes),*])
    }

    fn union(a: &[OutputId], b: &[OutputId]) -> Vec<OutputId> {
        let mut all = a.to_vec();
        all.extend_from_slice(b);
        all.sort_unstable();
        all.dedup();
        all
    }

    /// `State`, `Event`, `Outputs` and the `Machine` struct, with the runtime's
    /// feature derives, and the `State`/`Event` inherent impls.
    fn types(&self) -> TokenStream {
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
        let all_events = (0..m.events.len()).map(|i| self.event_variant(i));
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
            let v = self.event_variant(i);
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
        let machine_doc = doc_text(&format!(
            "The `{name}` machine: its current state, {} of RAM.",
            if m.states.len() <= 256 {
                "one byte"
            } else {
                "two bytes"
            }
        ));
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
                }
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
    fn hooks(&self) -> TokenStream {
        let m = self.m;
        let inputs = m.inputs.iter().map(|i| {
            let doc = doc_or(
                &i.doc,
                format!("Reads input `{}` (called when a guard needs it).", i.name),
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
            "What `{}` needs from the host: one function per input (read when a guard needs \
             it) and one per action (run in the order of the transition).",
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
    fn machine_impl(&self) -> TokenStream {
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
        quote! {
            impl Machine {
                /// The start state.
                pub const START: State = #start;

                #start_doc
                #[must_use]
                pub const fn new() -> Self {
                    Machine { state: #start }
                }

                /// The current state.
                #[must_use]
                #by_ref_allow
                pub const fn state(&self) -> State {
                    self.state
                }

                /// A machine in the state numbered `raw` (for instance read back from
                /// flash).
                ///
                /// # Errors
                ///
                #restore_errors
                pub fn restore(raw: #state_ty) -> Result<Self, ::detent::InvalidState> {
                    match State::from_raw(raw) {
                        Some(state) => Ok(Machine { state }),
                        None => Err(::detent::InvalidState { #invalid_fields }),
                    }
                }
            }

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
    fn unhandled(&self) -> TokenStream {
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
    fn step_attrs(&self, lines: usize) -> TokenStream {
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
    fn step_doc(&self) -> TokenStream {
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
            "Takes one event: finds the rule of the innermost scope whose guard holds, runs \
             the leave actions, the rule's actions and the enter actions in order, moves to \
             the target and returns the Moore outputs of the new state with the rule's Mealy \
             outputs.",
        );
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

    fn trace(&self) -> TokenStream {
        let name = &self.m.name;
        quote!(::detent::__trace_transition!(#name, from, event, to);)
    }

    // ---- match style ------------------------------------------------------------

    fn match_dispatch(&self) -> TokenStream {
        let m = self.m;
        // Moore outputs: states grouped by their Moore set.
        let mut moore_groups: Vec<(&[OutputId], Vec<TokenStream>)> = Vec::new();
        for (i, s) in m.states.iter().enumerate() {
            let v = self.state_variant(StateId::from_index(i));
            match moore_groups
                .iter_mut()
                .find(|(set, _)| *set == s.moore.as_slice())
            {
                Some((_, vs)) => vs.push(v),
                None => moore_groups.push((&s.moore, vec![v])),
            }
        }
        let outputs_body = if m.outputs.is_empty() {
            quote!(Outputs {})
        } else if moore_groups.len() == 1 {
            self.outputs_literal(moore_groups[0].0)
        } else {
            let arms = moore_groups.iter().map(|(set, vs)| {
                let lit = self.outputs_literal(set);
                quote!(#(#vs)|* => #lit)
            });
            quote!(match self.state { #(#arms,)* })
        };

        let unhandled = self.unhandled();
        let state_arms = (0..m.states.len()).map(|si| {
            let s = StateId::from_index(si);
            // Events grouped by the rules they resolve to.
            let mut groups: Vec<(&[RuleId], Vec<usize>)> = Vec::new();
            let mut unhandled_events = Vec::new();
            for e in 0..m.events.len() {
                match m.rules_for(s, crate::model::EventId::from_index(e)) {
                    Some((_, rules))
                        if rules
                            .iter()
                            .any(|r| !matches!(self.rule_guard(*r), RuleGuard::Never)) =>
                    {
                        match groups.iter_mut().find(|(rs, _)| *rs == rules) {
                            Some((_, es)) => es.push(e),
                            None => groups.push((rules, vec![e])),
                        }
                    }
                    _ => unhandled_events.push(e),
                }
            }
            if groups.is_empty() {
                return (self.state_variant(s), unhandled.clone());
            }
            // Different rule lists can still compile to the same code (same target,
            // outputs and actions): one arm per distinct body, so no two arms repeat
            // each other (clippy's `match_same_arms`).
            let event_arms = merge_arms(groups.iter().map(|(rules, events)| {
                let pats = events.iter().map(|&e| self.event_variant(e)).collect();
                (pats, self.rule_chain(s, rules))
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
            (
                self.state_variant(s),
                quote!(match event { #(#event_arms,)* #rest }),
            )
        });
        // States whose arms come out the same (for instance two states without rules)
        // share one arm too.
        let state_arms = merge_arms(state_arms.map(|(v, body)| (vec![v], body)));
        let state_arms = state_arms
            .iter()
            .map(|(pats, body)| quote!(#(#pats)|* => #body));
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
        let state_arms: Vec<TokenStream> = state_arms.collect();
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
        quote! {
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

    /// `if g1 { fire r1 } else if g2 { fire r2 } [else { fire r0 }]` for one cell: the
    /// rules in order up to the first one that always holds (the interpreter takes the
    /// first rule whose guard holds, so later ones never fire).
    fn rule_chain(&self, s: StateId, rules: &[RuleId]) -> TokenStream {
        let mut guarded = Vec::new();
        let mut always = None;
        for &r in rules {
            match self.rule_guard(r) {
                RuleGuard::Never => {}
                RuleGuard::Always => {
                    always = Some(r);
                    break;
                }
                RuleGuard::When(g) => guarded.push((r, g)),
            }
        }
        let chain = always.map(|r| {
            let body = self.fire(s, r);
            quote!({ #body })
        });
        let unhandled = self.unhandled();
        let mut chain = chain.unwrap_or_else(|| quote!({ #unhandled }));
        let single = guarded.len() == 1;
        for (r, g) in guarded.into_iter().rev() {
            let body = self.fire(s, r);
            // A lone guarded rule is `if g { .. } else { .. }`: when `g` is a negation,
            // test its positive form and swap the branches, so the code does not read
            // `if !x { .. } else { .. }` (clippy's `if_not_else`, which leaves `else if`
            // chains alone).
            if single {
                if let Some(positive) = Self::negated(g) {
                    let cond = self.guard_expr(positive);
                    chain = quote!(if #cond #chain else { #body });
                    continue;
                }
            }
            let cond = self.guard_expr(g);
            chain = quote!(if #cond { #body } else #chain);
        }
        chain
    }

    /// The statements of a rule firing in state `s` (match style).
    fn fire(&self, s: StateId, r: RuleId) -> TokenStream {
        let m = self.m;
        let rule = &m.rules[r.index()];
        let to = m.target_of(s, r);
        let actions = m.transition_actions(s, r).into_iter().map(|a| {
            let f = ident(&m.actions[a.index()].name);
            quote!(hooks.#f();)
        });
        let to_v = self.state_variant(to);
        let assign = match rule.target {
            Target::Stay => quote!(),
            Target::To(_) => quote!(self.state = to;),
        };
        let outputs = self.outputs_literal(&Self::union(&m.states[to.index()].moore, &rule.mealy));
        let trace = self.trace();
        quote! {
            #(#actions)*
            let to = #to_v;
            #assign
            #trace
            Ok(#outputs)
        }
    }

    // ---- table style ------------------------------------------------------------

    fn table_dispatch(&self) -> TokenStream {
        let m = self.m;
        let t = Tables::build(self);
        let k = lit(self.mask_bytes);
        let has_outputs = !m.outputs.is_empty();
        let has_actions = !t.action_seqs.is_empty();
        let has_mealy = has_outputs
            && t.rules
                .iter()
                .chain(t.cells.iter().flatten().map(|c| &c.first))
                .any(|r| r.mealy.iter().any(|b| *b != 0));
        let has_rest = !t.rules.is_empty();
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
            t.action_seqs.len(),
            t.rules.len(),
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
            let rows = m.states.iter().map(|s| self.mask_literal(&s.moore));
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

        if t.guard_seqs.is_empty() {
            // No rule can fire anywhere: no tables to consult.
            let machine_impl = machine_impl(quote!(_event), quote!(_hooks), unhandled);
            return quote! {
                #moore_table
                #outputs_from
                #machine_impl
            };
        }

        let n_states = lit(m.states.len());
        let n_events = lit(m.events.len());

        // A rule's numbers are `[actions, mealy..]`, a cell's `[actions, mealy.., seq,
        // rest]`, leaving out the columns this machine does not need; numeric tables put
        // the target's number first, the others pair a `State` with the numbers.
        let mut rule_numbers_width = usize::from(has_actions);
        if has_mealy {
            rule_numbers_width += self.mask_bytes;
        }
        let cell_numbers_width = rule_numbers_width + 1 + usize::from(has_rest);
        let rule_numbers = |r: &RuleRow| {
            let mut n = Vec::new();
            if has_actions {
                n.push(lit(r.actions));
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
            } else if !has_actions && numbers.len() == 1 && has_mealy {
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
        if has_mealy {
            rule_columns.push(quote!(mealy @ ..));
        }
        let rule_values = {
            let mut v = vec![quote!(target)];
            if has_actions {
                v.push(quote!(actions));
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
            "{target_doc}{}{}",
            if has_actions {
                ", the action sequence (`0`: none, see `run_actions`)"
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
            "A cell, {}: {first_doc}, its guard list (`0`: no rules, see `select`){}.",
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
        // The rule that fires, from the cell's guard list `seq`, its first rule `first`
        // and, for a later rule found in `RULES`, the arm `found` that yields it. A cell
        // whose only rule has no guard (guard list 1 when there is one, see
        // `Tables::build`) skips `select`: a compare and a branch instead of a jump
        // through `select`'s table, which the benchmark measured at about 5% of a step
        // on small machines (BENCHMARKS.md, "Dispatch").
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
                match select(#seq, hooks) {
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

        // `select`: one arm per guard sequence, its guards as an `if`/`else if` chain.
        let seq_bodies: Vec<TokenStream> = t
            .guard_seqs
            .iter()
            .map(|seq| {
                // A block (`{ None }`, `{ Some(i) }`) or an `if` chain.
                let mut chain = quote!({ None });
                // A lone guard that is a negation is tested in its positive form with
                // the branches swapped (clippy's `if_not_else`), as in `rule_chain`.
                let single = seq.iter().filter(|g| g.is_some()).count() == 1;
                for (i, guard) in seq.iter().enumerate().rev() {
                    let at = lit(i);
                    chain = match guard {
                        None => quote!({ Some(#at) }),
                        Some(g) => match Self::negated(g).filter(|_| single) {
                            Some(positive) => {
                                let cond = self.guard_expr(positive);
                                quote!(if #cond #chain else { Some(#at) })
                            }
                            None => {
                                let cond = self.guard_expr(g);
                                quote!(if #cond { Some(#at) } else #chain)
                            }
                        },
                    };
                }
                chain
            })
            .collect();
        let select_body = if seq_bodies.len() == 1 {
            let body = &seq_bodies[0];
            if t.guard_seqs[0].first().is_some_and(Option::is_none) {
                quote!(if seq == 1 #body else { None })
            } else {
                quote!(if seq == 1 { #body } else { None })
            }
        } else {
            let arms = seq_bodies.iter().enumerate().map(|(i, body)| {
                let id = lit(i + 1);
                quote!(#id => #body)
            });
            quote! {
                match seq {
                    #(#arms,)*
                    _ => None,
                }
            }
        };
        let select_hooks = param("hooks", uses_ident(&select_body, "hooks"));
        let select_allow = long_fn_allow(
            line_estimate(&select_body) + 2,
            "one match arm per distinct guard list of the spec",
        );
        let select_fn = quote! {
            /// The position among a cell's rules of the first whose guard holds (`0`:
            /// the cell's own first rule, `at`: `RULES[rest + at - 1]`), for the cell's
            /// guard sequence `seq` (`0`: no rules), reading inputs through `hooks`;
            /// `None` when no guard holds.
            #select_allow
            fn select<H: Hooks + ?Sized>(seq: #num, #select_hooks: &mut H) -> Option<usize> {
                #select_body
            }
        };

        let (actions_fn, run_actions) = if has_actions {
            let bodies: Vec<TokenStream> = t
                .action_seqs
                .iter()
                .map(|seq| {
                    let calls = seq.iter().map(|a| {
                        let f = ident(&m.actions[a.index()].name);
                        quote!(hooks.#f();)
                    });
                    quote!({ #(#calls)* })
                })
                .collect();
            let body = if bodies.len() == 1 {
                let b = &bodies[0];
                quote!(if actions == 1 #b)
            } else {
                let arms = bodies.iter().enumerate().map(|(i, b)| {
                    let id = lit(i + 1);
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
                "one match arm per distinct action sequence of the spec",
            );
            (
                quote! {
                    /// Runs action sequence `actions` (`0`: none) through `hooks`: the
                    /// leave actions, the rule's actions and the enter actions, in order.
                    #run_actions_allow
                    fn run_actions<H: Hooks + ?Sized>(actions: #num, hooks: &mut H) {
                        #body
                    }
                },
                quote!(run_actions(actions, hooks);),
            )
        } else {
            (quote!(), quote!())
        };
        let trace = self.trace();
        let machine_impl = machine_impl(
            quote!(event),
            quote!(hooks),
            quote! {
                let from = self.state;
                #lookup
                #run_actions
                self.state = to;
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
            #select_fn
            #actions_fn
            #outputs_from

            #machine_impl
        }
    }
}

/// Match arms `(patterns, body)` with equal bodies merged into one arm (patterns joined
/// with `|`), in the order each body first appears. The patterns are distinct enum
/// variants, so reordering them cannot change which arm a value takes.
fn merge_arms(
    arms: impl Iterator<Item = (Vec<TokenStream>, TokenStream)>,
) -> Vec<(Vec<TokenStream>, TokenStream)> {
    let mut merged: Vec<(Vec<TokenStream>, TokenStream)> = Vec::new();
    let mut index: HashMap<String, usize> = HashMap::new();
    for (pats, body) in arms {
        match index.get(&body.to_string()) {
            Some(&i) => merged[i].0.extend(pats),
            None => {
                index.insert(body.to_string(), merged.len());
                merged.push((pats, body));
            }
        }
    }
    merged
}

/// One row of the rule table.
#[derive(Clone, PartialEq, Eq, Hash)]
struct RuleRow {
    target: usize,
    mealy: Vec<u8>,
    /// Action sequence id (`0`: none; `i + 1` is `Tables::action_seqs[i]`).
    actions: usize,
}

/// One cell of the table: the cell's first rule, its guard list and where its other
/// rules are.
#[derive(Clone)]
struct CellRow {
    /// The first rule of the cell's run (a placeholder when `seq` is 0).
    first: RuleRow,
    /// Guard sequence id (`0`: no rules; `i + 1` is `Tables::guard_seqs[i]`).
    seq: usize,
    /// Rule `at >= 1` of the run is `rules[rest + at - 1]`.
    rest: usize,
}

/// The table style's data, before it becomes tokens.
struct Tables<'g> {
    /// `cells[state][event]`.
    cells: Vec<Vec<CellRow>>,
    /// The rules after the first of each cell's run, runs stored once.
    rules: Vec<RuleRow>,
    /// Distinct guard sequences of the cells' runs (`None`: no guard, which ends a
    /// sequence); sequence id `i + 1` is `guard_seqs[i]`.
    guard_seqs: Vec<Vec<Option<&'g Guard>>>,
    /// Distinct non-empty action sequences; id `i + 1` is `action_seqs[i]`.
    action_seqs: Vec<Vec<ActionId>>,
}

impl<'g> Tables<'g> {
    fn build(g: &Gen<'g>) -> Self {
        let m = g.m;
        let mut t = Tables {
            cells: Vec::with_capacity(m.states.len()),
            rules: Vec::new(),
            guard_seqs: Vec::new(),
            action_seqs: Vec::new(),
        };
        let mut seq_ids: HashMap<Vec<String>, usize> = HashMap::new();
        let mut action_ids: HashMap<Vec<ActionId>, usize> = HashMap::new();
        let mut runs: HashMap<Vec<RuleRow>, usize> = HashMap::new();
        for si in 0..m.states.len() {
            let s = StateId::from_index(si);
            let empty = CellRow {
                first: RuleRow {
                    target: si,
                    mealy: vec![0u8; g.mask_bytes],
                    actions: 0,
                },
                seq: 0,
                rest: 0,
            };
            let mut row = Vec::with_capacity(m.events.len());
            // Cells already built for this state, by rule list.
            let mut local: Vec<(&[RuleId], CellRow)> = Vec::new();
            for e in 0..m.events.len() {
                let Some((_, rules)) = m.rules_for(s, crate::model::EventId::from_index(e)) else {
                    row.push(empty.clone());
                    continue;
                };
                if let Some((_, cell)) = local.iter().find(|(rs, _)| *rs == rules) {
                    row.push(cell.clone());
                    continue;
                }
                let mut run = Vec::new();
                let mut guards: Vec<Option<&'g Guard>> = Vec::new();
                for &r in rules {
                    let guard = match g.rule_guard(r) {
                        RuleGuard::Never => continue,
                        RuleGuard::Always => None,
                        RuleGuard::When(expr) => Some(expr),
                    };
                    let seq = m.transition_actions(s, r);
                    let actions = if seq.is_empty() {
                        0
                    } else {
                        let next = t.action_seqs.len() + 1;
                        let id = *action_ids.entry(seq.clone()).or_insert(next);
                        if id == next {
                            t.action_seqs.push(seq);
                        }
                        id
                    };
                    let rule = &m.rules[r.index()];
                    let to = m.target_of(s, r);
                    let mut mealy = vec![0u8; g.mask_bytes];
                    for o in &rule.mealy {
                        mealy[o.index() / 8] |= 1 << (o.index() % 8);
                    }
                    run.push(RuleRow {
                        target: to.index(),
                        mealy,
                        actions,
                    });
                    guards.push(guard);
                    if guard.is_none() {
                        // The first rule that always holds ends the search.
                        break;
                    }
                }
                let cell = if run.is_empty() {
                    empty.clone()
                } else {
                    let key: Vec<String> = guards
                        .iter()
                        .map(|x| x.map_or_else(String::new, |e| g.guard_expr(e).to_string()))
                        .collect();
                    let next = t.guard_seqs.len() + 1;
                    let seq = *seq_ids.entry(key).or_insert(next);
                    if seq == next {
                        t.guard_seqs.push(guards);
                    }
                    let others = run.split_off(1);
                    let rest = if others.is_empty() {
                        0
                    } else {
                        let next = t.rules.len();
                        match runs.get(&others) {
                            Some(&rest) => rest,
                            None => {
                                t.rules.extend_from_slice(&others);
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
                local.push((rules, cell.clone()));
                row.push(cell);
            }
            t.cells.push(row);
        }
        t.unconditional_to_front();
        t
    }

    /// Renumbers the guard lists so that the list of one unguarded rule, when some
    /// cell has it, is list 1 (`step` tests for it before calling `select`).
    fn unconditional_to_front(&mut self) {
        let Some(at) = self
            .guard_seqs
            .iter()
            .position(|seq| matches!(seq.as_slice(), [None]))
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

    /// Whether guard list 1 is a single unguarded rule.
    fn unconditional_first(&self) -> bool {
        self.guard_seqs
            .first()
            .is_some_and(|seq| matches!(seq.as_slice(), [None]))
    }
}
