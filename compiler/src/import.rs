//! `detent import`: a state table in the CSV form of `detent table --format csv`
//! (`docs/table-csv.md`) read back into a spec.
//!
//! Three passes, each linear in the size of the file: an RFC 4180 reader
//! ([`parse_csv`]: quoted fields, doubled quotes, CRLF or LF record ends, a leading
//! UTF-8 byte-order mark skipped, blank records skipped), then a reader of the
//! records (the header, the `@` declaration records, state records, rule records; guard
//! and property fields are read by the spec's own parser,
//! [`crate::syntax::parse_expr_text`]), and last a syntax tree built from them
//! ([`import_csv`]), which [`import_spec`] prints with the spec printer and checks by
//! parsing and resolving the printed text again.
//!
//! The CSV reader is this module's own and not the `csv` crate's (which writes the
//! table, [`crate::table::to_csv`]): the crate reads leniently (a quote inside an
//! unquoted field, text after a closing quote and a lone carriage return are taken as
//! data), where a state table that was damaged must be refused at its row and column.
//!
//! Every problem is an [`ImportError`] naming the record (row, 1-based, the header is
//! row 1; a quoted field with a line break does not start a new row) and the field
//! (column, 1-based: `state` = 1 ... `moore` = 7), as a spreadsheet numbers them. Row 0
//! means the file as a whole. The reader never panics on any input.
//!
//! The rebuilt spec has the table's flattened form: no groups, each state's Moore
//! outputs written on the state, and each rule's `do` list the whole action sequence
//! the step runs (leave, rule, enter actions), with no `enter do`/`leave do`. Its
//! behaviour is the original's: the same next state, outputs and actions for every
//! (state, event, input valuation).

use crate::syntax::ast::{
    Attr, Body, CounterDecl, CounterOpKind, Decl, DeclKind, DispatchStyle, DocIdent, Expr, File,
    Ident, MachineAst, Member, OpAst, Policy, RuleAst, StateAst, Target, Trigger, Vis, Within,
};
use proc_macro2::Span;
use std::collections::HashMap;

/// Why a CSV table cannot be imported, and where.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("{}", self.describe())]
pub struct ImportError {
    /// The record, 1-based (the header is row 1); 0 for the file as a whole.
    pub row: usize,
    /// The field, 1-based (`state` = 1 ... `moore` = 7); 0 when no one field is at fault.
    pub column: usize,
    /// What is wrong.
    pub message: String,
}

impl ImportError {
    /// `row R, column C (name): message`, as much of the place as is known.
    fn describe(&self) -> String {
        match (self.row, self.column) {
            (0, _) => self.message.clone(),
            (r, 0) => format!("row {r}: {}", self.message),
            (r, c) => format!("row {r}, column {c} ({}): {}", column_name(c), self.message),
        }
    }
}

/// The header record, field by field.
pub const HEADER: [&str; 7] = [
    "state", "event", "guard", "next", "mealy", "actions", "moore",
];

fn column_name(c: usize) -> &'static str {
    HEADER
        .get(c.wrapping_sub(1))
        .copied()
        .unwrap_or("past the last field")
}

fn err<T>(row: usize, column: usize, message: impl Into<String>) -> Result<T, ImportError> {
    Err(ImportError {
        row,
        column,
        message: message.into(),
    })
}

/// One CSV record and its row number.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Record {
    /// The row, 1-based.
    pub row: usize,
    /// The fields, unquoted.
    pub fields: Vec<String>,
}

