//! `detent equiv FILE_A FILE_B [--machine NAME] [--format text|json]`.

use crate::io::{self, FAILED, OK, USAGE};
use clap::ValueEnum;
use detent_compiler::diag::Lint;
use detent_compiler::minimize::equiv::equiv as compare;
use detent_compiler::report::{self, equiv::EquivReport};
use std::path::Path;

/// Text or JSON.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum PlainFormat {
    /// Human-readable text.
    Text,
    /// JSON (stable; see DESIGN.md).
    Json,
}

/// Runs the command; returns the exit code.
pub fn equiv(file_a: &Path, file_b: &Path, machine: Option<&str>, format: PlainFormat) -> u8 {
    // Exit codes (DESIGN.md): 0 equivalent, 1 different, 2 could not compare (a spec
    // with errors in its rules, a missing machine, I/O). A violated property does not
    // stop the comparison: `equiv` compares behaviour, and "did my fix change only
    // this?" is asked of specs whose property is still false.
    let load = |file: &Path| {
        io::load_machines_tolerating(file, &[Lint::Property])
            .and_then(|ms| io::pick_machine(file, ms, machine))
            .map_err(|_| USAGE)
    };
    let a = match load(file_a) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let b = match load(file_b) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let result = match compare(&a, &b) {
        Ok(r) => r,
        Err(detent_compiler::minimize::equiv::EquivError::Limit(limit)) => {
            eprintln!(
                "error: cannot compare `{}` with `{}`: {limit}",
                a.name, b.name
            );
            return USAGE;
        }
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
    let report = EquivReport::new(&a.name, &b.name, result.as_ref());
    match format {
        PlainFormat::Json => io::out(report::to_json(&report)),
        PlainFormat::Text => io::out(report.text()),
    }
    if result.is_some() {
        FAILED
    } else {
        OK
    }
}
