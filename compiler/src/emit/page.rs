//! The page of `detent view` (DESIGN.md, "The viewer"): one self-contained HTML file.
//!
//! It holds the diagram ([`super::svg`], inline, without the XML declaration or the
//! namespace address), the findings of `check` (DESIGN.md's JSON entries,
//! [`DiagnosticEntry`]), the state table ([`crate::table`], JSON), the rules' lines and
//! the edges each takes (from the lowered form, so that a finding can mark them), and
//! the simulator ([`super::js`], emitted from the lowered form). The page's own HTML,
//! CSS and script are in `emit/page/` and embedded with `include_str!`; they decide
//! nothing about rule choice (the simulator does) and load nothing from anywhere: the
//! page works from a file with no network.
//!
//! The data goes in a `<script type="application/json">` element with `<` written as
//! `\u003c`, so no text of the spec can close the element.

use super::{diagram, js, svg};
use crate::check::render::line_col;
use crate::model::Machine;
use crate::report::check::DiagnosticEntry;

const PAGE: &str = include_str!("page/page.html");
const CSS: &str = include_str!("page/page.css");
const SCRIPT: &str = include_str!("page/page.js");

/// Escapes JSON for a `<script>` element (`<` only ever appears inside strings).
fn script_json(v: &serde_json::Value) -> String {
    v.to_string()
        .replace('<', "\\u003c")
        .replace('\u{2028}', "\\u2028")
        .replace('\u{2029}', "\\u2029")
}

fn html_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// The rules as the page needs them: the line each starts on, and the edges
/// (state, target) it takes, from the lowered form.
fn rules(m: &Machine) -> serde_json::Value {
    let mut edges: Vec<Vec<(usize, usize)>> = vec![Vec::new(); m.rules.len()];
    for c in m.lowered.cells() {
        for ch in &c.choices {
            let e = (c.state.index(), ch.target.index());
            let list = &mut edges[ch.rule.index()];
            if !list.contains(&e) {
                list.push(e);
            }
        }
    }
    serde_json::Value::Array(
        m.rules
            .iter()
            .zip(edges)
            .map(|(r, e)| serde_json::json!({ "line": line_col(r.span).0, "edges": e }))
            .collect(),
    )
}

/// The page of machine `m` of `file`, with its `findings`. `live`: the version number
/// the page compares with `/version` to reload itself (served), or `None` (a file).
pub fn machine_page(
    file: &str,
    m: &Machine,
    findings: &[DiagnosticEntry],
    live: Option<u64>,
) -> String {
    let drawing = svg::render_svg(&diagram::to_diagram(m));
    let drawing = drawing
        .lines()
        .filter(|l| !l.starts_with("<?xml"))
        .collect::<Vec<_>>()
        .join("\n")
        .replace(" xmlns=\"http://www.w3.org/2000/svg\"", "");
    let table: serde_json::Value =
        serde_json::from_str(&crate::table::render(m, crate::table::TableFormat::Json))
            .unwrap_or(serde_json::Value::Null);
    let states: Vec<serde_json::Value> = m
        .states
        .iter()
        .map(|s| serde_json::json!({"name": s.name, "line": line_col(s.span).0}))
        .collect();
    let data = serde_json::json!({
        "file": file,
        "machine": m.name,
        "live": live,
        "states": states,
        "rules": rules(m),
        "findings": findings,
        "table": table,
        "svg": drawing,
    });
    fill(
        &format!("{} · detent view", m.name),
        &script_json(&data),
        &js::to_js(m),
    )
}

/// The page shown while the spec has errors: the `errors` as text, and the poller
/// that reloads the page once the file is saved again.
pub fn error_page(file: &str, errors: &str, live: u64) -> String {
    let data = serde_json::json!({ "file": file, "live": live, "errors": errors });
    fill(
        &format!("{file} · detent view"),
        &script_json(&data),
        "null",
    )
}

fn fill(title: &str, data: &str, sim: &str) -> String {
    PAGE.replace("{{TITLE}}", &html_escape(title))
        .replace("/*{{CSS}}*/", CSS)
        .replace("/*{{SCRIPT}}*/", SCRIPT)
        .replace("{{DATA}}", data)
        .replace("/*{{SIM}}*/", sim)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spec_text_cannot_close_the_data_element() {
        let v = serde_json::json!({ "m": "</script><script>alert(1)</script>" });
        assert!(!script_json(&v).contains("</script>"));
        assert_eq!(html_escape("<a & \"b\">"), "&lt;a &amp; &quot;b&quot;&gt;");
    }
}
