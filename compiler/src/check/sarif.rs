//! SARIF output of `detent check --format sarif`: the Static Analysis Results
//! Interchange Format, version 2.1.0 (an OASIS standard), which code-scanning services
//! read to annotate source files.
//!
//! One log holds one run for every file checked together. The run's tool is `detent`
//! with one rule (`reportingDescriptor`) per [`Lint`], in [`Lint::ALL`] order, so a
//! result's `ruleIndex` is the lint's position there. Each diagnostic becomes one
//! result: `ruleId` the lint name, `level` `error` or `warning` (after attributes and
//! command-line options), a message whose text carries the notes, the witness valuation
//! and the counterexample trace lines where present, a physical location (the file as
//! given, 1-based start line and column, the end when the span has one) and related
//! locations for secondary spans. Columns count Unicode code points
//! (`columnKind: unicodeCodePoints`), as the spec parser does. The structured parts
//! (state, event, states, witness, trace) are repeated in the result's `properties` bag
//! in the JSON form of `check --format json`.
//!
//! Cost: linear in the number of diagnostics.

use super::render::{line_col, trace_json, trace_lines, valuation_text};
use super::FileReport;
use crate::diag::{Diagnostic, Lint, Severity};
use proc_macro2::Span;
use serde_json::{json, Map, Value};

/// The `$schema` URI of SARIF 2.1.0 logs, as the OASIS standard publishes it.
pub const SARIF_SCHEMA_URI: &str =
    "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json";

/// A paragraph for each lint saying what it finds and how to fix it: the rule's `help`.
pub fn lint_help(lint: Lint) -> &'static str {
    match lint {
        Lint::Syntax => {
            "The file is not valid spec syntax (LANGUAGE.md, Grammar). Fix the token the \
             location points at; the message says what the parser expected."
        }
        Lint::Name => {
            "A name is undefined or declared twice, a group is used as a target, a clocked \
             machine has a trigger, `start` is missing, or a size limit is exceeded. Declare \
             or rename the name the location points at."
        }
        Lint::Incomplete => {
            "Under `unhandled complete` (the default) every state must handle every event for \
             every input valuation. The message names the state and event and a valuation no \
             rule covers. Add a rule (in the state or an enclosing group), or declare \
             `unhandled ignore;` or `unhandled reject;` to leave such pairs unhandled on \
             purpose."
        }
        Lint::OverlappingRules => {
            "Within the scope used for a (state, event), guards must be mutually exclusive: \
             rule order never picks one. The message gives a valuation that makes both guards \
             true and the related location shows the other rule. Make the guards exclusive."
        }
        Lint::UnreachableState => {
            "No sequence of events from the start state reaches this state (a guard counts as \
             satisfiable unless it is never true). Add a rule that leads here, or remove the \
             state."
        }
        Lint::DeadEnd => {
            "Once the machine is in this state (or this closed set of states) no rule leads \
             anywhere else. Add a way out, or mark the state `terminal` if it is a latched \
             fault."
        }
        Lint::NeverTrueGuard => {
            "No input valuation satisfies this guard, so the rule can never fire. Fix the \
             guard or remove the rule."
        }
        Lint::UnusedDeclaration => {
            "An event no rule names, an input no guard reads, an output nothing emits, or an \
             action nothing runs. Use it or remove it from its declaration."
        }
        Lint::EquivalentStates => {
            "These states behave the same for every input sequence; minimization merges them. \
             Merge them by hand, or keep them and allow the lint if the split is intended."
        }
        Lint::Naming => {
            "Machines, states, groups and events are UpperCamelCase; inputs, outputs and \
             actions are snake_case (they become struct fields and functions). The help line \
             suggests the converted name."
        }
        Lint::Property => {
            "A `never` property is true in some reachable step, or a `recover to` target cannot \
             be reached again from some reachable state. The message carries the shortest \
             trace from the start state that shows it, one step per line in the form \
             `detent run --trace` reads."
        }
    }
}

fn level(s: Severity) -> &'static str {
    match s {
        Severity::Error => "error",
        Severity::Warning => "warning",
    }
}

