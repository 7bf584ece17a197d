//! `detent minimize FILE [--machine NAME] [--format text|json|spec]`.

use crate::io::{self, OK};
use clap::ValueEnum;
use detent_compiler::check;
use detent_compiler::minimize::{machine::minimized_ast, minimize as min_states};
use detent_compiler::model::Machine;
use serde_json::json;
use std::path::Path;

/// Output format of `minimize`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum MinimizeFormat {
    /// A summary per machine and its classes.
    Text,
    /// The JSON of DESIGN.md.
    Json,
    /// The minimized machine as spec text.
    Spec,
}

/// The named machine, or every machine of the file when no name is given.
pub fn load_machines(path: &Path, name: Option<&str>) -> Result<Vec<Machine>, u8> {
    if name.is_some() {
        return io::load_machine(path, name).map(|m| vec![m]);
    }
    let file = path.display().to_string();
    let text = io::read_text(&file).map_err(io::usage_error)?;
    let report = check::check_source(&file, &text);
    if report.has_errors() {
        // Prints the errors the same way every other command does.
        return io::load_machine(path, None).map(|m| vec![m]);
    }
    let machines: Vec<Machine> = report
        .machines
        .into_iter()
        .filter_map(|m| m.machine)
        .collect();
    if machines.is_empty() {
        return Err(io::usage_error(format!("`{file}` defines no machine")));
    }
    Ok(machines)
}

/// Runs the command; returns the exit code.
pub fn minimize(file: &Path, machine: Option<&str>, format: MinimizeFormat) -> u8 {
    let machines = match load_machines(file, machine) {
        Ok(ms) => ms,
        Err(code) => return code,
    };
    let mut reports = Vec::new();
    let mut specs = Vec::new();
    for m in &machines {
        let min = min_states(m);
        let names = |ids: &[detent_compiler::model::StateId]| -> Vec<String> {
            ids.iter().map(|s| m.state_name(*s).to_string()).collect()
        };
        match format {
            MinimizeFormat::Json => reports.push(json!({
                "name": m.name,
                "states_before": min.states_before,
                "states_after": min.states_after(),
                "unreachable": names(&min.unreachable),
                "classes": min.classes.iter().map(|c| names(c)).collect::<Vec<_>>(),
            })),
            MinimizeFormat::Text => {
                let mut t = format!(
                    "machine {}: {} states -> {}",
                    m.name,
                    min.states_before,
                    min.states_after()
                );
                if !min.unreachable.is_empty() {
                    t.push_str(&format!(
                        " ({} unreachable, dropped: {})",
                        min.unreachable.len(),
                        names(&min.unreachable).join(", ")
                    ));
                }
                for c in &min.classes {
                    let n = names(c);
                    if n.len() > 1 {
                        t.push_str(&format!("\n  {} <- {}", n[0], n.join(", ")));
                    } else {
                        t.push_str(&format!("\n  {}", n[0]));
                    }
                }
                io::out(t);
            }
            MinimizeFormat::Spec => {
                let mut out = String::new();
                detent_compiler::syntax::print::print_machine(&mut out, &minimized_ast(m, &min));
                specs.push(out);
            }
        }
    }
    match format {
        MinimizeFormat::Json => io::out(json!({ "machines": reports })),
        MinimizeFormat::Spec => io::out(specs.join("\n").trim_end_matches('\n')),
        MinimizeFormat::Text => {}
    }
    OK
}
