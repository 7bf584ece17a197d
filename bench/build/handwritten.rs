//! The hand-written baseline: the Rust a firmware engineer writes by hand for a machine,
//! printed from the resolved model so that the 50- and 1,000-state machines get one too.
//!
//! The shape is the idiomatic one: `enum State`, `enum Event`, a `struct Outputs` of
//! flags, a `Hooks` trait for inputs and actions, and
//! `fn step(&mut self, event: Event, hooks: &mut H) -> Result<Outputs, Rejected>` whose
//! body is one `match (self.state, event)`. Each arm runs the guards as an
//! `if`/`else if` chain, calls the actions in order (leave and enter actions written
//! out where the transition runs them, as a person does for a flat machine), sets the
//! rule's Mealy flags and yields the next state; after the match the state is stored
//! and the outputs are the new state's Moore outputs (`fn outputs`, a `match` on the
//! state) or'ed with the Mealy flags. One arm per state and distinct body, the events
//! sharing a body in one pattern: `(State::A, Event::X | Event::Y) => ..`.
//!
//! The meaning is detent's, read from the machine's lowered form
//! (`detent_compiler::model::lower`, which alone decides rule choice): per state and
//! event the cell's choices in order, each tested with its rule's guard as the spec
//! writes it (a person tests `if !raw` where the lowered form knows that nothing else
//! is left), then `else` the `unhandled` policy (`Err(Rejected)` under `reject`, the
//! current outputs otherwise); the choice's operation sequence (leave, rule and enter
//! actions), `stay` keeping the state. The guards call the input hooks where they
//! appear, as hand-written code usually does; the benchmark's hooks return the same
//! level on every call, so this reads the same values as the generated code.

use detent_compiler::model::lower::{Cell, Choice};
use detent_compiler::model::{EventId, Guard, Machine, StateId};
use detent_compiler::syntax::ast::Policy;
use std::fmt::Write;

/// The baseline's source: `pub mod <snake_name> { .. }`.
pub fn handwritten(m: &Machine) -> String {
    assert!(
        m.counters.is_empty(),
        "the hand-written baseline is written for machines without counters"
    );
    let snake = detent_compiler::emit::rust::module_name(m);
    let mut s = String::new();
    let _ = writeln!(
        s,
        "/// `{}` written by hand: the baseline of the dispatch benchmark.",
        m.name
    );
    let _ = writeln!(
        s,
        "#[allow(clippy::nonminimal_bool, clippy::if_same_then_else, clippy::collapsible_match)]"
    );
    let _ = writeln!(s, "pub mod {snake} {{");

    // Types.
    let _ = writeln!(s, "    /// The states.");
    let _ = writeln!(s, "    #[derive(Clone, Copy, Debug, PartialEq, Eq)]");
    let _ = writeln!(s, "    pub enum State {{");
    for st in &m.states {
        let _ = writeln!(s, "        /// `{}`.\n        {},", st.name, st.name);
    }
    let _ = writeln!(s, "    }}\n");
    let _ = writeln!(s, "    /// The events.");
    let _ = writeln!(s, "    #[derive(Clone, Copy, Debug, PartialEq, Eq)]");
    let _ = writeln!(s, "    pub enum Event {{");
    for e in &m.events {
        let _ = writeln!(s, "        /// `{}`.\n        {},", e.name, e.name);
    }
    let _ = writeln!(s, "    }}\n");
    let all: Vec<String> = m
        .events
        .iter()
        .map(|e| format!("Event::{}", e.name))
        .collect();
    let _ = writeln!(
        s,
        "    impl Event {{\n        /// Every event, in declaration order.\n        pub const ALL: [Event; {}] = [{}];\n    }}\n",
        all.len(),
        all.join(", ")
    );
    let _ = writeln!(s, "    /// The output lines after a step.");
    let _ = writeln!(
        s,
        "    #[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]"
    );
    let _ = writeln!(s, "    pub struct Outputs {{");
    for o in &m.outputs {
        let _ = writeln!(
            s,
            "        /// `{}`.\n        pub {}: bool,",
            o.name, o.name
        );
    }
    let _ = writeln!(s, "    }}\n");
    let _ = writeln!(s, "    /// The event was not handled in this state.");
    let _ = writeln!(s, "    #[derive(Clone, Copy, Debug, PartialEq, Eq)]");
    let _ = writeln!(s, "    pub struct Rejected;\n");
    let _ = writeln!(s, "    /// Inputs and actions, provided by the host.");
    let _ = writeln!(s, "    pub trait Hooks {{");
    for i in &m.inputs {
        let _ = writeln!(
            s,
            "        /// Reads `{}`.\n        fn {}(&mut self) -> bool;",
            i.name, i.name
        );
    }
    for a in &m.actions {
        let _ = writeln!(
            s,
            "        /// Runs `{}`.\n        fn {}(&mut self);",
            a.name, a.name
        );
    }
    let _ = writeln!(s, "    }}\n");
    let _ = writeln!(s, "    /// The machine: its current state.");
    let _ = writeln!(s, "    #[derive(Clone, Copy, Debug, PartialEq, Eq)]");
    let _ = writeln!(
        s,
        "    pub struct Machine {{\n        state: State,\n    }}\n"
    );
    let _ = writeln!(
        s,
        "    impl Default for Machine {{\n        fn default() -> Self {{\n            Machine::new()\n        }}\n    }}\n"
    );

    let _ = writeln!(s, "    impl Machine {{");
    let _ = writeln!(
        s,
        "        /// A machine in the start state.\n        pub const fn new() -> Self {{\n            Machine {{ state: State::{} }}\n        }}\n",
        m.states[m.start.index()].name
    );
    let _ = writeln!(
        s,
        "        /// The current state.\n        pub const fn state(&self) -> State {{\n            self.state\n        }}\n"
    );
    s.push_str(&outputs_fn(m));
    s.push_str(&step_fn(m));
    let _ = writeln!(s, "    }}");
    let _ = writeln!(s, "}}");
    s
}

