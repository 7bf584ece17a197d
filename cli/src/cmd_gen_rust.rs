//! `detent gen rust FILE [-o OUT.rs] [--dispatch table|match] [--check]`: the Rust
//! back end of `detent-compiler` for every machine of a spec file.

use crate::io::{self, FAILED, OK};
use clap::{Args, ValueEnum};
use detent_compiler::check::render;
use detent_compiler::driver;
use detent_compiler::emit::rust::generate_file;
use detent_compiler::model::Machine;
use detent_compiler::syntax::ast::DispatchStyle;
use std::path::{Path, PathBuf};

/// Dispatch style of the generated `step`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Dispatch {
    /// `static` tables in flash, indexed by state and event.
    Table,
    /// Nested `match` expressions.
    Match,
}

/// Arguments of `detent gen rust`.
#[derive(Args, Debug)]
pub struct GenRustArgs {
    /// The spec file (`-` for standard input).
    file: PathBuf,
    /// Write the code here (atomically) instead of to standard output.
    #[arg(short = 'o', long = "output", value_name = "OUT.rs")]
    output: Option<PathBuf>,
    /// Override every machine's `#[dispatch(..)]` attribute.
    #[arg(long, value_enum)]
    dispatch: Option<Dispatch>,
    /// Write nothing; exit 1 when OUT is missing or differs from what would be written.
    #[arg(long, requires = "output")]
    check: bool,
}

/// The command that writes `out` as the checked command would: every flag that changes
/// the output (`--dispatch`) repeated.
fn regenerate_command(file: &str, out: &Path, dispatch: Option<Dispatch>) -> String {
    let mut cmd = format!(
        "detent gen rust {} -o {}",
        io::shell_word(file),
        io::shell_word(&out.display().to_string())
    );
    if let Some(d) = dispatch {
        cmd.push_str(match d {
            Dispatch::Table => " --dispatch table",
            Dispatch::Match => " --dispatch match",
        });
    }
    cmd
}

/// Runs `detent gen rust`; returns the exit code.
pub fn run(args: &GenRustArgs) -> u8 {
    let file = args.file.display().to_string();
    let text = match io::read_text(&file) {
        Ok(text) => text,
        Err(e) => return io::usage_error(e),
    };
    let report = driver::check_source(&file, &text);
    io::print_report_text(&report);
    if report.has_errors() {
        let (errors, warnings) = render::count(&report.diagnostics().cloned().collect::<Vec<_>>());
        eprintln!("{}", render::summary_text(errors, warnings));
        eprintln!("detent: no code generated");
        return FAILED;
    }
    let machines: Vec<Machine> = report.into_machines();
    let style = args.dispatch.map(|d| match d {
        Dispatch::Table => DispatchStyle::Table,
        Dispatch::Match => DispatchStyle::Match,
    });
    let code = generate_file(&file, &machines, style);
    match &args.output {
        None => {
            io::out(code.trim_end());
            OK
        }
        Some(out) if args.check => {
            if io::is_fresh(out, code.as_bytes()) {
                OK
            } else {
                eprintln!(
                    "detent: `{}` is stale or missing; run `{}`",
                    out.display(),
                    regenerate_command(&file, out, args.dispatch)
                );
                FAILED
            }
        }
        Some(out) => match io::write_atomic(out, code.as_bytes()) {
            Ok(()) => OK,
            Err(e) => io::usage_error(e),
        },
    }
}
