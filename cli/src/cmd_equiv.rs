//! `detent equiv FILE_A FILE_B [--machine NAME] [--format text|json]`.

use crate::io::{self, FAILED, OK, USAGE};
use clap::ValueEnum;
use detent_compiler::minimize::equiv::{equiv as compare, StepView, WitnessStep};
use serde_json::{json, Map, Value};
use std::path::Path;

/// Text or JSON.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum PlainFormat {
    /// Human-readable text.
    Text,
    /// JSON (stable; see DESIGN.md).
    Json,
}

/// `{"event":..,"inputs":{..}}` for one step.
pub fn step_json(event: &str, inputs: &[(String, bool)]) -> Value {
    let mut map = Map::new();
    for (name, v) in inputs {
        map.insert(name.clone(), Value::Bool(*v));
    }
    json!({"event": event, "inputs": map})
}

fn step_text(event: &str, inputs: &[(String, bool)]) -> String {
    let mut s = event.to_string();
    for (name, v) in inputs {
        s.push_str(&format!(" {name}={}", u8::from(*v)));
    }
    s
}

fn view_json(v: &StepView) -> Value {
    json!({"from": v.from, "to": v.to, "outcome": v.outcome, "mealy": v.mealy,
           "moore": v.moore, "actions": v.actions})
}

fn view_text(label: &str, v: &StepView) -> String {
    if v.outcome == "start" {
        return format!(
            "  {label}: starts in `{}` with Moore outputs [{}]",
            v.from,
            v.moore.join(", ")
        );
    }
    format!(
        "  {label}: `{}` -> `{}` ({}), mealy [{}], moore [{}], actions [{}]",
        v.from,
        v.to,
        v.outcome,
        v.mealy.join(", "),
        v.moore.join(", "),
        v.actions.join(", ")
    )
}

/// Runs the command; returns the exit code.
pub fn equiv(file_a: &Path, file_b: &Path, machine: Option<&str>, format: PlainFormat) -> u8 {
    let a = match io::load_machine(file_a, machine) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let b = match io::load_machine(file_b, machine) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let result = match compare(&a, &b) {
        Ok(r) => r,
        Err(mismatch) => {
            eprintln!(
                "error: cannot compare `{}` ({}) with `{}` ({}): {mismatch}",
                a.name,
                file_a.display(),
                b.name,
                file_b.display()
            );
            return USAGE;
        }
    };
    let witness_json = |w: &[WitnessStep]| -> Vec<Value> {
        w.iter().map(|s| step_json(&s.event, &s.inputs)).collect()
    };
    match (&result, format) {
        (None, PlainFormat::Json) => io::out(json!({"equivalent": true, "witness": []})),
        (None, PlainFormat::Text) => io::out(format!(
            "equivalent: `{}` and `{}` behave the same on every input sequence",
            a.name, b.name
        )),
        (Some(d), PlainFormat::Json) => io::out(json!({
            "equivalent": false,
            "witness": witness_json(&d.witness),
            "step": d.step,
            "a": view_json(&d.a),
            "b": view_json(&d.b),
        })),
        (Some(d), PlainFormat::Text) => {
            let mut t = format!(
                "different: `{}` and `{}` disagree at step {}",
                a.name, b.name, d.step
            );
            if d.witness.is_empty() {
                t.push_str(" (the start states)");
            } else {
                t.push_str(&format!(
                    "; shortest distinguishing sequence ({} steps):",
                    d.witness.len()
                ));
                for (i, s) in d.witness.iter().enumerate() {
                    t.push_str(&format!(
                        "\n  {}. {}",
                        i + 1,
                        step_text(&s.event, &s.inputs)
                    ));
                }
            }
            t.push_str(&format!("\nat step {}:\n", d.step));
            t.push_str(&view_text("A", &d.a));
            t.push('\n');
            t.push_str(&view_text("B", &d.b));
            io::out(t);
        }
    }
    if result.is_some() {
        FAILED
    } else {
        OK
    }
}
