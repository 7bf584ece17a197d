//! Printing diagnostics as text in rustc's shape: `error[lint]: message`, `--> file:line:col`,
//! the source lines with a caret under the exact token (`-` under related spans, with
//! their labels), then `= note:` and `= help:` lines.
//!
//! The layout is drawn by `annotate-snippets` (the renderer rustc's own diagnostics
//! follow): multi-line spans get a bracket in the margin, spans on one line share it,
//! far-apart spans are folded with `...`, and carets are as wide as the characters they
//! sit under (a CJK character takes two columns). [`render_text`] writes plain text (the
//! macro, files, pipes); [`render_colored`] adds ANSI colours for a terminal (the CLI
//! decides which, honouring `NO_COLOR`). The JSON of `check --format json` is
//! [`crate::report::check`].
//!
//! One difference from the file as written: a tab in a shown source line is printed as
//! one space, so that carets stay under their token (the renderer's own tab expansion
//! misplaces them). Columns in `-->` count characters, a tab as one, like the parser.
//!
//! Cost: one pass over the file's line starts per [`Source`], then per diagnostic only
//! the lines its spans cover.

use crate::diag::{Diagnostic, Severity, TraceStep};
use annotate_snippets::renderer::{AnsiColor, Effects};
use annotate_snippets::{Level, Renderer, Snippet};
use proc_macro2::Span;
use std::fmt::Write;

/// A source file the spans point into, with the byte offset of each line's start.
#[derive(Clone, Debug)]
pub struct Source<'a> {
    /// The name to print (`examples/kiln.detent`).
    pub name: &'a str,
    /// Its text.
    pub text: &'a str,
    /// Byte offset of the start of each line (line 1 at index 0).
    line_starts: Vec<usize>,
}

impl<'a> Source<'a> {
    /// A source named `name` (as `-->` prints it) with text `text`.
    pub fn new(name: &'a str, text: &'a str) -> Self {
        let mut line_starts = vec![0];
        line_starts.extend(text.match_indices('\n').map(|(i, _)| i + 1));
        Source {
            name,
            text,
            line_starts,
        }
    }

    /// The byte range of 1-based line `line`, without its line end; `None` past the end.
    fn line_range(&self, line: usize) -> Option<(usize, usize)> {
        let start = *self.line_starts.get(line.checked_sub(1)?)?;
        let end = self
            .line_starts
            .get(line)
            .map_or(self.text.len(), |&next| next - 1);
        let end = if self.text[start..end].ends_with('\r') {
            end - 1
        } else {
            end
        };
        Some((start, end.max(start)))
    }

    /// The byte offset of a span position (1-based line, 0-based column in characters),
    /// clamped to the end of its line.
    fn offset(&self, line: usize, column: usize) -> Option<usize> {
        let (start, end) = self.line_range(line)?;
        let text = &self.text[start..end];
        Some(
            start
                + text
                    .char_indices()
                    .nth(column)
                    .map_or(text.len(), |(i, _)| i),
        )
    }

