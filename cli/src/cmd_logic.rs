//! `detent logic FILE [--machine NAME] [--encoding binary|gray|onehot|auto]
//! [--flip-flop d|t|jk|sr] [--map sop|nand|nor] [--format text|json] [--verilog OUT.v]
//! [--testbench OUT_tb.v] [--budget-ms N]`: state assignment, minimized flip-flop and output equations,
//! gate costs, and Verilog.

use crate::io::{self, OK};
use clap::ValueEnum;
use detent_compiler::logic::assign::Encoding;
use detent_compiler::logic::auto::{auto_assign_with, AutoReport};
use detent_compiler::logic::equations::{synthesize, LogicDesign, LogicSpec, Map};
use detent_compiler::logic::excitation::FlipFlop;
use detent_compiler::logic::search::SearchOptions;
use detent_compiler::logic::verilog::{generate_module, generate_testbench, testbench_steps};
use detent_compiler::report::{self, logic::LogicReport};
use std::io::IsTerminal;
use std::path::PathBuf;
use std::time::{Duration, Instant};

/// State assignment choices.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum EncodingArg {
    /// Declaration order, ceil(log2 m) bits.
    Binary,
    /// Gray code in declaration order, ceil(log2 m) bits.
    Gray,
    /// One flip-flop per state.
    Onehot,
    /// Search for the cheapest assignment (by literal count).
    Auto,
}

/// Flip-flop types.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum FlipFlopArg {
    /// D (data).
    D,
    /// T (toggle).
    T,
    /// J-K.
    Jk,
    /// Set-reset.
    Sr,
}

/// Two-level forms.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum MapArg {
    /// AND-OR sums of products.
    Sop,
    /// NAND-NAND.
    Nand,
    /// NOR-NOR.
    Nor,
}

/// Report formats of `logic`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum LogicFormat {
    /// Equations in trade notation.
    Text,
    /// JSON (stable; see DESIGN.md).
    Json,
}

/// Arguments of `detent logic`.
#[derive(clap::Args, Debug)]
pub struct LogicArgs {
    /// The spec file.
    pub file: PathBuf,
    /// Which machine, when the file has several.
    #[arg(long)]
    pub machine: Option<String>,
    /// State assignment.
    #[arg(long, value_enum, default_value_t = EncodingArg::Binary)]
    pub encoding: EncodingArg,
    /// Flip-flop type.
    #[arg(long = "flip-flop", value_enum, default_value_t = FlipFlopArg::D)]
    pub flip_flop: FlipFlopArg,
    /// Two-level form for the gate counts.
    #[arg(long, value_enum, default_value_t = MapArg::Sop)]
    pub map: MapArg,
    /// Report format.
    #[arg(long, value_enum, default_value_t = LogicFormat::Text)]
    pub format: LogicFormat,
    /// Write a Verilog (IEEE 1364-2005) module here.
    #[arg(long, value_name = "OUT.v")]
    pub verilog: Option<PathBuf>,
    /// Write a self-checking testbench here.
    #[arg(long, value_name = "OUT_tb.v")]
    pub testbench: Option<PathBuf>,
    /// Time budget of the `auto` assignment search in milliseconds: past it, the best
    /// assignment found so far is used and the report says the search was cut short.
    #[arg(long = "budget-ms", value_name = "N")]
    pub budget_ms: Option<u64>,
}

fn ff_of(a: FlipFlopArg) -> FlipFlop {
    match a {
        FlipFlopArg::D => FlipFlop::D,
        FlipFlopArg::T => FlipFlop::T,
        FlipFlopArg::Jk => FlipFlop::JK,
        FlipFlopArg::Sr => FlipFlop::SR,
    }
}

fn map_of(a: MapArg) -> Map {
    match a {
        MapArg::Sop => Map::Sop,
        MapArg::Nand => Map::Nand,
        MapArg::Nor => Map::Nor,
    }
}

/// Progress of the assignment search on stderr, once it has run for a quarter of a
/// second: a bar redrawn in place on a terminal; otherwise (CI logs, pipes) a plain line
/// every [`Progress::LINE_EVERY`], so a long search is visibly alive.
struct Progress {
    tty: bool,
    started: Instant,
    drawn: bool,
    last_line: Option<Instant>,
}

impl Progress {
    /// Interval between two plain progress lines when stderr is not a terminal.
    const LINE_EVERY: Duration = Duration::from_secs(3);

