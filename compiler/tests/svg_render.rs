//! Tests of detent's own diagram renderer (`emit::svg`): well-formed XML that names every
//! node and cluster, determinism, and geometric invariants of the layered layout
//! (nodes inside their clusters, clusters free of non-members, no overlapping boxes or
//! labels) on realistic and on random diagrams.
//!
//! Set `DETENT_SVG_OUT=<dir>` to also write the sample drawings there (for looking at
//! them, e.g. after `rsvg-convert -o x.png x.svg`).

use detent_compiler::emit::svg::{
    layout, render_svg, Cluster, Diagram, Edge, EdgeGeometry, Layout, Node, PathSeg, Point, Rect,
};
use proptest::prelude::*;

fn node(name: &str, detail: &[&str], cluster: Option<usize>, terminal: bool) -> Node {
    Node {
        name: name.to_string(),
        detail: detail.iter().map(|s| s.to_string()).collect(),
        cluster,
        terminal,
    }
}

fn edge(from: usize, to: usize, label: &str) -> Edge {
    Edge {
        from,
        to,
        label: label.to_string(),
        from_cluster: None,
    }
}

fn cluster(name: &str, parent: Option<usize>) -> Cluster {
    Cluster {
        name: name.to_string(),
        parent,
    }
}

/// The bilge pump of LANGUAGE.md with a priming state: 5 states, one group, a terminal
/// fault, parallel edges (merged) and self-loops.
fn bilge_pump() -> Diagram {
    Diagram {
        title: "BilgePump".into(),
        nodes: vec![
            node("Idle", &[], None, false),
            node("Priming", &["pump"], Some(0), false),
            node("Pumping", &["pump"], Some(0), false),
            node("Draining", &["pump"], Some(0), false),
            node("DryRun", &["alarm"], None, true),
        ],
        clusters: vec![cluster("Running", None)],
        edges: vec![
            edge(0, 2, "FloatUp / ; start_timer"),
            edge(0, 1, "ManualOn / ; start_timer"),
            edge(0, 0, "FloatDown"),
            edge(0, 0, "Tick"),
            edge(0, 0, "ManualOff"),
            edge(1, 2, "Tick [pump_current_ok]"),
            edge(1, 4, "Tick [!pump_current_ok] / ; log_fault"),
            edge(2, 4, "Tick [!pump_current_ok] / ; log_fault"),
            edge(2, 2, "Tick [pump_current_ok]"),
            edge(2, 3, "FloatDown / ; start_timer"),
            edge(3, 0, "Tick"),
            edge(3, 2, "FloatUp"),
            edge(1, 0, "ManualOff"),
            edge(2, 0, "ManualOff"),
            edge(3, 0, "ManualOff"),
        ],
        start: Some(0),
    }
}

/// A 10-state serial frame parser with nested groups and many back edges.
fn frame_parser() -> Diagram {
    let (recv, framing, body) = (0, 1, 2);
    Diagram {
        title: "FrameParser".into(),
        nodes: vec![
            node("Idle", &[], None, false),
            node("Sync1", &["rx_busy"], Some(framing), false),
            node("Sync2", &["rx_busy"], Some(framing), false),
            node("Header", &["rx_busy"], Some(body), false),
            node("Length", &["rx_busy"], Some(body), false),
            node("Payload", &["rx_busy"], Some(body), false),
            node("Checksum", &["rx_busy"], Some(recv), false),
            node("Deliver", &["frame_ready"], None, false),
            node("Error", &["err_led"], None, false),
            node("Halted", &["err_led", "rx_off"], None, true),
        ],
        clusters: vec![
            cluster("Receiving", None),
            cluster("Framing", Some(recv)),
            cluster("Body", Some(recv)),
        ],
        edges: vec![
            edge(0, 1, "Byte [is_sync]"),
            edge(0, 0, "Byte [!is_sync]"),
            edge(1, 2, "Byte [is_sync]"),
            edge(1, 0, "Byte [!is_sync]"),
            edge(2, 3, "Byte / ; store_header"),
            edge(3, 4, "Byte / ; store_len"),
            edge(4, 5, "Byte [len_ok]"),
            edge(4, 8, "Byte [!len_ok] / ; count_error"),
            edge(5, 5, "Byte [more] / ; store_byte"),
            edge(5, 6, "Byte [!more] / ; store_byte"),
            edge(6, 7, "Byte [crc_ok]"),
            edge(6, 8, "Byte [!crc_ok] / ; count_error"),
            edge(7, 0, "Ack / ; release"),
            edge(8, 0, "Timeout / ; clear"),
            edge(8, 9, "Fault / ; log_fault"),
            edge(3, 0, "Timeout"),
            edge(4, 0, "Timeout"),
            edge(5, 0, "Timeout"),
            edge(6, 0, "Timeout"),
            edge(2, 0, "Timeout"),
            edge(7, 1, "Byte [is_sync] / frame_ready; release"),
        ],
        start: Some(0),
    }
}