    /// The byte range a span covers: at least one character where there is one.
    fn range(&self, span: Span) -> Option<(usize, usize)> {
        let (start, end) = (span.start(), span.end());
        let from = self.offset(start.line, start.column)?;
        let to = self
            .offset(end.line, end.column)
            .filter(|&to| to > from)
            .unwrap_or_else(|| {
                self.text[from..]
                    .chars()
                    .next()
                    .filter(|c| *c != '\n' && *c != '\r')
                    .map_or(from, |c| from + c.len_utf8())
            });
        Some((from, to))
    }
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

/// A trace as trace-file lines (`Event a=1 b=0`), one per step, a run of equal steps
/// as one line with its count (`Tick *250`), each as `detent run --trace` reads it.
pub fn trace_lines(trace: &[TraceStep]) -> Vec<String> {
    crate::report::trace_lines(&crate::report::trace_entries(trace), true)
}

/// The note that shows a counterexample: a headline, then the steps as trace-file
/// lines, indented and without numbers, so that the lines paste into a trace file (or
/// `detent run --trace -`) as they are.
pub fn trace_note(trace: &[TraceStep]) -> String {
    let n = trace.len();
    let lines = trace_lines(trace);
    let mut note = if lines.len() == n {
        format!(
            "shortest trace from the start state ({}, one trace line each):",
            plural(n, "step")
        )
    } else {
        // Runs of equal steps are one line with their count (`Tick *1500`).
        format!(
            "shortest trace from the start state ({} as {}):",
            plural(n, "step"),
            plural(lines.len(), "trace line")
        )
    };
    for line in lines {
        let _ = write!(note, "\n    {line}");
    }
    note
}

/// `1 step`, `3 steps`: a count and its noun, in the singular for one.
pub fn plural(n: usize, noun: &str) -> String {
    if n == 1 {
        format!("1 {noun}")
    } else {
        format!("{n} {noun}s")
    }
}

/// Line (1-based) and column (1-based) of a span's start.
pub fn line_col(span: Span) -> (usize, usize) {
    let lc = span.start();
    (lc.line, lc.column + 1)
}

/// Renders one diagnostic in rustc's shape, as plain text.
pub fn render_text(d: &Diagnostic, src: &Source) -> String {
    render(d, src, false)
}

/// Renders one diagnostic in rustc's shape with ANSI colours (for a terminal).
pub fn render_colored(d: &Diagnostic, src: &Source) -> String {
    render(d, src, true)
}

/// The shown lines of a window of the source: tabs become single spaces, so that the
/// renderer's carets line up (see the module docs); every other byte stays.
fn shown(text: &str) -> String {
    text.replace('\t', " ")
}

fn render(d: &Diagnostic, src: &Source, color: bool) -> String {
    let level = match d.severity {
        Severity::Error => Level::Error,
        Severity::Warning => Level::Warning,
    };
    let renderer = if color {
        // The primary caret takes the colour of the level (the renderer draws it as an
        // error annotation, so that it is `^` for warnings too); related spans are blue.
        let styled = Renderer::styled();
        match d.severity {
            Severity::Error => {
                styled.warning(AnsiColor::BrightBlue.on_default().effects(Effects::BOLD))
            }
            Severity::Warning => {
                styled.error(AnsiColor::Yellow.on_default().effects(Effects::BOLD))
            }
        }
    } else {
        Renderer::plain()
    };

    // Spans with a source position: the primary first, then the related ones.
    let mut marks: Vec<((usize, usize), Option<&str>)> = Vec::new();
    if let Some(range) = d.span.and_then(|s| src.range(s)) {
        marks.push((range, None));
    }
    for (span, label) in &d.related {
        if let Some(range) = src.range(*span) {
            marks.push((range, Some(label.as_str())));
        }
    }

    let trace_note = d.trace.as_deref().map(trace_note);
    let footers = d
        .notes
        .iter()
        .map(|n| Level::Note.title(n))
        .chain(trace_note.as_deref().map(|n| Level::Note.title(n)))
        .chain(d.helps.iter().map(|h| Level::Help.title(h)));

    let mut message = level.title(&d.message).id(d.lint.name());
    // The window of lines the spans cover, so that the renderer's work is the size of
    // the finding and not of the file.
    let window = (!marks.is_empty()).then(|| {
        let first = marks.iter().map(|((a, _), _)| *a).min().unwrap_or(0);
        let last = marks.iter().map(|((_, b), _)| *b).max().unwrap_or(0);
        let line_of = |at: usize| src.line_starts.partition_point(|&s| s <= at);
        let first_line = line_of(first);
        let last_line = line_of(last.saturating_sub(1).max(first));
        let start = src.line_starts[first_line - 1];
        let end = src.line_range(last_line).map_or(src.text.len(), |(_, e)| e);
        (first_line, start, shown(&src.text[start..end.max(start)]))
    });
    if let Some((first_line, start, text)) = &window {
        let mut snippet = Snippet::source(text)
            .line_start(*first_line)
            .origin(src.name)
            .fold(true);
        for ((a, b), label) in &marks {
            let range = (a - start)..(b - start).min(text.len());
            snippet = snippet.annotation(match label {
                // Drawn as an error annotation whatever the level: `^`, no prefix.
                None => Level::Error.span(range),
                Some(label) => Level::Warning.span(range).label(label),
            });
        }
        message = message.snippet(snippet);
    }
    let mut out = renderer.render(message.footers(footers)).to_string();
    if window.is_none() {
        // No position to show: the file alone, after the headline.
        let at = out.find('\n').unwrap_or(out.len());
        out.insert_str(at, &format!("\n --> {}", src.name));
    }
    out.push('\n');
    out
}

/// The summary line printed after text diagnostics.
pub fn summary_text(errors: usize, warnings: usize) -> String {
    format!(
        "detent: {}, {}",
        plural(errors, "error"),
        plural(warnings, "warning")
    )
}

/// Counts errors and warnings.
pub fn count(diags: &[Diagnostic]) -> (usize, usize) {
    let errors = diags
        .iter()
        .filter(|d| d.severity == Severity::Error)
        .count();
    (errors, diags.len() - errors)
}