/// Splits RFC 4180 text into records. Accepts CRLF and LF record ends (a lone CR is an
/// error) and a leading byte-order mark; skips records whose fields are all empty. A
/// quote inside an unquoted field, text after a closing quote, and an unclosed quoted
/// field are errors.
pub fn parse_csv(text: &str) -> Result<Vec<Record>, ImportError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut records = Vec::new();
    let mut chars = text.chars().peekable();
    let mut row = 1;
    let mut fields: Vec<String> = Vec::new();
    let mut field = String::new();
    // Whether the current record has begun (so that a final record end adds nothing).
    let mut in_record = false;
    loop {
        let column = fields.len() + 1;
        match chars.next() {
            None => {
                if in_record {
                    fields.push(std::mem::take(&mut field));
                    push_record(&mut records, row, std::mem::take(&mut fields));
                }
                return Ok(records);
            }
            Some('"') if field.is_empty() => {
                in_record = true;
                // A quoted field: up to the closing quote; `""` is one quote.
                loop {
                    match chars.next() {
                        None => {
                            return err(row, column, "a quoted field is not closed before the end of the file")
                        }
                        Some('"') if chars.peek() == Some(&'"') => {
                            chars.next();
                            field.push('"');
                        }
                        Some('"') => break,
                        Some(c) => field.push(c),
                    }
                }
                match chars.peek() {
                    None | Some(',') | Some('\n') | Some('\r') => {}
                    Some(c) => {
                        return err(
                            row,
                            column,
                            format!("`{c}` after the closing quote of a field; a field ends at its closing quote"),
                        )
                    }
                }
                // Mark the field as quoted-and-done: an empty quoted field must not take
                // the `field.is_empty()` branch again.
                fields.push(std::mem::take(&mut field));
                match chars.next() {
                    None => {
                        push_record(&mut records, row, std::mem::take(&mut fields));
                        return Ok(records);
                    }
                    Some(',') => continue,
                    Some(c) => {
                        end_of_line(&mut chars, c, row, fields.len())?;
                        push_record(&mut records, row, std::mem::take(&mut fields));
                        row += 1;
                        in_record = false;
                    }
                }
            }
            Some('"') => {
                return err(
                    row,
                    column,
                    "a quote inside an unquoted field; enclose the field in quotes and double the quote",
                )
            }
            Some(',') => {
                in_record = true;
                fields.push(std::mem::take(&mut field));
            }
            Some(c @ ('\r' | '\n')) => {
                end_of_line(&mut chars, c, row, column)?;
                fields.push(std::mem::take(&mut field));
                push_record(&mut records, row, std::mem::take(&mut fields));
                row += 1;
                in_record = false;
            }
            Some(c) => {
                in_record = true;
                field.push(c);
            }
        }
    }
}

/// Consumes a record end that began with `c` (`\n`, or `\r` that must be followed by
/// `\n`).
fn end_of_line(
    chars: &mut std::iter::Peekable<std::str::Chars>,
    c: char,
    row: usize,
    column: usize,
) -> Result<(), ImportError> {
    if c == '\r' {
        if chars.peek() == Some(&'\n') {
            chars.next();
        } else {
            return err(row, column, "a carriage return not followed by a line feed");
        }
    }
    Ok(())
}

fn push_record(records: &mut Vec<Record>, row: usize, fields: Vec<String>) {
    if fields.iter().any(|f| !f.is_empty()) {
        records.push(Record { row, fields });
    }
}

fn ident(name: &str) -> Ident {
    Ident {
        name: name.to_owned(),
        span: Span::call_site(),
    }
}

/// Checks that `name` is a spec name: a Rust identifier that is not a keyword (nor the
/// reserved `stay`).
fn check_name(name: &str, row: usize, column: usize, what: &str) -> Result<(), ImportError> {
    if name == "stay" || syn::parse_str::<syn::Ident>(name).is_err() {
        return err(
            row,
            column,
            format!("`{name}` is not a valid {what} name (a Rust identifier, not a keyword)"),
        );
    }
    Ok(())
}

/// The names of a list field (items separated by spaces).
fn names(field: &str, row: usize, column: usize, what: &str) -> Result<Vec<String>, ImportError> {
    let list: Vec<String> = field.split_whitespace().map(str::to_owned).collect();
    for n in &list {
        check_name(n, row, column, what)?;
    }
    Ok(list)
}

/// `@counters`: `NAME to MAX, ...` (as `counters` is written in a spec).
fn read_counters(value: &str, row: usize) -> Result<Vec<(String, u64)>, ImportError> {
    let mut out = Vec::new();
    for item in value.split(',').map(str::trim).filter(|x| !x.is_empty()) {
        let words: Vec<&str> = item.split_whitespace().collect();
        let (name, max) = match words.as_slice() {
            [name, "to", max] => (*name, *max),
            _ => {
                return err(
                    row,
                    2,
                    format!("`{item}`: a counter is written `NAME to MAX` (`strikes to 3`)"),
                )
            }
        };
        check_name(name, row, 2, "counter")?;
        let max: u64 = max.parse().map_err(|_| ImportError {
            row,
            column: 2,
            message: format!("`{max}` is not a whole number (counter `{name}`)"),
        })?;
        out.push((name.to_owned(), max));
    }
    Ok(out)
}

