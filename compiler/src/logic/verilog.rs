//! Verilog (IEEE 1364-2005) from a [`LogicDesign`]: the machine as a module, and a
//! self-checking testbench.
//!
//! The module registers the state bits and updates them from the minimized flip-flop
//! input equations, so the equations themselves are what a simulator runs:
//! D: `q <= D`; T: `q <= q ^ T`; JK: `q <= J & ~q | ~K & q`; SR: `q <= S | ~R & q`.
//! The excitation never asks for `S = R = 1`; where the minimized S and R are both 1
//! (only at don't-care points: unused codes, event codes `>= E`) the update above sets
//! the bit (set wins). Reset is synchronous and active high, to the start state's code.
//! Outputs and action pulses are combinational (Moore part of the current state, Mealy
//! part and actions of the rule the current cycle takes). Each clock cycle is one step:
//! one event on `ev` (or one tick of a clocked machine). Rule choice comes from the
//! lowered form ([`crate::model::lower`]): the equations are cut from its firing regions
//! ([`LogicSpec`]), and the testbench's expected values are the interpreter's, which
//! steps through it.
//!
//! **Timers** (DESIGN.md, "Hardware port"): each scope with `after` rules has a timer
//! register beside the state register, written as a datapath rather than as minimized
//! equations: `timer_<scope>` of the narrowest width that holds its largest duration,
//! set to 0 by `rst`, and on each clock edge set to 0 when its minimized clear function
//! `clear_<scope>` is high (the rule taken enters the scope), else increased by one on
//! a time-base cycle (`tb`: `ev` equal to the time base's code, or every cycle when
//! there is no event bus) unless it is at its largest duration (it saturates). The
//! due variables `due_<scope>_<ticks>` are comparisons of the register with `ticks - 1`
//! on a time-base cycle: the variables the flip-flop, output, action and clear equations
//! read (LANGUAGE.md, "Time and counts": the timer's value before this event's count
//! decides whether the timeout is due). The clear has priority over the count, as in
//! the interpreter, which counts first and then clears the scopes the rule enters.
//!
//! **Counters**: each counter is a register beside the state register, named after
//! it, of the narrowest width that holds its largest value, set to 0 by `rst`. Its
//! comparison wires (`strikes_lt_2 = strikes < 2`) are variables of the equations,
//! read at the start of the step as guards read counters; its control wires (minimized
//! functions, one per composite effect: `strikes_add_1`, `strikes_set_0`, ...) select
//! the register's next value in an `if / else if` chain, each a saturating update
//! (`clamp(v + a, lo, hi)`, [`CounterEffect`]); with none high the register holds.
//! The testbench checks every counter register before each clock edge.
//!
//! Names: the ports `clk`, `rst`, `ev`, `state` are fixed; inputs, outputs and actions
//! keep their spec names; a name that is a Verilog (or SystemVerilog) keyword becomes an
//! escaped identifier (`\begin `); a spec name equal to a fixed port, or an output and an
//! action of the same name, is an error. Generation is linear in the size of the covers
//! (module) and in the number of steps (testbench).

use super::assign::code_string;
use super::equations::{CounterEffect, LogicDesign, LogicSpec, Role};
use super::excitation::FlipFlop;
use super::Cover;
use crate::model::{EventId, Machine};
use crate::naming::to_snake;
use std::collections::HashSet;
use std::fmt::Write;

