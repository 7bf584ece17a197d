//! Graphviz DOT output of `detent draw --format dot`.
//!
//! The drawing is the one [`super::diagram`] describes (it builds every label, shared
//! with the SVG back end, and takes the rules of each state from the lowered form,
//! [`crate::model::lower`], which alone decides rule choice): states are rounded boxes whose HTML-like label holds the name
//! in bold and, below it, the Moore outputs and enter/leave actions; groups are nested
//! `cluster_N` subgraphs headed by the group name, its own Moore outputs and its
//! enter/leave actions; a small point node `start` has an edge into the start state;
//! terminal states have a double border (`peripheries=2`); a group rule that every
//! member uses leaves the cluster's border (`ltail`, with `compound=true`); each
//! (source, target) pair is one edge whose label has one left-justified line per rule
//! (`event [guard] / outputs; do actions`).
//!
//! Node ids are `s<state number>` and cluster ids `cluster_<group number>`, so no name
//! can clash with the `start` node or with DOT keywords. Edge labels are DOT quoted
//! strings ([`quote()`]); node and cluster labels are HTML-like labels ([`html`]).
//!
//! Cost: linear in the size of the drawing ([`super::diagram::transitions`]).

use super::diagram::{group_header, lifted_group_rules, state_detail, transitions_except};
use crate::model::{GroupId, Machine, StateId};
use std::fmt::Write;

/// A DOT quoted string holding `lines` as left-justified lines: `\` and `"` are escaped
/// and each line ends with `\l` (DOT's escString line break, left-justified).
pub fn quote_lines(lines: &[String]) -> String {
    let mut out = String::from("\"");
    for line in lines {
        for c in line.chars() {
            match c {
                '\\' => out.push_str("\\\\"),
                '"' => out.push_str("\\\""),
                '\n' | '\r' => out.push_str("\\l"),
                c => out.push(c),
            }
        }
        out.push_str("\\l");
    }
    out.push('"');
    out
}

