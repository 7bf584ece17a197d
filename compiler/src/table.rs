//! The state table of a machine: `detent table`.
//!
//! One row per (present state, event, rule that can fire), states then events in
//! declaration order, the rules of one (state, event) in lookup order. Rule choice comes
//! from the machine's lowered form ([`crate::model::lower`]): the rows of a (state,
//! event) are the choices of its cell, so inherited group rules and `_` rules appear on
//! every state they govern (the table is the flattened machine), and a rule that can
//! never fire there (an unsatisfiable guard, or valuations always taken before it) has
//! no row.
//!
//! Columns: present state, event, guard (the rule's guard in spec syntax as written,
//! `-` when none), next state, kind, Mealy outputs, actions (the whole sequence the
//! step runs, the choice's operations: leave actions, the rule's, enter actions), and
//! the Moore outputs of the present state.
//!
//! `next` is always the state after the step (for `stay`, the present state's name);
//! `kind` says how it is reached:
//! - `move`: to another state;
//! - `self`: an external self-transition (`=> S` in `S`: leave and enter actions run);
//! - `stay`: an internal transition (no enter/leave actions);
//! - `ignore`, `reject`, `missing`: no rule covers these valuations (`guard` is the
//!   uncovered condition as a sum of disjoint cubes, `-` when no rule exists at all);
//!   `ignore`/`reject` follow the machine's `unhandled` policy, and `missing` is an
//!   `incomplete` error under `unhandled complete`.
//!
//! Formats: [`to_text`] (aligned columns with a header, for a terminal), [`to_json`],
//! and [`to_csv`] (RFC 4180; the interchange form `detent import` reads back, described
//! in `docs/table-csv.md`: it adds declaration rows and one row per state so that the
//! machine can be rebuilt from the file alone).
//!
//! Cost: O(states x events x choices per cell) rows; the uncovered condition of each
//! (state, event) is its cell's `unhandled` region, printed as disjoint cubes.

use crate::model::lower::LookupStep;
use crate::model::{
    Bdd, BddStore, EventId, Guard, Machine, Op, OutputId, Prop, Property, RuleId, StateId,
};
use crate::syntax::ast::{self, DispatchStyle, Expr, Policy, Vis};
use crate::syntax::print::print_expr;
use proc_macro2::Span;
use serde::Serialize;
use std::fmt::Write;

/// How a row's step reaches its next state.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum RowKind {
    /// A rule to another state.
    Move,
    /// A rule back to the present state: an external self-transition.
    SelfLoop,
    /// A `stay` rule: an internal transition.
    Stay,
    /// Uncovered; `unhandled ignore` makes it do nothing.
    Ignore,
    /// Uncovered; `unhandled reject` makes it do nothing and report a rejection.
    Reject,
    /// Uncovered under `unhandled complete`: an `incomplete` error.
    Missing,
}

impl RowKind {
    /// The word shown in the `kind` column.
    pub fn name(self) -> &'static str {
        match self {
            RowKind::Move => "move",
            RowKind::SelfLoop => "self",
            RowKind::Stay => "stay",
            RowKind::Ignore => "ignore",
            RowKind::Reject => "reject",
            RowKind::Missing => "missing",
        }
    }

    /// True for the rows of uncovered valuations.
    pub fn is_unhandled(self) -> bool {
        matches!(self, RowKind::Ignore | RowKind::Reject | RowKind::Missing)
    }
}

/// One row of the state table.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Row {
    /// The present state.
    pub state: StateId,
    /// The event.
    pub event: EventId,
    /// The rule that fires; `None` on an unhandled row.
    pub rule: Option<RuleId>,
    /// The guard in spec syntax (for unhandled rows, the uncovered condition); `None`
    /// when the row holds for every valuation.
    pub guard: Option<String>,
    /// The state after the step.
    pub next: StateId,
    /// How the next state is reached.
    pub kind: RowKind,
    /// The rule's Mealy outputs, ascending.
    pub mealy: Vec<OutputId>,
    /// Every operation the step runs, in order: actions and counter operations.
    pub actions: Vec<Op>,
    /// The present state's Moore outputs, ascending.
    pub moore: Vec<OutputId>,
}

/// The output formats of `detent table`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TableFormat {
    /// Aligned columns for a terminal.
    Text,
    /// One JSON object.
    Json,
    /// RFC 4180 CSV, the form `detent import` reads.
    Csv,
}

