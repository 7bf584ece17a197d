//! `detent fmt FILE... [--check]`: the canonical layout of specs, comments and blank-line
//! groups kept (`detent_compiler::syntax::format`).

use crate::io::{self, FAILED, OK, USAGE};
use detent_compiler::check::render::{self, Source};
use detent_compiler::diag::{Diagnostic, Lint};
use detent_compiler::syntax::format::format_source;
use std::io::Write as _;
use std::path::PathBuf;

/// Arguments of `detent fmt`.
#[derive(clap::Args, Debug)]
pub struct FmtArgs {
    /// Spec files to format in place (`-`: standard input to standard output).
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    /// Change nothing; list the files whose layout differs and exit 1 if there are any.
    #[arg(long)]
    pub check: bool,
}

/// Runs `detent fmt` and returns the exit code.
pub fn run(args: &FmtArgs) -> u8 {
    let mut code = OK;
    let mut differ = 0usize;
    for path in &args.files {
        let file = path.display().to_string();
        let text = match io::read_text(&file) {
            Ok(t) => t,
            Err(e) => {
                io::usage_error(e);
                code = USAGE;
                continue;
            }
        };
        let formatted = match format_source(&text) {
            Ok(f) => f,
            Err(e) => {
                let d = Diagnostic::new(Lint::Syntax, Some(e.span), e.message);
                let src = Source::new(&file, &text);
                if io::stderr_color() {
                    eprintln!("{}", render::render_colored(&d, &src));
                } else {
                    eprintln!("{}", render::render_text(&d, &src));
                }
                code = code.max(FAILED);
                continue;
            }
        };
        // Like every command: a file with no machine (empty, or only comments) is an
        // error naming it, not a clean pass.
        if detent_compiler::syntax::parse_source(&text).is_ok_and(|f| f.machines.is_empty()) {
            eprintln!(
                "error: `{file}` has no machine: a spec file holds at least one `machine Name {{ .. }}`"
            );
            code = code.max(FAILED);
            continue;
        }
        if file == "-" {
            if args.check {
                if formatted != text {
                    io::out("would reformat: <stdin>".to_string());
                    differ += 1;
                }
            } else {
                let mut stdout = std::io::stdout().lock();
                if let Err(e) = stdout.write_all(formatted.as_bytes()) {
                    if e.kind() != std::io::ErrorKind::BrokenPipe {
                        io::usage_error(format!("cannot write to standard output: {e}"));
                        code = USAGE;
                    }
                }
            }
            continue;
        }
        if formatted == text {
            continue;
        }
        if args.check {
            io::out(format!("would reformat: {file}"));
            differ += 1;
        } else if let Err(e) = io::write_atomic(path, formatted.as_bytes()) {
            io::usage_error(e);
            code = USAGE;
        } else {
            io::out(format!("formatted {file}"));
        }
    }
    if differ > 0 {
        eprintln!(
            "{differ} file{} not in the canonical layout; run `detent fmt` on {}",
            if differ == 1 { "" } else { "s" },
            if differ == 1 { "it" } else { "them" }
        );
        code = code.max(FAILED);
    }
    code
}
