//! Flip-flop input and output equations of a machine under a state assignment.
//!
//! **Variables** (in this order, first = most significant bit of a minterm number):
//! the state bits `q_{k-1} .. q_0`, the event bus `ev_{b-1} .. ev_0` with
//! `b = ceil(log2 E)` (none for clocked machines or a single event; event `i` in
//! declaration order has code `i`, codes `>= E` are don't-cares), then the inputs as
//! pins in declaration order, then the due variables of the timers, then the comparison
//! variables of the counters (below). Moore-only outputs are functions of the state bits
//! alone.
//!
//! **Timers** (LANGUAGE.md, "Time and counts"; DESIGN.md, "Hardware port"). Each scope
//! with `after` rules has a timer register beside the state register: a counter of the
//! datapath, not a minimized function (see [`super::verilog`]). Its comparisons with the
//! durations are the due variables `due_<scope>_<ticks>`: `timer == ticks - 1` on a
//! time-base cycle (`ev` equal to the time base's code, every cycle when there is no
//! event bus), one per (timer, duration) of the lowered form's timeout choices. The
//! time-base cell of a state with timers is cut per combination of due timeouts
//! ([`crate::model::lower::Variant`]): each variant's exact regions, times the cube
//! that fixes the due variables of the state's timers to that combination. Combinations
//! that cannot happen are don't-cares: a due variable high outside a time-base cycle, and
//! two durations of one timer due together. Due variables of timers that are not
//! active in a state are left free there (the hardware's inactive timers keep counting;
//! nothing in that state reads them). Each timer also has a clear function
//! `clear_<scope>`, minimized like the others, read from the lowered choice's
//! `resets` (the one list of timers a step sets to 0): 1 where the next state is in the
//! scope and the timer is in the list (the choice enters the scope), 0 where the next
//! state is in the scope and it is not, don't-care where the next state is outside the
//! scope (the list zeroes it, but the value of an inactive timer never matters:
//! entering the scope clears it).
//!
//! **Counters** (LANGUAGE.md, "Counters"; DESIGN.md, "Hardware port"). Each counter
//! is a register of the datapath beside the state register ([`CounterSpec`]). Each
//! comparison a guard makes ([`Machine::atoms`]) is a variable, `<counter>_<op>_<k>`
//! (`strikes_lt_2`), the register compared with the constant at the start of the step,
//! as guards read counters. A cell whose rules read comparisons is cut per combination
//! of their values (its variants, as for due timeouts), each variant's regions times the
//! cube fixing those variables; comparisons the cell does not read are free there.
//! Combinations of one counter's comparisons that no value of the counter gives are
//! don't-cares. The FSM drives each counter through *control* functions: for each
//! counter, one per distinct composite effect that the operation sequences of the
//! lowered form have on it ([`CounterEffect`]: the sequence's operations on that
//! counter composed, each saturating as [`crate::model::CounterOp::apply`] does), named
//! after it (`strikes_add_1`, `strikes_sub_1`, `strikes_set_0`), 1 where the choice that
//! fires applies that effect and 0 elsewhere (a choice that leaves the counter as it is,
//! and an unhandled step, raise none). At most one control of a counter is high in a
//! care valuation.
//!
//! **Functions.** For each state bit the input(s) of the chosen flip-flop (D; T; J and
//! K; S and R) from its excitation table, with every don't-care the flip-flop allows;
//! each output (Moore part of the current state, Mealy part of the rule that fires);
//! each action as a pulse, high in the cycle whose rule runs it (enter and leave
//! actions of the transition included). Uncovered valuations (`ignore` and `reject`
//! alike) hold the state and raise nothing. Unused state codes are don't-cares.
//!
//! **Building the sets without enumerating inputs.** Rule choice comes from the
//! machine's lowered form ([`crate::model::lower`]). The machine is cut into regions:
//! for each state, each cell of the lowered form, each choice of the cell, the choice's
//! firing region as the disjoint cubes of its BDD (and one more region for the cell's
//! `unhandled` part). The regions of a cell are disjoint, so every valuation has exactly
//! one next state and one set of outputs, as in the interpreter. A region's cubes are
//! state cube x event codes x guard cubes, so the work is linear in the spec's size
//! times the region cube counts, never `2^inputs`.
//! Functions of at most [`MINTERM_MAX_VARS`] variables are also tabulated as minterms
//! (the exact method runs on those up to [`super::EXACT_MAX_VARS`]); wider ones stay
//! cube lists for the heuristic.
//!
//! **One-hot.** A state is the cube `q_i = 1` (the other bits free), and every code that
//! does not have exactly one bit set is a don't-care (the all-zero cube and the
//! `m(m-1)/2` cubes `q_i q_j`): the care set is the single-hot codes only, in cube-list
//! form, so the huge don't-care space is never enumerated.

use super::assign::{bus_bits, Adjacency, Encoding};
use super::cube::{full_mask, remove_contained, Cube};
use super::excitation::{Excite, FlipFlop};
use super::gates::{two_level_cost, Form, GateCost};
use super::heuristic::cut_where_cared;
use super::{
    check_cover, check_cube_cover_against, minimize, minimize_cubes_against, minimize_with_cubes,
    Cover, CubeFunction, Function, EXACT_MAX_VARS,
};
use crate::model::{Bdd, Machine};
use std::collections::{HashMap, HashSet};

/// Functions of at most this many variables are tabulated as minterms (for the exact
/// method, for checking by enumeration and for the minterm lists of the JSON report).
pub const MINTERM_MAX_VARS: usize = 16;

/// Largest machine the adjacency heuristic of `auto` handles (its weight table is m x m).
pub const AUTO_MAX_STATES: usize = 1024;

/// One region of behaviour: in `state`, for the events `events` (their codes), under
/// the input and due valuations of `guards`, the machine goes to `next`, raises `mealy`,
/// runs `actions` and clears the timers `resets`. It is one choice of a cell of the
/// lowered form (or the cell's unhandled part, which holds the state and does nothing),
/// in one combination of due timeouts for the time-base cell of a state with timers.
#[derive(Clone, Debug)]
pub struct Region {
    /// The present state.
    pub state: usize,
    /// The event codes (declaration order numbers).
    pub events: Vec<u64>,
    /// Disjoint cubes over the condition bits: the inputs, the due variables, then the
    /// comparison variables (input `i` at bit `I + U + C - 1 - i`, due variable `j` at
    /// bit `U + C - 1 - j`, comparison `a` at bit `C - 1 - a`, with `I` inputs, `U` due
    /// variables and `C` comparisons).
    pub guards: Vec<Cube>,
    /// The next state.
    pub next: usize,
    /// The Mealy outputs raised, ascending.
    pub mealy: Vec<usize>,
    /// The actions pulsed, in the order they run.
    pub actions: Vec<usize>,
    /// The timers (indices into [`LogicSpec::timers`]) the step sets to 0: the lowered
    /// choice's `resets` (the scopes it enters, and every scope not active after it).
    pub resets: Vec<usize>,
    /// The counter controls (indices into [`LogicSpec::controls`]) the step raises: at
    /// most one per counter.
    pub controls: Vec<usize>,
}

