//! The driver: read, parse, resolve (which ends in the lowered form, `model::lower`),
//! check. The one pipeline from a spec to checked machines, shared by the CLI (every
//! command reads its spec through [`read_text`] and [`check_source`]) and the macro
//! (`machine!` through [`check_tokens`], `#[machine_file(..)]` through [`read_text`] and
//! [`check_source`]), so a spec gets the same findings in the same words from both: a
//! machine defined twice, for one, is found only by [`crate::model::resolve_each`].
//!
//! Reading refuses files over [`MAX_FILE_BYTES`] (64 MiB) and text that is not UTF-8,
//! with an error that says which; `-` reads standard input under the same limit.

use crate::check::{apply_options, check_machine, sort_diagnostics, Options};
use crate::diag::{Diagnostic, Lint};
use crate::model::{resolve_each, Machine};
use crate::syntax::{self, ast, MAX_FILE_BYTES};
use proc_macro2::TokenStream;
use std::io::Read;

/// Why a spec (or trace, or table) file cannot be read as text.
#[derive(Debug, thiserror::Error)]
pub enum ReadError {
    /// The file cannot be opened or read.
    #[error("cannot read `{path}`: {source}")]
    Io {
        /// The path as given.
        path: String,
        /// What the operating system said.
        source: std::io::Error,
    },
    /// Standard input cannot be read.
    #[error("cannot read standard input: {0}")]
    Stdin(std::io::Error),
    /// The path names a directory.
    #[error("`{path}` is a directory, not a file")]
    Directory {
        /// The path as given.
        path: String,
    },
    /// The file is larger than [`MAX_FILE_BYTES`] (by its metadata).
    #[error("`{path}` is {size} bytes; the limit is {MAX_FILE_BYTES} bytes (64 MiB)")]
    TooLarge {
        /// The path as given.
        path: String,
        /// Its size in bytes.
        size: u64,
    },
    /// More than [`MAX_FILE_BYTES`] bytes came in (standard input, or a file that grew).
    #[error("`{path}` is over the limit of {MAX_FILE_BYTES} bytes (64 MiB)")]
    OverLimit {
        /// The path as given (`-` for standard input).
        path: String,
    },
    /// The bytes are not UTF-8.
    #[error("`{path}` is not valid UTF-8 (first bad byte at offset {offset})")]
    NotUtf8 {
        /// The path as given.
        path: String,
        /// Offset of the first byte that is not UTF-8.
        offset: usize,
    },
}

/// Reads a text file, refusing files over [`MAX_FILE_BYTES`] and text that is not
/// UTF-8. `-` reads standard input.
pub fn read_text(path: &str) -> Result<String, ReadError> {
    let bytes = if path == "-" {
        let mut buf = Vec::new();
        std::io::stdin()
            .take(MAX_FILE_BYTES + 1)
            .read_to_end(&mut buf)
            .map_err(ReadError::Stdin)?;
        buf
    } else {
        let io = |source| ReadError::Io {
            path: path.to_string(),
            source,
        };
        let meta = std::fs::metadata(path).map_err(io)?;
        if meta.is_dir() {
            return Err(ReadError::Directory {
                path: path.to_string(),
            });
        }
        if meta.len() > MAX_FILE_BYTES {
            return Err(ReadError::TooLarge {
                path: path.to_string(),
                size: meta.len(),
            });
        }
        // Read at most one byte past the limit: a file that grows between the size
        // check and the read is still refused, and never read whole.
        let mut buf = Vec::new();
        std::fs::File::open(path)
            .and_then(|f| f.take(MAX_FILE_BYTES + 1).read_to_end(&mut buf))
            .map_err(io)?;
        buf
    };
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(ReadError::OverLimit {
            path: path.to_string(),
        });
    }
    String::from_utf8(bytes).map_err(|e| ReadError::NotUtf8 {
        path: path.to_string(),
        offset: e.utf8_error().valid_up_to(),
    })
}

