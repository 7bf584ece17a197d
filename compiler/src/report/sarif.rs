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
//! The log is a tree of serde structures ([`SarifLog`] down), whose fields serialize in
//! camelCase as the standard names them.
//!
//! Cost: linear in the number of diagnostics.

use super::trace_entries;
use super::{StepEntry, Valuation};
use crate::check::render::{line_col, trace_note, valuation_text};
use crate::diag::{Diagnostic, Lint, Severity};
use crate::driver::FileReport;
use proc_macro2::Span;
use serde::Serialize;

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
        Lint::DeadRule => {
            "The rule's scope is reachable, but in every reachable state it applies to \
             something else always decides first: the state (or a group nearer to it) names \
             the event itself, a preempt rule or an earlier rule takes every valuation where \
             its guard holds. The note names such a state. Remove the rule, or change what \
             overrides it."
        }
        Lint::RepeatedAction => {
            "When the rule fires, the step runs one action twice: say, in the rule's `do` \
             list and in an `enter do` of its target, or in the leave actions of two scopes. \
             The note gives the state, the event and the whole sequence. Run the action in one \
             place."
        }
        Lint::CounterRange => {
            "A counter operation (`n += k`, `n -= k`, `n = k`) can take its counter outside \
             `0..=N` in some reachable configuration. The message gives the shortest trace \
             that does it. Guard the rule with a comparison (`if n < N`) or widen the \
             counter's range; generated code would stop the counter at the end of its \
             range."
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

/// A SARIF 2.1.0 log (`sarifLog`).
#[derive(Debug, Serialize)]
pub struct SarifLog {
    /// The schema URI.
    #[serde(rename = "$schema")]
    pub schema: &'static str,
    /// `2.1.0`.
    pub version: &'static str,
    /// One run.
    pub runs: Vec<Run>,
}

/// A `run`: the tool, the files and the results.
#[derive(Debug, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct Run {
    /// The tool.
    pub tool: Tool,
    /// `unicodeCodePoints`.
    pub column_kind: &'static str,
    /// The files checked.
    pub artifacts: Vec<Artifact>,
    /// The findings.
    pub results: Vec<SarifResult>,
}

/// A `tool`.
#[derive(Debug, Serialize)]
pub struct Tool {
    /// Its driver component.
    pub driver: ToolDriver,
}

/// The tool's `driver` component: detent and its rules.
#[derive(Debug, Serialize)]
pub struct ToolDriver {
    /// `detent`.
    pub name: &'static str,
    /// The crate version.
    pub version: &'static str,
    /// One rule per lint, in [`Lint::ALL`] order.
    pub rules: Vec<Rule>,
}

/// A `message` (or any text property).
#[derive(Debug, Serialize)]
pub struct Text {
    /// The text.
    pub text: String,
}

impl Text {
    fn of(text: impl Into<String>) -> Text {
        Text { text: text.into() }
    }
}

/// A rule (`reportingDescriptor`).
#[derive(Debug, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct Rule {
    /// The lint's name.
    pub id: &'static str,
    /// The lint's name.
    pub name: &'static str,
    /// One line.
    pub short_description: Text,
    /// A paragraph.
    pub full_description: Text,
    /// The same paragraph.
    pub help: Text,
    /// The default level.
    pub default_configuration: DefaultConfiguration,
}

/// A rule's `defaultConfiguration`.
#[derive(Debug, Serialize)]
pub struct DefaultConfiguration {
    /// `error` or `warning`.
    pub level: &'static str,
}

/// An `artifact`: a file checked.
#[derive(Debug, Serialize)]
pub struct Artifact {
    /// Where it is.
    pub location: ArtifactLocation,
}

/// An `artifactLocation`.
#[derive(Debug, Serialize)]
pub struct ArtifactLocation {
    /// The path as a URI reference.
    pub uri: String,
}

/// A `result`: one diagnostic.
#[derive(Debug, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct SarifResult {
    /// The lint's name.
    pub rule_id: &'static str,
    /// The lint's position in [`Lint::ALL`].
    pub rule_index: usize,
    /// `error` or `warning`.
    pub level: &'static str,
    /// The message with notes, witness, trace and help.
    pub message: Text,
    /// The primary location.
    pub locations: Vec<Location>,
    /// Secondary locations.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub related_locations: Vec<RelatedLocation>,
    /// The structured parts, in the JSON form of `check --format json`.
    #[serde(skip_serializing_if = "Properties::is_empty")]
    pub properties: Properties,
}

/// A `location`.
#[derive(Debug, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct Location {
    /// The file and region.
    pub physical_location: PhysicalLocation,
}

/// A related `location`, with an id and a label.
#[derive(Debug, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct RelatedLocation {
    /// Its index among the related locations.
    pub id: usize,
    /// The file and region.
    pub physical_location: PhysicalLocation,
    /// The label.
    pub message: Text,
}

