//! The canonical layout of a spec (`detent fmt`, and formatting in `detent lsp`): the
//! printer's layout (four-space indentation, one declaration, rule or header per line),
//! with the author's `//` and `/* */` comments and blank-line groups kept.
//!
//! Tokenizing drops plain comments, so they are read again from the source text by
//! position: a comment on a line of its own stays before the item it stood before (at
//! the item's indentation), a comment after code on the same line stays after that
//! item's printed line (trailing comments of consecutive lines are aligned), a comment
//! before a closing brace stays inside the block. Blank lines between items stay, one
//! at most; none after an opening or before a closing brace. Doc comments (`///`) are
//! part of the syntax tree and printed by the printer. The result parses to the same
//! tree, and formatting it again changes nothing.

use super::ast::*;
use super::print::{indent, print_attrs, print_decl, print_doc, print_emit, print_rule};
use super::{parse_source, SyntaxError};
use proc_macro2::Span;

/// Formats spec text in the canonical layout. A syntax error is returned as the parser
/// reports it (nothing is formatted).
pub fn format_source(text: &str) -> Result<String, SyntaxError> {
    let file = parse_source(text)?;
    let src = Src::new(text);
    let comments = scan_comments(text);
    let mut f = Formatter {
        src: &src,
        comments,
        next: 0,
        lines: Vec::new(),
        last: None,
    };
    for (i, m) in file.machines.iter().enumerate() {
        f.machine(m, i == 0);
    }
    // Comments after the last machine.
    f.flush_before(Pos::END, 0, true);
    Ok(f.finish())
}

/// A place in the source: line (0-based) and byte offset within the line.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
struct Pos {
    line: usize,
    col: usize,
}

impl Pos {
    const END: Pos = Pos {
        line: usize::MAX,
        col: 0,
    };
}

/// The source as lines, with conversions from spans.
struct Src<'a> {
    lines: Vec<&'a str>,
}

impl<'a> Src<'a> {
    fn new(text: &'a str) -> Self {
        Src {
            lines: text.split('\n').collect(),
        }
    }

    /// The position of a span's start (span columns count characters).
    fn pos(&self, span: Span) -> Pos {
        let lc = span.start();
        let line = lc.line.saturating_sub(1);
        let text = self.lines.get(line).copied().unwrap_or("");
        let col = text
            .char_indices()
            .nth(lc.column)
            .map_or(text.len(), |(b, _)| b);
        Pos { line, col }
    }

    fn is_blank(&self, line: usize) -> bool {
        self.lines.get(line).is_some_and(|l| l.trim().is_empty())
    }

    /// The first line of an item whose keyword or name is on `line`: doc comment and
    /// attribute lines directly above it belong to it.
    fn top(&self, line: usize) -> usize {
        let mut top = line;
        while top > 0 {
            let prev = self.lines[top - 1].trim_start();
            let doc = prev.starts_with("///") && !prev.starts_with("////");
            if doc || prev.starts_with("#[") {
                top -= 1;
            } else {
                break;
            }
        }
        top
    }

    /// Scans from `from` for the first of `stops` outside comments, string literals and
    /// balanced brackets opened after `from`.
    fn find(&self, from: Pos, stops: &[u8]) -> Option<(Pos, u8)> {
        let mut depth_block = 0usize;
        let mut line = from.line;
        let mut col = from.col;
        while line < self.lines.len() {
            let b = self.lines[line].as_bytes();
            while col < b.len() {
                if depth_block > 0 {
                    if b[col..].starts_with(b"*/") {
                        depth_block -= 1;
                        col += 2;
                    } else if b[col..].starts_with(b"/*") {
                        depth_block += 1;
                        col += 2;
                    } else {
                        col += 1;
                    }
                    continue;
                }
                if b[col..].starts_with(b"//") {
                    break;
                }
                if b[col..].starts_with(b"/*") {
                    depth_block += 1;
                    col += 2;
                    continue;
                }
                if b[col] == b'"' {
                    col += 1;
                    while col < b.len() && b[col] != b'"' {
                        col += if b[col] == b'\\' { 2 } else { 1 };
                    }
                    col += 1;
                    continue;
                }
                if stops.contains(&b[col]) {
                    return Some((Pos { line, col }, b[col]));
                }
                col += 1;
            }
            line += 1;
            col = 0;
        }
        None
    }

