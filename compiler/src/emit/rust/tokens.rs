//! Small token helpers shared by the Rust back end's modules: identifiers, doc
//! comments, integer types and literals, and the lint attributes that generated items
//! of spec-sized length carry.

use proc_macro2::{Delimiter, Ident, Literal, Span, TokenStream, TokenTree};
use quote::quote;
use std::collections::HashMap;

/// A Rust identifier for a spec name, raw (`r#type`) when the name is a Rust keyword.
pub(super) fn ident(name: &str) -> Ident {
    if syn::parse_str::<Ident>(name).is_ok() {
        Ident::new(name, Span::call_site())
    } else {
        Ident::new_raw(name, Span::call_site())
    }
}

/// An unsuffixed integer literal.
pub(super) fn lit(n: usize) -> Literal {
    Literal::usize_unsuffixed(n)
}

/// `#[doc = " line"]` per line (prettyplease prints them as `///` comments).
pub(super) fn doc_attrs(lines: &[String]) -> TokenStream {
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
pub(super) fn wrap(text: &str) -> Vec<String> {
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
pub(super) fn doc_text(text: &str) -> TokenStream {
    doc_attrs(&wrap(text))
}

/// Spec doc lines, or a generated line when there are none.
pub(super) fn doc_or(doc: &[String], fallback: String) -> TokenStream {
    if doc.is_empty() {
        doc_text(&fallback)
    } else {
        doc_attrs(doc)
    }
}

/// The narrowest unsigned type holding every value up to `max`.
pub(super) fn uint(max: usize) -> TokenStream {
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
pub(super) fn long_fn_allow(lines: usize, reason: &str) -> TokenStream {
    if lines > LONG_FN_LINES {
        quote!(#[allow(clippy::too_many_lines, reason = #reason)])
    } else {
        quote!()
    }
}

/// An upper estimate of the lines prettyplease gives `tokens`: one per `;`, `,`, `|` and
/// `>` (of `=>`), and two per `{ .. }` block (its first and last line). Nearly every
/// formatted line ends at one of these, and many hold more than one, so this overcounts.
pub(super) fn line_estimate(tokens: &TokenStream) -> usize {
    tokens
        .clone()
        .into_iter()
        .map(|t| match t {
            TokenTree::Punct(p) => usize::from(matches!(p.as_char(), ';' | ',' | '|' | '>')),
            TokenTree::Group(g) => {
                let own = if g.delimiter() == Delimiter::Brace {
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
pub(super) fn by_ref_allow() -> TokenStream {
    quote! {
        #[allow(
            clippy::trivially_copy_pass_by_ref,
            reason = "the generated API reads the machine through `&self`, like `StateMachine`"
        )]
    }
}

/// Whether `tokens` mention the identifier `name` anywhere (macro arguments too).
pub(super) fn uses_ident(tokens: &TokenStream, name: &str) -> bool {
    tokens.clone().into_iter().any(|t| match t {
        TokenTree::Ident(i) => i == name,
        TokenTree::Group(g) => uses_ident(&g.stream(), name),
        _ => false,
    })
}

/// A parameter name, `_`-prefixed when the body does not use it.
pub(super) fn param(name: &str, used: bool) -> Ident {
    if used {
        ident(name)
    } else {
        ident(&format!("_{name}"))
    }
}

/// Match arms `(patterns, body)` with equal bodies merged into one arm (patterns joined
/// with `|`), in the order each body first appears. The patterns are distinct enum
/// variants, so reordering them cannot change which arm a value takes.
pub(super) fn merge_arms(
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