/// A clocked Moore detector of the overlapping bit pattern 10110 (6 states, one input).
/// Transitions come from the usual prefix-function construction (common practice).
fn pattern_detector() -> Diagram {
    let pattern = [true, false, true, true, false];
    let names = ["Start", "Got1", "Got10", "Got101", "Got1011", "Found"];
    let longest_suffix = |seq: &[bool]| -> usize {
        (0..=seq.len().min(pattern.len()))
            .rev()
            .find(|&k| seq[seq.len() - k..] == pattern[..k])
            .unwrap_or(0)
    };
    let mut edges = Vec::new();
    for s in 0..names.len() {
        for bit in [false, true] {
            let mut seq = pattern[..s].to_vec();
            seq.push(bit);
            let t = longest_suffix(&seq);
            edges.push(edge(s, t, if bit { "Tick [x]" } else { "Tick [!x]" }));
        }
    }
    Diagram {
        title: "Detect10110 (clocked)".into(),
        nodes: names
            .iter()
            .enumerate()
            .map(|(i, n)| node(n, if i == 5 { &["found"] } else { &[] }, None, false))
            .collect(),
        clusters: vec![],
        edges,
        start: Some(0),
    }
}

/// Cycle, long edges, self-loops and clusters nested three deep, with XML specials.
fn nested_tricky() -> Diagram {
    Diagram {
        title: "Tricky <&> \"quotes\"".into(),
        nodes: vec![
            node("A", &[], None, false),
            node("B", &["x & y"], Some(2), false),
            node("C", &[], Some(1), false),
            node("D", &[], Some(0), true),
            node("E", &[], None, false),
            node("F<1>", &[], Some(2), false),
        ],
        clusters: vec![
            cluster("Outer", None),
            cluster("Middle", Some(0)),
            cluster("Inner", Some(1)),
            cluster("Lonely", None),
        ],
        edges: vec![
            edge(0, 1, "go"),
            edge(1, 2, "next"),
            edge(2, 3, "on"),
            edge(3, 4, "out"),
            edge(4, 0, "back <to> A"),
            edge(0, 4, "skip all the way"),
            edge(1, 1, "again"),
            edge(5, 5, ""),
            edge(1, 5, "b&f"),
            edge(5, 0, "home"),
            edge(2, 1, "undo"),
        ],
        start: Some(0),
    }
}

fn samples() -> Vec<(&'static str, Diagram)> {
    vec![
        ("bilge_pump", bilge_pump()),
        ("frame_parser", frame_parser()),
        ("pattern_detector", pattern_detector()),
        ("nested_tricky", nested_tricky()),
    ]
}

