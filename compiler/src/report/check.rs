//! `detent check --format json`: every machine of every file checked, with its
//! diagnostics, and the counts of errors and warnings (DESIGN.md). The text form is the
//! rustc-shaped rendering of [`crate::check::render`], with the closing line here.

use super::{StepEntry, Valuation};
use crate::check::render::{self, line_col, Source};
use crate::diag::Diagnostic;
use crate::driver::FileReport;
use serde::Serialize;

/// The whole report of one `detent check`.
#[derive(Debug, Serialize)]
pub struct CheckReport {
    /// One entry per machine (or per file that does not parse), files in the order
    /// given, machines in source order.
    pub machines: Vec<MachineEntry>,
    /// Number of errors.
    pub errors: usize,
    /// Number of warnings.
    pub warnings: usize,
}

/// One machine's findings.
#[derive(Debug, Serialize)]
pub struct MachineEntry {
    /// The machine's name; `null` for a file that does not parse.
    pub name: Option<String>,
    /// The file, as given.
    pub file: String,
    /// The findings, by position.
    pub diagnostics: Vec<DiagnosticEntry>,
}

/// Where a finding is: file, 1-based line and column.
#[derive(Debug, Serialize)]
pub struct SpanEntry {
    /// The file, as given.
    pub file: String,
    /// 1-based line.
    pub line: usize,
    /// 1-based column, in characters.
    pub column: usize,
}

/// One diagnostic as the JSON object of DESIGN.md.
#[derive(Debug, Serialize)]
pub struct DiagnosticEntry {
    /// The lint's name.
    pub lint: &'static str,
    /// `error` or `warning`.
    pub level: &'static str,
    /// The headline.
    pub message: String,
    /// The state it is about, when one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub state: Option<String>,
    /// The event it is about, when one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub event: Option<String>,
    /// Every state it is about.
    pub states: Vec<String>,
    /// An input valuation that shows the problem.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub witness: Option<Valuation>,
    /// A trace from the start that shows it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub trace: Option<Vec<StepEntry>>,
    /// Where.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub span: Option<SpanEntry>,
    /// `= note:` lines.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
    /// `= help:` lines.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub helps: Vec<String>,
}

impl DiagnosticEntry {
    /// The entry of diagnostic `d` of file `file`.
    pub fn new(d: &Diagnostic, file: &str) -> DiagnosticEntry {
        DiagnosticEntry {
            lint: d.lint.name(),
            level: d.severity.name(),
            message: d.message.clone(),
            state: d.state.clone(),
            event: d.event.clone(),
            states: d.states.clone(),
            witness: d.witness.clone().map(Valuation),
            trace: d.trace.as_deref().map(super::trace_entries),
            span: d.span.map(|s| {
                let (line, column) = line_col(s);
                SpanEntry {
                    file: file.to_string(),
                    line,
                    column,
                }
            }),
            notes: d.notes.clone(),
            helps: d.helps.clone(),
        }
    }
}

impl CheckReport {
    /// The report of the files checked together.
    pub fn new(files: &[FileReport]) -> CheckReport {
        let all: Vec<Diagnostic> = files
            .iter()
            .flat_map(|r| r.diagnostics())
            .cloned()
            .collect();
        let (errors, warnings) = render::count(&all);
        let machines = files
            .iter()
            .flat_map(|r| {
                r.machines.iter().map(move |m| MachineEntry {
                    name: m.name.clone(),
                    file: r.file.clone(),
                    diagnostics: m
                        .diagnostics
                        .iter()
                        .map(|d| DiagnosticEntry::new(d, &r.file))
                        .collect(),
                })
            })
            .collect();
        CheckReport {
            machines,
            errors,
            warnings,
        }
    }

    /// The closing line of the text form: the counts when there are findings (for
    /// standard error), else how many machines were checked (for standard output).
    pub fn closing_line(&self) -> Result<String, String> {
        if self.errors + self.warnings > 0 {
            Err(render::summary_text(self.errors, self.warnings))
        } else {
            let n = self.machines.len();
            Ok(format!(
                "detent: {n} machine{} checked, no findings",
                if n == 1 { "" } else { "s" }
            ))
        }
    }
}

/// Every diagnostic of a file rendered as text (with ANSI colours when `color`), each
/// followed by a blank line, as `detent check` prints them.
pub fn render_file(report: &FileReport, color: bool) -> Vec<String> {
    let src = Source::new(&report.file, &report.text);
    report
        .diagnostics()
        .map(|d| {
            if color {
                render::render_colored(d, &src)
            } else {
                render::render_text(d, &src)
            }
        })
        .collect()
}
