//! The parser's fast path: the common items (declarations, states with their rules,
//! rules and enter/leave lines of groups) parsed straight from `proc_macro2` token
//! trees, without syn's token buffers.
//!
//! It accepts only what the syn-based parser in [`super::parse`] accepts, builds the
//! same tree (same spans: every span is taken from the same token), and gives up
//! (`None`) on anything else: a token it does not expect, a name the language
//! refuses, an attribute other than a doc comment, a nesting or operand limit. The
//! caller then parses the item with syn, which reports the error exactly as before.
//! So errors never come from here, and this code only has to be right on input it
//! accepts; `compiler/tests/parse_fast.rs` compares both paths on every spec of the
//! repository, on random specs and on mutated (mostly invalid) ones.

use super::ast::*;
use super::lexicon::{is_rust_keyword, MAX_NESTING, MAX_TERMS, RESERVED};
extern crate proc_macro;

use proc_macro2::{Delimiter, Group, Spacing, TokenStream, TokenTree};

/// How the parser may use the fast path.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FastPath {
    /// Every item goes through syn (the reference behaviour).
    Off,
    /// Fast path; a state body's tokens are copied out of its group (tokens made by
    /// rustc inside a proc macro are cheap handles, and a group rebuilt from its
    /// tokens would lose its separate open and close spans there).
    Copy,
    /// Fast path; a state body's tokens are moved out of its group and the group is
    /// rebuilt exactly (same tokens, same span) when the fast path gives up. Only for
    /// `proc_macro2`'s own tokens, whose groups carry one span.
    Move,
    /// [`FastPath::Move`] outside a proc macro, [`FastPath::Copy`] inside one.
    Auto,
}

impl FastPath {
    /// `Auto` made concrete for the running process.
    pub(crate) fn resolve(self) -> FastPath {
        match self {
            FastPath::Auto if proc_macro::is_available() => FastPath::Copy,
            FastPath::Auto => FastPath::Move,
            other => other,
        }
    }
}

/// What an item turned out to be.
pub(crate) enum Item {
    Decl(Decl),
    Member(Member),
    Body(Body),
}

/// A cursor over a slice of token trees.
struct P<'a> {
    t: &'a [TokenTree],
    i: usize,
}

impl<'a> P<'a> {
    fn new(t: &'a [TokenTree]) -> Option<Self> {
        // syn looks through invisible groups; this parser does not, so it leaves
        // every item holding one to syn.
        if t.iter()
            .any(|t| matches!(t, TokenTree::Group(g) if g.delimiter() == Delimiter::None))
        {
            return None;
        }
        Some(P { t, i: 0 })
    }

    fn done(&self) -> bool {
        self.i >= self.t.len()
    }