/// Parses `svg` and returns all text content of `<text>` and `<title>` elements.
fn texts(svg: &str) -> Vec<String> {
    let doc = match roxmltree::Document::parse(svg) {
        Ok(doc) => doc,
        Err(e) => panic!("SVG is not well-formed XML: {e}\n{svg}"),
    };
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    // A wrapped label is one `<text>` of `<tspan>` pieces: joined with a space they
    // give the label line back.
    doc.descendants()
        .filter(|n| n.is_element() && n.tag_name().name() == "text")
        .filter_map(|n| {
            let spans: Vec<&str> = n
                .children()
                .filter(|c| c.has_tag_name("tspan"))
                .filter_map(|c| c.text())
                .collect();
            if spans.is_empty() {
                n.text().map(str::to_string)
            } else {
                Some(spans.join(" "))
            }
        })
        .collect()
}

fn is_inside(lay: &Layout, mut c: Option<usize>, target: usize) -> bool {
    while let Some(k) = c {
        if k == target {
            return true;
        }
        c = lay.cluster_parent[k];
    }
    false
}

/// The geometric invariants every layout must keep.
fn check_geometry(d: &Diagram, lay: &Layout) -> Result<(), String> {
    const EPS: f64 = 1e-6;
    let n = d.nodes.len();
    for i in 0..n {
        let r = lay.nodes[i];
        if !(r.x >= -EPS && r.y >= -EPS && r.right() <= lay.width + EPS) {
            return Err(format!("node {i} {r:?} outside the drawing"));
        }
        for j in i + 1..n {
            if r.overlaps(&lay.nodes[j], EPS) {
                return Err(format!("nodes {i} and {j} overlap"));
            }
        }
        for (c, cr) in lay.clusters.iter().enumerate() {
            let member = is_inside(lay, lay.node_cluster[i], c);
            if member && !cr.contains(&r, EPS) {
                return Err(format!("node {i} {r:?} not inside its cluster {c} {cr:?}"));
            }
            if !member && cr.overlaps(&r, EPS) {
                return Err(format!("node {i} {r:?} intrudes into cluster {c} {cr:?}"));
            }
        }
    }
    // Clusters: children inside parents, siblings (and unrelated ones) disjoint.
    for (c, cr) in lay.clusters.iter().enumerate() {
        for (k, kr) in lay.clusters.iter().enumerate() {
            if k == c {
                continue;
            }
            if is_inside(lay, Some(k), c) {
                if !cr.contains(kr, EPS) {
                    return Err(format!("cluster {k} not inside its ancestor {c}"));
                }
            } else if !is_inside(lay, Some(c), k) && cr.overlaps(kr, EPS) {
                return Err(format!("unrelated clusters {c} and {k} overlap"));
            }
        }
    }
    // Labels: clear of every node box and of each other, inside their owner cluster and
    // outside every cluster that is not around the owner.
    let boxes: Vec<_> = lay
        .edges
        .iter()
        .filter_map(|e| e.label_box.map(|b| (b, e.label_cluster)))
        .collect();
    for (i, (b, owner)) in boxes.iter().enumerate() {
        for (k, r) in lay.nodes.iter().enumerate() {
            if b.overlaps(r, EPS) {
                return Err(format!("label {i} {b:?} overlaps node {k} {r:?}"));
            }
        }
        for (j, (b2, _)) in boxes.iter().enumerate().skip(i + 1) {
            if b.overlaps(b2, EPS) {
                return Err(format!("labels {i} and {j} overlap"));
            }
        }
        for (c, cr) in lay.clusters.iter().enumerate() {
            let inside = is_inside(lay, *owner, c);
            if inside && !cr.contains(b, EPS) {
                return Err(format!("label {i} sticks out of cluster {c}"));
            }
            if !inside && cr.overlaps(b, EPS) {
                return Err(format!("label {i} intrudes into cluster {c}"));
            }
        }
    }
    // Each label is attached to its own edge: the edge's path passes within
    // [`ATTACH`] px of the label's box.
    for (i, e) in lay.edges.iter().enumerate() {
        if let Some(b) = e.label_box {
            let dist = path_points(e)
                .iter()
                .map(|p| box_distance(&b, *p))
                .fold(f64::INFINITY, f64::min);
            if dist > ATTACH {
                return Err(format!(
                    "label of edge {i} ({:?}) is {dist:.1} px from its edge",
                    e.labels
                ));
            }
        }
    }
    Ok(())
}

