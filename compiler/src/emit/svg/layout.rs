//! Layered (Sugiyama-style) layout of a [`Diagram`]: every number the SVG writer draws.
//!
//! The phases follow Sugiyama, Tagawa and Toda, "Methods for Visual Understanding of
//! Hierarchical System Structures" (IEEE SMC, 1981), with the edge-label and port
//! treatment of Gansner, Koutsofios, North and Vo, "A Technique for Drawing Directed
//! Graphs" (IEEE TSE, 1993):
//!
//! 1. **Layering** breadth-first from the start state, cluster by cluster
//!    ([`Scope::layers`]): in each scope (the drawing, then each cluster inside) the
//!    direct nodes and child clusters are units, a unit's depth is its distance from the
//!    start's unit (then from units entered from outside, then from any unit left), and
//!    the units of one depth share a band of layers as tall as the tallest. So the
//!    drawing is as tall as the machine is deep, each cluster spans as few layers as its
//!    inside needs, and no cycle has to be broken: an edge leads down, up (drawn
//!    upwards) or stays on its layer (a flat edge, drawn as a U through the label rank
//!    below, its label hanging from the U's bottom; nested U's of one rank go deeper
//!    where their extents meet). O((V + E) * cluster depth).
//! 2. **Label ranks.** Node layer `l` becomes rank `2l`; the odd ranks in between carry
//!    edge labels, so every edge spans at least two ranks and its label is a box that
//!    takes part in the layout like a node (Gansner et al.), beside its own edge. An edge
//!    across several layers puts its label on the label rank of its span holding the
//!    least label width so far. An edge that leaves a cluster's border (a group's rule
//!    that every member uses, drawn once) is laid out from the member nearest its target
//!    and clipped where it crosses the border.
//! 3. **Virtual nodes** on every rank an edge crosses. O(total edge span).
//! 4. **Crossing reduction** by the barycenter method: alternating down and up sweeps,
//!    the order with the fewest crossings kept. Each rank is ordered as a tree of blocks
//!    (the cluster hierarchy restricted to that rank), so the members of a cluster stay
//!    contiguous; sibling clusters keep one order across all ranks, so that clusters
//!    become disjoint rectangles. Crossings are counted by inversion counting with a
//!    Fenwick tree. O(sweeps * (N log N + S log N)) for N items and S segments.
//! 5. **Coordinates.** Horizontal positions obey difference constraints
//!    (`x_b >= x_a + gap`: neighbours in a rank, cluster walls, cluster members inside
//!    their walls), which form a DAG. Each round moves every item to the median of its
//!    neighbours (above, below, or both, alternating; leaves follow but do not pull) and
//!    projects that wish onto the constraints with the block-merging "satisfy" step of
//!    Dwyer, Marriott and Stuckey (2005), then one clamp sweep each way frees items stuck
//!    to a block. Last, every vertical strip that nothing occupies on any rank is
//!    removed. O(rounds * C log^2 C) for C constraints.
//! 6. **Routing.** An edge runs straight down through each rank band it crosses and as a
//!    cubic Bézier with vertical tangents between bands, so the path is smooth (C1) and
//!    never cuts through a band beside a node. Self-loops sit on the right of the node
//!    with their label beside them (their room is part of the node's width), and parallel
//!    edges of one direction are merged into one edge with stacked labels.
//!
//! **Candidates.** [`layout`] runs the phases six times, with three ways of layering
//! ([`Layering`]: depth bands; each unit beside the cluster it leaves from; flat edges
//! turned into downward ones) and two of placing horizontally (free, or held between two
//! walls as far apart as the narrowest drawing the rank orders allow), and keeps the
//! drawing of least area (the first on a tie). Free placement straightens edges best but
//! lets a drawing drift into a diagonal (a cluster top left, the states it leads to
//! bottom right); between walls the same median rounds straighten edges inside the
//! narrowest width. When some label line is longer than [`WRAP_CHARS`] and has a place
//! to break ([`wrap_label`]: before the guard, before ` / `, after `; `), the six run
//! again with long lines broken into pieces drawn one under the other, so twelve
//! candidates: side by side on one label rank, long labels otherwise make a dense
//! machine as wide as their sum. Measured against Graphviz (BENCHMARKS.md, "Diagram
//! size") the walls took the random median from 0.84x to 0.68x of dot's area and the
//! worst machine from 2.41x to 1.56x; the wrapped candidates took them to 0.63x and
//! 1.47x (251 of 287 drawings keep a wrapped candidate).
//!
//! Text is measured as `characters * font size * 0.61`, which holds for the monospace
//! font the SVG asks for (DejaVu Sans Mono advances 0.602 em). Output depends only on
//! the input order: no hash-map iteration anywhere.

use std::collections::{BTreeMap, VecDeque};

use super::Diagram;

/// Font size of state names, in px.
pub(crate) const NAME_FONT: f64 = 13.0;
/// Font size of details, edge labels and cluster names, in px.
pub(crate) const TEXT_FONT: f64 = 11.0;
/// Font size of cluster names, in px.
pub(crate) const HEADER_FONT: f64 = 12.0;
/// Font size of the diagram title, in px.
pub(crate) const TITLE_FONT: f64 = 15.0;
/// Line height of a state name.
pub(crate) const NAME_LH: f64 = 17.0;
/// Line height of details and labels.
pub(crate) const TEXT_LH: f64 = 14.0;
/// Outer margin of the drawing.
pub(crate) const MARGIN: f64 = 16.0;
/// Horizontal padding inside a node box.
pub(crate) const NODE_PAD_X: f64 = 10.0;
/// Vertical padding inside a node box.
pub(crate) const NODE_PAD_Y: f64 = 6.0;
/// Gap between the name and the detail lines (a rule is drawn there).
pub(crate) const DETAIL_GAP: f64 = 5.0;
const MIN_NODE_W: f64 = 56.0;
const PORT_SPACING: f64 = 11.0;
const TITLE_H: f64 = 28.0;
const CL_PAD: f64 = 10.0;
const CL_GAP: f64 = 14.0;
const HEADER_H: f64 = 16.0;
const RANK_GAP: f64 = 16.0;
const MAX_RANK_GAP: f64 = 36.0;
const BEND_SLOPE: f64 = 0.2;
const LOOP_REACH: f64 = 30.0;
const LOOP_LABEL_DX: f64 = 28.0;
const LABEL_DX: f64 = 5.0;
/// Space between the bottom of a flat edge's U and its label.
const FLAT_LABEL_GAP: f64 = 3.0;
/// Length of an arrowhead.
pub(crate) const ARROW_LEN: f64 = 9.0;
const ARROW_HALF_W: f64 = 4.0;
/// Radius of the start marker.
pub(crate) const START_R: f64 = 6.0;
const SWEEPS: usize = 16;
const ROUNDS: usize = 40;
const SETTLE_ROUNDS: usize = 6;

/// Estimated width in px of `text` at `font` px in a monospace font.
pub(crate) fn text_width(text: &str, font: f64) -> f64 {
    text.chars().count() as f64 * font * 0.61
}

/// A point in SVG user units (px), y downwards.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Point {
    /// Horizontal coordinate.
    pub x: f64,
    /// Vertical coordinate (downwards).
    pub y: f64,
}

/// An axis-aligned rectangle: top-left corner, width and height.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Rect {
    /// Left edge.
    pub x: f64,
    /// Top edge.
    pub y: f64,
    /// Width.
    pub w: f64,
    /// Height.
    pub h: f64,
}

impl Rect {
    /// Right edge.
    pub fn right(&self) -> f64 {
        self.x + self.w
    }
    /// Bottom edge.
    pub fn bottom(&self) -> f64 {
        self.y + self.h
    }
    /// True when `other` lies inside `self` (edges may touch), within `eps`.
    pub fn contains(&self, other: &Rect, eps: f64) -> bool {
        other.x >= self.x - eps
            && other.y >= self.y - eps
            && other.right() <= self.right() + eps
            && other.bottom() <= self.bottom() + eps
    }
    /// True when the interiors of `self` and `other` intersect by more than `eps`.
    pub fn overlaps(&self, other: &Rect, eps: f64) -> bool {
        self.x + eps < other.right()
            && other.x + eps < self.right()
            && self.y + eps < other.bottom()
            && other.y + eps < self.bottom()
    }
}

/// One piece of an edge path, continuing from the previous end point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum PathSeg {
    /// A straight line to the point.
    Line(Point),
    /// A cubic Bézier: two control points, then the end point.
    Cubic(Point, Point, Point),
}

impl PathSeg {
    fn end(&self) -> Point {
        match *self {
            PathSeg::Line(p) | PathSeg::Cubic(_, _, p) => p,
        }
    }
}

/// The geometry of one drawn edge (parallel edges of one direction merged).
#[derive(Clone, Debug, PartialEq)]
pub struct EdgeGeometry {
    /// Source node index (`None` for the start marker's edge); for an edge that leaves
    /// a cluster's border, the member it is laid out from.
    pub from: Option<usize>,
    /// The cluster whose border the edge leaves ([`super::Edge::from_cluster`]).
    pub from_cluster: Option<usize>,
    /// The nodes the edge stands for: `from`, or every member of `from_cluster`.
    pub sources: Vec<usize>,
    /// Target node index.
    pub to: usize,
    /// Label lines, one per merged edge that had a label, in input order. A long line
    /// may be wrapped: its pieces are separated by `\n` and drawn one under the other
    /// (joined with a space they give the line back).
    pub labels: Vec<String>,
    /// First point of the path.
    pub start: Point,
    /// The path after `start`; it ends at the base of the arrowhead.
    pub segs: Vec<PathSeg>,
    /// Arrowhead triangle: tip (on the target's border), then the two base corners.
    pub arrow: [Point; 3],
    /// The box the label text occupies, when there is a label.
    pub label_box: Option<Rect>,
    /// The innermost cluster that owns the label (the lowest common cluster of the
    /// two ends); the label lies inside it and outside every cluster not around it.
    pub label_cluster: Option<usize>,
}