    fn new() -> Progress {
        Progress {
            tty: std::io::stderr().is_terminal(),
            started: Instant::now(),
            drawn: false,
            last_line: None,
        }
    }

    fn update(&mut self, done: u64, total: u64) {
        if self.started.elapsed().as_millis() < 250 {
            return;
        }
        if !self.tty {
            let due = self
                .last_line
                .is_none_or(|t| t.elapsed() >= Progress::LINE_EVERY);
            if due {
                eprintln!(
                    "searching assignments: {done} of at most {total} costed, {:.1} s",
                    self.started.elapsed().as_secs_f64()
                );
                self.last_line = Some(Instant::now());
            }
            return;
        }
        let width = 30u64;
        let filled = (done.min(total) * width)
            .checked_div(total)
            .unwrap_or(width);
        eprint!(
            "\rsearching assignments [{}{}] {done}/{total}",
            "#".repeat(filled as usize),
            ".".repeat((width - filled) as usize)
        );
        self.drawn = true;
    }

    fn finish(&self) {
        if self.drawn {
            eprint!("\r{}\r", " ".repeat(70));
        }
    }
}

/// Runs `detent logic` and returns the exit code.
pub fn run(args: &LogicArgs) -> u8 {
    let m = match io::load_machine(&args.file, args.machine.as_deref()) {
        Ok(m) => m,
        Err(code) => return code,
    };
    let spec = match LogicSpec::from_machine(&m) {
        Ok(s) => s,
        Err(e) => return io::usage_error(format!("machine `{}`: {e}", m.name)),
    };
    if args.budget_ms.is_some() && args.encoding != EncodingArg::Auto {
        return io::usage_error(
            "--budget-ms limits the assignment search: use it with --encoding auto".to_string(),
        );
    }
    let ff = ff_of(args.flip_flop);
    let map = map_of(args.map);
    let complements = map == Map::Nor;
    let started = Instant::now();
    let result: Result<(LogicDesign, Option<AutoReport>), String> = match args.encoding {
        EncodingArg::Auto => {
            let mut bar = Progress::new();
            let opts = SearchOptions {
                budget: args.budget_ms.map(Duration::from_millis),
                ..SearchOptions::default()
            };
            let r = auto_assign_with(&spec, ff, map, &opts, &mut |d, t| bar.update(d, t));
            bar.finish();
            r.map(|(d, a)| (d, Some(a)))
        }
        other => {
            let enc = match other {
                EncodingArg::Binary => Ok(Encoding::binary(spec.n_states)),
                EncodingArg::Gray => Ok(Encoding::gray(spec.n_states)),
                _ => Encoding::one_hot(spec.n_states),
            };
            enc.and_then(|e| synthesize(&spec, &e, ff, complements))
                .map(|d| (d, None))
        }
    };
    let elapsed = started.elapsed();
    let (design, auto) = match result {
        Ok(r) => r,
        Err(e) => return io::usage_error(format!("machine `{}`: {e}", m.name)),
    };
    let cost = match design.cost(map) {
        Ok(c) => c,
        Err(e) => return io::usage_error(e),
    };
    let source = args
        .file
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| args.file.display().to_string());
    let state_names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    if let Some(path) = &args.verilog {
        let text = match generate_module(&spec, &design, &state_names, &source) {
            Ok(t) => t,
            Err(e) => return io::usage_error(format!("machine `{}`: {e}", m.name)),
        };
        if let Err(e) = io::write_atomic(path, text.as_bytes()) {
            return io::usage_error(e);
        }
    }
    if let Some(path) = &args.testbench {
        let steps = testbench_steps(&m);
        let text = match generate_testbench(&m, &spec, &design, &steps, &source) {
            Ok(t) => t,
            Err(e) => return io::usage_error(format!("machine `{}`: {e}", m.name)),
        };
        if let Err(e) = io::write_atomic(path, text.as_bytes()) {
            return io::usage_error(e);
        }
    }
    let report = LogicReport::new(
        &m,
        &design,
        &cost,
        map,
        auto.as_ref(),
        elapsed.as_secs_f64(),
    );
    match args.format {
        LogicFormat::Json => io::out(report::to_json(&report)),
        LogicFormat::Text => {
            for line in report.lines() {
                io::out(line);
            }
        }
    }
    OK
}