/// A timer register of the datapath: one per scope with `after` rules.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TimerSpec {
    /// The scope's name (a state or group).
    pub scope: String,
    /// The register's name (`timer_<scope>`).
    pub register: String,
    /// The clear function's name (`clear_<scope>`).
    pub clear: String,
    /// Width: the narrowest that holds `max` (at least 1).
    pub bits: usize,
    /// The value it saturates at: its largest duration.
    pub max: u32,
    /// Its durations in ticks, ascending.
    pub durations: Vec<u32>,
    /// Its due variables (indices into [`LogicSpec::dues`]), parallel to `durations`.
    pub dues: Vec<usize>,
    /// Per state: whether the timer's scope is active there (the state or one of its
    /// groups).
    pub active: Vec<bool>,
}

/// A due variable: timer `timer` is at `ticks - 1` on a time-base cycle, so its
/// `after ticks` timeout comes due in this step.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct DueVar {
    /// The variable's name (`due_<scope>_<ticks>`).
    pub name: String,
    /// The timer (index into [`LogicSpec::timers`]).
    pub timer: usize,
    /// The duration in ticks.
    pub ticks: u32,
}

/// What a step does to one counter: its operations in the step's sequence, composed.
/// Each operation saturates at 0 and the counter's largest value `N`, so the
/// composition is `v -> clamp(v + add, lo, hi)` over `0..=N` (a constant when
/// `lo == hi`); the identity (no operation, or operations that cancel) is no effect.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum CounterEffect {
    /// The counter becomes `k`.
    Set(u16),
    /// The counter becomes `clamp(v + add, lo, hi)`, with `lo = f(0) < hi = f(N)`.
    Shift {
        /// What is added (negative: subtracted).
        add: i32,
        /// The value at 0.
        lo: u16,
        /// The value at `N`.
        hi: u16,
    },
}

impl CounterEffect {
    /// The composite effect on counter `counter` (largest value `max`) of an operation
    /// sequence; `None` when it leaves the counter as it is.
    pub fn of(
        ops: &[crate::model::Op],
        counter: crate::model::CounterId,
        max: u16,
    ) -> Option<Self> {
        use crate::model::{CounterOpKind, Op};
        let n = i64::from(max);
        let clamp = |x: i64, lo: i64, hi: i64| x.max(lo).min(hi);
        // f(v) = clamp(v + d, lo, hi); starts as the identity.
        let (mut d, mut lo, mut hi) = (0i64, 0i64, n);
        for op in ops {
            let Op::Counter(c) = op else { continue };
            if c.counter != counter {
                continue;
            }
            let k = i64::from(c.value);
            match c.kind {
                CounterOpKind::Set => {
                    let k = k.min(n);
                    (d, lo, hi) = (0, k, k);
                }
                CounterOpKind::Add | CounterOpKind::Sub => {
                    let a = if c.kind == CounterOpKind::Add { k } else { -k };
                    // clamp(clamp(x, lo, hi) + a, 0, N) = clamp(x + a, clamp(lo + a),
                    // clamp(hi + a)) for lo <= hi.
                    (d, lo, hi) = (d + a, clamp(lo + a, 0, n), clamp(hi + a, 0, n));
                }
            }
        }
        let f0 = clamp(d, lo, hi);
        let f_n = clamp(n + d, lo, hi);
        if f0 == f_n {
            return Some(CounterEffect::Set(f0 as u16));
        }
        if d == 0 && f0 == 0 && f_n == n {
            return None;
        }
        Some(CounterEffect::Shift {
            add: d as i32,
            lo: f0 as u16,
            hi: f_n as u16,
        })
    }

    /// The counter's value after the effect, from `v` in `0..=max`.
    pub fn apply(self, v: u16) -> u16 {
        match self {
            CounterEffect::Set(k) => k,
            CounterEffect::Shift { add, lo, hi } => {
                (i64::from(v) + i64::from(add)).clamp(i64::from(lo), i64::from(hi)) as u16
            }
        }
    }

    /// Whether the effect is one plain saturating `+=`/`-=` on a counter of largest
    /// value `max` (no other bound than 0 and `max`).
    fn plain(self, max: u16) -> bool {
        match self {
            CounterEffect::Set(_) => true,
            CounterEffect::Shift { add, lo, hi } => {
                let n = i64::from(max);
                let a = i64::from(add);
                i64::from(lo) == a.clamp(0, n) && i64::from(hi) == (n + a).clamp(0, n)
            }
        }
    }

    /// The name part after the counter's: `add_1`, `sub_2`, `set_0`, `add_0_within_1_3`.
    fn suffix(self, max: u16) -> String {
        let base = match self {
            CounterEffect::Set(k) => return format!("set_{k}"),
            CounterEffect::Shift { add, .. } if add < 0 => format!("sub_{}", -i64::from(add)),
            CounterEffect::Shift { add, .. } => format!("add_{add}"),
        };
        match self {
            CounterEffect::Shift { lo, hi, .. } if !self.plain(max) => {
                format!("{base}_within_{lo}_{hi}")
            }
            _ => base,
        }
    }

    /// The effect as a reader writes it: `+= 1`, `-= 2`, `= 0`, `+= 0 within 1..=3`.
    pub fn text(self, max: u16) -> String {
        let base = match self {
            CounterEffect::Set(k) => return format!("= {k}"),
            CounterEffect::Shift { add, .. } if add < 0 => format!("-= {}", -i64::from(add)),
            CounterEffect::Shift { add, .. } => format!("+= {add}"),
        };
        match self {
            CounterEffect::Shift { lo, hi, .. } if !self.plain(max) => {
                format!("{base} within {lo}..={hi}")
            }
            _ => base,
        }
    }
}

/// A counter register of the datapath: one per counter of the machine.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CounterSpec {
    /// The counter's name in the spec.
    pub name: String,
    /// The register's name (the counter's name, unless that clashes with a port).
    pub register: String,
    /// Width: the narrowest that holds `max` (at least 1).
    pub bits: usize,
    /// Its largest value.
    pub max: u16,
    /// Its comparison variables (indices into [`LogicSpec::compares`]).
    pub compares: Vec<usize>,
    /// Its control functions (indices into [`LogicSpec::controls`]).
    pub controls: Vec<usize>,
}

/// A comparison variable: a counter compared with a constant, as guards read it (the
/// counter's value at the start of the step).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CompareVar {
    /// The variable's name (`strikes_lt_2`).
    pub name: String,
    /// The counter (index into [`LogicSpec::counters`]).
    pub counter: usize,
    /// The comparison.
    pub cmp: crate::model::Cmp,
    /// The constant.
    pub value: u16,
    /// As written in the spec: `strikes < 2`.
    pub text: String,
}

/// A control function of a counter: high in a step that applies its effect.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CounterControl {
    /// The function's name (`strikes_add_1`).
    pub name: String,
    /// The counter (index into [`LogicSpec::counters`]).
    pub counter: usize,
    /// What it does to the counter.
    pub effect: CounterEffect,
}

