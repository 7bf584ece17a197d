//! Pretty-printing a syntax tree back to spec text that parses again.
//!
//! Used by `minimize --format spec`, by `import`, and by the round-trip property
//! tests. Layout: four-space indentation, one declaration or rule per line.

use super::ast::*;
use std::fmt::Write;

/// Prints a whole file.
pub fn print_file(file: &File) -> String {
    let mut out = String::new();
    for (i, m) in file.machines.iter().enumerate() {
        if i > 0 {
            out.push('\n');
        }
        print_machine(&mut out, m);
    }
    out
}

/// Prints one machine.
pub fn print_machine(out: &mut String, m: &MachineAst) {
    print_doc(out, &m.doc, 0);
    print_attrs(out, &m.attrs, 0);
    let vis = match m.vis {
        Vis::Private => "",
        Vis::Pub => "pub ",
        Vis::PubCrate => "pub(crate) ",
    };
    let _ = writeln!(out, "{vis}machine {} {{", m.name.name);
    for d in &m.decls {
        print_decl(out, d);
    }
    for member in &m.members {
        out.push('\n');
        print_member(out, member, 1);
    }
    out.push_str("}\n");
}

pub(crate) fn indent(out: &mut String, level: usize) {
    for _ in 0..level {
        out.push_str("    ");
    }
}

pub(crate) fn print_doc(out: &mut String, doc: &[String], level: usize) {
    for line in doc {
        indent(out, level);
        if line.is_empty() {
            out.push_str("///\n");
        } else {
            let _ = writeln!(out, "/// {line}");
        }
    }
}

pub(crate) fn print_attrs(out: &mut String, attrs: &[Attr], level: usize) {
    for a in attrs {
        indent(out, level);
        match a {
            Attr::Dispatch(DispatchStyle::Table, _) => out.push_str("#[dispatch(table)]\n"),
            Attr::Dispatch(DispatchStyle::Match, _) => out.push_str("#[dispatch(match)]\n"),
            Attr::Minimize(_) => out.push_str("#[minimize]\n"),
            Attr::Lint(level, lints, _) => {
                let word = match level {
                    LevelAttr::Allow => "allow",
                    LevelAttr::Warn => "warn",
                    LevelAttr::Deny => "deny",
                };
                let _ = writeln!(out, "#[{word}({})]", names(lints));
            }
        }
    }
}

fn names(list: &[Ident]) -> String {
    list.iter()
        .map(|i| i.name.as_str())
        .collect::<Vec<_>>()
        .join(", ")
}

