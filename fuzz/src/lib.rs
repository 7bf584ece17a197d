//! Shared code of the fuzz targets: what each target does with a checked machine, the
//! fixed machines the trace target runs traces on, and the grammar-based spec builder of
//! the structured target ([`gen`]).
//!
//! Every function here panics on a broken promise of the compiler (a minimized spec that
//! no longer checks, a tour that misses a transition, a CSV table that does not import
//! back, `equiv` finding a difference that is not there): libFuzzer reports a panic as a
//! crash, with the input that caused it.

#![forbid(unsafe_code)]

pub mod gen;

use detent_compiler::driver::check_source;
use detent_compiler::emit::rust::generate_file;
use detent_compiler::logic::assign::Encoding;
use detent_compiler::logic::equations::{synthesize, LogicSpec};
use detent_compiler::logic::excitation::FlipFlop;
use detent_compiler::logic::verilog::{generate_module, generate_testbench, TbStep};
use detent_compiler::model::Machine;
use detent_compiler::syntax::ast::DispatchStyle;
use detent_compiler::table::{render, TableFormat};
use detent_compiler::tour::{tour, TourStep};

/// How far [`exercise_machine`] goes.
#[derive(Clone, Copy, Debug, Default)]
pub struct Depth {
    /// Also the code emitters (Rust table and match, C, JavaScript).
    pub code: bool,
    /// Also logic synthesis and Verilog (module and testbench), with this encoding
    /// (0 binary, 1 Gray, 2 one-hot) and flip-flop (0 D, 1 T, 2 JK, 3 SR).
    pub logic: Option<(u8, u8)>,
}

/// Bounds that keep one run fast: machines past them go through the checker only.
pub const MAX_STATES: usize = 48;
/// See [`MAX_STATES`].
pub const MAX_EVENTS: usize = 12;
/// See [`MAX_STATES`].
pub const MAX_INPUTS: usize = 8;
/// Logic synthesis (its cost grows with state bits, event bits and inputs) only on
/// machines of at most this many states and [`MAX_LOGIC_INPUTS`] inputs.
pub const MAX_LOGIC_STATES: usize = 12;
/// See [`MAX_LOGIC_STATES`].
pub const MAX_LOGIC_INPUTS: usize = 4;

/// True when a machine is small enough for [`exercise_machine`].
pub fn small(m: &Machine) -> bool {
    m.states.len() <= MAX_STATES && m.events.len() <= MAX_EVENTS && m.inputs.len() <= MAX_INPUTS
}

/// Checks a spec text; when it has no errors, puts every small machine through
/// [`exercise_machine`]. Returns the number of machines exercised.
pub fn exercise_spec(text: &str, depth: Depth) -> usize {
    let report = check_source("fuzz.detent", text);
    if report.has_errors() {
        return 0;
    }
    let mut n = 0;
    for m in report.machines.iter().filter_map(|r| r.machine.as_ref()) {
        if small(m) {
            exercise_machine(m, depth);
            n += 1;
        }
    }
    n
}

/// Every consumer of a checked machine, with the promises each one makes.
pub fn exercise_machine(m: &Machine, depth: Depth) {
    // Tables in every format.
    for f in [TableFormat::Text, TableFormat::Json, TableFormat::Csv] {
        let _ = render(m, f);
    }
    // A group's timer has no flat form: `minimize --format spec` and the CSV table
    // refuse such a machine with a message (docs/language-decisions.md), so the
    // round trips below apply to the others only.
    let flat = !detent_compiler::minimize::machine::has_group_timer(m);
    if flat {
        flat_round_trips(m);
    }
    // Tour: fires every reachable transition.
    let t = tour(m);
    assert_eq!(t.covers, t.transitions, "the tour misses transitions");
    // Drawings.
    let _ = detent_compiler::emit::dot::to_dot(m);
    let _ = detent_compiler::emit::svg::render_svg(&detent_compiler::emit::diagram::to_diagram(m));
    exercise_code(m, depth, &t.steps);
}

