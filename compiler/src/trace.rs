//! Traces: the input of `detent run --trace` and its JSON-lines output.
//!
//! # The trace format
//!
//! A trace is text, one step per line:
//!
//! ```text
//! # a comment line
//! FloatUp pump_current_ok=1
//! Tick                      # a trailing comment
//! FloatDown
//! ```
//!
//! - The first word is the event name; for a clocked machine it is `Tick`.
//! - Each further word is `input=0` or `input=1`. An input left out of a step is 0. An
//!   input given twice in one step, an unknown input, or a value other than `0`/`1` is an
//!   error.
//! - Words are separated by spaces or tabs. A line that is blank, or whose first
//!   non-blank character is `#`, is skipped; a word starting with `#` ends the line (a
//!   trailing comment).
//! - A line whose first non-blank character is `[` or `{` is JSON, the form the checker
//!   prints for property counterexamples and `equiv` prints for witnesses: either an
//!   array of steps `[{"event":"X","inputs":{"a":true}}, ...]` on one line, or one step
//!   object `{"event":"X","inputs":{...}}` per line. `inputs` may be left out; values are
//!   `true`/`false` or `0`/`1`. Any other key is an error. A line may also be a whole
//!   report of `detent tour --format json` (`{"steps":[..],..}`) or of `detent equiv
//!   --format json` (`{"equivalent":..,"witness":[..],..}`): its step list is read, so
//!   that every sequence detent prints replays as printed.
//! - The line `reset` (text), or the entry `{"reset":true}` (JSON, as tours print
//!   restarts), restarts the machine in its start configuration.
//! - A step line may end with `*N` (`Tick *250`): N copies of the step (N >= 1); in
//!   JSON, `"repeat":N` in the step object. The parsed trace holds every copy; a trace
//!   of more than [`MAX_TRACE_STEPS`] steps in all is refused.
//!
//! Errors carry the 1-based line and the 1-based column (in characters) of the offending
//! word or JSON value. JSON is read by serde_json: each key and value is kept as a
//! `RawValue` borrowed from the line, so its position is where its text starts; a line
//! that is not JSON at all gets serde_json's own message (`invalid JSON: ...`) at the
//! column it names.
//!
//! # Output
//!
//! [`run_json_lines`] runs the steps through the reference interpreter
//! ([`Machine::step`]) and renders DESIGN.md's JSON lines ([`RunLine`], serde): a step-0 line with the start
//! state and its Moore outputs, then one line per step with `from`, `event`, `to`,
//! `handled`, the Mealy and Moore outputs (declaration order) and the actions (run order).
//! A restart prints `{"step":k,"reset":true,"state":..,"moore":[..]}`, `k` being the
//! number of the step before it (like step 0, the line shows the state after `k` steps
//! and a restart); the step after it is `k + 1`, so step numbers count events, as a
//! tour's summary does. [`crate::trace_text::run_text_lines`] is the same run as
//! readable text (`run --format text`).
//!
//! Cost: parsing is linear in the trace's length (name lookups are linear scans over the
//! machine's events and inputs, which the limits keep small per lookup); running is one
//! interpreter step per trace step.

use crate::interp::StepResult;
use crate::model::{EventId, InputId, Machine};
use serde::de::{Deserialize, Deserializer, MapAccess, Visitor};
use serde::Serialize;
use serde_json::value::RawValue;
use std::fmt;

/// One parsed step of a trace.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TraceStep {
    /// The event consumed.
    pub event: EventId,
    /// The value of every input, indexed by [`InputId`] (length = number of inputs).
    pub inputs: Vec<bool>,
    /// The 1-based line of the trace the step comes from.
    pub line: usize,
}

/// A malformed trace line.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("line {line}, column {column}: {message}")]
pub struct TraceError {
    /// 1-based line number.
    pub line: usize,
    /// 1-based column, in characters, of the offending word or value.
    pub column: usize,
    /// What is wrong, and what is expected.
    pub message: String,
}

/// One entry of a parsed trace: a step, or a restart.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum TraceEntry {
    /// One step.
    Step(TraceStep),
    /// Back to the start configuration (`reset`, or `{"reset":true}`).
    Reset {
        /// The 1-based line of the trace it comes from.
        line: usize,
    },
}

impl TraceEntry {
    /// The step, or `None` for a restart.
    pub fn step(&self) -> Option<&TraceStep> {
        match self {
            TraceEntry::Step(s) => Some(s),
            TraceEntry::Reset { .. } => None,
        }
    }
}

/// The most steps one trace may expand to (after `*N` repetitions): 16,777,216.
pub const MAX_TRACE_STEPS: usize = 1 << 24;

/// Parses a whole trace (text and JSON lines may be mixed) against a machine's events and
/// inputs. Stops at the first error. Repeated steps (`*N`) are expanded.
pub fn parse_trace(m: &Machine, text: &str) -> Result<Vec<TraceEntry>, TraceError> {
    let mut entries = Vec::new();
    for (index, raw) in text.lines().enumerate() {
        let line = index + 1;
        let trimmed = raw.trim_start();
        let before = entries.len();
        match trimmed.as_bytes().first() {
            None | Some(b'#') => continue,
            Some(b'[') | Some(b'{') => parse_json_line(m, raw, line, &mut entries)?,
            Some(_) => {
                let (entry, repeat) = parse_text_line(m, raw, line)?;
                push_repeated(&mut entries, entry, repeat, raw, line)?;
            }
        }
        if entries.len() > MAX_TRACE_STEPS && before <= MAX_TRACE_STEPS {
            return Err(too_long(raw, line));
        }
    }
    Ok(entries)
}

fn too_long(raw: &str, line: usize) -> TraceError {
    TraceError {
        line,
        column: column(raw, raw.len() - raw.trim_start().len()),
        message: format!("the trace passes {MAX_TRACE_STEPS} steps (the limit) here"),
    }
}