/// `Outputs { a: true, b: false }` for the outputs whose ids are in `high`.
fn outputs_literal(m: &Machine, high: &[usize]) -> String {
    let fields: Vec<String> = m
        .outputs
        .iter()
        .enumerate()
        .map(|(i, o)| format!("{}: {}", o.name, high.contains(&i)))
        .collect();
    format!("Outputs {{ {} }}", fields.join(", "))
}

/// `fn outputs`: the Moore outputs, states with equal outputs sharing an arm.
fn outputs_fn(m: &Machine) -> String {
    let mut groups: Vec<(Vec<usize>, Vec<&str>)> = Vec::new();
    for (si, st) in m.states.iter().enumerate() {
        let moore = m.lowered.moore(StateId::from_index(si));
        let set: Vec<usize> = m.lowered.outputs(moore).iter().map(|o| o.index()).collect();
        match groups.iter_mut().find(|(g, _)| *g == set) {
            Some((_, names)) => names.push(&st.name),
            None => groups.push((set, vec![&st.name])),
        }
    }
    let mut s = String::from("        /// The Moore outputs of the current state.\n");
    s.push_str("        pub fn outputs(&self) -> Outputs {\n");
    if groups.len() == 1 {
        let _ = writeln!(s, "            {}", outputs_literal(m, &groups[0].0));
    } else {
        s.push_str("            match self.state {\n");
        for (set, names) in &groups {
            let pats: Vec<String> = names.iter().map(|n| format!("State::{n}")).collect();
            let _ = writeln!(
                s,
                "                {} => {},",
                pats.join(" | "),
                outputs_literal(m, set)
            );
        }
        s.push_str("            }\n");
    }
    s.push_str("        }\n\n");
    s
}

/// A guard as a Rust condition over `hooks`, fully simplified for constants and `!!`.
fn guard_text(m: &Machine, g: &Guard) -> Option<String> {
    // `None`: the guard is a constant; the caller handles `true`/`false` via `fold`.
    fn go(m: &Machine, g: &Guard, top: bool) -> String {
        match g {
            Guard::Input(i) => format!("hooks.{}()", m.inputs[i.index()].name),
            Guard::Atom(_) => unreachable!("the hand-written baseline has no counters"),
            Guard::Const(b) => b.to_string(),
            Guard::Not(a) => match &**a {
                Guard::Not(inner) => go(m, inner, top),
                Guard::Input(_) => format!("!{}", go(m, a, false)),
                _ => format!("!({})", go(m, a, true)),
            },
            Guard::And(a, b) => {
                let side = |x: &Guard| match x {
                    Guard::Or(..) => format!("({})", go(m, x, true)),
                    _ => go(m, x, false),
                };
                let text = format!("{} && {}", side(a), side(b));
                if top {
                    text
                } else {
                    format!("({text})")
                }
            }
            Guard::Or(a, b) => {
                let text = format!("{} || {}", go(m, a, false), go(m, b, false));
                if top {
                    text
                } else {
                    format!("({text})")
                }
            }
        }
    }
    match fold(g) {
        Some(_) => None,
        None => Some(go(m, g, true)),
    }
}

/// The constant value of a guard, when it has one whatever the inputs.
fn fold(g: &Guard) -> Option<bool> {
    match g {
        Guard::Input(_) | Guard::Atom(_) => None,
        Guard::Const(b) => Some(*b),
        Guard::Not(a) => fold(a).map(|b| !b),
        Guard::And(a, b) => match (fold(a), fold(b)) {
            (Some(false), _) | (_, Some(false)) => Some(false),
            (Some(true), Some(true)) => Some(true),
            _ => None,
        },
        Guard::Or(a, b) => match (fold(a), fold(b)) {
            (Some(true), _) | (_, Some(true)) => Some(true),
            (Some(false), Some(false)) => Some(false),
            _ => None,
        },
    }
}

