//! The parser: Rust tokens to [`ast`](super::ast), built on syn.
//!
//! The same code parses the input of `detent::machine!` and a `.detent` file read by
//! the CLI (tokenized by `proc_macro2`, with line/column spans). Recursion (nested
//! groups, nested parentheses in guards) is bounded by [`MAX_NESTING`], so hostile
//! input cannot overflow the stack.

use super::ast::*;
use super::fast::{self, FastPath};
use super::lexicon::is_rust_keyword;
use proc_macro2::{Delimiter, Group, Span, TokenStream, TokenTree};
use syn::ext::IdentExt;
use syn::parse::{ParseStream, Parser};
use syn::{Attribute, Token};

pub use super::lexicon::{MAX_NESTING, MAX_TERMS, RESERVED};

mod kw {
    syn::custom_keyword!(machine);
    syn::custom_keyword!(events);
    syn::custom_keyword!(inputs);
    syn::custom_keyword!(outputs);
    syn::custom_keyword!(actions);
    syn::custom_keyword!(start);
    syn::custom_keyword!(unhandled);
    syn::custom_keyword!(never);
    syn::custom_keyword!(recover);
    syn::custom_keyword!(to);
    syn::custom_keyword!(except);
    syn::custom_keyword!(state);
    syn::custom_keyword!(group);
    syn::custom_keyword!(terminal);
    syn::custom_keyword!(enter);
    syn::custom_keyword!(leave);
    syn::custom_keyword!(emit);
    syn::custom_keyword!(stay);
    syn::custom_keyword!(complete);
    syn::custom_keyword!(ignore);
    syn::custom_keyword!(reject);
    syn::custom_keyword!(preempt);
    syn::custom_keyword!(timebase);
    syn::custom_keyword!(after);
    syn::custom_keyword!(counters);
    syn::custom_keyword!(ensure);
    syn::custom_keyword!(within);
    syn::custom_keyword!(steps);
}

/// Parses a token stream (macro input, or a tokenized file) into a [`File`].
pub fn parse_tokens(tokens: TokenStream) -> syn::Result<File> {
    parse_tokens_with(tokens, FastPath::Auto)
}

/// [`parse_tokens`] with a choice of fast path.
pub(crate) fn parse_tokens_with(tokens: TokenStream, fast: FastPath) -> syn::Result<File> {
    check_token_depth(&tokens)?;
    parse_file(tokens, fast.resolve())
}

/// Parses a token stream tokenized from `text`, skipping the token-tree depth walk
/// when a scan of the text proves the nesting shallow (the walk copies every token,
/// which is most of the cost on large files).
pub(crate) fn parse_tokens_of_text(
    tokens: TokenStream,
    text: &str,
    fast: FastPath,
) -> syn::Result<File> {
    match text_bracket_depth(text) {
        Some(depth) if depth <= MAX_NESTING => parse_file(tokens, fast.resolve()),
        _ => parse_tokens_with(tokens, fast),
    }
}

/// The deepest bracket nesting of `text` outside comments, or `None` when the text
/// holds a quote outside comments (string and character literals can hide brackets,
/// so the caller falls back to the exact token walk).
fn text_bracket_depth(text: &str) -> Option<usize> {
    // The bytes the scan looks at; it skips over every other byte.
    const SPECIAL: [bool; 256] = {
        let mut t = [false; 256];
        let mut k = 0;
        while k < 9 {
            t[b"/\"'([{)]}"[k] as usize] = true;
            k += 1;
        }
        t
    };
    let bytes = text.as_bytes();
    let (mut i, mut depth, mut max) = (0usize, 0usize, 0usize);
    while i < bytes.len() {
        match bytes[i..].iter().position(|&b| SPECIAL[b as usize]) {
            Some(k) => i += k,
            None => break,
        }
        match bytes[i] {
            b'/' if bytes.get(i + 1) == Some(&b'/') => {
                while i < bytes.len() && bytes[i] != b'\n' {
                    i += 1;
                }
                continue;
            }
            b'/' if bytes.get(i + 1) == Some(&b'*') => {
                // Block comments nest in Rust.
                let mut level = 0usize;
                while i < bytes.len() {
                    if bytes[i] == b'/' && bytes.get(i + 1) == Some(&b'*') {
                        level += 1;
                        i += 2;
                    } else if bytes[i] == b'*' && bytes.get(i + 1) == Some(&b'/') {
                        level -= 1;
                        i += 2;
                        if level == 0 {
                            break;
                        }
                    } else {
                        i += 1;
                    }
                }
                continue;
            }
            b'"' | b'\'' => return None,
            b'(' | b'[' | b'{' => {
                depth += 1;
                max = max.max(depth);
            }
            b')' | b']' | b'}' => depth = depth.saturating_sub(1),
            _ => {}
        }
        i += 1;
    }
    Some(max)
}

/// Refuses token trees nested deeper than the language can use, before syn recurses
/// into them. Iterative, so depth itself cannot overflow the stack here.
fn check_token_depth(tokens: &TokenStream) -> syn::Result<()> {
    // Groups nest (machine braces, group braces) and guards nest parentheses; allow
    // the language's own nesting plus a margin for machine and attribute brackets.
    let limit = MAX_NESTING + 8;
    let mut stack: Vec<proc_macro2::token_stream::IntoIter> = vec![tokens.clone().into_iter()];
    while let Some(top) = stack.last_mut() {
        match top.next() {
            Some(TokenTree::Group(g)) => {
                if stack.len() >= limit {
                    return Err(syn::Error::new(
                        g.span_open(),
                        format!("brackets nested deeper than {limit} levels"),
                    ));
                }
                if g.delimiter() != Delimiter::None || !g.stream().is_empty() {
                    stack.push(g.stream().into_iter());
                }
            }
            Some(_) => {}
            None => {
                stack.pop();
            }
        }
    }
    Ok(())
}

