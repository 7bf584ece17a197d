//! Shared code of the fuzz targets: what each target does with a checked machine, the
//! fixed machines the trace target runs traces on, and the grammar-based spec builder of
//! the structured target ([`gen`]).
//!
//! Every function here panics on a broken promise of the compiler (a minimized spec that
//! no longer checks, a tour that misses a transition, a CSV table that does not import
//! back, `equiv` finding a difference that is not there): libFuzzer reports a panic as a
//! crash, with the input that caused it.

#![forbid(unsafe_code)]

/// The random spec generator of the differential tests (`tests/src/gen.rs`, crate
/// `detent-tests`), included by path as `tests/build.rs` and `bench/build.rs` do: one
/// generator, whose choices here come from the fuzz input ([`gen::Bytes`]).
#[path = "../../tests/src/gen.rs"]
pub mod gen;

use detent_compiler::diag::Lint;
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
    /// Also the code emitters C and JavaScript.
    pub code: bool,
    /// Also the Rust emitter, in this dispatch style.
    pub rust: Option<DispatchStyle>,
    /// Also logic synthesis and Verilog (module and testbench), with this encoding
    /// (0 binary, 1 Gray, 2 one-hot) and flip-flop (0 D, 1 T, 2 JK, 3 SR), and with the
    /// complement covers (NOR-NOR) when the flag is set.
    pub logic: Option<(u8, u8, bool)>,
    /// The machine may declare a property that does not hold (the checker's `property`
    /// error): its minimized spec may then have that error too, and no other.
    pub violated_property: bool,
}

/// Bounds that keep one run fast: machines past them go through the checker only.
pub const MAX_STATES: usize = 48;
/// See [`MAX_STATES`].
pub const MAX_EVENTS: usize = 12;
/// See [`MAX_STATES`].
pub const MAX_INPUTS: usize = 8;
/// Logic synthesis only when its functions have at most this many variables (state
/// bits, event bits, inputs, timer due variables and counter comparisons): two-level minimization is
/// exponential in them (a 12-state one-hot machine with 4 inputs and 4 events, 19
/// variables, took 57 s), and the fuzz target is for breadth.
pub const MAX_LOGIC_VARS: usize = 8;

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

/// What the structured target builds from its input.
#[derive(Clone, Debug)]
pub struct Structured {
    /// The spec and whether it declares a property.
    pub built: gen::Built,
    /// The back ends' choices.
    pub depth: Depth,
}

/// Most states of a built machine.
pub const MAX_BUILT_STATES: usize = 10;

/// The structured target's machine: the back-end choices and the machine's shape from
/// the first bytes of `data` (1 to [`MAX_BUILT_STATES`] states, 0 to 4 events (0:
/// clocked), inputs, 0 to 3 outputs and actions, groups or not, timeouts or not), the
/// rest read by the generator with its extras (`gen::spec_from` with `rich`).
pub fn build_structured(data: &[u8]) -> Structured {
    use gen::Choices;
    let mut b = gen::Bytes::new(data);
    let encoding = b.index(3) as u8;
    let flip_flop = b.index(4) as u8;
    let complements = b.chance(0.5);
    // The Rust emitter on about one input in three, in the style the input picks: with
    // its formatting (syn, prettyplease) it costs as much as the other stages together.
    let rust = match b.index(6) {
        0 => Some(DispatchStyle::Table),
        1 => Some(DispatchStyle::Match),
        _ => None,
    };
    let cfg = gen::GenConfig {
        states: (1, MAX_BUILT_STATES),
        events: b.index(5),
        inputs: b.index(5),
        outputs: b.index(4),
        actions: b.index(4),
        groups: !b.chance(0.25),
        policy: None,
        timeouts: b.chance(0.3),
        counters: b.index(3),
    };
    let built = gen::spec_from(&mut b, "Fuzz", &cfg, true);
    let depth = Depth {
        code: true,
        rust,
        logic: Some((encoding, flip_flop, complements)),
        violated_property: built.has_property,
    };
    Structured { built, depth }
}

/// The structured target on one input: the built spec must check with no error (a
/// `property` error only when it declares a property), then every machine goes through
/// [`exercise_machine_with`] with code and logic (a machine whose property does not
/// hold too: the error is about the spec's claim, not the machine).
pub fn exercise_structured(data: &[u8], stage: Stages<'_>) {
    let s = build_structured(data);
    let mut report = None;
    stage("check", &mut || {
        report = Some(check_source("structured.detent", &s.built.text));
    });
    let Some(report) = report else {
        return;
    };
    let errors: Vec<String> = report
        .diagnostics()
        .filter(|d| d.is_error() && !(s.built.has_property && d.lint == Lint::Property))
        .map(|d| format!("{:?}: {}", d.lint, d.message))
        .collect();
    assert!(
        errors.is_empty(),
        "a built spec has errors {errors:?}:\n{}",
        s.built.text
    );
    for m in report.machines.iter().filter_map(|r| r.machine.as_ref()) {
        exercise_machine_with(m, s.depth, stage);
    }
}

