//! The generated source: the tables of [`super::tables::Layout`] as `static const`
//! arrays, the input sampler, the guard and action switches, and `step`.

use super::names::CNames;
use super::tables::{uint_for, Layout, Test};
use super::text::{banner, c_string, comment_text, number_rows};
use crate::emit::counters::{atom_code, op_code, AtomCode, OpCode};
use crate::model::{CounterOp, Guard, Machine};
use std::fmt::Write;

fn guard_c(m: &Machine, g: &Guard, n: &CNames) -> String {
    let p = &n.p;
    match g {
        Guard::Input(i) => format!("{p}_input_(in, {}u, hooks, ctx)", i.index()),
        // A counter as stored at the start of the step (no operation has run yet),
        // the comparison folded over the counter's range (`emit::counters`).
        Guard::Atom(a) => match atom_code(m, &m.atoms[a.index()]) {
            AtomCode::Const(b) => b.to_string(),
            AtomCode::Cmp(c, cmp, k) => {
                format!("(m->{} {} {k}u)", n.counters[c.index()], cmp.symbol())
            }
        },
        Guard::Const(true) => "true".into(),
        Guard::Const(false) => "false".into(),
        Guard::Not(a) => format!("!{}", guard_c(m, a, n)),
        Guard::And(a, b) => format!("({} && {})", guard_c(m, a, n), guard_c(m, b, n)),
        Guard::Or(a, b) => format!("({} || {})", guard_c(m, a, n), guard_c(m, b, n)),
    }
}

/// The C statement of a counter operation on `m`, saturating at the ends of the
/// counter's range (the stored value is in range: `step` checked it).
fn counter_op_c(m: &Machine, op: &CounterOp, n: &CNames) -> String {
    let c = &m.counters[op.counter.index()];
    let f = &n.counters[op.counter.index()];
    let ty = uint_for(u64::from(c.max)).0;
    let max = c.max;
    match op_code(m, op) {
        OpCode::Nothing => format!("/* {} += 0 or -= 0: no change */", c.name),
        OpCode::Set(k) => format!("m->{f} = ({ty}){k}u;"),
        OpCode::Add(k) => format!(
            "m->{f} = ({ty})(m->{f} < {}u ? m->{f} + {k}u : {max}u);",
            max - k
        ),
        OpCode::Sub(k) => format!("m->{f} = ({ty})(m->{f} > {k}u ? m->{f} - {k}u : 0u);"),
    }
}

/// A transition's test in C: the due timeout first (it reads no input: `before[k]` is
/// timer `k` before this time-base event, clamped to its largest duration), then the
/// guard.
fn test_c(m: &Machine, t: &Test, n: &CNames) -> String {
    let due = t
        .due
        .map(|(timer, d)| format!("before[{}u] == {}u", timer.index(), d.saturating_sub(1)));
    match (due, &t.guard) {
        (Some(d), Some(g)) => format!("{d} && {}", guard_c(m, g, n)),
        (Some(d), None) => d,
        (None, Some(g)) => guard_c(m, g, n),
        (None, None) => "true".into(),
    }
}

/// The largest value of the C type [`uint_for`] picks for `max`.
fn uint_type_max(max: u64) -> u64 {
    match uint_for(max).1 {
        1 => u64::from(u8::MAX),
        2 => u64::from(u16::MAX),
        4 => u64::from(u32::MAX),
        _ => u64::MAX,
    }
}

