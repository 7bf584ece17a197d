//! The `detent` command-line tool: a thin front end over detent-compiler.
//!
//! It parses flags, reads files, calls the compiler and prints. Exit codes: 0 success;
//! 1 the spec has errors (or `--deny warnings` and warnings, or `--check` found a stale
//! file); 2 usage or I/O error. `equiv`: 0 equivalent, 1 different, 2 could not compare
//! (a spec with errors, a missing machine, I/O).

#![forbid(unsafe_code)]

mod cmd_draw;
mod cmd_equiv;
mod cmd_fmt;
mod cmd_gen_c;
mod cmd_gen_rust;
mod cmd_import;
mod cmd_logic;
mod cmd_minimize;
mod cmd_tour;
mod cmd_view;
mod commands;
mod io;
mod lsp;
mod lsp_index;

use clap::{Parser, Subcommand, ValueEnum};
use std::path::PathBuf;
use std::process::ExitCode;

// Parsing a large spec allocates millions of small tokens. With mimalloc, `detent check`
// of a 2,000-state spec runs 1.12 G instructions instead of 1.49 G with the system
// allocator (valgrind --tool=callgrind, scripts/gen_big_spec.py 2000 16).
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// detent: checks, minimizes and compiles firmware state machines.
#[derive(Parser, Debug)]
#[command(name = "detent", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

/// Output format for reports.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum ReportFormat {
    /// Human-readable text.
    Text,
    /// JSON (stable; see DESIGN.md).
    Json,
    /// SARIF 2.1.0 for code-scanning tools.
    Sarif,
}

/// Output format of `run`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum RunFormat {
    /// JSON lines (stable; see DESIGN.md).
    Json,
    /// Human-readable text, one line per step.
    Text,
}

/// Output format for the state table.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum TableFormat {
    /// Aligned columns for a terminal.
    Text,
    /// JSON.
    Json,
    /// Comma-separated values, one row per rule.
    Csv,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Check specs for completeness, determinism, reachability, dead ends and properties.
    Check {
        /// Spec files to check.
        #[arg(required = true)]
        files: Vec<PathBuf>,
        /// Report format.
        #[arg(long, value_enum, default_value_t = ReportFormat::Text)]
        format: ReportFormat,
        /// `--deny warnings`: treat every warning as an error.
        #[arg(long, value_name = "warnings")]
        deny: Option<String>,
        /// Silence a lint (repeatable).
        #[arg(long, value_name = "LINT")]
        allow: Vec<String>,
    },
    /// Print the state table: present state, event, guard, next state, outputs, actions.
    Table {
        /// The spec file.
        file: PathBuf,
        /// Which machine, when the file has several.
        #[arg(long)]
        machine: Option<String>,
        /// Table format.
        #[arg(long, value_enum, default_value_t = TableFormat::Text)]
        format: TableFormat,
    },
    /// Run a trace through the reference interpreter; prints JSON lines.
    Run {
        /// The spec file.
        file: PathBuf,
        /// Which machine, when the file has several.
        #[arg(long)]
        machine: Option<String>,
        /// Trace file (one step per line: `Event input=0|1 ...`, `reset` to restart),
        /// or `-` for stdin.
        #[arg(long, value_name = "TRACEFILE")]
        trace: String,
        /// Output format: JSON lines (stable), or one readable line per step.
        #[arg(long, value_enum, default_value_t = RunFormat::Json)]
        format: RunFormat,
    },
    /// Minimize: merge equivalent states, drop unreachable ones.
    Minimize {
        /// The spec file.
        file: PathBuf,
        /// Which machine (default: every machine of the file).
        #[arg(long)]
        machine: Option<String>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = cmd_minimize::MinimizeFormat::Text)]
        format: cmd_minimize::MinimizeFormat,
    },
    /// Compare two machines; print a shortest distinguishing input sequence.
    Equiv {
        /// The first spec file.
        file_a: PathBuf,
        /// The second spec file.
        file_b: PathBuf,
        /// Which machine of each file, when a file has several.
        #[arg(long)]
        machine: Option<String>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = cmd_equiv::PlainFormat::Text)]
        format: cmd_equiv::PlainFormat,
    },
    /// Print an input sequence that fires every reachable transition.
    Tour {
        /// The spec file.
        file: PathBuf,
        /// Which machine, when the file has several.
        #[arg(long)]
        machine: Option<String>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = cmd_equiv::PlainFormat::Text)]
        format: cmd_equiv::PlainFormat,
    },
    /// Draw the state diagram as Graphviz DOT or as SVG (drawn by detent itself).
    Draw {
        /// The spec file.
        file: PathBuf,
        /// Which machine, when the file has several.
        #[arg(long)]
        machine: Option<String>,
        /// Diagram format (default: from the extension of `-o`, `.svg` or `.dot`; DOT on
        /// standard output).
        #[arg(long, value_enum)]
        format: Option<cmd_draw::DrawFormat>,
        /// Write here (atomically) instead of standard output.
        #[arg(short = 'o', value_name = "OUT")]
        out: Option<PathBuf>,
    },
    /// Read a state table in the CSV form of `table --format csv` back into a spec.
    Import {
        /// The CSV file (`-` for standard input).
        #[arg(value_name = "TABLE.csv")]
        table: PathBuf,
        /// Write the spec here (atomically) instead of standard output.
        #[arg(short = 'o', value_name = "OUT.detent")]
        out: Option<PathBuf>,
    },
    /// State assignment, minimized flip-flop and output equations, gate costs, Verilog.
    Logic(cmd_logic::LogicArgs),
    /// Show the machine as a page to click through: served live on 127.0.0.1, or `-o`.
    View(cmd_view::ViewArgs),
    /// Format specs in the canonical layout (comments and blank-line groups kept).
    Fmt(cmd_fmt::FmtArgs),
    /// Serve the Language Server Protocol over standard input and output (editors).
    Lsp,
    /// Generate code from a spec.
    Gen {
        #[command(subcommand)]
        target: GenTarget,
    },
}