/// Pushes `repeat` copies of an entry, refusing a total past [`MAX_TRACE_STEPS`].
fn push_repeated(
    entries: &mut Vec<TraceEntry>,
    entry: TraceEntry,
    repeat: u64,
    raw: &str,
    line: usize,
) -> Result<(), TraceError> {
    if (entries.len() as u64).saturating_add(repeat) > MAX_TRACE_STEPS as u64 {
        return Err(too_long(raw, line));
    }
    for _ in 1..repeat {
        entries.push(entry.clone());
    }
    entries.push(entry);
    Ok(())
}

/// Reads a repetition count `*N` (N from 1 to [`MAX_TRACE_STEPS`]).
fn repeat_count(word: &str) -> Result<u64, String> {
    let digits = &word[1..];
    match digits.parse::<u64>() {
        Ok(0) => Err("a repetition `*N` needs N of at least 1".into()),
        Ok(n) if n <= MAX_TRACE_STEPS as u64 => Ok(n),
        Ok(_) => Err(format!(
            "a repetition of more than {MAX_TRACE_STEPS} steps (the limit)"
        )),
        Err(_) => Err(format!(
            "expected a repetition `*N` with N a whole number, found `{word}`"
        )),
    }
}

/// Runs a trace from the start state through the reference interpreter: the step-0
/// line, then one line per entry (steps numbered from 1; a restart carries the number
/// of the step before it).
pub fn run_lines(m: &Machine, entries: &[TraceEntry]) -> Vec<RunLine> {
    let mut out = Vec::with_capacity(entries.len() + 1);
    out.push(RunLine::start(m));
    let mut config = m.start_config();
    let mut n = 0;
    for entry in entries {
        match entry {
            TraceEntry::Step(s) => {
                let r = m.step_config(&mut config, s.event, &s.inputs);
                n += 1;
                out.push(RunLine::step(m, n, &r).with_counters(m, &config.counters));
            }
            TraceEntry::Reset { .. } => {
                config = m.start_config();
                out.push(RunLine::reset(m, n));
            }
        }
    }
    out
}

/// Runs the trace and renders DESIGN.md's JSON lines (without trailing newlines): first
/// `{"step":0,"state":..,"moore":[..]}`, then one line per step or restart.
pub fn run_json_lines(m: &Machine, entries: &[TraceEntry]) -> Vec<String> {
    run_lines(m, entries).iter().map(RunLine::to_json).collect()
}

/// Counter values by name, in declaration order: a JSON object.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CounterValues(pub Vec<(String, u16)>);

impl Serialize for CounterValues {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut map = s.serialize_map(Some(self.0.len()))?;
        for (k, v) in &self.0 {
            map.serialize_entry(k, v)?;
        }
        map.end()
    }
}

/// One JSON line of `detent run` (DESIGN.md): the start line, or one step.
#[derive(Clone, Debug, PartialEq, Eq, Serialize)]
#[serde(untagged)]
pub enum RunLine {
    /// `{"step":0,"state":..,"moore":[..]}`: the start state and its Moore outputs.
    Start {
        /// Always 0.
        step: usize,
        /// The start state.
        state: String,
        /// Its Moore outputs, declaration order.
        moore: Vec<String>,
    },
    /// `{"step":n,"from":..,"event":..,"to":..,"handled":..,"mealy":[..],"moore":[..],
    /// "actions":[..]}`.
    Step {
        /// The 1-based step number.
        step: usize,
        /// The state before.
        from: String,
        /// The event.
        event: String,
        /// The state after.
        to: String,
        /// False when the event was ignored or rejected.
        handled: bool,
        /// Mealy outputs of the rule, declaration order.
        mealy: Vec<String>,
        /// Moore outputs after the step, declaration order.
        moore: Vec<String>,
        /// Actions, in the order they ran.
        actions: Vec<String>,
        /// The counters after the step, in declaration order (only for a machine with
        /// counters: `"counters":{"strikes":2}`).
        #[serde(skip_serializing_if = "Option::is_none")]
        counters: Option<CounterValues>,
    },
    /// `{"step":k,"reset":true,"state":..,"moore":[..]}`: a restart after step `k`.
    Reset {
        /// The number of the step before the restart (0 before any).
        step: usize,
        /// Always true.
        reset: bool,
        /// The start state.
        state: String,
        /// Its Moore outputs, declaration order.
        moore: Vec<String>,
    },
}

impl RunLine {
    /// The start line of machine `m`.
    pub fn start(m: &Machine) -> RunLine {
        let start = &m.states[m.start.index()];
        RunLine::Start {
            step: 0,
            state: start.name.clone(),
            moore: output_names(m, &start.moore),
        }
    }

    /// The restart line after step `n` of machine `m`.
    pub fn reset(m: &Machine, n: usize) -> RunLine {
        let start = &m.states[m.start.index()];
        RunLine::Reset {
            step: n,
            reset: true,
            state: start.name.clone(),
            moore: output_names(m, &start.moore),
        }
    }

    /// The line of step number `n` (1-based) of an interpreter run.
    pub fn step(m: &Machine, n: usize, r: &StepResult) -> RunLine {
        RunLine::Step {
            step: n,
            from: m.state_name(r.from).to_string(),
            event: m.event_name(r.event).to_string(),
            to: m.state_name(r.to).to_string(),
            handled: r.handled(),
            mealy: output_names(m, &r.mealy),
            moore: output_names(m, &r.moore),
            actions: r
                .actions
                .iter()
                .map(|a| m.actions[a.index()].name.clone())
                .collect(),
            counters: None,
        }
    }