/// What the equations are built from: the machine cut into regions, independent of
/// the state assignment.
#[derive(Clone, Debug)]
pub struct LogicSpec {
    /// The machine's name.
    pub name: String,
    /// Number of states.
    pub n_states: usize,
    /// The start state (the reset code).
    pub start: usize,
    /// Number of events (1 for a clocked machine: `Tick`).
    pub n_events: usize,
    /// Width of the event bus (0 when clocked or with a single event).
    pub ev_bits: usize,
    /// Input names, declaration order.
    pub inputs: Vec<String>,
    /// Output names, declaration order.
    pub outputs: Vec<String>,
    /// Action names, declaration order.
    pub actions: Vec<String>,
    /// The timer registers, in the machine's timer order ([`Machine::timers`]).
    pub timers: Vec<TimerSpec>,
    /// The due variables: per timer, per duration ascending.
    pub dues: Vec<DueVar>,
    /// The time base's event code when it is read from the event bus (`None`: every
    /// cycle counts, as in a clocked machine or one whose only event is the time base).
    pub timebase_code: Option<u64>,
    /// The counter registers, in the machine's counter order ([`Machine::counters`]).
    pub counters: Vec<CounterSpec>,
    /// The comparison variables, one per comparison of [`Machine::atoms`], in that
    /// order.
    pub compares: Vec<CompareVar>,
    /// The counter control functions: per counter, per distinct effect in order of
    /// first use.
    pub controls: Vec<CounterControl>,
    /// Moore outputs of each state.
    moore: Vec<Vec<usize>>,
    /// Whether each output is raised by some rule (then it depends on ev and inputs).
    mealy_output: Vec<bool>,
    regions: Vec<Region>,
    adjacency: Adjacency,
}

/// Which flip-flop input, output or action a function drives.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Role {
    /// Input `input` (in [`FlipFlop::input_names`] order) of the flip-flop of state
    /// bit `bit`.
    FlipFlop {
        /// The state bit `q_bit`.
        bit: usize,
        /// Which input of the flip-flop.
        input: usize,
    },
    /// An output line.
    Output(usize),
    /// An action pulse.
    Action(usize),
    /// The clear input of timer register `t` ([`LogicSpec::timers`]).
    TimerClear(usize),
    /// Counter control `c` ([`LogicSpec::controls`]).
    CounterControl(usize),
}

/// One minimized function.
#[derive(Clone, Debug)]
pub struct LogicFunction {
    /// The name (`D1`, `J0`, an output or action name).
    pub name: String,
    /// What it drives.
    pub role: Role,
    /// Variables, first = most significant.
    pub vars: Vec<String>,
    /// The on-set as cubes (may overlap `dc_cubes`; overlap counts as don't-care).
    pub on_cubes: Vec<Cube>,
    /// The don't-care set as cubes.
    pub dc_cubes: Vec<Cube>,
    /// The off-set as cubes, disjoint from `on_cubes` outside `dc_cubes` (taken from
    /// the regions where the function is 0, not by complementing; it may overlap
    /// `dc_cubes`; together the three cover the space).
    pub off_cubes: Vec<Cube>,
    /// On and dc minterms (disjoint), when there are at most [`MINTERM_MAX_VARS`]
    /// variables.
    pub minterms: Option<Minterms>,
    /// The minimized sum of products.
    pub cover: Cover,
    /// A minimized sum of products of the complement (for NOR-NOR), when asked for.
    pub complement: Option<Cover>,
}

/// The two-level form to cost and print.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Map {
    /// AND-OR sum of products.
    Sop,
    /// NAND-NAND.
    Nand,
    /// NOR-NOR (from the complement's sum of products).
    Nor,
}

/// The equations of a machine under one assignment and flip-flop type.
#[derive(Clone, Debug)]
pub struct LogicDesign {
    /// The state assignment.
    pub encoding: Encoding,
    /// The flip-flop type.
    pub flip_flop: FlipFlop,
    /// State-bit variable names, `q_{k-1}` first.
    pub state_vars: Vec<String>,
    /// Pin variables: event bus bits (`ev_{b-1}` first), inputs, the timers' due
    /// variables, then the counters' comparison variables.
    pub pin_vars: Vec<String>,
    /// Every function: flip-flop inputs (most significant bit first), outputs, actions,
    /// the clear function of each timer, then the counter controls.
    pub functions: Vec<LogicFunction>,
    /// The timer registers of the datapath ([`LogicSpec::timers`]).
    pub timers: Vec<TimerSpec>,
    /// The due variables ([`LogicSpec::dues`]), pin variables after the inputs.
    pub dues: Vec<DueVar>,
    /// The counter registers of the datapath ([`LogicSpec::counters`]).
    pub counters: Vec<CounterSpec>,
    /// The comparison variables ([`LogicSpec::compares`]), the last pin variables.
    pub compares: Vec<CompareVar>,
    /// The counter controls ([`LogicSpec::controls`]).
    pub controls: Vec<CounterControl>,
}

/// Cubes covering the codes `lo..hi` of a `b`-bit field: aligned power-of-two blocks.
fn range_cubes(lo: u64, hi: u64, b: usize) -> Vec<Cube> {
    let mut out = Vec::new();
    let mut x = lo;
    while x < hi {
        let mut size = 1u64;
        while x.is_multiple_of(size * 2) && x + size * 2 <= hi {
            size *= 2;
        }
        out.push(Cube::new(x, full_mask(b) & !(size - 1)));
        x += size;
    }
    out
}