    /// The closing brace that matches the opening brace at `open`.
    fn matching_close(&self, open: Pos) -> Option<Pos> {
        let mut depth = 0usize;
        let mut at = open;
        loop {
            let (p, c) = self.find(at, b"{}")?;
            if c == b'{' {
                depth += 1;
            } else {
                depth -= 1;
                if depth == 0 {
                    return Some(p);
                }
            }
            at = Pos {
                line: p.line,
                col: p.col + 1,
            };
        }
    }
}

/// A plain comment of the source.
#[derive(Clone, Debug)]
struct Comment {
    start: Pos,
    /// The line it ends on (block comments may span lines).
    end_line: usize,
    /// The text, as written (the lines of a block comment joined by newlines).
    text: String,
    /// Only whitespace before it on its line.
    own_line: bool,
}

/// Every `//` and `/* */` comment that is not a doc comment, in order.
fn scan_comments(text: &str) -> Vec<Comment> {
    let lines: Vec<&str> = text.split('\n').collect();
    let mut out = Vec::new();
    let mut line = 0;
    let mut col = 0;
    while line < lines.len() {
        let b = lines[line].as_bytes();
        if col >= b.len() {
            line += 1;
            col = 0;
            continue;
        }
        let rest = &b[col..];
        let own_line = lines[line][..col].trim().is_empty();
        if rest.starts_with(b"//") {
            let doc = (rest.starts_with(b"///") && !rest.starts_with(b"////"))
                || rest.starts_with(b"//!");
            if !doc {
                out.push(Comment {
                    start: Pos { line, col },
                    end_line: line,
                    text: lines[line][col..].trim_end().to_string(),
                    own_line,
                });
            }
            line += 1;
            col = 0;
        } else if rest.starts_with(b"/*") {
            let doc = (rest.starts_with(b"/**") && !rest.starts_with(b"/**/"))
                || rest.starts_with(b"/*!");
            let start = Pos { line, col };
            let mut depth = 0usize;
            let mut text_out = String::new();
            let (mut l, mut c) = (line, col);
            'scan: while l < lines.len() {
                let lb = lines[l].as_bytes();
                let from = c;
                while c < lb.len() {
                    if lb[c..].starts_with(b"/*") {
                        depth += 1;
                        c += 2;
                    } else if lb[c..].starts_with(b"*/") {
                        depth -= 1;
                        c += 2;
                        if depth == 0 {
                            text_out.push_str(&lines[l][from..c]);
                            break 'scan;
                        }
                    } else {
                        c += 1;
                    }
                }
                text_out.push_str(lines[l][from..].trim_end());
                text_out.push('\n');
                l += 1;
                c = 0;
            }
            if !doc {
                out.push(Comment {
                    start,
                    end_line: l.min(lines.len().saturating_sub(1)),
                    text: text_out,
                    own_line,
                });
            }
            line = l;
            col = c;
        } else if rest[0] == b'"' {
            col += 1;
            while col < b.len() && b[col] != b'"' {
                col += if b[col] == b'\\' { 2 } else { 1 };
            }
            col += 1;
        } else {
            col += 1;
        }
    }
    out
}

/// One printed line: its code and, maybe, a trailing comment.
struct Line {
    code: String,
    trailing: Option<String>,
}

struct Formatter<'s, 'a> {
    src: &'s Src<'a>,
    comments: Vec<Comment>,
    /// The first comment not yet printed.
    next: usize,
    lines: Vec<Line>,
    /// The last source line printed from (`None` at the start of a block: no blank line
    /// goes there).
    last: Option<usize>,
}

impl Formatter<'_, '_> {
    fn push(&mut self, code: String) {
        self.lines.push(Line {
            code,
            trailing: None,
        });
    }

    /// A blank line when the source has one between the last printed line and `line`.
    fn blank_before(&mut self, line: usize) {
        if let Some(last) = self.last {
            if (last + 1..line).any(|l| self.src.is_blank(l)) {
                self.push(String::new());
            }
        }
    }

    /// Prints the comments that start before `before` (own-line ones on their own lines
    /// at `level`; a trailing one too, since its item has been printed).
    fn flush_before(&mut self, before: Pos, level: usize, keep_blank: bool) {
        while let Some(c) = self.comments.get(self.next) {
            if c.start >= before {
                break;
            }
            let c = c.clone();
            self.next += 1;
            if keep_blank {
                self.blank_before(c.start.line);
            }
            let mut first = true;
            for piece in c.text.lines() {
                let mut s = String::new();
                if first {
                    indent(&mut s, level);
                    s.push_str(piece.trim_start());
                } else {
                    // Later lines of a block comment stay as written.
                    s.push_str(piece);
                }
                first = false;
                self.push(s);
            }
            self.last = Some(c.end_line);
        }
    }

