//! A generator of random, well-formed machine specs for differential testing.
//!
//! Every spec it writes resolves and has no checker errors: each scope's rules for
//! one trigger split the input space into an exact partition (so rules never
//! overlap), and under `unhandled complete` every partition is whole and every
//! (state, event) finds a scope with rules. Under `ignore` and `reject` parts of a
//! partition are dropped at random, so uncovered valuations occur. Specs exercise
//! guards over a few inputs, `A | B` triggers, `_`, nested groups with inherited rules
//! and Moore outputs, `preempt` rules in groups (guarded ones fall through), `else`
//! rules (for events, for `_`, and in clocked machines), enter/leave actions, Mealy
//! outputs, `stay` and external self-transitions, and clocked machines. With
//! [`GenConfig::timeouts`], a time base (the first event, or the clock; with or
//! without a period) and `after` rules in states and groups: one to three durations
//! per scope, short enough for random traces to reach (1 to 6 ticks, sometimes 12),
//! guarded ones as partitions of the inputs with parts dropped (they fall through to
//! the named rules), to other states, to the same state (an external self-transition
//! that restarts the timer) or `stay`.
//!
//! With [`GenConfig::counters`], that many counters (`counters c0 to M, ...`, M from 1
//! to 7) and partitions that compare them (`c0 < k` / `c0 >= k`, `c0 == 0` / `c0 > 0`,
//! `x && c0 == k` / `x && c0 != k` / `!x`) beside the input partitions. Operations are
//! safe by construction, so no spec has a `counter_range` error: `c = k` anywhere
//! (`c = 0` only in enter/leave lists), `c += 1` only on a part whose guard implies
//! `c < M`, `c -= 1` only on a part that implies `c > 0` and only in machines whose
//! enter/leave lists never set counters (a leave list's `c = 0` runs before the rule's
//! operations, from the value the guard read).
//!
//! Seeded and reproducible: the same seed and config give the same text.

use std::fmt::Write;

/// The workspace's one seeded generator (SplitMix64), `detent_compiler::rng`.
pub use detent_compiler::rng::Rng;

/// What kind of spec to generate.
#[derive(Clone, Debug)]
pub struct GenConfig {
    /// Fewest and most states.
    pub states: (usize, usize),
    /// Number of events (0 makes a clocked machine).
    pub events: usize,
    /// Number of inputs.
    pub inputs: usize,
    /// Number of outputs.
    pub outputs: usize,
    /// Number of actions.
    pub actions: usize,
    /// Allow groups (nested up to three deep).
    pub groups: bool,
    /// `None`: pick a policy at random.
    pub policy: Option<&'static str>,
    /// Declare a time base and write `after` rules.
    pub timeouts: bool,
    /// Number of counters (compared in guards, changed in `do` lists).
    pub counters: usize,
}

impl Default for GenConfig {
    fn default() -> Self {
        GenConfig {
            states: (2, 8),
            events: 3,
            inputs: 2,
            outputs: 2,
            actions: 2,
            groups: true,
            policy: None,
            timeouts: false,
            counters: 0,
        }
    }
}

/// A scope in the generated member tree.
enum Node {
    State(usize),
    Group(usize, Vec<Node>),
}

