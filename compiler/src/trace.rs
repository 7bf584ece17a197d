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
//!   `true`/`false` or `0`/`1`. Any other key is an error (a tour's `{"reset":true}`
//!   marker too: a trace runs from the start state without restarts).
//!
//! Errors carry the 1-based line and the 1-based column (in characters) of the offending
//! word or JSON value.
//!
//! # Output
//!
//! [`run_json_lines`] runs the steps through the reference interpreter
//! ([`Machine::step`]) and renders DESIGN.md's JSON lines: a step-0 line with the start
//! state and its Moore outputs, then one line per step with `from`, `event`, `to`,
//! `handled`, the Mealy and Moore outputs (declaration order) and the actions (run order).
//!
//! Cost: parsing is linear in the trace's length (name lookups are linear scans over the
//! machine's events and inputs, which the limits keep small per lookup); running is one
//! interpreter step per trace step.

use crate::interp::StepResult;
use crate::model::{EventId, InputId, Machine};
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
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TraceError {
    /// 1-based line number.
    pub line: usize,
    /// 1-based column, in characters, of the offending word or value.
    pub column: usize,
    /// What is wrong, and what is expected.
    pub message: String,
}

impl fmt::Display for TraceError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "line {}, column {}: {}",
            self.line, self.column, self.message
        )
    }
}

impl std::error::Error for TraceError {}

/// Parses a whole trace (text and JSON lines may be mixed) against a machine's events and
/// inputs. Stops at the first error.
pub fn parse_trace(m: &Machine, text: &str) -> Result<Vec<TraceStep>, TraceError> {
    let mut steps = Vec::new();
    for (index, raw) in text.lines().enumerate() {
        let line = index + 1;
        let trimmed = raw.trim_start();
        let lead = raw.len() - trimmed.len();
        match trimmed.as_bytes().first() {
            None | Some(b'#') => continue,
            Some(b'[') | Some(b'{') => parse_json_line(m, raw, lead, line, &mut steps)?,
            Some(_) => steps.push(parse_text_line(m, raw, line)?),
        }
    }
    Ok(steps)
}

/// Runs the steps from the start state and renders DESIGN.md's JSON lines (without
/// trailing newlines): first `{"step":0,"state":..,"moore":[..]}`, then one line per step.
pub fn run_json_lines(m: &Machine, steps: &[TraceStep]) -> Vec<String> {
    let mut out = Vec::with_capacity(steps.len() + 1);
    out.push(start_json(m));
    let mut state = m.start;
    for (i, s) in steps.iter().enumerate() {
        let r = m.step(state, s.event, &s.inputs);
        state = r.to;
        out.push(step_json(m, i + 1, &r));
    }
    out
}

/// The step-0 line: the start state and its Moore outputs.
pub fn start_json(m: &Machine) -> String {
    let start = &m.states[m.start.index()];
    format!(
        "{{\"step\":0,\"state\":{},\"moore\":{}}}",
        json_str(&start.name),
        json_names(
            start
                .moore
                .iter()
                .map(|o| m.outputs[o.index()].name.as_str())
        )
    )
}

/// The JSON line of step number `n` (1-based) of an interpreter run.
pub fn step_json(m: &Machine, n: usize, r: &StepResult) -> String {
    format!(
        "{{\"step\":{n},\"from\":{},\"event\":{},\"to\":{},\"handled\":{},\"mealy\":{},\"moore\":{},\"actions\":{}}}",
        json_str(m.state_name(r.from)),
        json_str(m.event_name(r.event)),
        json_str(m.state_name(r.to)),
        r.handled(),
        json_names(r.mealy.iter().map(|o| m.outputs[o.index()].name.as_str())),
        json_names(r.moore.iter().map(|o| m.outputs[o.index()].name.as_str())),
        json_names(r.actions.iter().map(|a| m.actions[a.index()].name.as_str())),
    )
}

/// A JSON string literal (serde_json's escaping; `Display` of a `Value` cannot fail).
pub(crate) fn json_str(s: &str) -> String {
    serde_json::Value::String(s.to_owned()).to_string()
}

/// A JSON array of string literals.
pub(crate) fn json_names<'a>(names: impl Iterator<Item = &'a str>) -> String {
    let items: Vec<String> = names.map(json_str).collect();
    format!("[{}]", items.join(","))
}

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