/// The file, item by item.
///
/// syn copies every token tree it parses into one flat buffer, and for a whole
/// 10,000-state file that buffer holds millions of entries, grown by reallocation
/// (most of the parse time went there). So the driver walks the token trees itself
/// and hands syn one item at a time: a machine header, a declaration, a state, a rule,
/// everything up to a `;` or a `{ }` at the body's top level ([`split_items`]). Group
/// bodies are split the same way, recursively. The parsing functions are the same as
/// for one big buffer: each item is parsed inside a brace group that carries the
/// enclosing body's closing-brace span, so "unexpected end of input" points at the
/// same `}` it would, and an item that runs on past its `;` or `}` is an error at the
/// same token.
///
/// Unless `fast` is [`FastPath::Off`], each item other than a group is first offered
/// to the [`fast`] path, which parses the common items straight from the token trees;
/// whatever it does not take (anything unusual, every error) goes through syn as
/// described.
fn parse_file(tokens: TokenStream, fast: FastPath) -> syn::Result<File> {
    let mut machines = Vec::new();
    let mut trees = tokens.into_iter().peekable();
    while trees.peek().is_some() {
        // A machine: its header tokens, then its brace-delimited body.
        let mut header = Vec::new();
        let mut body = None;
        for tree in trees.by_ref() {
            match tree {
                TokenTree::Group(g) if g.delimiter() == Delimiter::Brace => {
                    body = Some(g);
                    break;
                }
                other => header.push(other),
            }
        }
        let Some(body) = body else {
            // No body: the header parser reports what is missing (its `braced!`
            // cannot succeed without braces; the second error is only a fallback).
            parse_machine_header.parse2(header.into_iter().collect())?;
            return Err(syn::Error::new(
                Span::call_site(),
                "expected the machine's body in `{ }`",
            ));
        };
        header.push(placeholder(&body));
        let (attrs, vis, name) = parse_machine_header.parse2(header.into_iter().collect())?;
        let mut decls = Vec::new();
        let mut members = Vec::new();
        let fast_item =
            |tokens: &mut Vec<TokenTree>, members: &mut Vec<Member>, decls: &mut Vec<Decl>| {
                match fast::machine_item(tokens, fast) {
                    // Declarations after members are an error: syn reports it.
                    Some(fast::Item::Decl(decl)) if members.is_empty() => decls.push(decl),
                    Some(fast::Item::Member(member)) => members.push(member),
                    _ => return false,
                }
                true
            };
        let syn_item = |content: ParseStream, members: &mut Vec<Member>, decls: &mut Vec<Decl>| {
            while !content.is_empty() {
                let item_attrs = parse_attrs(content, false)?;
                if let Some(decl) = try_parse_decl(content)? {
                    if let Some(span) = item_attrs.first_span {
                        return Err(syn::Error::new(
                            span,
                            "a doc comment or attribute here documents nothing: put doc \
                                 comments before each name in the list, and lint attributes \
                                 on the machine",
                        ));
                    }
                    if !members.is_empty() {
                        return Err(syn::Error::new(
                            decl.span,
                            "declarations come before states and groups",
                        ));
                    }
                    decls.push(decl);
                } else {
                    members.push(parse_member(content, item_attrs, 0)?);
                }
            }
            Ok(())
        };
        parse_items(body, 0, &mut members, &mut decls, fast, fast_item, syn_item)?;
        machines.push(MachineAst {
            attrs: attrs.attrs,
            doc: attrs.doc,
            vis,
            name,
            decls,
            members,
        });
    }
    Ok(File { machines })
}

/// An empty brace group standing for `body` in a header item, with its span, so that
/// the header's `braced!` succeeds where the real body is.
fn placeholder(body: &Group) -> TokenTree {
    let mut g = Group::new(Delimiter::Brace, TokenStream::new());
    g.set_span(body.span());
    TokenTree::Group(g)
}

/// Splits a body's tokens into items: each ends after a `;` or a `{ }` group at the
/// body's top level (no item of the language has either anywhere else at its top
/// level), the rest (an unterminated last item) is the last item.
fn split_items(stream: TokenStream) -> Vec<Vec<TokenTree>> {
    let mut items = Vec::new();
    let mut item = Vec::new();
    for tree in stream {
        let ends = match &tree {
            TokenTree::Punct(p) => p.as_char() == ';',
            TokenTree::Group(g) => g.delimiter() == Delimiter::Brace,
            _ => false,
        };
        item.push(tree);
        if ends {
            items.push(std::mem::take(&mut item));
        }
    }
    if !item.is_empty() {
        items.push(item);
    }
    items
}

/// An item that is a group (outer attributes, `group`, ..., a `{ }` body): its head
/// with the body replaced by a [`placeholder`], and the body (taken out of the item,
/// so that its tokens are not shared). Any other item is handed back.
fn group_item(mut item: Vec<TokenTree>) -> Result<(TokenStream, Group), Vec<TokenTree>> {
    let mut i = 0;
    while let (Some(TokenTree::Punct(p)), Some(TokenTree::Group(g))) =
        (item.get(i), item.get(i + 1))
    {
        if p.as_char() != '#' || g.delimiter() != Delimiter::Bracket {
            break;
        }
        i += 2;
    }
    match (item.get(i), item.last()) {
        (Some(TokenTree::Ident(w)), Some(TokenTree::Group(body)))
            if w == "group" && body.delimiter() == Delimiter::Brace => {}
        _ => return Err(item),
    }
    let Some(TokenTree::Group(body)) = item.pop() else {
        unreachable!("matched above");
    };
    item.push(placeholder(&body));
    Ok((item.into_iter().collect(), body))
}

