//! The JavaScript back end: the simulator of `detent view` (DESIGN.md, "The viewer").
//!
//! [`to_js`] writes one JavaScript expression that evaluates to a frozen object, the
//! machine's simulator. It is emitted from the lowered form ([`crate::model::lower`]),
//! like every other back end, and decides nothing about rule choice on its own: per
//! state a `switch` over the state's cells (its named events, then `default` for the
//! rest class), and per cell the choices in order, each an `if` on its folded test
//! (none for a choice that needs no test) returning the choice's target, Mealy output
//! set and operation sequence (interned tables, as in the lowered form).
//!
//! Inputs are read through a sampler, as the Rust back end reads its hooks: an input is
//! read the first time a test evaluated needs it and the value is reused by every later
//! test of the step; tests use JavaScript's short-circuit `&&`, `||` and `!`, left to
//! right, so the reads are those of the interpreter, in the same order
//! ([`crate::model::lower::Sampler`]).
//!
//! The object:
//!
//! ```text
//! name, states, events, inputs, outputs, actions   names, in declaration order
//! start                                            the start state's number
//! policy                                           "complete" | "ignore" | "reject"
//! clocked                                          true for a clocked machine
//! moore(state)                                     its Moore outputs, ascending
//! step(state, event, read, timers, counters)       one step; `read(i)` is input i's hook
//! timers, timeBase                                 the timers ({scope, durations, max,
//!                                                  states}) and the time-base event
//! counters                                         the counters ({name, max})
//! nextTimeout(state, timers)                       time-base events to the next timeout
//! create()                                         { state, timers, counters,
//!                                                    step(event, read), reset() }
//! ```
//!
//! Counters follow the interpreter too ([`crate::interp::apply_counter_ops`]): tests
//! compare the counters as they were at the start of the step (`cnt[k] < 2`, inline in
//! the test, evaluated in its place in the short-circuit order), and the operations of
//! the choice that fires then run in sequence order, each stopping at 0 and the
//! counter's largest value ([`crate::model::CounterOp::apply`]). A step that no rule
//! handles changes no counter.
//!
//! Timers follow the interpreter ([`crate::interp::Machine::step_config`]): on the
//! time-base event each timer of the state's scopes adds one first (stopping at its
//! largest duration), a timeout choice is due when its timer was at its duration minus
//! one before that, and a choice that fires sets the timers of the scopes it enters and
//! leaves to 0 (its `resets`, [`crate::model::lower::Choice::resets`]).
//!
//! `step` returns `{from, event, to, rule, handled, rejected, mealy, moore, outputs,
//! actions, reads, values}`: `rule` is the rule's number (`null` when none fired),
//! `outputs` the Moore and Mealy outputs together, ascending, `reads` the inputs read in
//! the order they were read, `values` the value each input had in the step (`null`:
//! not read), `timers` and `counters` the timers and counters after the step and
//! `nextTimeout` what
//! `nextTimeout` says after it. A state or event out of range throws a `RangeError`. `create().reset()`
//! restarts at the start state without running any action, as the generated code's
//! constructor does.
//!
//! The text is deterministic and self-contained (no import, no network), so that the
//! page of `detent view -o` can inline it. Cost: linear in the size of the lowered form.

use crate::emit::timers::{scope_name, timer_states};
use crate::model::lower::{CellEvents, Choice, Lowered};
use crate::model::{Cmp, CounterOpKind, Guard, Machine, Op};
use crate::syntax::ast::Policy;
use std::fmt::Write as _;