    /// The line with the counters after the step (a machine without counters keeps
    /// DESIGN.md's line unchanged).
    pub fn with_counters(mut self, m: &Machine, values: &[u16]) -> RunLine {
        if let RunLine::Step { counters, .. } = &mut self {
            if !m.counters.is_empty() {
                *counters = Some(CounterValues(
                    m.counters
                        .iter()
                        .zip(values)
                        .map(|(c, v)| (c.name.clone(), *v))
                        .collect(),
                ));
            }
        }
        self
    }

    /// The line as one line of JSON.
    pub fn to_json(&self) -> String {
        crate::report::to_json(self)
    }
}

fn output_names(m: &Machine, outputs: &[crate::model::OutputId]) -> Vec<String> {
    outputs
        .iter()
        .map(|o| m.outputs[o.index()].name.clone())
        .collect()
}

/// The step-0 line: the start state and its Moore outputs.
pub fn start_json(m: &Machine) -> String {
    RunLine::start(m).to_json()
}

/// The JSON line of step number `n` (1-based) of an interpreter run.
pub fn step_json(m: &Machine, n: usize, r: &StepResult) -> String {
    RunLine::step(m, n, r).to_json()
}

/// The trace line (and the word) that restarts the machine (defined with the printed
/// trace lines in [`crate::report`]).
pub use crate::report::RESET;

/// 1-based character column of byte offset `byte` in `line`.
fn column(line: &str, byte: usize) -> usize {
    line.get(..byte).map_or(byte, |s| s.chars().count()) + 1
}

fn list_names<'a>(names: impl Iterator<Item = &'a str>) -> String {
    const SHOWN: usize = 12;
    let all: Vec<&str> = names.collect();
    let mut s = all
        .iter()
        .take(SHOWN)
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ");
    if all.len() > SHOWN {
        s.push_str(&format!(" and {} more", all.len() - SHOWN));
    }
    s
}

/// ` (did you mean `X`?)` after a misspelled name, or nothing.
fn suggestion<'a>(name: &str, names: impl Iterator<Item = &'a str>) -> String {
    crate::naming::closest(name, names).map_or(String::new(), |c| format!(" (did you mean `{c}`?)"))
}

fn lookup_event(m: &Machine, name: &str) -> Result<EventId, String> {
    if let Some(e) = m.event_id(name) {
        return Ok(e);
    }
    let guess = suggestion(name, m.events.iter().map(|e| e.name.as_str()));
    if m.clocked {
        Err(format!(
            "unknown event `{name}`{guess}: machine `{}` is clocked, and its only event is \
             `Tick`",
            m.name
        ))
    } else {
        Err(format!(
            "unknown event `{name}`{guess}: machine `{}` has events {}",
            m.name,
            list_names(m.events.iter().map(|e| e.name.as_str()))
        ))
    }
}

fn lookup_input(m: &Machine, name: &str) -> Result<InputId, String> {
    if let Some(i) = m.input_id(name) {
        return Ok(i);
    }
    if m.inputs.is_empty() {
        Err(format!(
            "unknown input `{name}`: machine `{}` has no inputs",
            m.name
        ))
    } else {
        Err(format!(
            "unknown input `{name}`{}: machine `{}` has inputs {}",
            suggestion(name, m.inputs.iter().map(|i| i.name.as_str())),
            m.name,
            list_names(m.inputs.iter().map(|i| i.name.as_str()))
        ))
    }
}

/// Words of a line with their byte offsets, up to a word starting with `#`.
fn words(line: &str) -> Vec<(usize, &str)> {
    let mut out = Vec::new();
    let mut start = None;
    for (i, c) in line.char_indices() {
        if c == ' ' || c == '\t' {
            if let Some(s) = start.take() {
                out.push((s, &line[s..i]));
            }
        } else if start.is_none() {
            if c == '#' {
                return out;
            }
            start = Some(i);
        }
    }
    if let Some(s) = start {
        out.push((s, &line[s..]));
    }
    out
}

fn parse_text_line(m: &Machine, raw: &str, line: usize) -> Result<(TraceEntry, u64), TraceError> {
    let err = |byte: usize, message: String| TraceError {
        line,
        column: column(raw, byte),
        message,
    };
    let mut ws = words(raw);
    let mut repeat = 1;
    if let Some(&(at, last)) = ws.last() {
        if last.starts_with('*') {
            if ws.len() == 1 {
                return Err(err(
                    at,
                    "a repetition `*N` follows a step (`Tick *250`)".into(),
                ));
            }
            repeat = repeat_count(last).map_err(|msg| err(at, msg))?;
            ws.pop();
        }
    }
    let Some(&(at, name)) = ws.first() else {
        // `words` is empty only for comment lines, which the caller skips.
        return Err(err(0, "expected an event name".into()));
    };
    if name == RESET {
        if m.event_id(RESET).is_some() {
            return Err(err(
                at,
                format!(
                    "machine `{}` has an event named `reset`, so a `reset` line is \
                     ambiguous: write the event as `{{\"event\":\"reset\"}}` and a restart \
                     as `{{\"reset\":true}}`",
                    m.name
                ),
            ));
        }
        if let Some(&(extra, _)) = ws.get(1) {
            return Err(err(
                extra,
                "a `reset` line has nothing after `reset`".into(),
            ));
        }
        if repeat != 1 {
            return Err(err(at, "a `reset` line is not repeated".into()));
        }
        return Ok((TraceEntry::Reset { line }, 1));
    }
    if name.contains('=') {
        return Err(err(
            at,
            format!("a step starts with the event name, found `{name}`"),
        ));
    }
    let event = lookup_event(m, name).map_err(|msg| err(at, msg))?;
    let mut inputs = vec![false; m.inputs.len()];
    let mut given: Vec<Option<usize>> = vec![None; m.inputs.len()];
    for &(at, word) in &ws[1..] {
        let Some((key, value)) = word.split_once('=') else {
            return Err(err(
                at,
                format!("expected `input=0` or `input=1`, found `{word}`"),
            ));
        };
        if key.is_empty() {
            return Err(err(
                at,
                format!("missing input name before `=` in `{word}`"),
            ));
        }
        let id = lookup_input(m, key).map_err(|msg| err(at, msg))?;
        let value_at = at + key.len() + 1;
        let v = match value {
            "0" => false,
            "1" => true,
            other => {
                return Err(err(
                    value_at,
                    format!("input `{key}` has value `{other}`; a value is 0 or 1"),
                ))
            }
        };
        if let Some(first) = given[id.index()] {
            return Err(err(
                at,
                format!(
                    "input `{key}` is given twice in this step (first at column {})",
                    column(raw, first)
                ),
            ));
        }
        given[id.index()] = Some(at);
        inputs[id.index()] = v;
    }
    Ok((
        TraceEntry::Step(TraceStep {
            event,
            inputs,
            line,
        }),
        repeat,
    ))
}

