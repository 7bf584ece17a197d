//! The generated header: the API of DESIGN.md ("Generated C"), documented.

use super::names::CNames;
use super::tables::Layout;
use super::text::{banner, doc_block, wrap};
use crate::model::Machine;
use std::fmt::Write;

pub(super) fn header(m: &Machine, l: &Layout, n: &CNames, source_name: &str) -> String {
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
        "{}",
        if m.counters.is_empty() {
            format!("/** A running machine: the current state number (and its timers, when it has\n    timeouts). It may be stored (for example in flash) and written back; `{p}_step`\n    rejects a value that is not a state. */")
        } else {
            format!("/** A running machine: the current state number, its timers (when it has\n    timeouts) and its counters. It may be stored (for example in flash) and written\n    back; `{p}_step` rejects a value that is not a state and a counter past its\n    bound. */")
        }
    );
    let _ = write!(h, "struct {p}_machine {{\n    /** The current state (`enum {p}_state`). */\n    {st_ty} state;\n");
    for (k, f) in n.timers.iter().enumerate() {
        let ty = super::tables::uint_for(u64::from(m.timers[k].max())).0;
        let text = format!(
            "{} A stored value above the longest timeout reads as the longest timeout.",
            crate::emit::timers::timer_doc(m, crate::model::TimerId::from_index(k))
        );
        let doc: Vec<String> = wrap(&text, "\n").lines().map(str::to_string).collect();
        doc_block(&mut h, "    ", &doc);
        let _ = writeln!(h, "    {ty} {f};");
    }
    for (k, f) in n.counters.iter().enumerate() {
        let max = m.counters[k].max;
        let ty = super::tables::uint_for(u64::from(max)).0;
        let mut text =
            crate::emit::counters::counter_doc(m, crate::model::CounterId::from_index(k))
                .join("\n");
        text.push_str(&format!(
            " `{p}_init` sets it to 0; `{p}_step` returns -1 while it is above {max}."
        ));
        let doc: Vec<String> = text
            .split('\n')
            .flat_map(|para| {
                let w = wrap(para, "\n");
                let lines: Vec<String> = w.lines().map(str::to_string).collect();
                if lines.is_empty() {
                    vec![String::new()]
                } else {
                    lines
                }
            })
            .collect();
        doc_block(&mut h, "    ", &doc);
        let _ = writeln!(h, "    {ty} {f};");
    }
    let _ = writeln!(h, "}};\n");

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
    if m.has_timers() {
        let _ = writeln!(
            h,
            "/** The number of time-base events after which a timeout of the current state or\n    its groups comes due (its guard aside), so that a tickless host may sleep until\n    then; 0 when none is pending (or `m` is NULL or its state corrupt). */"
        );
        let _ = writeln!(
            h,
            "uint32_t {p}_next_timeout(const struct {p}_machine *m);\n"
        );
    }
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