    fn ident_at(&self, k: usize) -> Option<&'a proc_macro2::Ident> {
        match self.t.get(self.i + k) {
            Some(TokenTree::Ident(i)) => Some(i),
            _ => None,
        }
    }

    /// The next token is the word `w` (a raw identifier `r#w` is not).
    fn word(&self, w: &str) -> bool {
        self.ident_at(0).is_some_and(|i| i == w)
    }

    /// The token after the next one is the word `w`.
    fn word2(&self, w: &str) -> bool {
        self.ident_at(1).is_some_and(|i| i == w)
    }

    fn punct_at(&self, k: usize) -> Option<&'a proc_macro2::Punct> {
        match self.t.get(self.i + k) {
            Some(TokenTree::Punct(p)) => Some(p),
            _ => None,
        }
    }

    /// The next token is the punctuation `c`, whatever its spacing (syn's `peek`).
    fn punct(&self, c: char) -> bool {
        self.punct_at(0).is_some_and(|p| p.as_char() == c)
    }

    /// The next tokens are the two-character operator `ab`: `a` joint, then `b`
    /// (syn's `peek` of a two-character token).
    fn punct2(&self, a: char, b: char) -> bool {
        self.punct_at(0)
            .is_some_and(|p| p.as_char() == a && p.spacing() == Spacing::Joint)
            && self.punct_at(1).is_some_and(|p| p.as_char() == b)
    }

    fn brace(&self) -> bool {
        matches!(self.t.get(self.i), Some(TokenTree::Group(g)) if g.delimiter() == Delimiter::Brace)
    }

    /// A name, as `parse::parse_name` reads it; `None` where that is an error.
    fn name(&mut self) -> Option<Ident> {
        let i = self.ident_at(0)?;
        let text = i.to_string();
        let name = if let Some(raw) = text.strip_prefix("r#") {
            raw.to_string()
        } else {
            if text == "_" || is_rust_keyword(&text) || RESERVED.contains(&text.as_str()) {
                return None;
            }
            text
        };
        self.i += 1;
        Some(Ident {
            name,
            span: i.span(),
        })
    }

    /// `IDENT (',' IDENT)* ','?`, stopping before `;`, `{`, `, do` or `, emit`.
    fn list(&mut self) -> Option<Vec<Ident>> {
        let mut items = vec![self.name()?];
        while self.punct(',') && !(self.word2("do") || self.word2("emit")) {
            self.i += 1;
            if self.punct(';') || self.brace() {
                break;
            }
            items.push(self.name()?);
        }
        Some(items)
    }

    /// `;`
    fn semi(&mut self) -> Option<()> {
        if self.punct(';') {
            self.i += 1;
            Some(())
        } else {
            None
        }
    }

    /// Outer attributes, when all are doc comments: their lines.
    fn docs(&mut self) -> Option<Vec<String>> {
        let mut doc = Vec::new();
        while self.punct('#') {
            let Some(TokenTree::Group(g)) = self.t.get(self.i + 1) else {
                return None;
            };
            if g.delimiter() != Delimiter::Bracket {
                return None;
            }
            doc_lines(g, &mut doc)?;
            self.i += 2;
        }
        Some(doc)
    }

    /// A rule or an `enter do` / `leave do` line, as `parse::parse_body` reads it.
    fn body(&mut self) -> Option<Body> {
        let first = self.t.get(self.i)?;
        let span = match first {
            TokenTree::Ident(i) => i.span(),
            TokenTree::Punct(p) => p.span(),
            _ => return None,
        };
        if (self.word("enter") || self.word("leave")) && self.word2("do") {
            let enter = self.word("enter");
            self.i += 2;
            let list: Vec<OpAst> = self.list()?.into_iter().map(OpAst::Action).collect();
            self.semi()?;
            return Some(if enter {
                Body::Enter(list, span)
            } else {
                Body::Leave(list, span)
            });
        }
        let trigger = match self.ident_at(0) {
            Some(w) if w == "_" => {
                self.i += 1;
                Some(Trigger::Wildcard(span))
            }
            Some(w) if w != "if" => {
                let mut events = vec![self.name()?];
                while self.punct('|') && !self.punct2('|', '|') {
                    self.i += 1;
                    events.push(self.name()?);
                }
                Some(Trigger::Events(events))
            }
            _ => None,
        };
        let guard = if self.word("if") {
            self.i += 1;
            Some(self.expr(false, 0, &mut 0)?)
        } else {
            None
        };
        if !self.punct2('=', '>') {
            return None;
        }
        self.i += 2;
        let target = if self.word("stay") {
            let s = self.ident_at(0)?.span();
            self.i += 1;
            Target::Stay(s)
        } else {
            Target::State(self.name()?)
        };
        let mut emit = Vec::new();
        let mut actions = Vec::new();
        if self.punct(',') && self.word2("emit") {
            self.i += 2;
            emit = self.list()?;
        }
        if self.punct(',') && self.word2("do") {
            self.i += 2;
            actions = self.list()?.into_iter().map(OpAst::Action).collect();
        }
        if self.punct(',') {
            return None;
        }
        self.semi()?;
        Some(Body::Rule(RuleAst {
            // `preempt` and `else` rules are left to the full parser.
            preempt: None,
            after: None,
            trigger,
            guard,
            otherwise: None,
            target,
            emit,
            actions,
            span,
        }))
    }

    fn expr(&mut self, props: bool, depth: usize, terms: &mut usize) -> Option<Expr> {
        let mut operands = vec![self.and(props, depth, terms)?];
        while self.punct2('|', '|') {
            self.i += 2;
            operands.push(self.and(props, depth, terms)?);
        }
        Some(balanced(operands, Expr::Or))
    }

    fn and(&mut self, props: bool, depth: usize, terms: &mut usize) -> Option<Expr> {
        let mut operands = vec![self.not(props, depth, terms)?];
        while self.punct2('&', '&') {
            self.i += 2;
            operands.push(self.not(props, depth, terms)?);
        }
        Some(balanced(operands, Expr::And))
    }

    fn not(&mut self, props: bool, depth: usize, terms: &mut usize) -> Option<Expr> {
        if depth >= MAX_NESTING {
            return None;
        }
        if let Some(p) = self.punct_at(0).filter(|p| p.as_char() == '!') {
            self.i += 1;
            let inner = self.not(props, depth + 1, terms)?;
            return Some(Expr::Not(Box::new(inner), p.span()));
        }
        if let Some(TokenTree::Group(g)) = self.t.get(self.i) {
            if g.delimiter() != Delimiter::Parenthesis {
                return None;
            }
            let tokens: Vec<TokenTree> = g.stream().into_iter().collect();
            let mut inner_p = P::new(&tokens)?;
            let inner = inner_p.expr(props, depth + 1, terms)?;
            if !inner_p.done() {
                return None;
            }
            self.i += 1;
            return Some(Expr::Paren(Box::new(inner), g.span()));
        }
        *terms += 1;
        if *terms > MAX_TERMS {
            return None;
        }
        if let Some(w) = self.ident_at(0) {
            let value = w == "true";
            if value || w == "false" {
                self.i += 1;
                return Some(Expr::Const(value, w.span()));
            }
            if w == "in" {
                if !props {
                    return None;
                }
                self.i += 1;
                return Some(Expr::In(self.name()?));
            }
        }
        self.name().map(Expr::Name)
    }

    /// `events`, `inputs`, `outputs`, `actions`, `start`, `unhandled`, `never`,
    /// `recover`, as `parse::try_parse_decl` reads them. `None` also when the next
    /// word is no declaration keyword.
    fn decl(&mut self) -> Option<Decl> {
        let w = self.ident_at(0)?;
        let span = w.span();
        let list = |p: &mut Self| {
            p.i += 1;
            p.doc_list()
        };
        let kind = if w == "events" {
            DeclKind::Events(list(self)?)
        } else if w == "inputs" {
            DeclKind::Inputs(list(self)?)
        } else if w == "outputs" {
            DeclKind::Outputs(list(self)?)
        } else if w == "actions" {
            DeclKind::Actions(list(self)?)
        } else if w == "start" {
            self.i += 1;
            DeclKind::Start(self.name()?)
        } else if w == "unhandled" {
            self.i += 1;
            let policy = if self.word("complete") {
                Policy::Complete
            } else if self.word("ignore") {
                Policy::Ignore
            } else if self.word("reject") {
                Policy::Reject
            } else {
                return None;
            };
            self.i += 1;
            DeclKind::Unhandled(policy)
        } else if w == "never" {
            self.i += 1;
            DeclKind::Never(self.expr(true, 0, &mut 0)?)
        } else if w == "recover" {
            self.i += 1;
            if !self.word("to") {
                return None;
            }
            self.i += 1;
            let target = self.name()?;
            let except = if self.word("except") {
                self.i += 1;
                self.list()?
            } else {
                Vec::new()
            };
            DeclKind::Recover { target, except }
        } else {
            return None;
        };
        self.semi()?;
        Some(Decl { kind, span })
    }

    /// `attr* IDENT (',' attr* IDENT)* ','?` up to (not including) `;`.
    fn doc_list(&mut self) -> Option<Vec<DocIdent>> {
        let mut items = Vec::new();
        loop {
            let doc = self.docs()?;
            let ident = self.name()?;
            items.push(DocIdent { doc, ident });
            if self.punct(',') {
                self.i += 1;
                if self.punct(';') {
                    break;
                }
            } else {
                break;
            }
        }
        Some(items)
    }

    /// The head of a state, `terminal? state NAME (emit LIST)?`, as
    /// `parse::parse_member` reads it; the caller parses what follows (`;` or the
    /// body).
    fn state_head(&mut self) -> Option<(bool, Ident, Vec<Ident>)> {
        let terminal = self.word("terminal");
        if terminal {
            self.i += 1;
        }
        if !self.word("state") {
            return None;
        }
        self.i += 1;
        let name = self.name()?;
        let emit = if self.word("emit") {
            self.i += 1;
            self.list()?
        } else {
            Vec::new()
        };
        Some((terminal, name, emit))
    }
}

