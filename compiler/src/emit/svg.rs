//! State diagrams drawn by detent itself, as SVG, with no Graphviz needed.
//!
//! The input is a machine-independent [`Diagram`] (nodes, labelled edges, nested
//! clusters, an optional start node); [`layout`] computes a layered drawing of it
//! (breadth-first layering cluster by cluster, virtual nodes, label boxes on their own
//! ranks, barycenter crossing reduction with clusters kept contiguous, constrained
//! median placement with empty strips removed, Bézier routing; see the
//! [`layout`](self::layout) module docs for the methods and their cost), and
//! [`render_svg`] writes that drawing as a standalone SVG 1.1 document.
//!
//! Conventions of the drawing: a filled dot with an arrow marks the start node;
//! terminal nodes have a double border; [`Node::detail`] lines (Moore outputs, for a
//! state machine) sit under the name, below a rule; clusters are rounded rectangles
//! with their name at the top left, nested clusters inside their parent; a self-loop is
//! a loop on the right of its node with its label beside it; edges with the same source
//! and target are merged into one edge whose label lines are stacked. The text uses a
//! monospace font, so the layout's width estimates hold. Each node is a
//! `<g class="node" data-node="i">` and each edge (and its label) a
//! `<g class="edge" data-from="i" data-to="j">` (an edge leaving a cluster's border lists
//! every member in `data-from`, space-separated, and adds `data-group`), node indices as
//! in the [`Diagram`], so
//! that `detent view` can mark the current state and the last step. Output is
//! deterministic: the same diagram gives the same bytes.

mod layout;

pub use layout::{layout, EdgeGeometry, Layout, PathSeg, Point, Rect};

use layout::{
    DETAIL_GAP, HEADER_FONT, NAME_FONT, NAME_LH, NODE_PAD_Y, START_R, TEXT_FONT, TEXT_LH,
    TITLE_FONT, WRAP_INDENT,
};
use std::fmt::Write as _;

/// A graph to draw: indices in [`Edge`], [`Node::cluster`], [`Cluster::parent`] and
/// `start` refer to positions in `nodes` and `clusters`. Out-of-range indices are ignored.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Diagram {
    /// Heading drawn above the graph (and the SVG `<title>`); may be empty.
    pub title: String,
    /// The nodes (states), in declaration order.
    pub nodes: Vec<Node>,
    /// Directed, labelled edges (transitions); `from == to` is a self-loop.
    pub edges: Vec<Edge>,
    /// Clusters (groups); a cluster's parent must be another cluster.
    pub clusters: Vec<Cluster>,
    /// The start node, marked by a dot and an arrow.
    pub start: Option<usize>,
}

/// One node of a [`Diagram`].
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Node {
    /// The name, drawn in bold.
    pub name: String,
    /// Lines drawn under the name (for a state machine: its Moore outputs).
    pub detail: Vec<String>,
    /// The innermost cluster the node belongs to.
    pub cluster: Option<usize>,
    /// Drawn with a double border (a terminal state).
    pub terminal: bool,
}

/// A directed edge of a [`Diagram`].
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Edge {
    /// Source node index.
    pub from: usize,
    /// Target node index.
    pub to: usize,
    /// Label (for a transition: `event [guard] / outputs; actions`); `\n` breaks lines;
    /// may be empty.
    pub label: String,
    /// When set, the edge stands for one edge from every node inside this cluster
    /// (nested clusters included) and is drawn once, leaving the cluster's border (a
    /// group's rule that every member uses); `from` is then only a fallback for a
    /// cluster that is out of range, empty, or holds `to`.
    pub from_cluster: Option<usize>,
}

/// A cluster (group) of a [`Diagram`], drawn as a rounded rectangle around its members.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Cluster {
    /// The name, drawn at the top left of the rectangle.
    pub name: String,
    /// The enclosing cluster, if any.
    pub parent: Option<usize>,
}

/// Escapes text for XML character data and attribute values.
fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for ch in text.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            // Control characters other than tab/newline are not allowed in XML 1.0.
            c if (c as u32) < 0x20 && c != '\t' && c != '\n' => out.push(' '),
            '\u{FFFE}' | '\u{FFFF}' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// A number with at most two decimals and no trailing zeros (deterministic).