/// A `do` list as written: `beep, strikes += 1`.
pub fn print_ops(list: &[OpAst]) -> String {
    list.iter()
        .map(|op| match op {
            OpAst::Action(i) => i.name.clone(),
            OpAst::Counter {
                name, kind, value, ..
            } => format!("{} {} {value}", name.name, kind.symbol()),
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// An `ensure` span as written: `100 ms`, `3 steps`.
pub fn print_within(w: &Within) -> String {
    match w {
        Within::Time(d) => print_duration(d),
        Within::Steps(n, _) => format!("{n} steps"),
    }
}

fn print_doc_list(out: &mut String, keyword: &str, list: &[DocIdent]) {
    if list.iter().all(|d| d.doc.is_empty()) {
        let joined = list
            .iter()
            .map(|d| d.ident.name.as_str())
            .collect::<Vec<_>>()
            .join(", ");
        let _ = writeln!(out, "    {keyword} {joined};");
        return;
    }
    let _ = writeln!(out, "    {keyword}");
    for (i, d) in list.iter().enumerate() {
        print_doc(out, &d.doc, 2);
        let sep = if i + 1 == list.len() { ";" } else { "," };
        let _ = writeln!(out, "        {}{sep}", d.ident.name);
    }
}

pub(crate) fn print_decl(out: &mut String, d: &Decl) {
    match &d.kind {
        DeclKind::Events(l) => print_doc_list(out, "events", l),
        DeclKind::Inputs(l) => print_doc_list(out, "inputs", l),
        DeclKind::Outputs(l) => print_doc_list(out, "outputs", l),
        DeclKind::Actions(l) => print_doc_list(out, "actions", l),
        DeclKind::Start(s) => {
            let _ = writeln!(out, "    start {};", s.name);
        }
        DeclKind::Unhandled(p) => {
            let _ = writeln!(out, "    unhandled {};", p.keyword());
        }
        DeclKind::Never(e) => {
            let _ = writeln!(out, "    never {};", print_expr(e));
        }
        DeclKind::Recover { target, except } => {
            if except.is_empty() {
                let _ = writeln!(out, "    recover to {};", target.name);
            } else {
                let _ = writeln!(
                    out,
                    "    recover to {} except {};",
                    target.name,
                    names(except)
                );
            }
        }
        DeclKind::Counters(list) => {
            let item = |c: &CounterDecl| format!("{} to {}", c.ident.name, c.max);
            if list.iter().all(|c| c.doc.is_empty()) {
                let joined = list.iter().map(item).collect::<Vec<_>>().join(", ");
                let _ = writeln!(out, "    counters {joined};");
            } else {
                let _ = writeln!(out, "    counters");
                for (i, c) in list.iter().enumerate() {
                    print_doc(out, &c.doc, 2);
                    let sep = if i + 1 == list.len() { ";" } else { "," };
                    let _ = writeln!(out, "        {}{sep}", item(c));
                }
            }
        }
        DeclKind::Ensure {
            response,
            within,
            trigger,
        } => {
            let _ = writeln!(
                out,
                "    ensure {} within {} after {};",
                print_expr(response),
                print_within(within),
                print_expr(trigger)
            );
        }
        DeclKind::Timebase { event, period } => {
            out.push_str("    timebase");
            if let Some(e) = event {
                let _ = write!(out, " {}", e.name);
            }
            if let Some(p) = period {
                let _ = write!(out, " {}", print_duration(p));
            }
            out.push_str(";\n");
        }
    }
}

/// A duration as `250 ms`.
pub fn print_duration(d: &Duration) -> String {
    format!("{} {}", d.value, d.unit.keyword())
}

pub(crate) fn print_emit(list: &[Ident]) -> String {
    if list.is_empty() {
        String::new()
    } else {
        format!(" emit {}", names(list))
    }
}

fn print_member(out: &mut String, member: &Member, level: usize) {
    match member {
        Member::State(s) => {
            print_doc(out, &s.doc, level);
            print_attrs(out, &s.attrs, level);
            indent(out, level);
            let terminal = if s.terminal { "terminal " } else { "" };
            let _ = write!(
                out,
                "{terminal}state {}{}",
                s.name.name,
                print_emit(&s.emit)
            );
            if s.body.is_empty() {
                out.push_str(";\n");
            } else {
                out.push_str(" {\n");
                for b in &s.body {
                    print_body(out, b, level + 1);
                }
                indent(out, level);
                out.push_str("}\n");
            }
        }
        Member::Group(g) => {
            print_doc(out, &g.doc, level);
            print_attrs(out, &g.attrs, level);
            indent(out, level);
            let _ = writeln!(out, "group {}{} {{", g.name.name, print_emit(&g.emit));
            for b in &g.body {
                print_body(out, b, level + 1);
            }
            for m in &g.members {
                print_member(out, m, level + 1);
            }
            indent(out, level);
            out.push_str("}\n");
        }
    }
}

fn print_body(out: &mut String, b: &Body, level: usize) {
    indent(out, level);
    match b {
        Body::Enter(list, _) => {
            let _ = writeln!(out, "enter do {};", print_ops(list));
        }
        Body::Leave(list, _) => {
            let _ = writeln!(out, "leave do {};", print_ops(list));
        }
        Body::Rule(r) => {
            out.push_str(&print_rule(r));
            out.push('\n');
        }
    }
}

/// Prints one rule, without indentation or newline.
pub fn print_rule(r: &RuleAst) -> String {
    let mut s = String::new();
    if r.preempt.is_some() {
        s.push_str("preempt ");
    }
    if let Some(d) = &r.after {
        let _ = write!(s, "after {} ", print_duration(d));
    }
    match &r.trigger {
        Some(Trigger::Events(evs)) => {
            s.push_str(
                &evs.iter()
                    .map(|e| e.name.as_str())
                    .collect::<Vec<_>>()
                    .join(" | "),
            );
            s.push(' ');
        }
        Some(Trigger::Wildcard(_)) => s.push_str("_ "),
        None => {}
    }
    if let Some(g) = &r.guard {
        let _ = write!(s, "if {} ", print_expr(g));
    } else if r.otherwise.is_some() {
        s.push_str("else ");
    }
    s.push_str("=> ");
    match &r.target {
        Target::Stay(_) => s.push_str("stay"),
        Target::State(t) => s.push_str(&t.name),
    }
    if !r.emit.is_empty() {
        let _ = write!(s, ", emit {}", names(&r.emit));
    }
    if !r.actions.is_empty() {
        let _ = write!(s, ", do {}", print_ops(&r.actions));
    }
    s.push(';');
    s
}

/// Prints an expression with the minimum parentheses its structure needs (plus the
/// author's own, kept as [`Expr::Paren`]).
pub fn print_expr(e: &Expr) -> String {
    fn go(e: &Expr, out: &mut String, ctx: u8) {
        // ctx: 0 = top / inside `||`, 1 = inside `&&`, 2 = under `!`
        match e {
            Expr::Name(i) => out.push_str(&i.name),
            Expr::Compare {
                name, cmp, value, ..
            } => {
                out.push_str(&format!("{} {} {value}", name.name, cmp.symbol()));
            }
            Expr::In(i) => {
                out.push_str("in ");
                out.push_str(&i.name);
            }
            Expr::Const(b, _) => out.push_str(if *b { "true" } else { "false" }),
            Expr::Not(inner, _) => {
                out.push('!');
                go(inner, out, 2);
            }
            Expr::Paren(inner, _) => {
                out.push('(');
                go(inner, out, 0);
                out.push(')');
            }
            Expr::And(a, b) => {
                let wrap = ctx >= 2;
                if wrap {
                    out.push('(');
                }
                go(a, out, 1);
                out.push_str(" && ");
                go(b, out, 1);
                if wrap {
                    out.push(')');
                }
            }
            Expr::Or(a, b) => {
                let wrap = ctx >= 1;
                if wrap {
                    out.push('(');
                }
                go(a, out, 0);
                out.push_str(" || ");
                go(b, out, 0);
                if wrap {
                    out.push(')');
                }
            }
        }
    }
    let mut s = String::new();
    go(e, &mut s, 0);
    s
}