/// How far a label may sit from its own edge, in px.
const ATTACH: f64 = 8.0;

/// Points along an edge's path (each segment sampled), the arrowhead's tip included.
fn path_points(e: &EdgeGeometry) -> Vec<Point> {
    let mut pts = vec![e.start];
    let mut cur = e.start;
    for seg in &e.segs {
        const STEPS: usize = 24;
        for k in 1..=STEPS {
            let t = k as f64 / STEPS as f64;
            let p = match *seg {
                PathSeg::Line(p) => Point {
                    x: cur.x + (p.x - cur.x) * t,
                    y: cur.y + (p.y - cur.y) * t,
                },
                PathSeg::Cubic(a, b, p) => {
                    let u = 1.0 - t;
                    let w = [u * u * u, 3.0 * u * u * t, 3.0 * u * t * t, t * t * t];
                    Point {
                        x: w[0] * cur.x + w[1] * a.x + w[2] * b.x + w[3] * p.x,
                        y: w[0] * cur.y + w[1] * a.y + w[2] * b.y + w[3] * p.y,
                    }
                }
            };
            pts.push(p);
        }
        cur = match *seg {
            PathSeg::Line(p) | PathSeg::Cubic(_, _, p) => p,
        };
    }
    pts.push(e.arrow[0]);
    pts
}

/// Distance from `p` to the rectangle `r` (0 inside).
fn box_distance(r: &Rect, p: Point) -> f64 {
    let dx = (r.x - p.x).max(p.x - r.right()).max(0.0);
    let dy = (r.y - p.y).max(p.y - r.bottom()).max(0.0);
    dx.hypot(dy)
}

#[test]
fn samples_are_valid_xml_naming_every_node_and_cluster() {
    let out_dir = std::env::var_os("DETENT_SVG_OUT").map(std::path::PathBuf::from);
    for (name, d) in samples() {
        let svg = render_svg(&d);
        let found = texts(&svg);
        for nd in &d.nodes {
            assert!(found.contains(&nd.name), "{name}: node {} missing", nd.name);
        }
        for c in &d.clusters {
            assert!(
                found.contains(&c.name),
                "{name}: cluster {} missing",
                c.name
            );
        }
        for e in &d.edges {
            if !e.label.is_empty() {
                assert!(
                    found.contains(&e.label),
                    "{name}: label {} missing",
                    e.label
                );
            }
        }
        if let Err(msg) = check_geometry(&d, &layout(&d)) {
            panic!("{name}: {msg}");
        }
        if let Some(dir) = &out_dir {
            std::fs::create_dir_all(dir).expect("create DETENT_SVG_OUT");
            std::fs::write(dir.join(format!("{name}.svg")), &svg).expect("write svg");
        }
    }
}

#[test]
fn cycle_long_edges_self_loops_and_nested_clusters() {
    let d = nested_tricky();
    let lay = layout(&d);
    check_geometry(&d, &lay).unwrap_or_else(|m| panic!("{m}"));
    // Self-loops drawn, parallel-free edges all present: 11 input edges, none merged.
    assert_eq!(lay.edges.len(), d.edges.len());
    assert_eq!(lay.edges.iter().filter(|e| e.from == Some(e.to)).count(), 2);
    // Layers are distances from the start: E is one step from A, D three, so the edge
    // D -> E leads up across several ranks and its path has several pieces.
    let long = lay
        .edges
        .iter()
        .find(|e| e.from == Some(3) && e.to == 4)
        .expect("D -> E drawn");
    assert!(
        long.segs.len() >= 5,
        "long edge has {} pieces",
        long.segs.len()
    );
    // The empty cluster still gets a rectangle and its name.
    assert!(lay.clusters[3].w > 0.0 && lay.clusters[3].h > 0.0);
    let svg = render_svg(&d);
    let found = texts(&svg);
    assert!(found.contains(&"Lonely".to_string()));
    assert!(
        found.contains(&"back <to> A".to_string()),
        "escaped label round-trips"
    );
    assert!(svg.contains("&lt;&amp;&gt;"));
    // Start marker and terminal double border.
    assert!(lay.start_dot.is_some() && lay.start_edge.is_some());
    assert!(svg.contains("<circle"));
}