/// The lines of `#[doc = "..."]` (the bracket group `g`), as `parse::parse_attrs`
/// splits them; `None` for any other attribute, and for a string whose value needs
/// unescaping (syn's job).
fn doc_lines(g: &Group, doc: &mut Vec<String>) -> Option<()> {
    let tokens: Vec<TokenTree> = g.stream().into_iter().collect();
    let [TokenTree::Ident(path), TokenTree::Punct(eq), TokenTree::Literal(lit)] = &tokens[..]
    else {
        return None;
    };
    if path != "doc" || eq.as_char() != '=' {
        return None;
    }
    let repr = lit.to_string();
    let value = string_value(&repr)?;
    for line in value.split('\n') {
        doc.push(line.strip_prefix(' ').unwrap_or(line).to_string());
    }
    Some(())
}

/// The value of a string literal without escapes or carriage returns (`"..."`, or raw
/// `r#"..."#` as rustc writes doc comments), with no suffix.
fn string_value(repr: &str) -> Option<&str> {
    let inner = if let Some(rest) = repr.strip_prefix('r') {
        let hashes = rest.len() - rest.trim_start_matches('#').len();
        let body = rest[hashes..].strip_prefix('"')?;
        let body = body.strip_suffix(&rest[..hashes])?;
        let body = body.strip_suffix('"')?;
        // A raw string holds no `"` followed by its hashes before the end.
        if body.contains(&format!("\"{}", &rest[..hashes])) {
            return None;
        }
        body
    } else {
        let body = repr.strip_prefix('"')?.strip_suffix('"')?;
        if body.contains(['\\', '"']) {
            return None;
        }
        body
    };
    if inner.contains('\r') {
        return None;
    }
    Some(inner)
}

