//! `detent draw FILE [--machine NAME] [--format dot|svg] [-o OUT]`: the state diagram,
//! as Graphviz DOT or as SVG drawn by detent itself.

use crate::io::{self, OK, USAGE};
use clap::ValueEnum;
use detent_compiler::emit::{diagram, dot, svg};
use std::path::Path;

/// Output format of `detent draw`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum DrawFormat {
    /// Graphviz DOT (render it with `dot -Tsvg`).
    Dot,
    /// SVG laid out and drawn by detent, no Graphviz needed.
    Svg,
}

/// The format when `--format` is left out: the extension of `-o` decides (`.svg`, or
/// `.dot`/`.gv`), DOT on standard output; an output file with another extension is a
/// usage error (writing DOT into `diagram.svg` would only fail later, in a viewer).
pub fn format_of(format: Option<DrawFormat>, out: Option<&Path>) -> Result<DrawFormat, String> {
    if let Some(f) = format {
        return Ok(f);
    }
    let Some(path) = out else {
        return Ok(DrawFormat::Dot);
    };
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase());
    match ext.as_deref() {
        Some("svg") => Ok(DrawFormat::Svg),
        Some("dot" | "gv") => Ok(DrawFormat::Dot),
        _ => Err(format!(
            "cannot tell the diagram format from `{}`: name the file `.svg` or `.dot` (or \
             `.gv`), or say `--format svg` or `--format dot`",
            path.display()
        )),
    }
}

/// Draws one machine; writes to `out` atomically, or to standard output.
pub fn draw(
    file: &Path,
    machine: Option<&str>,
    format: Option<DrawFormat>,
    out: Option<&Path>,
) -> u8 {
    let format = match format_of(format, out) {
        Ok(f) => f,
        Err(e) => return io::usage_error(e),
    };
    let m = match io::load_machine(file, machine) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let text = match format {
        DrawFormat::Dot => dot::to_dot(&m),
        DrawFormat::Svg => svg::render_svg(&diagram::to_diagram(&m)),
    };
    match out {
        Some(path) => match io::write_atomic(path, text.as_bytes()) {
            Ok(()) => OK,
            Err(e) => {
                io::usage_error(e);
                USAGE
            }
        },
        None => {
            io::out(text.trim_end_matches('\n'));
            OK
        }
    }
}