/// Generates one spec named `Random<seed>`.
pub fn random_spec(seed: u64, cfg: &GenConfig) -> String {
    let mut rng = Rng::new(seed);
    let n_states = rng.range(cfg.states.0.max(1), cfg.states.1.max(cfg.states.0.max(1)));
    let policy = cfg
        .policy
        .unwrap_or(["complete", "ignore", "reject"][rng.index(3)]);
    let clocked = cfg.events == 0;
    let events: Vec<String> = (0..cfg.events).map(|i| format!("Ev{i}")).collect();
    let inputs: Vec<String> = (0..cfg.inputs).map(|i| format!("in{i}")).collect();
    let outputs: Vec<String> = (0..cfg.outputs).map(|i| format!("out{i}")).collect();
    let actions: Vec<String> = (0..cfg.actions).map(|i| format!("act{i}")).collect();

    // Member tree: states in order, some wrapped in groups.
    let mut n_groups = 0usize;
    let tree = build_tree(&mut rng, 0, n_states, cfg.groups, 0, &mut n_groups);

    let mut g = Gen {
        rng,
        policy,
        clocked,
        events,
        inputs,
        outputs,
        actions,
        n_states,
        out: String::new(),
        period_us: None,
        timeouts: cfg.timeouts,
        counters: Vec::new(),
        counter_lists: false,
    };
    for i in 0..cfg.counters {
        let max = [1, 2, 3, 5, 7][g.rng.index(5)];
        g.counters.push((format!("c{i}"), max));
    }
    g.counter_lists = cfg.counters > 0 && g.rng.chance(0.5);
    let mut s = String::new();
    let _ = writeln!(
        s,
        "#[allow(unreachable_state, dead_end, unused_declaration, dead_rule, repeated_action)]"
    );
    let _ = writeln!(s, "pub machine Random{seed} {{");
    if !clocked {
        let _ = writeln!(s, "    events {};", g.events.join(", "));
    }
    if !g.inputs.is_empty() {
        let _ = writeln!(s, "    inputs {};", g.inputs.join(", "));
    }
    if !g.outputs.is_empty() {
        let _ = writeln!(s, "    outputs {};", g.outputs.join(", "));
    }
    if !g.actions.is_empty() {
        let _ = writeln!(s, "    actions {};", g.actions.join(", "));
    }
    if !g.counters.is_empty() {
        let list: Vec<String> = g
            .counters
            .iter()
            .map(|(n, m)| format!("{n} to {m}"))
            .collect();
        let _ = writeln!(s, "    counters {};", list.join(", "));
    }
    let _ = writeln!(s, "    start S0;");
    let _ = writeln!(s, "    unhandled {policy};");
    if cfg.timeouts {
        let event = if clocked {
            String::new()
        } else {
            format!(" {}", g.events[0])
        };
        match g.rng.index(3) {
            0 => {
                let _ = writeln!(s, "    timebase{event};");
            }
            1 => {
                g.period_us = Some(1_000);
                let _ = writeln!(s, "    timebase{event} 1 ms;");
            }
            _ => {
                g.period_us = Some(250);
                let _ = writeln!(s, "    timebase{event} 250 us;");
            }
        }
    }
    g.out = s;
    for node in &tree {
        g.node(node, 1, false);
    }
    g.out.push_str("}\n");
    g.out
}

fn build_tree(
    rng: &mut Rng,
    lo: usize,
    hi: usize,
    groups: bool,
    depth: usize,
    n_groups: &mut usize,
) -> Vec<Node> {
    let mut out = Vec::new();
    let mut i = lo;
    while i < hi {
        if groups && depth < 3 && hi - i >= 2 && rng.chance(0.3) {
            let len = rng.range(1, (hi - i).min(4));
            let id = *n_groups;
            *n_groups += 1;
            let inner = build_tree(rng, i, i + len, groups, depth + 1, n_groups);
            out.push(Node::Group(id, inner));
            i += len;
        } else {
            out.push(Node::State(i));
            i += 1;
        }
    }
    out
}

struct Gen {
    rng: Rng,
    policy: &'static str,
    clocked: bool,
    events: Vec<String>,
    inputs: Vec<String>,
    outputs: Vec<String>,
    actions: Vec<String>,
    n_states: usize,
    out: String,
    /// The time base's period, when it has one (durations are then written in time).
    period_us: Option<u64>,
    timeouts: bool,
    /// The counters and their largest values.
    counters: Vec<(String, u16)>,
    /// Enter/leave lists may set counters (to 0); rules then never decrement.
    counter_lists: bool,
}

/// A part of a partition: its guard (`None`: always) and the counters its guard
/// keeps below their largest value (`+= 1` is safe) and above 0 (`-= 1` is safe).
struct Part {
    guard: Option<String>,
    inc: Vec<usize>,
    dec: Vec<usize>,
}

impl Gen {
    fn indent(&mut self, level: usize) {
        for _ in 0..level {
            self.out.push_str("    ");
        }
    }

    fn pick_some(&mut self, names: &[String], p: f64) -> Vec<String> {
        names
            .iter()
            .filter(|_| self.rng.chance(p))
            .cloned()
            .collect()
    }