/// Everything needed to draw a [`Diagram`], in SVG user units.
#[derive(Clone, Debug, PartialEq)]
pub struct Layout {
    /// Width of the drawing.
    pub width: f64,
    /// Height of the drawing.
    pub height: f64,
    /// Box of each node, indexed like `Diagram::nodes`.
    pub nodes: Vec<Rect>,
    /// Rectangle of each cluster, indexed like `Diagram::clusters`.
    pub clusters: Vec<Rect>,
    /// Edges between distinct nodes and self-loops, merged per (from, to) pair, in order
    /// of first appearance.
    pub edges: Vec<EdgeGeometry>,
    /// Centre of the start marker, when the diagram has a valid start node.
    pub start_dot: Option<Point>,
    /// The arrow from the start marker into the start node.
    pub start_edge: Option<EdgeGeometry>,
    /// Sanitised cluster parents (out-of-range or cyclic parents become `None`).
    pub cluster_parent: Vec<Option<usize>>,
    /// Sanitised node clusters (out-of-range clusters become `None`).
    pub node_cluster: Vec<Option<usize>>,
    /// Edge crossings between adjacent ranks after crossing reduction.
    pub crossings: usize,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    Node(usize),
    StartDot,
    Virtual,
    Label,
    Filler,
}

#[derive(Clone, Debug)]
struct Item {
    kind: Kind,
    rank: usize,
    cluster: Option<usize>,
    /// Extent left of the anchor x.
    lext: f64,
    /// Extent right of the anchor x.
    rext: f64,
    height: f64,
    /// Preferred free space around the item (gap to a neighbour is the mean of both).
    sep: f64,
}

struct Chain {
    /// Index into the merged edge list; `None` for the start edge.
    merged: Option<usize>,
    /// Items from the upper end to the lower end, inclusive.
    items: Vec<usize>,
    /// True when the drawn direction is upwards (the edge leads to a higher layer).
    reversed: bool,
    /// A flat edge: `items` is `[from, middle, to]`, both ends on one rank and the
    /// middle on the rank below.
    flat: bool,
    label_item: Option<usize>,
}

struct Merged {
    from: usize,
    to: usize,
    /// The cluster whose border the edge leaves (then `from` is the member it is laid
    /// out from).
    cluster: Option<usize>,
    labels: Vec<String>,
}

/// The cluster tree, for layering one scope (the whole drawing or a cluster) at a time.
struct Scope<'a> {
    /// Cluster path (outermost first) of each node.
    paths: &'a [&'a [usize]],
    /// Successors of each node.
    adj: &'a [Vec<usize>],
    /// Members of each cluster, nested ones included.
    members: &'a [Vec<usize>],
    start: Option<usize>,
    /// How depths become layers.
    mode: Layering,
}

/// The ways [`Scope::layers`] turns the units of a scope into layers; [`layout`] draws
/// the diagram with each and keeps the smallest drawing.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Layering {
    /// The units at one breadth-first depth share a band of layers as tall as the
    /// tallest of them.
    Bands,
    /// Each unit starts one layer below the node that leads into it from the unit that
    /// reached it: a unit reached from the middle of a cluster sits beside the rest of
    /// that cluster, not below all of it.
    Beside,
    /// Bands, with the depth of a unit the longest path to it along the edges that lead
    /// forward in breadth-first order: an edge between units of one depth leads one
    /// layer down instead of running flat, which trades width (the U's of flat edges and
    /// their labels side by side) for depth.
    Deep,
}

impl Scope<'_> {
    /// Sets `layer` of the `nodes` of a scope at cluster depth `k` (the scope's own
    /// members, nested clusters included), counted from 0, and returns the number of
    /// layers used. The scope's units are its direct nodes and its direct child
    /// clusters; a breadth-first search over the edges between units runs from the
    /// start's unit, then from units entered from outside the scope, then from any unit
    /// left (each new root at depth 0). The units at one depth share a band of layers as
    /// tall as the tallest of them (a cluster is laid out by the same method inside).
    fn layers(&self, nodes: &[usize], k: usize, layer: &mut [usize]) -> usize {
        // A unit: a node `i` is `i`, a child cluster `c` is `usize::MAX - c`.
        let unit_of = |i: usize| -> usize {
            match self.paths[i].get(k) {
                Some(&c) => usize::MAX - c,
                None => i,
            }
        };
        let mut units: Vec<usize> = Vec::new();
        let mut index: BTreeMap<usize, usize> = BTreeMap::new();
        for &i in nodes {
            let u = unit_of(i);
            index.entry(u).or_insert_with(|| {
                units.push(u);
                units.len() - 1
            });
        }
        let nu = units.len();
        let mut in_scope = vec![false; layer.len()];
        nodes.iter().for_each(|&i| in_scope[i] = true);
        let mut next: Vec<Vec<usize>> = vec![Vec::new(); nu];
        let mut entered = vec![false; nu];
        for (i, succ) in self.adj.iter().enumerate() {
            for &w in succ.iter().filter(|&&w| in_scope[w]) {
                let uw = index[&unit_of(w)];
                if !in_scope[i] {
                    entered[uw] = true;
                } else {
                    let ui = index[&unit_of(i)];
                    if ui != uw && !next[ui].contains(&uw) {
                        next[ui].push(uw);
                    }
                }
            }
        }
        let start_unit = self
            .start
            .filter(|&s| in_scope[s])
            .map(|s| index[&unit_of(s)]);
        let roots = start_unit
            .into_iter()
            .chain((0..nu).filter(|&u| entered[u]))
            .chain(0..nu);
        let mut depth = vec![usize::MAX; nu];
        // Units in the order the searches reach them.
        let mut order: Vec<usize> = Vec::with_capacity(nu);
        for root in roots {
            if depth[root] != usize::MAX {
                continue;
            }
            depth[root] = 0;
            order.push(root);
            let mut queue = VecDeque::from([root]);
            while let Some(v) = queue.pop_front() {
                for &w in &next[v] {
                    if depth[w] == usize::MAX {
                        depth[w] = depth[v] + 1;
                        order.push(w);
                        queue.push_back(w);
                    }
                }
            }
        }
        // Heights: a node is one layer; a cluster lays itself out (its members' layers
        // are then relative to its top).
        let mut height = vec![1usize; nu];
        for (u, &code) in units.iter().enumerate() {
            if code >= layer.len() && usize::MAX - code < self.members.len() {
                let c = usize::MAX - code;
                height[u] = self.layers(&self.members[c], k + 1, layer).max(1);
            } else {
                layer[code] = 0;
            }
        }
        // Each unit starts one layer below the node that leads into it from the unit
        // that reached it (the nearest such node, entering at the node the edge enters):
        // a unit reached from the middle of a cluster sits beside the rest of that
        // cluster, not below all of it, so the drawing grows as deep as the paths
        // through it, not as deep as the sum of the clusters' heights.
        let mut into: Vec<Vec<(usize, usize, usize)>> = vec![Vec::new(); nu];
        for &i in nodes {
            let ui = index[&unit_of(i)];
            for &w in self.adj[i].iter().filter(|&&w| in_scope[w]) {
                let uw = index[&unit_of(w)];
                if ui != uw && depth[ui] != usize::MAX && depth[ui] + 1 == depth[uw] {
                    into[uw].push((ui, i, w));
                }
            }
        }
        let mut top = vec![0usize; nu];
        if self.mode == Layering::Beside {
            for &u in &order {
                top[u] = into[u]
                    .iter()
                    .map(|&(v, i, w)| (top[v] + layer[i] + 1).saturating_sub(layer[w]))
                    .min()
                    .unwrap_or(0);
            }
        } else {
            if self.mode == Layering::Deep {
                // Longest paths over the edges that lead forward in the search order
                // (acyclic: the order is a topological order of them).
                let mut rank = vec![0usize; nu];
                for (p, &u) in order.iter().enumerate() {
                    rank[u] = p;
                }
                for &v in &order {
                    for &w in &next[v] {
                        if rank[w] > rank[v] {
                            depth[w] = depth[w].max(depth[v] + 1);
                        }
                    }
                }
            }
            let levels = depth.iter().map(|&d| d + 1).max().unwrap_or(0);
            let mut band = vec![0usize; levels];
            for u in 0..nu {
                band[depth[u]] = band[depth[u]].max(height[u]);
            }
            let mut offset = vec![0usize; levels + 1];
            for d in 0..levels {
                offset[d + 1] = offset[d] + band[d];
            }
            for u in 0..nu {
                top[u] = offset[depth[u]];
            }
        }
        for &i in nodes {
            layer[i] += top[index[&unit_of(i)]];
        }
        (0..nu).map(|u| top[u] + height[u]).max().unwrap_or(0)
    }
}

/// (right extent, height, kind, separation) of the item an edge has on a rank between
/// its ends: a label box beside the edge when it has label lines, else a thin virtual
/// item.
fn label_item_shape(labels: &[String]) -> (f64, f64, Kind, f64) {
    if labels.is_empty() {
        (3.0, 0.0, Kind::Virtual, 8.0)
    } else {
        (
            LABEL_DX + max_width(labels, TEXT_FONT) + 2.0,
            line_count(labels) as f64 * TEXT_LH,
            Kind::Label,
            8.0,
        )
    }
}

fn label_lines(label: &str) -> impl Iterator<Item = String> + '_ {
    label
        .split('\n')
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .map(str::to_string)
}

/// How far the second and later pieces of a wrapped label are indented, in px, so that
/// a continuation reads apart from the next rule's line.
pub(crate) const WRAP_INDENT: f64 = 2.0 * TEXT_FONT * 0.61;

/// The widest drawn line of `lines` (a wrapped label counts by its pieces, the later
/// ones with their indent).
fn max_width(lines: &[String], font: f64) -> f64 {
    lines
        .iter()
        .flat_map(|l| {
            l.split('\n')
                .enumerate()
                .map(|(i, p)| text_width(p, font) + if i > 0 { WRAP_INDENT } else { 0.0 })
        })
        .fold(0.0, f64::max)
}

/// Drawn lines of `labels`: a wrapped label counts once per piece.
fn line_count(labels: &[String]) -> usize {
    labels.iter().map(|l| l.split('\n').count()).sum()
}

/// A label line longer than this many characters is broken when labels are wrapped.
const WRAP_CHARS: usize = 24;

