//! The C back end: a C99 header and source per machine, table-driven.
//!
//! Names and signatures are those of DESIGN.md ("Generated C"); state and event numbers
//! are the model's declaration-order ids, the same numbers the Rust and Verilog back
//! ends use, so a state byte can be stored by one side and restored by the other.
//!
//! # Method and cost
//!
//! A dense table-driven dispatch, the usual layout for a state-transition table in
//! embedded C (common practice), read off the machine's lowered form
//! ([`crate::model::lower`], the one definition of which rule fires): the step looks
//! up the *range* of transitions of the (state, event) cell, which are the cell's
//! choices in order, and takes the first whose guard holds, as
//! [`crate::model::lower::Lowered::choose`] does. The tables, all `static const` (flash
//! on a microcontroller), each in the narrowest unsigned type that holds its values:
//!
//! - `cell[S][E]`: range id of each (state, event) cell (range 0 is empty). This is
//!   the only table that grows as states x events; cells with the same transitions
//!   share a range.
//! - `range[R + 1]`: first transition of each range; range `r` is
//!   `range[r] .. range[r + 1]`.
//! - per transition (a choice as one cell has it): `guard` id (0: nothing to test),
//!   `target` state, `mealy` output mask and `seq`, its operation sequence: the actions
//!   `act[seq_start[seq] .. seq_start[seq + 1]]` (leave, rule, enter actions in the
//!   order the lowered form gives; equal sequences are stored once).
//! - `moore[S]`: Moore output mask of each state.
//!
//! Guards and actions are `switch` statements over their ids. Inputs are read through
//! the hooks at most once per step, the first time a guard needs them, and kept for the
//! rest of the step, so all guards of one step see one valuation; the guards are the
//! lowered form's tests, evaluated in its order with C's short-circuit `&&` and `||`,
//! so the step reads the same inputs in the same order as the interpreter.
//!
//! Files: `names.rs` (C spellings), `tables.rs` (the tables), `header.rs`,
//! `source.rs`, `text.rs` (comments, literals, the banner).
//!
//! Generation is linear in `S * E` plus the size of the choices and their sequences.

mod header;
mod names;
mod source;
mod tables;
mod text;

pub use names::{c_stem, CNames};

use crate::model::Machine;
use tables::Layout;

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
    /// Transitions: the choices of the distinct cells.
    pub transitions: usize,
    /// Distinct non-trivial guards.
    pub guards: usize,
    /// Entries of the action table (every distinct sequence once).
    pub action_entries: usize,
    /// Distinct operation sequences, the empty one included.
    pub sequences: usize,
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
    if l.has_zero() {
        bytes += t_rows * l.zero_ty.1;
    }
    if m.has_timers() {
        bytes += s * m.timers.len().div_ceil(8);
    }
    bytes += row.max(1) + s * row;
    if l.has_mealy() {
        bytes += t_rows * row;
    }
    if !l.act_list.is_empty() {
        bytes += t_rows * l.seq_ty.1
            + (l.seq_count() + 1) * l.seq_start_ty.1
            + l.act_list.len() * l.action_ty.1;
    }
    TableSizes {
        states: s,
        events: m.events.len(),
        cells: cell_count(m),
        ranges: l.range_start.len() - 1,
        transitions: l.trans.len(),
        guards: l.guards.len(),
        action_entries: l.act_list.len(),
        sequences: l.seq_count(),
        table_bytes: bytes,
        cell_table_bytes: cell_count(m) * l.range_ty.1,
    }
}

/// Generates the C99 header and source of a machine. `source_name` is the spec file
/// named in the banner. The machine should be free of check errors; the code then does
/// exactly what [`Machine::step`] does.
pub fn generate_c(m: &Machine, source_name: &str) -> CFiles {
    let l = Layout::new(m);
    let n = CNames::new(m);
    CFiles {
        header: header::header(m, &l, &n, source_name),
        source: source::source(m, &l, &n, source_name),
        stem: n.p.clone(),
    }
}
