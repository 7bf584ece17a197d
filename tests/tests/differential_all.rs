//! Every back end against the reference interpreter on the same machines and the same
//! traces (issue 8, "Differential testing").
//!
//! Machines: every `examples/*.detent`, the rule-lookup cases of `tests/specs/inherit/`
//! (preempt, else, a named rule over a `_`) and random specs from [`random_spec`] over a
//! spread of [`GenConfig`]s (event-driven and clocked; no inputs to six; groups on and
//! off; each `unhandled` policy; with and without outputs and actions), and, in the
//! all-back-ends test, the random machines with timeouts of `tests/build.rs`. Traces:
//! random ones (for a machine with timers, longer and mostly time-base events, so that
//! timeouts come due), plus the machine's transition tour once one exists. Each back
//! end runs the trace from the start state and reports, after every step, the state
//! number, every output, the actions in the order they ran, whether the event was
//! handled or rejected, and for a machine with timers every timer and `next_timeout`,
//! as far as that back end can show them; every field must equal the interpreter's
//! (the Verilog testbench compares the registers of the active timers itself). Back ends covered: C (through the C test harness of
//! `detent_tests::c_harness`, built with gcc's address and undefined-behaviour
//! sanitizers), Verilog under Icarus Verilog (the self-checking testbench of the hardware
//! port), and the four Rust forms (`gen rust` table and match, inline and file-form
//! macro) of the specs `tests/build.rs` compiles in, on which all six run together.
//!
//! The minimized machine (`detent_compiler::minimize::minimized_machine`) must behave
//! like the original on every trace: the same outputs, actions and rejections at every
//! step, in the state that names the original state's class; and `equiv` must find no
//! difference between the two.
//!
//! A disagreement is shrunk by delta debugging over the trace (Zeller and Hildebrandt,
//! "Simplifying and Isolating Failure-Inducing Input", IEEE TSE 2002; here the simple
//! one-step-at-a-time variant: cut after the first differing step, then drop single
//! steps while the disagreement stays) and printed as a spec and a `detent run` trace.
//! Seeded: the same seeds give the same machines and traces.

use detent_compiler::driver::check_source;
use detent_compiler::emit::c::generate_c;
use detent_compiler::logic::equations::{synthesize, LogicDesign, LogicSpec};
use detent_compiler::logic::verilog::{generate_module, generate_testbench, TbStep};
use detent_compiler::minimize::equiv::equiv;
use detent_compiler::minimize::{minimize, minimized_machine};
use detent_compiler::model::{EventId, Machine};
use detent_compiler::syntax::ast::Policy;
use detent_compiler::tour::{tour, TourStep};
use detent_tests::c_harness::{
    build_harness, expected_lines, random_cmds, random_timed_cmds, run_harness,
    with_counter_faults, Cmd,
};
use detent_tests::gen::{random_spec, random_timed_trace, random_trace, GenConfig, Rng};
use std::path::{Path, PathBuf};

/// A trace: (event number, input values) per step.
type Trace = Vec<(usize, Vec<bool>)>;

/// What one step shows to the host, as far as a back end can tell.
#[derive(Clone, Debug, PartialEq, Eq)]
struct Seen {
    /// State number after the step (declaration order).
    state: usize,
    /// Every output after the step, in declaration order.
    outputs: Vec<bool>,
    /// Action numbers in the order they ran.
    actions: Vec<usize>,
    /// A rule fired (`None` when the back end cannot tell an ignored event from a
    /// handled one).
    handled: Option<bool>,
    /// The event was rejected (under `unhandled reject`).
    rejected: bool,
    /// Input numbers in the order the step called their hooks, one entry per call
    /// (`None` when the back end cannot tell: the hardware samples pins).
    reads: Option<Vec<usize>>,
    /// Every timer after the step, in timer order (empty without timers); `None` for
    /// a timer the back end does not show (the C harness prints only the timers that
    /// count in the current state; the interpreter's others are 0).
    timers: Vec<Option<u32>>,
    /// `next_timeout` after the step (0: none pending, or no timers).
    next_timeout: u32,
    /// Every counter after the step, in declaration order (empty without counters).
    counters: Vec<u32>,
}

/// A machine under test: the spec text it came from, and the checked machine.
struct Case {
    label: String,
    spec: String,
    machine: Machine,
}

/// Runs one back end's build of a machine over traces.
trait Runner {
    fn run(&self, trace: &Trace) -> Result<Vec<Seen>, String>;

    /// The first step where this back end disagrees with the interpreter on `trace`.
    /// Back ends that check themselves (the Verilog testbench) override it.
    fn check_trace(&self, m: &Machine, trace: &Trace) -> Option<(usize, String)> {
        match self.run(trace) {
            Ok(got) => first_difference(&interpret(m, trace), &got),
            Err(e) => Some((0, format!("the back end failed: {e}"))),
        }
    }

    /// How many fault commands its build ran (the C harness's hostile run).
    fn fault_commands(&self) -> usize {
        0
    }