/// `line` broken into pieces joined by `\n` when it is longer than [`WRAP_CHARS`]:
/// before the guard (` [`), before the effects (` / `) and after each `; ` between
/// outputs and actions, pieces packed greedily up to [`WRAP_CHARS`] (or the longest
/// unbreakable piece). Joining the pieces with one space gives `line` back, so a reader
/// (or a test) reads the same text. A line without such a place stays whole.
fn wrap_label(line: &str) -> String {
    if line.chars().count() <= WRAP_CHARS {
        return line.to_string();
    }
    // Unbreakable pieces; a break replaces the single space between two of them.
    let mut pieces: Vec<&str> = Vec::new();
    let mut rest = line;
    loop {
        let cut = [" [", " / ", "; "]
            .iter()
            .filter_map(|sep| {
                // ` [` and ` / ` break before the bracket or slash; `; ` after the `;`.
                let at = rest.find(sep)?;
                Some(if *sep == "; " { at + 1 } else { at })
            })
            .filter(|&at| at > 0)
            .min();
        match cut {
            Some(at) => {
                pieces.push(&rest[..at]);
                rest = &rest[at + 1..];
            }
            None => {
                pieces.push(rest);
                break;
            }
        }
    }
    let limit = pieces
        .iter()
        .map(|p| p.chars().count())
        .max()
        .unwrap_or(0)
        .max(WRAP_CHARS);
    let mut out = String::new();
    let mut len = 0;
    for (i, p) in pieces.iter().enumerate() {
        let n = p.chars().count();
        if i > 0 {
            if len + 1 + n <= limit {
                out.push(' ');
                len += 1;
            } else {
                out.push('\n');
                len = 0;
            }
        }
        out.push_str(p);
        len += n;
    }
    out
}

/// Parents with an out-of-range index, or that lead round a cycle, become `None`.
fn sanitize_parents(d: &Diagram) -> Vec<Option<usize>> {
    let nc = d.clusters.len();
    let raw: Vec<Option<usize>> = d
        .clusters
        .iter()
        .map(|c| c.parent.filter(|&p| p < nc))
        .collect();
    (0..nc)
        .map(|c| {
            let p = raw[c]?;
            let mut cur = Some(p);
            for _ in 0..=nc {
                match cur {
                    Some(x) if x == c => return None,
                    Some(x) => cur = raw[x],
                    None => break,
                }
            }
            Some(p)
        })
        .collect()
}

/// Computes the layered layout of `d`. Indices out of range (edge ends, node clusters,
/// cluster parents) are ignored; a cluster parent cycle is cut.
pub fn layout(d: &Diagram) -> Layout {
    let mut best: Option<Layout> = None;
    let modes = [Layering::Bands, Layering::Beside, Layering::Deep];
    let bounds = [None, Some(1.0)];
    // Wrapped labels are tried only when wrapping breaks some label.
    let wraps: &[bool] = if d
        .edges
        .iter()
        .any(|e| label_lines(&e.label).any(|l| wrap_label(&l).contains('\n')))
    {
        &[false, true]
    } else {
        &[false]
    };
    for (wrap, mode, bound) in wraps.iter().flat_map(|&w| {
        modes
            .into_iter()
            .flat_map(move |m| bounds.map(move |b| (w, m, b)))
    }) {
        let lay = layout_with(d, mode, bound, wrap);
        if best
            .as_ref()
            .is_none_or(|b| lay.width * lay.height < b.width * b.height - 1e-6)
        {
            best = Some(lay);
        }
    }
    best.unwrap_or_else(|| layout_with(d, Layering::Bands, None, false))
}