impl LogicSpec {
    /// Cuts a machine into regions. Errors when the variables would not fit in 64 bits
    /// for the densest encoding.
    pub fn from_machine(m: &Machine) -> Result<LogicSpec, String> {
        let n_states = m.states.len();
        let n_events = m.events.len().max(1);
        let ev_bits = bus_bits(n_events);
        let n_inputs = m.inputs.len();
        let k = super::assign::dense_bits(n_states);
        let mut names = Names::ports_of(m);
        let (timers, dues) = timer_specs(m, &mut names);
        let n_dues = dues.len();
        let (counters, compares, controls, seq_controls) = counter_specs(m, &mut names);
        let n_cmp = compares.len();
        if k + ev_bits + n_inputs + n_dues + n_cmp > 64 {
            return Err(format!(
                "{k} state bits + {ev_bits} event bits + {n_inputs} inputs + {n_dues} timer due \
                 variables + {n_cmp} counter comparisons exceed the 64 variables the logic \
                 layer supports"
            ));
        }
        let timebase_code = match (&m.timebase, timers.is_empty()) {
            (_, true) => None,
            (None, false) => {
                return Err("the machine has `after` rules but no time base".to_string());
            }
            (Some(_), false) if ev_bits == 0 => None,
            (Some(tb), false) => Some(tb.event.index() as u64),
        };
        let n_cond = n_inputs + n_dues + n_cmp;
        let input_bit = |v: u32| 1u64 << (n_cond - 1 - v as usize);
        let due_bit = |j: usize| 1u64 << (n_dues + n_cmp - 1 - j);
        let cmp_bit = |a: usize| 1u64 << (n_cmp - 1 - a);
        let to_cubes = |g: Bdd, due: Cube| -> Vec<Cube> {
            m.bdd
                .cubes(g)
                .into_iter()
                .map(|path| {
                    let (mut value, mut care) = (due.value, due.care);
                    for (v, b) in path {
                        care |= input_bit(v);
                        if b {
                            value |= input_bit(v);
                        }
                    }
                    Cube::new(value, care)
                })
                .collect()
        };
        let due_index = |t: crate::model::TimerId, ticks: u32| -> usize {
            let spec = &timers[t.index()];
            let j = spec.durations.iter().position(|&d| d == ticks).unwrap_or(0);
            spec.dues[j]
        };
        let lowered = &m.lowered;
        let mut regions = Vec::new();
        for s in 0..n_states {
            let sid = crate::model::StateId::from_index(s);
            for cell in lowered.cells_of(sid) {
                let events: Vec<u64> = lowered
                    .cell_events(m.events.len(), cell)
                    .into_iter()
                    .map(|e| e.index() as u64)
                    .collect();
                if events.is_empty() {
                    continue;
                }
                // One pass per combination of due timeouts and comparison values (one
                // pass, nothing fixed, for a cell without timers and comparisons): the
                // variant's exact regions, each cube with the state's due variables and
                // the cell's comparisons fixed to the combination.
                let mut due_care = 0u64;
                for &t in &cell.timers {
                    for &j in &timers[t.index()].dues {
                        due_care |= due_bit(j);
                    }
                }
                let cmp_care = cell
                    .atoms
                    .iter()
                    .fold(0u64, |acc, a| acc | cmp_bit(a.index()));
                let passes: Vec<(Cube, Vec<Bdd>, Bdd)> = cell
                    .variants
                    .iter()
                    .map(|v| {
                        let mut value = v
                            .due
                            .iter()
                            .fold(0u64, |acc, &(t, d)| acc | due_bit(due_index(t, d)));
                        for (a, &holds) in cell.atoms.iter().zip(&v.atoms) {
                            if holds {
                                value |= cmp_bit(a.index());
                            }
                        }
                        (
                            Cube::new(value, due_care | cmp_care),
                            v.regions.clone(),
                            v.unhandled,
                        )
                    })
                    .collect();
                for (due, choice_regions, unhandled) in passes {
                    for (choice, &region) in cell.choices.iter().zip(&choice_regions) {
                        if region.is_false() {
                            continue;
                        }
                        regions.push(Region {
                            state: s,
                            events: events.clone(),
                            guards: to_cubes(region, due),
                            next: choice.target.index(),
                            mealy: lowered
                                .outputs(choice.mealy)
                                .iter()
                                .map(|o| o.index())
                                .collect(),
                            actions: lowered.actions(choice.ops).map(|a| a.index()).collect(),
                            resets: choice.resets.iter().map(|t| t.index()).collect(),
                            controls: seq_controls[choice.ops.index()].clone(),
                        });
                    }
                    if !unhandled.is_false() {
                        regions.push(Region {
                            state: s,
                            events: events.clone(),
                            guards: to_cubes(unhandled, due),
                            next: s,
                            mealy: Vec::new(),
                            actions: Vec::new(),
                            resets: Vec::new(),
                            controls: Vec::new(),
                        });
                    }
                }
            }
        }
        let moore: Vec<Vec<usize>> = (0..n_states)
            .map(|s| {
                let id = lowered.moore(crate::model::StateId::from_index(s));
                lowered.outputs(id).iter().map(|o| o.index()).collect()
            })
            .collect();
        let mut mealy_output = vec![false; m.outputs.len()];
        for r in &regions {
            for &o in &r.mealy {
                mealy_output[o] = true;
            }
        }
        let adjacency = if n_states <= AUTO_MAX_STATES {
            adjacency_weights(n_states, &regions, &moore)
        } else {
            Adjacency::new(0)
        };
        let names = |items: &[crate::model::Item]| -> Vec<String> {
            items
                .iter()
                .map(|i| i.name.trim_start_matches("r#").to_string())
                .collect()
        };
        Ok(LogicSpec {
            name: m.name.clone(),
            n_states,
            start: m.start.index(),
            n_events,
            ev_bits,
            inputs: names(&m.inputs),
            outputs: names(&m.outputs),
            actions: names(&m.actions),
            timers,
            dues,
            timebase_code,
            counters,
            compares,
            controls,
            moore,
            mealy_output,
            regions,
            adjacency,
        })
    }

    /// The regions the machine is cut into: per state, per cell of the lowered form, its
    /// choices and then its unhandled part.
    pub fn regions(&self) -> &[Region] {
        &self.regions
    }

    /// Whether output `o` depends on the event bus and inputs (some rule raises it).
    pub fn is_mealy_output(&self, o: usize) -> bool {
        self.mealy_output[o]
    }

    /// The Moore outputs of state `s`, ascending.
    pub fn moore_of(&self, s: usize) -> &[usize] {
        &self.moore[s]
    }
}

/// A name as a Verilog identifier: without a raw identifier's `r#`.
fn plain(n: &str) -> String {
    n.trim_start_matches("r#").to_string()
}

/// The datapath's names handed out so far, starting with the module's ports; each new
/// name is made distinct from all of them (a clash gets `_` appended).
struct Names(HashSet<String>);

impl Names {
    /// The ports of `m`'s module: clock, reset, event bus, state, time base, inputs,
    /// outputs and actions.
    fn ports_of(m: &Machine) -> Names {
        Names(
            ["clk", "rst", "ev", "state", "tb"]
                .iter()
                .map(|s| s.to_string())
                .chain(m.inputs.iter().map(|i| plain(&i.name)))
                .chain(m.outputs.iter().map(|i| plain(&i.name)))
                .chain(m.actions.iter().map(|i| plain(&i.name)))
                .collect(),
        )
    }

    /// `base`, or `base` with `_` appended until it is new; taken.
    fn fresh(&mut self, base: String) -> String {
        let mut name = base;
        while !self.0.insert(name.clone()) {
            name.push('_');
        }
        name
    }
}

/// The timer registers and due variables of a machine, named after their scopes.
fn timer_specs(m: &Machine, names: &mut Names) -> (Vec<TimerSpec>, Vec<DueVar>) {
    let mut fresh = |base: String| names.fresh(base);
    let mut timers = Vec::with_capacity(m.timers.len());
    let mut dues = Vec::new();
    for (t, timer) in m.timers.iter().enumerate() {
        let scope = match timer.scope {
            crate::model::Scope::State(s) => plain(&m.states[s.index()].name),
            crate::model::Scope::Group(g) => plain(&m.groups[g.index()].name),
        };
        let max = timer.max();
        let mut due_ids = Vec::with_capacity(timer.durations.len());
        for &ticks in &timer.durations {
            due_ids.push(dues.len());
            dues.push(DueVar {
                name: fresh(format!("due_{scope}_{ticks}")),
                timer: t,
                ticks,
            });
        }
        let id = crate::model::TimerId::from_index(t);
        timers.push(TimerSpec {
            register: fresh(format!("timer_{scope}")),
            clear: fresh(format!("clear_{scope}")),
            scope,
            bits: (32 - max.leading_zeros() as usize).max(1),
            max,
            durations: timer.durations.clone(),
            dues: due_ids,
            active: (0..m.states.len())
                .map(|s| {
                    m.chain_timers(crate::model::StateId::from_index(s))
                        .contains(&id)
                })
                .collect(),
        });
    }
    (timers, dues)
}