    /// The first (trace number, step) where it disagrees over several traces.
    fn check_traces(&self, m: &Machine, traces: &[Trace]) -> Option<(usize, usize, String)> {
        traces
            .iter()
            .enumerate()
            .find_map(|(k, t)| self.check_trace(m, t).map(|(i, w)| (k, i, w)))
    }
}

/// A back end: builds a runner for a machine in a scratch folder.
trait Backend: Sync {
    fn name(&self) -> &'static str;
    fn build(&self, case: &Case, dir: &Path) -> Result<Box<dyn Runner>, String>;
}

// ---------------------------------------------------------------------------------------
// The reference

fn interpret(m: &Machine, trace: &Trace) -> Vec<Seen> {
    let mut config = m.start_config();
    let mut out = Vec::with_capacity(trace.len());
    for (e, ins) in trace {
        let r = m.step_config(&mut config, EventId(*e as u32), ins);
        let high = r.outputs();
        out.push(Seen {
            state: r.to.index(),
            outputs: (0..m.outputs.len())
                .map(|i| high.iter().any(|o| o.index() == i))
                .collect(),
            actions: r.actions.iter().map(|a| a.index()).collect(),
            handled: Some(r.handled()),
            rejected: !r.handled() && m.policy == Policy::Reject,
            reads: Some(r.inputs_read.iter().map(|i| i.index()).collect()),
            timers: config.timers.iter().map(|&v| Some(v)).collect(),
            next_timeout: m.next_timeout(&config).unwrap_or(0),
            counters: config.counters.iter().map(|&v| u32::from(v)).collect(),
        });
    }
    out
}

// ---------------------------------------------------------------------------------------
// C

struct CBackend;

struct CRunner {
    exe: PathBuf,
    reject: bool,
    /// The machine has timers: each harness line has ` t=.. n=..`.
    timed: bool,
    /// The machine has counters: each harness line ends in ` c=..`.
    counted: bool,
    /// The commands of its faults run.
    fault_commands: usize,
}

impl Backend for CBackend {
    fn name(&self) -> &'static str {
        "C"
    }
    fn build(&self, case: &Case, dir: &Path) -> Result<Box<dyn Runner>, String> {
        let files = generate_c(&case.machine, &case.label);
        let exe = build_harness(dir, &case.machine, &files)?;
        let fault_commands = faults_agree(&exe, &case.machine, &case.label)?;
        Ok(Box::new(CRunner {
            exe,
            reject: case.machine.policy == Policy::Reject,
            timed: case.machine.has_timers(),
            counted: !case.machine.counters.is_empty(),
            fault_commands,
        }))
    }
}

/// Commands of the C harness's faults run per machine (before counter writes).
const FAULT_COMMANDS: usize = 400;

/// The hostile world beyond traces: [`FAULT_COMMANDS`] commands of which about one in
/// seven is a fault (a corrupt or restored state byte, an event number out of range,
/// NULL hooks, a hooks struct of NULL pointers, NULL `out`, NULL machine), with corrupt
/// and restored timer and counter values for machines that have them, on the sanitizer
/// build; the C must print exactly what the interpreter predicts (`-1` and no change
/// for every bad call and every step from a corrupt byte, normal steps again once a
/// valid byte is restored). Returns the number of commands run.
fn faults_agree(exe: &Path, m: &Machine, label: &str) -> Result<usize, String> {
    let seed = 0xFA17 ^ (label.len() as u64) << 16 ^ m.states.len() as u64;
    let mut rng = Rng::new(seed);
    let cmds = if m.has_timers() {
        // Mostly time-base events (timeouts come due), with corrupt timer values too.
        random_timed_cmds(&mut rng, m, FAULT_COMMANDS, 0.7, true)
    } else {
        random_cmds(&mut rng, m, FAULT_COMMANDS, true)
    };
    let cmds = with_counter_faults(&mut rng, m, cmds, 0.05);
    let got = run_harness(exe, &cmds)?;
    let want = expected_lines(m, &cmds);
    match got.iter().zip(&want).position(|(g, w)| g != w) {
        None if got.len() == want.len() => Ok(cmds.len()),
        at => {
            let i = at.unwrap_or(got.len().min(want.len()));
            Err(format!(
                "faults run (seed {seed:#x}) differs at command {i} `{}`: C printed {:?}, the interpreter predicts {:?}",
                trace_of_cmds(&cmds[i..=i.min(cmds.len() - 1)]),
                got.get(i),
                want.get(i)
            ))
        }
    }
}

fn trace_of_cmds(cmds: &[Cmd]) -> String {
    detent_tests::c_harness::trace_text(cmds).trim().to_string()
}

impl Runner for CRunner {
    fn fault_commands(&self) -> usize {
        self.fault_commands
    }

