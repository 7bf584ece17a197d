//! `detent logic --format json|text`: the state assignment, the minimized flip-flop
//! and output equations with their on- and don't-care sets, and the gate cost; under
//! `--encoding auto` also the table of what each encoding costs.

use crate::check::render::plural;
use crate::logic::auto::AutoReport;
use crate::logic::equations::{LogicDesign, Map};
use crate::logic::gates::{format_gates, format_pos, format_sop, Form, GateCost};
use crate::logic::Method;
use crate::model::Machine;
use serde::Serialize;

/// The name of a minimization method in reports.
pub fn method_name(m: Method) -> &'static str {
    match m {
        Method::Exact => "exact",
        Method::Heuristic => "heuristic",
    }
}

fn map_name(map: Map) -> &'static str {
    match map {
        Map::Sop => "sop",
        Map::Nand => "nand",
        Map::Nor => "nor",
    }
}

/// An on- or don't-care set: minterm numbers, or cube strings for functions too wide
/// to list minterms.
#[derive(Debug, Serialize)]
#[serde(untagged)]
pub enum TermSet {
    /// Minterm numbers (bit order of `vars`, first = most significant).
    Minterms(Vec<u64>),
    /// Cubes as `1`, `0`, `-` strings.
    Cubes(Vec<String>),
}

/// One minimized function.
#[derive(Debug, Serialize)]
pub struct FunctionEntry {
    /// The function's name (`D1`, an output or action).
    pub name: String,
    /// Its variables, first = most significant.
    pub vars: Vec<String>,
    /// The on-set.
    pub on: TermSet,
    /// The don't-care set.
    pub dc: TermSet,
    /// The minimized sum of products, as cube strings.
    pub cover: Vec<String>,
    /// Its literal count.
    pub literals: usize,
    /// `exact` or `heuristic`.
    pub method: &'static str,
    /// The complement's sum of products (NOR-NOR), when computed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub complement_cover: Option<Vec<String>>,
    /// Its literal count.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub complement_literals: Option<usize>,
}

/// One timer register of the datapath (a scope with `after` rules).
#[derive(Debug, Serialize)]
pub struct TimerEntry {
    /// The state or group whose `after` rules read it.
    pub scope: String,
    /// The register's name in the Verilog module.
    pub register: String,
    /// Its width in bits (the narrowest that holds `max`).
    pub bits: usize,
    /// The value it saturates at (its largest duration, in ticks).
    pub max: u32,
    /// The durations of its `after` rules, in ticks, ascending.
    pub durations: Vec<u32>,
    /// The due variable of each duration (parallel to `durations`): a variable of the
    /// equations, listed in `inputs`, high on a time-base cycle where the timer stands
    /// at the duration minus one.
    pub due: Vec<String>,
    /// The function (in `functions`) that clears it: high when the rule taken enters the
    /// scope.
    pub clear: String,
}

/// One counter register of the datapath.
#[derive(Debug, Serialize)]
pub struct CounterEntry {
    /// The counter's name in the spec.
    pub name: String,
    /// The register's name in the Verilog module.
    pub register: String,
    /// Its width in bits (the narrowest that holds `max`).
    pub bits: usize,
    /// Its largest value.
    pub max: u16,
    /// Its comparison variables (variables of the equations, listed in `inputs`).
    pub compares: Vec<CompareEntry>,
    /// Its control functions (in `functions`): each high in a step that applies its
    /// effect.
    pub controls: Vec<ControlEntry>,
}

/// A comparison variable: a counter compared with a constant.
#[derive(Debug, Serialize)]
pub struct CompareEntry {
    /// The variable's name.
    pub name: String,
    /// The comparison as written in the spec (`strikes < 2`).
    pub text: String,
}

/// A counter control function.
#[derive(Debug, Serialize)]
pub struct ControlEntry {
    /// The function's name.
    pub name: String,
    /// The effect: `+= 1`, `-= 1`, `= 0`, or `+= k within lo..=hi` for a composite
    /// effect bounded inside `0..=max`.
    pub effect: String,
}