/// The counter registers, comparison variables and control functions of a machine,
/// and per interned operation sequence of the lowered form the controls it raises.
/// Names are made distinct from every port, timer name and each other.
#[allow(clippy::type_complexity)]
fn counter_specs(
    m: &Machine,
    names: &mut Names,
) -> (
    Vec<CounterSpec>,
    Vec<CompareVar>,
    Vec<CounterControl>,
    Vec<Vec<usize>>,
) {
    use crate::model::{Cmp, CounterId};
    let mut fresh = |base: String| names.fresh(base);
    let mut counters: Vec<CounterSpec> = m
        .counters
        .iter()
        .map(|c| CounterSpec {
            name: plain(&c.name),
            register: fresh(plain(&c.name)),
            bits: (16 - c.max.leading_zeros() as usize).max(1),
            max: c.max,
            compares: Vec::new(),
            controls: Vec::new(),
        })
        .collect();
    let compares: Vec<CompareVar> = m
        .atoms
        .iter()
        .enumerate()
        .map(|(a, atom)| {
            let c = atom.counter.index();
            counters[c].compares.push(a);
            let op = match atom.cmp {
                Cmp::Eq => "eq",
                Cmp::Ne => "ne",
                Cmp::Lt => "lt",
                Cmp::Le => "le",
                Cmp::Gt => "gt",
                Cmp::Ge => "ge",
            };
            CompareVar {
                name: fresh(format!("{}_{op}_{}", counters[c].name, atom.value)),
                counter: c,
                cmp: atom.cmp,
                value: atom.value,
                text: m.atom_text(crate::model::AtomId::from_index(a)),
            }
        })
        .collect();
    let mut controls: Vec<CounterControl> = Vec::new();
    let seq_controls = m
        .lowered
        .seqs()
        .iter()
        .map(|ops| {
            let mut raised = Vec::new();
            for (c, spec) in counters.iter_mut().enumerate() {
                let Some(effect) = CounterEffect::of(ops, CounterId::from_index(c), spec.max)
                else {
                    continue;
                };
                let found = spec
                    .controls
                    .iter()
                    .copied()
                    .find(|&j| controls[j].effect == effect);
                let j = match found {
                    Some(j) => j,
                    None => {
                        controls.push(CounterControl {
                            name: fresh(format!("{}_{}", spec.name, effect.suffix(spec.max))),
                            counter: c,
                            effect,
                        });
                        spec.controls.push(controls.len() - 1);
                        controls.len() - 1
                    }
                };
                raised.push(j);
            }
            raised
        })
        .collect();
    (counters, compares, controls, seq_controls)
}

/// The classic adjacency rules as weights: states with the same next state under the
/// same event (weight 2 per shared successor), successors of one state (1 per pair),
/// and states raising the same Moore output (1 per shared output).
fn adjacency_weights(m: usize, regions: &[Region], moore: &[Vec<usize>]) -> Adjacency {
    let mut adj = Adjacency::new(m);
    let mut same_next: HashMap<(u64, usize), HashSet<usize>> = HashMap::new();
    let mut succ: Vec<HashSet<usize>> = vec![HashSet::new(); m];
    for r in regions {
        for &e in &r.events {
            same_next.entry((e, r.next)).or_default().insert(r.state);
        }
        succ[r.state].insert(r.next);
    }
    let pairs = |set: &HashSet<usize>, w: u32, adj: &mut Adjacency| {
        let mut v: Vec<usize> = set.iter().copied().collect();
        v.sort_unstable();
        for (i, &a) in v.iter().enumerate() {
            for &b in &v[i + 1..] {
                adj.add(a, b, w);
            }
        }
    };
    for set in same_next.values() {
        pairs(set, 2, &mut adj);
    }
    for set in &succ {
        pairs(set, 1, &mut adj);
    }
    let n_out = moore.iter().flatten().copied().max().map_or(0, |x| x + 1);
    for o in 0..n_out {
        let set: HashSet<usize> = (0..m).filter(|&s| moore[s].contains(&o)).collect();
        pairs(&set, 1, &mut adj);
    }
    adj
}

/// On and don't-care minterm lists of a function (disjoint).
pub type Minterms = (Vec<u64>, Vec<u64>);

/// The minterm form of a function given as cube lists (on-set minus don't-cares, and
/// the don't-cares), when it has at most [`MINTERM_MAX_VARS`] variables.
pub(crate) fn tabulate(vars: &[String], on: &[Cube], dc: &[Cube]) -> Option<Function> {
    let n = vars.len();
    if n > MINTERM_MAX_VARS {
        return None;
    }
    let mut table = vec![0u8; 1usize << n];
    for c in dc {
        c.for_each_minterm(n, |x| table[x as usize] = 2);
    }
    for c in on {
        c.for_each_minterm(n, |x| {
            if table[x as usize] == 0 {
                table[x as usize] = 1;
            }
        });
    }
    let pick = |v: u8| -> Vec<u64> {
        (0..table.len() as u64)
            .filter(|&x| table[x as usize] == v)
            .collect()
    };
    Some(Function {
        vars: vars.to_vec(),
        on: pick(1),
        dc: pick(2),
    })
}

/// The cover [`synthesize`] gives a function: exact from minterms (primes from the cube
/// lists) up to [`EXACT_MAX_VARS`] variables, the heuristic on the cube lists beyond,
/// expanding against `off` (the function's off-set, from [`function_sets`]). `table` is
/// [`tabulate`] of the same function.
pub(crate) fn minimize_sets(
    cf: &CubeFunction,
    off: &[Cube],
    table: Option<&Function>,
) -> Result<Cover, String> {
    match table {
        Some(f) if f.vars.len() <= EXACT_MAX_VARS => minimize_with_cubes(f, Some(cf)),
        _ => minimize_cubes_against(cf, off),
    }
}

/// Minimizes one function given as cube lists (`off` its off-set), tabulating it as
/// minterms when small, and checks the cover against the on- and off-set.
fn minimize_function(
    vars: &[String],
    on: &[Cube],
    dc: &[Cube],
    off: &[Cube],
) -> Result<(Option<Minterms>, Cover), String> {
    let cf = CubeFunction {
        vars: vars.to_vec(),
        on: on.to_vec(),
        dc: dc.to_vec(),
    };
    let table = tabulate(vars, on, dc);
    let cover = minimize_sets(&cf, off, table.as_ref())?;
    match table {
        Some(f) => {
            check_cover(&f, &cover)?;
            Ok((Some((f.on, f.dc)), cover))
        }
        None => {
            check_cube_cover_against(&cf, off, &cover)?;
            Ok((None, cover))
        }
    }
}