/// Reserved words of IEEE 1364-2005, plus the SystemVerilog ones most likely to meet a
/// spec name (so that the files also read under SystemVerilog tools).
const KEYWORDS: &[&str] = &[
    "always",
    "and",
    "assign",
    "automatic",
    "begin",
    "buf",
    "bufif0",
    "bufif1",
    "case",
    "casex",
    "casez",
    "cell",
    "cmos",
    "config",
    "deassign",
    "default",
    "defparam",
    "design",
    "disable",
    "edge",
    "else",
    "end",
    "endcase",
    "endconfig",
    "endfunction",
    "endgenerate",
    "endmodule",
    "endprimitive",
    "endspecify",
    "endtable",
    "endtask",
    "event",
    "for",
    "force",
    "forever",
    "fork",
    "function",
    "generate",
    "genvar",
    "highz0",
    "highz1",
    "if",
    "ifnone",
    "incdir",
    "include",
    "initial",
    "inout",
    "input",
    "instance",
    "integer",
    "join",
    "large",
    "liblist",
    "library",
    "localparam",
    "macromodule",
    "medium",
    "module",
    "nand",
    "negedge",
    "nmos",
    "nor",
    "noshowcancelled",
    "not",
    "notif0",
    "notif1",
    "or",
    "output",
    "parameter",
    "pmos",
    "posedge",
    "primitive",
    "pull0",
    "pull1",
    "pulldown",
    "pullup",
    "pulsestyle_onevent",
    "pulsestyle_ondetect",
    "rcmos",
    "real",
    "realtime",
    "reg",
    "release",
    "repeat",
    "rnmos",
    "rpmos",
    "rtran",
    "rtranif0",
    "rtranif1",
    "scalared",
    "showcancelled",
    "signed",
    "small",
    "specify",
    "specparam",
    "strong0",
    "strong1",
    "supply0",
    "supply1",
    "table",
    "task",
    "time",
    "tran",
    "tranif0",
    "tranif1",
    "tri",
    "tri0",
    "tri1",
    "triand",
    "trior",
    "trireg",
    "unsigned",
    "use",
    "uwire",
    "vectored",
    "wait",
    "wand",
    "weak0",
    "weak1",
    "while",
    "wire",
    "wor",
    "xnor",
    "xor",
    // SystemVerilog
    "bit",
    "byte",
    "int",
    "logic",
    "shortint",
    "longint",
    "string",
    "type",
    "enum",
    "struct",
    "union",
    "class",
    "final",
    "return",
    "break",
    "continue",
    "do",
    "interface",
    "package",
    "program",
    "property",
    "sequence",
    "assert",
    "assume",
    "cover",
    "chandle",
    "const",
    "context",
    "extends",
    "import",
    "export",
    "local",
    "new",
    "null",
    "priority",
    "unique",
    "void",
    "virtual",
    "static",
    "super",
    "this",
    "bind",
    "alias",
    "clocking",
];

/// A Verilog identifier for a spec name: the name itself, or an escaped identifier
/// (with its terminating space) when it is a keyword.
fn ident(name: &str) -> String {
    if KEYWORDS.contains(&name) {
        format!("\\{name} ")
    } else {
        name.to_string()
    }
}

/// Bits needed to write `v` (at least 1).
fn width_of(v: u64) -> usize {
    (64 - v.leading_zeros() as usize).max(1)
}

/// The module name: the machine name in snake_case.
pub fn module_name(machine: &str) -> String {
    ident(&to_snake(machine.trim_start_matches("r#")))
}

/// One step a testbench drives.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum TbStep {
    /// A reset pulse: one cycle with `rst` high; the state becomes the start state.
    Reset,
    /// One cycle: an event (0 for a clocked machine's `Tick`) and the input values.
    Step {
        /// The event number.
        event: usize,
        /// Input values by input number (missing ones read as 0).
        inputs: Vec<bool>,
    },
}

/// Most steps of the timed sequence [`testbench_steps`] appends for a machine with
/// timers or counters.
pub const TIMED_STEPS_MAX: usize = 4096;

/// The steps `detent logic --testbench` drives: the transition tour (every reachable
/// rule fired at least once, resets where the machine is not strongly connected); for a
/// machine with timers or counters, then a reset and a seeded random sequence (with
/// timers, the time base on three steps of four; other events and inputs uniform; `64 +
/// 4 x` the sum of the timers' largest durations and the counters' largest values
/// steps, at most [`TIMED_STEPS_MAX`]) so that timeouts come due, counters climb to
/// their ends and the registers are exercised whatever the tour reaches.
/// Deterministic: the same machine gives the same steps.
pub fn testbench_steps(m: &Machine) -> Vec<TbStep> {
    use crate::tour::{tour, TourStep};
    let mut steps: Vec<TbStep> = tour(m)
        .steps
        .into_iter()
        .map(|s| match s {
            TourStep::Reset => TbStep::Reset,
            TourStep::Step { event, inputs } => TbStep::Step {
                event: event.index(),
                inputs,
            },
        })
        .collect();
    if m.has_timers() || m.has_counters() {
        let total: usize = m.timers.iter().map(|t| t.max() as usize).sum::<usize>()
            + m.counters.iter().map(|c| usize::from(c.max)).sum::<usize>();
        let len = total
            .saturating_mul(4)
            .saturating_add(64)
            .min(TIMED_STEPS_MAX);
        let n_events = m.events.len().max(1);
        let tb_event = m
            .timebase
            .as_ref()
            .filter(|_| m.has_timers())
            .map(|tb| tb.event.index());
        let mut rng = crate::rng::Rng::new(0x7E57_BE4C);
        if !steps.is_empty() {
            steps.push(TbStep::Reset);
        }
        for _ in 0..len {
            let event = match tb_event {
                Some(tb) if n_events == 1 || rng.chance(0.75) => tb.min(n_events - 1),
                _ => rng.index(n_events),
            };
            let inputs = (0..m.inputs.len()).map(|_| rng.chance(0.5)).collect();
            steps.push(TbStep::Step { event, inputs });
        }
    }
    steps
}