/// An `actions` field: whitespace-separated actions and counter operations written
/// without spaces (`strikes+=1`, `strikes-=1`, `strikes=0`), in order.
fn read_ops(field: &str, row: usize, column: usize, n: &Names) -> Result<Vec<OpAst>, ImportError> {
    let mut out = Vec::new();
    for word in field.split_whitespace() {
        let split = ["+=", "-=", "="]
            .iter()
            .find_map(|op| word.split_once(op).map(|(a, b)| (*op, a, b)));
        match split {
            None => {
                check_name(word, row, column, "action")?;
                n.check_list(&[word.to_owned()], &n.actions, "action", row, column)?;
                out.push(OpAst::Action(ident(word)));
            }
            Some((op, name, value)) => {
                check_name(name, row, column, "counter")?;
                n.check_list(&[name.to_owned()], &n.counters, "counter", row, column)?;
                let value: u64 = value.parse().map_err(|_| ImportError {
                    row,
                    column,
                    message: format!("`{word}`: expected a whole number after `{op}`"),
                })?;
                let kind = match op {
                    "+=" => CounterOpKind::Add,
                    "-=" => CounterOpKind::Sub,
                    _ => CounterOpKind::Set,
                };
                out.push(OpAst::Counter {
                    name: ident(name),
                    kind,
                    value,
                    value_span: Span::call_site(),
                });
            }
        }
    }
    Ok(out)
}

/// What a name in an expression may refer to.
#[derive(Clone, Copy, PartialEq, Eq)]
enum ExprKind {
    /// A guard: inputs only.
    Guard,
    /// A `never` property: inputs, outputs, actions, `in STATE`.
    Property,
}

impl ExprKind {
    fn noun(self) -> &'static str {
        match self {
            ExprKind::Guard => "guard",
            ExprKind::Property => "property",
        }
    }
}

/// Reads a guard or `never` property field with the spec's own parser (one grammar
/// for specs and tables); its names are checked against the declarations afterwards.
fn read_expr(text: &str, kind: ExprKind, row: usize, column: usize) -> Result<Expr, ImportError> {
    crate::syntax::parse_expr_text(text, kind == ExprKind::Property).map_err(|e| ImportError {
        row,
        column,
        message: format!("`{text}` is not a valid {}: {}", kind.noun(), e.message),
    })
}

/// The declarations read so far, to check the names that rows use.
struct Names {
    clocked: bool,
    events: Vec<String>,
    inputs: Vec<String>,
    outputs: Vec<String>,
    actions: Vec<String>,
    counters: Vec<String>,
    states: HashMap<String, usize>,
}

impl Names {
    /// Checks every name in an expression; `Property` also allows outputs, actions and
    /// `in STATE`.
    fn check_expr(
        &self,
        e: &Expr,
        kind: ExprKind,
        row: usize,
        column: usize,
    ) -> Result<(), ImportError> {
        match e {
            Expr::Name(n) => {
                let ok = self.inputs.contains(&n.name)
                    || (kind == ExprKind::Property
                        && (self.outputs.contains(&n.name)
                            || self.actions.contains(&n.name)
                            || self.events.contains(&n.name)
                            || (self.clocked && n.name == "Tick")));
                if !ok {
                    let what = if kind == ExprKind::Guard {
                        "input"
                    } else {
                        "event, input, output or action"
                    };
                    return err(
                        row,
                        column,
                        format!("`{}` is not a declared {what}", n.name),
                    );
                }
                Ok(())
            }
            Expr::Compare { name, .. } => {
                if self.counters.contains(&name.name) {
                    Ok(())
                } else {
                    err(
                        row,
                        column,
                        format!("`{}` is not a declared counter (`@counters`)", name.name),
                    )
                }
            }
            Expr::In(s) => {
                if kind == ExprKind::Guard {
                    return err(
                        row,
                        column,
                        "`in STATE` is allowed in properties only, not in guards",
                    );
                }
                if !self.states.contains_key(&s.name) {
                    return err(
                        row,
                        column,
                        format!("`in {}`: no state record lists `{}`", s.name, s.name),
                    );
                }
                Ok(())
            }
            Expr::Const(..) => Ok(()),
            Expr::Not(a, _) | Expr::Paren(a, _) => self.check_expr(a, kind, row, column),
            Expr::And(a, b) | Expr::Or(a, b) => {
                self.check_expr(a, kind, row, column)?;
                self.check_expr(b, kind, row, column)
            }
        }
    }

