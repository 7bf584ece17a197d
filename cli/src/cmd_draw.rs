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

/// Draws one machine; writes to `out` atomically, or to standard output.
pub fn draw(file: &Path, machine: Option<&str>, format: DrawFormat, out: Option<&Path>) -> u8 {
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