fn num(v: f64) -> String {
    let v = if v.is_finite() { v } else { 0.0 };
    let s = format!("{:.2}", v);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

fn pt(p: Point) -> String {
    format!("{},{}", num(p.x), num(p.y))
}

fn path_data(e: &EdgeGeometry) -> String {
    let mut d = format!("M{}", pt(e.start));
    for s in &e.segs {
        match *s {
            PathSeg::Line(p) => {
                let _ = write!(d, " L{}", pt(p));
            }
            PathSeg::Cubic(a, b, p) => {
                let _ = write!(d, " C{} {} {}", pt(a), pt(b), pt(p));
            }
        }
    }
    d
}

/// Baseline of line `i` of a block of lines of height `lh` whose top is `top`.
fn baseline(top: f64, lh: f64, font: f64, i: usize) -> f64 {
    top + lh * i as f64 + (lh + font * 0.72) / 2.0
}

const EDGE_COLOR: &str = "#4a5568";
const CLUSTER_FILLS: [&str; 3] = ["#eef3fb", "#e3ecf7", "#d8e4f3"];

fn write_edge(svg: &mut String, e: &EdgeGeometry) {
    // A preempt rule's label line starts with `preempt` (a reserved word, never a
    // name): its edge is drawn with a wide stroke, not by colour alone.
    let preempt = e
        .labels
        .iter()
        .any(|l| l.lines().any(|x| x.starts_with("preempt ")));
    let width = if preempt { "2.8" } else { "1.3" };
    let _ = writeln!(
        svg,
        r#"<path d="{}" fill="none" stroke="{EDGE_COLOR}" stroke-width="{width}"/>"#,
        path_data(e)
    );
    let [a, b, c] = e.arrow;
    let _ = writeln!(
        svg,
        r#"<polygon points="{} {} {}" fill="{EDGE_COLOR}"/>"#,
        pt(a),
        pt(b),
        pt(c)
    );
}

/// Opens the group of an edge (or of its label): `data-from` lists the source node
/// indices (one, or every member of the cluster an edge leaves, space-separated, so
/// that the selector `[data-from~="i"]` finds it), `data-to` is the target's index and
/// `data-group` the cluster's, so that a page can mark the edge a step took.
fn edge_group(svg: &mut String, e: &EdgeGeometry) {
    let from = e
        .sources
        .iter()
        .map(usize::to_string)
        .collect::<Vec<_>>()
        .join(" ");
    let group = e
        .from_cluster
        .map_or(String::new(), |c| format!(r#" data-group="{c}""#));
    let _ = writeln!(
        svg,
        r#"<g class="edge" data-from="{from}" data-to="{}"{group}>"#,
        e.to
    );
}

/// One `<text>` per label line; a wrapped line (pieces separated by `\n`) is one
/// `<text>` whose pieces are `<tspan>`s one under the other, so that the line stays
/// one element.
fn write_label(svg: &mut String, e: &EdgeGeometry) {
    let Some(lb) = e.label_box else { return };
    let x = num(lb.x + 1.0);
    let mut row = 0;
    let attrs = format!(
        r##"font-size="{}" fill="#1a202c" stroke="#ffffff" stroke-width="3" stroke-linejoin="round" paint-order="stroke""##,
        num(TEXT_FONT)
    );
    for line in &e.labels {
        if !line.contains('\n') {
            let _ = writeln!(
                svg,
                r#"<text x="{x}" y="{}" {attrs}>{}</text>"#,
                num(baseline(lb.y, TEXT_LH, TEXT_FONT, row)),
                escape(line)
            );
            row += 1;
            continue;
        }
        let _ = write!(svg, "<text {attrs}>");
        for (i, piece) in line.split('\n').enumerate() {
            let x = if i == 0 {
                x.clone()
            } else {
                num(lb.x + 1.0 + WRAP_INDENT)
            };
            let _ = write!(
                svg,
                r#"<tspan x="{x}" y="{}">{}</tspan>"#,
                num(baseline(lb.y, TEXT_LH, TEXT_FONT, row)),
                escape(piece)
            );
            row += 1;
        }
        let _ = writeln!(svg, "</text>");
    }
}

/// Renders `d` as a standalone SVG document (deterministic for a given input).
pub fn render_svg(d: &Diagram) -> String {
    let lay = layout(d);
    let mut svg = String::new();
    let _ = writeln!(svg, r#"<?xml version="1.0" encoding="UTF-8"?>"#);
    let _ = writeln!(
        svg,
        r#"<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="DejaVu Sans Mono, Menlo, Consolas, monospace">"#,
        w = num(lay.width.ceil()),
        h = num(lay.height.ceil())
    );
    let _ = writeln!(svg, "<title>{}</title>", escape(&d.title));
    let _ = writeln!(
        svg,
        r##"<rect x="0" y="0" width="{}" height="{}" fill="#ffffff"/>"##,
        num(lay.width.ceil()),
        num(lay.height.ceil())
    );
    if !d.title.trim().is_empty() {
        let _ = writeln!(
            svg,
            r##"<text x="16" y="{}" font-size="{}" font-weight="bold" fill="#1a202c">{}</text>"##,
            num(16.0 + TITLE_FONT),
            num(TITLE_FONT),
            escape(&d.title)
        );
    }

    // Clusters, outermost first so that children paint over their parents.
    let depth: Vec<usize> = (0..d.clusters.len())
        .map(|c| {
            let mut k = 0;
            let mut cur = lay.cluster_parent[c];
            while let Some(p) = cur {
                k += 1;
                cur = lay.cluster_parent[p];
            }
            k
        })
        .collect();
    let mut order: Vec<usize> = (0..d.clusters.len()).collect();
    order.sort_by_key(|&c| (depth[c], c));
    svg.push_str("<g class=\"clusters\">\n");
    for c in order {
        let r = lay.clusters[c];
        let _ = writeln!(
            svg,
            r##"<rect x="{}" y="{}" width="{}" height="{}" rx="9" fill="{}" stroke="#7f93b5" stroke-width="1.2"/>"##,
            num(r.x),
            num(r.y),
            num(r.w),
            num(r.h),
            CLUSTER_FILLS[depth[c] % CLUSTER_FILLS.len()]
        );
    }
    svg.push_str("</g>\n<g class=\"edges\">\n");
    if let (Some(dot), Some(e)) = (lay.start_dot, &lay.start_edge) {
        let _ = writeln!(
            svg,
            r##"<circle cx="{}" cy="{}" r="{}" fill="#1a202c"/>"##,
            num(dot.x),
            num(dot.y),
            num(START_R)
        );
        write_edge(&mut svg, e);
    }
    for e in &lay.edges {
        edge_group(&mut svg, e);
        write_edge(&mut svg, e);
        svg.push_str("</g>\n");
    }
    svg.push_str("</g>\n");
    // Cluster names go over the edges, with a halo of the cluster's own fill, so that an
    // edge crossing a cluster's top never hides its name.
    svg.push_str("<g class=\"cluster-names\">\n");
    for c in 0..d.clusters.len() {
        let r = lay.clusters[c];
        let _ = writeln!(
            svg,
            r##"<text x="{}" y="{}" font-size="{}" font-weight="bold" fill="#3c4f73" stroke="{}" stroke-width="3" stroke-linejoin="round" paint-order="stroke">{}</text>"##,
            num(r.x + 10.0),
            num(r.y + 6.0 + HEADER_FONT),
            num(HEADER_FONT),
            CLUSTER_FILLS[depth[c] % CLUSTER_FILLS.len()],
            escape(&d.clusters[c].name)
        );
    }
    svg.push_str("</g>\n<g class=\"nodes\">\n");
    for (i, nd) in d.nodes.iter().enumerate() {
        let r = lay.nodes[i];
        let _ = writeln!(svg, r#"<g class="node" data-node="{i}">"#);
        let _ = writeln!(
            svg,
            r##"<rect x="{}" y="{}" width="{}" height="{}" rx="7" fill="#ffffff" stroke="#1f2d3d" stroke-width="1.5"/>"##,
            num(r.x),
            num(r.y),
            num(r.w),
            num(r.h)
        );
        if nd.terminal {
            let _ = writeln!(
                svg,
                r##"<rect x="{}" y="{}" width="{}" height="{}" rx="5" fill="none" stroke="#1f2d3d" stroke-width="1.2"/>"##,
                num(r.x + 3.5),
                num(r.y + 3.5),
                num(r.w - 7.0),
                num(r.h - 7.0)
            );
        }
        let cx = r.x + r.w / 2.0;
        let name_top = r.y + NODE_PAD_Y;
        let _ = writeln!(
            svg,
            r##"<text x="{}" y="{}" font-size="{}" font-weight="bold" text-anchor="middle" fill="#1a202c">{}</text>"##,
            num(cx),
            num(baseline(name_top, NAME_LH, NAME_FONT, 0)),
            num(NAME_FONT),
            escape(&nd.name)
        );
        if !nd.detail.is_empty() {
            let rule_y = name_top + NAME_LH + DETAIL_GAP / 2.0;
            let inset = if nd.terminal { 4.0 } else { 1.0 };
            let _ = writeln!(
                svg,
                r##"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="#9aa8bd" stroke-width="1"/>"##,
                num(r.x + inset),
                num(rule_y),
                num(r.right() - inset),
                num(rule_y)
            );
            let top = name_top + NAME_LH + DETAIL_GAP;
            for (k, line) in nd.detail.iter().enumerate() {
                let _ = writeln!(
                    svg,
                    r##"<text x="{}" y="{}" font-size="{}" text-anchor="middle" fill="#2b4c7e">{}</text>"##,
                    num(cx),
                    num(baseline(top, TEXT_LH, TEXT_FONT, k)),
                    num(TEXT_FONT),
                    escape(line)
                );
            }
        }
        svg.push_str("</g>\n");
    }
    svg.push_str("</g>\n<g class=\"labels\">\n");
    for e in &lay.edges {
        if e.label_box.is_some() {
            edge_group(&mut svg, e);
            write_label(&mut svg, e);
            svg.push_str("</g>\n");
        }
    }
    svg.push_str("</g>\n</svg>\n");
    svg
}