/// A DOT quoted string (an identifier or a one-line label): `\` and `"` escaped, line
/// breaks as `\n`.
pub fn quote(text: &str) -> String {
    let mut out = String::from("\"");
    for c in text.chars() {
        match c {
            '\\' => out.push_str("\\\\"),
            '"' => out.push_str("\\\""),
            '\n' => out.push_str("\\n"),
            '\r' => {}
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// Text escaped for an HTML-like label: `&`, `<`, `>` and `"` as entities.
pub fn html(text: &str) -> String {
    let mut out = String::new();
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            c => out.push(c),
        }
    }
    out
}

/// An HTML-like label: the first line bold, the rest in a smaller font, one per line.
fn html_label(head: &str, rest: &[String]) -> String {
    let mut out = format!("<<b>{}</b>", html(head));
    for line in rest {
        let _ = write!(out, "<br/><font point-size=\"10\">{}</font>", html(line));
    }
    out.push('>');
    out
}

fn indent(out: &mut String, depth: usize) {
    for _ in 0..depth {
        out.push_str("  ");
    }
}

fn write_state(out: &mut String, m: &Machine, s: StateId, depth: usize) {
    let st = &m.states[s.index()];
    indent(out, depth);
    let _ = write!(
        out,
        "s{} [label={}",
        s.index(),
        html_label(&st.name, &state_detail(m, s))
    );
    if st.terminal {
        out.push_str(", peripheries=2");
    }
    out.push_str("];\n");
}

fn write_group(out: &mut String, m: &Machine, g: GroupId, depth: usize) {
    let header = group_header(m, g);
    indent(out, depth);
    let _ = writeln!(out, "subgraph cluster_{} {{", g.index());
    indent(out, depth + 1);
    let _ = writeln!(
        out,
        "label={}; labeljust=l; style=rounded; color=\"#7f93b5\";",
        html_label(&header[0], &header[1..])
    );
    write_members(out, m, Some(g), depth + 1);
    indent(out, depth);
    out.push_str("}\n");
}

/// The states and groups directly inside `parent` (the machine when `None`): states
/// first, then nested groups, each in declaration order.
fn write_members(out: &mut String, m: &Machine, parent: Option<GroupId>, depth: usize) {
    for (i, st) in m.states.iter().enumerate() {
        if st.parent == parent {
            write_state(out, m, StateId::from_index(i), depth);
        }
    }
    for (i, gr) in m.groups.iter().enumerate() {
        if gr.parent == parent {
            write_group(out, m, GroupId::from_index(i), depth);
        }
    }
}

/// The machine as a Graphviz `digraph`.
pub fn to_dot(m: &Machine) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "digraph {} {{", quote(&m.name));
    let _ = writeln!(
        out,
        "  graph [label=<<b>{}</b>>, labelloc=t, fontname=\"Helvetica\", nodesep=0.5, compound=true];",
        html(&m.name)
    );
    out.push_str(
        "  node [shape=box, style=rounded, fontname=\"Helvetica\", fontsize=12];\n  \
         edge [fontname=\"Helvetica\", fontsize=10];\n",
    );
    out.push_str("  start [shape=point, width=0.15, label=\"\"];\n");
    write_members(&mut out, m, None, 1);
    let _ = writeln!(out, "  start -> s{};", m.start.index());
    let lifted = lifted_group_rules(m);
    for t in &lifted {
        // Graphviz clips an edge at the cluster named by `ltail`; the edge starts at the
        // group's first state.
        let via = m.groups[t.group.index()].states[0];
        let bold = if t.rules.iter().any(|r| m.rules[r.index()].preempt) {
            ", style=bold, penwidth=2.5"
        } else {
            ""
        };
        let _ = writeln!(
            out,
            "  s{} -> s{} [ltail=cluster_{}, label={}{bold}];",
            via.index(),
            t.to.index(),
            t.group.index(),
            quote_lines(&t.lines)
        );
    }
    let skip: Vec<_> = lifted
        .iter()
        .flat_map(|t| t.rules.iter().copied())
        .collect();
    for t in transitions_except(m, &skip) {
        let _ = write!(out, "  s{} -> s{}", t.from.index(), t.to.index());
        let bold = if t.preempt {
            ", style=bold, penwidth=2.5"
        } else {
            ""
        };
        if t.lines.iter().any(|l| !l.is_empty()) {
            let _ = write!(out, " [label={}{bold}]", quote_lines(&t.lines));
        }
        out.push_str(";\n");
    }
    out.push_str("}\n");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escaping() {
        assert_eq!(quote("a\"b\\c\nd"), r#""a\"b\\c\nd""#);
        assert_eq!(
            quote_lines(&["x [a || !b]".into(), "say \"hi\"".into()]),
            r#""x [a || !b]\lsay \"hi\"\l""#
        );
        assert_eq!(html("a<b> & \"c\""), "a&lt;b&gt; &amp; &quot;c&quot;");
    }

    #[test]
    fn dot_of_a_small_machine() {
        let file = crate::syntax::parse_source(
            "machine M {
                events Go, Stop;
                outputs on;
                actions beep;
                start A;
                state A { Go => B, do beep; Stop => stay; }
                group G emit on {
                    Stop => A;
                    terminal state B { Go => stay; }
                }
            }",
        )
        .expect("parses");
        let (ms, errors) = crate::model::resolve_file(&file);
        assert!(errors.is_empty());
        let dot = to_dot(&ms[0]);
        // Written by hand from the conventions in the module docs.
        let expected = r##"digraph "M" {
  graph [label=<<b>M</b>>, labelloc=t, fontname="Helvetica", nodesep=0.5, compound=true];
  node [shape=box, style=rounded, fontname="Helvetica", fontsize=12];
  edge [fontname="Helvetica", fontsize=10];
  start [shape=point, width=0.15, label=""];
  s0 [label=<<b>A</b>>];
  subgraph cluster_0 {
    label=<<b>G</b><br/><font point-size="10">emit on</font>>; labeljust=l; style=rounded; color="#7f93b5";
    s1 [label=<<b>B</b><br/><font point-size="10">on</font>>, peripheries=2];
  }
  start -> s0;
  s1 -> s0 [ltail=cluster_0, label="Stop\l"];
  s0 -> s1 [label="Go / do beep\l"];
  s0 -> s0 [label="Stop\l"];
  s1 -> s1 [label="Go\l"];
}
"##;
        assert_eq!(dot, expected);
    }
}
