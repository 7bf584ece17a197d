//! One function per subcommand. Each returns the process exit code.

use crate::io::{self, FAILED, OK, USAGE};
use crate::{ReportFormat, TableFormat};
use detent_compiler::check::{self, render, Options};
use detent_compiler::diag::Lint;
use serde_json::{json, Value};
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
                let mut report = check::check_source(&name, &text);
                for m in &mut report.machines {
                    let diags = std::mem::take(&mut m.diagnostics);
                    m.diagnostics = check::apply_options(diags, &opts);
                }
                reports.push(report);
            }
            Err(e) => {
                io::usage_error(e);
                io_failed = true;
            }
        }
    }
    let all: Vec<_> = reports
        .iter()
        .flat_map(|r| r.diagnostics())
        .cloned()
        .collect();
    let (errors, warnings) = render::count(&all);
    match format {
        ReportFormat::Text => {
            for r in &reports {
                io::print_report_text(r);
            }
            if errors + warnings > 0 {
                eprintln!("{}", render::summary_text(errors, warnings));
            } else if !io_failed {
                let n: usize = reports.iter().map(|r| r.machines.len()).sum();
                io::out(format!(
                    "detent: {n} machine{} checked, no findings",
                    if n == 1 { "" } else { "s" }
                ));
            }
        }
        ReportFormat::Json => {
            let machines: Vec<Value> = reports
                .iter()
                .flat_map(|r| {
                    r.machines.iter().map(move |m| {
                        json!({
                            "name": m.name,
                            "file": r.file,
                            "diagnostics": m.diagnostics.iter()
                                .map(|d| render::diagnostic_json(d, &r.file))
                                .collect::<Vec<_>>(),
                        })
                    })
                })
                .collect();
            let out = json!({"machines": machines, "errors": errors, "warnings": warnings});
            io::out(out);
        }
        ReportFormat::Sarif => io::out(check::sarif::sarif_log(&reports)),
    }
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

/// `detent run FILE [--machine NAME] --trace TRACEFILE|-`
pub fn run(file: &Path, machine: Option<&str>, trace: &str) -> u8 {
    let m = match io::load_machine(file, machine) {
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
    for line in detent_compiler::trace::run_json_lines(&m, &steps) {
        io::out(line);
    }
    OK
}