/// [`layout`] with one way of layering and placing; `wrap` breaks long labels
/// ([`wrap_label`]).
fn layout_with(d: &Diagram, mode: Layering, bound: Option<f64>, wrap: bool) -> Layout {
    let n = d.nodes.len();
    let nc = d.clusters.len();
    let cparent = sanitize_parents(d);
    let cpath: Vec<Vec<usize>> = (0..nc)
        .map(|c| {
            let mut p = Vec::new();
            let mut cur = Some(c);
            while let Some(x) = cur {
                p.push(x);
                cur = cparent[x];
            }
            p.reverse();
            p
        })
        .collect();
    let node_cluster: Vec<Option<usize>> = d
        .nodes
        .iter()
        .map(|nd| nd.cluster.filter(|&c| c < nc))
        .collect();
    let path_of = |c: Option<usize>| -> &[usize] {
        match c {
            Some(c) => &cpath[c],
            None => &[],
        }
    };
    let lca = |a: Option<usize>, b: Option<usize>| -> Option<usize> {
        let (pa, pb) = (path_of(a), path_of(b));
        pa.iter()
            .zip(pb)
            .take_while(|(x, y)| x == y)
            .last()
            .map(|(x, _)| *x)
    };

    // Members of each cluster, nested clusters included, ascending.
    let members: Vec<Vec<usize>> = (0..nc)
        .map(|c| {
            (0..n)
                .filter(|&i| node_cluster[i].is_some_and(|k| cpath[k].contains(&c)))
                .collect()
        })
        .collect();
    // Merge parallel edges of one direction (and source cluster); collect self-loops.
    let mut merged: Vec<Merged> = Vec::new();
    let mut pair: BTreeMap<(Option<usize>, usize, usize), usize> = BTreeMap::new();
    for e in &d.edges {
        let cluster = e
            .from_cluster
            .filter(|&c| c < nc && e.to < n && !members[c].is_empty())
            .filter(|&c| !members[c].contains(&e.to));
        if (cluster.is_none() && e.from >= n) || e.to >= n {
            continue;
        }
        let from = match cluster {
            Some(c) => members[c][0],
            None => e.from,
        };
        let key = (cluster, if cluster.is_some() { 0 } else { from }, e.to);
        let id = *pair.entry(key).or_insert_with(|| {
            merged.push(Merged {
                from,
                to: e.to,
                cluster,
                labels: Vec::new(),
            });
            merged.len() - 1
        });
        merged[id]
            .labels
            .extend(label_lines(&e.label).map(|l| if wrap { wrap_label(&l) } else { l }));
    }
    let mut loop_labels: Vec<Option<Vec<String>>> = vec![None; n];
    for m in &merged {
        if m.from == m.to {
            loop_labels[m.from] = Some(m.labels.clone());
        }
    }
    let start = d.start.filter(|&s| s < n);

    // Node sizes.
    let mut box_w = vec![0.0; n];
    let mut box_h = vec![0.0; n];
    for (i, nd) in d.nodes.iter().enumerate() {
        let w = text_width(&nd.name, NAME_FONT).max(max_width(&nd.detail, TEXT_FONT));
        box_w[i] = (w + 2.0 * NODE_PAD_X).max(MIN_NODE_W);
        let details = nd.detail.len() as f64 * TEXT_LH;
        box_h[i] = 2.0 * NODE_PAD_Y
            + NAME_LH
            + if nd.detail.is_empty() {
                0.0
            } else {
                DETAIL_GAP + details
            };
    }

    // 1-2. Layering, breadth-first from the start state ([`Scope::layers`]): a node's
    // layer is its distance in transitions, a cluster counting as one step on the
    // layers of the scope around it (it takes as many layers as its own members need),
    // so every edge leads down, stays on its layer (a flat edge, drawn as a U through
    // the label rank below), or leads up (drawn upwards), and each cluster spans as few
    // layers as its inside needs. The drawing is as tall as the machine is deep, not as
    // long as its longest path. An edge leaving a cluster counts as an edge from every
    // member. O((V + E) * cluster depth).
    let mut adj: Vec<Vec<usize>> = vec![Vec::new(); n];
    for m in &merged {
        let sources: &[usize] = match m.cluster {
            Some(c) => &members[c],
            None => std::slice::from_ref(&m.from),
        };
        for &s in sources {
            if s != m.to {
                adj[s].push(m.to);
            }
        }
    }
    let mut layer = vec![0usize; n];
    {
        let paths: Vec<&[usize]> = node_cluster.iter().map(|&c| path_of(c)).collect();
        let all: Vec<usize> = (0..n).collect();
        let scope = Scope {
            paths: &paths,
            adj: &adj,
            members: &members,
            start,
            mode,
        };
        scope.layers(&all, 0, &mut layer);
    }
    // An edge leaving a cluster is laid out from the member nearest its target: the
    // lowest member above it, else one beside it, else the highest below it.
    for m in merged.iter_mut() {
        let Some(c) = m.cluster else { continue };
        let t = layer[m.to];
        let mem = &members[c];
        m.from = mem
            .iter()
            .copied()
            .filter(|&s| layer[s] < t)
            .max_by_key(|&s| (layer[s], std::cmp::Reverse(s)))
            .or_else(|| mem.iter().copied().find(|&s| layer[s] == t))
            .or_else(|| mem.iter().copied().min_by_key(|&s| (layer[s], s)))
            .unwrap_or(m.from);
    }
    // (upper, lower, merged id, drawn upwards) of every edge between layers, and the
    // flat edges (from, to, merged id).
    let mut dag: Vec<(usize, usize, usize, bool)> = Vec::new();
    let mut flat: Vec<(usize, usize, usize)> = Vec::new();
    for (id, m) in merged.iter().enumerate() {
        if m.from == m.to {
            continue;
        }
        match layer[m.from].cmp(&layer[m.to]) {
            std::cmp::Ordering::Less => dag.push((m.from, m.to, id, false)),
            std::cmp::Ordering::Greater => dag.push((m.to, m.from, id, true)),
            std::cmp::Ordering::Equal => flat.push((m.from, m.to, id)),
        }
    }
    let mut dot_layer = 0;
    if let Some(s) = start {
        if layer[s] == 0 {
            layer.iter_mut().for_each(|l| *l += 1);
        }
        dot_layer = layer[s] - 1;
    }

    // A node with many edges on one side gets wide enough to keep their ends apart.
    let mut ports_top = vec![start.is_some() as usize; n];
    if let Some(s) = start {
        ports_top
            .iter_mut()
            .enumerate()
            .for_each(|(i, p)| *p = usize::from(i == s));
    }
    let mut ports_bottom = vec![0usize; n];
    for &(a, b, _, _) in &dag {
        ports_bottom[a] += 1;
        ports_top[b] += 1;
    }
    for &(a, b, _) in &flat {
        ports_bottom[a] += 1;
        ports_bottom[b] += 1;
    }
    for i in 0..n {
        let ports = ports_top[i].max(ports_bottom[i]) as f64;
        box_w[i] = box_w[i].max((ports + 1.0) * PORT_SPACING);
    }

    // 3. Items: nodes, the start dot, virtual and label items.
    let mut items: Vec<Item> = Vec::new();
    for i in 0..n {
        let (mut rext, mut height) = (box_w[i] / 2.0, box_h[i]);
        if let Some(labels) = &loop_labels[i] {
            rext += if labels.is_empty() {
                LOOP_REACH * 0.75 + 6.0
            } else {
                LOOP_LABEL_DX + max_width(labels, TEXT_FONT) + 4.0
            };
            height = height.max(line_count(labels) as f64 * TEXT_LH + 4.0);
        }
        items.push(Item {
            kind: Kind::Node(i),
            rank: 2 * layer[i],
            cluster: node_cluster[i],
            lext: box_w[i] / 2.0,
            rext,
            height,
            sep: 22.0,
        });
    }
    let dot_item = start.map(|_| {
        items.push(Item {
            kind: Kind::StartDot,
            rank: 2 * dot_layer,
            cluster: None,
            lext: START_R,
            rext: START_R,
            height: 2.0 * START_R,
            sep: 20.0,
        });
        items.len() - 1
    });
    let mut chains: Vec<Chain> = Vec::new();
    let mut chain_ends: Vec<(usize, usize, Option<usize>, bool)> = dag
        .iter()
        .map(|&(a, b, id, rev)| (a, b, Some(id), rev))
        .collect();
    if let (Some(s), Some(dot)) = (start, dot_item) {
        chain_ends.push((dot, s, None, false));
    }
    // A flat edge is a chain `from, middle, to` whose middle (its label) sits on the
    // label rank below both ends.
    for &(a, b, id) in &flat {
        let labels = &merged[id].labels;
        let owner = lca(items[a].cluster, items[b].cluster);
        let (rext, height, kind, sep) = label_item_shape(labels);
        items.push(Item {
            kind,
            rank: items[a].rank + 1,
            cluster: owner,
            lext: 3.0,
            rext,
            height,
            sep,
        });
        let mid = items.len() - 1;
        chains.push(Chain {
            merged: Some(id),
            items: vec![a, mid, b],
            reversed: false,
            flat: true,
            label_item: (kind == Kind::Label).then_some(mid),
        });
    }
    // A label goes on the label rank of its edge's span that holds the least label
    // width so far (the middle one on a tie): edges of one layer first, as they have no
    // choice, then longer ones.
    let mut load: Vec<f64> = Vec::new();
    let add_load = |load: &mut Vec<f64>, r: usize, w: f64| {
        if load.len() <= r {
            load.resize(r + 1, 0.0);
        }
        load[r] += w;
    };
    for &(a, _, id) in &flat {
        let w = max_width(&merged[id].labels, TEXT_FONT);
        add_load(&mut load, items[a].rank + 1, w);
    }
    chain_ends.sort_by_key(|&(a, b, _, _)| items[b].rank - items[a].rank);
    for (a, b, id, rev) in chain_ends {
        let owner = if id.is_some() {
            lca(items[a].cluster, items[b].cluster)
        } else {
            None
        };
        let (ra, rb) = (items[a].rank, items[b].rank);
        let middle = 2 * ((ra / 2 + rb / 2) / 2) + 1;
        let w = id.map_or(0.0, |m| max_width(&merged[m].labels, TEXT_FONT));
        let label_rank = (ra + 1..rb)
            .step_by(2)
            .min_by(|&x, &y| {
                let lx = load.get(x).copied().unwrap_or(0.0);
                let ly = load.get(y).copied().unwrap_or(0.0);
                lx.total_cmp(&ly)
                    .then(x.abs_diff(middle).cmp(&y.abs_diff(middle)))
                    .then(x.cmp(&y))
            })
            .unwrap_or(middle);
        add_load(&mut load, label_rank, w);
        let labels: &[String] = id.map(|m| merged[m].labels.as_slice()).unwrap_or(&[]);
        let mut chain = Chain {
            merged: id,
            items: vec![a],
            reversed: rev,
            flat: false,
            label_item: None,
        };
        for r in ra + 1..rb {
            let is_label = r == label_rank;
            let (rext, height, kind, sep) = if is_label {
                label_item_shape(labels)
            } else {
                label_item_shape(&[])
            };
            items.push(Item {
                kind,
                rank: r,
                cluster: owner,
                lext: 3.0,
                rext,
                height,
                sep,
            });
            if kind == Kind::Label {
                chain.label_item = Some(items.len() - 1);
            }
            chain.items.push(items.len() - 1);
        }
        chain.items.push(b);
        chains.push(chain);
    }
    let nranks = items.iter().map(|it| it.rank + 1).max().unwrap_or(0);

    // Cluster presence per rank, spans, and fillers that keep a cluster present on every
    // rank of its span (so that its rectangle is respected on every rank it covers).
    let mut present = vec![vec![false; nranks.max(1)]; nc];
    let mark = |present: &mut Vec<Vec<bool>>, c: Option<usize>, r: usize| {
        for &k in path_of(c) {
            present[k][r] = true;
        }
    };
    for it in &items {
        mark(&mut present, it.cluster, it.rank);
    }
    let filler = |c: usize, r: usize| Item {
        kind: Kind::Filler,
        rank: r,
        cluster: Some(c),
        lext: 0.0,
        rext: 0.0,
        height: 0.0,
        sep: 0.0,
    };
    for c in 0..nc {
        if !present[c].iter().any(|&p| p) {
            items.push(filler(c, 0));
            mark(&mut present, Some(c), 0);
        }
    }
    let nranks = nranks.max(1);
    let mut span = vec![(0usize, 0usize); nc];
    for c in 0..nc {
        let lo = present[c].iter().position(|&p| p).unwrap_or(0);
        let hi = present[c].iter().rposition(|&p| p).unwrap_or(0);
        span[c] = (lo, hi);
    }
    for c in 0..nc {
        for r in span[c].0..=span[c].1 {
            if !present[c][r] {
                items.push(filler(c, r));
                mark(&mut present, Some(c), r);
            }
        }
    }

    // 4. Crossing reduction.
    let ni = items.len();
    let mut up: Vec<Vec<usize>> = vec![Vec::new(); ni];
    let mut down: Vec<Vec<usize>> = vec![Vec::new(); ni];
    for ch in &chains {
        if ch.flat {
            let (a, mid, b) = (ch.items[0], ch.items[1], ch.items[2]);
            down[a].push(mid);
            down[b].push(mid);
            up[mid].push(a);
            up[mid].push(b);
            continue;
        }
        for w in ch.items.windows(2) {
            down[w[0]].push(w[1]);
            up[w[1]].push(w[0]);
        }
    }
    let item_paths: Vec<&[usize]> = items.iter().map(|it| path_of(it.cluster)).collect();
    let mut ranks: Vec<Vec<usize>> = vec![Vec::new(); nranks];
    for (i, it) in items.iter().enumerate() {
        ranks[it.rank].push(i);
    }
    let mut orderer = Orderer {
        ranks,
        pos: vec![0; ni],
        paths: item_paths,
        crank: (0..nc).collect(),
    };
    orderer.refresh_pos();
    let keys: Vec<f64> = (0..ni).map(|i| i as f64).collect();
    orderer.arrange_all(&keys);
    let mut best = orderer.ranks.clone();
    let mut best_cross = orderer.crossings(&down);
    let mut stale = 0;
    for sweep in 0..SWEEPS {
        if best_cross == 0 {
            break;
        }
        let downward = sweep % 2 == 0;
        orderer.sweep(if downward { &up } else { &down }, downward);
        orderer.update_cluster_order();
        let c = orderer.crossings(&down);
        if c < best_cross {
            best_cross = c;
            best = orderer.ranks.clone();
            stale = 0;
        } else {
            stale += 1;
            if stale >= 6 {
                break;
            }
        }
    }
    orderer.ranks = best;
    orderer.refresh_pos();

    // 5. Horizontal coordinates.
    let xs = place_x(&items, &orderer, &up, &down, &cpath, &cparent, d, bound);
    let lvar = |c: usize| ni + 2 * c;
    let rvar = |c: usize| ni + 2 * c + 1;

    // Ports spread along the bottom and top of each end.
    let x_extent = |i: usize| -> (f64, f64) {
        match items[i].kind {
            Kind::Node(k) => (xs[i] - box_w[k] / 2.0, box_w[k]),
            _ => (xs[i] - START_R, 2.0 * START_R),
        }
    };
    let mut top_ports: Vec<Vec<(f64, usize)>> = vec![Vec::new(); ni];
    // A port list entry: (x of the neighbour, chain, true for the chain's lower end of a
    // flat edge).
    let mut bottom_ports: Vec<Vec<(f64, usize, bool)>> = vec![Vec::new(); ni];
    for (ci, ch) in chains.iter().enumerate() {
        let k = ch.items.len();
        bottom_ports[ch.items[0]].push((xs[ch.items[1]], ci, false));
        if ch.flat {
            bottom_ports[ch.items[2]].push((xs[ch.items[1]], ci, true));
        } else {
            top_ports[ch.items[k - 1]].push((xs[ch.items[k - 2]], ci));
        }
    }
    let mut port_x = vec![(0.0, 0.0); chains.len()];
    for (i, list) in bottom_ports.iter_mut().enumerate() {
        list.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
        let (rx, rw) = x_extent(i);
        for (j, &(_, ci, second)) in list.iter().enumerate() {
            let x = rx + rw * (j + 1) as f64 / (list.len() + 1) as f64;
            if second {
                port_x[ci].1 = x;
            } else {
                port_x[ci].0 = x;
            }
        }
    }
    for (i, list) in top_ports.iter_mut().enumerate() {
        list.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        let (rx, rw) = x_extent(i);
        for (j, &(_, ci)) in list.iter().enumerate() {
            port_x[ci].1 = rx + rw * (j + 1) as f64 / (list.len() + 1) as f64;
        }
    }
    // The gap below rank r grows with the widest sideways move an edge makes in it, so
    // that edges bend smoothly instead of running flat and on top of each other.
    let mut sideways = vec![0.0f64; nranks];
    for (ci, ch) in chains.iter().enumerate() {
        let k = ch.items.len();
        if ch.flat {
            let (r, xm) = (items[ch.items[0]].rank, xs[ch.items[1]]);
            let wide = (xm - port_x[ci].0).abs().max((xm - port_x[ci].1).abs());
            sideways[r] = sideways[r].max(wide);
            continue;
        }
        for j in 0..k - 1 {
            let x0 = if j == 0 {
                port_x[ci].0
            } else {
                xs[ch.items[j]]
            };
            let x1 = if j + 2 == k {
                port_x[ci].1
            } else {
                xs[ch.items[j + 1]]
            };
            let r = items[ch.items[j]].rank;
            sideways[r] = sideways[r].max((x1 - x0).abs());
        }
    }

    // Flat edges of one rank nest: narrower U's are shallower, and a U whose extent
    // (its ends, its bottom and its label) meets that of a shallower one runs below
    // that one's label, so that no two U's share a line or cross a label. O(F^2) for F
    // flat edges on a rank.
    let mut drop = vec![0.0f64; chains.len()];
    {
        let mut by_rank: BTreeMap<usize, Vec<(f64, usize)>> = BTreeMap::new();
        for (ci, ch) in chains.iter().enumerate().filter(|(_, ch)| ch.flat) {
            let span = (port_x[ci].0 - port_x[ci].1).abs();
            by_rank
                .entry(items[ch.items[1]].rank)
                .or_default()
                .push((span, ci));
        }
        for list in by_rank.values_mut() {
            list.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            // (left, right, bottom of the label) of the U's placed so far, starting with
            // the other labels of the rank (which hang from the top of the rank).
            let rank = items[chains[list[0].1].items[1]].rank;
            let mut placed: Vec<(f64, f64, f64)> = chains
                .iter()
                .filter(|ch| !ch.flat)
                .filter_map(|ch| ch.label_item)
                .filter(|&v| items[v].rank == rank)
                .map(|v| (xs[v] - 4.0, xs[v] + items[v].rext + 4.0, items[v].height))
                .collect();
            for &(_, ci) in list.iter() {
                let mid = chains[ci].items[1];
                let it = &items[mid];
                let left = port_x[ci].0.min(port_x[ci].1).min(xs[mid] - it.lext) - 4.0;
                let right = port_x[ci].0.max(port_x[ci].1).max(xs[mid] + it.rext) + 4.0;
                let depth = placed
                    .iter()
                    .filter(|p| p.0 < right && left < p.1)
                    .map(|p| p.2 + FLAT_LABEL_GAP)
                    .fold(0.0, f64::max);
                drop[ci] = depth;
                let h = it.height;
                items[mid].height = depth + FLAT_LABEL_GAP + h;
                placed.push((left, right, depth + FLAT_LABEL_GAP + h));
            }
        }
    }

    // Vertical coordinates.
    let mut band_h = vec![0.0f64; nranks];
    for it in &items {
        band_h[it.rank] = band_h[it.rank].max(it.height);
    }
    let mut top_extra = vec![0.0f64; nranks];
    let mut bottom_extra = vec![0.0f64; nranks];
    for it in &items {
        let p = path_of(it.cluster);
        let t = p.iter().filter(|&&c| span[c].0 == it.rank).count() as f64;
        let b = p.iter().filter(|&&c| span[c].1 == it.rank).count() as f64;
        top_extra[it.rank] = top_extra[it.rank].max(t * (CL_PAD + HEADER_H));
        bottom_extra[it.rank] = bottom_extra[it.rank].max(b * CL_PAD);
    }
    let title_h = if d.title.trim().is_empty() {
        0.0
    } else {
        TITLE_H
    };
    let mut band_top = vec![0.0f64; nranks];
    let mut y = MARGIN + title_h + top_extra[0];
    for r in 0..nranks {
        if r > 0 {
            let bend = (sideways[r - 1] * BEND_SLOPE).clamp(RANK_GAP, MAX_RANK_GAP);
            y += bend + bottom_extra[r - 1] + top_extra[r];
        }
        band_top[r] = y;
        y += band_h[r];
    }
    let band_bottom = |r: usize| band_top[r] + band_h[r];
    let center_y = |r: usize| band_top[r] + band_h[r] / 2.0;

    // Cluster rectangles, innermost first.
    let mut by_depth: Vec<usize> = (0..nc).collect();
    by_depth.sort_by_key(|&c| std::cmp::Reverse(cpath[c].len()));
    let mut ctop = vec![f64::INFINITY; nc];
    let mut cbot = vec![f64::NEG_INFINITY; nc];
    for it in &items {
        if let Some(c) = it.cluster {
            ctop[c] = ctop[c].min(band_top[it.rank]);
            cbot[c] = cbot[c].max(band_bottom(it.rank));
        }
    }
    for &c in &by_depth {
        ctop[c] -= CL_PAD + HEADER_H;
        cbot[c] += CL_PAD;
        if let Some(p) = cparent[c] {
            ctop[p] = ctop[p].min(ctop[c]);
            cbot[p] = cbot[p].max(cbot[c]);
        }
    }
    let clusters: Vec<Rect> = (0..nc)
        .map(|c| Rect {
            x: xs[lvar(c)],
            y: ctop[c],
            w: xs[rvar(c)] - xs[lvar(c)],
            h: cbot[c] - ctop[c],
        })
        .collect();

    let node_rect = |i: usize| -> Rect {
        let it = &items[i];
        let cy = center_y(it.rank);
        match it.kind {
            Kind::Node(k) => Rect {
                x: xs[i] - box_w[k] / 2.0,
                y: cy - box_h[k] / 2.0,
                w: box_w[k],
                h: box_h[k],
            },
            _ => Rect {
                x: xs[i] - START_R,
                y: cy - START_R,
                w: 2.0 * START_R,
                h: 2.0 * START_R,
            },
        }
    };
    let nodes: Vec<Rect> = (0..n).map(node_rect).collect();

    // 6. Routing.
    let mut edges_by_merged: Vec<Option<EdgeGeometry>> = vec![None; merged.len()];
    let mut start_edge = None;
    for (ci, ch) in chains.iter().enumerate() {
        let k = ch.items.len();
        let (a, b) = (ch.items[0], ch.items[k - 1]);
        let ra = node_rect(a);
        let rb = node_rect(b);
        let p0 = Point {
            x: port_x[ci].0,
            y: ra.bottom(),
        };
        let mut segs = Vec::new();
        let mut cur = p0;
        let line_to = |segs: &mut Vec<PathSeg>, cur: &mut Point, p: Point| {
            if (p.y - cur.y).abs() > 1e-9 || (p.x - cur.x).abs() > 1e-9 {
                segs.push(PathSeg::Line(p));
                *cur = p;
            }
        };
        let curve_to = |segs: &mut Vec<PathSeg>, cur: &mut Point, p: Point| {
            let my = (cur.y + p.y) / 2.0;
            segs.push(PathSeg::Cubic(
                Point { x: cur.x, y: my },
                Point { x: p.x, y: my },
                p,
            ));
            *cur = p;
        };
        let ya = band_bottom(items[a].rank);
        line_to(&mut segs, &mut cur, Point { x: p0.x, y: ya });
        if ch.flat {
            // A U through the middle item: down from `from`, level beside the label,
            // up into the bottom of `to`.
            let mid = ch.items[1];
            let low = Point {
                x: xs[mid],
                y: band_top[items[mid].rank] + drop[ci],
            };
            let reach = (low.y - ya).max(1.0);
            let toward =
                |from: f64, to: f64| from + (to - from).signum() * reach.min((to - from).abs());
            segs.push(PathSeg::Cubic(
                Point { x: cur.x, y: low.y },
                Point {
                    x: toward(low.x, cur.x),
                    y: low.y,
                },
                low,
            ));
            let pb = port_x[ci].1;
            let yb = band_bottom(items[b].rank);
            segs.push(PathSeg::Cubic(
                Point {
                    x: toward(low.x, pb),
                    y: low.y,
                },
                Point { x: pb, y: low.y },
                Point { x: pb, y: yb },
            ));
            cur = Point { x: pb, y: yb };
            line_to(
                &mut segs,
                &mut cur,
                Point {
                    x: pb,
                    y: rb.bottom(),
                },
            );
        }
        for &v in ch.items[1..k - 1].iter().filter(|_| !ch.flat) {
            let r = items[v].rank;
            curve_to(
                &mut segs,
                &mut cur,
                Point {
                    x: xs[v],
                    y: band_top[r],
                },
            );
            line_to(
                &mut segs,
                &mut cur,
                Point {
                    x: xs[v],
                    y: band_bottom(r),
                },
            );
        }
        if !ch.flat {
            let px = port_x[ci].1;
            curve_to(
                &mut segs,
                &mut cur,
                Point {
                    x: px,
                    y: band_top[items[b].rank],
                },
            );
            line_to(&mut segs, &mut cur, Point { x: px, y: rb.y });
        }
        let (start_pt, segs) = if ch.reversed {
            reverse_path(p0, &segs)
        } else {
            (p0, segs)
        };
        // An edge that leaves a cluster starts where its path crosses the border.
        let from_cluster = ch.merged.and_then(|m| merged[m].cluster);
        let (start_pt, mut segs) = match from_cluster {
            Some(c) => clip_start(start_pt, &segs, &clusters[c]),
            None => (start_pt, segs),
        };
        let arrow = trim_for_arrow(start_pt, &mut segs);
        let (labels, label_box, label_cluster) = match ch.merged {
            Some(m) => {
                let lb = ch.label_item.map(|v| {
                    let it = &items[v];
                    let h = line_count(&merged[m].labels) as f64 * TEXT_LH;
                    // A flat edge's label hangs from the bottom of its U; other labels hang
                    // from the top of their rank, so that U's can pass below them.
                    let top = if ch.flat {
                        band_top[it.rank] + drop[ci] + FLAT_LABEL_GAP
                    } else {
                        band_top[it.rank]
                    };
                    Rect {
                        x: xs[v] + LABEL_DX,
                        y: top,
                        w: it.rext - LABEL_DX,
                        h,
                    }
                });
                let owner = ch.label_item.and_then(|v| items[v].cluster);
                (merged[m].labels.clone(), lb, owner)
            }
            None => (Vec::new(), None, None),
        };
        let from = ch.merged.map(|m| merged[m].from);
        let to = match ch.merged {
            Some(m) => merged[m].to,
            None => start.unwrap_or(0),
        };
        let sources = match from_cluster {
            Some(c) => members[c].clone(),
            None => from.into_iter().collect(),
        };
        let geom = EdgeGeometry {
            from,
            from_cluster,
            sources,
            to,
            labels,
            start: start_pt,
            segs,
            arrow,
            label_box,
            label_cluster,
        };
        match ch.merged {
            Some(m) => edges_by_merged[m] = Some(geom),
            None => start_edge = Some(geom),
        }
    }
    // Self-loops on the right side of their node.
    for (m, mg) in merged.iter().enumerate() {
        if mg.from != mg.to {
            continue;
        }
        let r = nodes[mg.from];
        let cy = r.y + r.h / 2.0;
        let dy = (r.h / 4.0).min(7.0);
        let xr = r.right();
        let start_pt = Point { x: xr, y: cy - dy };
        let mut segs = vec![PathSeg::Cubic(
            Point {
                x: xr + LOOP_REACH,
                y: cy - dy - 12.0,
            },
            Point {
                x: xr + LOOP_REACH,
                y: cy + dy + 12.0,
            },
            Point { x: xr, y: cy + dy },
        )];
        let arrow = trim_for_arrow(start_pt, &mut segs);
        let label_box = if mg.labels.is_empty() {
            None
        } else {
            let h = line_count(&mg.labels) as f64 * TEXT_LH;
            Some(Rect {
                x: xr + LOOP_LABEL_DX,
                y: cy - h / 2.0,
                w: max_width(&mg.labels, TEXT_FONT) + 2.0,
                h,
            })
        };
        edges_by_merged[m] = Some(EdgeGeometry {
            from: Some(mg.from),
            from_cluster: None,
            sources: vec![mg.from],
            to: mg.to,
            labels: mg.labels.clone(),
            start: start_pt,
            segs,
            arrow,
            label_box,
            label_cluster: node_cluster[mg.from],
        });
    }

    let mut width = 0.0f64;
    for (i, it) in items.iter().enumerate() {
        width = width.max(xs[i] + it.rext);
    }
    for c in 0..nc {
        width = width.max(xs[rvar(c)]);
    }
    width = (width + MARGIN).max(text_width(&d.title, TITLE_FONT) + 2.0 * MARGIN);
    let mut height = MARGIN + title_h;
    if !items.is_empty() {
        height = height.max(band_bottom(nranks - 1) + bottom_extra[nranks - 1] + MARGIN);
    }
    Layout {
        width,
        height,
        nodes,
        clusters,
        edges: edges_by_merged.into_iter().flatten().collect(),
        start_dot: dot_item.map(|i| Point {
            x: xs[i],
            y: center_y(items[i].rank),
        }),
        start_edge,
        cluster_parent: cparent,
        node_cluster,
        crossings: best_cross,
    }
}