    /// Attaches the comment after the item's end (on the end's line) as trailing.
    fn trailing(&mut self, end: Pos) {
        if let Some(c) = self.comments.get(self.next) {
            let between = self
                .src
                .lines
                .get(end.line)
                .and_then(|l| l.get(end.col + 1..c.start.col))
                .unwrap_or("x");
            if !c.own_line
                && c.start.line == end.line
                && c.start.col > end.col
                && between.trim().is_empty()
            {
                let text = c.text.clone();
                let end_line = c.end_line;
                self.next += 1;
                if let Some(l) = self.lines.last_mut() {
                    l.trailing = Some(match l.trailing.take() {
                        Some(t) => format!("{t} {text}"),
                        None => text,
                    });
                }
                self.last = Some(self.last.unwrap_or(0).max(end_line));
            }
        }
    }

    /// Prints one item: the comments before it, a blank line if the source has one,
    /// its lines (already indented), its trailing comment.
    fn item(&mut self, anchor: Span, level: usize, printed: &str, stops: &[u8]) -> Pos {
        let at = self.src.pos(anchor);
        let top = self.src.top(at.line);
        let end = self.src.find(at, stops).map_or(at, |(p, _)| p);
        // Comments above the item, and any inside it (moved above it).
        let top_pos = Pos { line: top, col: 0 };
        self.flush_before(top_pos, level, true);
        self.blank_before(top);
        self.flush_before(end, level, false);
        for l in printed.lines() {
            self.push(l.to_string());
        }
        self.last = Some(end.line);
        self.trailing(end);
        end
    }

    /// Closes a block whose closing brace is at `close`: comments before it, inside.
    fn close(&mut self, close: Option<Pos>, level: usize) {
        if let Some(close) = close {
            self.flush_before(close, level + 1, true);
        }
        let mut s = String::new();
        indent(&mut s, level);
        s.push('}');
        self.push(s);
        if let Some(close) = close {
            self.last = Some(close.line);
            self.trailing(close);
        }
    }

    fn machine(&mut self, m: &MachineAst, first: bool) {
        let mut head = String::new();
        print_doc(&mut head, &m.doc, 0);
        print_attrs(&mut head, &m.attrs, 0);
        let vis = match m.vis {
            Vis::Private => "",
            Vis::Pub => "pub ",
            Vis::PubCrate => "pub(crate) ",
        };
        head.push_str(&format!("{vis}machine {} {{", m.name.name));
        // A blank line between machines, whatever the source has.
        let at = self.src.pos(m.name.span);
        let top = Pos {
            line: self.src.top(at.line),
            col: 0,
        };
        self.flush_before(top, 0, true);
        if !first && self.lines.last().is_some_and(|l| !l.code.is_empty()) {
            self.push(String::new());
        }
        let open = self.item(m.name.span, 0, &head, b"{");
        let close = self.src.matching_close(open);
        self.last = None;
        for d in &m.decls {
            let mut s = String::new();
            print_decl(&mut s, d);
            self.item(d.span, 1, &s, b";");
        }
        for member in &m.members {
            self.member(member, 1);
        }
        self.close(close, 0);
    }

    fn member(&mut self, member: &Member, level: usize) {
        let mut head = String::new();
        let (doc, attrs, name) = match member {
            Member::State(s) => (&s.doc, &s.attrs, &s.name),
            Member::Group(g) => (&g.doc, &g.attrs, &g.name),
        };
        print_doc(&mut head, doc, level);
        print_attrs(&mut head, attrs, level);
        indent(&mut head, level);
        match member {
            Member::State(s) => {
                let terminal = if s.terminal { "terminal " } else { "" };
                head.push_str(&format!(
                    "{terminal}state {}{}",
                    s.name.name,
                    print_emit(&s.emit)
                ));
            }
            Member::Group(g) => {
                head.push_str(&format!("group {}{}", g.name.name, print_emit(&g.emit)));
            }
        }
        // Where the header ends: `;` (a state without body) or `{`.
        let at = self.src.pos(name.span);
        let (open, close) = match self.src.find(at, b"{;") {
            Some((p, b'{')) => (Some(p), self.src.matching_close(p)),
            _ => (None, None),
        };
        let empty = match member {
            Member::State(s) => s.body.is_empty(),
            Member::Group(g) => g.body.is_empty() && g.members.is_empty(),
        };
        let comments_inside = match (open, close) {
            (Some(o), Some(c)) => self
                .comments
                .get(self.next..)
                .unwrap_or(&[])
                .iter()
                .any(|k| k.start > o && k.start < c),
            _ => false,
        };
        if empty && !comments_inside && !matches!(member, Member::Group(_)) {
            head.push(';');
            self.item(name.span, level, &head, b"{;");
            // The comment after the closing brace of an empty `{ }` is trailing too.
            if let Some(c) = close {
                self.last = Some(c.line);
                self.trailing(c);
            }
            return;
        }
        head.push_str(" {");
        self.item(name.span, level, &head, b"{;");
        self.last = None;
        let bodies: &[Body] = match member {
            Member::State(s) => &s.body,
            Member::Group(g) => &g.body,
        };
        for b in bodies {
            self.body(b, level + 1);
        }
        if let Member::Group(g) = member {
            for m in &g.members {
                self.member(m, level + 1);
            }
        }
        self.close(close, level);
    }

