//! Typed reports: the machine-readable formats of DESIGN.md ("Machine-readable
//! formats") as serde structures, built here by the compiler, with the text form of
//! the same report beside each. The CLI only chooses text or JSON and writes.
//!
//! - [`check`]: `check --format json` (SARIF is [`sarif`]);
//! - [`minimize`]: `minimize --format json`;
//! - [`equiv`]: `equiv --format json`;
//! - [`tour`]: `tour --format json`;
//! - [`logic`]: `logic --format json`.
//!
//! The state table (`table --format json`) and the JSON lines of `run` are built beside
//! their text forms, in [`crate::table`] and [`crate::trace`].
//!
//! Field order is declaration order (it is part of the format); fields that DESIGN.md
//! leaves out when absent are `skip_serializing_if`. Every report serializes with
//! `serde_json::to_string` to one line, as the formats are written.

pub mod check;
pub mod equiv;
pub mod logic;
pub mod minimize;
pub mod sarif;
pub mod tour;

use serde::ser::{Serialize, SerializeMap, Serializer};

/// An input valuation as a JSON object, in declaration order: `{"a":true,"b":false}`.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Valuation(pub Vec<(String, bool)>);

impl Serialize for Valuation {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let mut map = serializer.serialize_map(Some(self.0.len()))?;
        for (name, value) in &self.0 {
            map.serialize_entry(name, value)?;
        }
        map.end()
    }
}

/// One entry of a JSON step list (a property's `trace`, `equiv`'s `witness`, `tour`'s
/// `steps`): `{"event":"Tick","inputs":{..}}` (with `"repeat":N` when the same step
/// comes N times in a row, N > 1), or a restart `{"reset":true}`.
#[derive(Clone, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(untagged)]
pub enum StepEntry {
    /// One step: the event and every input's value.
    Step {
        /// The event's name.
        event: String,
        /// The inputs, in declaration order.
        inputs: Valuation,
        /// How many times the step comes in a row (left out when 1).
        #[serde(skip_serializing_if = "is_one")]
        repeat: u32,
    },
    /// Back to the start configuration.
    Reset {
        /// Always `true`.
        reset: bool,
    },
}

impl StepEntry {
    /// A step of `event` with `inputs`.
    pub fn step(event: &str, inputs: &[(String, bool)]) -> StepEntry {
        StepEntry::Step {
            event: event.to_string(),
            inputs: Valuation(inputs.to_vec()),
            repeat: 1,
        }
    }

    /// How many steps the entry stands for (0 for a restart).
    pub fn steps(&self) -> usize {
        match self {
            StepEntry::Step { repeat, .. } => *repeat as usize,
            StepEntry::Reset { .. } => 0,
        }
    }
}

fn is_one(n: &u32) -> bool {
    *n == 1
}

/// A counterexample trace as a JSON step list, runs of equal steps as one entry with
/// `repeat`.
pub fn trace_entries(trace: &[crate::diag::TraceStep]) -> Vec<StepEntry> {
    compress(trace.iter().map(|s| StepEntry::step(&s.event, &s.inputs)))
}

/// A step list with each run of equal steps (same event, same inputs) as one entry
/// with its count: the form every printed sequence takes (`Tick *250`, `"repeat":250`).
/// Restarts are never merged. Expanding the counts gives the list back.
pub fn compress(steps: impl IntoIterator<Item = StepEntry>) -> Vec<StepEntry> {
    let mut out: Vec<StepEntry> = Vec::new();
    for s in steps {
        if let (
            Some(StepEntry::Step {
                event: e0,
                inputs: i0,
                repeat: r0,
            }),
            StepEntry::Step {
                event,
                inputs,
                repeat,
            },
        ) = (out.last_mut(), &s)
        {
            if e0 == event && i0 == inputs {
                *r0 = r0.saturating_add(*repeat);
                continue;
            }
        }
        out.push(s);
    }
    out
}

/// The trace line (and the word) that restarts the machine: printed here, read by
/// [`crate::trace`].
pub const RESET: &str = "reset";

/// A step as one trace line: `Event a=1 b=0`, with every input (`all`) or only the
/// inputs that are 1 (an input left out is 0). An event named `reset` becomes the JSON
/// step `{"event":"reset","inputs":{..}}`, since the text line `reset` is a restart.
pub fn trace_line(event: &str, inputs: &[(String, bool)], all: bool) -> String {
    repeated_line(event, inputs, 1, all)
}

/// [`trace_line`] for a step that comes `repeat` times in a row: `Tick *250` (the JSON
/// form `"repeat":250` for an event named `reset`).
pub fn repeated_line(event: &str, inputs: &[(String, bool)], repeat: u32, all: bool) -> String {
    if event == RESET {
        let entry = StepEntry::Step {
            event: event.to_string(),
            inputs: Valuation(inputs.to_vec()),
            repeat,
        };
        return to_json(&entry);
    }
    let mut s = event.to_string();
    for (name, v) in inputs {
        if all || *v {
            s.push_str(&format!(" {name}={}", u8::from(*v)));
        }
    }
    if repeat != 1 {
        s.push_str(&format!(" *{repeat}"));
    }
    s
}

/// A JSON step list as trace lines: steps as [`trace_line`], restarts as `reset`.
pub fn trace_lines(steps: &[StepEntry], all: bool) -> Vec<String> {
    steps
        .iter()
        .map(|s| match s {
            StepEntry::Reset { .. } => RESET.to_string(),
            StepEntry::Step {
                event,
                inputs,
                repeat,
            } => repeated_line(event, &inputs.0, *repeat, all),
        })
        .collect()
}

/// One line of JSON. serde_json cannot fail on these reports (every map key is a
/// string); were it to, the line is a JSON object naming the error.
pub fn to_json<T: Serialize>(report: &T) -> String {
    serde_json::to_string(report).unwrap_or_else(|e| {
        let mut error = serde_json::Map::new();
        error.insert("error".into(), e.to_string().into());
        serde_json::Value::Object(error).to_string()
    })
}

/// Names mapped to strings, as a JSON object in the given order (`logic`'s
/// `"encoding":{"Idle":"00",...}`).
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Codes(pub Vec<(String, String)>);

impl Serialize for Codes {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let mut map = serializer.serialize_map(Some(self.0.len()))?;
        for (name, value) in &self.0 {
            map.serialize_entry(name, value)?;
        }
        map.end()
    }
}