/// The minimized spec and the CSV table, each back into a machine equivalent to `m`.
fn flat_round_trips(m: &Machine) {
    // Minimize: the printed spec checks again, and the minimized machine is equivalent.
    let spec = detent_compiler::minimize::minimized_spec(m);
    let again = check_source("minimized.detent", &spec);
    let errors: Vec<&str> = again
        .diagnostics()
        .filter(|d| d.is_error())
        .map(|d| d.message.as_str())
        .collect();
    assert!(
        errors.is_empty(),
        "the minimized spec has errors {errors:?}:\n{spec}"
    );
    let q = detent_compiler::minimize::minimized_machine(m);
    let d = detent_compiler::minimize::equiv::equiv(m, &q);
    assert!(
        matches!(d, Ok(None)),
        "the minimized machine differs: {d:?}\n{spec}"
    );
    // The CSV table imports back into a spec that checks clean and behaves as the
    // original (import.rs: "Its behaviour is the original's").
    let csv = render(m, TableFormat::Csv);
    let imported = match detent_compiler::import::import_spec(&csv) {
        Ok(text) => text,
        Err(e) => panic!("the machine's own CSV table does not import: {e}\n{csv}"),
    };
    let back = check_source("imported.detent", &imported);
    let errors: Vec<&str> = back
        .diagnostics()
        .filter(|d| d.is_error())
        .map(|d| d.message.as_str())
        .collect();
    assert!(
        errors.is_empty(),
        "the imported spec has errors {errors:?}:\n{imported}"
    );
    if let Some(b) = back.machines.iter().find_map(|r| r.machine.as_ref()) {
        let d = detent_compiler::minimize::equiv::equiv(m, b);
        assert!(
            matches!(d, Ok(None)),
            "the imported machine differs: {d:?}\n{imported}"
        );
    }
}

/// Every code generator (Rust in both styles, C, JavaScript, the hardware port), when
/// `depth` asks for them.
fn exercise_code(m: &Machine, depth: Depth, tour_steps: &[TourStep]) {
    if depth.code {
        for style in [DispatchStyle::Table, DispatchStyle::Match] {
            let _ = generate_file("fuzz.detent", std::slice::from_ref(m), Some(style));
        }
        let _ = detent_compiler::emit::c::generate_c(m, "fuzz.detent");
        let _ = detent_compiler::emit::js::to_js(m);
    }
    if let Some((enc, ff)) = depth.logic {
        if m.states.len() <= MAX_LOGIC_STATES && m.inputs.len() <= MAX_LOGIC_INPUTS {
            logic(m, enc, ff, tour_steps);
        }
    }
}

/// Logic synthesis and Verilog of one machine.
fn logic(m: &Machine, enc: u8, ff: u8, tour_steps: &[TourStep]) {
    let Ok(spec) = LogicSpec::from_machine(m) else {
        return;
    };
    let encoding = match enc % 3 {
        0 => Ok(Encoding::binary(spec.n_states)),
        1 => Ok(Encoding::gray(spec.n_states)),
        _ => Encoding::one_hot(spec.n_states),
    };
    let Ok(encoding) = encoding else {
        return;
    };
    let ff = [FlipFlop::D, FlipFlop::T, FlipFlop::JK, FlipFlop::SR][usize::from(ff % 4)];
    let design = match synthesize(&spec, &encoding, ff, enc % 2 == 1) {
        Ok(d) => d,
        Err(_) => return,
    };
    let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    let _ = generate_module(&spec, &design, &names, "fuzz.detent");
    let steps: Vec<TbStep> = tour_steps
        .iter()
        .map(|s| match s {
            TourStep::Reset => TbStep::Reset,
            TourStep::Step { event, inputs } => TbStep::Step {
                event: event.index(),
                inputs: inputs.clone(),
            },
        })
        .collect();
    let _ = generate_testbench(m, &spec, &design, &steps, "fuzz.detent");
}