/// Parses `item` with `f` inside a brace group that ends at `close`.
fn in_scope<T>(
    item: Vec<TokenTree>,
    close: Span,
    f: impl FnOnce(ParseStream) -> syn::Result<T>,
) -> syn::Result<T> {
    let mut g = Group::new(Delimiter::Brace, item.into_iter().collect());
    g.set_span(close);
    (|input: ParseStream| {
        let content;
        syn::braced!(content in input);
        f(&content)
    })
    .parse2(TokenStream::from(TokenTree::Group(g)))
}

/// The items of a brace-delimited body ([`split_items`]): group items become members
/// at `group_depth` (their own bodies split again); every other item is offered to
/// `fast` (unless the fast path is off), and when that does not take it (returns
/// false, leaving the tokens as they were), parsed by `item` in a scope that ends at
/// the body's `}`. The body's tokens are taken out of the group so they are not
/// shared (a shared stream is copied when iterated), and each item is freed once
/// parsed.
fn parse_items<C>(
    body: Group,
    group_depth: usize,
    members: &mut Vec<Member>,
    cx: &mut C,
    mode: FastPath,
    mut fast: impl FnMut(&mut Vec<TokenTree>, &mut Vec<Member>, &mut C) -> bool,
    mut item: impl FnMut(ParseStream, &mut Vec<Member>, &mut C) -> syn::Result<()>,
) -> syn::Result<()> {
    let close = body.span_close();
    let stream = body.stream();
    drop(body);
    for tokens in split_items(stream) {
        let mut tokens = match group_item(tokens) {
            Ok((head, inner)) => {
                members.push(parse_group_item(head, inner, group_depth, mode)?);
                continue;
            }
            Err(tokens) => tokens,
        };
        if mode != FastPath::Off && fast(&mut tokens, members, cx) {
            continue;
        }
        in_scope(tokens, close, |content| item(content, members, cx))?;
    }
    Ok(())
}

/// A group item, its body split into items too.
fn parse_group_item(
    head: TokenStream,
    body: Group,
    depth: usize,
    mode: FastPath,
) -> syn::Result<Member> {
    let (attrs, name, emit) = (|input: ParseStream| {
        let attrs = parse_attrs(input, false)?;
        if depth >= MAX_NESTING {
            return Err(input.error(format!("groups nested deeper than {MAX_NESTING} levels")));
        }
        input.parse::<kw::group>()?;
        let name = parse_name(input, "a group name")?;
        let emit = parse_emit_header(input)?;
        let content;
        syn::braced!(content in input);
        let _ = content;
        Ok((attrs, name, emit))
    })
    .parse2(head)?;
    let mut rules = Vec::new();
    let mut members = Vec::new();
    parse_items(
        body,
        depth + 1,
        &mut members,
        &mut rules,
        mode,
        |tokens, members, rules| {
            match fast::group_item(tokens, depth, mode) {
                Some(fast::Item::Member(member)) => members.push(member),
                Some(fast::Item::Body(body)) => rules.push(body),
                _ => return false,
            }
            true
        },
        |content, members, rules| group_content(content, depth, rules, members),
    )?;
    Ok(Member::Group(GroupAst {
        attrs: attrs.attrs,
        doc: attrs.doc,
        name,
        emit,
        body: rules,
        members,
    }))
}

/// The items of a group body: states and groups, or rules and enter/leave lines.
fn group_content(
    content: ParseStream,
    depth: usize,
    body: &mut Vec<Body>,
    members: &mut Vec<Member>,
) -> syn::Result<()> {
    while !content.is_empty() {
        let item_attrs = parse_attrs(content, false)?;
        if is_member_start(content) {
            members.push(parse_member(content, item_attrs, depth + 1)?);
        } else {
            if let Some(span) = item_attrs.first_span {
                return Err(syn::Error::new(
                    span,
                    "attributes and doc comments go on states and groups, not on rules",
                ));
            }
            body.push(parse_body(content)?);
        }
    }
    Ok(())
}

/// `attrs vis machine NAME { }`: a machine header with its body's placeholder.
fn parse_machine_header(input: ParseStream) -> syn::Result<(Attrs, Vis, Ident)> {
    let attrs = parse_attrs(input, true)?;
    let vis = if input.peek(Token![pub]) {
        input.parse::<Token![pub]>()?;
        if input.peek(syn::token::Paren) {
            let content;
            syn::parenthesized!(content in input);
            let word = content.call(syn::Ident::parse_any)?;
            if word != "crate" || !content.is_empty() {
                return Err(syn::Error::new(
                    word.span(),
                    "only `pub` and `pub(crate)` are supported here",
                ));
            }
            Vis::PubCrate
        } else {
            Vis::Pub
        }
    } else {
        Vis::Private
    };
    if !input.peek(kw::machine) {
        return Err(input.error("expected `machine`"));
    }
    input.parse::<kw::machine>()?;
    let name = parse_name(input, "a machine name")?;
    let content;
    syn::braced!(content in input);
    let _ = content;
    Ok((attrs, vis, name))
}

/// Attributes split into doc lines and the rest.
struct Attrs {
    doc: Vec<String>,
    attrs: Vec<Attr>,
    first_span: Option<Span>,
}