/// Minimizes the complement of a function (for NOR-NOR).
///
/// Wide functions: the complement's on-set is the function's off-set, and its off-set
/// the on-set (cut by the don't-cares where they constrain it), so no cube list is
/// complemented.
fn minimize_complement(f: &LogicFunction) -> Result<Cover, String> {
    let n = f.vars.len();
    match &f.minterms {
        Some((on, dc)) if n <= EXACT_MAX_VARS => {
            let func = Function {
                vars: f.vars.clone(),
                on: on.clone(),
                dc: dc.clone(),
            };
            let comp = func.complement()?;
            let cover = minimize(&comp)?;
            check_cover(&comp, &cover)?;
            Ok(cover)
        }
        _ => {
            let comp = CubeFunction {
                vars: f.vars.clone(),
                on: f.off_cubes.clone(),
                dc: f.dc_cubes.clone(),
            };
            let comp_off = cut_where_cared(&f.on_cubes, &f.dc_cubes);
            let cover = minimize_cubes_against(&comp, &comp_off)?;
            check_cube_cover_against(&comp, &comp_off, &cover)?;
            Ok(cover)
        }
    }
}

/// Builds and minimizes every function of `spec` under `encoding` with flip-flop type
/// `ff`; with `complements`, also the complement covers NOR-NOR needs. Every cover is
/// checked to contain the on-set and avoid the off-set (an error otherwise).
pub fn synthesize(
    spec: &LogicSpec,
    encoding: &Encoding,
    ff: FlipFlop,
    complements: bool,
) -> Result<LogicDesign, String> {
    let sets = function_sets(spec, encoding, ff)?;
    let mut out = Vec::with_capacity(sets.functions.len());
    for set in sets.functions {
        let (minterms, cover) = minimize_function(&set.vars, &set.on, &set.dc, &set.off)
            .map_err(|e| format!("function {}: {e}", set.name))?;
        let mut f = LogicFunction {
            name: set.name,
            role: set.role,
            vars: set.vars,
            on_cubes: set.on,
            dc_cubes: set.dc,
            off_cubes: set.off,
            minterms,
            cover,
            complement: None,
        };
        if complements {
            f.complement = Some(minimize_complement(&f)?);
        }
        out.push(f);
    }
    Ok(LogicDesign {
        encoding: encoding.clone(),
        flip_flop: ff,
        state_vars: sets.state_vars,
        pin_vars: sets.pin_vars,
        functions: out,
        timers: spec.timers.clone(),
        dues: spec.dues.clone(),
        counters: spec.counters.clone(),
        compares: spec.compares.clone(),
        controls: spec.controls.clone(),
    })
}

/// One function before minimization: its on- and don't-care cubes.
#[derive(Clone, Debug)]
pub(crate) struct FunctionSet {
    /// The name (`D1`, `J0`, an output or action name).
    pub name: String,
    /// What it drives.
    pub role: Role,
    /// Variables, first = most significant.
    pub vars: Vec<String>,
    /// The on-set cubes (overlap with `dc` counts as don't-care).
    pub on: Vec<Cube>,
    /// The don't-care cubes.
    pub dc: Vec<Cube>,
    /// The off-set cubes: the regions where the function is 0, with exact state codes,
    /// cut by the structural don't-cares (see [`function_sets`]); what the heuristic
    /// expands against.
    pub off: Vec<Cube>,
}

/// Every function of a machine under one assignment, unminimized.
#[derive(Clone, Debug)]
pub(crate) struct FunctionSets {
    /// State-bit variable names, `q_{k-1}` first.
    pub state_vars: Vec<String>,
    /// Pin variables: event bus bits, inputs, due variables, then comparisons.
    pub pin_vars: Vec<String>,
    /// Flip-flop inputs (most significant bit first), outputs, actions, timer clears,
    /// counter controls.
    pub functions: Vec<FunctionSet>,
}