/// Names of the module's signals.
struct Names {
    inputs: Vec<String>,
    /// Due variable wires, in [`LogicSpec::dues`] order.
    dues: Vec<String>,
    /// Timer registers, in [`LogicSpec::timers`] order.
    timers: Vec<String>,
    /// The time-base cycle wire (used only when there are timers).
    tb: String,
    /// Comparison wires, in [`LogicSpec::compares`] order.
    compares: Vec<String>,
    /// Counter registers, in [`LogicSpec::counters`] order.
    counters: Vec<String>,
    outputs: Vec<String>,
    actions: Vec<String>,
    /// Internal wire per function, in `design.functions` order.
    wires: Vec<String>,
    reg: String,
}

fn names(spec: &LogicSpec, design: &LogicDesign) -> Result<Names, String> {
    let mut used: HashSet<String> = ["clk", "rst", "ev", "state"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let mut claim = |kind: &str, name: &str| -> Result<String, String> {
        if !used.insert(name.to_string()) {
            return Err(format!(
                "{kind} `{name}` has the same Verilog name as another port (`clk`, `rst`, \
                 `ev`, `state`, or an input, output or action); rename it for the hardware port"
            ));
        }
        Ok(ident(name))
    };
    let inputs = spec
        .inputs
        .iter()
        .map(|n| claim("input", n))
        .collect::<Result<Vec<_>, _>>()?;
    let outputs = spec
        .outputs
        .iter()
        .map(|n| claim("output", n))
        .collect::<Result<Vec<_>, _>>()?;
    let actions = spec
        .actions
        .iter()
        .map(|n| claim("action", n))
        .collect::<Result<Vec<_>, _>>()?;
    let dues = spec
        .dues
        .iter()
        .map(|d| claim("due variable", &d.name))
        .collect::<Result<Vec<_>, _>>()?;
    let timers = spec
        .timers
        .iter()
        .map(|t| claim("timer register", &t.register))
        .collect::<Result<Vec<_>, _>>()?;
    let clears = spec
        .timers
        .iter()
        .map(|t| claim("timer clear", &t.clear))
        .collect::<Result<Vec<_>, _>>()?;
    let compares = spec
        .compares
        .iter()
        .map(|c| claim("counter comparison", &c.name))
        .collect::<Result<Vec<_>, _>>()?;
    let counters = spec
        .counters
        .iter()
        .map(|c| claim("counter register", &c.register))
        .collect::<Result<Vec<_>, _>>()?;
    let controls = spec
        .controls
        .iter()
        .map(|c| claim("counter control", &c.name))
        .collect::<Result<Vec<_>, _>>()?;
    let mut fresh = |base: String| -> String {
        let mut name = base;
        while KEYWORDS.contains(&name.as_str()) || !used.insert(name.clone()) {
            name.push('_');
        }
        name
    };
    let reg = fresh("q".to_string());
    let tb = fresh("tb".to_string());
    let wires = design
        .functions
        .iter()
        .map(|f| match f.role {
            Role::FlipFlop { .. } => fresh(f.name.clone()),
            Role::Output(o) => outputs[o].clone(),
            Role::Action(a) => actions[a].clone(),
            Role::TimerClear(t) => clears[t].clone(),
            Role::CounterControl(j) => controls[j].clone(),
        })
        .collect();
    Ok(Names {
        inputs,
        dues,
        timers,
        tb,
        compares,
        counters,
        outputs,
        actions,
        wires,
        reg,
    })
}

/// A cover as a Verilog expression over `q[..]`, `ev[..]`, the input ports and the due
/// wires. `vars` is the function's variable count: a Moore output reads the state bits
/// only.
fn expression(design: &LogicDesign, n: &Names, vars: usize, cover: &Cover) -> String {
    let k = design.state_vars.len();
    let ni = n.inputs.len();
    let nu = n.dues.len();
    let b = design.pin_vars.len() - ni - nu - n.compares.len();
    let var = |i: usize| -> String {
        if i < k {
            format!("{}[{}]", n.reg, k - 1 - i)
        } else if i < k + b {
            format!("ev[{}]", b - 1 - (i - k))
        } else if i < k + b + ni {
            n.inputs[i - k - b].clone()
        } else if i < k + b + ni + nu {
            n.dues[i - k - b - ni].clone()
        } else {
            n.compares[i - k - b - ni - nu].clone()
        }
    };
    if cover.cubes.is_empty() {
        return "1'b0".to_string();
    }
    if cover.cubes.iter().any(|c| c.care == 0) {
        return "1'b1".to_string();
    }
    let products: Vec<String> = cover
        .cubes
        .iter()
        .map(|c| {
            let lits: Vec<String> = (0..vars)
                .filter(|&i| c.care >> (vars - 1 - i) & 1 == 1)
                .map(|i| {
                    if c.value >> (vars - 1 - i) & 1 == 1 {
                        var(i)
                    } else {
                        format!("~{}", var(i))
                    }
                })
                .collect();
            if lits.len() > 1 && cover.cubes.len() > 1 {
                format!("({})", lits.join(" & "))
            } else {
                lits.join(" & ")
            }
        })
        .collect();
    products.join(" | ")
}

/// The banner every generated file starts with.
fn banner(out: &mut String, what: &str, spec: &LogicSpec, design: &LogicDesign, source: &str) {
    let _ = writeln!(
        out,
        "// {what} for machine {}, generated by detent from {source}.\n\
         // Do not edit: regenerate with `detent logic`.\n\
         //\n\
         // Caution: this is tool output, not a certified component. For safety functions,\n\
         // follow the applicable functional-safety standard (IEC 61508 or your sector's)\n\
         // and local codes, and have the design reviewed by qualified people.\n\
         //\n\
         // Encoding: {}, {} state bit(s); flip-flops: {}.",
        spec.name,
        design.encoding.kind.name(),
        design.encoding.bits,
        ff_name(design.flip_flop),
    );
}

fn ff_name(ff: FlipFlop) -> &'static str {
    match ff {
        FlipFlop::D => "D",
        FlipFlop::T => "T",
        FlipFlop::JK => "JK",
        FlipFlop::SR => "SR",
    }
}