fn parse_attrs(input: ParseStream, allow_machine_attrs: bool) -> syn::Result<Attrs> {
    let raw = input.call(Attribute::parse_outer)?;
    let mut out = Attrs {
        doc: Vec::new(),
        attrs: Vec::new(),
        first_span: raw.first().map(|a| a.pound_token.span),
    };
    for attr in raw {
        let span = attr.pound_token.span;
        let path = attr.path();
        let name = path
            .get_ident()
            .map(|i| i.to_string())
            .unwrap_or_else(|| quote::ToTokens::to_token_stream(path).to_string());
        match name.as_str() {
            "doc" => {
                let syn::Meta::NameValue(nv) = &attr.meta else {
                    return Err(syn::Error::new(span, "expected `#[doc = \"...\"]`"));
                };
                let syn::Expr::Lit(syn::ExprLit {
                    lit: syn::Lit::Str(s),
                    ..
                }) = &nv.value
                else {
                    return Err(syn::Error::new(span, "expected a string in `#[doc = ...]`"));
                };
                let text = s.value();
                for line in text.split('\n') {
                    out.doc
                        .push(line.strip_prefix(' ').unwrap_or(line).to_string());
                }
            }
            "allow" | "warn" | "deny" => {
                let level = match name.as_str() {
                    "allow" => LevelAttr::Allow,
                    "warn" => LevelAttr::Warn,
                    _ => LevelAttr::Deny,
                };
                let lints = attr.parse_args_with(|input: ParseStream| {
                    let list =
                        syn::punctuated::Punctuated::<syn::Ident, Token![,]>::parse_terminated(
                            input,
                        )?;
                    Ok(list.into_iter().map(ident).collect::<Vec<_>>())
                })?;
                if lints.is_empty() {
                    return Err(syn::Error::new(
                        span,
                        format!("`#[{name}(...)]` needs at least one lint name"),
                    ));
                }
                out.attrs.push(Attr::Lint(level, lints, span));
            }
            "dispatch" if allow_machine_attrs => {
                let style = attr.parse_args_with(|input: ParseStream| {
                    let word = input.call(syn::Ident::parse_any)?;
                    match word.to_string().as_str() {
                        "table" => Ok(DispatchStyle::Table),
                        "match" => Ok(DispatchStyle::Match),
                        other => Err(syn::Error::new(
                            word.span(),
                            format!(
                                "unknown dispatch style `{other}`; expected `table` or `match`"
                            ),
                        )),
                    }
                })?;
                out.attrs.push(Attr::Dispatch(style, span));
            }
            "minimize" if allow_machine_attrs => {
                if !matches!(attr.meta, syn::Meta::Path(_)) {
                    return Err(syn::Error::new(span, "`#[minimize]` takes no arguments"));
                }
                out.attrs.push(Attr::Minimize(span));
            }
            "dispatch" | "minimize" => {
                return Err(syn::Error::new(
                    span,
                    format!("`#[{name}]` applies to a machine, not to a state or group"),
                ));
            }
            other => {
                let allowed = if allow_machine_attrs {
                    "`dispatch`, `minimize`, `allow`, `warn`, `deny`"
                } else {
                    "`allow`, `warn`, `deny`"
                };
                return Err(syn::Error::new(
                    span,
                    format!("unknown attribute `{other}`; expected one of {allowed}"),
                ));
            }
        }
    }
    Ok(out)
}

fn ident(i: syn::Ident) -> Ident {
    Ident {
        name: i.to_string(),
        span: i.span(),
    }
}

/// The next token's text when it is a word (identifier or keyword). Looking at a word
/// once and comparing strings is much cheaper than one syn `peek` per keyword, each of
/// which clones the token.
fn word(input: ParseStream) -> Option<Word> {
    input.cursor().ident().map(|(i, _)| Word(i))
}

/// A word looked at ahead; compares with `&str` without allocating.
struct Word(proc_macro2::Ident);

impl Word {
    fn is(&self, text: &str) -> bool {
        self.0 == text
    }
}

/// True when the word is present and one of `texts`.
fn is_one_of(w: &Option<Word>, texts: &[&str]) -> bool {
    w.as_ref().is_some_and(|w| texts.iter().any(|t| w.is(t)))
}

/// The word after the next token, when there is one.
fn word2(input: ParseStream) -> Option<Word> {
    let c = input.cursor();
    let rest = match c.punct() {
        Some((_, rest)) => rest,
        None => c.ident()?.1,
    };
    rest.ident().map(|(i, _)| Word(i))
}

/// Parses a name: a Rust identifier that is not a Rust keyword nor reserved here.
fn parse_name(input: ParseStream, what: &str) -> syn::Result<Ident> {
    input.step(|cursor| {
        let Some((i, rest)) = cursor.ident() else {
            return Err(cursor.error(format!("expected {what}")));
        };
        let text = i.to_string();
        if let Some(raw) = text.strip_prefix("r#") {
            return Ok((
                Ident {
                    name: raw.to_string(),
                    span: i.span(),
                },
                rest,
            ));
        }
        if text == "_" {
            return Err(syn::Error::new(
                i.span(),
                format!("expected {what}, found `_`"),
            ));
        }
        if is_rust_keyword(&text) {
            return Err(syn::Error::new(
                i.span(),
                format!("expected {what}, found Rust keyword `{text}`"),
            ));
        }
        if RESERVED.contains(&text.as_str()) {
            return Err(syn::Error::new(
                i.span(),
                format!("`{text}` is a reserved word and cannot name {what}"),
            ));
        }
        Ok((
            Ident {
                name: text,
                span: i.span(),
            },
            rest,
        ))
    })
}