#[test]
fn parallel_edges_merge_into_stacked_labels() {
    let d = bilge_pump();
    let lay = layout(&d);
    let idle_loop = lay
        .edges
        .iter()
        .find(|e| e.from == Some(0) && e.to == 0)
        .expect("Idle self-loop");
    assert_eq!(idle_loop.labels, vec!["FloatDown", "Tick", "ManualOff"]);
    let back = lay
        .edges
        .iter()
        .find(|e| e.from == Some(3) && e.to == 0)
        .expect("Draining -> Idle");
    assert_eq!(back.labels, vec!["Tick", "ManualOff"]);
    assert_eq!(lay.edges.len(), 12);
}

/// A state with a dozen successors, each edge carrying a long label: side by side on one
/// label rank the labels make the drawing as wide as their sum, so the layout breaks them
/// (before the guard, before ` / `, after `; `) and keeps the smaller drawing. Every
/// piece is one line of one `<text>`; joined with a space the pieces give the label back.
#[test]
fn long_labels_of_a_wide_rank_are_wrapped() {
    let n = 12;
    let mut nodes = vec![node("Hub", &[], None, false)];
    let mut edges = Vec::new();
    let mut labels = Vec::new();
    for i in 0..n {
        nodes.push(node(&format!("S{i}"), &[], None, false));
        let label = format!(
            "Ev{i} | Ev{} [in0 && !in1] / out0, out1; do act0, act1",
            i + 1
        );
        edges.push(edge(0, i + 1, &label));
        labels.push(label);
    }
    let d = Diagram {
        title: "Fan".into(),
        nodes,
        clusters: vec![],
        edges,
        start: Some(0),
    };
    let lay = layout(&d);
    check_geometry(&d, &lay).unwrap_or_else(|m| panic!("{m}"));
    let wrapped: Vec<&String> = lay
        .edges
        .iter()
        .flat_map(|e| &e.labels)
        .filter(|l| l.contains('\n'))
        .collect();
    assert_eq!(
        wrapped.len(),
        n,
        "every long label wrapped: {:?}",
        lay.edges
    );
    for l in &wrapped {
        assert!(labels.contains(&l.replace('\n', " ")), "{l:?} reads back");
        assert!(
            l.split('\n').all(|p| p.chars().count() <= 24),
            "{l:?} pieces at most 24 characters"
        );
    }
    // One line of 50 characters is about 460 px; twelve side by side would be over
    // 5,500 px wide.
    assert!(lay.width < 4000.0, "width {}", lay.width);
    let found = texts(&render_svg(&d));
    for l in &labels {
        assert!(found.contains(l), "label {l} is one text element");
    }
}

#[test]
fn rendering_is_deterministic() {
    for (_, d) in samples() {
        assert_eq!(render_svg(&d), render_svg(&d.clone()));
    }
}

#[test]
fn empty_and_malformed_diagrams_render() {
    let empty = Diagram::default();
    texts(&render_svg(&empty));
    let bad = Diagram {
        title: String::new(),
        nodes: vec![node("Only", &[], Some(7), false)],
        edges: vec![edge(0, 5, "dangling"), edge(3, 0, "x")],
        clusters: vec![cluster("Loop1", Some(1)), cluster("Loop2", Some(0))],
        start: Some(9),
    };
    let lay = layout(&bad);
    check_geometry(&bad, &lay).unwrap_or_else(|m| panic!("{m}"));
    assert!(lay.edges.is_empty() && lay.start_dot.is_none());
    texts(&render_svg(&bad));
}

