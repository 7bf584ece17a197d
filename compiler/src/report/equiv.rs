//! `detent equiv --format json|text`: whether two machines behave alike, and where not,
//! a shortest distinguishing input sequence and what each machine does at the step that
//! differs.

use super::{trace_lines, StepEntry};
use crate::check::render::plural;
use crate::minimize::equiv::{Difference, StepView};
use serde::Serialize;
use std::fmt::Write;

/// The report of one `detent equiv`.
#[derive(Debug, Serialize)]
pub struct EquivReport {
    /// True when the machines are equivalent.
    pub equivalent: bool,
    /// A shortest distinguishing input sequence from the two start states (empty when
    /// equivalent, or when the start states already differ).
    pub witness: Vec<StepEntry>,
    /// The 1-based step at which the machines disagree (0: the start states).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub step: Option<usize>,
    /// What machine A does at that step.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub a: Option<ViewEntry>,
    /// What machine B does at that step.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub b: Option<ViewEntry>,
    /// The machines' names (for the text form).
    #[serde(skip)]
    pub names: (String, String),
}

/// One machine's step at the point of difference.
#[derive(Debug, Serialize)]
pub struct ViewEntry {
    /// The state before the step.
    pub from: String,
    /// The state after it.
    pub to: String,
    /// `start`, `handled`, `ignored` or `rejected`.
    pub outcome: &'static str,
    /// Mealy outputs of the step.
    pub mealy: Vec<String>,
    /// Moore outputs after the step.
    pub moore: Vec<String>,
    /// Actions the step runs, in order.
    pub actions: Vec<String>,
}

impl ViewEntry {
    fn new(v: &StepView) -> ViewEntry {
        ViewEntry {
            from: v.from.clone(),
            to: v.to.clone(),
            outcome: v.outcome,
            mealy: v.mealy.clone(),
            moore: v.moore.clone(),
            actions: v.actions.clone(),
        }
    }

    fn text(&self, label: &str) -> String {
        if self.outcome == "start" {
            return format!(
                "  {label}: starts in `{}` with Moore outputs [{}]",
                self.from,
                self.moore.join(", ")
            );
        }
        format!(
            "  {label}: `{}` -> `{}` ({}), mealy [{}], moore [{}], actions [{}]",
            self.from,
            self.to,
            self.outcome,
            self.mealy.join(", "),
            self.moore.join(", "),
            self.actions.join(", ")
        )
    }
}

impl EquivReport {
    /// The report of comparing machine `a` with machine `b` (by name), `difference`
    /// being `None` when they are equivalent.
    pub fn new(a: &str, b: &str, difference: Option<&Difference>) -> EquivReport {
        let names = (a.to_string(), b.to_string());
        match difference {
            None => EquivReport {
                equivalent: true,
                witness: Vec::new(),
                step: None,
                a: None,
                b: None,
                names,
            },
            Some(d) => EquivReport {
                equivalent: false,
                witness: super::compress(
                    d.witness
                        .iter()
                        .map(|s| StepEntry::step(&s.event, &s.inputs)),
                ),
                step: Some(d.step),
                a: Some(ViewEntry::new(&d.a)),
                b: Some(ViewEntry::new(&d.b)),
                names,
            },
        }
    }

    /// The text form. When the machines differ it is a trace file: the explanation is
    /// on comment lines (`#`) and the distinguishing sequence on trace lines, so that the
    /// whole text replays through `detent run --trace` on either machine as printed.
    pub fn text(&self) -> String {
        let (a_name, b_name) = &self.names;
        let (Some(step), Some(a), Some(b)) = (self.step, &self.a, &self.b) else {
            return format!(
                "equivalent: `{a_name}` and `{b_name}` behave the same on every input sequence"
            );
        };
        let mut t = format!("# different: `{a_name}` and `{b_name}` disagree at step {step}");
        if self.witness.is_empty() {
            t.push_str(" (the start states)");
        } else {
            let _ = write!(
                t,
                "; shortest distinguishing sequence ({}):",
                plural(self.witness.iter().map(StepEntry::steps).sum(), "step")
            );
            for line in trace_lines(&self.witness, true) {
                let _ = write!(t, "\n{line}");
            }
        }
        let _ = write!(t, "\n# at step {step}:\n# ");
        t.push_str(&a.text("A"));
        t.push_str("\n# ");
        t.push_str(&b.text("B"));
        t
    }
}