    fn body(&mut self, b: &Body, level: usize) {
        let mut s = String::new();
        indent(&mut s, level);
        let span = match b {
            Body::Enter(list, span) => {
                s.push_str(&format!("enter do {};", super::print::print_ops(list)));
                *span
            }
            Body::Leave(list, span) => {
                s.push_str(&format!("leave do {};", super::print::print_ops(list)));
                *span
            }
            Body::Rule(r) => {
                s.push_str(&print_rule(r));
                r.span
            }
        };
        self.item(span, level, &s, b";");
    }

    /// The text: lines joined, trailing comments aligned in each run of consecutive
    /// non-blank lines of one indentation (two spaces past the longest code of the
    /// run's lines that have a trailing comment).
    fn finish(mut self) -> String {
        // No blank lines at the start, none doubled, none at the end.
        while self
            .lines
            .first()
            .is_some_and(|l| l.code.is_empty() && l.trailing.is_none())
        {
            self.lines.remove(0);
        }
        let lead = |l: &Line| l.code.len() - l.code.trim_start().len();
        let mut width = vec![0usize; self.lines.len()];
        let mut i = 0;
        while i < self.lines.len() {
            let mut j = i + 1;
            if !self.lines[i].code.trim().is_empty() {
                while j < self.lines.len()
                    && !self.lines[j].code.trim().is_empty()
                    && lead(&self.lines[j]) == lead(&self.lines[i])
                {
                    j += 1;
                }
            }
            let w = self.lines[i..j]
                .iter()
                .filter(|l| l.trailing.is_some())
                .map(|l| l.code.trim_end().chars().count())
                .max()
                .unwrap_or(0);
            for slot in &mut width[i..j] {
                *slot = w;
            }
            i = j;
        }
        let mut out = String::new();
        for (l, w) in self.lines.iter().zip(width) {
            let code = l.code.trim_end();
            if code.is_empty() && l.trailing.is_none() && (out.is_empty() || out.ends_with("\n\n"))
            {
                continue;
            }
            out.push_str(code);
            if let Some(t) = &l.trailing {
                if !code.is_empty() {
                    out.push_str(&" ".repeat(w - code.chars().count() + 2));
                }
                out.push_str(t);
            }
            out.push('\n');
        }
        while out.ends_with("\n\n") {
            out.pop();
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn comments_and_blank_lines_are_kept_and_formatting_is_idempotent() {
        let text = "// header comment\n\n/// The lamp.\nmachine   Lamp {\n  events Press,Tick;   // two events\n\n\n  outputs on;\n  start Off;\n  timebase Tick 1 ms;\n  // before the states\n  state Off { Press => On; Tick => stay; }  // after off\n  state On emit on {\n    // why\n    Press => Off;\n    after 250ms => Off; // time\n    Tick => stay;\n    // last words\n  }\n}\n// the end\n";
        let out = format_source(text).unwrap();
        assert_eq!(
            out,
            "// header comment\n\n/// The lamp.\nmachine Lamp {\n    events Press, Tick;  // two events\n\n    outputs on;\n    start Off;\n    timebase Tick 1 ms;\n    // before the states\n    state Off {\n        Press => On;\n        Tick => stay;\n    }  // after off\n    state On emit on {\n        // why\n        Press => Off;\n        after 250 ms => Off;  // time\n        Tick => stay;\n        // last words\n    }\n}\n// the end\n"
        );
        assert_eq!(format_source(&out).unwrap(), out);
    }

    #[test]
    fn a_syntax_error_formats_nothing() {
        assert!(format_source("machine M { state }").is_err());
    }
}