fn try_parse_decl(input: ParseStream) -> syn::Result<Option<Decl>> {
    let span = input.span();
    let w = word(input);
    let is = |k: &str| is_one_of(&w, &[k]);
    let kind = if is("events") {
        input.parse::<kw::events>()?;
        DeclKind::Events(parse_doc_list(input, "an event name")?)
    } else if is("inputs") {
        input.parse::<kw::inputs>()?;
        DeclKind::Inputs(parse_doc_list(input, "an input name")?)
    } else if is("outputs") {
        input.parse::<kw::outputs>()?;
        DeclKind::Outputs(parse_doc_list(input, "an output name")?)
    } else if is("actions") {
        input.parse::<kw::actions>()?;
        DeclKind::Actions(parse_doc_list(input, "an action name")?)
    } else if is("start") {
        input.parse::<kw::start>()?;
        let name = parse_name(input, "the start state's name")?;
        DeclKind::Start(name)
    } else if is("unhandled") {
        input.parse::<kw::unhandled>()?;
        let policy = if input.peek(kw::complete) {
            input.parse::<kw::complete>()?;
            Policy::Complete
        } else if input.peek(kw::ignore) {
            input.parse::<kw::ignore>()?;
            Policy::Ignore
        } else if input.peek(kw::reject) {
            input.parse::<kw::reject>()?;
            Policy::Reject
        } else {
            return Err(input.error("expected `complete`, `ignore` or `reject`"));
        };
        DeclKind::Unhandled(policy)
    } else if is("never") {
        input.parse::<kw::never>()?;
        DeclKind::Never(parse_expr(input, true, 0, &mut 0)?)
    } else if is("recover") {
        input.parse::<kw::recover>()?;
        if !input.peek(kw::to) {
            return Err(input.error("expected `to` after `recover`"));
        }
        input.parse::<kw::to>()?;
        let target = parse_name(input, "a state name")?;
        let except = if input.peek(kw::except) {
            input.parse::<kw::except>()?;
            parse_list(input, "a state name")?
        } else {
            Vec::new()
        };
        DeclKind::Recover { target, except }
    } else if is("counters") {
        input.parse::<kw::counters>()?;
        DeclKind::Counters(parse_counters(input)?)
    } else if is("ensure") {
        input.parse::<kw::ensure>()?;
        let response = parse_expr(input, true, 0, &mut 0)?;
        if !input.peek(kw::within) {
            return Err(
                input.error("expected `within` and a span (`within 100 ms`, `within 3 steps`)")
            );
        }
        input.parse::<kw::within>()?;
        let within = parse_within(input)?;
        if !input.peek(kw::after) {
            return Err(input.error("expected `after` and the condition that starts the deadline"));
        }
        input.parse::<kw::after>()?;
        let trigger = parse_expr(input, true, 0, &mut 0)?;
        DeclKind::Ensure {
            response,
            within,
            trigger,
        }
    } else if is("timebase") {
        input.parse::<kw::timebase>()?;
        let event = if input.cursor().ident().is_some() {
            Some(parse_name(input, "the time base's event")?)
        } else {
            None
        };
        let period = if input.peek(syn::LitInt) || input.peek(syn::LitFloat) {
            Some(parse_duration(input)?)
        } else {
            None
        };
        DeclKind::Timebase { event, period }
    } else {
        return Ok(None);
    };
    expect_semi(input)?;
    Ok(Some(Decl { kind, span }))
}

/// `counter (',' counter)* ','?` with `counter := doc* IDENT 'to' INT`.
fn parse_counters(input: ParseStream) -> syn::Result<Vec<CounterDecl>> {
    let mut items = Vec::new();
    loop {
        let attrs = input.call(Attribute::parse_outer)?;
        let doc = doc_lines(attrs)?;
        let ident = parse_name(input, "a counter name")?;
        if !input.peek(kw::to) {
            return Err(input.error(format!(
                "expected `to` and the counter's largest value (`{} to 3`)",
                ident.name
            )));
        }
        input.parse::<kw::to>()?;
        let (max, max_span) = parse_count(input, "the counter's largest value")?;
        items.push(CounterDecl {
            doc,
            ident,
            max,
            max_span,
        });
        if input.peek(Token![,]) {
            input.parse::<Token![,]>()?;
            if input.peek(Token![;]) {
                break;
            }
        } else {
            break;
        }
    }
    Ok(items)
}

/// `duration | INT 'steps'`.
fn parse_within(input: ParseStream) -> syn::Result<Within> {
    if input.peek(syn::LitInt) && input.peek2(kw::steps) {
        let (n, span) = parse_count(input, "a number of steps")?;
        input.parse::<kw::steps>()?;
        return Ok(Within::Steps(n, span));
    }
    parse_duration(input).map(Within::Time)
}

/// The lines of doc-comment attributes; any other attribute is an error.
fn doc_lines(attrs: Vec<Attribute>) -> syn::Result<Vec<String>> {
    let mut doc = Vec::new();
    for attr in attrs {
        let is_doc = attr.path().is_ident("doc");
        let text = match (&attr.meta, is_doc) {
            (
                syn::Meta::NameValue(syn::MetaNameValue {
                    value:
                        syn::Expr::Lit(syn::ExprLit {
                            lit: syn::Lit::Str(s),
                            ..
                        }),
                    ..
                }),
                true,
            ) => s.value(),
            _ => {
                return Err(syn::Error::new(
                    attr.pound_token.span,
                    "only doc comments may stand before a name in a list",
                ))
            }
        };
        for line in text.split('\n') {
            doc.push(line.strip_prefix(' ').unwrap_or(line).to_string());
        }
    }
    Ok(doc)
}

/// A `do` list: `op (',' op)* ','?` with `op := IDENT | IDENT ('+=' | '-=' | '=') INT`,
/// stopping before `;` or `{`.
fn parse_ops(input: ParseStream) -> syn::Result<Vec<OpAst>> {
    parse_list_of(input, parse_op)
}

