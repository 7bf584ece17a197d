//! `detent minimize --format json|text`: per machine, the states before and after,
//! the unreachable states dropped, and the classes of reachable states merged.

use crate::minimize::Minimization;
use crate::model::{Machine, StateId};
use serde::Serialize;
use std::fmt::Write;

/// The report of one `detent minimize`.
#[derive(Debug, Serialize)]
pub struct MinimizeReport {
    /// One entry per machine, in source order.
    pub machines: Vec<MinimizedMachine>,
}

/// One machine's minimization.
#[derive(Debug, Serialize)]
pub struct MinimizedMachine {
    /// The machine's name.
    pub name: String,
    /// States as written.
    pub states_before: usize,
    /// States of the minimized machine.
    pub states_after: usize,
    /// States no input sequence reaches, dropped, in declaration order.
    pub unreachable: Vec<String>,
    /// Classes of reachable states, in declaration order of their first member.
    pub classes: Vec<Vec<String>>,
}

impl MinimizedMachine {
    /// The entry of machine `m` and its minimization `min`.
    pub fn new(m: &Machine, min: &Minimization) -> MinimizedMachine {
        let names = |ids: &[StateId]| -> Vec<String> {
            ids.iter().map(|s| m.state_name(*s).to_string()).collect()
        };
        MinimizedMachine {
            name: m.name.clone(),
            states_before: min.states_before,
            states_after: min.states_after(),
            unreachable: names(&min.unreachable),
            classes: min.classes.iter().map(|c| names(c)).collect(),
        }
    }

    /// The text form: `machine M: 8 states -> 3`, what was dropped, then one line per
    /// class (`A <- A, C` for a merged class).
    pub fn text(&self) -> String {
        let mut t = format!(
            "machine {}: {} -> {}",
            self.name,
            crate::check::render::plural(self.states_before, "state"),
            self.states_after
        );
        if !self.unreachable.is_empty() {
            let _ = write!(
                t,
                " ({} unreachable, dropped: {})",
                self.unreachable.len(),
                self.unreachable.join(", ")
            );
        }
        for c in &self.classes {
            if c.len() > 1 {
                let _ = write!(t, "\n  {} <- {}", c[0], c.join(", "));
            } else if let Some(only) = c.first() {
                let _ = write!(t, "\n  {only}");
            }
        }
        t
    }
}