fn lookup_event(m: &Machine, name: &str) -> Result<EventId, String> {
    if let Some(e) = m.event_id(name) {
        return Ok(e);
    }
    if m.clocked {
        Err(format!(
            "unknown event `{name}`: machine `{}` is clocked, and its only event is `Tick`",
            m.name
        ))
    } else {
        Err(format!(
            "unknown event `{name}`: machine `{}` has events {}",
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
            "unknown input `{name}`: machine `{}` has inputs {}",
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

fn parse_text_line(m: &Machine, raw: &str, line: usize) -> Result<TraceStep, TraceError> {
    let err = |byte: usize, message: String| TraceError {
        line,
        column: column(raw, byte),
        message,
    };
    let ws = words(raw);
    let Some(&(at, name)) = ws.first() else {
        // `words` is empty only for comment lines, which the caller skips.
        return Err(err(0, "expected an event name".into()));
    };
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
    Ok(TraceStep {
        event,
        inputs,
        line,
    })
}

fn parse_json_line(
    m: &Machine,
    raw: &str,
    lead: usize,
    line: usize,
    steps: &mut Vec<TraceStep>,
) -> Result<(), TraceError> {
    let err = |byte: usize, message: String| TraceError {
        line,
        column: column(raw, byte),
        message,
    };
    let mut p = JsonParser {
        text: raw,
        pos: lead,
    };
    let value = p.value().map_err(|(at, msg)| err(at, msg))?;
    p.skip_ws();
    if p.pos < raw.len() {
        return Err(err(p.pos, "unexpected text after the JSON value".into()));
    }
    let items = match value.value {
        Json::Array(items) => items,
        other => vec![Spanned {
            at: value.at,
            value: other,
        }],
    };
    for item in items {
        steps.push(json_step(m, item, line).map_err(|(at, msg)| err(at, msg))?);
    }
    Ok(())
}

fn json_step(m: &Machine, v: Spanned, line: usize) -> Result<TraceStep, (usize, String)> {
    let Json::Object(fields) = v.value else {
        return Err((
            v.at,
            "expected a step object `{\"event\":..,\"inputs\":{..}}`".into(),
        ));
    };
    let mut event = None;
    let mut inputs = vec![false; m.inputs.len()];
    let mut seen_inputs = false;
    for (key_at, key, value) in fields {
        match key.as_str() {
            "event" => {
                if event.is_some() {
                    return Err((key_at, "key `event` is given twice".into()));
                }
                let Json::Str(name) = &value.value else {
                    return Err((value.at, "`event` must be a string".into()));
                };
                event = Some(lookup_event(m, name).map_err(|msg| (value.at, msg))?);
            }
            "inputs" => {
                if seen_inputs {
                    return Err((key_at, "key `inputs` is given twice".into()));
                }
                seen_inputs = true;
                let Json::Object(vals) = value.value else {
                    return Err((
                        value.at,
                        "`inputs` must be an object like {\"a\":true}".into(),
                    ));
                };
                let mut given = vec![false; m.inputs.len()];
                for (name_at, name, val) in vals {
                    let id = lookup_input(m, &name).map_err(|msg| (name_at, msg))?;
                    if given[id.index()] {
                        return Err((
                            name_at,
                            format!("input `{name}` is given twice in this step"),
                        ));
                    }
                    given[id.index()] = true;
                    inputs[id.index()] = match &val.value {
                        Json::Bool(b) => *b,
                        Json::Num(n) if n == "0" => false,
                        Json::Num(n) if n == "1" => true,
                        _ => {
                            return Err((
                                val.at,
                                format!("input `{name}` must be true, false, 0 or 1"),
                            ))
                        }
                    };
                }
            }
            "reset" => {
                return Err((
                    key_at,
                    "a `reset` marker cannot be replayed: a trace runs from the start state \
                     without restarts; split the trace at the marker"
                        .into(),
                ))
            }
            other => {
                return Err((
                    key_at,
                    format!("unknown key `{other}`; a step has `event` and `inputs`"),
                ))
            }
        }
    }
    let Some(event) = event else {
        return Err((v.at, "this step has no `event`".into()));
    };
    Ok(TraceStep {
        event,
        inputs,
        line,
    })
}

/// A JSON value with the byte offset where it starts.
struct Spanned {
    at: usize,
    value: Json,
}

/// The JSON values a trace line can hold. Numbers keep their text: the only numbers a
/// trace accepts are `0` and `1`.
enum Json {
    Null,
    Bool(bool),
    Num(String),
    Str(String),
    Array(Vec<Spanned>),
    /// Fields in written order: (key offset, key, value).
    Object(Vec<(usize, String, Spanned)>),
}

/// A small recursive-descent JSON reader (RFC 8259 grammar) that keeps the offset of
/// every value, so that errors point at the offending column. serde_json's `Value`
/// drops positions, hence this reader.
struct JsonParser<'a> {
    text: &'a str,
    pos: usize,
}

type JsonResult<T> = Result<T, (usize, String)>;

impl JsonParser<'_> {
    /// Nesting limit: a trace line is a flat list of flat objects.
    const MAX_DEPTH: usize = 16;

    fn peek(&self) -> Option<u8> {
        self.text.as_bytes().get(self.pos).copied()
    }

    fn skip_ws(&mut self) {
        while let Some(b' ' | b'\t' | b'\n' | b'\r') = self.peek() {
            self.pos += 1;
        }
    }

    fn expect(&mut self, b: u8) -> JsonResult<()> {
        self.skip_ws();
        if self.peek() == Some(b) {
            self.pos += 1;
            Ok(())
        } else {
            Err((self.pos, format!("expected `{}` in JSON", b as char)))
        }
    }

    fn value(&mut self) -> JsonResult<Spanned> {
        self.value_at_depth(0)
    }

    fn value_at_depth(&mut self, depth: usize) -> JsonResult<Spanned> {
        self.skip_ws();
        let at = self.pos;
        if depth > Self::MAX_DEPTH {
            return Err((at, "JSON nested too deeply for a trace".into()));
        }
        let value = match self.peek() {
            None => return Err((at, "unexpected end of line in JSON".into())),
            Some(b'{') => {
                self.pos += 1;
                let mut fields = Vec::new();
                self.skip_ws();
                if self.peek() == Some(b'}') {
                    self.pos += 1;
                } else {
                    loop {
                        self.skip_ws();
                        let key_at = self.pos;
                        if self.peek() != Some(b'"') {
                            return Err((key_at, "expected a string key in JSON object".into()));
                        }
                        let key = self.string()?;
                        self.expect(b':')?;
                        let v = self.value_at_depth(depth + 1)?;
                        fields.push((key_at, key, v));
                        self.skip_ws();
                        match self.peek() {
                            Some(b',') => self.pos += 1,
                            Some(b'}') => {
                                self.pos += 1;
                                break;
                            }
                            _ => {
                                return Err((self.pos, "expected `,` or `}` in JSON object".into()))
                            }
                        }
                    }
                }
                Json::Object(fields)
            }
            Some(b'[') => {
                self.pos += 1;
                let mut items = Vec::new();
                self.skip_ws();
                if self.peek() == Some(b']') {
                    self.pos += 1;
                } else {
                    loop {
                        items.push(self.value_at_depth(depth + 1)?);
                        self.skip_ws();
                        match self.peek() {
                            Some(b',') => self.pos += 1,
                            Some(b']') => {
                                self.pos += 1;
                                break;
                            }
                            _ => {
                                return Err((self.pos, "expected `,` or `]` in JSON array".into()))
                            }
                        }
                    }
                }
                Json::Array(items)
            }
            Some(b'"') => Json::Str(self.string()?),
            Some(b't') => self.keyword("true", Json::Bool(true))?,
            Some(b'f') => self.keyword("false", Json::Bool(false))?,
            Some(b'n') => self.keyword("null", Json::Null)?,
            Some(b'-' | b'0'..=b'9') => Json::Num(self.number()?),
            Some(_) => return Err((at, "expected a JSON value".into())),
        };
        Ok(Spanned { at, value })
    }

    fn keyword(&mut self, word: &str, v: Json) -> JsonResult<Json> {
        if self.text[self.pos..].starts_with(word) {
            self.pos += word.len();
            Ok(v)
        } else {
            Err((self.pos, "expected a JSON value".into()))
        }
    }

    fn number(&mut self) -> JsonResult<String> {
        let start = self.pos;
        let bytes = self.text.as_bytes();
        let digits = |p: &mut usize| {
            let s = *p;
            while bytes.get(*p).is_some_and(u8::is_ascii_digit) {
                *p += 1;
            }
            *p > s
        };
        let mut p = self.pos;
        if bytes.get(p) == Some(&b'-') {
            p += 1;
        }
        if !digits(&mut p) {
            return Err((start, "malformed JSON number".into()));
        }
        if bytes.get(p) == Some(&b'.') {
            p += 1;
            if !digits(&mut p) {
                return Err((start, "malformed JSON number".into()));
            }
        }
        if let Some(b'e' | b'E') = bytes.get(p) {
            p += 1;
            if let Some(b'+' | b'-') = bytes.get(p) {
                p += 1;
            }
            if !digits(&mut p) {
                return Err((start, "malformed JSON number".into()));
            }
        }
        self.pos = p;
        Ok(self.text[start..p].to_owned())
    }

    /// A string literal starting at `"`; decodes escapes, including surrogate pairs.
    fn string(&mut self) -> JsonResult<String> {
        let start = self.pos;
        self.pos += 1;
        let mut out = String::new();
        loop {
            let rest = &self.text[self.pos..];
            let Some(c) = rest.chars().next() else {
                return Err((start, "unterminated JSON string".into()));
            };
            let at = self.pos;
            self.pos += c.len_utf8();
            match c {
                '"' => return Ok(out),
                '\\' => {
                    let Some(e) = self.text[self.pos..].chars().next() else {
                        return Err((start, "unterminated JSON string".into()));
                    };
                    self.pos += e.len_utf8();
                    match e {
                        '"' => out.push('"'),
                        '\\' => out.push('\\'),
                        '/' => out.push('/'),
                        'b' => out.push('\u{8}'),
                        'f' => out.push('\u{c}'),
                        'n' => out.push('\n'),
                        'r' => out.push('\r'),
                        't' => out.push('\t'),
                        'u' => {
                            let hi = self.hex4(at)?;
                            let code = if (0xD800..0xDC00).contains(&hi) {
                                if !self.text[self.pos..].starts_with("\\u") {
                                    return Err((at, "unpaired surrogate in JSON string".into()));
                                }
                                self.pos += 2;
                                let lo = self.hex4(at)?;
                                if !(0xDC00..0xE000).contains(&lo) {
                                    return Err((at, "unpaired surrogate in JSON string".into()));
                                }
                                0x10000 + ((hi - 0xD800) << 10) + (lo - 0xDC00)
                            } else {
                                hi
                            };
                            match char::from_u32(code) {
                                Some(ch) => out.push(ch),
                                None => {
                                    return Err((at, "invalid \\u escape in JSON string".into()))
                                }
                            }
                        }
                        _ => return Err((at, "invalid escape in JSON string".into())),
                    }
                }
                c if (c as u32) < 0x20 => {
                    return Err((at, "control character in JSON string".into()))
                }
                c => out.push(c),
            }
        }
    }

    fn hex4(&mut self, at: usize) -> JsonResult<u32> {
        let digits = self
            .text
            .get(self.pos..self.pos + 4)
            .filter(|d| d.bytes().all(|b| b.is_ascii_hexdigit()))
            .ok_or((at, "invalid \\u escape in JSON string".to_string()))?;
        let v = u32::from_str_radix(digits, 16)
            .map_err(|_| (at, "invalid \\u escape in JSON string".to_string()))?;
        self.pos += 4;
        Ok(v)
    }
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
            // Ajar's own `_` comes before Door's rule naming Knock: no ring.
            r#"{"step":4,"from":"Ajar","event":"Knock","to":"Ajar","handled":true,"mealy":[],"moore":["busy"],"actions":[]}"#,
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
                TraceStep {
                    event: EventId(0),
                    inputs: vec![true, true],
                    line: 1
                },
                TraceStep {
                    event: EventId(1),
                    inputs: vec![false, false],
                    line: 4
                },
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
        assert_eq!(error(&m, r#"{"reset":true}"#).1, 2);
        assert_eq!(
            error(&m, r#"{"event":"Go","when":1}"#),
            (
                1,
                15,
                "unknown key `when`; a step has `event` and `inputs`".into()
            )
        );
        assert_eq!(
            error(&m, r#"{"event":"Go"} x"#),
            (1, 16, "unexpected text after the JSON value".into())
        );
        assert_eq!(
            error(&m, r#"[{"event":"Go"}"#),
            (1, 16, "expected `,` or `]` in JSON array".into())
        );
        assert_eq!(
            error(&m, "Go\n{\"event\":\"G\\u006f\",\"inputs\":{\"a\":tru}}"),
            (2, 34, "expected a JSON value".into())
        );
        // `\u006f` is `o`: escapes decode.
        assert_eq!(
            parse_trace(&m, "{\"event\":\"G\\u006f\"}").unwrap()[0].event,
            EventId(0)
        );
    }
}