fn parse_json_line(
    m: &Machine,
    raw: &str,
    line: usize,
    steps: &mut Vec<TraceEntry>,
) -> Result<(), TraceError> {
    let err = |byte: usize, message: String| TraceError {
        line,
        column: column(raw, byte),
        message,
    };
    let mut de = serde_json::Deserializer::from_str(raw);
    let value = <&RawValue>::deserialize(&mut de).map_err(|e| json_error(raw, line, &e))?;
    if de.end().is_err() {
        let after = offset_in(raw, value.get()) + value.get().len();
        let at = after + (raw[after..].len() - raw[after..].trim_start().len());
        return Err(err(at, "unexpected text after the JSON value".into()));
    }
    let list = match report_list(raw, value).map_err(|(at, msg)| err(at, msg))? {
        Some(list) => list,
        None => value,
    };
    let items: Vec<&RawValue> = if list.get().starts_with('[') {
        serde_json::from_str(list.get()).map_err(|e| json_error(raw, line, &e))?
    } else {
        vec![list]
    };
    for item in items {
        let (entry, repeat) = json_step(m, raw, item, line).map_err(|(at, msg)| err(at, msg))?;
        push_repeated(steps, entry, repeat, raw, line)?;
    }
    Ok(())
}

/// The keys of the reports whose step list a trace line may be: `tour --format json`
/// (`steps`) and `equiv --format json` (`witness`), each with the report's other keys.
const REPORTS: [(&str, &[&str]); 2] = [
    ("steps", &["covers", "transitions"]),
    ("witness", &["equivalent", "step", "a", "b"]),
];

/// When `v` is a whole tour or equiv report, its step list; `None` for anything else
/// (a step object, an array).
fn report_list<'a>(raw: &str, v: &'a RawValue) -> Result<Option<&'a RawValue>, (usize, String)> {
    let Some(fields) = fields_of(raw, v)? else {
        return Ok(None);
    };
    let keys: Vec<String> = fields
        .0
        .iter()
        .map(|(k, _)| string_of(k).unwrap_or_default())
        .collect();
    if keys.iter().any(|k| k == "machines") {
        return Err((
            offset_in(raw, v.get()),
            "a whole `check --format json` report is not a trace: replay one diagnostic's \
             `trace` list (for instance `jq -c '.machines[0].diagnostics[0].trace'`)"
                .into(),
        ));
    }
    for (list_key, others) in REPORTS {
        let Some(i) = keys.iter().position(|k| k == list_key) else {
            continue;
        };
        if let Some((j, k)) = keys
            .iter()
            .enumerate()
            .find(|(j, k)| *j != i && !others.contains(&k.as_str()))
        {
            return Err((
                offset_in(raw, fields.0[j].0.get()),
                format!("unknown key `{k}` in a report with `{list_key}`"),
            ));
        }
        let list = fields.0[i].1;
        if !list.get().starts_with('[') {
            return Err((
                offset_in(raw, list.get()),
                format!("`{list_key}` must be a list of steps"),
            ));
        }
        return Ok(Some(list));
    }
    Ok(None)
}

/// A JSON syntax error of serde_json at its line and column. The trace line is parsed
/// alone, so serde_json's line is 1 and its column counts bytes of that line.
fn json_error(raw: &str, line: usize, e: &serde_json::Error) -> TraceError {
    let text = e.to_string();
    let suffix = format!(" at line {} column {}", e.line(), e.column());
    let message = text.strip_suffix(&suffix).unwrap_or(&text);
    let (at, message) = if e.classify() == serde_json::error::Category::Eof {
        // The value is cut off: point past the end of the line.
        (
            raw.len(),
            format!("invalid JSON: the line ends inside the value ({message})"),
        )
    } else {
        (
            e.column().saturating_sub(1).min(raw.len()),
            format!("invalid JSON: {message}"),
        )
    };
    TraceError {
        line,
        column: column(raw, at),
        message,
    }
}

/// Byte offset of `inner`, a slice borrowed from `outer`, in `outer`. serde_json's
/// [`RawValue`]s borrow from the line they are parsed from, so each value's position is
/// where its text starts.
fn offset_in(outer: &str, inner: &str) -> usize {
    (inner.as_ptr() as usize)
        .saturating_sub(outer.as_ptr() as usize)
        .min(outer.len())
}

/// The fields of a JSON object in written order, each key and value as raw text (so
/// that an error can point at it; repeated keys are kept, to be refused by name).
struct Fields<'a>(Vec<(&'a RawValue, &'a RawValue)>);