/// The on-, don't-care and off-sets of every function of `spec` under `encoding` with
/// flip-flop type `ff` (what [`synthesize`] minimizes).
///
/// The off-set comes from the regions too, never from complementing the other two: the
/// regions where the function is 0, each with its state's whole code (one-hot included,
/// so no off cube meets another state's on cubes), cut by the structural don't-cares
/// (impossible due or comparison values, unused codes) where they constrain a variable
/// the region cares for ([`cut_where_cared`]). The regions of a state partition its
/// events and conditions, so on, don't-care and off cover the space; the off-set may
/// overlap the don't-cares where a region leaves all their variables free.
pub(crate) fn function_sets(
    spec: &LogicSpec,
    encoding: &Encoding,
    ff: FlipFlop,
) -> Result<FunctionSets, String> {
    let k = encoding.bits;
    let b = spec.ev_bits;
    let ni = spec.inputs.len();
    let nu = spec.dues.len();
    let na = spec.compares.len();
    // Condition variables: the inputs, the due variables, then the comparisons.
    let nc = ni + nu + na;
    let n = k + b + nc;
    if n > 64 {
        return Err(format!(
            "{k} state bits + {b} event bits + {ni} inputs + {nu} timer due variables + {na} \
             counter comparisons exceed the 64 variables the logic layer supports"
        ));
    }
    if encoding.codes.len() != spec.n_states {
        return Err(format!(
            "the encoding has {} codes for {} states",
            encoding.codes.len(),
            spec.n_states
        ));
    }
    let state_vars: Vec<String> = (0..k).rev().map(|j| format!("q{j}")).collect();
    let mut pin_vars: Vec<String> = (0..b).rev().map(|j| format!("ev{j}")).collect();
    pin_vars.extend(spec.inputs.iter().cloned());
    pin_vars.extend(spec.dues.iter().map(|d| d.name.clone()));
    pin_vars.extend(spec.compares.iter().map(|c| c.name.clone()));
    let all_vars: Vec<String> = state_vars.iter().chain(pin_vars.iter()).cloned().collect();
    let state_shift = b + nc;

    // State cubes over the k state bits alone (shifted into place below).
    let state_cube = |s: usize| -> Cube {
        if encoding.is_one_hot() {
            Cube::new(encoding.codes[s], encoding.codes[s])
        } else {
            Cube::new(encoding.codes[s], full_mask(k))
        }
    };
    let mut state_dc: Vec<Cube> = Vec::new();
    if encoding.is_one_hot() {
        state_dc.push(Cube::new(0, full_mask(k)));
        for i in 0..k {
            for j in i + 1..k {
                let c = (1u64 << i) | (1u64 << j);
                state_dc.push(Cube::new(c, c));
            }
        }
    } else {
        state_dc.extend(
            encoding
                .unused_codes()
                .into_iter()
                .map(|c| Cube::new(c, full_mask(k))),
        );
    }
    let lift = |c: &Cube, shift: usize| Cube::new(c.value << shift, c.care << shift);
    let mut global_dc: Vec<Cube> = state_dc.iter().map(|c| lift(c, state_shift)).collect();
    global_dc.extend(
        range_cubes(spec.n_events as u64, 1u64 << b, b)
            .iter()
            .map(|c| lift(c, nc)),
    );
    // Due combinations that cannot happen: a due variable high outside a time-base cycle
    // (event codes other than the time base's), two durations of one timer due at once.
    let due_bit = |j: usize| 1u64 << (nu + na - 1 - j);
    if let Some(code) = spec.timebase_code {
        let others: Vec<Cube> = range_cubes(0, code, b)
            .into_iter()
            .chain(range_cubes(code + 1, 1u64 << b, b))
            .collect();
        for j in 0..nu {
            for c in &others {
                let l = lift(c, nc);
                global_dc.push(Cube::new(l.value | due_bit(j), l.care | due_bit(j)));
            }
        }
    }
    for t in &spec.timers {
        for (x, &i) in t.dues.iter().enumerate() {
            for &j in &t.dues[x + 1..] {
                let c = due_bit(i) | due_bit(j);
                global_dc.push(Cube::new(c, c));
            }
        }
    }
    // Values of one counter's comparisons that no value of the counter gives (`c < 2`
    // and `c == 3` together). Counters with more than `CMP_DC_MAX` comparisons leave
    // them as care points (correct, only less minimized).
    const CMP_DC_MAX: usize = 10;
    let cmp_bit = |a: usize| 1u64 << (na - 1 - a);
    for c in &spec.counters {
        let kc = c.compares.len();
        if kc == 0 || kc > CMP_DC_MAX {
            continue;
        }
        let pattern = |v: u16| -> usize {
            c.compares
                .iter()
                .enumerate()
                .filter(|&(_, &a)| {
                    let x = &spec.compares[a];
                    x.cmp.holds(u64::from(v), u64::from(x.value))
                })
                .fold(0usize, |acc, (i, _)| acc | 1 << i)
        };
        let mut feasible = vec![false; 1 << kc];
        for v in 0..=c.max {
            feasible[pattern(v)] = true;
        }
        let care = c.compares.iter().fold(0u64, |acc, &a| acc | cmp_bit(a));
        for (p, _) in feasible.iter().enumerate().filter(|(_, &f)| !f) {
            let value = c
                .compares
                .iter()
                .enumerate()
                .filter(|&(i, _)| p >> i & 1 == 1)
                .fold(0u64, |acc, (_, &a)| acc | cmp_bit(a));
            global_dc.push(Cube::new(value, care));
        }
    }

    let n_ff_inputs = ff.input_names().len();
    let n_fns = k * n_ff_inputs
        + spec.outputs.len()
        + spec.actions.len()
        + spec.timers.len()
        + spec.controls.len();
    let mut on: Vec<Vec<Cube>> = vec![Vec::new(); n_fns];
    let mut dc: Vec<Vec<Cube>> = vec![Vec::new(); n_fns];
    let mut off: Vec<Vec<Cube>> = vec![Vec::new(); n_fns];
    // A state's whole code over the k state bits (for the off-sets).
    let code_cube = |s: usize| Cube::new(encoding.codes[s], full_mask(k));
    let ff_index = |bit: usize, input: usize| (k - 1 - bit) * n_ff_inputs + input;
    let out_index = |o: usize| k * n_ff_inputs + o;
    let act_index = |a: usize| k * n_ff_inputs + spec.outputs.len() + a;
    let clear_index = |t: usize| k * n_ff_inputs + spec.outputs.len() + spec.actions.len() + t;
    let control_index = |j: usize| clear_index(spec.timers.len()) + j;

    for r in &spec.regions {
        let region_cubes = |sc: Cube| -> Vec<Cube> {
            let mut cubes = Vec::with_capacity(r.events.len() * r.guards.len());
            for &e in &r.events {
                let ec = Cube::new(e << nc, full_mask(b) << nc);
                for g in &r.guards {
                    cubes.push(Cube::new(
                        sc.value | ec.value | g.value,
                        sc.care | ec.care | g.care,
                    ));
                }
            }
            cubes
        };
        let cubes = region_cubes(lift(&state_cube(r.state), state_shift));
        // The off-set's cubes carry the whole state code: only one-hot codes differ.
        let one_hot_exact;
        let exact: &[Cube] = if encoding.is_one_hot() {
            one_hot_exact = region_cubes(lift(&code_cube(r.state), state_shift));
            &one_hot_exact
        } else {
            &cubes
        };
        // What this region makes of function `idx`: its cubes join the on- or
        // don't-care set, or its exact cubes the off-set.
        let mut place = |idx: usize, e: Excite| match e {
            Excite::One => on[idx].extend_from_slice(&cubes),
            Excite::DontCare => dc[idx].extend_from_slice(&cubes),
            Excite::Zero => off[idx].extend_from_slice(exact),
        };
        let raised = |yes: bool| if yes { Excite::One } else { Excite::Zero };
        let (from, to) = (encoding.codes[r.state], encoding.codes[r.next]);
        for bit in 0..k {
            let need = ff.excitation(from >> bit & 1 == 1, to >> bit & 1 == 1);
            for (input, &e) in need.iter().enumerate() {
                place(ff_index(bit, input), e);
            }
        }
        // Moore-only outputs are functions of the state bits alone, built below.
        for o in (0..spec.outputs.len()).filter(|&o| spec.mealy_output[o]) {
            let yes = r.mealy.contains(&o) || spec.moore[r.state].contains(&o);
            place(out_index(o), raised(yes));
        }
        for a in 0..spec.actions.len() {
            place(act_index(a), raised(r.actions.contains(&a)));
        }
        for (t, timer) in spec.timers.iter().enumerate() {
            place(
                clear_index(t),
                if timer.active[r.next] {
                    // The lowered choice's `resets`: a scope the step enters restarts.
                    raised(r.resets.contains(&t))
                } else {
                    // The next state is outside the scope: its timer is not read until
                    // the scope is entered again, which clears it (the choice's `resets`
                    // list it, but the register may skip the clear).
                    Excite::DontCare
                },
            );
        }
        for j in 0..spec.controls.len() {
            place(control_index(j), raised(r.controls.contains(&j)));
        }
    }

    let mut functions = Vec::with_capacity(n_fns);
    for bit in (0..k).rev() {
        for (input, iname) in ff.input_names().iter().enumerate() {
            let idx = ff_index(bit, input);
            functions.push((format!("{iname}{bit}"), Role::FlipFlop { bit, input }, idx));
        }
    }
    for (o, name) in spec.outputs.iter().enumerate() {
        functions.push((name.clone(), Role::Output(o), out_index(o)));
    }
    for (a, name) in spec.actions.iter().enumerate() {
        functions.push((name.clone(), Role::Action(a), act_index(a)));
    }
    for (t, timer) in spec.timers.iter().enumerate() {
        functions.push((timer.clear.clone(), Role::TimerClear(t), clear_index(t)));
    }
    for (j, control) in spec.controls.iter().enumerate() {
        functions.push((
            control.name.clone(),
            Role::CounterControl(j),
            control_index(j),
        ));
    }
    let mut out = Vec::with_capacity(n_fns);
    for (name, role, idx) in functions {
        let (vars, on_cubes, dc_cubes, off_cubes) = match role {
            Role::Output(o) if !spec.mealy_output[o] => {
                let (on, off): (Vec<usize>, Vec<usize>) =
                    (0..spec.n_states).partition(|&s| spec.moore[s].contains(&o));
                let on: Vec<Cube> = on.into_iter().map(state_cube).collect();
                let mut off: Vec<Cube> = off.into_iter().map(code_cube).collect();
                remove_contained(&mut off);
                (state_vars.clone(), on, state_dc.clone(), off)
            }
            _ => {
                let mut d = std::mem::take(&mut dc[idx]);
                d.extend_from_slice(&global_dc);
                let off = cut_where_cared(&off[idx], &global_dc);
                (all_vars.clone(), std::mem::take(&mut on[idx]), d, off)
            }
        };
        out.push(FunctionSet {
            name,
            role,
            vars,
            on: on_cubes,
            dc: dc_cubes,
            off: off_cubes,
        });
    }
    Ok(FunctionSets {
        state_vars,
        pin_vars,
        functions: out,
    })
}