/// A JavaScript string literal for `s` (JSON's escapes, plus `<`, so that the text is
/// safe inside an HTML `<script>` element).
fn js_string(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            '<' => out.push_str("\\u003c"),
            c if (c as u32) < 0x20 || c == '\u{2028}' || c == '\u{2029}' => {
                let _ = write!(out, "\\u{:04x}", c as u32);
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

fn name_list(items: impl Iterator<Item = String>) -> String {
    let names: Vec<String> = items.map(|n| js_string(&n)).collect();
    format!("Object.freeze([{}])", names.join(", "))
}

fn number_table(rows: impl Iterator<Item = Vec<usize>>) -> String {
    let rows: Vec<String> = rows
        .map(|r| {
            let nums: Vec<String> = r.iter().map(usize::to_string).collect();
            format!("Object.freeze([{}])", nums.join(", "))
        })
        .collect();
    format!("Object.freeze([{}])", rows.join(", "))
}

/// A test as a JavaScript expression over the sampler `inp`. JavaScript evaluates `&&`,
/// `||` and `!` left to right with short circuit, as
/// [`crate::model::lower::Sampler::holds`] does; the parentheses follow the tree (only a
/// left operand with the same operator goes without), so the order of reads is the
/// tree's.
fn test_text(m: &Machine, g: &Guard) -> String {
    match g {
        Guard::Input(i) => format!("inp({})", i.index()),
        Guard::Atom(a) => {
            // The counter as it was at the start of the step (`cnt`, not updated by
            // the step's operations, which run after the choice).
            let atom = &m.atoms[a.index()];
            let op = match atom.cmp {
                Cmp::Eq => "===",
                Cmp::Ne => "!==",
                c => c.symbol(),
            };
            format!("cnt[{}] {op} {}", atom.counter.index(), atom.value)
        }
        Guard::Const(b) => b.to_string(),
        Guard::Not(a) => format!("!{}", atom(m, a)),
        Guard::And(a, b) => {
            let l = if matches!(**a, Guard::And(..)) {
                test_text(m, a)
            } else {
                atom(m, a)
            };
            format!("{l} && {}", atom(m, b))
        }
        Guard::Or(a, b) => {
            let l = if matches!(**a, Guard::Or(..)) {
                test_text(m, a)
            } else {
                atom(m, a)
            };
            format!("{l} || {}", atom(m, b))
        }
    }
}

/// An operand: parenthesized unless it is an input, a constant or a negation.
fn atom(m: &Machine, g: &Guard) -> String {
    match g {
        Guard::Input(_) | Guard::Const(_) | Guard::Not(_) => test_text(m, g),
        _ => format!("({})", test_text(m, g)),
    }
}

fn choice_return(m: &Machine, c: &Choice, zero: usize) -> String {
    let target = &m.states[c.target.index()].name;
    let how = if c.moves { "=>" } else { "stay in" };
    format!(
        "return [{}, {}, {}, {}, {zero}]; // rule {} {how} {target}",
        c.rule.index(),
        c.target.index(),
        c.mealy.index(),
        c.ops.index(),
        c.rule.index()
    )
}

/// The simulator of `m` as one JavaScript expression (see the module documentation).
pub fn to_js(m: &Machine) -> String {
    let low: &Lowered = &m.lowered;
    let mut js = String::new();
    let _ = writeln!(
        js,
        "// Simulator of machine `{}`, generated by detent from its lowered form. Do not edit.",
        m.name.replace('\n', " ")
    );
    js.push_str("(() => {\n\"use strict\";\n");
    let _ = writeln!(js, "const NAME = {};", js_string(&m.name));
    let _ = writeln!(
        js,
        "const STATES = {};",
        name_list(m.states.iter().map(|s| s.name.clone()))
    );
    for (what, items) in [
        ("EVENTS", &m.events),
        ("INPUTS", &m.inputs),
        ("OUTPUTS", &m.outputs),
        ("ACTIONS", &m.actions),
    ] {
        let _ = writeln!(
            js,
            "const {what} = {};",
            name_list(items.iter().map(|i| i.name.clone()))
        );
    }
    let policy = match m.policy {
        Policy::Complete => "complete",
        Policy::Ignore => "ignore",
        Policy::Reject => "reject",
    };
    let _ = writeln!(js, "const POLICY = {};", js_string(policy));
    js.push_str("// Interned output sets (0: none) and operation sequences (0: nothing).\n");
    let _ = writeln!(
        js,
        "const OUT_SETS = {};",
        number_table(
            low.output_sets()
                .iter()
                .map(|s| s.iter().map(|o| o.index()).collect())
        )
    );
    let _ = writeln!(
        js,
        "const SEQS = {};",
        number_table(
            low.seqs()
                .iter()
                .map(|s| { s.iter().filter_map(Op::action).map(|a| a.index()).collect() })
        )
    );
    js.push_str(
        "// The counter operations of each sequence, in order: [counter, kind, value], kind\n\
         // 0: `+=`, 1: `-=`, 2: `=` (each stops at 0 and the counter's largest value).\n",
    );
    let _ = writeln!(
        js,
        "const COUNTER_OPS = {};",
        number_table(low.seqs().iter().map(|s| {
            s.iter()
                .filter_map(|op| match op {
                    Op::Counter(c) => Some(c),
                    Op::Action(_) => None,
                })
                .flat_map(|c| {
                    let kind = match c.kind {
                        CounterOpKind::Add => 0,
                        CounterOpKind::Sub => 1,
                        CounterOpKind::Set => 2,
                    };
                    [c.counter.index(), kind, usize::from(c.value)]
                })
                .collect()
        }))
    );
    let counters: Vec<String> = m
        .counters
        .iter()
        .map(|c| {
            format!(
                "Object.freeze({{ name: {}, max: {} }})",
                js_string(&c.name),
                c.max
            )
        })
        .collect();
    let _ = writeln!(
        js,
        "// The counters: name and largest value (each starts at 0).\nconst COUNTERS = Object.freeze([{}]);",
        counters.join(", ")
    );
    let moore: Vec<String> = (0..m.states.len())
        .map(|s| {
            low.moore(crate::model::StateId::from_index(s))
                .index()
                .to_string()
        })
        .collect();
    let _ = writeln!(
        js,
        "// The Moore output set of each state.\nconst MOORE = Object.freeze([{}]);",
        moore.join(", ")
    );

    // Timers: what each counts, the states where it counts, and the sets of timers a
    // choice sets to 0 (interned; 0: none).
    let mut zero_sets: Vec<Vec<usize>> = vec![Vec::new()];
    let timers: Vec<String> = (0..m.timers.len())
        .map(|k| {
            let t = crate::model::TimerId::from_index(k);
            let durations: Vec<String> =
                m.timers[k].durations.iter().map(u32::to_string).collect();
            let states: Vec<String> = timer_states(m, t)
                .iter()
                .map(|s| s.index().to_string())
                .collect();
            format!(
                "Object.freeze({{ scope: {}, durations: Object.freeze([{}]), max: {}, states: Object.freeze([{}]) }})",
                js_string(scope_name(m, m.timers[k].scope)),
                durations.join(", "),
                m.timers[k].max(),
                states.join(", ")
            )
        })
        .collect();
    let _ = writeln!(
        js,
        "// The timers: per scope with `after` rules, its durations (ticks, ascending), the\n\
         // value it stops at, and the states where it counts.\nconst TIMERS = Object.freeze([{}]);",
        timers.join(", ")
    );
    let tb = m
        .timebase
        .as_ref()
        .filter(|_| m.has_timers())
        .map_or("null".to_string(), |t| t.event.index().to_string());
    let _ = writeln!(
        js,
        "// The time-base event (null: no timers).\nconst TIME_BASE = {tb};"
    );

    js.push_str(
        "\n// The choice that fires: [rule, target, mealy set, sequence, timers set to 0], or\n\
         // null when no rule handles the step. The first choice whose due timeout (if any,\n\
         // `before` holds the timers before this event) and then test hold fires; tests\n\
         // read the counters `cnt` as they were at the start of the step.\n\
         function choose(state, event, inp, before, cnt) {\n  switch (state) {\n",
    );
    for (si, st) in m.states.iter().enumerate() {
        let _ = writeln!(js, "    case {si}: // {}", st.name.replace('\n', " "));
        js.push_str("      switch (event) {\n");
        let cells = low.cells_of(crate::model::StateId::from_index(si));
        let mut has_rest = false;
        for cell in cells {
            match cell.events {
                CellEvents::One(e) => {
                    let _ = writeln!(
                        js,
                        "        case {}: // {}",
                        e.index(),
                        m.event_name(e).replace('\n', " ")
                    );
                }
                CellEvents::Rest => {
                    has_rest = true;
                    js.push_str("        default: // every other event\n");
                }
            }
            for c in &cell.choices {
                let zeroed: Vec<usize> = c.resets.iter().map(|t| t.index()).collect();
                let zero = match zero_sets.iter().position(|z| *z == zeroed) {
                    Some(k) => k,
                    None => {
                        zero_sets.push(zeroed);
                        zero_sets.len() - 1
                    }
                };
                let due = c
                    .due
                    .map(|(t, d)| format!("before[{}] === {}", t.index(), d.saturating_sub(1)));
                let cond = match (due, &c.test) {
                    (None, None) => None,
                    (Some(d), None) => Some(d),
                    (None, Some(t)) => Some(test_text(m, t)),
                    (Some(d), Some(t)) => Some(format!("{d} && {}", atom(m, t))),
                };
                match cond {
                    None => {
                        let _ = writeln!(js, "          {}", choice_return(m, c, zero));
                    }
                    Some(cond) => {
                        let _ = writeln!(js, "          if ({cond}) {}", choice_return(m, c, zero));
                    }
                }
            }
            let covered = cell
                .choices
                .last()
                .is_some_and(|c| c.test.is_none() && c.due.is_none());
            if !covered {
                js.push_str("          return null;\n");
            }
        }
        if !has_rest {
            js.push_str("        default:\n          return null;\n");
        }
        js.push_str("      }\n");
    }
    js.push_str("  }\n  return null;\n}\n");
    let _ = writeln!(
        js,
        "// The sets of timers a choice sets to 0: those of the scopes it enters and leaves.\nconst ZERO_SETS = {};",
        number_table(zero_sets.into_iter())
    );

    js.push_str(
        r#"
// The inputs of one step, each read at most once: the first time a test needs it.
function sampler(read) {
  const values = new Array(INPUTS.length).fill(null);
  const reads = [];
  const inp = (i) => {
    if (values[i] === null) {
      values[i] = read(i) ? true : false;
      reads.push(i);
    }
    return values[i];
  };
  return { inp, values, reads };
}

function union(a, b) {
  const all = a.concat(b);
  all.sort((x, y) => x - y);
  return all.filter((x, k) => k === 0 || all[k - 1] !== x);
}

function check(what, n, count) {
  if (!Number.isInteger(n) || n < 0 || n >= count) {
    throw new RangeError(`${what} ${n} is out of range (0..${count - 1})`);
  }
}

// The time-base events until a timeout of `state` comes due (guards aside), given
// its timers; null when none is pending.
function nextTimeout(state, timers) {
  check("state", state, STATES.length);
  let next = null;
  TIMERS.forEach((t, k) => {
    if (!t.states.includes(state)) return;
    const v = timers[k];
    const d = t.durations.find((x) => x > v);
    if (d !== undefined && (next === null || d - v < next)) next = d - v;
  });
  return next;
}

// The counters after the operations of sequence `seq`, in order, from `cnt`.
function countersAfter(seq, cnt) {
  const out = cnt.slice();
  const ops = COUNTER_OPS[seq];
  for (let k = 0; k < ops.length; k += 3) {
    const [c, kind, v] = [ops[k], ops[k + 1], ops[k + 2]];
    const max = COUNTERS[c].max;
    if (kind === 0) out[c] = Math.min(out[c] + v, max);
    else if (kind === 1) out[c] = Math.max(out[c] - v, 0);
    else out[c] = Math.min(v, max);
  }
  return out;
}

// One step from `state` on `event` with `timers` (one count per timer, all 0 when left
// out) and `counters` (one value per counter, all 0 when left out); `read(i)` is the
// hook of input i. On the time-base event each timer of the state's scopes first adds
// one, stopping at its largest duration; guards read the counters as they are now,
// and the operations of the rule that fires then change them. The result holds the
// timers and counters after the step.
function step(state, event, read, timers, counters) {
  check("state", state, STATES.length);
  check("event", event, EVENTS.length);
  const cnt = COUNTERS.map((c, k) => {
    const v = (counters && counters[k]) || 0;
    if (!Number.isInteger(v) || v < 0 || v > c.max) {
      throw new RangeError(`counter ${c.name} = ${v} is out of range (0..${c.max})`);
    }
    return v;
  });
  const before = TIMERS.map((_, k) => (timers && timers[k]) || 0);
  const after = before.slice();
  if (event === TIME_BASE) {
    TIMERS.forEach((t, k) => {
      if (t.states.includes(state)) after[k] = Math.min(before[k] + 1, t.max);
    });
  }
  const s = sampler(read);
  const c = choose(state, event, s.inp, before, cnt);
  if (c === null) {
    const moore = OUT_SETS[MOORE[state]].slice();
    return {
      from: state, event, to: state, rule: null, handled: false,
      rejected: POLICY === "reject", mealy: [], moore, outputs: moore.slice(),
      actions: [], reads: s.reads, values: s.values, timers: after, counters: cnt,
      nextTimeout: nextTimeout(state, after),
    };
  }
  const [rule, to, mealySet, seq, zero] = c;
  for (const k of ZERO_SETS[zero]) after[k] = 0;
  const mealy = OUT_SETS[mealySet].slice();
  const moore = OUT_SETS[MOORE[to]].slice();
  return {
    from: state, event, to, rule, handled: true, rejected: false, mealy, moore,
    outputs: union(moore, mealy), actions: SEQS[seq].slice(), reads: s.reads,
    values: s.values, timers: after, counters: countersAfter(seq, cnt),
    nextTimeout: nextTimeout(to, after),
  };
}

// A running machine: starts (and restarts) in the start state without running actions.
function create() {
  const sim = {
    state: START,
    timers: TIMERS.map(() => 0),
    counters: COUNTERS.map(() => 0),
    step(event, read) {
      const r = step(sim.state, event, read, sim.timers, sim.counters);
      sim.state = r.to;
      sim.timers = r.timers;
      sim.counters = r.counters;
      return r;
    },
    reset() {
      sim.state = START;
      sim.timers = TIMERS.map(() => 0);
      sim.counters = COUNTERS.map(() => 0);
    },
  };
  return sim;
}
"#,
    );
    let _ = writeln!(js, "const START = {};", m.start.index());
    let _ = writeln!(
        js,
        "return Object.freeze({{\n  name: NAME, states: STATES, events: EVENTS, inputs: INPUTS,\n  \
         outputs: OUTPUTS, actions: ACTIONS, start: START, policy: POLICY, clocked: {},\n  \
         moore: (state) => {{ check(\"state\", state, STATES.length); return OUT_SETS[MOORE[state]].slice(); }},\n  \
         timers: TIMERS, timeBase: TIME_BASE, counters: COUNTERS, nextTimeout, step, create,\n}});\n}})()",
        m.clocked
    );
    js
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn strings_are_safe_in_a_script_element() {
        assert_eq!(js_string("a\"b</script>"), r#""a\"b\u003c/script>""#);
        assert_eq!(js_string("x\u{2028}"), r#""x\u2028""#);
    }
}