/// Runs one named stage of [`exercise_machine_with`]: the fuzz targets just call it
/// ([`exercise_machine`]), the `stage_times` example times it.
pub type Stages<'r> = &'r mut dyn FnMut(&'static str, &mut dyn FnMut());

/// Every consumer of a checked machine, with the promises each one makes.
pub fn exercise_machine(m: &Machine, depth: Depth) {
    exercise_machine_with(m, depth, &mut |_, run| run());
}

/// [`exercise_machine`], each stage run through `stage`.
pub fn exercise_machine_with(m: &Machine, depth: Depth, stage: Stages<'_>) {
    stage("tables", &mut || {
        for f in [TableFormat::Text, TableFormat::Json, TableFormat::Csv] {
            let _ = render(m, f);
        }
    });
    // A group's timer has no flat form: `minimize --format spec` and the CSV table
    // refuse such a machine with a message (docs/language-decisions.md), so the
    // round trips below apply to the others only.
    let flat = !detent_compiler::minimize::machine::has_group_timer(m);
    if flat {
        stage("minimize, equiv", &mut || {
            minimize_round_trip(m, depth.violated_property);
        });
        stage("csv, import, equiv", &mut || {
            csv_round_trip(m, depth.violated_property);
        });
    }
    // Tour: fires every reachable transition.
    let mut steps = Vec::new();
    stage("tour", &mut || {
        let t = tour(m);
        assert_eq!(t.covers, t.transitions, "the tour misses transitions");
        steps = t.steps;
    });
    stage("dot", &mut || {
        let _ = detent_compiler::emit::dot::to_dot(m);
    });
    stage("svg", &mut || {
        let _ =
            detent_compiler::emit::svg::render_svg(&detent_compiler::emit::diagram::to_diagram(m));
    });
    exercise_code(m, depth, &steps, stage);
}

/// Minimize: the printed spec checks again, and the minimized machine is equivalent.
/// With `violated_property`, a `property` error is allowed.
fn minimize_round_trip(m: &Machine, violated_property: bool) {
    let spec = detent_compiler::minimize::minimized_spec(m);
    let again = check_source("minimized.detent", &spec);
    let errors: Vec<&str> = again
        .diagnostics()
        .filter(|d| d.is_error() && !(violated_property && d.lint == Lint::Property))
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
}

/// The CSV table imports back into a spec that checks clean and behaves as the
/// original (import.rs: "Its behaviour is the original's").
/// With `violated_property`, a `property` error is allowed.
fn csv_round_trip(m: &Machine, violated_property: bool) {
    let csv = render(m, TableFormat::Csv);
    let imported = match detent_compiler::import::import_spec(&csv) {
        Ok(text) => text,
        Err(e) => panic!("the machine's own CSV table does not import: {e}\n{csv}"),
    };
    let back = check_source("imported.detent", &imported);
    let errors: Vec<&str> = back
        .diagnostics()
        .filter(|d| d.is_error() && !(violated_property && d.lint == Lint::Property))
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
fn exercise_code(m: &Machine, depth: Depth, tour_steps: &[TourStep], stage: Stages<'_>) {
    if let Some(style) = depth.rust {
        stage(
            match style {
                DispatchStyle::Table => "rust table",
                DispatchStyle::Match => "rust match",
            },
            &mut || {
                let _ = generate_file("fuzz.detent", std::slice::from_ref(m), Some(style));
            },
        );
    }
    if depth.code {
        stage("c", &mut || {
            let _ = detent_compiler::emit::c::generate_c(m, "fuzz.detent");
        });
        stage("javascript", &mut || {
            let _ = detent_compiler::emit::js::to_js(m);
        });
    }
    if let Some((enc, ff, complements)) = depth.logic {
        logic(m, (enc, ff, complements), tour_steps, stage);
    }
}

/// Logic synthesis and Verilog of one machine.
fn logic(
    m: &Machine,
    (enc, ff, complements): (u8, u8, bool),
    tour_steps: &[TourStep],
    stage: Stages<'_>,
) {
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
    if encoding.bits + spec.ev_bits + spec.inputs.len() + spec.dues.len() + spec.compares.len()
        > MAX_LOGIC_VARS
    {
        return;
    }
    let ff = [FlipFlop::D, FlipFlop::T, FlipFlop::JK, FlipFlop::SR][usize::from(ff % 4)];
    let mut design = None;
    stage("logic synthesis", &mut || {
        design = synthesize(&spec, &encoding, ff, complements).ok();
    });
    let Some(design) = design else {
        return;
    };
    stage("verilog module", &mut || {
        let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
        let _ = generate_module(&spec, &design, &names, "fuzz.detent");
    });
    stage("verilog testbench", &mut || {
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
    });
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