    /// An exact partition of the inputs and counter values, each part with the counter
    /// operations its guard makes safe.
    fn parts(&mut self) -> Vec<Part> {
        let plain = |guard| Part {
            guard,
            inc: Vec::new(),
            dec: Vec::new(),
        };
        if self.counters.is_empty() || self.rng.chance(0.5) {
            return self.partition().into_iter().map(plain).collect();
        }
        let ci = self.rng.index(self.counters.len());
        let (c, max) = self.counters[ci].clone();
        let part = |guard: String, inc: bool, dec: bool| Part {
            guard: Some(guard),
            inc: if inc { vec![ci] } else { Vec::new() },
            dec: if dec { vec![ci] } else { Vec::new() },
        };
        match self.rng.index(3) {
            0 => {
                let k = self.rng.range(1, usize::from(max)) as u16;
                vec![
                    part(format!("{c} < {k}"), k <= max, false),
                    part(format!("{c} >= {k}"), false, true),
                ]
            }
            1 => vec![
                part(format!("{c} == 0"), true, false),
                part(format!("{c} > 0"), false, true),
            ],
            _ => match self.inputs.first().cloned() {
                Some(x) => {
                    let k = self.rng.range(0, usize::from(max)) as u16;
                    vec![
                        part(format!("{x} && {c} == {k}"), k < max, k > 0),
                        part(format!("{x} && {c} != {k}"), false, false),
                        part(format!("!{x}"), false, false),
                    ]
                }
                None => vec![
                    part(format!("{c} <= {max}"), false, false),
                    part(format!("{c} > {max}"), false, false),
                ],
            },
        }
    }

    /// Counter operations for a rule on `part`: sometimes `c = k`, `c += 1` where the
    /// guard keeps `c` below its largest value, `c -= 1` where it keeps it above 0.
    fn counter_ops(&mut self, part: &Part) -> Vec<String> {
        let mut out = Vec::new();
        for (i, (c, max)) in self.counters.clone().into_iter().enumerate() {
            if part.inc.contains(&i) && self.rng.chance(0.6) {
                out.push(format!("{c} += 1"));
            } else if part.dec.contains(&i) && !self.counter_lists && self.rng.chance(0.5) {
                out.push(format!("{c} -= 1"));
            } else if self.rng.chance(0.12) {
                let k = self.rng.range(0, usize::from(max));
                out.push(format!("{c} = {k}"));
            }
        }
        out
    }

    /// An exact partition of the input space as guard texts (`None` = always).
    fn partition(&mut self) -> Vec<Option<String>> {
        let n = self.inputs.len();
        if n == 0 || self.rng.chance(0.35) {
            return vec![None];
        }
        let x = self.inputs[self.rng.index(n)].clone();
        let y = self.inputs[self.rng.index(n)].clone();
        match self.rng.index(4) {
            0 => vec![Some(x.clone()), Some(format!("!{x}"))],
            1 if x != y => vec![
                Some(format!("{x} && {y}")),
                Some(format!("{x} && !{y}")),
                Some(format!("!{x}")),
            ],
            2 if x != y => vec![Some(format!("{x} || {y}")), Some(format!("!({x} || {y})"))],
            _ => vec![Some(format!("!!{x}")), Some(format!("!{x}"))],
        }
    }

    /// Writes the rules of one trigger: one rule per part of a partition. Sometimes the
    /// last part becomes an `else` rule (it is the complement of the others, which is
    /// what `else` takes), and under `ignore`/`reject` an `else` may also follow parts
    /// some of which were dropped. `preempt`: the rules are a group's preempt rules:
    /// any parts of a partition (the rest falls through to the later lookup steps),
    /// never `else`.
    fn rules(&mut self, trigger: &str, level: usize, preempt: bool) {
        let mut parts = self.parts();
        let otherwise = !preempt && self.rng.chance(0.25);
        let n = parts.len();
        let else_part = || Part {
            guard: Some("else".into()),
            inc: Vec::new(),
            dec: Vec::new(),
        };
        if otherwise && n > 1 && self.rng.chance(0.7) {
            // The complement of the other rules written: dropped parts fall to it
            // too, so it allows no increment or decrement.
            parts[n - 1] = else_part();
        } else if otherwise {
            parts.push(else_part());
        }
        for part in parts {
            let ops = self.counter_ops(&part);
            let guard = part.guard;
            let is_else = guard.as_deref() == Some("else");
            if !is_else
                && (preempt || self.policy != "complete")
                && self.rng.chance(if preempt { 0.4 } else { 0.25 })
            {
                continue;
            }
            let target = if self.rng.chance(0.2) {
                "stay".to_string()
            } else {
                format!("S{}", self.rng.index(self.n_states))
            };
            let outputs = self.outputs.clone();
            let actions = self.actions.clone();
            let emit = self.pick_some(&outputs, 0.25);
            let mut act = self.pick_some(&actions, 0.3);
            for op in ops {
                let at = self.rng.range(0, act.len());
                act.insert(at, op);
            }
            self.indent(level);
            let mut line = String::new();
            if preempt {
                line.push_str("preempt ");
            }
            if !trigger.is_empty() {
                line.push_str(trigger);
                line.push(' ');
            }
            match guard.as_deref() {
                Some("else") => line.push_str("else "),
                Some(g) => {
                    let _ = write!(line, "if {g} ");
                }
                None => {}
            }
            let _ = write!(line, "=> {target}");
            if !emit.is_empty() {
                let _ = write!(line, ", emit {}", emit.join(", "));
            }
            if !act.is_empty() {
                let _ = write!(line, ", do {}", act.join(", "));
            }
            line.push_str(";\n");
            self.out.push_str(&line);
        }
    }