    fn run(&self, trace: &Trace) -> Result<Vec<Seen>, String> {
        let cmds: Vec<Cmd> = trace
            .iter()
            .map(|(e, ins)| Cmd::Step(*e as i64, ins.clone()))
            .collect();
        let lines = run_harness(&self.exe, &cmds)?;
        // `STATE RC OUTBITS ACTIONS READS` per step, then ` t=T0,T1,.. n=NEXT` for a
        // machine with timers (`_`: a timer that does not count in the state; see
        // c_harness), then ` c=C0,C1,..` for a machine with counters.
        lines
            .iter()
            .map(|l| {
                let f: Vec<&str> = l.split(' ').collect();
                if f.len() != 5 + 2 * usize::from(self.timed) + usize::from(self.counted) {
                    return Err(format!("bad harness line `{l}`"));
                }
                let counters = if self.counted {
                    f[f.len() - 1]
                        .strip_prefix("c=")
                        .ok_or_else(|| format!("no counters in `{l}`"))?
                        .split(',')
                        .map(|v| v.parse().map_err(|_| format!("bad counter in `{l}`")))
                        .collect::<Result<Vec<u32>, _>>()?
                } else {
                    Vec::new()
                };
                let (timers, next_timeout) = if self.timed {
                    let t = f[5]
                        .strip_prefix("t=")
                        .ok_or_else(|| format!("no timers in `{l}`"))?;
                    let timers = t
                        .split(',')
                        .map(|v| match v {
                            "_" => Ok(None),
                            v => v
                                .parse()
                                .map(Some)
                                .map_err(|_| format!("bad timer in `{l}`")),
                        })
                        .collect::<Result<Vec<_>, _>>()?;
                    let next = f[6]
                        .strip_prefix("n=")
                        .and_then(|n| n.parse().ok())
                        .ok_or_else(|| format!("bad next timeout in `{l}`"))?;
                    (timers, next)
                } else {
                    (Vec::new(), 0)
                };
                let state = f[0].parse().map_err(|_| format!("bad state in `{l}`"))?;
                let handled = match f[1] {
                    "0" => true,
                    "1" => false,
                    other => return Err(format!("step returned {other}: `{l}`")),
                };
                let outputs = if f[2] == "-" {
                    Vec::new()
                } else {
                    f[2].chars().map(|c| c == '1').collect()
                };
                let actions = if f[3] == "-" {
                    Vec::new()
                } else {
                    f[3].split(',')
                        .map(|a| a.parse().map_err(|_| format!("bad action in `{l}`")))
                        .collect::<Result<_, _>>()?
                };
                let reads = if f[4] == "-" {
                    Vec::new()
                } else {
                    f[4].split(',')
                        .map(|a| a.parse().map_err(|_| format!("bad read in `{l}`")))
                        .collect::<Result<_, _>>()?
                };
                Ok(Seen {
                    state,
                    outputs,
                    actions,
                    handled: Some(handled),
                    rejected: !handled && self.reject,
                    reads: Some(reads),
                    timers,
                    next_timeout,
                    counters,
                })
            })
            .collect()
    }
}

// ---------------------------------------------------------------------------------------
// Verilog under Icarus

/// The hardware port: `logic`'s Verilog module with the self-checking testbench that
/// `logic::verilog::generate_testbench` writes from the interpreter's expectations
/// (the harness of `compiler/tests/logic_hw.rs`), run by Icarus Verilog. The encoding
/// and flip-flop type vary by machine. Under `unhandled reject` the hardware ignores
/// (LANGUAGE.md), which the testbench expects.
struct VerilogBackend;

struct VerilogRunner {
    machine: Machine,
    spec: LogicSpec,
    design: LogicDesign,
    module: String,
    dir: PathBuf,
}

impl Backend for VerilogBackend {
    fn name(&self) -> &'static str {
        "Verilog"
    }
    fn build(&self, case: &Case, dir: &Path) -> Result<Box<dyn Runner>, String> {
        let m = &case.machine;
        let spec = LogicSpec::from_machine(m)?;
        let (encoding, ff) =
            detent_tests::icarus::port_choice(m.states.len(), case.label.len() + m.states.len());
        let design = synthesize(&spec, &encoding, ff, false)?;
        let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
        let module = generate_module(&spec, &design, &names, &case.label)?;
        std::fs::create_dir_all(dir).map_err(|e| e.to_string())?;
        Ok(Box::new(VerilogRunner {
            machine: m.clone(),
            spec,
            design,
            module,
            dir: dir.to_path_buf(),
        }))
    }
}

impl VerilogRunner {
    /// Simulates the traces joined by reset pulses. `None` on PASS, else the cycle of
    /// the first mismatch and the line that reports it.
    fn simulate(&self, traces: &[Trace]) -> Result<Option<(usize, String)>, String> {
        let mut steps = Vec::new();
        for (k, t) in traces.iter().enumerate() {
            if k > 0 {
                steps.push(TbStep::Reset);
            }
            steps.extend(t.iter().map(|(event, inputs)| TbStep::Step {
                event: *event,
                inputs: inputs.clone(),
            }));
        }
        let tb = generate_testbench(&self.machine, &self.spec, &self.design, &steps, "case")?;
        let sim = detent_tests::icarus::simulate(&self.dir, &self.module, &tb)?;
        if sim.passed {
            return Ok(None);
        }
        let (cycle, line) = sim.mismatch().ok_or_else(|| {
            format!(
                "the testbench printed neither PASS nor MISMATCH:\n{}",
                sim.printed
            )
        })?;
        Ok(Some((cycle, line.to_string())))
    }
}

