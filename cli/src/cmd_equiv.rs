//! `detent equiv FILE_A FILE_B [--machine NAME] [--format text|json]`.

use crate::io::{self, FAILED, OK, USAGE};
use clap::ValueEnum;
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
