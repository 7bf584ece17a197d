//! Printing diagnostics: rustc-shaped text with source snippets, and the JSON of
//! DESIGN.md (`check --format json`).

use crate::diag::{Diagnostic, Severity, TraceStep};
use proc_macro2::Span;
use serde_json::{json, Map, Value};
use std::fmt::Write;

/// A source file the spans point into.
#[derive(Clone, Copy, Debug)]
pub struct Source<'a> {
    /// The name to print (`examples/kiln.detent`).
    pub name: &'a str,
    /// Its text.
    pub text: &'a str,
}

/// `a = true, b = false`, or `any input values` for an empty valuation.
pub fn valuation_text(v: &[(String, bool)]) -> String {
    if v.is_empty() {
        return "any input values".into();
    }
    v.iter()
        .map(|(n, b)| format!("{n} = {b}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// A trace as spec-file trace lines (`Event a=1 b=0`), one per step, each as
/// `detent run --trace` reads it.
pub fn trace_lines(trace: &[TraceStep]) -> Vec<String> {
    trace
        .iter()
        .map(|s| {
            let mut line = s.event.clone();
            for (name, v) in &s.inputs {
                let _ = write!(line, " {name}={}", u8::from(*v));
            }
            line
        })
        .collect()
}

/// Line (1-based) and column (1-based) of a span's start.
pub fn line_col(span: Span) -> (usize, usize) {
    let lc = span.start();
    (lc.line, lc.column + 1)
}

/// Renders one diagnostic in rustc's shape.
pub fn render_text(d: &Diagnostic, src: &Source) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{}[{}]: {}",
        d.severity.name(),
        d.lint.name(),
        d.message
    );
    let mut spans: Vec<(Span, char, &str)> = Vec::new();
    if let Some(s) = d.span {
        spans.push((s, '^', ""));
    }
    for (s, label) in &d.related {
        spans.push((*s, '-', label.as_str()));
    }
    let lines: Vec<&str> = src.text.lines().collect();
    let width = spans
        .iter()
        .map(|(s, _, _)| s.start().line.to_string().len())
        .max()
        .unwrap_or(1);
    let pad = " ".repeat(width);
    match d.span {
        Some(s) => {
            let (l, c) = line_col(s);
            let _ = writeln!(out, "{pad}--> {}:{l}:{c}", src.name);
        }
        None => {
            let _ = writeln!(out, "{pad}--> {}", src.name);
        }
    }
    if !spans.is_empty() && !lines.is_empty() {
        let _ = writeln!(out, "{pad} |");
        for (span, mark, label) in &spans {
            let start = span.start();
            let end = span.end();
            let Some(text) = lines.get(start.line.saturating_sub(1)) else {
                continue;
            };
            let _ = writeln!(out, "{:>width$} | {}", start.line, text);
            let prefix: String = text
                .chars()
                .take(start.column)
                .map(|c| if c == '\t' { '\t' } else { ' ' })
                .collect();
            let len = if end.line == start.line && end.column > start.column {
                end.column - start.column
            } else {
                1
            };
            let marks: String = std::iter::repeat_n(*mark, len).collect();
            if label.is_empty() {
                let _ = writeln!(out, "{pad} | {prefix}{marks}");
            } else {
                let _ = writeln!(out, "{pad} | {prefix}{marks} {label}");
            }
        }
        let _ = writeln!(out, "{pad} |");
    }
    for n in &d.notes {
        let _ = writeln!(out, "{pad} = note: {n}");
    }
    if let Some(trace) = &d.trace {
        let _ = writeln!(out, "{pad} = note: shortest trace from the start state:");
        for (i, line) in trace_lines(trace).iter().enumerate() {
            let _ = writeln!(out, "{pad}         {:>3}. {line}", i + 1);
        }
    }
    for h in &d.helps {
        let _ = writeln!(out, "{pad} = help: {h}");
    }
    out
}

/// The summary line printed after text diagnostics.
pub fn summary_text(errors: usize, warnings: usize) -> String {
    let plural = |n: usize, w: &str| {
        if n == 1 {
            format!("1 {w}")
        } else {
            format!("{n} {w}s")
        }
    };
    format!(
        "detent: {}, {}",
        plural(errors, "error"),
        plural(warnings, "warning")
    )
}

fn valuation_json(v: &[(String, bool)]) -> Value {
    let mut map = Map::new();
    for (name, b) in v {
        map.insert(name.clone(), Value::Bool(*b));
    }
    Value::Object(map)
}

/// A trace as JSON: `[{"event":..,"inputs":{..}},..]`.
pub fn trace_json(trace: &[TraceStep]) -> Value {
    Value::Array(
        trace
            .iter()
            .map(|s| json!({"event": s.event, "inputs": valuation_json(&s.inputs)}))
            .collect(),
    )
}

/// One diagnostic as the JSON object of DESIGN.md.
pub fn diagnostic_json(d: &Diagnostic, file: &str) -> Value {
    let mut obj = Map::new();
    obj.insert("lint".into(), d.lint.name().into());
    obj.insert("level".into(), d.severity.name().into());
    obj.insert("message".into(), d.message.clone().into());
    if let Some(s) = &d.state {
        obj.insert("state".into(), s.clone().into());
    }
    if let Some(e) = &d.event {
        obj.insert("event".into(), e.clone().into());
    }
    obj.insert(
        "states".into(),
        Value::Array(d.states.iter().map(|s| s.clone().into()).collect()),
    );
    if let Some(w) = &d.witness {
        obj.insert("witness".into(), valuation_json(w));
    }
    if let Some(t) = &d.trace {
        obj.insert("trace".into(), trace_json(t));
    }
    if let Some(s) = d.span {
        let (line, column) = line_col(s);
        obj.insert(
            "span".into(),
            json!({"file": file, "line": line, "column": column}),
        );
    }
    if !d.notes.is_empty() {
        obj.insert("notes".into(), json!(d.notes));
    }
    if !d.helps.is_empty() {
        obj.insert("helps".into(), json!(d.helps));
    }
    Value::Object(obj)
}

/// Counts errors and warnings.
pub fn count(diags: &[Diagnostic]) -> (usize, usize) {
    let errors = diags
        .iter()
        .filter(|d| d.severity == Severity::Error)
        .count();
    (errors, diags.len() - errors)
}