/// The point of a segment at parameter `t`, starting from `p0`.
fn seg_at(p0: Point, seg: &PathSeg, t: f64) -> Point {
    match *seg {
        PathSeg::Line(p) => Point {
            x: p0.x + (p.x - p0.x) * t,
            y: p0.y + (p.y - p0.y) * t,
        },
        PathSeg::Cubic(a, b, p) => {
            let u = 1.0 - t;
            let (w0, w1, w2, w3) = (u * u * u, 3.0 * u * u * t, 3.0 * u * t * t, t * t * t);
            Point {
                x: w0 * p0.x + w1 * a.x + w2 * b.x + w3 * p.x,
                y: w0 * p0.y + w1 * a.y + w2 * b.y + w3 * p.y,
            }
        }
    }
}

/// The part of a segment after parameter `t` (de Casteljau).
fn seg_after(seg: &PathSeg, t: f64) -> PathSeg {
    match *seg {
        PathSeg::Line(p) => PathSeg::Line(p),
        PathSeg::Cubic(a, b, p) => {
            let lerp = |u: Point, v: Point| Point {
                x: u.x + (v.x - u.x) * t,
                y: u.y + (v.y - u.y) * t,
            };
            let (ab, bc) = (lerp(a, b), lerp(b, p));
            let abc = lerp(ab, bc);
            PathSeg::Cubic(abc, bc, p)
        }
    }
}

