//! The C back end: a C99 header and source per machine, table-driven.
//!
//! Names and signatures are those of DESIGN.md ("Generated C"); state and event numbers
//! are the model's declaration-order ids, the same numbers the Rust and Verilog back
//! ends use, so a state byte can be stored by one side and restored by the other.
//!
//! # Method and cost
//!
//! A dense table-driven dispatch, the usual layout for a state-transition table in
//! embedded C (common practice). The step looks up a *range* of candidate transitions
//! for the (state, event) cell and takes the first whose guard holds, which is what the
//! interpreter's [`Machine::fired_rule`] does. The tables, all `static const` (flash on
//! a microcontroller), each in the narrowest unsigned type that holds its values:
//!
//! - `cell[S][E]`: range id of each (state, event) cell (range 0 is empty). This is
//!   the only table that grows as states x events; cells with the same (state, rule
//!   list) share a range.
//! - `range[R + 1]`: first transition of each range; range `r` is
//!   `range[r] .. range[r + 1]`.
//! - per transition (a rule as it fires from one state): `guard` id (0: always true),
//!   `target` state, `mealy` output mask and `act_start` (its action sequence is
//!   `act[act_start[t] .. act_start[t + 1]]`, from [`Machine::transition_actions`], so
//!   enter/leave actions of states and groups are already in order).
//! - `moore[S]`: Moore output mask of each state.
//!
//! Guards and actions are `switch` statements over their ids. Inputs are read through
//! the hooks at most once per step, the first time a guard needs them, and cached for
//! the rest of the step, so all guards of one step see one valuation.
//!
//! Generation is linear in `S * E` plus the size of the rules and their action lists.

use crate::model::{ActionId, Guard, Machine, RuleId, StateId};
use crate::naming::to_snake;
use std::collections::HashMap;
use std::fmt::Write;

/// The generated pair of files for one machine.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CFiles {
    /// `<stem>.h`: types, prototypes and documentation.
    pub header: String,
    /// `<stem>.c`: tables and functions.
    pub source: String,
    /// The file stem: the machine's name in snake_case (`BilgePump` -> `bilge_pump`).
    pub stem: String,
}

/// Sizes of the generated tables, in entries, for footprint reports.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TableSizes {
    /// States.
    pub states: usize,
    /// Events.
    pub events: usize,
    /// (state, event) cells: `states * events`, the size of the dense cell table.
    pub cells: usize,
    /// Distinct transition ranges (the empty one included).
    pub ranges: usize,
    /// Transitions: (from state, rule) pairs that some cell can take.
    pub transitions: usize,
    /// Distinct non-trivial guards.
    pub guards: usize,
    /// Entries of the action-sequence table.
    pub action_entries: usize,
    /// Bytes of all `static const` tables together (names and name pointers excluded).
    pub table_bytes: usize,
    /// Bytes of the cell table alone.
    pub cell_table_bytes: usize,
}

/// The largest `states * events` the C back end generates a dense table for
/// (16 Mi cells); the CLI refuses bigger machines with a clear message.
pub const MAX_C_CELLS: usize = 1 << 24;

/// The number of (state, event) cells of the dense cell table.
pub fn cell_count(m: &Machine) -> usize {
    m.states.len().saturating_mul(m.events.len())
}

/// The file stem of a machine's C files: its name in snake_case.
pub fn c_stem(m: &Machine) -> String {
    c_ident(&to_snake(&m.name))
}

/// True when `step` calls hooks (some guard reads an input or some transition runs an
/// action); `hooks` may then not be NULL.
pub fn needs_hooks(m: &Machine) -> bool {
    Layout::new(m).needs_hooks()
}

/// The sizes of the tables [`generate_c`] writes for a machine.
pub fn table_sizes(m: &Machine) -> TableSizes {
    let l = Layout::new(m);
    let s = m.states.len();
    let t_rows = l.trans.len().max(1);
    let row = l.out_words * l.out_word_bytes;
    let mut bytes =
        cell_count(m) * l.range_ty.1 + l.range_start.len() * l.trans_ty.1 + t_rows * l.target_ty.1;
    if l.has_guards() {
        bytes += t_rows * l.guard_ty.1;
    }
    bytes += row.max(1) + s * row;
    if l.has_mealy() {
        bytes += t_rows * row;
    }
    if !l.act_list.is_empty() {
        bytes += (t_rows + 1) * l.act_start_ty.1 + l.act_list.len() * l.action_ty.1;
    }
    TableSizes {
        states: s,
        events: m.events.len(),
        cells: cell_count(m),
        ranges: l.range_start.len() - 1,
        transitions: l.trans.len(),
        guards: l.guards.len(),
        action_entries: l.act_list.len(),
        table_bytes: bytes,
        cell_table_bytes: cell_count(m) * l.range_ty.1,
    }
}

/// One transition: a rule as it fires from one state.
struct Trans {
    guard: usize,
    target: StateId,
    mealy: Vec<u64>,
}