/// The module text. `state_names` label the codes in a comment; `source` names the spec
/// file in the banner.
pub fn generate_module(
    spec: &LogicSpec,
    design: &LogicDesign,
    state_names: &[String],
    source: &str,
) -> Result<String, String> {
    let n = names(spec, design)?;
    let k = design.encoding.bits;
    let b = spec.ev_bits;
    let mut out = String::new();
    banner(&mut out, "Verilog module", spec, design, source);
    out.push_str("//\n// State codes (q");
    let _ = writeln!(out, "{}..q0):", k - 1);
    for (s, name) in state_names.iter().enumerate() {
        let _ = writeln!(
            out,
            "//   {name} = {}'b{}",
            k,
            design.encoding.code_string(s)
        );
    }
    out.push_str("\n`timescale 1ns / 1ps\n\n");
    let mut ports = vec![
        "    input  wire clk".to_string(),
        "    input  wire rst".to_string(),
    ];
    if b > 0 {
        ports.push(format!("    input  wire [{}:0] ev", b - 1));
    }
    for i in &n.inputs {
        ports.push(format!("    input  wire {i}"));
    }
    for o in n.outputs.iter().chain(n.actions.iter()) {
        ports.push(format!("    output wire {o}"));
    }
    ports.push(format!("    output wire [{}:0] state", k - 1));
    let _ = writeln!(
        out,
        "module {} (\n{}\n);",
        module_name(&spec.name),
        ports.join(",\n")
    );
    let _ = writeln!(out, "    reg [{}:0] {};", k - 1, n.reg);
    if !spec.timers.is_empty() {
        out.push_str(
            "\n    // Timers (the datapath): one counter per scope with `after` rules, cleared\n    \
             // when the rule taken enters the scope, else counting time-base cycles up to\n    \
             // its largest duration. A due wire is high on a time-base cycle where its\n    \
             // timer stands at the duration minus one.\n",
        );
        let tb_expr = match spec.timebase_code {
            Some(code) => format!("(ev == {b}'d{code})"),
            None => "1'b1".to_string(),
        };
        let _ = writeln!(out, "    wire {} = {tb_expr};", n.tb);
        for (t, timer) in spec.timers.iter().enumerate() {
            let _ = writeln!(
                out,
                "    reg [{}:0] {}; // {}: {}, saturates at {}",
                timer.bits - 1,
                n.timers[t],
                timer.scope,
                timer
                    .durations
                    .iter()
                    .map(|d| format!("after {d}"))
                    .collect::<Vec<_>>()
                    .join(", "),
                timer.max
            );
            for (&j, &d) in timer.dues.iter().zip(&timer.durations) {
                let _ = writeln!(
                    out,
                    "    wire {} = {} & ({} == {}'d{});",
                    n.dues[j],
                    n.tb,
                    n.timers[t],
                    timer.bits,
                    d - 1
                );
            }
        }
    }
    if !spec.counters.is_empty() {
        out.push_str(
            "\n    // Counters (the datapath): one register per counter, changed by its control\n    \
             // lines (one per composite effect a step can have on it, at most one high),\n    \
             // saturating at 0 and its largest value. A comparison wire reads the register\n    \
             // at the start of the step, as guards do.\n",
        );
        for (c, counter) in spec.counters.iter().enumerate() {
            let _ = writeln!(
                out,
                "    reg [{}:0] {}; // {}: 0..={}",
                counter.bits - 1,
                n.counters[c],
                counter.name,
                counter.max
            );
            for &a in &counter.compares {
                let x = &spec.compares[a];
                let op = x.cmp.symbol();
                let w = counter.bits.max(width_of(u64::from(x.value)));
                let _ = writeln!(
                    out,
                    "    wire {} = ({} {op} {w}'d{}); // {}",
                    n.compares[a], n.counters[c], x.value, x.text
                );
            }
        }
    }
    out.push_str("\n    // Flip-flop input equations.\n");
    for (f, w) in design.functions.iter().zip(&n.wires) {
        if let Role::FlipFlop { .. } = f.role {
            let _ = writeln!(
                out,
                "    wire {w} = {};",
                expression(design, &n, f.vars.len(), &f.cover)
            );
        }
    }
    if !spec.timers.is_empty() {
        out.push_str("\n    // Timer clear equations (the rule taken enters the scope).\n");
        for (f, w) in design.functions.iter().zip(&n.wires) {
            if let Role::TimerClear(_) = f.role {
                let _ = writeln!(
                    out,
                    "    wire {w} = {};",
                    expression(design, &n, f.vars.len(), &f.cover)
                );
            }
        }
    }
    if !spec.controls.is_empty() {
        out.push_str("\n    // Counter control equations (the step applies the effect).\n");
        for (f, w) in design.functions.iter().zip(&n.wires) {
            if let Role::CounterControl(j) = f.role {
                let c = &spec.counters[spec.controls[j].counter];
                let _ = writeln!(
                    out,
                    "    wire {w} = {}; // {} {}",
                    expression(design, &n, f.vars.len(), &f.cover),
                    c.name,
                    spec.controls[j].effect.text(c.max)
                );
            }
        }
    }
    out.push_str("\n    always @(posedge clk) begin\n        if (rst) begin\n");
    let _ = writeln!(
        out,
        "            {} <= {}'b{};",
        n.reg,
        k,
        design.encoding.code_string(spec.start)
    );
    for (t, timer) in spec.timers.iter().enumerate() {
        let _ = writeln!(out, "            {} <= {}'d0;", n.timers[t], timer.bits);
    }
    for (c, counter) in spec.counters.iter().enumerate() {
        let _ = writeln!(out, "            {} <= {}'d0;", n.counters[c], counter.bits);
    }
    out.push_str("        end else begin\n");
    for bit in (0..k).rev() {
        let wire = |input: usize| -> &str {
            let idx = design
                .functions
                .iter()
                .position(|f| f.role == Role::FlipFlop { bit, input })
                .unwrap_or(0);
            &n.wires[idx]
        };
        let q = format!("{}[{bit}]", n.reg);
        let next = match design.flip_flop {
            FlipFlop::D => wire(0).to_string(),
            FlipFlop::T => format!("{q} ^ {}", wire(0)),
            FlipFlop::JK => format!("({} & ~{q}) | (~{} & {q})", wire(0), wire(1)),
            FlipFlop::SR => format!("{} | (~{} & {q})", wire(0), wire(1)),
        };
        let _ = writeln!(out, "            {q} <= {next};");
    }
    for (t, timer) in spec.timers.iter().enumerate() {
        let clear = design
            .functions
            .iter()
            .position(|f| f.role == Role::TimerClear(t))
            .map_or("1'b0", |i| n.wires[i].as_str());
        let r = &n.timers[t];
        let w = timer.bits;
        let _ = writeln!(
            out,
            "            if ({clear})\n                {r} <= {w}'d0;\n            \
             else if ({} && {r} != {w}'d{})\n                {r} <= {r} + {w}'d1;",
            n.tb, timer.max
        );
    }
    for (c, counter) in spec.counters.iter().enumerate() {
        let r = &n.counters[c];
        let w = counter.bits;
        for (x, &j) in counter.controls.iter().enumerate() {
            let wire = design
                .functions
                .iter()
                .position(|f| f.role == Role::CounterControl(j))
                .map_or("1'b0", |i| n.wires[i].as_str());
            let value = match spec.controls[j].effect {
                CounterEffect::Set(k) => format!("{w}'d{k}"),
                CounterEffect::Shift { add, lo, hi } => {
                    let (a, max) = (i64::from(add), i64::from(counter.max));
                    let (lo, hi) = (i64::from(lo), i64::from(hi));
                    let mut e = if a < 0 {
                        format!("{r} - {w}'d{}", -a)
                    } else {
                        format!("{r} + {w}'d{a}")
                    };
                    // Clamp where the sum leaves `lo..=hi` for some value of the counter.
                    if hi < max + a {
                        e = format!("({r} > {w}'d{}) ? {w}'d{hi} : {e}", hi - a);
                    }
                    if lo > a {
                        e = format!("({r} < {w}'d{}) ? {w}'d{lo} : {e}", lo - a);
                    }
                    e
                }
            };
            let _ = writeln!(
                out,
                "            {}if ({wire})\n                {r} <= {value};",
                if x == 0 { "" } else { "else " }
            );
        }
    }
    out.push_str("        end\n    end\n");
    out.push_str("\n    // Outputs (Moore part of the current state, Mealy part of the rule taken)\n    // and action pulses.\n");
    for (f, w) in design.functions.iter().zip(&n.wires) {
        if matches!(f.role, Role::Output(_) | Role::Action(_)) {
            let _ = writeln!(
                out,
                "    assign {w} = {};",
                expression(design, &n, f.vars.len(), &f.cover)
            );
        }
    }
    let _ = writeln!(out, "    assign state = {};\nendmodule", n.reg);
    Ok(out)
}