    fn check_list(
        &self,
        list: &[String],
        declared: &[String],
        what: &str,
        row: usize,
        column: usize,
    ) -> Result<(), ImportError> {
        for n in list {
            if !declared.contains(n) {
                return err(row, column, format!("`{n}` is not a declared {what}"));
            }
        }
        Ok(())
    }
}

/// A duration as the table writes it: `INT UNIT` or `INT` directly followed by its
/// unit (`20 ms`, `20ms`, `5 ticks`).
fn read_duration(
    text: &str,
    row: usize,
    column: usize,
) -> Result<crate::syntax::ast::Duration, ImportError> {
    use crate::syntax::ast::{Duration, TimeUnit};
    let text = text.trim();
    let digits = text
        .find(|c: char| !c.is_ascii_digit())
        .unwrap_or(text.len());
    let (num, unit) = text.split_at(digits);
    let value = num.parse::<u64>().ok();
    let unit = TimeUnit::from_word(unit.trim());
    match (value, unit) {
        (Some(value), Some(unit)) => Ok(Duration {
            value,
            unit,
            span: Span::call_site(),
        }),
        _ => err(
            row,
            column,
            format!("`{text}` is not a duration (`20 ms`, `250 us`, `5 ticks`)"),
        ),
    }
}

/// Declaration keys in the order `docs/table-csv.md` lists them.
const DECLS: [&str; 15] = [
    "@machine",
    "@vis",
    "@dispatch",
    "@minimize",
    "@events",
    "@inputs",
    "@outputs",
    "@actions",
    "@counters",
    "@start",
    "@unhandled",
    "@timebase",
    "@never",
    "@recover",
    "@ensure",
];