impl TableFormat {
    /// Looks a format up by its command-line name (`text`, `json`, `csv`).
    pub fn from_name(name: &str) -> Option<TableFormat> {
        match name {
            "text" => Some(TableFormat::Text),
            "json" => Some(TableFormat::Json),
            "csv" => Some(TableFormat::Csv),
            _ => None,
        }
    }
}

/// Renders the table in a format.
pub fn render(m: &Machine, format: TableFormat) -> String {
    match format {
        TableFormat::Text => to_text(m),
        TableFormat::Json => to_json(m),
        TableFormat::Csv => to_csv(m),
    }
}

/// The rows of the state table, states then events in declaration order.
pub fn rows(m: &Machine) -> Vec<Row> {
    let lowered = &m.lowered;
    let unhandled = match m.policy {
        Policy::Complete => RowKind::Missing,
        Policy::Ignore => RowKind::Ignore,
        Policy::Reject => RowKind::Reject,
    };
    let mut out = Vec::new();
    for si in 0..m.states.len() {
        let s = StateId::from_index(si);
        let moore = lowered.outputs(lowered.moore(s));
        for ei in 0..m.events.len() {
            let e = EventId::from_index(ei);
            let cell = lowered.cell_of(s, e);
            for choice in &cell.choices {
                let rule = &m.rules[choice.rule.index()];
                let kind = if !choice.moves {
                    RowKind::Stay
                } else if choice.target == s {
                    RowKind::SelfLoop
                } else {
                    RowKind::Move
                };
                out.push(Row {
                    state: s,
                    event: e,
                    rule: Some(choice.rule),
                    guard: choice_guard(m, rule, choice.step),
                    next: choice.target,
                    kind,
                    mealy: lowered.outputs(choice.mealy).to_vec(),
                    actions: lowered.seq(choice.ops).to_vec(),
                    moore: moore.to_vec(),
                });
            }
            let (store, uncovered) = uncovered_region(m, cell);
            if !uncovered.is_false() {
                out.push(Row {
                    state: s,
                    event: e,
                    rule: None,
                    guard: (!uncovered.is_true()).then(|| cubes_text(m, &store, uncovered)),
                    next: s,
                    kind: unhandled,
                    mealy: Vec::new(),
                    actions: Vec::new(),
                    moore: moore.to_vec(),
                });
            }
        }
    }
    out
}

/// Where no rule of `cell` fires, over the inputs and (when its guards compare
/// counters) the counter comparisons: the union, over the combinations of comparison
/// values some counter values give, of that combination with its variant's unhandled
/// region (nothing due). Without comparisons, the cell's `unhandled` region in the
/// machine's own store.
fn uncovered_region<'m>(
    m: &'m Machine,
    cell: &crate::model::lower::Cell,
) -> (std::borrow::Cow<'m, BddStore>, Bdd) {
    if cell.atoms.is_empty() {
        return (std::borrow::Cow::Borrowed(&m.bdd), cell.unhandled);
    }
    let mut store = m.bdd.clone();
    let mut out = Bdd::FALSE;
    for v in cell.variants.iter().filter(|v| v.due.is_empty()) {
        let mut cube = v.unhandled;
        for (&a, &value) in cell.atoms.iter().zip(&v.atoms) {
            let x = store.var(crate::model::Atom::var(a));
            let lit = if value { x } else { store.not(x) };
            cube = store.and(cube, lit);
        }
        out = store.or(out, cube);
    }
    let feasible = store.and(out, m.atom_domain);
    (std::borrow::Cow::Owned(store), feasible)
}

/// The guard column of a choice's row: the guard as written; `else` for an `else`
/// rule; `preempt GUARD` (or `preempt`) for a preempt rule, whose valuations the rows
/// after it in the same state and event never take.
///
/// A timeout rule's guard column is `after D` (`after D in GROUP` for a group's
/// timeout), then ` if GUARD` when it has a guard: the row applies only on the
/// time-base event that brings the scope's timer to `D`.
fn choice_guard(m: &Machine, rule: &crate::model::Rule, step: LookupStep) -> Option<String> {
    let guard = rule.guard_expr.as_ref().map(|g| guard_text(m, g));
    if let crate::model::Trigger::After(d) = rule.trigger {
        let mut text = format!("after {}", m.duration_text(d));
        if let crate::model::Scope::Group(g) = rule.scope {
            let _ = write!(text, " in {}", m.groups[g.index()].name);
        }
        if let Some(g) = guard {
            let _ = write!(text, " if {g}");
        }
        return Some(text);
    }
    if step == LookupStep::Preempt {
        return Some(match guard {
            Some(g) => format!("preempt {g}"),
            None => "preempt".into(),
        });
    }
    if rule.otherwise {
        return Some("else".into());
    }
    guard
}

