//! `detent tour FILE [--machine NAME] [--format text|json]`.

use crate::cmd_equiv::{step_json, PlainFormat};
use crate::io::{self, OK};
use detent_compiler::minimize::encode::named_inputs;
use detent_compiler::tour::{tour as build, TourStep};
use serde_json::{json, Value};
use std::path::Path;

/// Runs the command; returns the exit code.
pub fn tour(file: &Path, machine: Option<&str>, format: PlainFormat) -> u8 {
    let m = match io::load_machine(file, machine) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let t = build(&m);
    match format {
        PlainFormat::Json => {
            let steps: Vec<Value> = t
                .steps
                .iter()
                .map(|s| match s {
                    TourStep::Reset => json!({"reset": true}),
                    TourStep::Step { event, inputs } => {
                        step_json(m.event_name(*event), &named_inputs(&m, inputs))
                    }
                })
                .collect();
            io::out(json!({"steps": steps, "covers": t.covers, "transitions": t.transitions}));
        }
        PlainFormat::Text => {
            // One step per line in the trace format of `detent run --trace` (inputs
            // that are 1 written out); a reset is the comment line `# reset`, so each
            // stretch between resets replays as a trace. The summary goes to stderr.
            eprintln!(
                "tour of `{}`: {} steps, {} resets, covers {} of {} transitions ({})",
                m.name,
                t.len_steps(),
                t.resets(),
                t.covers,
                t.transitions,
                if t.strongly_connected {
                    "strongly connected: postman tour"
                } else {
                    "not strongly connected: greedy cover with resets"
                }
            );
            for s in &t.steps {
                match s {
                    TourStep::Reset => io::out("# reset"),
                    TourStep::Step { event, inputs } => {
                        let mut line = m.event_name(*event).to_string();
                        for (i, v) in inputs.iter().enumerate() {
                            if *v {
                                line.push_str(&format!(" {}=1", m.inputs[i].name));
                            }
                        }
                        io::out(line);
                    }
                }
            }
        }
    }
    OK
}