impl<'de> Deserialize<'de> for Fields<'de> {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct FieldsVisitor;
        impl<'de> Visitor<'de> for FieldsVisitor {
            type Value = Fields<'de>;
            fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str("a JSON object")
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Fields<'de>, A::Error> {
                let mut fields = Vec::new();
                while let Some(entry) = map.next_entry::<&RawValue, &RawValue>()? {
                    fields.push(entry);
                }
                Ok(Fields(fields))
            }
        }
        deserializer.deserialize_map(FieldsVisitor)
    }
}

/// The fields of the object `v` of line `raw`; `None` when `v` is not an object.
fn fields_of<'a>(raw: &str, v: &'a RawValue) -> Result<Option<Fields<'a>>, (usize, String)> {
    if !v.get().starts_with('{') {
        return Ok(None);
    }
    serde_json::from_str(v.get())
        .map(Some)
        .map_err(|e| (offset_in(raw, v.get()), format!("invalid JSON: {e}")))
}

/// The string a raw JSON key or value holds, escapes decoded; `None` for another kind
/// of value.
fn string_of(v: &RawValue) -> Option<String> {
    serde_json::from_str::<String>(v.get()).ok()
}

fn json_step(
    m: &Machine,
    raw: &str,
    v: &RawValue,
    line: usize,
) -> Result<(TraceEntry, u64), (usize, String)> {
    let at = |v: &RawValue| offset_in(raw, v.get());
    let Some(fields) = fields_of(raw, v)? else {
        return Err((
            at(v),
            "expected a step object `{\"event\":..,\"inputs\":{..}}`".into(),
        ));
    };
    let mut event = None;
    let mut inputs = vec![false; m.inputs.len()];
    let mut seen_inputs = false;
    let mut reset = None;
    let mut repeat: Option<u64> = None;
    for (key, value) in fields.0 {
        let key_at = at(key);
        match string_of(key).as_deref().unwrap_or_default() {
            "event" => {
                if event.is_some() {
                    return Err((key_at, "key `event` is given twice".into()));
                }
                let Some(name) = string_of(value) else {
                    return Err((at(value), "`event` must be a string".into()));
                };
                event = Some(lookup_event(m, &name).map_err(|msg| (at(value), msg))?);
            }
            "inputs" => {
                if seen_inputs {
                    return Err((key_at, "key `inputs` is given twice".into()));
                }
                seen_inputs = true;
                let Some(vals) = fields_of(raw, value)? else {
                    return Err((
                        at(value),
                        "`inputs` must be an object like {\"a\":true}".into(),
                    ));
                };
                let mut given = vec![false; m.inputs.len()];
                for (name_raw, val) in vals.0 {
                    let name = string_of(name_raw).unwrap_or_default();
                    let name_at = at(name_raw);
                    let id = lookup_input(m, &name).map_err(|msg| (name_at, msg))?;
                    if given[id.index()] {
                        return Err((
                            name_at,
                            format!("input `{name}` is given twice in this step"),
                        ));
                    }
                    given[id.index()] = true;
                    inputs[id.index()] = match val.get() {
                        "true" | "1" => true,
                        "false" | "0" => false,
                        _ => {
                            return Err((
                                at(val),
                                format!("input `{name}` must be true, false, 0 or 1"),
                            ))
                        }
                    };
                }
            }
            "repeat" => {
                if repeat.is_some() {
                    return Err((key_at, "key `repeat` is given twice".into()));
                }
                let n = repeat_count(&format!("*{}", value.get())).map_err(|_| {
                    (
                        at(value),
                        format!("`repeat` must be a whole number from 1 to {MAX_TRACE_STEPS}"),
                    )
                })?;
                repeat = Some(n);
            }
            "reset" => {
                if value.get() != "true" {
                    return Err((at(value), "`reset` must be `true`".into()));
                }
                reset = Some(key_at);
            }
            other => {
                return Err((
                    key_at,
                    format!("unknown key `{other}`; a step has `event`, `inputs` and `repeat`"),
                ))
            }
        }
    }
    if let Some(reset_at) = reset {
        if event.is_some() || seen_inputs || repeat.is_some() {
            return Err((
                reset_at,
                "a restart `{\"reset\":true}` has no other key; write the step after it as \
                 its own entry"
                    .into(),
            ));
        }
        return Ok((TraceEntry::Reset { line }, 1));
    }
    let Some(event) = event else {
        return Err((at(v), "this step has no `event`".into()));
    };
    Ok((
        TraceEntry::Step(TraceStep {
            event,
            inputs,
            line,
        }),
        repeat.unwrap_or(1),
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::{machine, GATE};

    fn run(m: &Machine, trace: &str) -> Vec<String> {
        let steps = parse_trace(m, trace).expect("test trace parses");
        run_json_lines(m, &steps)
    }

    /// Nested groups with enter/leave actions everywhere, inherited rules and Moore
    /// outputs, `stay` against an external self-transition, and `unhandled ignore`.
    /// Expected lines worked out by hand from LANGUAGE.md ("Rules and scopes",
    /// "Targets", "Action order").
    const PLANT: &str = "
        machine Plant {
            events Start, Stop, Poke, Again, Reset;
            inputs hot;
            outputs lamp, fan, beep;
            actions note, warm_in, warm_out, hot_in, hot_out, cool_in,
                    inner_in, inner_out, outer_in, outer_out;
            start Off;
            unhandled ignore;

            state Off {
                Start => Warm, do note;
            }
            group Outer emit fan {
                enter do outer_in;
                leave do outer_out;
                Stop => Off;
                Poke => stay, emit beep;
                group Inner emit lamp {
                    enter do inner_in;
                    leave do inner_out;
                    state Warm {
                        enter do warm_in;
                        leave do warm_out;
                        Start if hot => Hot;
                        Again => Warm, do note;
                        Reset => stay, do note;
                    }
                    state Hot {
                        enter do hot_in;
                        leave do hot_out;
                        Poke => Cool, emit beep;
                    }
                }
                state Cool {
                    enter do cool_in;
                    Start => Warm;
                }
            }
        }";

    #[test]
    fn groups_scopes_and_action_order() {
        let m = machine(PLANT);
        let trace = "\
# ignored: Off has no rule for Poke
Poke
Start
Start hot=0
Poke
Again
Reset
Start hot=1
Poke
Start
Stop
";
        let expected = [
            r#"{"step":0,"state":"Off","moore":[]}"#,
            // Off has no Poke rule and no group: ignored.
            r#"{"step":1,"from":"Off","event":"Poke","to":"Off","handled":false,"mealy":[],"moore":[],"actions":[]}"#,
            // Into two nested groups: rule actions, then groups outermost first, then Warm.
            r#"{"step":2,"from":"Off","event":"Start","to":"Warm","handled":true,"mealy":[],"moore":["lamp","fan"],"actions":["note","outer_in","inner_in","warm_in"]}"#,
            // Warm's own scope names Start, so only its guarded rule counts: hot=0, ignored.
            r#"{"step":3,"from":"Warm","event":"Start","to":"Warm","handled":false,"mealy":[],"moore":["lamp","fan"],"actions":[]}"#,
            // Poke inherited from Outer: stay with a Mealy output.
            r#"{"step":4,"from":"Warm","event":"Poke","to":"Warm","handled":true,"mealy":["beep"],"moore":["lamp","fan"],"actions":[]}"#,
            // External self-transition: Warm's leave and enter, not its groups'.
            r#"{"step":5,"from":"Warm","event":"Again","to":"Warm","handled":true,"mealy":[],"moore":["lamp","fan"],"actions":["warm_out","note","warm_in"]}"#,
            // Internal transition: only the rule's action.
            r#"{"step":6,"from":"Warm","event":"Reset","to":"Warm","handled":true,"mealy":[],"moore":["lamp","fan"],"actions":["note"]}"#,
            // Sibling move inside Inner (the least common ancestor): no group actions.
            r#"{"step":7,"from":"Warm","event":"Start","to":"Hot","handled":true,"mealy":[],"moore":["lamp","fan"],"actions":["warm_out","hot_in"]}"#,
            // Hot's own Poke beats Outer's; leaves Inner but not Outer.
            r#"{"step":8,"from":"Hot","event":"Poke","to":"Cool","handled":true,"mealy":["beep"],"moore":["fan"],"actions":["hot_out","inner_out","cool_in"]}"#,
            // Back into Inner from inside Outer: enters Inner only.
            r#"{"step":9,"from":"Cool","event":"Start","to":"Warm","handled":true,"mealy":[],"moore":["lamp","fan"],"actions":["inner_in","warm_in"]}"#,
            // Inherited Stop leaves Warm, Inner, Outer, innermost first.
            r#"{"step":10,"from":"Warm","event":"Stop","to":"Off","handled":true,"mealy":[],"moore":[],"actions":["warm_out","inner_out","outer_out"]}"#,
        ];
        assert_eq!(run(&m, trace), expected);
    }

    #[test]
    fn wildcards_scopes_and_reject() {
        let m = machine(GATE);
        let trace = "Knock\nClose\nOpen\nKnock\nClose\nPing\nKnock\nOpen\n";
        let expected = [
            r#"{"step":0,"state":"Shut","moore":[]}"#,
            // Door's named Knock rule: stay.
            r#"{"step":1,"from":"Shut","event":"Knock","to":"Shut","handled":true,"mealy":[],"moore":[],"actions":["ring"]}"#,
            // Door's `_` back to Shut: an external self-transition runs Shut's leave and
            // enter but not Door's.
            r#"{"step":2,"from":"Shut","event":"Close","to":"Shut","handled":true,"mealy":[],"moore":[],"actions":["shut_out","log","shut_in"]}"#,
            r#"{"step":3,"from":"Shut","event":"Open","to":"Ajar","handled":true,"mealy":[],"moore":["busy"],"actions":["shut_out"]}"#,
            // Door's rule naming Knock beats Ajar's own `_`: it rings.
            r#"{"step":4,"from":"Ajar","event":"Knock","to":"Ajar","handled":true,"mealy":[],"moore":["busy"],"actions":["ring"]}"#,
            r#"{"step":5,"from":"Ajar","event":"Close","to":"Shut","handled":true,"mealy":[],"moore":[],"actions":["shut_in"]}"#,
            r#"{"step":6,"from":"Shut","event":"Ping","to":"Locked","handled":true,"mealy":[],"moore":[],"actions":["shut_out","door_out"]}"#,
            // Locked is outside Door and has no Knock rule: rejected.
            r#"{"step":7,"from":"Locked","event":"Knock","to":"Locked","handled":false,"mealy":[],"moore":[],"actions":[]}"#,
            r#"{"step":8,"from":"Locked","event":"Open","to":"Shut","handled":true,"mealy":[],"moore":[],"actions":["door_in","shut_in"]}"#,
        ];
        assert_eq!(run(&m, trace), expected);
    }

    #[test]
    fn clocked_machine_steps_on_tick() {
        let m = machine(
            "machine Blink {
                inputs en;
                outputs led;
                start Dark;
                state Dark { if en => Lit; if !en => stay; }
                state Lit emit led { => Dark; }
            }",
        );
        let lines = run(&m, "Tick en=1\n\n   # idle\nTick\nTick\t en=0\n");
        assert_eq!(
            lines,
            [
                r#"{"step":0,"state":"Dark","moore":[]}"#,
                r#"{"step":1,"from":"Dark","event":"Tick","to":"Lit","handled":true,"mealy":[],"moore":["led"],"actions":[]}"#,
                r#"{"step":2,"from":"Lit","event":"Tick","to":"Dark","handled":true,"mealy":[],"moore":[],"actions":[]}"#,
                r#"{"step":3,"from":"Dark","event":"Tick","to":"Dark","handled":true,"mealy":[],"moore":[],"actions":[]}"#,
            ]
        );
    }

    const SMALL: &str = "
        machine Small {
            events Go, Halt;
            inputs a, b;
            start A;
            state A { Go if a => B; Go if !a => stay; Halt => stay; }
            state B { _ if b => A; _ if !b => stay; }
        }";

    #[test]
    fn text_steps_parse_with_defaults_and_comments() {
        let m = machine(SMALL);
        let steps = parse_trace(&m, "Go b=1 a=1   # both high\n\n#x\n  Halt\n").unwrap();
        assert_eq!(
            steps,
            [
                TraceEntry::Step(TraceStep {
                    event: EventId(0),
                    inputs: vec![true, true],
                    line: 1
                }),
                TraceEntry::Step(TraceStep {
                    event: EventId(1),
                    inputs: vec![false, false],
                    line: 4
                }),
            ]
        );
    }

    fn error(m: &Machine, trace: &str) -> (usize, usize, String) {
        let e = parse_trace(m, trace).expect_err("trace must be rejected");
        (e.line, e.column, e.message)
    }

    #[test]
    fn text_errors_name_line_and_column() {
        let m = machine(SMALL);
        assert_eq!(
            error(&m, "Go\n  Jump a=1\n"),
            (
                2,
                3,
                "unknown event `Jump`: machine `Small` has events `Go`, `Halt`".into()
            )
        );
        assert_eq!(
            error(&m, "Go c=1"),
            (
                1,
                4,
                "unknown input `c`: machine `Small` has inputs `a`, `b`".into()
            )
        );
        assert_eq!(
            error(&m, "Hlat b=1"),
            (
                1,
                1,
                "unknown event `Hlat` (did you mean `Halt`?): machine `Small` has events `Go`, \
                 `Halt`"
                    .into()
            )
        );
        assert_eq!(
            error(&m, "Go B=1").2,
            "unknown input `B` (did you mean `b`?): machine `Small` has inputs `a`, `b`"
        );
        assert_eq!(
            error(&m, "Go a=2"),
            (1, 6, "input `a` has value `2`; a value is 0 or 1".into())
        );
        assert_eq!(
            error(&m, "Go a=1 b=0 a=0"),
            (
                1,
                12,
                "input `a` is given twice in this step (first at column 4)".into()
            )
        );
        assert_eq!(
            error(&m, "Go a"),
            (1, 4, "expected `input=0` or `input=1`, found `a`".into())
        );
        assert_eq!(
            error(&m, "Go =1"),
            (1, 4, "missing input name before `=` in `=1`".into())
        );
        assert_eq!(
            error(&m, "a=1 Go"),
            (
                1,
                1,
                "a step starts with the event name, found `a=1`".into()
            )
        );
        // Columns count characters, not bytes.
        assert_eq!(error(&m, "Go\u{e9} a=1").1, 1);
        assert_eq!(error(&m, "Go b=\u{e9}").1, 6);
        let clocked = machine("machine C { start S; state S { => stay; } }");
        assert_eq!(
            error(&clocked, "Go"),
            (
                1,
                1,
                "unknown event `Go`: machine `C` is clocked, and its only event is `Tick`".into()
            )
        );
        assert_eq!(
            error(&clocked, "Tick x=1"),
            (1, 6, "unknown input `x`: machine `C` has no inputs".into())
        );
    }

    #[test]
    fn json_forms_parse() {
        let m = machine(SMALL);
        let text = concat!(
            r#"[{"event":"Go","inputs":{"a":true,"b":false}}, {"event":"Halt"}]"#,
            "\n",
            r#"  {"inputs":{"b":1},"event":"Go"}"#,
            "\n",
            r#"{"event":"Halt","inputs":{}}"#,
            "\n[]\n",
        );
        let steps = parse_trace(&m, text).unwrap();
        let got: Vec<(u32, Vec<bool>, usize)> = steps
            .iter()
            .filter_map(TraceEntry::step)
            .map(|s| (s.event.0, s.inputs.clone(), s.line))
            .collect();
        assert_eq!(
            got,
            [
                (0, vec![true, false], 1),
                (1, vec![false, false], 1),
                (0, vec![false, true], 2),
                (1, vec![false, false], 3),
            ]
        );
        // The same trace in text form gives the same run.
        let text_form = "Go a=1\nHalt\nGo b=1\nHalt\n";
        assert_eq!(
            run_json_lines(&m, &steps),
            run(&m, text_form),
            "JSON and text forms must run alike"
        );
    }

    #[test]
    fn json_errors_name_line_and_column() {
        let m = machine(SMALL);
        assert_eq!(
            error(&m, r#"[{"event":"Go"},{"event":"Fly"}]"#),
            (
                1,
                26,
                "unknown event `Fly`: machine `Small` has events `Go`, `Halt`".into()
            )
        );
        assert_eq!(
            error(&m, r#"{"event":"Go","inputs":{"a":2}}"#),
            (1, 29, "input `a` must be true, false, 0 or 1".into())
        );
        assert_eq!(
            error(&m, r#"{"event":"Go","inputs":{"a":1,"a":0}}"#),
            (1, 31, "input `a` is given twice in this step".into())
        );
        assert_eq!(
            error(&m, r#"{"event":"Go","inputs":{"z":true}}"#),
            (
                1,
                25,
                "unknown input `z`: machine `Small` has inputs `a`, `b`".into()
            )
        );
        assert_eq!(
            error(&m, r#"{"inputs":{}}"#),
            (1, 1, "this step has no `event`".into())
        );
        assert_eq!(
            error(&m, r#"[{"event":"Go"}, 3]"#),
            (
                1,
                18,
                "expected a step object `{\"event\":..,\"inputs\":{..}}`".into()
            )
        );
        assert_eq!(
            error(&m, r#"{"reset":true,"event":"Go"}"#),
            (
                1,
                2,
                "a restart `{\"reset\":true}` has no other key; write the step after it as \
                 its own entry"
                    .into()
            )
        );
        assert_eq!(
            error(&m, r#"{"reset":1}"#),
            (1, 10, "`reset` must be `true`".into())
        );
        assert_eq!(
            error(&m, r#"{"steps":[],"covers":1,"x":2}"#),
            (1, 24, "unknown key `x` in a report with `steps`".into())
        );
        assert_eq!(
            error(&m, r#"{"machines":[]}"#).2.split(':').next(),
            Some("a whole `check --format json` report is not a trace")
        );
        assert_eq!(
            error(&m, r#"{"event":"Go","when":1}"#),
            (
                1,
                15,
                "unknown key `when`; a step has `event`, `inputs` and `repeat`".into()
            )
        );
        assert_eq!(
            error(&m, r#"{"event":"Go"} x"#),
            (1, 16, "unexpected text after the JSON value".into())
        );
        assert_eq!(
            error(&m, r#"[{"event":"Go"}"#),
            (
                1,
                16,
                "invalid JSON: the line ends inside the value (EOF while parsing a list)".into()
            )
        );
        assert_eq!(
            error(&m, "Go\n{\"event\":\"G\\u006f\",\"inputs\":{\"a\":tru}}"),
            (2, 37, "invalid JSON: expected ident".into())
        );
        // Not JSON at all, and JSON nested far deeper than a trace needs: errors, not
        // a stack overflow.
        assert_eq!(
            error(&m, "{event}"),
            (1, 2, "invalid JSON: key must be a string".into())
        );
        let deep = format!("{}{}", "[".repeat(100_000), "]".repeat(100_000));
        assert_eq!(
            error(&m, &deep).2,
            "expected a step object `{\"event\":..,\"inputs\":{..}}`"
        );
        let deep_object = format!("{}1{}", "{\"event\":".repeat(50_000), "}".repeat(50_000));
        assert_eq!(error(&m, &deep_object).0, 1);
        // `\u006f` is `o`: escapes decode.
        assert_eq!(
            parse_trace(&m, "{\"event\":\"G\\u006f\"}").unwrap()[0]
                .step()
                .map(|s| s.event),
            Some(EventId(0))
        );
    }

    #[test]
    fn reset_restarts_and_prints_its_record() {
        let m = machine(SMALL);
        // Text `reset`, a JSON restart inside a list and on its own line: each goes back
        // to `A`, and numbering goes on from the step before.
        let trace = concat!(
            "Go a=1\n",
            "reset\n",
            "Go a=1\n",
            r#"[{"reset":true},{"event":"Go","inputs":{"a":true}}]"#,
            "\n",
            r#"  {"reset":true}"#,
            "\n",
            "Halt\n",
        );
        let expected = [
            r#"{"step":0,"state":"A","moore":[]}"#,
            r#"{"step":1,"from":"A","event":"Go","to":"B","handled":true,"mealy":[],"moore":[],"actions":[]}"#,
            r#"{"step":1,"reset":true,"state":"A","moore":[]}"#,
            r#"{"step":2,"from":"A","event":"Go","to":"B","handled":true,"mealy":[],"moore":[],"actions":[]}"#,
            r#"{"step":2,"reset":true,"state":"A","moore":[]}"#,
            r#"{"step":3,"from":"A","event":"Go","to":"B","handled":true,"mealy":[],"moore":[],"actions":[]}"#,
            r#"{"step":3,"reset":true,"state":"A","moore":[]}"#,
            // Without the restart this would be B's `_` rule, back to A.
            r#"{"step":4,"from":"A","event":"Halt","to":"A","handled":true,"mealy":[],"moore":[],"actions":[]}"#,
        ];
        assert_eq!(run(&m, trace), expected);
        let text = crate::trace_text::run_text_lines(&m, &parse_trace(&m, trace).unwrap());
        assert_eq!(text[0], "step 0: start in A; outputs: none");
        assert_eq!(text[2], "step 1: reset to A; outputs: none");
        assert_eq!(
            text[7],
            "step 4: Halt (no inputs) A -> A; outputs: none; actions: none"
        );
        // Whole tour and equiv reports replay their lists.
        let tour = r#"{"steps":[{"event":"Go","inputs":{"a":true,"b":false}},{"reset":true},{"event":"Halt","inputs":{"a":false,"b":false}}],"covers":2,"transitions":5}"#;
        assert_eq!(
            run(&m, tour),
            [
                expected[0],
                expected[1],
                expected[2],
                r#"{"step":2,"from":"A","event":"Halt","to":"A","handled":true,"mealy":[],"moore":[],"actions":[]}"#
            ]
        );
        let equiv = r#"{"equivalent":false,"witness":[{"event":"Go","inputs":{"a":true}}],"step":1,"a":{},"b":{}}"#;
        assert_eq!(run(&m, equiv), expected[..2]);
        // `reset` takes nothing after it, and is refused when an event has its name.
        assert_eq!(
            error(&m, "reset a=1"),
            (1, 7, "a `reset` line has nothing after `reset`".into())
        );
        let named = machine("machine R { events reset; start S; state S { reset => stay; } }");
        assert_eq!(error(&named, "reset").1, 1);
        assert_eq!(
            parse_trace(&named, r#"{"event":"reset"}"#).unwrap().len(),
            1
        );
    }
}