fn parse_op(input: ParseStream) -> syn::Result<OpAst> {
    let name = parse_name(input, "an action or counter name")?;
    let kind = if input.peek(Token![+=]) {
        input.parse::<Token![+=]>()?;
        CounterOpKind::Add
    } else if input.peek(Token![-=]) {
        input.parse::<Token![-=]>()?;
        CounterOpKind::Sub
    } else if input.peek(Token![=]) && !input.peek(Token![==]) && !input.peek(Token![=>]) {
        input.parse::<Token![=]>()?;
        CounterOpKind::Set
    } else {
        return Ok(OpAst::Action(name));
    };
    let (value, value_span) = parse_count(input, "the operation's constant")?;
    Ok(OpAst::Counter {
        name,
        kind,
        value,
        value_span,
    })
}

/// A plain whole number (no suffix, no sign).
fn parse_count(input: ParseStream, what: &str) -> syn::Result<(u64, Span)> {
    if !input.peek(syn::LitInt) {
        return Err(input.error(format!("expected {what} (a whole number)")));
    }
    let lit: syn::LitInt = input.parse()?;
    let span = lit.span();
    if !lit.suffix().is_empty() {
        return Err(syn::Error::new(span, "expected a plain whole number"));
    }
    let v: u64 = lit
        .base10_parse()
        .map_err(|_| syn::Error::new(span, "this number does not fit in 64 bits"))?;
    Ok((v, span))
}

fn expect_semi(input: ParseStream) -> syn::Result<()> {
    if input.peek(Token![;]) {
        input.parse::<Token![;]>()?;
        Ok(())
    } else {
        Err(input.error("expected `;`"))
    }
}

/// `attr* IDENT (',' attr* IDENT)* ','?` up to (not including) `;`.
fn parse_doc_list(input: ParseStream, what: &str) -> syn::Result<Vec<DocIdent>> {
    let mut items = Vec::new();
    loop {
        let doc = doc_lines(input.call(Attribute::parse_outer)?)?;
        let ident = parse_name(input, what)?;
        items.push(DocIdent { doc, ident });
        if input.peek(Token![,]) {
            input.parse::<Token![,]>()?;
            if input.peek(Token![;]) {
                break;
            }
        } else {
            break;
        }
    }
    Ok(items)
}

/// `IDENT (',' IDENT)* ','?`, stopping before `;`, `{`, or `, do`.
fn parse_list(input: ParseStream, what: &str) -> syn::Result<Vec<Ident>> {
    parse_list_of(input, |i| parse_name(i, what))
}

/// `item (',' item)* ','?`, stopping before `;`, `{`, or `, do` / `, emit`.
fn parse_list_of<T>(
    input: ParseStream,
    item: impl Fn(ParseStream) -> syn::Result<T>,
) -> syn::Result<Vec<T>> {
    let mut items = vec![item(input)?];
    while input.peek(Token![,]) && !is_one_of(&word2(input), &["do", "emit"]) {
        input.parse::<Token![,]>()?;
        if input.peek(Token![;]) || input.peek(syn::token::Brace) {
            break;
        }
        items.push(item(input)?);
    }
    Ok(items)
}