fn arb_diagram() -> impl Strategy<Value = Diagram> {
    (1usize..14, 0usize..5).prop_flat_map(|(n, nc)| {
        let names = proptest::collection::vec("[A-Za-z<&>]{1,12}", n);
        let details = proptest::collection::vec(proptest::collection::vec("[a-z_]{1,10}", 0..3), n);
        let node_cl = proptest::collection::vec(proptest::option::of(0..nc.max(1)), n);
        let terminal = proptest::collection::vec(any::<bool>(), n);
        let parents = proptest::collection::vec(proptest::option::of(0..nc.max(1)), nc);
        let edges = proptest::collection::vec((0..n, 0..n, "[a-z \\[\\]/;!]{0,18}"), 0..3 * n);
        let start = proptest::option::of(0..n);
        (names, details, node_cl, terminal, parents, edges, start).prop_map(
            move |(names, details, node_cl, terminal, parents, edges, start)| Diagram {
                title: "random".into(),
                nodes: (0..n)
                    .map(|i| Node {
                        name: names[i].clone(),
                        detail: details[i].clone(),
                        cluster: if nc == 0 { None } else { node_cl[i] },
                        terminal: terminal[i],
                    })
                    .collect(),
                clusters: parents
                    .iter()
                    .enumerate()
                    .map(|(i, p)| Cluster {
                        name: format!("G{i}"),
                        parent: *p,
                    })
                    .collect(),
                edges: edges
                    .into_iter()
                    .map(|(from, to, label)| Edge {
                        from,
                        to,
                        label,
                        from_cluster: None,
                    })
                    .collect(),
                start,
            },
        )
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]
    #[test]
    fn random_diagrams_keep_the_layout_invariants(d in arb_diagram()) {
        let svg = render_svg(&d);
        let found = texts(&svg);
        for nd in &d.nodes {
            prop_assert!(found.contains(&nd.name), "node {} missing", nd.name);
        }
        let lay = layout(&d);
        if let Err(msg) = check_geometry(&d, &lay) {
            prop_assert!(false, "{}", msg);
        }
    }
}

/// The diagrams of random machines (`tests/src/gen.rs`: 5 to 30 states, groups nested up
/// to three deep, group rules drawn once from the border, `_` rules) keep every
/// invariant of [`check_geometry`]: labels beside their own edge, overlapping no node
/// and no other label; and no label line is a lone `_`.
#[test]
fn random_machines_keep_the_layout_invariants() {
    use detent_compiler::emit::diagram;
    use detent_tests::gen::{random_spec, GenConfig};
    let cfg = GenConfig {
        states: (5, 30),
        ..GenConfig::default()
    };
    // 0..60, and the two dense machines whose drawings wrap labels (draw_size).
    for seed in (0..60).chain([107, 257]) {
        let text = random_spec(seed, &cfg);
        let file = detent_compiler::syntax::parse_source(&text).expect("parses");
        let (ms, errors) = detent_compiler::model::resolve_file(&file);
        assert!(errors.is_empty(), "{errors:?}");
        let d = diagram::to_diagram(&ms[0]);
        let lay = layout(&d);
        if let Err(msg) = check_geometry(&d, &lay) {
            panic!("seed {seed}: {msg}");
        }
        // A wrapped label's pieces, joined with a space, are a rule's line of the
        // diagram, and no piece is empty.
        let lines: Vec<&str> = d.edges.iter().flat_map(|e| e.label.split('\n')).collect();
        for l in lay.edges.iter().flat_map(|e| &e.labels) {
            assert!(
                lines.contains(&l.replace('\n', " ").as_str()),
                "seed {seed}: {l:?} is no label line"
            );
            assert!(
                l.split('\n').all(|p| !p.trim().is_empty()),
                "seed {seed}: {l:?}"
            );
        }
        for e in &lay.edges {
            assert!(
                e.labels
                    .iter()
                    .flat_map(|l| l.split('\n'))
                    .all(|l| l.trim() != "_" && !l.starts_with("_ ") && !l.contains("| _")),
                "seed {seed}: a bare `_` label: {:?}",
                e.labels
            );
        }
    }
}