impl Runner for VerilogRunner {
    fn run(&self, _trace: &Trace) -> Result<Vec<Seen>, String> {
        Err("the Verilog testbench checks itself; use check_trace".into())
    }

    fn check_trace(&self, _m: &Machine, trace: &Trace) -> Option<(usize, String)> {
        match self.simulate(std::slice::from_ref(trace)) {
            Ok(None) => None,
            Ok(Some((cycle, line))) => Some((
                cycle.saturating_sub(2).min(trace.len().saturating_sub(1)),
                line,
            )),
            Err(e) => Some((trace.len().saturating_sub(1), e)),
        }
    }

    /// One simulation for all traces; the cycle of a mismatch names the trace and step
    /// (the first trace starts at cycle 2, and each later one after a one-cycle reset).
    fn check_traces(&self, m: &Machine, traces: &[Trace]) -> Option<(usize, usize, String)> {
        match self.simulate(traces) {
            Ok(None) => None,
            Ok(Some((cycle, line))) => {
                let mut at = 2;
                for (k, t) in traces.iter().enumerate() {
                    if cycle < at + t.len() {
                        return Some((k, cycle.saturating_sub(at), line));
                    }
                    at += t.len() + 1;
                }
                let k = traces.len() - 1;
                Some((k, traces[k].len().saturating_sub(1), line))
            }
            Err(e) => {
                // Find the trace alone.
                traces
                    .iter()
                    .enumerate()
                    .find_map(|(k, t)| self.check_trace(m, t).map(|(i, w)| (k, i, w)))
                    .or(Some((0, 0, e)))
            }
        }
    }
}

// ---------------------------------------------------------------------------------------
// Machines and traces

fn case_of(label: String, spec: String) -> Vec<Case> {
    let report = check_source(&label, &spec);
    let errors: Vec<String> = report
        .diagnostics()
        .filter(|d| d.is_error())
        .map(|d| d.message.clone())
        .collect();
    assert!(errors.is_empty(), "{label} has errors: {errors:?}\n{spec}");
    report
        .machines
        .into_iter()
        .filter_map(|m| m.machine)
        .map(|machine| Case {
            label: label.clone(),
            spec: spec.clone(),
            machine,
        })
        .collect()
}

/// The configurations the random machines are drawn from.
fn configs() -> Vec<GenConfig> {
    let d = GenConfig::default();
    let mut v = vec![
        d.clone(),
        GenConfig {
            events: 0,
            ..d.clone()
        },
        GenConfig {
            inputs: 0,
            outputs: 0,
            actions: 0,
            ..d.clone()
        },
        GenConfig {
            groups: false,
            ..d.clone()
        },
        GenConfig {
            inputs: 6,
            events: 2,
            ..d.clone()
        },
        GenConfig {
            states: (12, 30),
            events: 6,
            inputs: 4,
            outputs: 9,
            actions: 4,
            ..d.clone()
        },
        GenConfig {
            states: (1, 2),
            events: 1,
            ..d.clone()
        },
        GenConfig {
            events: 0,
            inputs: 4,
            groups: false,
            ..d.clone()
        },
    ];
    for policy in ["complete", "ignore", "reject"] {
        v.push(GenConfig {
            policy: Some(policy),
            ..d.clone()
        });
    }
    v.extend(detent_tests::gen::timed_configs());
    v.extend(detent_tests::gen::counter_configs());
    v
}

const SEEDS_PER_CONFIG: u64 = 3;
const RANDOM_TRACES: usize = 6;
const TRACE_LEN: usize = 200;
/// Steps per random trace of a machine with timers (mostly time-base events).
const TIMED_TRACE_LEN: usize = 600;

fn cases() -> Vec<Case> {
    let mut all = Vec::new();
    for f in detent_tests::spec_files("examples")
        .into_iter()
        .chain(detent_tests::spec_files("tests/specs/inherit"))
    {
        let name = f.file_name().unwrap().to_string_lossy().into_owned();
        all.extend(case_of(name, std::fs::read_to_string(&f).unwrap()));
    }
    let configs = configs();
    let per_config = detent_tests::per_config(SEEDS_PER_CONFIG, configs.len());
    for (ci, cfg) in configs.iter().enumerate() {
        for k in 0..per_config {
            let seed = detent_tests::machine_seed(0x0D1F_F000, ci, k);
            all.extend(case_of(
                format!("random_{seed}.detent"),
                random_spec(seed, cfg),
            ));
        }
    }
    all
}

