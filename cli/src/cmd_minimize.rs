//! `detent minimize FILE [--machine NAME] [--format text|json|spec]`.

use crate::io::{self, OK};
use clap::ValueEnum;
use detent_compiler::minimize::machine::has_group_timer;
use detent_compiler::minimize::{machine::minimized_ast, minimize as min_states};
use detent_compiler::model::Machine;
use detent_compiler::report::{self, minimize::MinimizeReport, minimize::MinimizedMachine};
use detent_compiler::syntax::print::print_machine;
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
    let machines = io::load_machines(path)?;
    if machines.is_empty() {
        return Err(io::usage_error(format!(
            "`{}` defines no machine",
            path.display()
        )));
    }
    Ok(machines)
}

/// Runs the command; returns the exit code.
pub fn minimize(file: &Path, machine: Option<&str>, format: MinimizeFormat) -> u8 {
    let machines = match load_machines(file, machine) {
        Ok(ms) => ms,
        Err(code) => return code,
    };
    match format {
        MinimizeFormat::Json => {
            let report = MinimizeReport {
                machines: machines
                    .iter()
                    .map(|m| MinimizedMachine::new(m, &min_states(m)))
                    .collect(),
            };
            io::out(report::to_json(&report));
        }
        MinimizeFormat::Text => {
            for m in &machines {
                io::out(MinimizedMachine::new(m, &min_states(m)).text());
            }
        }
        MinimizeFormat::Spec => {
            if let Some(m) = machines.iter().find(|m| has_group_timer(m)) {
                return io::usage_error(format!(
                    "cannot print the minimized `{}` as a spec: a group has `after` rules, \
                     and a minimized machine has no groups to keep the group's timer \
                     (such a machine is not minimized)",
                    m.name
                ));
            }
            let specs: Vec<String> = machines
                .iter()
                .map(|m| {
                    let mut out = String::new();
                    print_machine(&mut out, &minimized_ast(m, &min_states(m)));
                    out
                })
                .collect();
            io::out(specs.join("\n").trim_end_matches('\n'));
        }
    }
    OK
}
