//! `detent tour FILE [--machine NAME] [--format text|json]`.

use crate::cmd_equiv::PlainFormat;
use crate::io::{self, OK};
use detent_compiler::report::{self, tour::TourReport};
use detent_compiler::tour::tour as build;
use std::path::Path;

/// Runs the command; returns the exit code.
pub fn tour(file: &Path, machine: Option<&str>, format: PlainFormat) -> u8 {
    let m = match io::load_machine(file, machine) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let report = TourReport::new(&m, &build(&m));
    match format {
        PlainFormat::Json => io::out(report::to_json(&report)),
        PlainFormat::Text => {
            // The summary goes to stderr, the steps (a replayable trace) to stdout.
            eprintln!("{}", report.summary);
            for line in report.lines() {
                io::out(line);
            }
        }
    }
    OK
}