/// The traces every back end runs on a machine: random ones, then the transition tour
/// cut at its resets (each piece runs from the start state).
fn traces_for(m: &Machine, seed: u64) -> Vec<(String, Trace)> {
    let mut rng = Rng::new(seed);
    let mut out: Vec<(String, Trace)> = (0..RANDOM_TRACES)
        .map(|k| {
            let trace = match &m.timebase {
                // Timed: longer traces with the time base on most steps, so that
                // timeouts come due (the generator's event 0 stands for the time base).
                Some(tb) if m.has_timers() => {
                    let tb = tb.event.index();
                    random_timed_trace(
                        &mut rng,
                        m.events.len(),
                        m.inputs.len(),
                        TIMED_TRACE_LEN,
                        0.8,
                    )
                    .into_iter()
                    .map(|(e, ins)| match e {
                        0 => (tb, ins),
                        e if e == tb => (0, ins),
                        e => (e, ins),
                    })
                    .collect()
                }
                _ => random_trace(&mut rng, m.events.len(), m.inputs.len(), TRACE_LEN),
            };
            (format!("random trace {k}"), trace)
        })
        .collect();
    let t = tour(m);
    let mut piece: Trace = Vec::new();
    let mut n = 0;
    for step in t.steps.iter().chain(std::iter::once(&TourStep::Reset)) {
        match step {
            TourStep::Step { event, inputs } => piece.push((event.index(), inputs.clone())),
            TourStep::Reset => {
                if !piece.is_empty() {
                    out.push((format!("tour piece {n}"), std::mem::take(&mut piece)));
                    n += 1;
                }
            }
        }
    }
    out
}

// ---------------------------------------------------------------------------------------
// Comparing and shrinking

/// The first step where `got` and `want` differ, with a description.
fn first_difference(want: &[Seen], got: &[Seen]) -> Option<(usize, String)> {
    for (i, w) in want.iter().enumerate() {
        let Some(g) = got.get(i) else {
            return Some((i, format!("the back end stopped after {} steps", got.len())));
        };
        let mut g = g.clone();
        if g.handled.is_none() {
            g.handled = w.handled;
        }
        if g.reads.is_none() {
            g.reads.clone_from(&w.reads);
        }
        for (k, t) in g.timers.iter_mut().enumerate() {
            if t.is_none() {
                // Not shown (a timer that does not count in the state): the
                // interpreter keeps it at 0, which the C harness does not print.
                *t = w.timers.get(k).copied().flatten();
            }
        }
        if let Some(reads) = &g.reads {
            if let Some(twice) = reads
                .iter()
                .enumerate()
                .find(|(k, r)| reads[..*k].contains(r))
                .map(|(_, r)| r)
            {
                return Some((
                    i,
                    format!(
                        "input {twice} was read twice in one step (reads {reads:?}, the \
                         interpreter's {:?})",
                        w.reads
                    ),
                ));
            }
        }
        if &g != w {
            return Some((i, format!("interpreter {w:?}\n    back end    {g:?}")));
        }
    }
    (got.len() > want.len()).then(|| (want.len(), "the back end ran extra steps".into()))
}

fn disagrees(m: &Machine, runner: &dyn Runner, trace: &Trace) -> Option<(usize, String)> {
    runner.check_trace(m, trace)
}

/// Cuts after the first differing step, then drops single steps while the back end
/// still disagrees.
fn shrink(m: &Machine, runner: &dyn Runner, trace: &Trace, first: usize) -> Trace {
    let mut t: Trace = trace[..(first + 1).min(trace.len())].to_vec();
    let mut i = 0;
    while i < t.len() {
        let mut shorter = t.clone();
        shorter.remove(i);
        if !shorter.is_empty() && disagrees(m, runner, &shorter).is_some() {
            t = shorter;
        } else {
            i += 1;
        }
    }
    t
}

/// A trace as `detent run` reads it.
fn trace_text(m: &Machine, t: &Trace) -> String {
    let mut s = String::new();
    for (e, ins) in t {
        s.push_str(&m.events[*e].name);
        for (i, v) in ins.iter().enumerate() {
            if *v {
                s.push_str(&format!(" {}=1", m.inputs[i].name));
            }
        }
        s.push('\n');
    }
    s
}

/// Shrinks a disagreement and describes it as a spec and a `detent run` trace.
fn report_failure(
    backend: &str,
    case: &Case,
    runner: &dyn Runner,
    what: &str,
    trace: &Trace,
    first: usize,
    why: String,
) -> String {
    let m = &case.machine;
    let small = shrink(m, runner, trace, first);
    let why_small =
        disagrees(m, runner, &small).map_or(why, |(k, w)| format!("at step {}: {w}", k + 1));
    format!(
        "{backend} disagrees with the interpreter on {} / {} ({what}, shrunk from {} to {} steps) {why_small}\n--- spec:\n{}\n--- trace:\n{}",
        case.label,
        m.name,
        trace.len(),
        small.len(),
        case.spec,
        trace_text(m, &small)
    )
}

