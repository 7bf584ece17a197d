//! Diagrams of every example: DOT read by Graphviz's `dot` (an external check: the
//! Graphviz parser), SVG parsed as XML with every state name present.

use detent_compiler::emit::{diagram, dot, svg};
use detent_compiler::model::{resolve_file, Machine};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

fn examples() -> Vec<(PathBuf, Machine)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples");
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("examples/ exists")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "detent"))
        .collect();
    paths.sort();
    assert!(paths.len() >= 6, "the examples are there");
    paths
        .into_iter()
        .map(|p| {
            let text = std::fs::read_to_string(&p).expect("example readable");
            let m = machine(&text);
            (p, m)
        })
        .collect()
}

fn machine(text: &str) -> Machine {
    let file = detent_compiler::syntax::parse_source(text).expect("parses");
    let (mut ms, errors) = resolve_file(&file);
    assert!(errors.is_empty(), "{errors:?}");
    ms.remove(0)
}

/// Nested groups three deep, a group rule every member uses (lifted to the cluster),
/// one a member overrides, names that need escaping in no format but a guard with
/// every operator.
const NESTED: &str = "machine Nest {
    events Go, Back, Halt;
    inputs a, b;
    outputs x, y, z;
    actions f;
    start Top;
    unhandled ignore;
    state Top { Go if a || !b && (a || b) => Inner1, emit x, do f; }
    group Outer emit x {
        Halt => Top;
        group Middle emit y {
            enter do f;
            Back => Top;
            group Core emit z {
                state Inner1 { Go => Inner2; }
                state Inner2 { Go => Inner1; Back => stay; }
            }
        }
        state Side { Go => stay; }
    }
}";

fn run_dot(source: &str, what: &str) -> String {
    let child = Command::new("dot")
        .arg("-Tsvg")
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn();
    let mut child = match child {
        Ok(c) => c,
        Err(e) => panic!(
            "cannot run Graphviz `dot` ({e}); install Graphviz (Debian package `graphviz`) to \
             run this test"
        ),
    };
    child
        .stdin
        .take()
        .expect("stdin")
        .write_all(source.as_bytes())
        .expect("write to dot");
    let out = child.wait_with_output().expect("dot runs");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        out.status.success(),
        "dot rejected the DOT of {what}: {stderr}\n{source}"
    );
    assert!(
        !stderr.contains("Warning") && !stderr.contains("Error"),
        "dot warned about {what}: {stderr}"
    );
    String::from_utf8(out.stdout).expect("dot writes UTF-8")
}

fn check_dot(m: &Machine, what: &str) {
    let source = dot::to_dot(m);
    let svg = run_dot(&source, what);
    // Graphviz's SVG starts with a DOCTYPE.
    let opts = roxmltree::ParsingOptions {
        allow_dtd: true,
        ..Default::default()
    };
    let doc = roxmltree::Document::parse_with_options(&svg, opts).expect("dot's SVG is XML");
    let text: String = doc
        .descendants()
        .filter(|n| n.is_text())
        .filter_map(|n| n.text())
        .collect::<Vec<_>>()
        .join("\n");
    for st in &m.states {
        assert!(
            text.contains(&st.name),
            "{what}: state `{}` drawn by dot",
            st.name
        );
    }
    for g in &m.groups {
        assert!(
            text.contains(&g.name),
            "{what}: group `{}` drawn by dot",
            g.name
        );
    }
    let clusters = source.matches("subgraph cluster_").count();
    assert_eq!(clusters, m.groups.len(), "{what}: one cluster per group");
}

#[test]
fn dot_of_every_example_is_read_by_graphviz() {
    for (p, m) in examples() {
        check_dot(&m, &p.display().to_string());
    }
}

#[test]
fn dot_of_nested_groups_is_read_by_graphviz() {
    let m = machine(NESTED);
    check_dot(&m, "the nested spec");
    let source = dot::to_dot(&m);
    // Outer's Halt is used by every member and leaves the group: drawn once from the
    // cluster. Middle's Back is overridden by Inner2 (`Back => stay`): per member.
    assert!(
        source.contains("[ltail=cluster_0, label=\"Halt\\l\"]"),
        "{source}"
    );
    assert!(!source.contains("ltail=cluster_1"), "{source}");
    assert!(
        source.contains("label=\"Go [a || !b && (a || b)] / x; do f\\l\"]"),
        "{source}"
    );
    // Nesting: Core's cluster opens inside Middle's, inside Outer's.
    let outer = source.find("subgraph cluster_0").expect("Outer");
    let middle = source.find("subgraph cluster_1").expect("Middle");
    let core = source.find("subgraph cluster_2").expect("Core");
    assert!(outer < middle && middle < core);
}

fn check_svg(m: &Machine, what: &str) -> String {
    let text = svg::render_svg(&diagram::to_diagram(m));
    let doc = roxmltree::Document::parse(&text)
        .unwrap_or_else(|e| panic!("{what}: the SVG is not XML: {e}"));
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let texts: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .collect();
    for st in &m.states {
        assert!(
            texts.iter().any(|t| *t == st.name),
            "{what}: state `{}` is a text element of the SVG",
            st.name
        );
    }
    text
}

#[test]
fn svg_of_every_example_is_xml_with_every_state() {
    for (p, m) in examples() {
        check_svg(&m, &p.display().to_string());
    }
    check_svg(&machine(NESTED), "the nested spec");
}

/// A group's rule that every member uses is one SVG edge, leaving the group's border,
/// standing for every member (the page finds it from any of them), as in the DOT output.
#[test]
fn svg_draws_a_group_rule_once_from_the_group() {
    let m = machine(NESTED);
    let text = svg::render_svg(&diagram::to_diagram(&m));
    let doc = roxmltree::Document::parse(&text).expect("XML");
    let halt: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("g") && n.attribute("class") == Some("edge"))
        .filter(|n| {
            n.descendants()
                .any(|t| t.has_tag_name("text") && t.text() == Some("Halt"))
        })
        .collect();
    assert_eq!(halt.len(), 1, "one Halt label:\n{text}");
    assert_eq!(halt[0].attribute("data-group"), Some("0"));
    // Outer holds Inner1, Inner2 (through Middle and Core) and Side: states 1, 2, 3.
    assert_eq!(halt[0].attribute("data-from"), Some("1 2 3"));
    assert_eq!(halt[0].attribute("data-to"), Some("0"));
    // Back is overridden by Inner2: drawn from Inner1 alone, not from the group.
    assert!(!text.contains("data-group=\"1\""), "{text}");
}
