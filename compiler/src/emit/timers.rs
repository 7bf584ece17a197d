//! What every code generator needs to know about a machine's timers (LANGUAGE.md, "Time
//! and counts"; the lowered form's timeout choices, [`crate::model::lower`]): their
//! names in generated code, what they count (for generated documentation), and the
//! timers a choice sets to 0 when it fires.
//!
//! The semantics the generated code follows are those of
//! [`crate::interp::Machine::step_config`]: on the time-base event, each timer of the
//! current state's scopes adds one, stopping at its largest duration; a timeout choice
//! is due when its timer's value *before* that increment is its duration minus one (the
//! due test comes before the choice's guard and reads no input); a choice that fires
//! sets the timers in its `resets` ([`crate::model::lower::Choice::resets`]: for a move,
//! the scopes it enters and every scope not active after it) to 0 and no others, so that
//! a timer is 0 whenever its scope is not active and two machines in the same
//! configuration compare equal. Generated code reads that list; it does not work out
//! its own.
//!
//! Cost: a move writes every timer that does not keep counting (a few byte stores);
//! `stay` writes none.

use crate::model::{Machine, Scope, StateId, TimerId};
use crate::naming::to_snake;

/// The name of a scope as written in the spec.
pub fn scope_name(m: &Machine, scope: Scope) -> &str {
    match scope {
        Scope::State(s) => &m.states[s.index()].name,
        Scope::Group(g) => &m.groups[g.index()].name,
    }
}

/// One name per timer, for struct fields: the scope's name in snake_case, with the
/// timer's number appended when two scopes would get the same name.
pub fn timer_names(m: &Machine) -> Vec<String> {
    let snake: Vec<String> = m
        .timers
        .iter()
        .map(|t| to_snake(scope_name(m, t.scope)))
        .collect();
    snake
        .iter()
        .enumerate()
        .map(|(i, n)| {
            if snake.iter().filter(|x| *x == n).count() > 1 || n.is_empty() {
                format!("{n}_{i}")
            } else {
                n.clone()
            }
        })
        .collect()
}

/// The states in which a timer counts: its scope's state, or its group's members,
/// ascending.
pub fn timer_states(m: &Machine, t: TimerId) -> Vec<StateId> {
    match m.timers[t.index()].scope {
        Scope::State(s) => vec![s],
        Scope::Group(g) => m.groups[g.index()].states.clone(),
    }
}

/// One sentence saying what a timer counts: its scope, the time base, its durations and
/// the value it stops at.
pub fn timer_doc(m: &Machine, t: TimerId) -> String {
    let timer = &m.timers[t.index()];
    let scope = match timer.scope {
        Scope::State(_) => "state",
        Scope::Group(_) => "group",
    };
    let name = scope_name(m, timer.scope);
    let base = match &m.timebase {
        Some(tb) => {
            let event = &m.events[tb.event.index()].name;
            match tb.period_us {
                Some(_) => format!("`{event}` events ({} each)", m.duration_text(1)),
                None => format!("`{event}` events"),
            }
        }
        None => "time-base events".to_string(),
    };
    let durations: Vec<String> = timer
        .durations
        .iter()
        .map(|&d| {
            let text = m.duration_text(d);
            if text == format!("{d} ticks") {
                text
            } else {
                format!("{text} ({d} ticks)")
            }
        })
        .collect();
    format!(
        "Time-base events ({base}) counted since {scope} `{name}` was entered, stopping at \
         {} (its longest timeout); its `after` rules come due at {}. 0 while the machine \
         is not in `{name}`.",
        timer.max(),
        durations.join(", ")
    )
}