/// Figures of one run of the suite.
#[derive(Default)]
struct Figures {
    machines: usize,
    traces: usize,
    steps: usize,
    fault_commands: usize,
}

/// Runs every case through one back end; returns the figures, or the shrunk failures.
///
/// `Machine` is not `Sync` (its spans are proc-macro2 spans), so each worker thread
/// checks the spec text again and takes the machine from its own report.
fn check_backend(
    backend: &dyn Backend,
    specs: &[(String, String, usize)],
) -> Result<Figures, Vec<String>> {
    let failures = std::sync::Mutex::new(Vec::new());
    let figures = std::sync::Mutex::new(Figures::default());
    let next = std::sync::atomic::AtomicUsize::new(0);
    std::thread::scope(|s| {
        for _ in 0..2 {
            s.spawn(|| loop {
                let i = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                let Some((label, spec, k)) = specs.get(i) else {
                    break;
                };
                let Some(case) = case_of(label.clone(), spec.clone()).into_iter().nth(*k) else {
                    failures
                        .lock()
                        .unwrap()
                        .push(format!("{label}: machine {k} vanished"));
                    continue;
                };
                let case = &case;
                let dir = std::env::temp_dir().join(format!(
                    "detent-differential-{}-{}-{i}",
                    std::process::id(),
                    backend.name()
                ));
                let _ = std::fs::remove_dir_all(&dir);
                let runner = match backend.build(case, &dir) {
                    Ok(r) => r,
                    Err(e) => {
                        failures.lock().unwrap().push(format!(
                            "{}: cannot build {} / {}: {e}",
                            backend.name(),
                            case.label,
                            case.machine.name
                        ));
                        continue;
                    }
                };
                let m = &case.machine;
                let traces = traces_for(m, 0xD1FF + i as u64);
                let steps: usize = traces.iter().map(|(_, t)| t.len()).sum();
                let plain: Vec<Trace> = traces.iter().map(|(_, t)| t.clone()).collect();
                if let Some((k, first, why)) = runner.check_traces(m, &plain) {
                    let (what, trace) = &traces[k];
                    failures.lock().unwrap().push(report_failure(
                        backend.name(),
                        case,
                        runner.as_ref(),
                        what,
                        trace,
                        first,
                        why,
                    ));
                }
                let _ = std::fs::remove_dir_all(&dir);
                let mut f = figures.lock().unwrap();
                f.machines += 1;
                f.traces += traces.len();
                f.steps += steps;
                f.fault_commands += runner.fault_commands();
                // A soak runs for an hour or more: say how far it got, so that a machine
                // that takes long shows up while it runs.
                if specs.len() > 1_000 && f.machines % 500 == 0 {
                    eprintln!(
                        "differential {}: {} of {} machines done",
                        backend.name(),
                        f.machines,
                        specs.len()
                    );
                }
            });
        }
    });
    let failures = failures.into_inner().unwrap();
    if failures.is_empty() {
        Ok(figures.into_inner().unwrap())
    } else {
        Err(failures)
    }
}

/// (file label, spec text, machine number in the file) of every case.
fn case_specs() -> Vec<(String, String, usize)> {
    let mut out: Vec<(String, String, usize)> = Vec::new();
    for c in cases() {
        let k = out
            .iter()
            .filter(|(l, s, _)| *l == c.label && *s == c.spec)
            .count();
        out.push((c.label, c.spec, k));
    }
    out
}

fn assert_backend_agrees(backend: &dyn Backend) {
    match check_backend(backend, &case_specs()) {
        Ok(f) => println!(
            "differential {}: {} machines, {} traces, {} steps{}, no disagreement",
            backend.name(),
            f.machines,
            f.traces,
            f.steps,
            if backend.name() == "C" {
                format!(", {} fault commands", f.fault_commands)
            } else {
                String::new()
            }
        ),
        Err(failures) => panic!("{} failures; the first:\n{}", failures.len(), failures[0]),
    }
}

#[test]
fn c_agrees_with_the_interpreter_on_random_machines_and_traces() {
    assert_backend_agrees(&CBackend);
}

#[test]
fn verilog_agrees_with_the_interpreter_on_random_machines_and_traces() {
    assert_backend_agrees(&VerilogBackend);
}

// ---------------------------------------------------------------------------------------
// Rust: the generated cases of tests/build.rs, where every back end runs together

use detent_tests::rust_forms::{Observed, Recorder};

#[allow(dead_code)] // the generated modules' API, only `step` and friends are called
mod rust_cases {
    //! `gen rust` table and match, the inline macro and the file-form macro of the
    //! random specs that `tests/build.rs` generates (the Rust engineer's harness).
    use detent_tests::rust_forms::Case;
    include!(concat!(env!("OUT_DIR"), "/differential.rs"));
}

/// One Rust form as a [`Runner`]: the generated runner's first entry is step 0.
struct RustForm(detent_tests::rust_forms::Runner);