/// A `physicalLocation`.
#[derive(Debug, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct PhysicalLocation {
    /// The file.
    pub artifact_location: ArtifactLocation,
    /// The region, when the span has a position.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub region: Option<Region>,
}

/// A `region`: 1-based lines and columns, the end exclusive.
#[derive(Debug, Serialize)]
#[serde(rename_all = "camelCase")]
pub struct Region {
    /// First line.
    pub start_line: usize,
    /// First column.
    pub start_column: usize,
    /// Last line, when the span has an end.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub end_line: Option<usize>,
    /// The column after the region, when the span has an end.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub end_column: Option<usize>,
}

/// A result's property bag.
#[derive(Debug, Default, Serialize)]
pub struct Properties {
    /// The machine.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub machine: Option<String>,
    /// The state.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub state: Option<String>,
    /// The event.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub event: Option<String>,
    /// Every state it is about.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub states: Vec<String>,
    /// The witness valuation.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub witness: Option<Valuation>,
    /// The counterexample trace.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub trace: Option<Vec<StepEntry>>,
}

impl Properties {
    /// True when the bag has nothing (it is then left out).
    pub fn is_empty(&self) -> bool {
        self.machine.is_none()
            && self.state.is_none()
            && self.event.is_none()
            && self.states.is_empty()
            && self.witness.is_none()
            && self.trace.is_none()
    }
}

/// The SARIF region of a span, `None` when the span has no source position (line 0).
fn region(span: Span) -> Option<Region> {
    let (line, column) = line_col(span);
    if line == 0 {
        return None;
    }
    let (start, end) = (span.start(), span.end());
    let has_end = (end.line, end.column) > (start.line, start.column);
    Some(Region {
        start_line: line,
        start_column: column,
        end_line: has_end.then_some(end.line),
        // SARIF's endColumn is the column after the region; proc_macro2's end column is
        // already exclusive but 0-based.
        end_column: has_end.then_some(end.column + 1),
    })
}

fn physical_location(uri: &str, span: Option<Span>) -> PhysicalLocation {
    PhysicalLocation {
        artifact_location: ArtifactLocation {
            uri: uri.to_string(),
        },
        region: span.and_then(region),
    }
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
        lines.push(trace_note(t));
    }
    for h in &d.helps {
        lines.push(format!("help: {h}"));
    }
    lines.join("\n")
}

fn result(d: &Diagnostic, file: &str, machine: Option<&str>) -> SarifResult {
    let uri = path_uri(file);
    SarifResult {
        rule_id: d.lint.name(),
        rule_index: Lint::ALL.iter().position(|l| *l == d.lint).unwrap_or(0),
        level: level(d.severity),
        message: Text::of(message_text(d)),
        locations: vec![Location {
            physical_location: physical_location(&uri, d.span),
        }],
        related_locations: d
            .related
            .iter()
            .enumerate()
            .map(|(i, (span, label))| RelatedLocation {
                id: i,
                physical_location: physical_location(&uri, Some(*span)),
                message: Text::of(label.clone()),
            })
            .collect(),
        properties: Properties {
            machine: machine.map(str::to_string),
            state: d.state.clone(),
            event: d.event.clone(),
            states: d.states.clone(),
            witness: d.witness.clone().map(Valuation),
            trace: d.trace.as_deref().map(trace_entries),
        },
    }
}

fn rule_descriptor(lint: Lint) -> Rule {
    Rule {
        id: lint.name(),
        name: lint.name(),
        short_description: Text::of(lint.summary()),
        full_description: Text::of(lint_help(lint)),
        help: Text::of(lint_help(lint)),
        default_configuration: DefaultConfiguration {
            level: level(lint.default_severity()),
        },
    }
}

/// The SARIF 2.1.0 log of one `check` invocation: one run covering every file report,
/// results in file order, then machine order, then the diagnostics' order.
pub fn sarif_log(reports: &[FileReport]) -> SarifLog {
    let results = reports
        .iter()
        .flat_map(|r| {
            r.machines.iter().flat_map(move |m| {
                m.diagnostics
                    .iter()
                    .map(move |d| result(d, &r.file, m.name.as_deref()))
            })
        })
        .collect();
    SarifLog {
        schema: SARIF_SCHEMA_URI,
        version: "2.1.0",
        runs: vec![Run {
            tool: Tool {
                driver: ToolDriver {
                    name: "detent",
                    version: env!("CARGO_PKG_VERSION"),
                    rules: Lint::ALL.iter().map(|l| rule_descriptor(*l)).collect(),
                },
            },
            column_kind: "unicodeCodePoints",
            artifacts: reports
                .iter()
                .map(|r| Artifact {
                    location: ArtifactLocation {
                        uri: path_uri(&r.file),
                    },
                })
                .collect(),
            results,
        }],
    }
}