/// A self-checking testbench driving `steps` cycle by cycle: before each clock edge it
/// compares `state`, every output and every action pulse with what the interpreter
/// ([`Machine::step_config`], from the start configuration) computed for that step
/// (embedded as constants), the register of every timer whose scope is active
/// with the interpreter's timer (read through the hierarchical name `dut.timer_..`;
/// the value of an inactive timer does not matter and is not checked) and every
/// counter register with the interpreter's counter, and after the last step the final
/// state and counters. It prints `PASS` and calls `$finish` (exit status 0), or
/// prints the first mismatch as `MISMATCH cycle N signal S expected E got G` and calls
/// `$fatal(1, ..)`, which ends the simulation with a non-zero exit status (Icarus
/// Verilog's `vvp` exits with 1; `$fatal` is a system task of IEEE 1800 that Icarus
/// Verilog 11 also accepts in `-g2005` mode), so CI can rely on the exit code. The
/// trace starts with a reset pulse.
pub fn generate_testbench(
    m: &Machine,
    spec: &LogicSpec,
    design: &LogicDesign,
    steps: &[TbStep],
    source: &str,
) -> Result<String, String> {
    let n = names(spec, design)?;
    let k = design.encoding.bits;
    let b = spec.ev_bits;
    let n_out = n.outputs.len() + n.actions.len();
    let module = module_name(&spec.name);
    let mut out = String::new();
    banner(&mut out, "Self-checking testbench", spec, design, source);
    out.push_str(
        "\n//\n// Prints PASS and ends with $finish (exit status 0), or prints the first MISMATCH\n\
         // and ends with $fatal (an IEEE 1800 system task that Icarus Verilog accepts in\n\
         // -g2005 mode; vvp then exits with status 1), so CI can rely on the exit code.\n",
    );
    out.push_str("\n`timescale 1ns / 1ps\n\n");
    let tb_name = if module.ends_with(' ') {
        format!("\\{}_tb ", module.trim().trim_start_matches('\\'))
    } else {
        format!("{module}_tb")
    };
    let _ = writeln!(out, "module {tb_name};");
    out.push_str("    reg clk = 1'b0;\n    reg rst = 1'b1;\n");
    if b > 0 {
        let _ = writeln!(out, "    reg [{}:0] ev = {b}'d0;", b - 1);
    }
    for i in &n.inputs {
        let _ = writeln!(out, "    reg {i} = 1'b0;");
    }
    for o in n.outputs.iter().chain(n.actions.iter()) {
        let _ = writeln!(out, "    wire {o};");
    }
    let _ = writeln!(out, "    wire [{}:0] state;", k - 1);
    let mut conns = vec![".clk(clk)".to_string(), ".rst(rst)".to_string()];
    if b > 0 {
        conns.push(".ev(ev)".to_string());
    }
    for s in n
        .inputs
        .iter()
        .chain(n.outputs.iter())
        .chain(n.actions.iter())
    {
        conns.push(format!(".{s}({s})"));
    }
    conns.push(".state(state)".to_string());
    let _ = writeln!(out, "    {module} dut ({});\n", conns.join(", "));

    // The check task: state, then each output and action by name.
    out.push_str("    task check;\n        input integer cycle;\n");
    let _ = writeln!(out, "        input [{}:0] exp_state;", k - 1);
    if n_out > 0 {
        let _ = writeln!(out, "        input [{}:0] exp_out;", n_out - 1);
    }
    out.push_str("        begin\n            if (state !== exp_state) begin\n");
    out.push_str("                $display(\"MISMATCH cycle %0d signal state expected %b got %b\", cycle, exp_state, state);\n");
    out.push_str("                $fatal(1, \"testbench mismatch\");\n            end\n");
    for (i, (sig, label)) in n
        .outputs
        .iter()
        .zip(spec.outputs.iter())
        .chain(n.actions.iter().zip(spec.actions.iter()))
        .enumerate()
    {
        let bit = n_out - 1 - i;
        let _ = writeln!(
            out,
            "            if ({sig} !== exp_out[{bit}]) begin\n                \
             $display(\"MISMATCH cycle %0d signal {label} expected %b got %b\", cycle, exp_out[{bit}], {sig});\n                \
             $fatal(1, \"testbench mismatch\");\n            end"
        );
    }
    out.push_str("        end\n    endtask\n\n");
    out.push_str("    task check_state;\n        input integer cycle;\n");
    let _ = writeln!(out, "        input [{}:0] exp_state;", k - 1);
    out.push_str("        begin\n            if (state !== exp_state) begin\n");
    out.push_str("                $display(\"MISMATCH cycle %0d signal state expected %b got %b\", cycle, exp_state, state);\n");
    out.push_str("                $fatal(1, \"testbench mismatch\");\n            end\n        end\n    endtask\n\n");
    for (t, timer) in spec.timers.iter().enumerate() {
        let r = &n.timers[t];
        let _ = writeln!(
            out,
            "    task check_{r};\n        input integer cycle;\n        input [{}:0] exp;\n        \
             begin\n            if (dut.{r} !== exp) begin\n                \
             $display(\"MISMATCH cycle %0d signal {r} expected %0d got %0d\", cycle, exp, dut.{r});\n                \
             $fatal(1, \"testbench mismatch\");\n            end\n        end\n    endtask\n",
            timer.bits - 1
        );
    }
    for (c, counter) in spec.counters.iter().enumerate() {
        let r = &n.counters[c];
        let _ = writeln!(
            out,
            "    task check_{r};\n        input integer cycle;\n        input [{}:0] exp;\n        \
             begin\n            if (dut.{r} !== exp) begin\n                \
             $display(\"MISMATCH cycle %0d signal {r} expected %0d got %0d\", cycle, exp, dut.{r});\n                \
             $fatal(1, \"testbench mismatch\");\n            end\n        end\n    endtask\n",
            counter.bits - 1
        );
    }
    out.push_str("    task tick;\n        begin\n            #4 clk = 1'b1;\n            #5 clk = 1'b0;\n        end\n    endtask\n\n");

    out.push_str("    initial begin\n");
    let start_code = design.encoding.code_string(spec.start);
    let mut config = m.start_config();
    let mut cycle = 0usize;
    let emit_reset = |out: &mut String, cycle: &mut usize| {
        *cycle += 1;
        let _ = writeln!(
            out,
            "        // cycle {cycle}: reset\n        rst = 1'b1; #1; tick; rst = 1'b0; #1;\n        \
             check_state({cycle}, {k}'b{start_code});"
        );
    };
    emit_reset(&mut out, &mut cycle);
    for step in steps {
        match step {
            TbStep::Reset => {
                emit_reset(&mut out, &mut cycle);
                config = m.start_config();
            }
            TbStep::Step { event, inputs } => {
                if *event >= spec.n_events {
                    return Err(format!("testbench step: event {event} out of range"));
                }
                cycle += 1;
                let state = config.state;
                let timers_before = config.timers.clone();
                let counters_before = config.counters.clone();
                let r = m.step_config(&mut config, EventId::from_index(*event), inputs);
                let from = design.encoding.code_string(state.index());
                let mut expect = String::new();
                for o in 0..spec.outputs.len() {
                    let high = spec.moore_of(state.index()).contains(&o)
                        || r.mealy.iter().any(|x| x.index() == o);
                    expect.push(if high { '1' } else { '0' });
                }
                for a in 0..spec.actions.len() {
                    let ran = r.actions.iter().any(|x| x.index() == a);
                    expect.push(if ran { '1' } else { '0' });
                }
                let mut line = format!(
                    "        // cycle {cycle}: {}\n        ",
                    m.event_name(r.event)
                );
                if b > 0 {
                    let _ = write!(line, "ev = {b}'d{event}; ");
                }
                for (i, name) in n.inputs.iter().enumerate() {
                    let v = inputs.get(i).copied().unwrap_or(false);
                    let _ = write!(line, "{name} = 1'b{}; ", u8::from(v));
                }
                line.push_str("#1; ");
                for (t, timer) in spec.timers.iter().enumerate() {
                    if timer.active[state.index()] {
                        let _ = write!(
                            line,
                            "check_{}({cycle}, {}'d{}); ",
                            n.timers[t], timer.bits, timers_before[t]
                        );
                    }
                }
                for (c, counter) in spec.counters.iter().enumerate() {
                    let _ = write!(
                        line,
                        "check_{}({cycle}, {}'d{}); ",
                        n.counters[c], counter.bits, counters_before[c]
                    );
                }
                if n_out > 0 {
                    let _ = write!(
                        line,
                        "check({cycle}, {k}'b{from}, {n_out}'b{expect}); tick;"
                    );
                } else {
                    let _ = write!(line, "check({cycle}, {k}'b{from}); tick;");
                }
                let _ = writeln!(out, "{line}");
            }
        }
    }
    let mut last = String::new();
    for (c, counter) in spec.counters.iter().enumerate() {
        let _ = write!(
            last,
            " check_{}({}, {}'d{});",
            n.counters[c],
            cycle + 1,
            counter.bits,
            config.counters[c]
        );
    }
    let _ = writeln!(
        out,
        "        #1; check_state({}, {k}'b{});{last}\n        $display(\"PASS\");\n        $finish;\n    end\nendmodule",
        cycle + 1,
        code_string(design.encoding.codes[config.state.index()], k)
    );
    Ok(out)
}