/// The path from the first point where it leaves `rect` (found by sampling each
/// segment, then bisection); the whole path when it never leaves.
fn clip_start(start: Point, segs: &[PathSeg], rect: &Rect) -> (Point, Vec<PathSeg>) {
    let inside =
        |p: Point| p.x > rect.x && p.x < rect.right() && p.y > rect.y && p.y < rect.bottom();
    let mut p0 = start;
    for (i, seg) in segs.iter().enumerate() {
        const STEPS: usize = 32;
        let mut lo = 0.0;
        for k in 1..=STEPS {
            let t = k as f64 / STEPS as f64;
            if !inside(seg_at(p0, seg, t)) {
                let mut hi = t;
                for _ in 0..30 {
                    let mid = (lo + hi) / 2.0;
                    if inside(seg_at(p0, seg, mid)) {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                }
                let at = seg_at(p0, seg, hi);
                let mut out = vec![seg_after(seg, hi)];
                out.extend_from_slice(&segs[i + 1..]);
                return (at, out);
            }
            lo = t;
        }
        p0 = seg.end();
    }
    (start, segs.to_vec())
}

/// The same path walked backwards.
fn reverse_path(start: Point, segs: &[PathSeg]) -> (Point, Vec<PathSeg>) {
    let mut points = vec![start];
    points.extend(segs.iter().map(PathSeg::end));
    let mut out = Vec::with_capacity(segs.len());
    for (i, s) in segs.iter().enumerate().rev() {
        let back_to = points[i];
        out.push(match *s {
            PathSeg::Line(_) => PathSeg::Line(back_to),
            PathSeg::Cubic(c1, c2, _) => PathSeg::Cubic(c2, c1, back_to),
        });
    }
    (*points.last().unwrap_or(&start), out)
}

/// Shortens the end of the path by the arrowhead's length and returns the arrowhead.
fn trim_for_arrow(start: Point, segs: &mut [PathSeg]) -> [Point; 3] {
    let prev_end = if segs.len() >= 2 {
        segs[segs.len() - 2].end()
    } else {
        start
    };
    let Some(last) = segs.last_mut() else {
        return [start; 3];
    };
    let tip = last.end();
    let from = match *last {
        PathSeg::Line(_) => prev_end,
        PathSeg::Cubic(c1, c2, p) => {
            if (p.x - c2.x).hypot(p.y - c2.y) > 1e-6 {
                c2
            } else {
                c1
            }
        }
    };
    let (mut dx, mut dy) = (tip.x - from.x, tip.y - from.y);
    let len = dx.hypot(dy);
    if len < 1e-9 {
        dx = 0.0;
        dy = 1.0;
    } else {
        dx /= len;
        dy /= len;
    }
    let base = Point {
        x: tip.x - dx * ARROW_LEN,
        y: tip.y - dy * ARROW_LEN,
    };
    match last {
        PathSeg::Line(p) => *p = base,
        PathSeg::Cubic(_, c2, p) => {
            c2.x -= dx * ARROW_LEN;
            c2.y -= dy * ARROW_LEN;
            *p = base;
        }
    }
    [
        tip,
        Point {
            x: base.x - dy * ARROW_HALF_W,
            y: base.y + dx * ARROW_HALF_W,
        },
        Point {
            x: base.x + dy * ARROW_HALF_W,
            y: base.y - dx * ARROW_HALF_W,
        },
    ]
}

/// Rank orders and the hierarchical barycenter sort.
struct Orderer<'a> {
    ranks: Vec<Vec<usize>>,
    pos: Vec<usize>,
    /// Cluster path (root to innermost) of each item.
    paths: Vec<&'a [usize]>,
    /// Order of each cluster among its siblings, the same on every rank.
    crank: Vec<usize>,
}

impl Orderer<'_> {
    fn refresh_pos(&mut self) {
        for rank in &self.ranks {
            for (p, &i) in rank.iter().enumerate() {
                self.pos[i] = p;
            }
        }
    }

    /// Re-sorts every rank by `keys`, keeping clusters contiguous and in sibling order.
    fn arrange_all(&mut self, keys: &[f64]) {
        for r in 0..self.ranks.len() {
            self.arrange_rank(r, keys);
        }
    }

    fn arrange_rank(&mut self, r: usize, keys: &[f64]) {
        let items = std::mem::take(&mut self.ranks[r]);
        let mut out = Vec::with_capacity(items.len());
        self.arrange(&items, 0, keys, &mut out);
        for (p, &i) in out.iter().enumerate() {
            self.pos[i] = p;
        }
        self.ranks[r] = out;
    }

    fn arrange(&self, items: &[usize], depth: usize, keys: &[f64], out: &mut Vec<usize>) {
        // A unit is a lone item or the block of one child cluster.
        struct Unit {
            key: f64,
            tie: usize,
            cluster: Option<usize>,
            members: Vec<usize>,
        }
        let mut units: Vec<Unit> = Vec::new();
        let mut cluster_unit: BTreeMap<usize, usize> = BTreeMap::new();
        for &i in items {
            let p = self.paths[i];
            if p.len() > depth {
                let c = p[depth];
                let u = *cluster_unit.entry(c).or_insert_with(|| {
                    units.push(Unit {
                        key: 0.0,
                        tie: usize::MAX,
                        cluster: Some(c),
                        members: Vec::new(),
                    });
                    units.len() - 1
                });
                units[u].members.push(i);
            } else {
                units.push(Unit {
                    key: keys[i],
                    tie: self.pos[i],
                    cluster: None,
                    members: vec![i],
                });
            }
        }
        for u in units.iter_mut().filter(|u| u.cluster.is_some()) {
            u.key = u.members.iter().map(|&i| keys[i]).sum::<f64>() / u.members.len() as f64;
            u.tie = u.members.iter().map(|&i| self.pos[i]).min().unwrap_or(0);
        }
        units.sort_by(|a, b| a.key.total_cmp(&b.key).then(a.tie.cmp(&b.tie)));
        // Cluster blocks take the cluster slots in their fixed sibling order.
        let slots: Vec<usize> = (0..units.len())
            .filter(|&u| units[u].cluster.is_some())
            .collect();
        let mut blocks: Vec<usize> = slots.clone();
        blocks.sort_by_key(|&u| units[u].cluster.map(|c| self.crank[c]));
        let mut placed: Vec<usize> = (0..units.len()).collect();
        for (slot, block) in slots.iter().zip(blocks) {
            placed[*slot] = block;
        }
        for u in placed {
            let unit = &units[u];
            if unit.cluster.is_some() {
                self.arrange(&unit.members, depth + 1, keys, out);
            } else {
                out.push(unit.members[0]);
            }
        }
    }

    /// One barycenter sweep; `adj` gives each item's neighbours in the fixed rank.
    fn sweep(&mut self, adj: &[Vec<usize>], downward: bool) {
        let nr = self.ranks.len();
        let order: Vec<usize> = if downward {
            (1..nr).collect()
        } else {
            (0..nr.saturating_sub(1)).rev().collect()
        };
        let mut keys = vec![0.0; self.pos.len()];
        for r in order {
            let len = self.ranks[r].len().max(1) as f64;
            for &i in &self.ranks[r] {
                let nb = &adj[i];
                keys[i] = if nb.is_empty() {
                    self.pos[i] as f64 / len
                } else {
                    let fixed_len = self.ranks[if downward { r - 1 } else { r + 1 }]
                        .len()
                        .max(1) as f64;
                    nb.iter().map(|&j| self.pos[j] as f64).sum::<f64>()
                        / nb.len() as f64
                        / fixed_len
                };
            }
            self.arrange_rank(r, &keys);
        }
    }

    /// Recomputes the sibling order of clusters from their mean relative position, then
    /// re-sorts every rank so that the order is the same everywhere.
    fn update_cluster_order(&mut self) {
        let nc = self.crank.len();
        if nc == 0 {
            return;
        }
        let mut sum = vec![0.0; nc];
        let mut cnt = vec![0usize; nc];
        for rank in &self.ranks {
            let len = rank.len().max(1) as f64;
            for (p, &i) in rank.iter().enumerate() {
                for &c in self.paths[i] {
                    sum[c] += p as f64 / len;
                    cnt[c] += 1;
                }
            }
        }
        let mean: Vec<f64> = (0..nc)
            .map(|c| {
                if cnt[c] == 0 {
                    0.0
                } else {
                    sum[c] / cnt[c] as f64
                }
            })
            .collect();
        let mut sorted: Vec<usize> = (0..nc).collect();
        sorted.sort_by(|&a, &b| {
            mean[a]
                .total_cmp(&mean[b])
                .then(self.crank[a].cmp(&self.crank[b]))
        });
        // One total order over all clusters; restricted to siblings it is their order.
        for (k, &c) in sorted.iter().enumerate() {
            self.crank[c] = k;
        }
        let keys: Vec<f64> = self.pos.iter().map(|&p| p as f64).collect();
        self.arrange_all(&keys);
    }

    /// Crossings between adjacent ranks: inversions among segments sorted by upper end.
    fn crossings(&self, down: &[Vec<usize>]) -> usize {
        let mut total = 0;
        for r in 0..self.ranks.len().saturating_sub(1) {
            let mut segs: Vec<(usize, usize)> = Vec::new();
            for &i in &self.ranks[r] {
                for &j in &down[i] {
                    segs.push((self.pos[i], self.pos[j]));
                }
            }
            segs.sort_unstable();
            let size = self.ranks[r + 1].len();
            let mut tree = vec![0usize; size + 1];
            for (seen, &(_, b)) in segs.iter().enumerate() {
                // count earlier segments whose lower end is strictly right of b
                let mut k = b + 1;
                let mut le = 0;
                while k > 0 {
                    le += tree[k];
                    k &= k - 1;
                }
                total += seen - le;
                let mut k = b + 1;
                while k <= size {
                    tree[k] += 1;
                    k += k & k.wrapping_neg();
                }
            }
        }
        total
    }
}