/// Reads a CSV state table into a syntax tree with one machine (see the module docs).
pub fn import_csv(text: &str) -> Result<File, ImportError> {
    let records = parse_csv(text)?;
    let Some(header) = records.first() else {
        return err(0, 0, "the file is empty; it must start with the header `state,event,guard,next,mealy,actions,moore`");
    };
    for (i, want) in HEADER.iter().enumerate() {
        match header.fields.get(i) {
            Some(f) if f.trim() == *want => {}
            Some(f) => {
                return err(
                    header.row,
                    i + 1,
                    format!(
                        "the header says `{f}` here; expected `{want}` (the header is `{}`)",
                        HEADER.join(",")
                    ),
                )
            }
            None => {
                return err(
                    header.row,
                    i + 1,
                    format!(
                        "the header stops before `{want}`; it is `{}`",
                        HEADER.join(",")
                    ),
                )
            }
        }
    }
    for r in &records {
        if r.fields.len() != 7 {
            let (column, what) = if r.fields.len() < 7 {
                (r.fields.len() + 1, "the row is truncated")
            } else {
                (8, "the row is too long")
            };
            return err(
                r.row,
                column,
                format!(
                    "{what}: it has {} fields, every row has 7 ({})",
                    r.fields.len(),
                    HEADER.join(",")
                ),
            );
        }
    }
    let body = &records[1..];

    // Declarations: a prefix of `@` records.
    let n_decl = body
        .iter()
        .take_while(|r| r.fields[0].starts_with('@'))
        .count();
    let (decl_rows, rows) = body.split_at(n_decl);
    let mut seen: HashMap<&str, usize> = HashMap::new();
    let mut name = None;
    let mut vis = Vis::Private;
    let mut attrs = Vec::new();
    let mut events: Option<Vec<String>> = None;
    let mut lists: [Option<Vec<String>>; 3] = [None, None, None];
    let mut start: Option<(String, usize)> = None;
    let mut policy = None;
    let mut nevers: Vec<(String, usize)> = Vec::new();
    let mut ensures: Vec<(String, usize)> = Vec::new();
    let mut counters: Vec<(String, u64)> = Vec::new();
    let mut recovers: Vec<(String, usize)> = Vec::new();
    let mut timebase: Option<(String, usize)> = None;
    for r in decl_rows {
        let key = r.fields[0].trim();
        let value = r.fields[1].trim();
        let row = r.row;
        if !DECLS.contains(&key) {
            return err(
                row,
                1,
                format!(
                    "unknown declaration `{key}`; the declarations are {}",
                    DECLS.join(", ")
                ),
            );
        }
        if let Some(c) = (2..7).find(|&c| !r.fields[c].trim().is_empty()) {
            return err(row, c + 1, format!("a `{key}` record has its value in the `event` field and the other fields empty"));
        }
        if key != "@never" && key != "@recover" && key != "@ensure" {
            if let Some(first) = seen.insert(key, row) {
                return err(
                    row,
                    1,
                    format!("`{key}` appears twice (first at row {first})"),
                );
            }
        }
        match key {
            "@machine" => {
                check_name(value, row, 2, "machine")?;
                name = Some(value.to_owned());
            }
            "@vis" => {
                vis = match value {
                    "pub" => Vis::Pub,
                    "pub(crate)" => Vis::PubCrate,
                    _ => {
                        return err(
                            row,
                            2,
                            format!("`@vis` is `pub` or `pub(crate)`, not `{value}`"),
                        )
                    }
                }
            }
            "@dispatch" => match value {
                "match" => attrs.push(Attr::Dispatch(DispatchStyle::Match, Span::call_site())),
                "table" => attrs.push(Attr::Dispatch(DispatchStyle::Table, Span::call_site())),
                _ => {
                    return err(
                        row,
                        2,
                        format!("`@dispatch` is `match` or `table`, not `{value}`"),
                    )
                }
            },
            "@minimize" => {
                if !value.is_empty() {
                    return err(row, 2, "`@minimize` takes no value");
                }
                attrs.push(Attr::Minimize(Span::call_site()));
            }
            "@events" => {
                let list = names(value, row, 2, "event")?;
                if list.is_empty() {
                    return err(
                        row,
                        2,
                        "`@events` lists no event; leave the record out for a clocked machine",
                    );
                }
                events = Some(list);
            }
            "@inputs" | "@outputs" | "@actions" => {
                let i = ["@inputs", "@outputs", "@actions"]
                    .iter()
                    .position(|k| *k == key)
                    .unwrap_or(0);
                lists[i] = Some(names(value, row, 2, &key[1..key.len() - 1])?);
            }
            "@start" => {
                check_name(value, row, 2, "state")?;
                start = Some((value.to_owned(), row));
            }
            "@unhandled" => {
                policy = Some(match value {
                    "complete" => Policy::Complete,
                    "ignore" => Policy::Ignore,
                    "reject" => Policy::Reject,
                    _ => {
                        return err(
                            row,
                            2,
                            format!(
                                "`@unhandled` is `complete`, `ignore` or `reject`, not `{value}`"
                            ),
                        )
                    }
                })
            }
            "@never" => nevers.push((value.to_owned(), row)),
            "@ensure" => ensures.push((value.to_owned(), row)),
            "@counters" => counters = read_counters(value, row)?,
            "@timebase" => timebase = Some((value.to_owned(), row)),
            _ => recovers.push((value.to_owned(), row)),
        }
    }
    let first_row = rows.first().map_or(records.len() + 1, |r| r.row);
    let missing = |key: &str| ImportError {
        row: first_row,
        column: 1,
        message: format!(
            "no `{key}` record before the first state record; the declarations come right \
             after the header"
        ),
    };
    let Some(name) = name else {
        return Err(missing("@machine"));
    };
    let [Some(inputs), Some(outputs), Some(actions)] = lists else {
        let i = lists.iter().position(Option::is_none).unwrap_or(0);
        return Err(missing(["@inputs", "@outputs", "@actions"][i]));
    };
    let Some((start, start_row)) = start else {
        return Err(missing("@start"));
    };
    let Some(policy) = policy else {
        return Err(missing("@unhandled"));
    };
    // Names in one namespace must be distinct.
    let mut declared: HashMap<&str, usize> = HashMap::new();
    let decl_row = |key: &str| seen.get(key).copied().unwrap_or(0);
    let counter_names: Vec<String> = counters.iter().map(|(n, _)| n.clone()).collect();
    for (key, list) in [
        ("@inputs", &inputs),
        ("@outputs", &outputs),
        ("@actions", &actions),
        ("@counters", &counter_names),
    ] {
        for n in list {
            if let Some(first) = declared.insert(n, decl_row(key)) {
                return err(decl_row(key), 2, format!("`{n}` is declared twice (inputs, outputs, actions and counters share one namespace; first at row {first})"));
            }
        }
    }
    if let Some(evs) = &events {
        for (i, e) in evs.iter().enumerate() {
            if evs[..i].contains(e) {
                return err(
                    decl_row("@events"),
                    2,
                    format!("event `{e}` is listed twice"),
                );
            }
        }
    }
    let clocked = events.is_none();
    let mut names_ = Names {
        clocked,
        events: events.clone().unwrap_or_else(|| vec!["Tick".to_owned()]),
        inputs,
        outputs,
        actions,
        counters: counter_names,
        states: HashMap::new(),
    };

    // State records first (any order of rows), so that rule rows may name any state.
    struct StateRec {
        name: String,
        row: usize,
        terminal: bool,
        moore: Vec<String>,
        rules: Vec<RuleAst>,
    }
    let mut states: Vec<StateRec> = Vec::new();
    for r in rows {
        let f = &r.fields;
        let row = r.row;
        if f[0].starts_with('@') {
            return err(row, 1, format!("declaration `{}` after the first state record; declarations come right after the header", f[0]));
        }
        if f[0].trim().is_empty() {
            return err(row, 1, "the `state` field is empty");
        }
        if !f[1].trim().is_empty() {
            continue;
        }
        let st = f[0].trim();
        check_name(st, row, 1, "state")?;
        if let Some(&i) = names_.states.get(st) {
            return err(
                row,
                1,
                format!(
                    "state `{st}` has two state records (first at row {})",
                    states[i].row
                ),
            );
        }
        if let Some(c) = [2usize, 4, 5]
            .into_iter()
            .find(|&c| !f[c].trim().is_empty())
        {
            return err(row, c + 1, format!("a state record (empty `event`) has empty `guard`, `mealy` and `actions` fields; `{}` is here", f[c].trim()));
        }
        let terminal = match f[3].trim() {
            "" => false,
            "terminal" => true,
            other => {
                return err(
                    row,
                    4,
                    format!("a state record's `next` is `terminal` or empty, not `{other}`"),
                )
            }
        };
        let moore = names(&f[6], row, 7, "output")?;
        names_.check_list(&moore, &names_.outputs, "output", row, 7)?;
        names_.states.insert(st.to_owned(), states.len());
        states.push(StateRec {
            name: st.to_owned(),
            row,
            terminal,
            moore,
            rules: Vec::new(),
        });
    }
    if states.is_empty() {
        return err(
            first_row.min(records.len()),
            0,
            "the table has no state records",
        );
    }
    if !names_.states.contains_key(&start) {
        return err(
            start_row,
            2,
            format!("the start state `{start}` has no state record"),
        );
    }
    // `@timebase`: `[EVENT] [PERIOD]`, as `timebase` is written in a spec.
    let mut timebase_decl = None;
    let mut timebase_event: Option<String> = None;
    if let Some((value, row)) = &timebase {
        let mut words: Vec<&str> = value.split_whitespace().collect();
        let event = match words.first() {
            Some(w) if w.starts_with(|c: char| c.is_ascii_alphabetic()) => {
                let w = words.remove(0).to_owned();
                if !names_.events.contains(&w) {
                    return err(
                        *row,
                        2,
                        format!("the time base `{w}` is not a declared event"),
                    );
                }
                Some(w)
            }
            _ => None,
        };
        let period = if words.is_empty() {
            None
        } else {
            Some(read_duration(&words.join(" "), *row, 2)?)
        };
        timebase_event = event
            .clone()
            .or_else(|| names_.clocked.then(|| "Tick".to_owned()));
        timebase_decl = Some(DeclKind::Timebase {
            event: event.map(|e| ident(&e)),
            period,
        });
    }
    let mut preempted: HashMap<(usize, String), Vec<Option<Expr>>> = HashMap::new();
    for r in rows {
        let f = &r.fields;
        let row = r.row;
        let event = f[1].trim();
        if event.is_empty() {
            continue;
        }
        let st = f[0].trim();
        let Some(&si) = names_.states.get(st) else {
            return err(row, 1, format!("state `{st}` has no state record"));
        };
        if !names_.events.iter().any(|e| e == event) {
            let hint = if names_.clocked {
                "this machine is clocked (no `@events` record), so its one event is `Tick`"
                    .to_owned()
            } else {
                format!("the events are {}", names_.events.join(", "))
            };
            return err(row, 2, format!("`{event}` is not a declared event; {hint}"));
        }
        // `preempt GUARD` (or `preempt`): a preempt rule's row, whose valuations the
        // later rows of this state and event leave to it; `else`: an `else` rule's row.
        let field = f[2].trim();
        // `after D` / `after D if GUARD`: a timeout row (`after D in GROUP`: a group's,
        // which a flat table cannot rebuild).
        let (after, field) = match field.strip_prefix("after") {
            Some(rest) if rest.starts_with(char::is_whitespace) => {
                if timebase.is_none() {
                    return err(
                        row,
                        3,
                        "a timeout row (`after ...`) needs a `@timebase` record",
                    );
                }
                let rest = rest.trim();
                let (dur, guard_text) = match rest.find(" if ") {
                    Some(i) => (rest[..i].trim(), rest[i + 4..].trim()),
                    None => (rest, ""),
                };
                if let Some(i) = dur.find(" in ") {
                    return err(
                        row,
                        3,
                        format!(
                            "`{}` is a timeout of group `{}`: the CSV form has no groups, so \
                             it cannot rebuild a group's timer (keep that machine as a spec)",
                            field,
                            dur[i + 4..].trim()
                        ),
                    );
                }
                (Some(read_duration(dur, row, 3)?), guard_text)
            }
            _ => (None, field),
        };
        let (is_preempt, field) = match field.strip_prefix("preempt") {
            Some(rest) if rest.is_empty() || rest.starts_with(char::is_whitespace) => {
                (true, rest.trim())
            }
            _ => (false, field),
        };
        let is_else = field == "else";
        if after.is_some() && (is_else || is_preempt) {
            return err(row, 3, "a timeout row cannot be `else` or `preempt`");
        }
        let mut guard = match field {
            "" | "else" => None,
            g => {
                let e = read_expr(g, ExprKind::Guard, row, 3)?;
                names_.check_expr(&e, ExprKind::Guard, row, 3)?;
                Some(e)
            }
        };
        let taken = preempted.entry((si, event.to_owned())).or_default();
        if is_else && is_preempt {
            return err(
                row,
                3,
                "`preempt else`: a preempt rule cannot be an `else` rule",
            );
        }
        if !is_else {
            // The imported machine has no groups: what a preempt row takes is cut out of
            // the rows after it, so that one state's rules stay exclusive.
            let own = guard.clone();
            for p in taken.iter() {
                let not_p = Expr::Not(
                    Box::new(match p {
                        Some(e) => Expr::Paren(Box::new(e.clone()), Span::call_site()),
                        None => Expr::Const(true, Span::call_site()),
                    }),
                    Span::call_site(),
                );
                guard = Some(match guard {
                    None => not_p,
                    Some(g) => Expr::And(Box::new(g), Box::new(not_p)),
                });
            }
            if is_preempt {
                taken.push(own);
            }
        }
        let target = match f[3].trim() {
            "stay" => Target::Stay(Span::call_site()),
            "" => {
                return err(
                    row,
                    4,
                    "a rule row's `next` is `stay` or a state name; it is empty",
                )
            }
            t if names_.states.contains_key(t) => Target::State(ident(t)),
            t => return err(row, 4, format!("the next state `{t}` has no state record")),
        };
        let mealy = names(&f[4], row, 5, "output")?;
        names_.check_list(&mealy, &names_.outputs, "output", row, 5)?;
        let acts = read_ops(&f[5], row, 6, &names_)?;
        let mut moore = names(&f[6], row, 7, "output")?;
        let mut want = states[si].moore.clone();
        moore.sort();
        want.sort();
        if moore != want {
            return err(
                row,
                7,
                format!(
                "the Moore outputs `{}` disagree with the state record of `{st}` (row {}: `{}`)",
                f[6].trim(), states[si].row, states[si].moore.join(" ")
            ),
            );
        }
        if after.is_some() {
            let tb = timebase_event.as_deref().unwrap_or("Tick");
            if event != tb {
                return err(
                    row,
                    2,
                    format!("a timeout row belongs to the time-base event `{tb}`, not `{event}`"),
                );
            }
        }
        states[si].rules.push(RuleAst {
            preempt: None,
            after,
            trigger: (!names_.clocked && after.is_none())
                .then(|| Trigger::Events(vec![ident(event)])),
            otherwise: is_else.then(Span::call_site),
            guard,
            target,
            emit: mealy.iter().map(|n| ident(n)).collect(),
            actions: acts,
            span: Span::call_site(),
        });
    }

    // Properties.
    let mut decls = Vec::new();
    let timebase_decl = timebase_decl;
    let decl = |kind| Decl {
        kind,
        span: Span::call_site(),
    };
    let doc_list = |list: &[String]| -> Vec<DocIdent> {
        list.iter()
            .map(|n| DocIdent {
                doc: Vec::new(),
                ident: ident(n),
            })
            .collect()
    };
    if let Some(evs) = &events {
        decls.push(decl(DeclKind::Events(doc_list(evs))));
    }
    for (list, make) in [
        (
            &names_.inputs,
            DeclKind::Inputs as fn(Vec<DocIdent>) -> DeclKind,
        ),
        (&names_.outputs, DeclKind::Outputs),
        (&names_.actions, DeclKind::Actions),
    ] {
        if !list.is_empty() {
            decls.push(decl(make(doc_list(list))));
        }
    }
    if !counters.is_empty() {
        decls.push(decl(DeclKind::Counters(
            counters
                .iter()
                .map(|(n, max)| CounterDecl {
                    doc: Vec::new(),
                    ident: ident(n),
                    max: *max,
                    max_span: Span::call_site(),
                })
                .collect(),
        )));
    }
    decls.push(decl(DeclKind::Start(ident(&start))));
    decls.push(decl(DeclKind::Unhandled(policy)));
    if let Some(tb) = timebase_decl {
        decls.push(decl(tb));
    }
    for (text, row) in &ensures {
        // `R within SPAN after T`, as `ensure` is written in a spec.
        let form = "the form is `RESPONSE within SPAN after TRIGGER`";
        let Some((response, rest)) = text.split_once(" within ") else {
            return err(*row, 2, format!("`@ensure` has no ` within `; {form}"));
        };
        let Some((span, trigger)) = rest.split_once(" after ") else {
            return err(*row, 2, format!("`@ensure` has no ` after `; {form}"));
        };
        let r = read_expr(response, ExprKind::Property, *row, 2)?;
        names_.check_expr(&r, ExprKind::Property, *row, 2)?;
        let t = read_expr(trigger, ExprKind::Property, *row, 2)?;
        names_.check_expr(&t, ExprKind::Property, *row, 2)?;
        let span = span.trim();
        let within = match span.strip_suffix(" steps") {
            Some(n) => match n.trim().parse::<u64>() {
                Ok(n) => Within::Steps(n, Span::call_site()),
                Err(_) => {
                    return err(*row, 2, format!("`{span}` is not a number of steps"));
                }
            },
            None => Within::Time(read_duration(span, *row, 2)?),
        };
        decls.push(decl(DeclKind::Ensure {
            response: r,
            within,
            trigger: t,
        }));
    }
    for (text, row) in &nevers {
        let e = read_expr(text, ExprKind::Property, *row, 2)?;
        names_.check_expr(&e, ExprKind::Property, *row, 2)?;
        decls.push(decl(DeclKind::Never(e)));
    }
    for (text, row) in &recovers {
        let (target, except) = match text.split_once(" except ") {
            Some((t, rest)) => (t.trim(), rest.split(',').map(str::trim).collect::<Vec<_>>()),
            None => (text.trim(), Vec::new()),
        };
        for s in std::iter::once(target).chain(except.iter().copied()) {
            if !names_.states.contains_key(s) {
                return err(*row, 2, format!("`{s}` in `@recover` has no state record (the form is `STATE` or `STATE except A, B`)"));
            }
        }
        decls.push(decl(DeclKind::Recover {
            target: ident(target),
            except: except.iter().map(|s| ident(s)).collect(),
        }));
    }
    let members = states
        .into_iter()
        .map(|s| {
            Member::State(StateAst {
                attrs: Vec::new(),
                doc: Vec::new(),
                terminal: s.terminal,
                name: ident(&s.name),
                emit: s.moore.iter().map(|n| ident(n)).collect(),
                body: s.rules.into_iter().map(Body::Rule).collect(),
            })
        })
        .collect();
    Ok(File {
        machines: vec![MachineAst {
            attrs,
            doc: Vec::new(),
            vis,
            name: ident(&name),
            decls,
            members,
        }],
    })
}

/// Reads a CSV state table and prints it as spec text, then checks that the text parses
/// and resolves (an error there is reported with row 0).
pub fn import_spec(text: &str) -> Result<String, ImportError> {
    let file = import_csv(text)?;
    let spec = crate::syntax::print::print_file(&file);
    let whole = |message: String| ImportError {
        row: 0,
        column: 0,
        message,
    };
    let parsed = crate::syntax::parse_source(&spec)
        .map_err(|e| whole(format!("the rebuilt spec does not parse: {}", e.message)))?;
    let (_, errors) = crate::model::resolve_file(&parsed);
    if let Some(d) = errors.first() {
        return Err(whole(format!(
            "the rebuilt spec has an error: {}",
            d.message
        )));
    }
    Ok(spec)
}