/// The cost summary of DESIGN.md.
#[derive(Debug, Serialize)]
pub struct CostEntry {
    /// Literals of all sums of products.
    pub literals: usize,
    /// Gates.
    pub gates: usize,
    /// Gate inputs.
    pub gate_inputs: usize,
}

/// One row of the `auto` table.
#[derive(Debug, Serialize)]
pub struct AutoRowEntry {
    /// The encoding's kind.
    pub encoding: &'static str,
    /// Flip-flops.
    pub flip_flops: usize,
    /// Literals.
    pub literals: usize,
    /// Gates.
    pub gates: usize,
    /// Gate inputs.
    pub gate_inputs: usize,
}

/// What `--encoding auto` searched.
#[derive(Debug, Serialize)]
pub struct AutoEntry {
    /// What each encoding costs.
    pub table: Vec<AutoRowEntry>,
    /// The kind chosen.
    pub chosen: &'static str,
    /// Assignments costed.
    pub evaluated: u64,
    /// True when every assignment (up to symmetry) was costed.
    pub exhaustive: bool,
    /// Seconds the search took.
    pub seconds: f64,
    /// True when `--budget-ms` stopped the search before it finished: the assignment is
    /// the best found so far.
    pub cut_short: bool,
}

/// The report of one `detent logic`.
#[derive(Debug, Serialize)]
pub struct LogicReport<'a> {
    /// State name -> code, in declaration order.
    pub encoding: super::Codes,
    /// State bits.
    pub state_bits: usize,
    /// Pin variables: event bus bits, inputs, the timers' due variables, then the
    /// counters' comparison variables.
    pub inputs: Vec<String>,
    /// The functions.
    pub functions: Vec<FunctionEntry>,
    /// The cost.
    pub cost: CostEntry,
    /// The timer registers (left out without `after` rules; after `cost`, so that the
    /// documented keys keep their order).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub timers: Vec<TimerEntry>,
    /// The counter registers (left out without counters; after `timers`).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub counters: Vec<CounterEntry>,
    /// The machine.
    pub machine: String,
    /// The encoding's kind.
    pub encoding_kind: &'static str,
    /// The flip-flop type (`D`, `T`, `JK`, `SR`).
    pub flip_flop: String,
    /// The two-level form.
    pub map: &'static str,
    /// The search, under `--encoding auto`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub auto: Option<AutoEntry>,
    #[serde(skip)]
    text: TextParts<'a>,
}

/// What the text form needs beyond the JSON.
#[derive(Debug)]
struct TextParts<'a> {
    machine: &'a Machine,
    design: &'a LogicDesign,
    gate_cost: &'a GateCost,
    map: Map,
    auto: Option<&'a AutoReport>,
    seconds: f64,
}