/// Horizontal positions of items (anchor x) followed by each cluster's left and right
/// wall (`items.len() + 2c` and `+ 1`), with the empty vertical strips removed at the
/// end ([`compact`]).
#[allow(clippy::too_many_arguments)]
fn place_x(
    items: &[Item],
    ord: &Orderer,
    up: &[Vec<usize>],
    down: &[Vec<usize>],
    cpath: &[Vec<usize>],
    cparent: &[Option<usize>],
    d: &Diagram,
    bound: Option<f64>,
) -> Vec<f64> {
    let ni = items.len();
    let nc = cpath.len();
    let nv = ni + 2 * nc;
    let lvar = |c: usize| ni + 2 * c;
    let rvar = |c: usize| ni + 2 * c + 1;
    // Constraints between item-level slots: items, then cluster walls.
    let mut cons: Vec<(usize, usize, f64)> = Vec::new();
    let empty: &[usize] = &[];
    for rank in &ord.ranks {
        for w in rank.windows(2) {
            let (a, b) = (w[0], w[1]);
            let pa = items[a]
                .cluster
                .map(|c| cpath[c].as_slice())
                .unwrap_or(empty);
            let pb = items[b]
                .cluster
                .map(|c| cpath[c].as_slice())
                .unwrap_or(empty);
            let k = pa.iter().zip(pb).take_while(|(x, y)| x == y).count();
            let mut prev = (a, items[a].rext);
            for &c in pa[k..].iter().rev() {
                cons.push((prev.0, rvar(c), prev.1 + CL_PAD));
                prev = (rvar(c), 0.0);
            }
            let mut targets: Vec<(usize, f64)> = pb[k..].iter().map(|&c| (lvar(c), 0.0)).collect();
            targets.push((b, items[b].lext));
            let gap = if pa.len() == k && pb.len() == k {
                (items[a].sep + items[b].sep) / 2.0
            } else {
                CL_GAP
            };
            cons.push((prev.0, targets[0].0, prev.1 + gap + targets[0].1));
            for t in targets.windows(2) {
                cons.push((t[0].0, t[1].0, CL_PAD + t[1].1));
            }
        }
    }
    for (i, it) in items.iter().enumerate() {
        if let Some(c) = it.cluster {
            cons.push((lvar(c), i, CL_PAD + it.lext));
            cons.push((i, rvar(c), it.rext + CL_PAD));
        }
    }
    for (c, parent) in cparent.iter().enumerate() {
        if let Some(p) = *parent {
            cons.push((lvar(p), lvar(c), CL_PAD));
            cons.push((rvar(c), rvar(p), CL_PAD));
        }
        let header = text_width(&d.clusters[c].name, HEADER_FONT);
        cons.push((lvar(c), rvar(c), header + 2.0 * CL_PAD));
    }

    // With a bound, two more variables are the drawing's walls, held (by a large
    // weight) at most `bound` times the narrowest width the orders allow apart: the
    // median rounds then straighten edges inside that width instead of letting the
    // drawing spread sideways.
    let (left, right, nx) = (nv, nv + 1, nv + 2);
    if bound.is_some() {
        for (i, it) in items.iter().enumerate() {
            cons.push((left, i, it.lext));
            cons.push((i, right, it.rext));
        }
        for c in 0..nc {
            cons.push((left, lvar(c), 0.0));
            cons.push((rvar(c), right, 0.0));
        }
    }
    // Variables: one per slot. (Merging the inner items of a long edge into one variable
    // would draw it as one straight vertical run, at the price of a column as wide as its
    // label through every rank it crosses; measured against Graphviz that doubled the
    // width of dense machines, so each item of a long edge moves on its own.)
    let var: Vec<usize> = (0..nx).collect();
    let (incoming, outgoing) = var_graph(&var, &cons, nx);
    let topo = match topo_order(&var, &cons, nx) {
        Some(t) => t,
        None => {
            debug_assert!(false, "horizontal constraints must be acyclic");
            (0..nx).filter(|&v| var[v] == v).collect()
        }
    };
    let push_right = |x: &mut [f64]| {
        for &v in &topo {
            for &(a, g) in &incoming[v] {
                x[v] = x[v].max(x[a] + g);
            }
        }
    };
    // Weight of a variable in the projection: the items it stands for; cluster walls
    // follow their contents.
    let mut weight = vec![0.0; nx];
    for s in 0..nx {
        weight[var[s]] += if s < ni {
            1.0
        } else if s < nv {
            1e-3
        } else {
            1e6
        };
    }
    // Neighbour variables of each variable, above and below.
    let mut nb_up: Vec<Vec<usize>> = vec![Vec::new(); nx];
    let mut nb_down: Vec<Vec<usize>> = vec![Vec::new(); nx];
    // A leaf (the start dot, a state with one edge) follows its neighbour but does not
    // pull it: it has nothing else to be aligned with.
    let leaf: Vec<bool> = (0..ni)
        .map(|i| {
            !matches!(items[i].kind, Kind::Virtual | Kind::Label)
                && up[i].len() + down[i].len() == 1
        })
        .collect();
    for i in 0..ni {
        let v = var[i];
        nb_up[v].extend(
            up[i]
                .iter()
                .filter(|&&j| !leaf[j])
                .map(|&j| var[j])
                .filter(|&u| u != v),
        );
        nb_down[v].extend(
            down[i]
                .iter()
                .filter(|&&j| !leaf[j])
                .map(|&j| var[j])
                .filter(|&u| u != v),
        );
    }
    let is_node: Vec<bool> = (0..nx)
        .map(|v| v < ni && matches!(items[v].kind, Kind::Node(_)))
        .collect();

    let mut x = vec![0.0; nx];
    push_right(&mut x);
    let bound_w = x[right] * bound.unwrap_or(1.0);
    let mut depth_order: Vec<usize> = (0..nc).collect();
    depth_order.sort_by_key(|&c| std::cmp::Reverse(cpath[c].len()));
    let mut wish = vec![0.0; nx];
    let mut nbx: Vec<f64> = Vec::new();
    for round in 0..ROUNDS {
        // The last rounds only straighten edges and align leaves with their neighbour.
        let settle = round + SETTLE_ROUNDS >= ROUNDS;
        for &v in &topo {
            if v >= ni {
                continue;
            }
            nbx.clear();
            let (use_up, use_down) = match round % 3 {
                _ if settle => (true, true),
                0 => (true, false),
                1 => (false, true),
                _ => (true, true),
            };
            if use_up {
                nbx.extend(nb_up[v].iter().map(|&j| x[j]));
            }
            if use_down {
                nbx.extend(nb_down[v].iter().map(|&j| x[j]));
            }
            if nbx.is_empty() {
                nbx.extend(nb_up[v].iter().chain(&nb_down[v]).map(|&j| x[j]));
            }
            let frozen = settle && is_node[v] && nbx.len() > 1;
            wish[v] = if nbx.is_empty() || frozen {
                x[v]
            } else {
                nbx.sort_by(f64::total_cmp);
                let m = nbx.len();
                if m % 2 == 1 {
                    nbx[m / 2]
                } else {
                    (nbx[m / 2 - 1] + nbx[m / 2]) / 2.0
                }
            };
        }
        // Cluster walls wish to hug their contents.
        for c in 0..nc {
            wish[lvar(c)] = f64::INFINITY;
            wish[rvar(c)] = f64::NEG_INFINITY;
        }
        for (i, it) in items.iter().enumerate() {
            if let Some(c) = it.cluster {
                let w = wish[var[i]];
                wish[lvar(c)] = wish[lvar(c)].min(w - it.lext - CL_PAD);
                wish[rvar(c)] = wish[rvar(c)].max(w + it.rext + CL_PAD);
            }
        }
        for &c in &depth_order {
            if let Some(p) = cparent[c] {
                wish[lvar(p)] = wish[lvar(p)].min(wish[lvar(c)] - CL_PAD);
                wish[rvar(p)] = wish[rvar(p)].max(wish[rvar(c)] + CL_PAD);
            }
        }
        for c in 0..nc {
            if !wish[lvar(c)].is_finite() {
                wish[lvar(c)] = x[lvar(c)];
            }
            if !wish[rvar(c)].is_finite() {
                wish[rvar(c)] = x[rvar(c)];
            }
        }
        wish[left] = 0.0;
        wish[right] = bound_w;
        satisfy(&topo, &incoming, &wish, &weight, &mut x);
        // Satisfy never splits a block, so an item merged into a block it would rather
        // leave stays stuck to it; one sweep each way moves every variable as close to
        // its wish as its current neighbours allow (each step keeps x feasible).
        for forward in [false, true] {
            let mut step = |v: usize| {
                let lo = incoming[v]
                    .iter()
                    .map(|&(a, g)| x[a] + g)
                    .fold(f64::NEG_INFINITY, f64::max);
                let hi = outgoing[v]
                    .iter()
                    .map(|&(b, g)| x[b] - g)
                    .fold(f64::INFINITY, f64::min);
                if lo <= hi {
                    x[v] = wish[v].clamp(lo, hi);
                }
            };
            if forward {
                topo.iter().for_each(|&v| step(v));
            } else {
                topo.iter().rev().for_each(|&v| step(v));
            }
        }
    }
    // Every slot takes its variable's position; shift so the leftmost thing sits at the
    // margin.
    let mut out: Vec<f64> = (0..nv).map(|s| x[var[s]]).collect();
    compact(&mut out, items, nc);
    let mut min_x = f64::INFINITY;
    for (i, it) in items.iter().enumerate() {
        min_x = min_x.min(out[i] - it.lext);
    }
    for c in 0..nc {
        min_x = min_x.min(out[lvar(c)]);
    }
    if min_x.is_finite() {
        let shift = MARGIN - min_x;
        out.iter_mut().for_each(|v| *v += shift);
    }
    out
}