/// The tables, computed once and printed by the header and source writers.
struct Layout {
    /// Range id of each cell, row-major by state.
    cell: Vec<usize>,
    /// First transition of each range, plus the end.
    range_start: Vec<usize>,
    trans: Vec<Trans>,
    /// Distinct guards; guard id `g > 0` is `guards[g - 1]`.
    guards: Vec<Guard>,
    /// First action entry of each transition, plus the end.
    act_start: Vec<usize>,
    act_list: Vec<ActionId>,
    /// Moore mask words of each state.
    moore: Vec<Vec<u64>>,
    /// Output mask words per row (0 when the machine has no outputs).
    out_words: usize,
    /// Bits per output mask word.
    out_word_bits: usize,
    out_word_bytes: usize,
    /// Inputs some guard reads.
    inputs_used: Vec<bool>,
    /// Actions some transition runs.
    actions_used: Vec<bool>,
    range_ty: (&'static str, usize),
    trans_ty: (&'static str, usize),
    guard_ty: (&'static str, usize),
    target_ty: (&'static str, usize),
    act_start_ty: (&'static str, usize),
    action_ty: (&'static str, usize),
}

/// The narrowest C unsigned type holding `max`, and its size in bytes.
fn uint_for(max: u64) -> (&'static str, usize) {
    if max <= u64::from(u8::MAX) {
        ("uint8_t", 1)
    } else if max <= u64::from(u16::MAX) {
        ("uint16_t", 2)
    } else if max <= u64::from(u32::MAX) {
        ("uint32_t", 4)
    } else {
        ("uint64_t", 8)
    }
}

impl Layout {
    fn new(m: &Machine) -> Layout {
        let n_out = m.outputs.len();
        let (out_words, out_word_bits) = match n_out {
            0 => (0, 8),
            1..=8 => (1, 8),
            9..=16 => (1, 16),
            17..=32 => (1, 32),
            33..=64 => (1, 64),
            _ => (n_out.div_ceil(32), 32),
        };
        let mask = |outs: &[crate::model::OutputId]| -> Vec<u64> {
            let mut words = vec![0u64; out_words];
            for o in outs {
                words[o.index() / out_word_bits] |= 1u64 << (o.index() % out_word_bits);
            }
            words
        };
        let mut cell = Vec::with_capacity(cell_count(m));
        let mut range_start = vec![0usize, 0usize];
        let mut trans: Vec<Trans> = Vec::new();
        let mut guards: Vec<Guard> = Vec::new();
        let mut act_start = Vec::new();
        let mut act_list: Vec<ActionId> = Vec::new();
        let mut ranges: HashMap<(StateId, Vec<RuleId>), usize> = HashMap::new();
        let mut inputs_used = vec![false; m.inputs.len()];
        let mut actions_used = vec![false; m.actions.len()];
        for si in 0..m.states.len() {
            let s = StateId::from_index(si);
            for ei in 0..m.events.len() {
                let e = crate::model::EventId::from_index(ei);
                // Rules whose guard is unsatisfiable never fire: leave them out.
                let rules: Vec<RuleId> = match m.rules_for(s, e) {
                    Some((_, rs)) => rs
                        .iter()
                        .copied()
                        .filter(|r| !m.rules[r.index()].guard.is_false())
                        .collect(),
                    None => Vec::new(),
                };
                if rules.is_empty() {
                    cell.push(0);
                    continue;
                }
                let next = range_start.len() - 1;
                let id = *ranges.entry((s, rules.clone())).or_insert(next);
                if id == next {
                    for &r in &rules {
                        let rule = &m.rules[r.index()];
                        let guard = match &rule.guard_expr {
                            _ if rule.guard.is_true() => 0,
                            None => 0,
                            Some(g) => {
                                mark_inputs(g, &mut inputs_used);
                                match guards.iter().position(|x| x == g) {
                                    Some(i) => i + 1,
                                    None => {
                                        guards.push(g.clone());
                                        guards.len()
                                    }
                                }
                            }
                        };
                        act_start.push(act_list.len());
                        for a in m.transition_actions(s, r) {
                            actions_used[a.index()] = true;
                            act_list.push(a);
                        }
                        trans.push(Trans {
                            guard,
                            target: m.target_of(s, r),
                            mealy: mask(&rule.mealy),
                        });
                    }
                    range_start.push(trans.len());
                }
                cell.push(id);
            }
        }
        act_start.push(act_list.len());
        let moore = m.states.iter().map(|st| mask(&st.moore)).collect();
        let n_ranges = range_start.len() - 1;
        Layout {
            cell,
            range_ty: uint_for(n_ranges.saturating_sub(1) as u64),
            trans_ty: uint_for(trans.len() as u64),
            guard_ty: uint_for(guards.len() as u64),
            target_ty: uint_for(m.states.len().saturating_sub(1) as u64),
            act_start_ty: uint_for(act_list.len() as u64),
            action_ty: uint_for(m.actions.len().saturating_sub(1) as u64),
            range_start,
            trans,
            guards,
            act_start,
            act_list,
            moore,
            out_words,
            out_word_bits,
            out_word_bytes: out_word_bits / 8,
            inputs_used,
            actions_used,
        }
    }

    fn has_mealy(&self) -> bool {
        self.trans.iter().any(|t| t.mealy.iter().any(|&w| w != 0))
    }

    fn has_guards(&self) -> bool {
        !self.guards.is_empty()
    }

    fn needs_hooks(&self) -> bool {
        self.inputs_used.iter().any(|&b| b) || self.actions_used.iter().any(|&b| b)
    }
}

fn mark_inputs(g: &Guard, used: &mut [bool]) {
    match g {
        Guard::Input(i) => used[i.index()] = true,
        Guard::Const(_) => {}
        Guard::Not(a) => mark_inputs(a, used),
        Guard::And(a, b) | Guard::Or(a, b) => {
            mark_inputs(a, used);
            mark_inputs(b, used);
        }
    }
}

/// Words that cannot name a struct member or a function in C99, C11 or C++, or that
/// `<stdbool.h>` and `<stddef.h>` define as macros. A name of the spec that is one of
/// them gets a trailing `_` in C.
const RESERVED: &[&str] = &[
    "auto",
    "break",
    "case",
    "char",
    "const",
    "continue",
    "default",
    "do",
    "double",
    "else",
    "enum",
    "extern",
    "float",
    "for",
    "goto",
    "if",
    "inline",
    "int",
    "long",
    "register",
    "restrict",
    "return",
    "short",
    "signed",
    "sizeof",
    "static",
    "struct",
    "switch",
    "typedef",
    "union",
    "unsigned",
    "void",
    "volatile",
    "while",
    "bool",
    "true",
    "false",
    "NULL",
    "asm",
    "catch",
    "class",
    "const_cast",
    "delete",
    "dynamic_cast",
    "explicit",
    "export",
    "friend",
    "mutable",
    "namespace",
    "new",
    "operator",
    "private",
    "protected",
    "public",
    "reinterpret_cast",
    "static_cast",
    "template",
    "this",
    "throw",
    "try",
    "typeid",
    "typename",
    "using",
    "virtual",
    "wchar_t",
    "and",
    "or",
    "not",
    "xor",
    "bitand",
    "bitor",
    "compl",
    "and_eq",
    "or_eq",
    "xor_eq",
    "not_eq",
    "alignas",
    "alignof",
    "char16_t",
    "char32_t",
    "constexpr",
    "decltype",
    "noexcept",
    "nullptr",
    "static_assert",
    "thread_local",
    "offsetof",
    "errno",
    "assert",
];

/// A C identifier for a spec name: characters outside `[A-Za-z0-9_]` become `_uXXXX`.
fn c_ident(name: &str) -> String {
    let mut out = String::new();
    for c in name.chars() {
        if c.is_ascii_alphanumeric() || c == '_' {
            out.push(c);
        } else {
            let _ = write!(out, "_u{:04X}", c as u32);
        }
    }
    out
}

/// Gives each name a distinct C spelling: reserved words get a trailing `_`, and a
/// spelling already taken gets `_<n>` appended (n = 2, 3, ...).
struct Namer {
    taken: std::collections::HashSet<String>,
}

impl Namer {
    fn new() -> Self {
        Namer {
            taken: std::collections::HashSet::new(),
        }
    }

    fn name(&mut self, base: String) -> String {
        let mut base = base;
        if RESERVED.contains(&base.as_str()) {
            base.push('_');
        }
        let mut candidate = base.clone();
        let mut n = 2;
        while !self.taken.insert(candidate.clone()) {
            candidate = format!("{base}_{n}");
            n += 1;
        }
        candidate
    }
}

/// Text safe inside a `/* */` comment: no comment end, no trigraph.
fn comment_text(s: &str) -> String {
    s.replace("*/", "* /").replace("??", "? ?")
}

/// A C string literal for a name (non-ASCII bytes as octal escapes).
fn c_string(s: &str) -> String {
    let mut out = String::from("\"");
    for b in s.bytes() {
        match b {
            b'"' | b'\\' => {
                out.push('\\');
                out.push(b as char);
            }
            b'?' => out.push_str("\\?"),
            0x20..=0x7e => out.push(b as char),
            _ => {
                let _ = write!(out, "\\{b:03o}");
            }
        }
    }
    out.push('"');
    out
}

/// A doc block at an indent, from spec doc lines; nothing when there are none.
fn doc_block(out: &mut String, indent: &str, lines: &[String]) {
    let lines: Vec<&str> = lines.iter().map(|l| l.trim_end()).collect();
    match lines.as_slice() {
        [] => {}
        [one] => {
            let _ = writeln!(out, "{indent}/** {} */", comment_text(one.trim()));
        }
        many => {
            let _ = writeln!(out, "{indent}/**");
            for l in many {
                if l.trim().is_empty() {
                    let _ = writeln!(out, "{indent} *");
                } else {
                    let _ = writeln!(out, "{indent} * {}", comment_text(l));
                }
            }
            let _ = writeln!(out, "{indent} */");
        }
    }
}

/// Words of `text` joined into lines of at most 80 characters, separated by `sep`.
fn wrap(text: &str, sep: &str) -> String {
    let mut lines: Vec<String> = vec![String::new()];
    for word in text.split_whitespace() {
        let last = lines.last_mut().map_or(0, |l| l.len());
        if last > 0 && last + 1 + word.len() > 80 {
            lines.push(String::new());
        }
        if let Some(l) = lines.last_mut() {
            if !l.is_empty() {
                l.push(' ');
            }
            l.push_str(word);
        }
    }
    lines.join(sep)
}

/// Writes a C initializer list of numbers, wrapped.
fn number_rows(out: &mut String, values: &[u64], hex: bool) {
    const PER_LINE: usize = 12;
    for chunk in values.chunks(PER_LINE) {
        out.push_str("    ");
        let cells: Vec<String> = chunk
            .iter()
            .map(|v| {
                if hex {
                    format!("0x{v:x}u")
                } else {
                    format!("{v}u")
                }
            })
            .collect();
        out.push_str(&cells.join(", "));
        out.push_str(",\n");
    }
}

/// The C spellings of everything the generated files name, indexed by the model's ids.
/// Spec names are kept, except that a C or C++ keyword gets a trailing `_`, a
/// character outside `[A-Za-z0-9_]` becomes `_uXXXX`, and a spelling already taken in
/// the same C namespace gets `_2`, `_3`, ... appended.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CNames {
    /// The prefix of every name, the file stem (`bilge_pump`).
    pub p: String,
    /// The prefix of every constant (`BILGE_PUMP`).
    pub up: String,
    /// State enum constants (`BILGE_PUMP_S_IDLE`).
    pub states: Vec<String>,
    /// Event enum constants (`BILGE_PUMP_E_FLOAT_UP`).
    pub events: Vec<String>,
    /// Members of `struct <p>_outputs`.
    pub outputs: Vec<String>,
    /// Input members of `struct <p>_hooks`.
    pub inputs: Vec<String>,
    /// Action members of `struct <p>_hooks`.
    pub actions: Vec<String>,
}

use CNames as Names;

impl CNames {
    /// The C spellings for a machine.
    pub fn new(m: &Machine) -> CNames {
        let p = c_stem(m);
        let up = p.to_uppercase();
        let screaming = |prefix: &str, items: &mut dyn Iterator<Item = &str>| {
            let mut namer = Namer::new();
            items
                .map(|n| namer.name(format!("{prefix}{}", c_ident(&to_snake(n)).to_uppercase())))
                .collect::<Vec<_>>()
        };
        let states = screaming(
            &format!("{up}_S_"),
            &mut m.states.iter().map(|s| s.name.as_str()),
        );
        let events = screaming(
            &format!("{up}_E_"),
            &mut m.events.iter().map(|s| s.name.as_str()),
        );
        let mut namer = Namer::new();
        let outputs = m
            .outputs
            .iter()
            .map(|o| namer.name(c_ident(&o.name)))
            .collect();
        let mut namer = Namer::new();
        let inputs = m
            .inputs
            .iter()
            .map(|o| namer.name(c_ident(&o.name)))
            .collect();
        let actions = m
            .actions
            .iter()
            .map(|o| namer.name(c_ident(&o.name)))
            .collect();
        Names {
            p,
            up,
            states,
            events,
            outputs,
            inputs,
            actions,
        }
    }
}

const SAFETY: &str = " * Safety: this is tool output, not a certified component. For safety functions\n \
                      * follow the applicable functional-safety standard (IEC 61508 or your\n \
                      * sector's) and local codes, and have the design reviewed by qualified people.\n";

fn banner(out: &mut String, file: &str, source_name: &str, m: &Machine) {
    let _ = writeln!(out, "/*");
    let _ = writeln!(
        out,
        " * {file}: machine `{}`, generated by detent from {}.",
        comment_text(&m.name),
        comment_text(source_name)
    );
    let _ = writeln!(
        out,
        " * Do not edit: change the spec and run `detent gen c` again."
    );
    let _ = writeln!(out, " *");
    out.push_str(SAFETY);
    let _ = writeln!(out, " */");
}

/// Generates the C99 header and source of a machine. `source_name` is the spec file
/// named in the banner. The machine should be free of check errors; the code then does
/// exactly what [`Machine::step`] does.
pub fn generate_c(m: &Machine, source_name: &str) -> CFiles {
    let l = Layout::new(m);
    let n = Names::new(m);
    CFiles {
        header: header(m, &l, &n, source_name),
        source: source(m, &l, &n, source_name),
        stem: n.p.clone(),
    }
}

fn header(m: &Machine, l: &Layout, n: &Names, source_name: &str) -> String {
    let (p, up) = (&n.p, &n.up);
    let mut h = String::new();
    banner(&mut h, &format!("{p}.h"), source_name, m);
    let guard = format!("DETENT_{up}_H");
    let _ = writeln!(h, "\n#ifndef {guard}\n#define {guard}\n");
    h.push_str("#include <stdbool.h>\n#include <stdint.h>\n\n");
    h.push_str("#ifdef __cplusplus\nextern \"C\" {\n#endif\n\n");
    if !m.doc.is_empty() {
        let mut doc = vec![format!("Machine `{}`.", m.name), String::new()];
        doc.extend(m.doc.iter().cloned());
        doc_block(&mut h, "", &doc);
        h.push('\n');
    }

    // States.
    let _ = writeln!(
        h,
        "/** States, numbered in declaration order (the numbers of every detent back end). */"
    );
    let _ = writeln!(h, "enum {p}_state {{");
    for (i, (st, cname)) in m.states.iter().zip(&n.states).enumerate() {
        let mut doc = st.doc.clone();
        if st.terminal {
            doc.push("Terminal state.".into());
        }
        if i == m.start.index() {
            doc.push("Start state.".into());
        }
        doc_block(&mut h, "    ", &doc);
        let _ = writeln!(h, "    {cname} = {i},");
    }
    let _ = writeln!(h, "    /** Number of states. */");
    let _ = writeln!(h, "    {up}_STATE_COUNT\n}};\n");

    // Events.
    if m.clocked {
        let _ = writeln!(
            h,
            "/** Events: a clocked machine has the one event `Tick`, one step per clock tick. */"
        );
    } else {
        let _ = writeln!(h, "/** Events, numbered in declaration order. */");
    }
    let _ = writeln!(h, "enum {p}_event {{");
    for (i, (ev, cname)) in m.events.iter().zip(&n.events).enumerate() {
        doc_block(&mut h, "    ", &ev.doc);
        let _ = writeln!(h, "    {cname} = {i},");
    }
    let _ = writeln!(h, "    /** Number of events. */");
    let _ = writeln!(h, "    {up}_EVENT_COUNT\n}};\n");

    // Outputs.
    let _ = writeln!(
        h,
        "/** Output lines after a step: Moore outputs of the new state and Mealy outputs of\n    the rule taken. */"
    );
    let _ = writeln!(h, "struct {p}_outputs {{");
    if m.outputs.is_empty() {
        let _ = writeln!(
            h,
            "    /** The machine has no outputs; C99 needs one member. Always 0. */"
        );
        let _ = writeln!(h, "    uint8_t reserved_;");
    }
    for (o, cname) in m.outputs.iter().zip(&n.outputs) {
        doc_block(&mut h, "    ", &o.doc);
        let _ = writeln!(h, "    bool {cname};");
    }
    let _ = writeln!(h, "}};\n");

    // Hooks.
    let _ = writeln!(
        h,
        "/** Functions the host provides: one per input (read during a step when a guard\n    needs it, at most once per step) and one per action. Each gets the `ctx`\n    pointer passed to `{p}_step`. Hooks must not call `{p}_step` on the\n    same machine. */"
    );
    let _ = writeln!(h, "struct {p}_hooks {{");
    if m.inputs.is_empty() && m.actions.is_empty() {
        let _ = writeln!(
            h,
            "    /** The machine has no inputs and no actions; C99 needs one member. Unused. */"
        );
        let _ = writeln!(h, "    uint8_t reserved_;");
    }
    for (i, cname) in m.inputs.iter().zip(&n.inputs) {
        doc_block(&mut h, "    ", &i.doc);
        let _ = writeln!(h, "    bool (*{cname})(void *ctx);");
    }
    for (a, cname) in m.actions.iter().zip(&n.actions) {
        doc_block(&mut h, "    ", &a.doc);
        let _ = writeln!(h, "    void (*{cname})(void *ctx);");
    }
    let _ = writeln!(h, "}};\n");

    // Machine.
    let st_ty = if m.states.len() <= 256 {
        "uint8_t"
    } else {
        "uint16_t"
    };
    let _ = writeln!(
        h,
        "/** A running machine: the current state number, nothing else. It may be stored\n    (for example in flash) and written back; `{p}_step` rejects a value that is\n    not a state. */"
    );
    let _ = writeln!(h, "struct {p}_machine {{\n    /** The current state (`enum {p}_state`). */\n    {st_ty} state;\n}};\n");

    // Functions.
    let start_name = &n.states[m.start.index()];
    let _ = writeln!(
        h,
        "/** Puts the machine in its start state ({start_name}) without running enter\n    actions. Does nothing when `m` is NULL. */"
    );
    let _ = writeln!(h, "void {p}_init(struct {p}_machine *m);\n");
    let hooks_note = if l.needs_hooks() {
        let mut needed: Vec<&str> = Vec::new();
        for (i, u) in l.inputs_used.iter().enumerate() {
            if *u {
                needed.push(&n.inputs[i]);
            }
        }
        for (i, u) in l.actions_used.iter().enumerate() {
            if *u {
                needed.push(&n.actions[i]);
            }
        }
        wrap(
            &format!(
                "`hooks` must not be NULL, nor may any of these members be NULL: {}.",
                needed.join(", ")
            ),
            "\n * ",
        )
    } else {
        "`hooks` may be NULL: this machine reads no inputs and runs no actions.".to_string()
    };
    let policy = match m.policy {
        crate::syntax::ast::Policy::Reject => "rejected (`unhandled reject`)",
        crate::syntax::ast::Policy::Ignore => "ignored (`unhandled ignore`)",
        crate::syntax::ast::Policy::Complete => "ignored (cannot happen in a checked spec)",
    };
    let _ = writeln!(
        h,
        "/**\n * Consumes one event. When a rule fires: its actions run (leave, rule, enter, in\n * the order of the spec), the state changes to its target, and `out` gets the Moore\n * outputs of the new state plus the rule's Mealy outputs. When no rule applies the\n * event is {policy}: nothing runs, the state stays, `out` gets the Moore\n * outputs of the state.\n *\n * {hooks_note}\n *\n * Returns 0 when a rule fired, 1 when the event was ignored or rejected, -1 on a\n * bad argument: `m` or `out` NULL, `ev` out of range, `m->state` not a state\n * (a corrupt stored byte), or missing hooks. On -1 nothing runs, the state is\n * unchanged and `out` (when not NULL) is all false.\n */"
    );
    let _ = writeln!(
        h,
        "int {p}_step(struct {p}_machine *m, enum {p}_event ev,\n    const struct {p}_hooks *hooks, void *ctx, struct {p}_outputs *out);\n"
    );
    let _ = writeln!(
        h,
        "/** The state's name as in the spec, or \"?\" when `s` is not a state. */"
    );
    let _ = writeln!(h, "const char *{p}_state_name(enum {p}_state s);\n");
    let _ = writeln!(
        h,
        "/** The event's name as in the spec, or \"?\" when `ev` is not an event. */"
    );
    let _ = writeln!(h, "const char *{p}_event_name(enum {p}_event ev);\n");
    h.push_str("#ifdef __cplusplus\n}\n#endif\n\n");
    let _ = writeln!(h, "#endif /* {guard} */");
    h
}

fn guard_c(g: &Guard, p: &str) -> String {
    match g {
        Guard::Input(i) => format!("{p}_input_(in, {}u, hooks, ctx)", i.index()),
        Guard::Const(true) => "true".into(),
        Guard::Const(false) => "false".into(),
        Guard::Not(a) => format!("!{}", guard_c(a, p)),
        Guard::And(a, b) => format!("({} && {})", guard_c(a, p), guard_c(b, p)),
        Guard::Or(a, b) => format!("({} || {})", guard_c(a, p), guard_c(b, p)),
    }
}

fn source(m: &Machine, l: &Layout, n: &Names, source_name: &str) -> String {
    let (p, up) = (&n.p, &n.up);
    let mut c = String::new();
    banner(&mut c, &format!("{p}.c"), source_name, m);
    let _ = writeln!(
        c,
        "\n/*\n * Tables (all static const, each in the narrowest type that fits):\n *   {p}_cell_[state][event]  range of candidate transitions (0: none)\n *   {p}_range_[r] .. [r + 1]  the transitions of range r\n *   per transition t: guard id (0: always true), target state, Mealy mask,\n *   and actions {p}_act_[{p}_act_start_[t] .. {p}_act_start_[t + 1]]\n *   {p}_moore_[state]         Moore output mask\n * A step takes the first transition of its cell whose guard holds.\n */\n"
    );
    let _ = writeln!(c, "#include \"{p}.h\"\n\n#include <stddef.h>\n");
    let s_count = m.states.len();
    let e_count = m.events.len();
    let t_rows = l.trans.len().max(1);

    // Cell table.
    let _ = writeln!(
        c,
        "static const {} {p}_cell_[{s_count}][{e_count}] = {{",
        l.range_ty.0
    );
    for (si, row) in l.cell.chunks(e_count.max(1)).enumerate() {
        let _ = writeln!(c, "    /* {} */ {{", comment_text(&m.states[si].name));
        let vals: Vec<u64> = row.iter().map(|&v| v as u64).collect();
        let mut body = String::new();
        number_rows(&mut body, &vals, false);
        for line in body.lines() {
            let _ = writeln!(c, "    {line}");
        }
        let _ = writeln!(c, "    }},");
    }
    let _ = writeln!(c, "}};\n");
    let vals: Vec<u64> = l.range_start.iter().map(|&v| v as u64).collect();
    let _ = writeln!(
        c,
        "static const {} {p}_range_[{}] = {{",
        l.trans_ty.0,
        vals.len()
    );
    number_rows(&mut c, &vals, false);
    let _ = writeln!(c, "}};\n");
    if l.trans.is_empty() {
        let _ = writeln!(
            c,
            "/* The machine has no transitions; one unused row keeps the arrays non-empty. */"
        );
    }
    if l.has_guards() {
        let mut vals: Vec<u64> = l.trans.iter().map(|t| t.guard as u64).collect();
        vals.resize(t_rows, 0);
        let _ = writeln!(c, "static const {} {p}_guard_[{t_rows}] = {{", l.guard_ty.0);
        number_rows(&mut c, &vals, false);
        let _ = writeln!(c, "}};\n");
    }
    let mut vals: Vec<u64> = l.trans.iter().map(|t| t.target.0 as u64).collect();
    vals.resize(t_rows, 0);
    let _ = writeln!(
        c,
        "static const {} {p}_target_[{t_rows}] = {{",
        l.target_ty.0
    );
    number_rows(&mut c, &vals, false);
    let _ = writeln!(c, "}};\n");
    let word_ty = uint_for(if l.out_word_bits == 64 {
        u64::MAX
    } else {
        (1u64 << l.out_word_bits) - 1
    })
    .0;
    let w = l.out_words;
    let _ = writeln!(
        c,
        "/* All outputs low: the Mealy mask of no rule, and the outputs of a bad call. */"
    );
    let zeros = vec!["0x0u"; w.max(1)].join(", ");
    let _ = writeln!(
        c,
        "static const {word_ty} {p}_zero_[{}] = {{ {zeros} }};\n",
        w.max(1)
    );
    if l.has_mealy() {
        let _ = writeln!(c, "static const {word_ty} {p}_mealy_[{t_rows}][{w}] = {{");
        let zero = vec![0u64; w];
        let rows = l
            .trans
            .iter()
            .map(|t| &t.mealy)
            .chain(std::iter::repeat_n(&zero, t_rows - l.trans.len()));
        for row in rows {
            let cells: Vec<String> = row.iter().map(|v| format!("0x{v:x}u")).collect();
            let _ = writeln!(c, "    {{ {} }},", cells.join(", "));
        }
        let _ = writeln!(c, "}};\n");
    }
    if w > 0 {
        let _ = writeln!(c, "static const {word_ty} {p}_moore_[{s_count}][{w}] = {{");
        for (si, row) in l.moore.iter().enumerate() {
            let cells: Vec<String> = row.iter().map(|v| format!("0x{v:x}u")).collect();
            let _ = writeln!(
                c,
                "    {{ {} }}, /* {} */",
                cells.join(", "),
                comment_text(&m.states[si].name)
            );
        }
        let _ = writeln!(c, "}};\n");
    }
    let has_actions = !l.act_list.is_empty();
    if has_actions {
        let mut vals: Vec<u64> = l.act_start.iter().map(|&v| v as u64).collect();
        let last = *vals.last().unwrap_or(&0);
        vals.resize(t_rows + 1, last);
        let _ = writeln!(
            c,
            "static const {} {p}_act_start_[{}] = {{",
            l.act_start_ty.0,
            t_rows + 1
        );
        number_rows(&mut c, &vals, false);
        let _ = writeln!(c, "}};\n");
        let vals: Vec<u64> = l.act_list.iter().map(|a| a.0 as u64).collect();
        let _ = writeln!(
            c,
            "static const {} {p}_act_[{}] = {{",
            l.action_ty.0,
            vals.len()
        );
        number_rows(&mut c, &vals, false);
        let _ = writeln!(c, "}};\n");
    }

    // Names.
    let _ = writeln!(
        c,
        "static const char *const {p}_state_names_[{s_count}] = {{"
    );
    for st in &m.states {
        let _ = writeln!(c, "    {},", c_string(&st.name));
    }
    let _ = writeln!(c, "}};\n");
    let _ = writeln!(
        c,
        "static const char *const {p}_event_names_[{e_count}] = {{"
    );
    for ev in &m.events {
        let _ = writeln!(c, "    {},", c_string(&ev.name));
    }
    let _ = writeln!(c, "}};\n");

    // Output writer.
    let _ = writeln!(
        c,
        "static void {p}_put_outputs_(const {word_ty} *moore, const {word_ty} *mealy,\n    struct {p}_outputs *out)\n{{"
    );
    if w == 0 {
        let _ = writeln!(
            c,
            "    (void)moore;\n    (void)mealy;\n    out->reserved_ = 0u;"
        );
    }
    for (i, cname) in n.outputs.iter().enumerate() {
        let k = i / l.out_word_bits;
        let bit = 1u64 << (i % l.out_word_bits);
        let _ = writeln!(
            c,
            "    out->{cname} = ((moore[{k}] | mealy[{k}]) & 0x{bit:x}u) != 0u;"
        );
    }
    let _ = writeln!(c, "}}\n");

    // Inputs.
    let used_inputs = l.inputs_used.iter().any(|&b| b);
    if used_inputs {
        let cache_ty = if m.inputs.len() <= 32 {
            "uint32_t"
        } else {
            "uint64_t"
        };
        let _ = writeln!(
            c,
            "/* Inputs read so far in this step: each is read once, then its value is reused. */\nstruct {p}_inputs_ {{\n    {cache_ty} known;\n    {cache_ty} value;\n}};\n"
        );
        let _ = writeln!(
            c,
            "static bool {p}_input_(struct {p}_inputs_ *in, unsigned int i,\n    const struct {p}_hooks *hooks, void *ctx)\n{{\n    const {cache_ty} bit = ({cache_ty})1u << i;\n    if ((in->known & bit) == 0u) {{\n        bool v = false;\n        switch (i) {{"
        );
        for (i, cname) in n.inputs.iter().enumerate() {
            if l.inputs_used[i] {
                let _ = writeln!(
                    c,
                    "        case {i}u:\n            v = hooks->{cname}(ctx);\n            break;"
                );
            }
        }
        let _ = writeln!(
            c,
            "        default:\n            break;\n        }}\n        in->known |= bit;\n        if (v) {{\n            in->value |= bit;\n        }}\n    }}\n    return (in->value & bit) != 0u;\n}}\n"
        );
    }
    if l.has_guards() {
        let in_param = if used_inputs {
            format!("struct {p}_inputs_ *in, ")
        } else {
            String::new()
        };
        let _ = writeln!(
            c,
            "static bool {p}_guard_holds_(unsigned int g, {in_param}const struct {p}_hooks *hooks,\n    void *ctx)\n{{"
        );
        if !used_inputs {
            let _ = writeln!(c, "    (void)hooks;\n    (void)ctx;");
        }
        let _ = writeln!(c, "    switch (g) {{");
        for (i, g) in l.guards.iter().enumerate() {
            let _ = writeln!(c, "    case {}u:\n        return {};", i + 1, guard_c(g, p));
        }
        let _ = writeln!(c, "    default:\n        return true;\n    }}\n}}\n");
    }
    if has_actions {
        let _ = writeln!(
            c,
            "static void {p}_run_action_(unsigned int a, const struct {p}_hooks *hooks, void *ctx)\n{{\n    switch (a) {{"
        );
        for (i, cname) in n.actions.iter().enumerate() {
            if l.actions_used[i] {
                let _ = writeln!(
                    c,
                    "    case {i}u:\n        hooks->{cname}(ctx);\n        break;"
                );
            }
        }
        let _ = writeln!(c, "    default:\n        break;\n    }}\n}}\n");
    }
    if l.needs_hooks() {
        let _ = writeln!(
            c,
            "static bool {p}_hooks_ok_(const struct {p}_hooks *hooks)\n{{\n    if (hooks == NULL) {{\n        return false;\n    }}"
        );
        for (i, cname) in n.inputs.iter().enumerate() {
            if l.inputs_used[i] {
                let _ = writeln!(
                    c,
                    "    if (hooks->{cname} == NULL) {{\n        return false;\n    }}"
                );
            }
        }
        for (i, cname) in n.actions.iter().enumerate() {
            if l.actions_used[i] {
                let _ = writeln!(
                    c,
                    "    if (hooks->{cname} == NULL) {{\n        return false;\n    }}"
                );
            }
        }
        let _ = writeln!(c, "    return true;\n}}\n");
    }

    // Public functions.
    let st_ty = if m.states.len() <= 256 {
        "uint8_t"
    } else {
        "uint16_t"
    };
    let _ = writeln!(
        c,
        "void {p}_init(struct {p}_machine *m)\n{{\n    if (m != NULL) {{\n        m->state = ({st_ty}){};\n    }}\n}}\n",
        n.states[m.start.index()]
    );
    let zero = format!("{p}_zero_");
    let moore_row = |s: &str| {
        if w > 0 {
            format!("{p}_moore_[{s}]")
        } else {
            zero.clone()
        }
    };
    let mealy_row = |t: &str| {
        if l.has_mealy() {
            format!("{p}_mealy_[{t}]")
        } else {
            zero.clone()
        }
    };
    let _ = writeln!(
        c,
        "int {p}_step(struct {p}_machine *m, enum {p}_event ev,\n    const struct {p}_hooks *hooks, void *ctx, struct {p}_outputs *out)\n{{\n    unsigned int s;\n    unsigned int r;\n    unsigned int t;\n    unsigned int t_end;"
    );
    if used_inputs {
        let _ = writeln!(c, "    struct {p}_inputs_ in;");
    }
    let _ = writeln!(
        c,
        "    if (out == NULL) {{\n        return -1;\n    }}\n    {p}_put_outputs_({zero}, {zero}, out);\n    if (m == NULL || (unsigned int)ev >= (unsigned int){up}_EVENT_COUNT\n        || (unsigned int)m->state >= (unsigned int){up}_STATE_COUNT) {{\n        return -1;\n    }}"
    );
    if l.needs_hooks() {
        let _ = writeln!(
            c,
            "    if (!{p}_hooks_ok_(hooks)) {{\n        return -1;\n    }}"
        );
    } else {
        let _ = writeln!(c, "    (void)hooks;\n    (void)ctx;");
    }
    let _ = writeln!(
        c,
        "    s = (unsigned int)m->state;\n    r = (unsigned int){p}_cell_[s][(unsigned int)ev];\n    t = (unsigned int){p}_range_[r];\n    t_end = (unsigned int){p}_range_[r + 1u];"
    );
    if l.has_guards() {
        let in_arg = if used_inputs { "&in, " } else { "" };
        if used_inputs {
            let _ = writeln!(c, "    in.known = 0u;\n    in.value = 0u;");
        }
        let _ = writeln!(
            c,
            "    while (t < t_end && !{p}_guard_holds_((unsigned int){p}_guard_[t], {in_arg}hooks, ctx)) {{\n        ++t;\n    }}"
        );
    }
    let _ = writeln!(
        c,
        "    if (t >= t_end) {{\n        {p}_put_outputs_({}, {zero}, out);\n        return 1;\n    }}",
        moore_row("s")
    );
    if has_actions {
        let _ = writeln!(
            c,
            "    {{\n        unsigned int a;\n        for (a = (unsigned int){p}_act_start_[t]; a < (unsigned int){p}_act_start_[t + 1u]; ++a) {{\n            {p}_run_action_((unsigned int){p}_act_[a], hooks, ctx);\n        }}\n    }}"
        );
    }
    let _ = writeln!(
        c,
        "    m->state = ({st_ty}){p}_target_[t];\n    {p}_put_outputs_({}, {}, out);\n    return 0;\n}}\n",
        moore_row(&format!("{p}_target_[t]")),
        mealy_row("t")
    );
    let _ = writeln!(
        c,
        "const char *{p}_state_name(enum {p}_state s)\n{{\n    if ((unsigned int)s >= (unsigned int){up}_STATE_COUNT) {{\n        return \"?\";\n    }}\n    return {p}_state_names_[(unsigned int)s];\n}}\n"
    );
    let _ = writeln!(
        c,
        "const char *{p}_event_name(enum {p}_event ev)\n{{\n    if ((unsigned int)ev >= (unsigned int){up}_EVENT_COUNT) {{\n        return \"?\";\n    }}\n    return {p}_event_names_[(unsigned int)ev];\n}}"
    );
    c
}