impl Runner for RustForm {
    fn run(&self, trace: &Trace) -> Result<Vec<Seen>, String> {
        let _ = Recorder::default(); // the generated hooks record into this type
        Ok((self.0)(trace)
            .into_iter()
            .skip(1)
            .map(|o: Observed| Seen {
                state: o.state,
                outputs: o.outputs,
                actions: o.actions,
                handled: None,
                rejected: o.rejected,
                reads: Some(o.reads),
                timers: o.timers.into_iter().map(Some).collect(),
                next_timeout: o.next_timeout.unwrap_or(0),
                counters: o.counters.into_iter().map(u32::from).collect(),
            })
            .collect())
    }
}

/// Every back end on the same machines and the same traces: the four Rust forms, C and
/// Verilog, on each spec `tests/build.rs` compiled into this test (the soak machines
/// have a test of their own, below).
#[test]
fn every_back_end_agrees_on_the_same_machines_and_traces() {
    let f = rust_cases_agree(false);
    println!(
        "differential all back ends: {} machines through 6 back ends, {} runs, {} traces and {} steps per back end, no disagreement",
        f.machines, f.runs, f.traces, f.steps
    );
}

/// The soak machines (`DETENT_SOAK_MACHINES`; the chunk `DETENT_SOAK_CHUNK` of them
/// that `tests/build.rs` compiled in) through `gen rust` table and match; C and Verilog
/// run the soak count in their own tests above. Without a soak run there are none.
#[test]
fn soak_machines_agree_in_rust_table_and_match() {
    let f = rust_cases_agree(true);
    if f.machines > 0 {
        println!(
            "differential Rust soak (chunk {}): {} machines through Rust table and match, {} runs, {} traces and {} steps per form, no disagreement",
            std::env::var("DETENT_SOAK_CHUNK").unwrap_or_else(|_| "0/1".into()),
            f.machines, f.runs, f.traces, f.steps
        );
    }
}

/// Figures of a run over the compiled-in cases.
#[derive(Default)]
struct CaseFigures {
    machines: usize,
    runs: usize,
    traces: usize,
    steps: usize,
}

/// Runs the compiled-in cases (the soak machines, or the others) through their Rust
/// forms, and the others also through C and Verilog, all on the same traces.
fn rust_cases_agree(soak: bool) -> CaseFigures {
    let mut f = CaseFigures::default();
    let mut failures = Vec::new();
    for (i, rc) in rust_cases::CASES.iter().enumerate() {
        if rc.name.starts_with("soak") != soak {
            continue;
        }
        let Some(case) = case_of(format!("{}.detent", rc.name), rc.spec.to_string())
            .into_iter()
            .next()
        else {
            panic!("{} has no machine", rc.name);
        };
        let m = &case.machine;
        let mut runners: Vec<(String, Box<dyn Runner>)> = rc
            .runners
            .iter()
            .map(|(form, run)| {
                (
                    format!("Rust {form}"),
                    Box::new(RustForm(*run)) as Box<dyn Runner>,
                )
            })
            .collect();
        let backends: &[&dyn Backend] = if soak {
            &[]
        } else {
            &[&CBackend, &VerilogBackend]
        };
        for b in backends {
            let dir = std::env::temp_dir().join(format!(
                "detent-all-{}-{}-{i}",
                std::process::id(),
                b.name()
            ));
            let _ = std::fs::remove_dir_all(&dir);
            match b.build(&case, &dir) {
                Ok(r) => runners.push((b.name().to_string(), r)),
                Err(e) => failures.push(format!("{}: cannot build {}: {e}", b.name(), rc.name)),
            }
        }
        let traces = traces_for(m, 0xA11 + i as u64);
        let plain: Vec<Trace> = traces.iter().map(|(_, t)| t.clone()).collect();
        for (name, r) in &runners {
            f.runs += 1;
            if let Some((k, first, why)) = r.check_traces(m, &plain) {
                let (what, trace) = &traces[k];
                failures.push(report_failure(
                    name,
                    &case,
                    r.as_ref(),
                    what,
                    trace,
                    first,
                    why,
                ));
            }
        }
        f.machines += 1;
        f.traces += traces.len();
        f.steps += plain.iter().map(Vec::len).sum::<usize>();
        for b in backends {
            let _ = std::fs::remove_dir_all(std::env::temp_dir().join(format!(
                "detent-all-{}-{}-{i}",
                std::process::id(),
                b.name()
            )));
        }
    }
    assert!(
        failures.is_empty(),
        "{} failures; the first:\n{}",
        failures.len(),
        failures[0]
    );
    f
}