fn parse_member(input: ParseStream, attrs: Attrs, depth: usize) -> syn::Result<Member> {
    if depth >= MAX_NESTING {
        return Err(input.error(format!("groups nested deeper than {MAX_NESTING} levels")));
    }
    if input.peek(kw::group) {
        input.parse::<kw::group>()?;
        let name = parse_name(input, "a group name")?;
        let emit = parse_emit_header(input)?;
        let content;
        syn::braced!(content in input);
        let mut body = Vec::new();
        let mut members = Vec::new();
        group_content(&content, depth, &mut body, &mut members)?;
        return Ok(Member::Group(GroupAst {
            attrs: attrs.attrs,
            doc: attrs.doc,
            name,
            emit,
            body,
            members,
        }));
    }
    let terminal = if input.peek(kw::terminal) {
        input.parse::<kw::terminal>()?;
        true
    } else {
        false
    };
    if !input.peek(kw::state) {
        return Err(input.error(if terminal {
            "expected `state` after `terminal`"
        } else {
            "expected `state`, `group`, or a declaration"
        }));
    }
    input.parse::<kw::state>()?;
    let name = parse_name(input, "a state name")?;
    let emit = parse_emit_header(input)?;
    let mut body = Vec::new();
    if input.peek(Token![;]) {
        input.parse::<Token![;]>()?;
    } else if input.peek(syn::token::Brace) {
        let content;
        syn::braced!(content in input);
        while !content.is_empty() {
            if content.peek(Token![#]) {
                return Err(content
                    .error("attributes and doc comments go on states and groups, not on rules"));
            }
            if is_member_start(&content) {
                return Err(content
                    .error("a state cannot contain states or groups; use a group to nest states"));
            }
            body.push(parse_body(&content)?);
        }
    } else {
        return Err(input.error("expected `;`, `{`, or `emit` after the state name"));
    }
    Ok(Member::State(StateAst {
        attrs: attrs.attrs,
        doc: attrs.doc,
        terminal,
        name,
        emit,
        body,
    }))
}

/// A member begins with `state X`, `terminal state`, or `group X`.
fn is_member_start(input: ParseStream) -> bool {
    let w = word(input);
    if is_one_of(&w, &["state", "group"]) {
        input.peek2(syn::Ident)
    } else if is_one_of(&w, &["terminal"]) {
        is_one_of(&word2(input), &["state"])
    } else {
        false
    }
}

fn parse_emit_header(input: ParseStream) -> syn::Result<Vec<Ident>> {
    if input.peek(kw::emit) {
        input.parse::<kw::emit>()?;
        parse_list(input, "an output name")
    } else {
        Ok(Vec::new())
    }
}

fn parse_body(input: ParseStream) -> syn::Result<Body> {
    let w = word(input);
    if is_one_of(&w, &["enter", "leave"]) && is_one_of(&word2(input), &["do"]) {
        let span = input.span();
        let enter = is_one_of(&w, &["enter"]);
        if enter {
            input.parse::<kw::enter>()?;
        } else {
            input.parse::<kw::leave>()?;
        }
        input.parse::<Token![do]>()?;
        let list = parse_ops(input)?;
        expect_semi(input)?;
        return Ok(if enter {
            Body::Enter(list, span)
        } else {
            Body::Leave(list, span)
        });
    }
    parse_rule(input).map(Body::Rule)
}

/// `INT unit` or `INT_WITH_UNIT_SUFFIX` (`250 ms`, `250ms`, `40 ticks`).
pub(crate) fn parse_duration(input: ParseStream) -> syn::Result<Duration> {
    if input.peek(syn::LitFloat) {
        let f: syn::LitFloat = input.parse()?;
        return Err(syn::Error::new(
            f.span(),
            "a duration is a whole number of `ticks`, `us`, `ms` or `s` (write `1500 us`, not `1.5 ms`)",
        ));
    }
    if !input.peek(syn::LitInt) {
        return Err(input.error("expected a duration (`250 ms`, `250ms`, `40 ticks`)"));
    }
    let lit: syn::LitInt = input.parse()?;
    let span = lit.span();
    let value: u64 = lit
        .base10_parse()
        .map_err(|_| syn::Error::new(span, "this duration does not fit in 64 bits"))?;
    let unit = if lit.suffix().is_empty() {
        match word(input) {
            Some(w) => match TimeUnit::from_word(&w.0.to_string()) {
                Some(u) => {
                    input.step(|c| {
                        let (_, rest) = c.ident().ok_or_else(|| c.error("expected a unit"))?;
                        Ok(((), rest))
                    })?;
                    u
                }
                None => {
                    return Err(syn::Error::new(
                        w.0.span(),
                        format!(
                            "`{}` is not a unit of time: write `ticks`, `us`, `ms` or `s`",
                            w.0
                        ),
                    ))
                }
            },
            None => {
                return Err(
                    input.error("a duration needs its unit: `ticks`, `us`, `ms` or `s` (`250 ms`)")
                )
            }
        }
    } else {
        match TimeUnit::from_word(lit.suffix()) {
            Some(u) => u,
            None => {
                return Err(syn::Error::new(
                    span,
                    format!(
                        "`{}` is not a unit of time: write `ticks`, `us`, `ms` or `s`",
                        lit.suffix()
                    ),
                ))
            }
        }
    };
    Ok(Duration { value, unit, span })
}

fn parse_rule(input: ParseStream) -> syn::Result<RuleAst> {
    let span = input.span();
    if is_one_of(&word(input), &["after"])
        && (input.peek2(syn::LitInt) || input.peek2(syn::LitFloat))
    {
        input.parse::<kw::after>()?;
        let after = parse_duration(input)?;
        let guard = if input.peek(Token![if]) {
            input.parse::<Token![if]>()?;
            Some(parse_expr(input, false, 0, &mut 0)?)
        } else {
            if input.peek(Token![else]) {
                return Err(input
                    .error("a timeout rule cannot be an `else` rule: give it a guard, or none"));
            }
            None
        };
        return finish_rule(input, span, None, Some(after), None, guard, None);
    }
    let preempt = if is_one_of(&word(input), &["preempt"]) {
        let p: kw::preempt = input.parse()?;
        Some(p.span)
    } else {
        None
    };
    if preempt.is_some()
        && is_one_of(&word(input), &["after"])
        && (input.peek2(syn::LitInt) || input.peek2(syn::LitFloat))
    {
        return Err(input.error(
            "`preempt after`: a timeout rule cannot preempt; a group's timeouts already \
             come before its members' named rules",
        ));
    }
    let w = word(input);
    let trigger = if is_one_of(&w, &["_"]) {
        let t: Token![_] = input.parse()?;
        Some(Trigger::Wildcard(t.span))
    } else if w.is_some() && !is_one_of(&w, &["if", "else"]) {
        let mut events = vec![parse_name(input, "an event name")?];
        while input.peek(Token![|]) && !input.peek(Token![||]) {
            input.parse::<Token![|]>()?;
            events.push(parse_name(input, "an event name")?);
        }
        Some(Trigger::Events(events))
    } else {
        None
    };
    let mut otherwise = None;
    let guard = if input.peek(Token![if]) {
        input.parse::<Token![if]>()?;
        Some(parse_expr(input, false, 0, &mut 0)?)
    } else {
        if input.peek(Token![else]) {
            let e: Token![else] = input.parse()?;
            otherwise = Some(e.span);
        }
        None
    };
    finish_rule(input, span, preempt, None, trigger, guard, otherwise)
}

/// The rest of a rule, from `=>` on.
fn finish_rule(
    input: ParseStream,
    span: Span,
    preempt: Option<Span>,
    after: Option<Duration>,
    trigger: Option<Trigger>,
    guard: Option<Expr>,
    otherwise: Option<Span>,
) -> syn::Result<RuleAst> {
    if !input.peek(Token![=>]) {
        return Err(input.error(
            if trigger.is_none() && guard.is_none() && otherwise.is_none() && after.is_none() {
                "expected a rule (`Event => Target;`), `enter do`, `leave do`, a state or a group"
            } else {
                "expected `=>`"
            },
        ));
    }
    input.parse::<Token![=>]>()?;
    let target = if is_one_of(&word(input), &["stay"]) {
        let s: kw::stay = input.parse()?;
        Target::Stay(s.span)
    } else {
        Target::State(parse_name(input, "a target state or `stay`")?)
    };
    let mut emit = Vec::new();
    let mut actions = Vec::new();
    if input.peek(Token![,]) && input.peek2(kw::emit) {
        input.parse::<Token![,]>()?;
        input.parse::<kw::emit>()?;
        emit = parse_list(input, "an output name")?;
    }
    if input.peek(Token![,]) && input.peek2(Token![do]) {
        input.parse::<Token![,]>()?;
        input.parse::<Token![do]>()?;
        actions = parse_ops(input)?;
    }
    if input.peek(Token![,]) {
        return Err(input.error("expected `, emit ...` before `, do ...`, then `;`"));
    }
    expect_semi(input)?;
    Ok(RuleAst {
        preempt,
        after,
        trigger,
        guard,
        otherwise,
        target,
        emit,
        actions,
        span,
    })
}

/// Parses one guard (`property` false) or one `never` property (`property` true) from
/// tokens that hold nothing else: the expression grammar of a spec, for expressions
/// that stand alone (the state table's CSV fields).
pub(crate) fn parse_expr_tokens(tokens: TokenStream, property: bool) -> syn::Result<Expr> {
    check_token_depth(&tokens)?;
    let parser = |input: ParseStream| {
        let mut terms = 0;
        let e = parse_expr(input, property, 0, &mut terms)?;
        if !input.is_empty() {
            return Err(input.error("expected `&&`, `||` or the end of the expression"));
        }
        Ok(e)
    };
    parser.parse2(tokens)
}

fn parse_expr(
    input: ParseStream,
    props: bool,
    depth: usize,
    terms: &mut usize,
) -> syn::Result<Expr> {
    let mut operands = vec![parse_and(input, props, depth, terms)?];
    while input.peek(Token![||]) {
        input.parse::<Token![||]>()?;
        operands.push(parse_and(input, props, depth, terms)?);
    }
    Ok(balanced(operands, Expr::Or))
}

fn parse_and(
    input: ParseStream,
    props: bool,
    depth: usize,
    terms: &mut usize,
) -> syn::Result<Expr> {
    let mut operands = vec![parse_not(input, props, depth, terms)?];
    while input.peek(Token![&&]) {
        input.parse::<Token![&&]>()?;
        operands.push(parse_not(input, props, depth, terms)?);
    }
    Ok(balanced(operands, Expr::And))
}

fn parse_not(
    input: ParseStream,
    props: bool,
    depth: usize,
    terms: &mut usize,
) -> syn::Result<Expr> {
    if depth >= MAX_NESTING {
        return Err(input.error(format!(
            "expression nested deeper than {MAX_NESTING} levels"
        )));
    }
    if input.peek(Token![!]) {
        let bang: Token![!] = input.parse()?;
        let inner = parse_not(input, props, depth + 1, terms)?;
        return Ok(Expr::Not(Box::new(inner), bang.span));
    }
    if input.peek(syn::token::Paren) {
        let content;
        let paren = syn::parenthesized!(content in input);
        let inner = parse_expr(&content, props, depth + 1, terms)?;
        if !content.is_empty() {
            return Err(content.error("expected `)`, `&&` or `||`"));
        }
        return Ok(Expr::Paren(Box::new(inner), paren.span.join()));
    }
    *terms += 1;
    if *terms > MAX_TERMS {
        return Err(input.error(format!("expression has more than {MAX_TERMS} operands")));
    }
    let w = word(input);
    if is_one_of(&w, &["true", "false"]) {
        let b: syn::LitBool = input.parse()?;
        return Ok(Expr::Const(b.value, b.span));
    }
    if is_one_of(&w, &["in"]) {
        let tok: Token![in] = input.parse()?;
        if !props {
            return Err(syn::Error::new(
                tok.span,
                "`in STATE` is only allowed in `never` properties, not in guards",
            ));
        }
        let name = parse_name(input, "a state or group name")?;
        return Ok(Expr::In(name));
    }
    let what = if props {
        "an input, output, action or counter name, `in STATE`, `!`, `(`, `true` or `false`"
    } else {
        "an input or counter name, `!`, `(`, `true` or `false`"
    };
    let name = parse_name(input, what)?;
    let cmp = if input.peek(Token![==]) {
        input.parse::<Token![==]>()?;
        Cmp::Eq
    } else if input.peek(Token![!=]) {
        input.parse::<Token![!=]>()?;
        Cmp::Ne
    } else if input.peek(Token![<=]) {
        input.parse::<Token![<=]>()?;
        Cmp::Le
    } else if input.peek(Token![>=]) {
        input.parse::<Token![>=]>()?;
        Cmp::Ge
    } else if input.peek(Token![<]) {
        input.parse::<Token![<]>()?;
        Cmp::Lt
    } else if input.peek(Token![>]) {
        input.parse::<Token![>]>()?;
        Cmp::Gt
    } else {
        return Ok(Expr::Name(name));
    };
    let (value, value_span) = parse_count(input, "a constant to compare the counter with")?;
    Ok(Expr::Compare {
        name,
        cmp,
        value,
        value_span,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn items_split_at_semicolons_and_brace_groups() {
        let tokens: TokenStream =
            "events A, B; state S { A => S; } #[doc = \"x\"] group G { state T; } start S"
                .parse()
                .unwrap();
        let items = split_items(tokens);
        let texts: Vec<String> = items
            .iter()
            .map(|i| i.iter().cloned().collect::<TokenStream>().to_string())
            .collect();
        assert_eq!(texts.len(), 4, "{texts:?}");
        assert!(texts[0].starts_with("events"));
        assert!(texts[1].starts_with("state S"));
        assert!(group_item(items[2].clone()).is_ok());
        assert!(group_item(items[1].clone()).is_err());
        assert_eq!(texts[3], "start S");
    }
}
