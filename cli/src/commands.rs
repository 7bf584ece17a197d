//! One function per subcommand. Each returns the process exit code.

use crate::io::{self, FAILED, OK, USAGE};
use crate::{ReportFormat, RunFormat, TableFormat};
use detent_compiler::check::Options;
use detent_compiler::diag::Lint;
use detent_compiler::driver;
use detent_compiler::report::sarif;
use detent_compiler::report::{self, check::CheckReport};
use std::path::{Path, PathBuf};

/// `detent check FILE... [--format] [--deny warnings] [--allow LINT]...`
pub fn check(files: &[PathBuf], format: ReportFormat, deny: Option<&str>, allow: &[String]) -> u8 {
    let mut opts = Options::default();
    match deny {
        None => {}
        Some("warnings") => opts.deny_warnings = true,
        Some(other) => {
            return io::usage_error(format!(
                "`--deny {other}`: only `--deny warnings` is supported; to make one lint an \
                 error, write `#[deny({other})]` on the machine"
            ))
        }
    }
    for name in allow {
        match Lint::from_name(name) {
            None => {
                let known: Vec<&str> = Lint::ALL
                    .iter()
                    .filter(|l| !l.is_hard_error())
                    .map(|l| l.name())
                    .collect();
                return io::usage_error(format!(
                    "unknown lint `{name}`; lints that can be allowed: {}",
                    known.join(", ")
                ));
            }
            Some(l) if l.is_hard_error() => {
                return io::usage_error(format!(
                    "`{name}` is always an error and cannot be allowed"
                ))
            }
            Some(l) => opts.allow.push(l),
        }
    }
    let mut reports = Vec::new();
    let mut io_failed = false;
    for f in files {
        let name = f.display().to_string();
        match io::read_text(&name) {
            Ok(text) => {
                let mut report = driver::check_source(&name, &text);
                report.apply_options(&opts);
                reports.push(report);
            }
            Err(e) => {
                io::usage_error(e);
                io_failed = true;
            }
        }
    }
    let summary = CheckReport::new(&reports);
    match format {
        ReportFormat::Text => {
            for r in &reports {
                io::print_report_text(r);
            }
            match summary.closing_line() {
                Err(counts) => eprintln!("{counts}"),
                Ok(clean) if !io_failed => io::out(clean),
                Ok(_) => {}
            }
        }
        ReportFormat::Json => io::out(report::to_json(&summary)),
        ReportFormat::Sarif => io::out(report::to_json(&sarif::sarif_log(&reports))),
    }
    let errors = summary.errors;
    if io_failed {
        USAGE
    } else if errors > 0 {
        FAILED
    } else {
        OK
    }
}

/// `detent table FILE [--machine NAME] [--format text|json|csv]`
pub fn table(file: &Path, machine: Option<&str>, format: TableFormat) -> u8 {
    let m = match io::load_machine(file, machine) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let format = match format {
        TableFormat::Text => detent_compiler::table::TableFormat::Text,
        TableFormat::Json => detent_compiler::table::TableFormat::Json,
        TableFormat::Csv => detent_compiler::table::TableFormat::Csv,
    };
    let text = detent_compiler::table::render(&m, format);
    io::out(text.trim_end_matches('\n'));
    OK
}

/// `detent run FILE [--machine NAME] --trace TRACEFILE|- [--format json|text]`
pub fn run(file: &Path, machine: Option<&str>, trace: &str, format: RunFormat) -> u8 {
    // A violated property leaves the machine well defined: `run` replays its
    // counterexample on the spec as it is.
    let loaded = io::load_machines_tolerating(file, &[Lint::Property])
        .and_then(|ms| io::pick_machine(file, ms, machine));
    let m = match loaded {
        Ok(m) => m,
        Err(code) => return code,
    };
    let text = match io::read_text(trace) {
        Ok(t) => t,
        Err(e) => return io::usage_error(e),
    };
    let steps = match detent_compiler::trace::parse_trace(&m, &text) {
        Ok(s) => s,
        Err(e) => {
            let name = if trace == "-" { "<stdin>" } else { trace };
            eprintln!("error: {name}:{}:{}: {}", e.line, e.column, e.message);
            return USAGE;
        }
    };
    let lines = match format {
        RunFormat::Json => detent_compiler::trace::run_json_lines(&m, &steps),
        RunFormat::Text => detent_compiler::trace_text::run_text_lines(&m, &steps),
    };
    for line in lines {
        io::out(line);
    }
    OK
}