/// The harness itself: a back end that is wrong must be caught and shrunk.
#[test]
fn a_wrong_back_end_is_caught_and_its_trace_shrunk() {
    /// The interpreter, but from the 5th step on it reports a spurious action in state 1.
    struct Broken(Machine);
    impl Runner for Broken {
        fn run(&self, trace: &Trace) -> Result<Vec<Seen>, String> {
            let mut v = interpret(&self.0, trace);
            for (i, o) in v.iter_mut().enumerate() {
                if i >= 4 && o.state == 1 {
                    o.actions.push(99);
                }
            }
            Ok(v)
        }
    }
    let case = &case_of("ring.detent".into(), "machine Ring { events Next; actions a; start S0; state S0 { Next => S1; } state S1 { Next => S2; } state S2 { Next => S0; } }".into())[0];
    let m = &case.machine;
    let broken = Broken(m.clone());
    let trace: Trace = vec![(0, vec![]); 50];
    let (first, _) = disagrees(m, &broken, &trace).expect("caught");
    assert_eq!(
        first, 6,
        "S0 S1 S2 S0 S1 S2 S0: the first S1 at index >= 4 is step 7"
    );
    let small = shrink(m, &broken, &trace, first);
    // The smallest trace that still reaches S1 at step 5 or later: seven steps.
    assert_eq!(small.len(), 7);
    assert_eq!(trace_text(m, &small), "Next\n".repeat(7));
}

/// What the minimized machine must agree on: the class of the state, the outputs, the
/// actions and rejections; not `handled`, since an ignored event and a `=> stay` rule
/// without outputs are the same behaviour (LANGUAGE.md, "Coverage").
fn minimized_disagrees(
    m: &Machine,
    q: &Machine,
    class_of: &[Option<u32>],
    trace: &Trace,
) -> Option<(usize, String)> {
    let want = interpret(m, trace);
    let got = interpret(q, trace);
    for (i, (w, g)) in want.iter().zip(&got).enumerate() {
        let class = class_of[w.state].map(|c| c as usize);
        if class != Some(g.state)
            || w.outputs != g.outputs
            || w.actions != g.actions
            || w.rejected != g.rejected
        {
            return Some((
                i,
                format!("original {w:?} (class {class:?})\n    minimized {g:?}"),
            ));
        }
    }
    None
}

#[test]
fn minimized_machines_behave_like_the_originals_on_every_trace() {
    const SEEDS: u64 = 30;
    let (mut machines, mut traces, mut steps, mut merged) = (0usize, 0usize, 0usize, 0usize);
    let mut all: Vec<Case> = cases();
    let configs = configs();
    let first = detent_tests::per_config(SEEDS_PER_CONFIG, configs.len());
    // Under a soak run `cases()` already has the soak count; no more on top.
    let last = if detent_tests::soak_machines().is_some() {
        first
    } else {
        SEEDS
    };
    for (ci, cfg) in configs.iter().enumerate() {
        for k in first..last {
            let seed = detent_tests::machine_seed(0x0D1F_F000, ci, k);
            all.extend(case_of(
                format!("random_{seed}.detent"),
                random_spec(seed, cfg),
            ));
        }
    }
    for (i, case) in all.iter().enumerate() {
        let m = &case.machine;
        let min = minimize(m);
        let q = minimized_machine(m);
        if detent_compiler::minimize::machine::has_group_timer(m) {
            // A group timer is never minimized: the machine is generated as written
            // (docs/language-decisions.md, "Minimizing machines with timers").
            assert_eq!(q.states.len(), m.states.len(), "{}", case.label);
            assert!(matches!(equiv(m, &q), Ok(None)), "{}", case.label);
            continue;
        }
        assert_eq!(q.states.len(), min.states_after(), "{}", case.label);
        for (s, c) in min.class_of.iter().enumerate() {
            if let Some(c) = c {
                assert_eq!(
                    q.states[*c as usize].name,
                    m.states[min.representative(*c).index()].name,
                    "{}: class of {}",
                    case.label,
                    m.states[s].name
                );
            }
        }
        merged += m.states.len() - q.states.len();
        match equiv(m, &q) {
            Ok(None) => {}
            other => panic!(
                "{}: equiv finds the minimized machine different: {other:?}\n{}",
                case.label, case.spec
            ),
        }
        for (what, trace) in traces_for(m, 0x5A11 + i as u64) {
            traces += 1;
            steps += trace.len();
            if let Some((first, why)) = minimized_disagrees(m, &q, &min.class_of, &trace) {
                // Shrink: cut after the first difference, then drop single steps.
                let mut t: Trace = trace[..=first].to_vec();
                let mut j = 0;
                while j < t.len() {
                    let mut shorter = t.clone();
                    shorter.remove(j);
                    if !shorter.is_empty()
                        && minimized_disagrees(m, &q, &min.class_of, &shorter).is_some()
                    {
                        t = shorter;
                    } else {
                        j += 1;
                    }
                }
                panic!(
                    "the minimized {} differs from the original on {} ({what}, shrunk to {} steps): {why}\n--- spec:\n{}\n--- trace:\n{}",
                    m.name,
                    case.label,
                    t.len(),
                    case.spec,
                    trace_text(m, &t)
                );
            }
        }
        machines += 1;
    }
    println!("differential minimize: {machines} machines ({merged} states merged or dropped), {traces} traces, {steps} steps, no difference");
}