pub(super) fn source(m: &Machine, l: &Layout, n: &CNames, source_name: &str) -> String {
    let (p, up) = (&n.p, &n.up);
    let mut c = String::new();
    banner(&mut c, &format!("{p}.c"), source_name, m);
    let _ = writeln!(
        c,
        "\n/*\n * Tables (all static const, each in the narrowest type that fits):\n *   {p}_cell_[state][event]  range of candidate transitions (0: none)\n *   {p}_range_[r] .. [r + 1]  the transitions of range r\n *   per transition t: guard id (0: nothing to test), target state, Mealy mask,\n *   and its sequence q = {p}_seq_[t]: actions {p}_act_[{p}_seq_start_[q] ..\n *   {p}_seq_start_[q + 1]] (leave, rule, enter actions, in order)\n *   {p}_moore_[state]         Moore output mask\n * A step takes the first transition of its cell whose guard holds, reading each\n * input at most once.\n */\n"
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
    let timed = m.has_timers();
    let n_timers = m.timers.len();
    let active_bytes = n_timers.div_ceil(8);
    if timed {
        let _ = writeln!(
            c,
            "/* The timers that count in each state (its own and its groups'): bit k % 8 of\n   byte k / 8 is timer k. */\nstatic const uint8_t {p}_active_[{s_count}][{active_bytes}] = {{"
        );
        for si in 0..s_count {
            let on = m.chain_timers(crate::model::StateId::from_index(si));
            let mut bytes = vec![0u8; active_bytes];
            for t in on {
                bytes[t.index() / 8] |= 1 << (t.index() % 8);
            }
            let cells: Vec<String> = bytes.iter().map(|b| format!("0x{b:x}u")).collect();
            let _ = writeln!(
                c,
                "    {{ {} }}, /* {} */",
                cells.join(", "),
                comment_text(&m.states[si].name)
            );
        }
        let _ = writeln!(c, "}};\n");
    }
    if l.has_zero() {
        let mut vals: Vec<u64> = l.trans.iter().map(|t| t.zero as u64).collect();
        vals.resize(t_rows, 0);
        let _ = writeln!(
            c,
            "/* Per transition: the set of timers it sets to 0 (0: none, see {p}_reset_timers_). */\nstatic const {} {p}_resets_[{t_rows}] = {{",
            l.zero_ty.0
        );
        number_rows(&mut c, &vals, false);
        let _ = writeln!(c, "}};\n");
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
        let mut vals: Vec<u64> = l.trans.iter().map(|t| t.seq as u64).collect();
        vals.resize(t_rows, 0);
        let _ = writeln!(c, "static const {} {p}_seq_[{t_rows}] = {{", l.seq_ty.0);
        number_rows(&mut c, &vals, false);
        let _ = writeln!(c, "}};\n");
        let vals: Vec<u64> = l.seq_start.iter().map(|&v| v as u64).collect();
        let _ = writeln!(
            c,
            "static const {} {p}_seq_start_[{}] = {{",
            l.seq_start_ty.0,
            vals.len()
        );
        number_rows(&mut c, &vals, false);
        let _ = writeln!(c, "}};\n");
        let vals: Vec<u64> = l.act_list.iter().map(|&a| a as u64).collect();
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
        let before_param = if timed {
            "const uint32_t *before, "
        } else {
            ""
        };
        let m_param = if l.guards_read_counters {
            format!("const struct {p}_machine *m, ")
        } else {
            String::new()
        };
        let _ = writeln!(
            c,
            "static bool {p}_guard_holds_(unsigned int g, {m_param}{before_param}{in_param}const struct {p}_hooks *hooks,\n    void *ctx)\n{{"
        );
        if !used_inputs {
            let _ = writeln!(c, "    (void)hooks;\n    (void)ctx;");
        }
        if timed && !l.guards.iter().any(|g| g.due.is_some()) {
            let _ = writeln!(c, "    (void)before;");
        }
        let _ = writeln!(c, "    switch (g) {{");
        for (i, g) in l.guards.iter().enumerate() {
            let _ = writeln!(
                c,
                "    case {}u:\n        return {};",
                i + 1,
                test_c(m, g, n)
            );
        }
        let _ = writeln!(c, "    default:\n        return true;\n    }}\n}}\n");
    }
    let counted_ops = !l.counter_ops.is_empty();
    if has_actions {
        let (doc, m_param) = if counted_ops {
            (
                format!("/* Runs operation `a`: action `a` below {}, else a counter operation (it\n   stops at the end of the counter's range). */\n", m.actions.len()),
                format!("struct {p}_machine *m, "),
            )
        } else {
            (String::new(), String::new())
        };
        let _ = writeln!(
            c,
            "{doc}static void {p}_run_action_({m_param}unsigned int a, const struct {p}_hooks *hooks, void *ctx)\n{{"
        );
        if !l.actions_used.iter().any(|&u| u) {
            let _ = writeln!(c, "    (void)hooks;\n    (void)ctx;");
        }
        let _ = writeln!(c, "    switch (a) {{");
        for (i, cname) in n.actions.iter().enumerate() {
            if l.actions_used[i] {
                let _ = writeln!(
                    c,
                    "    case {i}u:\n        hooks->{cname}(ctx);\n        break;"
                );
            }
        }
        for (k, op) in l.counter_ops.iter().enumerate() {
            let text = comment_text(&m.op_text(&crate::model::Op::Counter(*op)));
            let _ = writeln!(
                c,
                "    case {}u: /* {text} */\n        {}\n        break;",
                m.actions.len() + k,
                counter_op_c(m, op, n)
            );
        }
        let _ = writeln!(c, "    default:\n        break;\n    }}\n}}\n");
    }
    if l.has_zero() {
        let _ = writeln!(
            c,
            "/* Sets the timers of set `z` to 0 (0: none): those of the scopes a transition\n   enters, which restart, and of those it leaves. */\nstatic void {p}_reset_timers_(struct {p}_machine *m, unsigned int z)\n{{\n    switch (z) {{"
        );
        for (k, set) in l.zero_sets.iter().enumerate() {
            let _ = writeln!(c, "    case {}u:", k + 1);
            for t in set {
                let _ = writeln!(c, "        m->{} = 0u;", n.timers[t.index()]);
            }
            let _ = writeln!(c, "        break;");
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
        "void {p}_init(struct {p}_machine *m)\n{{\n    if (m != NULL) {{\n        m->state = ({st_ty}){};",
        n.states[m.start.index()]
    );
    for f in &n.timers {
        let _ = writeln!(c, "        m->{f} = 0u;");
    }
    for f in &n.counters {
        let _ = writeln!(c, "        m->{f} = 0u;");
    }
    let _ = writeln!(c, "    }}\n}}\n");
    if timed {
        let _ = writeln!(
            c,
            "/* The sooner of two counts of time-base events, 0 meaning none. */\nstatic uint32_t {p}_sooner_(uint32_t a, uint32_t b)\n{{\n    return (a == 0u || b < a) ? b : a;\n}}\n"
        );
        let _ = writeln!(
            c,
            "uint32_t {p}_next_timeout(const struct {p}_machine *m)\n{{\n    uint32_t next = 0u;\n    uint32_t v;\n    unsigned int s;\n    if (m == NULL || (unsigned int)m->state >= (unsigned int){up}_STATE_COUNT) {{\n        return 0u;\n    }}\n    s = (unsigned int)m->state;"
        );
        for (k, timer) in m.timers.iter().enumerate() {
            let _ = writeln!(
                c,
                "    if (({p}_active_[s][{}] & 0x{:x}u) != 0u) {{\n        v = (uint32_t)m->{};",
                k / 8,
                1u32 << (k % 8),
                n.timers[k]
            );
            let mut first = true;
            for &d in &timer.durations {
                let kw = if first { "        if" } else { " else if" };
                first = false;
                let _ = write!(
                    c,
                    "{kw} (v < {d}u) {{\n            next = {p}_sooner_(next, {d}u - v);\n        }}"
                );
            }
            let _ = writeln!(c, "\n    }}");
        }
        let _ = writeln!(c, "    return next;\n}}\n");
    }
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
    if timed {
        let _ = writeln!(c, "    uint32_t before[{n_timers}];");
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
    // A stored counter past its bound (a corrupt or hand-written value) is a bad
    // argument, like a state number that names no state.
    let checks: Vec<String> = m
        .counters
        .iter()
        .zip(&n.counters)
        .filter(|(c, _)| u64::from(c.max) < uint_type_max(u64::from(c.max)))
        .map(|(c, f)| format!("m->{f} > {}u", c.max))
        .collect();
    if !checks.is_empty() {
        let _ = writeln!(
            c,
            "    if ({}) {{\n        return -1;\n    }}",
            checks.join("\n        || ")
        );
    }
    let _ = writeln!(c, "    s = (unsigned int)m->state;");
    if timed {
        let _ = writeln!(
            c,
            "    /* The timers before this event, a stored value above a timer's largest\n       duration (a corrupt byte) read as that duration. */"
        );
        for (k, timer) in m.timers.iter().enumerate() {
            let max = timer.max();
            let f = &n.timers[k];
            let _ = writeln!(
                c,
                "    before[{k}] = (uint32_t)m->{f} > {max}u ? {max}u : (uint32_t)m->{f};"
            );
        }
        let tb = m.timebase.as_ref().map_or(0, |t| t.event.index());
        // A machine whose only event is the time base (a clocked one) counts on every
        // step: no test of `ev` that could only be true (cppcheck's
        // knownConditionTrueFalse).
        let when = if m.events.len() == 1 {
            "every event is the time base: ".to_string()
        } else {
            String::new()
        };
        let open = if m.events.len() == 1 {
            "{".to_string()
        } else {
            format!("if ((unsigned int)ev == {tb}u) {{")
        };
        let _ = writeln!(
            c,
            "    /* The time-base event ({when}each timer of the state's scopes adds one,\n       stopping at its largest duration; a corrupt value above it becomes it). */\n    {open}"
        );
        for (k, timer) in m.timers.iter().enumerate() {
            let max = timer.max();
            let f = &n.timers[k];
            let ty = uint_for(u64::from(max)).0;
            // min(before + 1, max), read from the field itself: the same value, with
            // no condition on `before` that a value-flow checker could call constant.
            let _ = writeln!(
                c,
                "        if (({p}_active_[s][{}] & 0x{:x}u) != 0u) {{\n            m->{f} = ({ty})(m->{f} < {max}u ? m->{f} + 1u : {max}u);\n        }}",
                k / 8,
                1u32 << (k % 8),
            );
        }
        let _ = writeln!(c, "    }}");
    }
    let _ = writeln!(
        c,
        "    r = (unsigned int){p}_cell_[s][(unsigned int)ev];\n    t = (unsigned int){p}_range_[r];\n    t_end = (unsigned int){p}_range_[r + 1u];"
    );
    if l.has_guards() {
        let in_arg = if used_inputs { "&in, " } else { "" };
        let in_arg = if timed {
            format!("before, {in_arg}")
        } else {
            in_arg.to_string()
        };
        if used_inputs {
            let _ = writeln!(c, "    in.known = 0u;\n    in.value = 0u;");
        }
        let m_arg = if l.guards_read_counters { "m, " } else { "" };
        let _ = writeln!(
            c,
            "    while (t < t_end && !{p}_guard_holds_((unsigned int){p}_guard_[t], {m_arg}{in_arg}hooks, ctx)) {{\n        ++t;\n    }}"
        );
    }
    let _ = writeln!(
        c,
        "    if (t >= t_end) {{\n        {p}_put_outputs_({}, {zero}, out);\n        return 1;\n    }}",
        moore_row("s")
    );
    if has_actions {
        let m_arg = if counted_ops { "m, " } else { "" };
        let _ = writeln!(
            c,
            "    {{\n        const unsigned int q = (unsigned int){p}_seq_[t];\n        unsigned int a;\n        for (a = (unsigned int){p}_seq_start_[q]; a < (unsigned int){p}_seq_start_[q + 1u]; ++a) {{\n            {p}_run_action_({m_arg}(unsigned int){p}_act_[a], hooks, ctx);\n        }}\n    }}"
        );
    }
    let zero_call = if l.has_zero() {
        format!("\n    {p}_reset_timers_(m, (unsigned int){p}_resets_[t]);")
    } else {
        String::new()
    };
    let _ = writeln!(
        c,
        "    m->state = ({st_ty}){p}_target_[t];{zero_call}\n    {p}_put_outputs_({}, {}, out);\n    return 0;\n}}\n",
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