/// What `detent gen` writes.
#[derive(Subcommand, Debug)]
enum GenTarget {
    /// C99 header and source per machine.
    C(cmd_gen_c::GenCArgs),
    /// no_std Rust with table or match dispatch.
    Rust(cmd_gen_rust::GenRustArgs),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let code = match cli.command {
        Command::Check {
            files,
            format,
            deny,
            allow,
        } => commands::check(&files, format, deny.as_deref(), &allow),
        Command::Table {
            file,
            machine,
            format,
        } => commands::table(&file, machine.as_deref(), format),
        Command::Run {
            file,
            machine,
            trace,
            format,
        } => commands::run(&file, machine.as_deref(), &trace, format),
        Command::Gen {
            target: GenTarget::C(args),
        } => cmd_gen_c::run(&args),
        Command::Gen {
            target: GenTarget::Rust(args),
        } => cmd_gen_rust::run(&args),
        Command::Logic(args) => cmd_logic::run(&args),
        Command::View(args) => cmd_view::run(&args),
        Command::Minimize {
            file,
            machine,
            format,
        } => cmd_minimize::minimize(&file, machine.as_deref(), format),
        Command::Equiv {
            file_a,
            file_b,
            machine,
            format,
        } => cmd_equiv::equiv(&file_a, &file_b, machine.as_deref(), format),
        Command::Tour {
            file,
            machine,
            format,
        } => cmd_tour::tour(&file, machine.as_deref(), format),
        Command::Draw {
            file,
            machine,
            format,
            out,
        } => cmd_draw::draw(&file, machine.as_deref(), format, out.as_deref()),
        Command::Import { table, out } => cmd_import::import(&table, out.as_deref()),
        Command::Fmt(args) => cmd_fmt::run(&args),
        Command::Lsp => lsp::run(),
    };
    ExitCode::from(code)
}