/// The findings about one machine of a file (or about a file that does not parse).
#[derive(Debug)]
pub struct MachineReport {
    /// The machine's name; `None` when the file does not parse.
    pub name: Option<String>,
    /// The resolved machine, when resolution succeeded.
    pub machine: Option<Machine>,
    /// Findings, sorted by position.
    pub diagnostics: Vec<Diagnostic>,
}

/// Everything the checker found in one source.
#[derive(Debug)]
pub struct FileReport {
    /// The file name as given.
    pub file: String,
    /// The file's text (for snippets).
    pub text: String,
    /// One report per machine, in source order.
    pub machines: Vec<MachineReport>,
}

impl FileReport {
    /// Every diagnostic of the file.
    pub fn diagnostics(&self) -> impl Iterator<Item = &Diagnostic> {
        self.machines.iter().flat_map(|m| m.diagnostics.iter())
    }

    /// True when some diagnostic is an error.
    pub fn has_errors(&self) -> bool {
        self.diagnostics().any(Diagnostic::is_error)
    }

    /// The errors, except those of the `tolerated` lints (`run` replays the
    /// counterexample of a violated property on the machine itself).
    pub fn errors_except(&self, tolerated: &[Lint]) -> Vec<&Diagnostic> {
        self.diagnostics()
            .filter(|d| d.is_error() && !tolerated.contains(&d.lint))
            .collect()
    }

    /// Applies command-line level changes (`--allow`, `--deny warnings`) to every
    /// machine's findings.
    pub fn apply_options(&mut self, opts: &Options) {
        for m in &mut self.machines {
            let diags = std::mem::take(&mut m.diagnostics);
            m.diagnostics = apply_options(diags, opts);
        }
    }

    /// The machines that resolved, in source order.
    pub fn into_machines(self) -> Vec<Machine> {
        self.machines
            .into_iter()
            .filter_map(|m| m.machine)
            .collect()
    }
}

/// Parses, resolves and checks spec text: the whole of `detent check` for one file.
pub fn check_source(file: &str, text: &str) -> FileReport {
    let machines = match syntax::parse_source(text) {
        Err(e) => vec![MachineReport {
            name: None,
            machine: None,
            diagnostics: vec![Diagnostic::new(Lint::Syntax, Some(e.span), e.message)],
        }],
        // A file with no machine (empty, or only comments) is an error: checking it
        // "clean" would let a truncated or misnamed file pass CI.
        Ok(ast) if ast.machines.is_empty() => vec![MachineReport {
            name: None,
            machine: None,
            diagnostics: vec![Diagnostic::new(
                Lint::Syntax,
                None,
                format!("`{file}` has no machine: a spec file holds at least one `machine Name {{ .. }}`"),
            )],
        }],
        Ok(ast) => check_file(&ast),
    };
    FileReport {
        file: file.to_string(),
        text: text.to_string(),
        machines,
    }
}

/// Parses, resolves and checks the tokens of `detent::machine! { .. }`. A syntax error
/// comes back as syn's error, at its token.
pub fn check_tokens(tokens: TokenStream) -> syn::Result<Vec<MachineReport>> {
    Ok(check_file(&syntax::parse_tokens(tokens)?))
}

/// Resolves and checks every machine of a parsed file, in source order.
pub fn check_file(file: &ast::File) -> Vec<MachineReport> {
    file.machines
        .iter()
        .zip(resolve_each(file))
        .map(|(ast, resolved)| {
            let (machine, mut diagnostics) = match resolved {
                Ok(machine) => {
                    let found = check_machine(&machine);
                    (Some(machine), found)
                }
                Err(errors) => (None, errors),
            };
            sort_diagnostics(&mut diagnostics);
            MachineReport {
                name: Some(ast.name.name.clone()),
                machine,
                diagnostics,
            }
        })
        .collect()
}
