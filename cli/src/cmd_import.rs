//! `detent import TABLE.csv [-o OUT.detent]`: a CSV state table (the form of `detent
//! table --format csv`) read back into a spec.

use crate::io::{self, FAILED, OK, USAGE};
use detent_compiler::import::import_spec;
use std::path::Path;

/// Imports a table; writes the spec to `out` atomically, or to standard output. A bad
/// table is reported with its row and column and exits 1; an I/O problem exits 2.
pub fn import(table: &Path, out: Option<&Path>) -> u8 {
    let name = table.display().to_string();
    let text = match io::read_text(&name) {
        Ok(t) => t,
        Err(e) => return io::usage_error(e),
    };
    let spec = match import_spec(&text) {
        Ok(s) => s,
        Err(e) => {
            let shown = if name == "-" { "<stdin>" } else { &name };
            eprintln!("error: {shown}: {e}");
            return FAILED;
        }
    };
    match out {
        Some(path) => match io::write_atomic(path, spec.as_bytes()) {
            Ok(()) => OK,
            Err(e) => {
                io::usage_error(e);
                USAGE
            }
        },
        None => {
            io::out(spec.trim_end_matches('\n'));
            OK
        }
    }
}