    /// A duration of `ticks` as the spec writes it: ticks, or time when the time base
    /// has a period (in either spelling, `2 ms` or `2ms`).
    // `u64::is_multiple_of` needs Rust 1.87; the workspace's MSRV is 1.85.
    #[allow(clippy::manual_is_multiple_of)]
    fn duration(&mut self, ticks: u64) -> String {
        match self.period_us {
            None => format!("{ticks} ticks"),
            Some(p) => {
                let us = ticks * p;
                let text = if us % 1_000 == 0 {
                    (us / 1_000, "ms")
                } else {
                    (us, "us")
                };
                if self.rng.chance(0.5) {
                    format!("{}{}", text.0, text.1)
                } else {
                    format!("{} {}", text.0, text.1)
                }
            }
        }
    }

    /// Writes a scope's timeout rules (sometimes none): one to three durations, each a
    /// partition of the inputs with parts dropped.
    fn timeout_rules(&mut self, level: usize) {
        if !self.timeouts || !self.rng.chance(0.5) {
            return;
        }
        let mut durations: Vec<u64> = (0..self.rng.range(1, 3))
            .map(|_| {
                if self.rng.chance(0.1) {
                    12
                } else {
                    self.rng.range(1, 6) as u64
                }
            })
            .collect();
        durations.sort_unstable();
        durations.dedup();
        for d in durations {
            let parts = self.partition();
            for guard in parts {
                if guard.is_some() && self.rng.chance(0.3) {
                    continue;
                }
                let target = match self.rng.index(5) {
                    0 => "stay".to_string(),
                    _ => format!("S{}", self.rng.index(self.n_states)),
                };
                let outputs = self.outputs.clone();
                let actions = self.actions.clone();
                let emit = self.pick_some(&outputs, 0.25);
                let act = self.pick_some(&actions, 0.3);
                let dur = self.duration(d);
                self.indent(level);
                let mut line = format!("after {dur} ");
                if let Some(g) = guard {
                    let _ = write!(line, "if {g} ");
                }
                let _ = write!(line, "=> {target}");
                if !emit.is_empty() {
                    let _ = write!(line, ", emit {}", emit.join(", "));
                }
                if !act.is_empty() {
                    let _ = write!(line, ", do {}", act.join(", "));
                }
                line.push_str(";\n");
                self.out.push_str(&line);
            }
        }
    }