/// Cost of AND-OR sums of products, with the conventions of [`super::gates`]: true
/// inputs only, one shared inverter per variable needed complemented, one AND per
/// product of two or more literals (identical products shared), one OR per output of
/// two or more products.
pub fn sop_cost(covers: &[&Cover]) -> GateCost {
    let mut cost = GateCost::default();
    let mut need_inverted = 0u64;
    let mut products: HashSet<Cube> = HashSet::new();
    let mut total_products = 0usize;
    for cover in covers {
        if cover.cubes.is_empty() || cover.cubes.iter().any(|c| c.care == 0) {
            continue;
        }
        for t in &cover.cubes {
            cost.literals += t.literals();
            need_inverted |= t.care & !t.value;
            if t.literals() >= 2 {
                total_products += 1;
                if products.insert(*t) {
                    cost.gates += 1;
                    cost.gate_inputs += t.literals();
                }
            }
        }
        if cover.cubes.len() >= 2 {
            cost.gates += 1;
            cost.gate_inputs += cover.cubes.len();
        }
    }
    cost.inverters = need_inverted.count_ones() as usize;
    cost.gates += cost.inverters;
    cost.gate_inputs += cost.inverters;
    cost.shared_terms = total_products - products.len();
    cost
}

impl LogicDesign {
    /// Total literals of the sums of products.
    pub fn literals(&self) -> usize {
        self.functions.iter().map(|f| f.cover.literals).sum()
    }

    /// A cover moved into the full variable layout (state bits, pins), so products of
    /// different functions compare and share.
    fn lifted(&self, f: &LogicFunction, cover: &Cover) -> Cover {
        let shift = self.state_vars.len() + self.pin_vars.len() - f.vars.len();
        Cover {
            cubes: cover
                .cubes
                .iter()
                .map(|c| Cube::new(c.value << shift, c.care << shift))
                .collect(),
            literals: cover.literals,
            method: cover.method,
        }
    }

    /// Gate cost in a two-level form. NOR-NOR needs the complement covers
    /// ([`synthesize`] with `complements`); without them it is an error.
    pub fn cost(&self, map: Map) -> Result<GateCost, String> {
        let covers: Vec<Cover> = match map {
            Map::Sop | Map::Nand => self
                .functions
                .iter()
                .map(|f| self.lifted(f, &f.cover))
                .collect(),
            Map::Nor => self
                .functions
                .iter()
                .map(|f| {
                    f.complement
                        .as_ref()
                        .map(|c| self.lifted(f, c))
                        .ok_or_else(|| format!("no complement cover for {}", f.name))
                })
                .collect::<Result<_, _>>()?,
        };
        let refs: Vec<&Cover> = covers.iter().collect();
        Ok(match map {
            Map::Sop => sop_cost(&refs),
            Map::Nand => two_level_cost(Form::NandNand, &refs),
            Map::Nor => two_level_cost(Form::NorNor, &refs),
        })
    }
}

impl LogicSpec {
    /// The adjacency weights of the classic rules (the search's cheap score).
    pub(crate) fn adjacency(&self) -> &Adjacency {
        &self.adjacency
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The composite effect equals running the operations one by one with
    /// [`crate::model::CounterOp::apply`], on every value, for every sequence of up to
    /// three operations over small constants.
    #[test]
    fn counter_effects_compose_like_the_operations() {
        use crate::model::{CounterId, CounterOp, CounterOpKind, Op};
        let c = CounterId::from_index(0);
        let kinds = [CounterOpKind::Add, CounterOpKind::Sub, CounterOpKind::Set];
        let mut singles = Vec::new();
        for kind in kinds {
            for value in 0..=4u16 {
                singles.push(Op::Counter(CounterOp {
                    counter: c,
                    kind,
                    value,
                }));
            }
        }
        let other = Op::Counter(CounterOp {
            counter: CounterId::from_index(1),
            kind: CounterOpKind::Set,
            value: 1,
        });
        let mut seqs: Vec<Vec<Op>> = vec![Vec::new(), vec![other]];
        for a in &singles {
            seqs.push(vec![*a]);
            for b in &singles {
                seqs.push(vec![*a, other, *b]);
                for d in singles.iter().step_by(2) {
                    seqs.push(vec![*a, *b, *d]);
                }
            }
        }
        let mut distinct = std::collections::HashSet::new();
        for max in 1..=5u16 {
            for ops in &seqs {
                let effect = CounterEffect::of(ops, c, max);
                distinct.insert((max, effect));
                for v in 0..=max {
                    let mut x = v;
                    for op in ops {
                        if let Op::Counter(o) = op {
                            if o.counter == c {
                                x = o.apply(x, max).0;
                            }
                        }
                    }
                    let got = effect.map_or(v, |e| e.apply(v));
                    assert_eq!(got, x, "max {max} ops {ops:?} from {v}: {effect:?}");
                }
                if let Some(CounterEffect::Shift { lo, hi, .. }) = effect {
                    assert!(lo < hi, "{effect:?}");
                }
            }
        }
        // The canonical form is unique: distinct effects act differently somewhere.
        for &(max, a) in &distinct {
            for &(max2, b) in &distinct {
                if max == max2 && a != b {
                    let act = |e: Option<CounterEffect>, v| e.map_or(v, |e| e.apply(v));
                    assert!((0..=max).any(|v| act(a, v) != act(b, v)), "{a:?} {b:?}");
                }
            }
        }
        let add = |k| {
            Op::Counter(CounterOp {
                counter: c,
                kind: CounterOpKind::Add,
                value: k,
            })
        };
        let e = CounterEffect::of(&[add(1)], c, 3).unwrap();
        assert_eq!((e.suffix(3), e.text(3)), ("add_1".into(), "+= 1".into()));
    }

    #[test]
    fn range_cubes_cover_exactly() {
        for b in 0..6usize {
            for lo in 0..=(1u64 << b) {
                let cubes = range_cubes(lo, 1 << b, b);
                for x in 0..1u64 << b {
                    let n = cubes.iter().filter(|c| c.contains_minterm(x)).count();
                    assert_eq!(n, usize::from(x >= lo), "b={b} lo={lo} x={x}");
                }
            }
        }
    }
}