/// A file path as a URI reference: `\` becomes `/`, and every byte outside the
/// unreserved set of RFC 3986 (and `/`) is percent-encoded. A relative path stays a
/// relative reference.
pub fn path_uri(path: &str) -> String {
    let mut out = String::new();
    for b in path.replace('\\', "/").bytes() {
        if b.is_ascii_alphanumeric() || matches!(b, b'-' | b'.' | b'_' | b'~' | b'/') {
            out.push(char::from(b));
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out
}

/// The SARIF region of a span, `None` when the span has no source position (line 0).
fn region(span: Span) -> Option<Value> {
    let (line, column) = line_col(span);
    if line == 0 {
        return None;
    }
    let mut r = Map::new();
    r.insert("startLine".into(), line.into());
    r.insert("startColumn".into(), column.into());
    let (start, end) = (span.start(), span.end());
    if (end.line, end.column) > (start.line, start.column) {
        r.insert("endLine".into(), end.line.into());
        // SARIF's endColumn is the column after the region; proc_macro2's end column is
        // already exclusive but 0-based.
        r.insert("endColumn".into(), (end.column + 1).into());
    }
    Some(Value::Object(r))
}

fn physical_location(uri: &str, span: Option<Span>) -> Value {
    let mut p = Map::new();
    p.insert("artifactLocation".into(), json!({ "uri": uri }));
    if let Some(r) = span.and_then(region) {
        p.insert("region".into(), r);
    }
    Value::Object(p)
}

/// The result's message text: the headline, then notes, the witness valuation (unless a
/// note already states it), the trace lines and help lines.
pub fn message_text(d: &Diagnostic) -> String {
    let mut lines = vec![d.message.clone()];
    for n in &d.notes {
        lines.push(format!("note: {n}"));
    }
    if let Some(w) = &d.witness {
        let v = valuation_text(w);
        if !d.notes.iter().any(|n| n.contains(&v)) {
            lines.push(format!("witness: {v}"));
        }
    }
    if let Some(t) = &d.trace {
        lines.push("shortest trace from the start state:".into());
        for (i, l) in trace_lines(t).iter().enumerate() {
            lines.push(format!("  {}. {l}", i + 1));
        }
    }
    for h in &d.helps {
        lines.push(format!("help: {h}"));
    }
    lines.join("\n")
}

fn result(d: &Diagnostic, file: &str, machine: Option<&str>) -> Value {
    let uri = path_uri(file);
    let rule_index = Lint::ALL.iter().position(|l| *l == d.lint).unwrap_or(0);
    let mut r = Map::new();
    r.insert("ruleId".into(), d.lint.name().into());
    r.insert("ruleIndex".into(), rule_index.into());
    r.insert("level".into(), level(d.severity).into());
    r.insert("message".into(), json!({ "text": message_text(d) }));
    r.insert(
        "locations".into(),
        json!([{ "physicalLocation": physical_location(&uri, d.span) }]),
    );
    if !d.related.is_empty() {
        let related: Vec<Value> = d
            .related
            .iter()
            .enumerate()
            .map(|(i, (span, label))| {
                json!({
                    "id": i,
                    "physicalLocation": physical_location(&uri, Some(*span)),
                    "message": { "text": label },
                })
            })
            .collect();
        r.insert("relatedLocations".into(), Value::Array(related));
    }
    let mut props = Map::new();
    if let Some(m) = machine {
        props.insert("machine".into(), m.into());
    }
    if let Some(s) = &d.state {
        props.insert("state".into(), s.clone().into());
    }
    if let Some(e) = &d.event {
        props.insert("event".into(), e.clone().into());
    }
    if !d.states.is_empty() {
        props.insert("states".into(), json!(d.states));
    }
    if let Some(w) = &d.witness {
        let mut map = Map::new();
        for (name, b) in w {
            map.insert(name.clone(), Value::Bool(*b));
        }
        props.insert("witness".into(), Value::Object(map));
    }
    if let Some(t) = &d.trace {
        props.insert("trace".into(), trace_json(t));
    }
    if !props.is_empty() {
        r.insert("properties".into(), Value::Object(props));
    }
    Value::Object(r)
}

fn rule_descriptor(lint: Lint) -> Value {
    json!({
        "id": lint.name(),
        "name": lint.name(),
        "shortDescription": { "text": lint.summary() },
        "fullDescription": { "text": lint_help(lint) },
        "help": { "text": lint_help(lint) },
        "defaultConfiguration": { "level": level(lint.default_severity()) },
    })
}

/// The SARIF 2.1.0 log of one `check` invocation: one run covering every file report,
/// results in file order, then machine order, then the diagnostics' order.
pub fn sarif_log(reports: &[FileReport]) -> Value {
    let rules: Vec<Value> = Lint::ALL.iter().map(|l| rule_descriptor(*l)).collect();
    let artifacts: Vec<Value> = reports
        .iter()
        .map(|r| json!({ "location": { "uri": path_uri(&r.file) } }))
        .collect();
    let results: Vec<Value> = reports
        .iter()
        .flat_map(|r| {
            r.machines.iter().flat_map(move |m| {
                m.diagnostics
                    .iter()
                    .map(move |d| result(d, &r.file, m.name.as_deref()))
            })
        })
        .collect();
    json!({
        "$schema": SARIF_SCHEMA_URI,
        "version": "2.1.0",
        "runs": [{
            "tool": {
                "driver": {
                    "name": "detent",
                    "version": env!("CARGO_PKG_VERSION"),
                    "rules": rules,
                }
            },
            "columnKind": "unicodeCodePoints",
            "artifacts": artifacts,
            "results": results,
        }]
    })
}