impl<'a> LogicReport<'a> {
    /// The report of `design` (a synthesis of `m`) costed as `cost` in form `map`;
    /// `auto` and `seconds` describe the assignment search when there was one.
    pub fn new(
        m: &'a Machine,
        design: &'a LogicDesign,
        cost: &'a GateCost,
        map: Map,
        auto: Option<&'a AutoReport>,
        seconds: f64,
    ) -> LogicReport<'a> {
        let encoding = super::Codes(
            m.states
                .iter()
                .enumerate()
                .map(|(i, s)| (s.name.clone(), design.encoding.code_string(i)))
                .collect(),
        );
        let functions = design
            .functions
            .iter()
            .map(|f| {
                let n = f.vars.len();
                let (on, dc) = match &f.minterms {
                    Some((on, dc)) => {
                        (TermSet::Minterms(on.clone()), TermSet::Minterms(dc.clone()))
                    }
                    // Too wide for minterm lists: the sets as cube strings.
                    None => (
                        TermSet::Cubes(f.on_cubes.iter().map(|c| c.to_string(n)).collect()),
                        TermSet::Cubes(f.dc_cubes.iter().map(|c| c.to_string(n)).collect()),
                    ),
                };
                FunctionEntry {
                    name: f.name.clone(),
                    vars: f.vars.clone(),
                    on,
                    dc,
                    cover: f.cover.cube_strings(n),
                    literals: f.cover.literals,
                    method: method_name(f.cover.method),
                    complement_cover: f.complement.as_ref().map(|c| c.cube_strings(n)),
                    complement_literals: f.complement.as_ref().map(|c| c.literals),
                }
            })
            .collect();
        let auto_entry = auto.map(|a| AutoEntry {
            table: a
                .rows
                .iter()
                .map(|r| AutoRowEntry {
                    encoding: r.encoding.kind.name(),
                    flip_flops: r.flip_flops,
                    literals: r.literals,
                    gates: r.cost.gates,
                    gate_inputs: r.cost.gate_inputs,
                })
                .collect(),
            chosen: a.rows[a.chosen].encoding.kind.name(),
            evaluated: a.evaluated,
            exhaustive: a.exhaustive,
            seconds,
            cut_short: a.cut_short,
        });
        LogicReport {
            encoding,
            state_bits: design.encoding.bits,
            inputs: design.pin_vars.clone(),
            timers: design
                .timers
                .iter()
                .map(|t| TimerEntry {
                    scope: t.scope.clone(),
                    register: t.register.clone(),
                    bits: t.bits,
                    max: t.max,
                    durations: t.durations.clone(),
                    due: t
                        .dues
                        .iter()
                        .map(|&j| design.dues[j].name.clone())
                        .collect(),
                    clear: t.clear.clone(),
                })
                .collect(),
            counters: design
                .counters
                .iter()
                .map(|c| CounterEntry {
                    name: c.name.clone(),
                    register: c.register.clone(),
                    bits: c.bits,
                    max: c.max,
                    compares: c
                        .compares
                        .iter()
                        .map(|&a| CompareEntry {
                            name: design.compares[a].name.clone(),
                            text: design.compares[a].text.clone(),
                        })
                        .collect(),
                    controls: c
                        .controls
                        .iter()
                        .map(|&j| ControlEntry {
                            name: design.controls[j].name.clone(),
                            effect: design.controls[j].effect.text(c.max),
                        })
                        .collect(),
                })
                .collect(),
            functions,
            cost: CostEntry {
                literals: cost.literals,
                gates: cost.gates,
                gate_inputs: cost.gate_inputs,
            },
            machine: m.name.clone(),
            encoding_kind: design.encoding.kind.name(),
            flip_flop: design.flip_flop.input_names().concat(),
            map: map_name(map),
            auto: auto_entry,
            text: TextParts {
                machine: m,
                design,
                gate_cost: cost,
                map,
                auto,
                seconds,
            },
        }
    }

    /// The text form, one line per entry: the `auto` table when there was a search,
    /// the assignment, the equations in trade notation, and the cost.
    pub fn lines(&self) -> Vec<String> {
        let TextParts {
            machine: m,
            design: d,
            gate_cost: cost,
            map,
            auto,
            seconds: secs,
        } = &self.text;
        let mut out = Vec::new();
        let ff = d.flip_flop.input_names().concat();
        if let Some(a) = auto {
            out.push(format!(
                "assignment search: {} assignments costed ({}) in {secs:.2} s",
                a.evaluated,
                if a.exhaustive {
                    "every assignment up to bit permutation and complementation"
                } else {
                    "adjacency-scored pool, exact descent"
                }
            ));
            out.push(format!(
                "  {} scored by adjacency, {} costings stopped by the bound, {} functions \
                 minimized, {} taken from the memo",
                a.stats.scored, a.stats.pruned, a.stats.minimized, a.stats.memo_hits
            ));
            if a.cut_short {
                out.push(
                    "  cut short by the time budget (--budget-ms): the best assignment found \
                     so far is shown"
                        .to_string(),
                );
            }
            out.push(format!(
                "{:<9} {:>10} {:>9} {:>6} {:>12}",
                "encoding", "flip-flops", "literals", "gates", "gate inputs"
            ));
            for (i, r) in a.rows.iter().enumerate() {
                out.push(format!(
                    "{:<9} {:>10} {:>9} {:>6} {:>12}{}",
                    r.encoding.kind.name(),
                    r.flip_flops,
                    r.literals,
                    r.cost.gates,
                    r.cost.gate_inputs,
                    if i == a.chosen { "  <- chosen" } else { "" }
                ));
            }
            out.push(String::new());
        }
        out.push(format!(
            "machine {}: {} encoding, {} state bits, {ff} flip-flops",
            m.name,
            d.encoding.kind.name(),
            d.encoding.bits
        ));
        let width = m
            .states
            .iter()
            .map(|s| s.name.len())
            .max()
            .unwrap_or(5)
            .max(5);
        out.push(format!(
            "  {:<width$}  code ({})",
            "state",
            d.state_vars.join(" ")
        ));
        for (i, s) in m.states.iter().enumerate() {
            out.push(format!(
                "  {:<width$}  {}",
                s.name,
                d.encoding.code_string(i)
            ));
        }
        if !d.pin_vars.is_empty() {
            out.push(format!("pins: {}", d.pin_vars.join(" ")));
        }
        for t in &d.timers {
            out.push(format!(
                "timer {}: register {} ({}), saturates at {}, cleared by {}; due: {}",
                t.scope,
                t.register,
                plural(t.bits, "bit"),
                m.duration_text(t.max),
                t.clear,
                t.dues
                    .iter()
                    .zip(&t.durations)
                    .map(|(&j, &ticks)| format!(
                        "{} (after {})",
                        d.dues[j].name,
                        m.duration_text(ticks)
                    ))
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
        for c in &d.counters {
            let compares: Vec<String> = c
                .compares
                .iter()
                .map(|&a| format!("{} ({})", d.compares[a].name, d.compares[a].text))
                .collect();
            let controls: Vec<String> = c
                .controls
                .iter()
                .map(|&j| {
                    format!(
                        "{} ({})",
                        d.controls[j].name,
                        d.controls[j].effect.text(c.max)
                    )
                })
                .collect();
            out.push(format!(
                "counter {}: register {} ({}), 0..={}, saturating; compares: {}; controls: {}",
                c.name,
                c.register,
                plural(c.bits, "bit"),
                c.max,
                if compares.is_empty() {
                    "none".to_string()
                } else {
                    compares.join(", ")
                },
                if controls.is_empty() {
                    "none".to_string()
                } else {
                    controls.join(", ")
                }
            ));
        }
        out.push(String::new());
        for f in &d.functions {
            let eq = match map {
                Map::Sop => format_sop(&f.name, &f.vars, &f.cover),
                Map::Nand => format!(
                    "{}\n    {}",
                    format_sop(&f.name, &f.vars, &f.cover),
                    format_gates(Form::NandNand, &f.name, &f.vars, &f.cover)
                ),
                Map::Nor => match &f.complement {
                    Some(c) => format!(
                        "{}\n    {}",
                        format_pos(&f.name, &f.vars, c),
                        format_gates(Form::NorNor, &f.name, &f.vars, c)
                    ),
                    None => format_sop(&f.name, &f.vars, &f.cover),
                },
            };
            let (lits, method) = match (map, &f.complement) {
                (Map::Nor, Some(c)) => (c.literals, c.method),
                _ => (f.cover.literals, f.cover.method),
            };
            out.push(format!(
                "{eq}    [{}, {}]",
                method_name(method),
                plural(lits, "literal")
            ));
        }
        out.push(String::new());
        out.push(cost_line(cost, *map));
        out
    }
}

fn cost_line(cost: &GateCost, map: Map) -> String {
    let form = match map {
        Map::Sop => "AND-OR",
        Map::Nand => "NAND-NAND",
        Map::Nor => "NOR-NOR",
    };
    format!(
        "cost ({form}): {}, {}, {} ({}, {})",
        plural(cost.literals, "literal"),
        plural(cost.gates, "gate"),
        plural(cost.gate_inputs, "gate input"),
        plural(cost.inverters, "input inverter"),
        plural(cost.shared_terms, "shared product")
    )
}