    /// Writes a scope's rules. `must_cover`: every event needs a rule here (no
    /// enclosing scope provides one).
    fn scope_rules(&mut self, level: usize, must_cover: bool, is_group: bool) -> bool {
        self.timeout_rules(level);
        if self.clocked {
            let write = must_cover || self.rng.chance(if is_group { 0.5 } else { 0.7 });
            if write {
                self.rules("", level, false);
            }
            return write;
        }
        let p = if is_group { 0.3 } else { 0.6 };
        let mut handled: Vec<usize> = (0..self.events.len())
            .filter(|_| self.rng.chance(p))
            .collect();
        // A `_` rule covers the rest; otherwise, when coverage is required here, name
        // every event.
        let wildcard = self.rng.chance(0.3);
        if must_cover && !wildcard {
            handled = (0..self.events.len()).collect();
        }
        let mut i = 0;
        while i < handled.len() {
            let take = if i + 1 < handled.len() && self.rng.chance(0.3) {
                2
            } else {
                1
            };
            let trig: Vec<String> = handled[i..i + take]
                .iter()
                .map(|&e| self.events[e].clone())
                .collect();
            self.rules(&trig.join(" | "), level, false);
            i += take;
        }
        if is_group && self.rng.chance(0.35) {
            // A safety trip: preempt rules for one event (or two), which no member can
            // override; guarded ones leave some valuations to the later steps.
            let e = self.rng.index(self.events.len());
            let mut trig = self.events[e].clone();
            let f = self.rng.index(self.events.len());
            if f != e && self.rng.chance(0.3) {
                trig = format!("{trig} | {}", self.events[f]);
            }
            self.rules(&trig, level, true);
        }
        if wildcard && handled.len() < self.events.len() {
            self.rules("_", level, false);
            return true;
        }
        handled.len() == self.events.len()
    }

    fn enter_leave(&mut self, level: usize) {
        let actions = self.actions.clone();
        for kw in ["enter", "leave"] {
            if self.rng.chance(0.25) {
                let mut list = self.pick_some(&actions, 0.5);
                if self.counter_lists {
                    for (c, _) in self.counters.clone() {
                        if self.rng.chance(0.4) {
                            let at = self.rng.range(0, list.len());
                            list.insert(at, format!("{c} = 0"));
                        }
                    }
                }
                if !list.is_empty() {
                    self.indent(level);
                    let _ = writeln!(self.out, "{kw} do {};", list.join(", "));
                }
            }
        }
    }

    /// `covered`: an enclosing group covers every event.
    fn node(&mut self, node: &Node, level: usize, covered: bool) {
        let outputs = self.outputs.clone();
        match node {
            Node::State(i) => {
                let emit = self.pick_some(&outputs, 0.3);
                self.indent(level);
                let terminal = if self.rng.chance(0.05) {
                    "terminal "
                } else {
                    ""
                };
                let _ = write!(self.out, "{terminal}state S{i}");
                if !emit.is_empty() {
                    let _ = write!(self.out, " emit {}", emit.join(", "));
                }
                self.out.push_str(" {\n");
                self.enter_leave(level + 1);
                let must = !covered && self.policy == "complete";
                self.scope_rules(level + 1, must, false);
                self.indent(level);
                self.out.push_str("}\n");
            }
            Node::Group(id, members) => {
                let emit = self.pick_some(&outputs, 0.3);
                self.indent(level);
                let _ = write!(self.out, "group G{id}");
                if !emit.is_empty() {
                    let _ = write!(self.out, " emit {}", emit.join(", "));
                }
                self.out.push_str(" {\n");
                self.enter_leave(level + 1);
                let full = self.scope_rules(level + 1, false, true);
                for m in members {
                    self.node(m, level + 1, covered || full);
                }
                self.indent(level);
                self.out.push_str("}\n");
            }
        }
    }
}

/// A random trace for a machine with a time base: like [`random_trace`], but the
/// time-base event (event 0: the first event, or the clock) comes with probability
/// `p_tick`, so that timeouts come due.
pub fn random_timed_trace(
    rng: &mut Rng,
    n_events: usize,
    n_inputs: usize,
    len: usize,
    p_tick: f64,
) -> Vec<(usize, Vec<bool>)> {
    (0..len)
        .map(|_| {
            let e = if n_events <= 1 || rng.chance(p_tick) {
                0
            } else {
                rng.range(1, n_events - 1)
            };
            let ins = (0..n_inputs).map(|_| rng.chance(0.5)).collect();
            (e, ins)
        })
        .collect()
}

/// A random trace for a machine: `len` steps of (event number, input values).
pub fn random_trace(
    rng: &mut Rng,
    n_events: usize,
    n_inputs: usize,
    len: usize,
) -> Vec<(usize, Vec<bool>)> {
    (0..len)
        .map(|_| {
            let e = rng.index(n_events.max(1));
            let ins = (0..n_inputs).map(|_| rng.chance(0.5)).collect();
            (e, ins)
        })
        .collect()
}