fn ident(name: &str) -> ast::Ident {
    ast::Ident {
        name: name.to_owned(),
        span: Span::call_site(),
    }
}

use crate::minimize::machine::guard_expr;

/// A guard in spec syntax, with the parentheses its structure needs (the syntax
/// printer's rules: `!` binds tighter than `&&`, `&&` than `||`).
pub fn guard_text(m: &Machine, g: &Guard) -> String {
    print_expr(&guard_expr(m, g))
}

/// A BDD over inputs in spec syntax, as a disjunction of its disjoint cubes (literals in
/// input order): `!a || a && !b`. `true` and `false` for the constants.
pub fn bdd_text(m: &Machine, f: Bdd) -> String {
    cubes_text(m, &m.bdd, f)
}

fn cubes_text(m: &Machine, store: &BddStore, f: Bdd) -> String {
    if f.is_false() {
        return "false".into();
    }
    if f.is_true() {
        return "true".into();
    }
    let cubes: Vec<String> = store
        .cubes(f)
        .into_iter()
        .map(|cube| {
            cube.iter()
                .map(|&(v, value)| {
                    if let Some(a) = m.atom_of_var(v) {
                        // A comparison, or its opposite.
                        let atom = &m.atoms[a.index()];
                        let cmp = if value { atom.cmp } else { atom.cmp.negated() };
                        return format!(
                            "{} {} {}",
                            m.counters[atom.counter.index()].name,
                            cmp.symbol(),
                            atom.value
                        );
                    }
                    let name = &m.inputs[v as usize].name;
                    if value {
                        name.clone()
                    } else {
                        format!("!{name}")
                    }
                })
                .collect::<Vec<_>>()
                .join(" && ")
        })
        .collect();
    cubes.join(" || ")
}

fn prop_expr(m: &Machine, p: &Prop) -> Expr {
    let sp = Span::call_site();
    match p {
        Prop::Input(i) => Expr::Name(ident(&m.inputs[i.index()].name)),
        Prop::Output(o) => Expr::Name(ident(&m.outputs[o.index()].name)),
        Prop::Action(a) => Expr::Name(ident(&m.actions[a.index()].name)),
        Prop::Event(e) => Expr::Name(ident(m.event_name(*e))),
        Prop::Compare(c, cmp, v) => Expr::Compare {
            name: ident(&m.counters[c.index()].name),
            cmp: *cmp,
            value: u64::from(*v),
            value_span: sp,
        },
        Prop::InState(s) => Expr::In(ident(m.state_name(*s))),
        Prop::InGroup(g) => {
            // Flattened: `in G` is "in one of G's states", joined as a balanced tree so
            // that printing a group of 65,535 states does not recurse 65,535 deep.
            let states = &m.groups[g.index()].states;
            if states.is_empty() {
                Expr::Const(false, sp)
            } else {
                crate::syntax::ast::balanced(
                    states
                        .iter()
                        .map(|&s| Expr::In(ident(m.state_name(s))))
                        .collect(),
                    Expr::Or,
                )
            }
        }
        Prop::Const(b) => Expr::Const(*b, sp),
        Prop::Not(a) => Expr::Not(Box::new(prop_expr(m, a)), sp),
        Prop::And(a, b) => Expr::And(Box::new(prop_expr(m, a)), Box::new(prop_expr(m, b))),
        Prop::Or(a, b) => Expr::Or(Box::new(prop_expr(m, a)), Box::new(prop_expr(m, b))),
    }
}

/// A `never` property in spec syntax over states only: `in G` for a group becomes the
/// disjunction of `in S` over the group's states, so that it survives flattening.
pub fn flat_prop_text(m: &Machine, p: &Prop) -> String {
    print_expr(&prop_expr(m, p))
}

fn output_names<'a>(m: &'a Machine, list: &[OutputId]) -> Vec<&'a str> {
    list.iter()
        .map(|o| m.outputs[o.index()].name.as_str())
        .collect()
}

fn action_names(m: &Machine, list: &[Op]) -> Vec<String> {
    list.iter().map(|op| m.op_text(op)).collect()
}