/// A state item (`docs? terminal? state NAME (emit LIST)? (; | { BODY })`) at group
/// depth `depth`; on `None`, `tokens` is as it was.
fn state_item(tokens: &mut Vec<TokenTree>, depth: usize, mode: FastPath) -> Option<Member> {
    if depth >= MAX_NESTING {
        return None;
    }
    let (doc, terminal, name, emit, has_body) = {
        let mut p = P::new(tokens)?;
        let doc = p.docs()?;
        let (terminal, name, emit) = p.state_head()?;
        if p.punct(';') {
            p.i += 1;
            if !p.done() {
                return None;
            }
            (doc, terminal, name, emit, false)
        } else if p.brace() && p.i + 1 == p.t.len() {
            (doc, terminal, name, emit, true)
        } else {
            return None;
        }
    };
    let body = if has_body {
        state_body(tokens, mode)?
    } else {
        Vec::new()
    };
    Some(Member::State(StateAst {
        attrs: Vec::new(),
        doc,
        terminal,
        name,
        emit,
        body,
    }))
}

/// The rules of the brace group that ends `tokens`; on `None`, `tokens` is as it was.
fn state_body(tokens: &mut Vec<TokenTree>, mode: FastPath) -> Option<Vec<Body>> {
    if mode != FastPath::Move {
        let Some(TokenTree::Group(g)) = tokens.last() else {
            return None;
        };
        let inner: Vec<TokenTree> = g.stream().into_iter().collect();
        return state_rules(&inner);
    }
    let Some(TokenTree::Group(g)) = tokens.pop() else {
        unreachable!("the caller saw the brace group");
    };
    let span = g.span();
    let stream = g.stream();
    // The group's stream is shared until the group is gone; alone, it gives its
    // tokens up without copying them.
    drop(g);
    let inner: Vec<TokenTree> = stream.into_iter().collect();
    let rules = state_rules(&inner);
    if rules.is_none() {
        let mut g = Group::new(Delimiter::Brace, inner.into_iter().collect::<TokenStream>());
        g.set_span(span);
        tokens.push(TokenTree::Group(g));
    }
    rules
}

/// The inside of a state's braces: rules and enter/leave lines only.
fn state_rules(inner: &[TokenTree]) -> Option<Vec<Body>> {
    let mut p = P::new(inner)?;
    let mut body = Vec::new();
    while !p.done() {
        // Attributes and members are errors here, and a rule whose event is named
        // `state`, `group` or `terminal` is rare: syn sorts these out.
        if p.punct('#') || p.word("state") || p.word("group") || p.word("terminal") {
            return None;
        }
        body.push(p.body()?);
    }
    Some(body)
}

/// An item of a machine body other than a group: a declaration or a state.
pub(crate) fn machine_item(tokens: &mut Vec<TokenTree>, mode: FastPath) -> Option<Item> {
    let state = {
        let p = P::new(tokens)?;
        p.punct('#') || p.word("state") || p.word("terminal")
    };
    if state {
        return state_item(tokens, 0, mode).map(Item::Member);
    }
    let mut p = P::new(tokens)?;
    let decl = p.decl()?;
    p.done().then_some(Item::Decl(decl))
}