/// The specs the trace target runs traces on: the examples and the test specs.
pub const TRACE_SPECS: &[(&str, &str)] = &[
    ("burner", include_str!("../../examples/burner.detent")),
    ("debounce", include_str!("../../examples/debounce.detent")),
    (
        "frame_parser",
        include_str!("../../examples/frame_parser.detent"),
    ),
    (
        "greenhouse",
        include_str!("../../examples/greenhouse.detent"),
    ),
    ("kiln", include_str!("../../examples/kiln.detent")),
    ("locker", include_str!("../../examples/locker.detent")),
    (
        "pattern_detector",
        include_str!("../../examples/pattern_detector.detent"),
    ),
    (
        "bilge_pump",
        include_str!("../../tests/specs/bilge_pump.detent"),
    ),
    ("blinker", include_str!("../../tests/specs/blinker.detent")),
    (
        "door_lock",
        include_str!("../../tests/specs/door_lock.detent"),
    ),
    (
        "sampled_guards",
        include_str!("../../tests/specs/sampled_guards.detent"),
    ),
];

/// The machines of [`TRACE_SPECS`], checked once per thread (a machine holds spans,
/// which are not `Sync`; libFuzzer runs the target on one thread).
pub fn trace_machines() -> &'static [(String, Machine)] {
    thread_local! {
        static MACHINES: &'static [(String, Machine)] = Box::leak(checked_trace_machines().into_boxed_slice());
    }
    MACHINES.with(|m| *m)
}

fn checked_trace_machines() -> Vec<(String, Machine)> {
    TRACE_SPECS
        .iter()
        .flat_map(|(name, text)| {
            let report = check_source(name, text);
            report
                .machines
                .into_iter()
                .filter_map(|r| r.machine)
                .map(|m| (name.to_string(), m))
                .collect::<Vec<_>>()
        })
        .collect()
}

/// The trace target: the first line names the machine (a name of [`TRACE_SPECS`];
/// anything else picks one by its length), the rest is the trace, read and run in both
/// output forms.
pub fn exercise_trace(text: &str) {
    let (first, trace) = text.split_once('\n').unwrap_or((text, ""));
    let machines = trace_machines();
    let m = machines
        .iter()
        .find(|(n, _)| n == first.trim())
        .unwrap_or(&machines[first.len() % machines.len()]);
    let m = &m.1;
    if let Ok(steps) = detent_compiler::trace::parse_trace(m, trace) {
        let lines = detent_compiler::trace::run_json_lines(m, &steps);
        assert_eq!(lines.len(), steps.len() + 1, "one JSON line per step");
        let _ = detent_compiler::trace_text::run_text_lines(m, &steps);
    }
}

/// The CSV target: any text through `import`; a table that imports is checked, and when
/// it is clean its own CSV table imports again into an equivalent machine.
pub fn exercise_csv(text: &str) {
    if let Ok(spec) = detent_compiler::import::import_spec(text) {
        let report = check_source("imported.detent", &spec);
        if report.has_errors() {
            return;
        }
        for m in report.machines.iter().filter_map(|r| r.machine.as_ref()) {
            if small(m) {
                let csv = render(m, TableFormat::Csv);
                let again = match detent_compiler::import::import_spec(&csv) {
                    Ok(text) => text,
                    Err(e) => {
                        panic!("a clean imported machine's table does not import: {e}\n{csv}")
                    }
                };
                let back = check_source("again.detent", &again);
                if let Some(b) = back.machines.iter().find_map(|r| r.machine.as_ref()) {
                    let d = detent_compiler::minimize::equiv::equiv(m, b);
                    assert!(
                        matches!(d, Ok(None)),
                        "the table imported twice differs: {d:?}\n{spec}\n{again}"
                    );
                }
            }
        }
    }
}