fn refs(list: &[String]) -> Vec<&str> {
    list.iter().map(String::as_str).collect()
}

fn terminal_states(m: &Machine) -> Vec<&str> {
    m.states
        .iter()
        .filter(|s| s.terminal)
        .map(|s| s.name.as_str())
        .collect()
}

/// The table as aligned text columns with a title line and a header, for a terminal.
/// Lists are joined with `, `; an empty cell shows `-`.
pub fn to_text(m: &Machine) -> String {
    let mut out = String::new();
    let mut title = Vec::new();
    if m.clocked {
        title.push("clocked".to_string());
    }
    title.push(format!("start {}", m.state_name(m.start)));
    title.push(format!("unhandled {}", m.policy.keyword()));
    let terminal = terminal_states(m);
    if !terminal.is_empty() {
        title.push(format!("terminal {}", terminal.join(", ")));
    }
    let _ = writeln!(out, "machine {} ({})", m.name, title.join(", "));

    let cell = |list: Vec<&str>| {
        if list.is_empty() {
            "-".to_string()
        } else {
            list.join(", ")
        }
    };
    // `moore` is labelled with the state whose outputs it shows: the present state's,
    // where `run` prints the outputs after each step (those of `next`).
    let header = [
        "state",
        "event",
        "guard",
        "next",
        "kind",
        "mealy",
        "actions",
        MOORE_HEADER,
    ];
    let mut table: Vec<[String; 8]> = vec![header.map(str::to_string)];
    for r in rows(m) {
        table.push([
            m.state_name(r.state).to_string(),
            m.event_name(r.event).to_string(),
            r.guard.clone().unwrap_or_else(|| "-".into()),
            m.state_name(r.next).to_string(),
            r.kind.name().to_string(),
            cell(output_names(m, &r.mealy)),
            cell(refs(&action_names(m, &r.actions))),
            cell(output_names(m, &r.moore)),
        ]);
    }
    let mut widths = [0usize; 8];
    for row in &table {
        for (w, c) in widths.iter_mut().zip(row) {
            *w = (*w).max(c.chars().count());
        }
    }
    for row in &table {
        let mut line = String::new();
        for (i, c) in row.iter().enumerate() {
            if i > 0 {
                line.push_str("  ");
            }
            line.push_str(c);
            if i + 1 < row.len() {
                line.extend(std::iter::repeat_n(' ', widths[i] - c.chars().count()));
            }
        }
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out.push_str(MOORE_LEGEND);
    out.push('\n');
    out
}

/// The header of the text table's last column: the Moore outputs of `state`.
pub const MOORE_HEADER: &str = "moore(state)";

/// The line under the text table that says what [`MOORE_HEADER`] shows.
pub const MOORE_LEGEND: &str = "moore(state): the Moore outputs of the present state `state`; \
     after the step the outputs are those of `next` (as `run` prints them)";

/// The state table as the JSON of `table --format json`.
#[derive(Debug, Serialize)]
pub struct TableReport {
    /// The machine's name.
    pub machine: String,
    /// True for a clocked machine.
    pub clocked: bool,
    /// The start state.
    pub start: String,
    /// The `unhandled` policy.
    pub unhandled: &'static str,
    /// The terminal states.
    pub terminal: Vec<String>,
    /// The rows, states then events in declaration order.
    pub rows: Vec<RowEntry>,
}

/// One row of [`TableReport`].
#[derive(Debug, Serialize)]
pub struct RowEntry {
    /// The present state.
    pub state: String,
    /// The event.
    pub event: String,
    /// The guard in spec syntax; `null` when the row holds for every valuation.
    pub guard: Option<String>,
    /// The state after the step.
    pub next: String,
    /// `move`, `self`, `stay`, `ignore`, `reject` or `missing`.
    pub kind: &'static str,
    /// Mealy outputs.
    pub mealy: Vec<String>,
    /// Actions, in order.
    pub actions: Vec<String>,
    /// Moore outputs of the present state.
    pub moore: Vec<String>,
}

impl TableReport {
    /// The table of machine `m`.
    pub fn new(m: &Machine) -> TableReport {
        let owned = |names: Vec<&str>| names.into_iter().map(str::to_owned).collect();
        TableReport {
            machine: m.name.clone(),
            clocked: m.clocked,
            start: m.state_name(m.start).to_string(),
            unhandled: m.policy.keyword(),
            terminal: owned(terminal_states(m)),
            rows: rows(m)
                .iter()
                .map(|r| RowEntry {
                    state: m.state_name(r.state).to_string(),
                    event: m.event_name(r.event).to_string(),
                    guard: r.guard.clone(),
                    next: m.state_name(r.next).to_string(),
                    kind: r.kind.name(),
                    mealy: owned(output_names(m, &r.mealy)),
                    actions: owned(refs(&action_names(m, &r.actions))),
                    moore: owned(output_names(m, &r.moore)),
                })
                .collect(),
        }
    }
}

/// The table as one JSON object ([`TableReport`]): `{"machine":..,"clocked":..,
/// "start":..,"unhandled":..,"terminal":[..],"rows":[{"state":..,"event":..,
/// "guard":..|null,"next":..,"kind":..,"mealy":[..],"actions":[..],"moore":[..]}, ..]}`,
/// followed by a newline.
pub fn to_json(m: &Machine) -> String {
    let mut out = crate::report::to_json(&TableReport::new(m));
    out.push('\n');
    out
}

/// A CSV writer into memory (the `csv` crate), as RFC 4180 asks: CRLF record ends,
/// fields quoted only when they hold a comma, a quote or a line break (quotes inside
/// doubled).
struct CsvOut(csv::Writer<Vec<u8>>);

impl CsvOut {
    fn new() -> CsvOut {
        CsvOut(
            csv::WriterBuilder::new()
                .terminator(csv::Terminator::CRLF)
                .quote_style(csv::QuoteStyle::Necessary)
                .from_writer(Vec::new()),
        )
    }

    fn record(&mut self, fields: [&str; 7]) {
        // Writing into a `Vec` cannot fail.
        let _ = self.0.write_record(fields);
    }

    fn decl(&mut self, key: &str, value: &str) {
        self.record([key, value, "", "", "", "", ""]);
    }

    fn finish(self) -> String {
        let bytes = self.0.into_inner().unwrap_or_default();
        String::from_utf8(bytes).unwrap_or_default()
    }
}

/// The table as RFC 4180 CSV (CRLF line ends), self-sufficient for `detent import`; the
/// format is specified in `docs/table-csv.md`. In brief: the header
/// `state,event,guard,next,mealy,actions,moore`; declaration rows whose `state` field is
/// `@machine`, `@events`, `@inputs`, `@outputs`, `@actions`, `@start`, `@unhandled`,
/// `@never`, `@recover` (and `@vis`, `@dispatch`, `@minimize` when not the default),
/// value in the `event` field; then per state a state row (empty `event`; `next` is
/// `terminal` or empty; `moore` its Moore outputs) followed by its rule rows (`next` is
/// `stay` for an internal transition). Lists are joined by one space. Unhandled rows are
/// left out: the `@unhandled` row says what they do.
pub fn to_csv(m: &Machine) -> String {
    let mut out = CsvOut::new();
    out.record([
        "state", "event", "guard", "next", "mealy", "actions", "moore",
    ]);
    let join = |names: Vec<&str>| names.join(" ");
    out.decl("@machine", &m.name);
    match m.vis {
        Vis::Private => {}
        Vis::Pub => out.decl("@vis", "pub"),
        Vis::PubCrate => out.decl("@vis", "pub(crate)"),
    }
    if m.dispatch == DispatchStyle::Match {
        out.decl("@dispatch", "match");
    }
    if m.minimize {
        out.decl("@minimize", "");
    }
    if !m.clocked {
        out.decl(
            "@events",
            &join(m.events.iter().map(|e| e.name.as_str()).collect()),
        );
    }
    out.decl(
        "@inputs",
        &join(m.inputs.iter().map(|e| e.name.as_str()).collect()),
    );
    out.decl(
        "@outputs",
        &join(m.outputs.iter().map(|e| e.name.as_str()).collect()),
    );
    out.decl(
        "@actions",
        &join(m.actions.iter().map(|e| e.name.as_str()).collect()),
    );
    if !m.counters.is_empty() {
        out.decl(
            "@counters",
            &m.counters
                .iter()
                .map(|c| format!("{} to {}", c.name, c.max))
                .collect::<Vec<_>>()
                .join(", "),
        );
    }
    out.decl("@start", m.state_name(m.start));
    out.decl("@unhandled", m.policy.keyword());
    if let Some(tb) = &m.timebase {
        let mut text = if m.clocked {
            String::new()
        } else {
            m.event_name(tb.event).to_owned()
        };
        if let Some(p) = tb.period_us {
            if !text.is_empty() {
                text.push(' ');
            }
            text.push_str(&crate::model::format_us(p));
        }
        out.decl("@timebase", &text);
    }
    for p in &m.properties {
        match p {
            Property::Never { prop, .. } => out.decl("@never", &flat_prop_text(m, prop)),
            Property::Ensure {
                response,
                within,
                trigger,
                ..
            } => out.decl(
                "@ensure",
                &format!(
                    "{} within {} after {}",
                    flat_prop_text(m, response),
                    crate::syntax::print::print_within(&crate::minimize::machine::within_ast(
                        m, *within
                    )),
                    flat_prop_text(m, trigger)
                ),
            ),
            Property::Recover { target, except, .. } => {
                let mut text = m.state_name(*target).to_string();
                if !except.is_empty() {
                    let names: Vec<&str> = except.iter().map(|s| m.state_name(*s)).collect();
                    let _ = write!(text, " except {}", names.join(", "));
                }
                out.decl("@recover", &text);
            }
        }
    }
    let all = rows(m);
    let mut next_row = all.iter().peekable();
    for (si, st) in m.states.iter().enumerate() {
        let s = StateId::from_index(si);
        let moore = join(output_names(m, &st.moore));
        out.record([
            &st.name,
            "",
            "",
            if st.terminal { "terminal" } else { "" },
            "",
            "",
            &moore,
        ]);
        while let Some(r) = next_row.next_if(|r| r.state == s) {
            if r.kind.is_unhandled() {
                continue;
            }
            let next = if r.kind == RowKind::Stay {
                "stay"
            } else {
                m.state_name(r.next)
            };
            out.record([
                &st.name,
                m.event_name(r.event),
                r.guard.as_deref().unwrap_or(""),
                next,
                &join(output_names(m, &r.mealy)),
                &join(refs(&action_names(m, &r.actions))),
                &moore,
            ]);
        }
    }
    out.finish()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::{machine, GATE};

    /// Guards (printed back in spec syntax), partly covered pairs under `unhandled
    /// ignore`, an inherited group rule and Moore output, a terminal state, and
    /// properties (`in Wet` flattened to its states in the CSV).
    const TANK: &str = "
        pub machine Tank {
            events Fill, Drain;
            inputs full, leak;
            outputs valve, alarm;
            actions log;
            start Empty;
            unhandled ignore;
            never in Wet && alarm;
            recover to Empty except Broken;

            state Empty {
                Fill if !(full || leak) => Filling;
                Fill if leak && !full => Broken, emit alarm, do log;
            }
            group Wet emit valve {
                Drain => Empty;
                state Filling {
                    Fill if full => stay;
                }
            }
            terminal state Broken emit alarm;
        }";

    #[test]
    fn text_table_of_guards_and_ignored_rest() {
        let m = machine(TANK);
        // Worked by hand: Empty's two Fill guards cover `!full`, so `full` is left to
        // `unhandled ignore`; Filling inherits Wet's Drain rule and Moore output.
        let expected = "\
machine Tank (start Empty, unhandled ignore, terminal Broken)
state    event  guard            next     kind    mealy  actions  moore(state)
Empty    Fill   !(full || leak)  Filling  move    -      -        -
Empty    Fill   leak && !full    Broken   move    alarm  log      -
Empty    Fill   full             Empty    ignore  -      -        -
Empty    Drain  -                Empty    ignore  -      -        -
Filling  Fill   full             Filling  stay    -      -        valve
Filling  Fill   !full            Filling  ignore  -      -        valve
Filling  Drain  -                Empty    move    -      -        valve
Broken   Fill   -                Broken   ignore  -      -        alarm
Broken   Drain  -                Broken   ignore  -      -        alarm
moore(state): the Moore outputs of the present state `state`; after the step the outputs are those of `next` (as `run` prints them)
";
        assert_eq!(to_text(&m), expected);
    }

    #[test]
    fn text_table_of_wildcards_actions_and_reject() {
        let m = machine(GATE);
        // The same steps as the trace test `wildcards_scopes_and_reject`.
        let expected = "\
machine Gate (start Shut, unhandled reject)
state   event  guard  next    kind    mealy  actions                 moore(state)
Shut    Open   -      Ajar    move    -      shut_out                -
Shut    Close  -      Shut    self    -      shut_out, log, shut_in  -
Shut    Knock  -      Shut    stay    -      ring                    -
Shut    Ping   -      Locked  move    -      shut_out, door_out      -
Ajar    Open   -      Ajar    stay    -      -                       busy
Ajar    Close  -      Shut    move    -      shut_in                 busy
Ajar    Knock  -      Ajar    stay    -      ring                    busy
Ajar    Ping   -      Ajar    stay    -      -                       busy
Locked  Open   -      Shut    move    -      door_in, shut_in        -
Locked  Close  -      Locked  reject  -      -                       -
Locked  Knock  -      Locked  reject  -      -                       -
Locked  Ping   -      Locked  reject  -      -                       -
moore(state): the Moore outputs of the present state `state`; after the step the outputs are those of `next` (as `run` prints them)
";
        assert_eq!(to_text(&m), expected);
    }

    #[test]
    fn json_table() {
        let m = machine(TANK);
        let expected = concat!(
            r#"{"machine":"Tank","clocked":false,"start":"Empty","unhandled":"ignore","terminal":["Broken"],"rows":["#,
            r#"{"state":"Empty","event":"Fill","guard":"!(full || leak)","next":"Filling","kind":"move","mealy":[],"actions":[],"moore":[]},"#,
            r#"{"state":"Empty","event":"Fill","guard":"leak && !full","next":"Broken","kind":"move","mealy":["alarm"],"actions":["log"],"moore":[]},"#,
            r#"{"state":"Empty","event":"Fill","guard":"full","next":"Empty","kind":"ignore","mealy":[],"actions":[],"moore":[]},"#,
            r#"{"state":"Empty","event":"Drain","guard":null,"next":"Empty","kind":"ignore","mealy":[],"actions":[],"moore":[]},"#,
            r#"{"state":"Filling","event":"Fill","guard":"full","next":"Filling","kind":"stay","mealy":[],"actions":[],"moore":["valve"]},"#,
            r#"{"state":"Filling","event":"Fill","guard":"!full","next":"Filling","kind":"ignore","mealy":[],"actions":[],"moore":["valve"]},"#,
            r#"{"state":"Filling","event":"Drain","guard":null,"next":"Empty","kind":"move","mealy":[],"actions":[],"moore":["valve"]},"#,
            r#"{"state":"Broken","event":"Fill","guard":null,"next":"Broken","kind":"ignore","mealy":[],"actions":[],"moore":["alarm"]},"#,
            r#"{"state":"Broken","event":"Drain","guard":null,"next":"Broken","kind":"ignore","mealy":[],"actions":[],"moore":["alarm"]}"#,
            "]}\n"
        );
        let got = to_json(&m);
        assert_eq!(got, expected);
        // And it is JSON.
        let v: serde_json::Value = serde_json::from_str(&got).unwrap();
        assert_eq!(v["rows"].as_array().map(Vec::len), Some(9));
    }

    #[test]
    fn csv_tables() {
        let tank = "state,event,guard,next,mealy,actions,moore\r\n\
@machine,Tank,,,,,\r\n\
@vis,pub,,,,,\r\n\
@events,Fill Drain,,,,,\r\n\
@inputs,full leak,,,,,\r\n\
@outputs,valve alarm,,,,,\r\n\
@actions,log,,,,,\r\n\
@start,Empty,,,,,\r\n\
@unhandled,ignore,,,,,\r\n\
@never,in Filling && alarm,,,,,\r\n\
@recover,Empty except Broken,,,,,\r\n\
Empty,,,,,,\r\n\
Empty,Fill,!(full || leak),Filling,,,\r\n\
Empty,Fill,leak && !full,Broken,alarm,log,\r\n\
Filling,,,,,,valve\r\n\
Filling,Fill,full,stay,,,valve\r\n\
Filling,Drain,,Empty,,,valve\r\n\
Broken,,,terminal,,,alarm\r\n";
        assert_eq!(to_csv(&machine(TANK)), tank);
        let gate = "state,event,guard,next,mealy,actions,moore\r\n\
@machine,Gate,,,,,\r\n\
@events,Open Close Knock Ping,,,,,\r\n\
@inputs,,,,,,\r\n\
@outputs,busy,,,,,\r\n\
@actions,log ring door_in door_out shut_in shut_out,,,,,\r\n\
@start,Shut,,,,,\r\n\
@unhandled,reject,,,,,\r\n\
@recover,\"Shut except Locked, Ajar\",,,,,\r\n\
Shut,,,,,,\r\n\
Shut,Open,,Ajar,,shut_out,\r\n\
Shut,Close,,Shut,,shut_out log shut_in,\r\n\
Shut,Knock,,stay,,ring,\r\n\
Shut,Ping,,Locked,,shut_out door_out,\r\n\
Ajar,,,,,,busy\r\n\
Ajar,Open,,stay,,,busy\r\n\
Ajar,Close,,Shut,,shut_in,busy\r\n\
Ajar,Knock,,stay,,ring,busy\r\n\
Ajar,Ping,,stay,,,busy\r\n\
Locked,,,,,,\r\n\
Locked,Open,,Shut,,door_in shut_in,\r\n";
        assert_eq!(to_csv(&machine(GATE)), gate);
    }

    #[test]
    fn clocked_table_and_missing_rows() {
        // A clocked machine has no `@events` row and its event is `Tick`; under
        // `unhandled complete` an uncovered valuation is a `missing` row (the checker
        // reports it as `incomplete`; the table still shows it).
        let m = machine(
            "#[dispatch(match)]
            machine Det {
                inputs bit;
                outputs found;
                start S0;
                state S0 { if bit => S1; }
                state S1 emit found { if bit => S1; if !bit => S0; }
            }",
        );
        assert_eq!(
            to_text(&m),
            "\
machine Det (clocked, start S0, unhandled complete)
state  event  guard  next  kind     mealy  actions  moore(state)
S0     Tick   bit    S1    move     -      -        -
S0     Tick   !bit   S0    missing  -      -        -
S1     Tick   bit    S1    self     -      -        found
S1     Tick   !bit   S0    move     -      -        found
moore(state): the Moore outputs of the present state `state`; after the step the outputs are those of `next` (as `run` prints them)
"
        );
        assert_eq!(
            to_csv(&m),
            "state,event,guard,next,mealy,actions,moore\r\n\
@machine,Det,,,,,\r\n\
@dispatch,match,,,,,\r\n\
@inputs,bit,,,,,\r\n\
@outputs,found,,,,,\r\n\
@actions,,,,,,\r\n\
@start,S0,,,,,\r\n\
@unhandled,complete,,,,,\r\n\
S0,,,,,,\r\n\
S0,Tick,bit,S1,,,\r\n\
S1,,,,,,found\r\n\
S1,Tick,bit,S1,,,found\r\n\
S1,Tick,!bit,S0,,,found\r\n"
        );
    }

    #[test]
    fn guard_and_bdd_text() {
        let m = machine(
            "machine G {
                events E;
                inputs a, b, c;
                start S;
                state S {
                    E if !(a && b) || !c && (a || b) => stay;
                    E if a && b && c => stay;
                }
            }",
        );
        let g0 = m.rules[0].guard_expr.as_ref().unwrap();
        assert_eq!(guard_text(&m, g0), "!(a && b) || !c && (a || b)");
        // The first guard is !(a && b) || ...: its complement is a && b && c (the
        // second rule), one cube.
        let mut store = m.bdd.clone();
        let rest = store.not(m.rules[0].guard);
        assert_eq!(cubes_text(&m, &store, rest), "a && b && c");
        assert_eq!(bdd_text(&m, Bdd::TRUE), "true");
        assert_eq!(bdd_text(&m, Bdd::FALSE), "false");
        // The two rules cover everything: no unhandled row.
        assert!(rows(&m).iter().all(|r| !r.kind.is_unhandled()));
    }

    #[test]
    fn csv_quoting_follows_rfc_4180() {
        // RFC 4180, section 2, rules 6 and 7: fields with commas, quotes or line breaks
        // are enclosed in double quotes, and a quote inside is doubled.
        let field = |f: &str| {
            let mut out = CsvOut::new();
            out.record([f, "", "", "", "", "", ""]);
            out.finish()
        };
        assert_eq!(field("plain"), "plain,,,,,,\r\n");
        assert_eq!(field("a, b"), "\"a, b\",,,,,,\r\n");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\",,,,,,\r\n");
        assert_eq!(field("two\nlines"), "\"two\nlines\",,,,,,\r\n");
        assert_eq!(field("cr\rhere"), "\"cr\rhere\",,,,,,\r\n");
        assert_eq!(field(""), ",,,,,,\r\n");
    }
}