/// An item of the body of a group at depth `depth` other than a nested group: a
/// state, a rule, or an enter/leave line.
pub(crate) fn group_item(
    tokens: &mut Vec<TokenTree>,
    depth: usize,
    mode: FastPath,
) -> Option<Item> {
    let (member, docs_end) = {
        let mut p = P::new(tokens)?;
        p.docs()?;
        (group_member_start(&p)?, p.i)
    };
    if member {
        return state_item(tokens, depth + 1, mode).map(Item::Member);
    }
    if docs_end != 0 {
        return None;
    }
    let mut p = P::new(tokens)?;
    let body = p.body()?;
    p.done().then_some(Item::Body(body))
}

/// Whether a group body item (after its doc comments) is a state, as
/// `parse::is_member_start` decides; `None` where the fast path leaves it to syn.
fn group_member_start(p: &P) -> Option<bool> {
    Some(if p.word("state") {
        // `parse::is_member_start`: `state` and a word syn takes for an identifier.
        match p.ident_at(1) {
            Some(i) => {
                let text = i.to_string();
                if text == "_" || is_rust_keyword(&text) {
                    return None;
                }
                true
            }
            None => return None,
        }
    } else if p.word("terminal") {
        if !p.word2("state") {
            return None;
        }
        true
    } else {
        if p.word("group") {
            return None;
        }
        false
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tokens(text: &str) -> Vec<TokenTree> {
        text.parse::<TokenStream>().unwrap().into_iter().collect()
    }

    /// The tokens as text, with every group's span, to see that a refused item is
    /// handed back exactly as it came.
    fn show(tokens: &[TokenTree]) -> String {
        let mut out = String::new();
        for t in tokens {
            out.push_str(&format!("{t} {:?};", t.span()));
            if let TokenTree::Group(g) = t {
                let inner: Vec<TokenTree> = g.stream().into_iter().collect();
                out.push_str(&format!(
                    "[{:?} {:?} {}]",
                    g.span_open(),
                    g.span_close(),
                    show(&inner)
                ));
            }
        }
        out
    }

    #[test]
    fn common_items_take_the_fast_path() {
        for mode in [FastPath::Move, FastPath::Copy] {
            for text in [
                "events A, B;",
                "inputs /// doc\n a, b,;",
                "start S;",
                "never a && !(b || in S);",
                "/// doc\n state S emit o { A if a => T, emit o; B => stay, do x; _ => S; }",
                "terminal state S;",
            ] {
                let mut t = tokens(text);
                assert!(machine_item(&mut t, mode).is_some(), "{mode:?}: {text}");
            }
            for text in [
                "state S { enter do a; A => S; }",
                "A | B if !a => S;",
                "leave do a, b;",
                "terminal state T emit o;",
            ] {
                let mut t = tokens(text);
                assert!(group_item(&mut t, 0, mode).is_some(), "{mode:?}: {text}");
            }
        }
    }

    #[test]
    fn other_items_are_handed_back_unchanged() {
        for mode in [FastPath::Move, FastPath::Copy] {
            for text in [
                "state S { A => S; B => ; }",
                "state S { #[allow(x)] A => S; }",
                "state S { state T; }",
                "#[allow(dead_end)] state S { A => S; }",
                "state fn { A => S; }",
                "events A B;",
                "/// doc\n events A;",
                "unhandled maybe;",
                "state S { A if (a b) => S; }",
            ] {
                let mut t = tokens(text);
                let before = show(&t);
                assert!(machine_item(&mut t, mode).is_none(), "{mode:?}: {text}");
                assert_eq!(show(&t), before, "{mode:?}: {text}");
            }
        }
    }

    #[test]
    fn nesting_and_operand_limits_are_left_to_syn() {
        let deep = format!(
            "state S {{ A if {}a{} => S; }}",
            "(".repeat(MAX_NESTING + 1),
            ")".repeat(MAX_NESTING + 1)
        );
        assert!(machine_item(&mut tokens(&deep), FastPath::Move).is_none());
        let long = format!("state S {{ A if a{} => S; }}", " && a".repeat(MAX_TERMS));
        assert!(machine_item(&mut tokens(&long), FastPath::Move).is_none());
        let ok = format!(
            "state S {{ A if a{} => S; }}",
            " && a".repeat(MAX_TERMS - 1)
        );
        assert!(machine_item(&mut tokens(&ok), FastPath::Move).is_some());
        let mut member = tokens("state S;");
        assert!(group_item(&mut member, MAX_NESTING - 1, FastPath::Move).is_none());
        assert!(group_item(&mut member, MAX_NESTING - 2, FastPath::Move).is_some());
    }
}