/// Removes the vertical strips of the drawing that nothing occupies on any rank: every
/// item with its padding (half its separation, at least a cluster's padding) and every
/// cluster wall with a sibling gap on each side makes an interval; the gaps between
/// the union of the intervals are closed by moving everything right of them left.
/// Every constraint of [`place_x`] still holds, since the space each one asks for lies
/// within the padding of its two ends, and the left-to-right order on every rank is
/// kept. O(S log S) for S slots.
fn compact(out: &mut [f64], items: &[Item], nc: usize) {
    let ni = items.len();
    let mut spans: Vec<(f64, f64)> = Vec::with_capacity(ni + 2 * nc);
    for (i, it) in items.iter().enumerate() {
        let pad = (it.sep / 2.0).max(CL_PAD);
        spans.push((out[i] - it.lext - pad, out[i] + it.rext + pad));
    }
    for &w in &out[ni..ni + 2 * nc] {
        spans.push((w - CL_GAP, w + CL_GAP));
    }
    spans.sort_by(|a, b| a.0.total_cmp(&b.0));
    // (x where a gap ends, total width of the gaps up to there).
    let mut cuts: Vec<(f64, f64)> = Vec::new();
    let mut reach = f64::NEG_INFINITY;
    let mut removed = 0.0;
    for &(lo, hi) in &spans {
        if reach.is_finite() && lo > reach {
            removed += lo - reach;
            cuts.push((lo, removed));
        }
        reach = reach.max(hi);
    }
    if cuts.is_empty() {
        return;
    }
    for v in out.iter_mut() {
        // The gaps that end at or left of v.
        let k = cuts.partition_point(|&(end, _)| end <= *v);
        if k > 0 {
            *v -= cuts[k - 1].1;
        }
    }
}

/// Incoming and outgoing constraint lists over variables (largest gap per pair).
#[allow(clippy::type_complexity)]
fn var_graph(
    var: &[usize],
    cons: &[(usize, usize, f64)],
    nv: usize,
) -> (Vec<Vec<(usize, f64)>>, Vec<Vec<(usize, f64)>>) {
    let mut best: BTreeMap<(usize, usize), f64> = BTreeMap::new();
    for &(a, b, g) in cons {
        let (va, vb) = (var[a], var[b]);
        let e = best.entry((va, vb)).or_insert(g);
        *e = e.max(g);
    }
    let mut incoming = vec![Vec::new(); nv];
    let mut outgoing = vec![Vec::new(); nv];
    for (&(a, b), &g) in &best {
        incoming[b].push((a, g));
        outgoing[a].push((b, g));
    }
    (incoming, outgoing)
}

/// Kahn's topological order of the variables (`var[v] == v`), or `None` on a cycle.
fn topo_order(var: &[usize], cons: &[(usize, usize, f64)], nv: usize) -> Option<Vec<usize>> {
    let mut out: Vec<Vec<usize>> = vec![Vec::new(); nv];
    let mut deg = vec![0usize; nv];
    for &(a, b, _) in cons {
        let (va, vb) = (var[a], var[b]);
        if va == vb {
            return None;
        }
        out[va].push(vb);
        deg[vb] += 1;
    }
    let mut queue: VecDeque<usize> = (0..nv).filter(|&v| var[v] == v && deg[v] == 0).collect();
    let mut topo = Vec::with_capacity(nv);
    while let Some(v) = queue.pop_front() {
        topo.push(v);
        for &w in &out[v] {
            deg[w] -= 1;
            if deg[w] == 0 {
                queue.push_back(w);
            }
        }
    }
    let count = (0..nv).filter(|&v| var[v] == v).count();
    (topo.len() == count).then_some(topo)
}

/// A constraint into a block, ordered by its key for the block's max-heap.
#[derive(Clone, Copy, Debug)]
struct HeapEntry {
    /// Stored key; the actual key is this plus the block's `key_shift`.
    key: f64,
    left: usize,
    right: usize,
    gap: f64,
}

impl PartialEq for HeapEntry {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == std::cmp::Ordering::Equal
    }
}
impl Eq for HeapEntry {}
impl PartialOrd for HeapEntry {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for HeapEntry {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        self.key
            .total_cmp(&other.key)
            .then(self.left.cmp(&other.left))
            .then(self.right.cmp(&other.right))
    }
}

/// Moves `x` to a position near `wish` that meets every constraint `x_b >= x_a + gap`:
/// the block-merging "satisfy" step of Dwyer, Marriott and Stuckey, "Fast Node Overlap
/// Removal" (Graph Drawing 2005). Variables are visited in topological order; each one
/// starts as its own block at its wish, and while some constraint into its block is
/// violated, the most violated one is made tight by merging the two blocks, which then
/// sit at the weighted mean of their members' wishes. Only the part left of the new
/// variable moves left, so constraints already met stay met. Each block keeps its
/// incoming constraints in a max-heap keyed by `x_a + gap - offset_b` (lazily refreshed:
/// keys only go stale downwards), and the smaller heap is poured into the larger on a
/// merge: O(C log^2 C) in all.
fn satisfy(
    topo: &[usize],
    incoming: &[Vec<(usize, f64)>],
    wish: &[f64],
    weight: &[f64],
    x: &mut [f64],
) {
    use std::collections::BinaryHeap;
    struct Block {
        vars: Vec<usize>,
        wsum: f64,
        /// Sum of weight * (wish - offset) over the members.
        wpos: f64,
        heap: BinaryHeap<HeapEntry>,
        key_shift: f64,
    }
    let nv = wish.len();
    let mut block_of = vec![usize::MAX; nv];
    let mut offset = vec![0.0; nv];
    let mut blocks: Vec<Block> = Vec::with_capacity(topo.len());
    let posn = |b: &Block| b.wpos / b.wsum;
    for &v in topo {
        let w = weight[v].max(1e-9);
        let heap: BinaryHeap<HeapEntry> = incoming[v]
            .iter()
            .map(|&(a, g)| HeapEntry {
                key: posn(&blocks[block_of[a]]) + offset[a] + g,
                left: a,
                right: v,
                gap: g,
            })
            .collect();
        blocks.push(Block {
            vars: vec![v],
            wsum: w,
            wpos: w * wish[v],
            heap,
            key_shift: 0.0,
        });
        block_of[v] = blocks.len() - 1;
        loop {
            let b = block_of[v];
            let Some(top) = blocks[b].heap.pop() else {
                break;
            };
            let left = block_of[top.left];
            if left == b {
                continue; // internal now
            }
            let actual = posn(&blocks[left]) + offset[top.left] + top.gap - offset[top.right];
            let stored = top.key + blocks[b].key_shift;
            if (actual - stored).abs() > 1e-7 {
                let key = actual - blocks[b].key_shift;
                blocks[b].heap.push(HeapEntry { key, ..top });
                continue;
            }
            if actual - posn(&blocks[b]) <= 1e-7 {
                blocks[b].heap.push(top);
                break;
            }
            // Merge: offsets of b's members in the frame of the left block differ by delta.
            let (a, r, g) = (top.left, top.right, top.gap);
            let delta = offset[a] + g - offset[r];
            let (keep, gone, shift) = if blocks[left].vars.len() >= blocks[b].vars.len() {
                (left, b, delta)
            } else {
                (b, left, -delta)
            };
            let moved = std::mem::take(&mut blocks[gone].vars);
            for &m in &moved {
                offset[m] += shift;
                block_of[m] = keep;
            }
            // Keys of constraints into `gone` fall by `shift` as their right ends moved.
            blocks[gone].key_shift -= shift;
            let (gw, gp) = (
                blocks[gone].wsum,
                blocks[gone].wpos - blocks[gone].wsum * shift,
            );
            let gone_heap = std::mem::take(&mut blocks[gone].heap);
            let gone_shift = blocks[gone].key_shift;
            let kb = &mut blocks[keep];
            kb.vars.extend(moved);
            kb.wsum += gw;
            kb.wpos += gp;
            let (mut big, big_shift, small, small_shift) = if kb.heap.len() >= gone_heap.len() {
                (
                    std::mem::take(&mut kb.heap),
                    kb.key_shift,
                    gone_heap,
                    gone_shift,
                )
            } else {
                (
                    gone_heap,
                    gone_shift,
                    std::mem::take(&mut kb.heap),
                    kb.key_shift,
                )
            };
            for e in small {
                big.push(HeapEntry {
                    key: e.key + small_shift - big_shift,
                    ..e
                });
            }
            kb.heap = big;
            kb.key_shift = big_shift;
        }
    }
    for &v in topo {
        x[v] = posn(&blocks[block_of[v]]) + offset[v];
    }
}