/// The statements and next-state expression of a choice firing.
fn fire(m: &Machine, choice: &Choice, indent: &str) -> String {
    let mut body = String::new();
    for a in m.lowered.actions(choice.ops) {
        let _ = writeln!(body, "{indent}hooks.{}();", m.actions[a.index()].name);
    }
    for o in m.lowered.outputs(choice.mealy) {
        let _ = writeln!(body, "{indent}mealy.{} = true;", m.outputs[o.index()].name);
    }
    if choice.moves {
        let _ = writeln!(
            body,
            "{indent}State::{}",
            m.states[choice.target.index()].name
        );
    } else {
        let _ = writeln!(body, "{indent}self.state");
    }
    body
}

/// The body of one (state, event) arm, or `None` when no rule can fire there.
fn cell_body(m: &Machine, cell: &Cell, unhandled: &str) -> Option<String> {
    let mut chain: Vec<(String, &Choice)> = Vec::new();
    let mut always = None;
    for choice in &cell.choices {
        match &m.rules[choice.rule.index()].guard_expr {
            None => {
                always = Some(choice);
                break;
            }
            Some(g) => match fold(g) {
                Some(true) => {
                    always = Some(choice);
                    break;
                }
                Some(false) => {}
                None => chain.push((guard_text(m, g).expect("not constant"), choice)),
            },
        }
    }
    if chain.is_empty() && always.is_none() {
        return None;
    }
    if chain.is_empty() {
        return always.map(|c| fire(m, c, "                    "));
    }
    let mut text = String::new();
    for (i, (cond, choice)) in chain.iter().enumerate() {
        let kw = if i == 0 { "if" } else { "} else if" };
        let _ = writeln!(text, "                    {kw} {cond} {{");
        text.push_str(&fire(m, choice, "                        "));
    }
    text.push_str("                    } else {\n");
    match always {
        Some(c) => text.push_str(&fire(m, c, "                        ")),
        None => {
            let _ = writeln!(text, "                        {unhandled}");
        }
    }
    text.push_str("                    }\n");
    Some(text)
}

/// `fn step`.
fn step_fn(m: &Machine) -> String {
    let unhandled = match m.policy {
        Policy::Reject => "return Err(Rejected);",
        _ => "return Ok(self.outputs());",
    };
    // One arm per state and body, the events with that body sharing its pattern:
    // `(State::A, Event::X | Event::Y) => ..`, `(State::A, _)` when all events do.
    let mut arms: Vec<(String, String)> = Vec::new();
    let mut any_unhandled = false;
    for si in 0..m.states.len() {
        let s = StateId::from_index(si);
        let mut bodies: Vec<(String, Vec<usize>)> = Vec::new();
        for e in 0..m.events.len() {
            let cell = m.lowered.cell_of(s, EventId::from_index(e));
            let body = cell_body(m, cell, unhandled);
            match body {
                None => any_unhandled = true,
                Some(body) => match bodies.iter_mut().find(|(b, _)| *b == body) {
                    Some((_, es)) => es.push(e),
                    None => bodies.push((body, vec![e])),
                },
            }
        }
        for (body, es) in bodies {
            let events: Vec<String> = if es.len() == m.events.len() {
                vec!["_".to_string()]
            } else {
                es.iter()
                    .map(|&e| format!("Event::{}", m.events[e].name))
                    .collect()
            };
            let pat = format!("(State::{}, {})", m.states[si].name, events.join(" | "));
            arms.push((pat, body));
        }
    }
    let uses_hooks = arms.iter().any(|(_, b)| b.contains("hooks."));
    let uses_mealy = arms.iter().any(|(_, b)| b.contains("mealy."));
    let hooks = if uses_hooks { "hooks" } else { "_hooks" };
    let mut s = String::new();
    s.push_str(
        "        /// Takes one event: runs the transition's actions, moves to the next state\n        \
         /// and returns the outputs there.\n",
    );
    let _ = writeln!(
        s,
        "        pub fn step<H: Hooks>(&mut self, event: Event, {hooks}: &mut H) -> Result<Outputs, Rejected> {{"
    );
    if uses_mealy {
        s.push_str("            let mut mealy = Outputs::default();\n");
    }
    s.push_str("            let next = match (self.state, event) {\n");
    for (pat, body) in &arms {
        let _ = writeln!(s, "                {pat} => {{");
        s.push_str(body);
        s.push_str("                }\n");
    }
    if any_unhandled {
        let _ = writeln!(s, "                _ => {{ {unhandled} }}");
    }
    s.push_str("            };\n");
    s.push_str("            self.state = next;\n");
    if uses_mealy {
        let fields: Vec<String> = m
            .outputs
            .iter()
            .map(|o| format!("{0}: moore.{0} | mealy.{0}", o.name))
            .collect();
        s.push_str("            let moore = self.outputs();\n");
        let _ = writeln!(s, "            Ok(Outputs {{ {} }})", fields.join(", "));
    } else {
        s.push_str("            Ok(self.outputs())\n");
    }
    s.push_str("        }\n");
    s
}
