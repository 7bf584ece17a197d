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
//!
//! The same generator serves the structured fuzz target (`fuzz/`, which includes this
//! file by path): [`spec_from`] takes its choices from any [`Choices`], such as the
//! bytes of a fuzz input ([`Bytes`]), so libFuzzer's mutations steer the machine's
//! shape, and with `rich` it also writes what only the fuzz target checks: optional
//! `never`/`recover` properties (which may not hold: a `property` error is the one error
//! such a spec can have), a doc comment, `#[dispatch(match)]` or `#[minimize]`, the
//! visibility, an implicit `unhandled complete`, and guards with constants and
//! exclusive-or forms. [`random_spec`] is `spec_from` with a seeded [`Rng`] and no
//! extras, and writes what it always wrote.

use std::fmt::Write;

/// The workspace's one seeded generator (SplitMix64), `detent_compiler::rng`.
pub use detent_compiler::rng::Rng;

/// Where the generator's choices come from: a seeded [`Rng`] or a fuzz input's
/// [`Bytes`].
pub trait Choices {
    /// A number in `0..n` (`0` when `n` is 0).
    fn index(&mut self, n: usize) -> usize;
    /// True with probability about `p`.
    fn chance(&mut self, p: f64) -> bool;
    /// A number in `lo..=hi`.
    fn range(&mut self, lo: usize, hi: usize) -> usize {
        lo + self.index(hi - lo + 1)
    }
}

impl Choices for Rng {
    fn index(&mut self, n: usize) -> usize {
        Rng::index(self, n)
    }
    fn chance(&mut self, p: f64) -> bool {
        Rng::chance(self, p)
    }
}

impl<C: Choices + ?Sized> Choices for &mut C {
    fn index(&mut self, n: usize) -> usize {
        (**self).index(n)
    }
    fn chance(&mut self, p: f64) -> bool {
        (**self).chance(p)
    }
}

/// Choices read from a byte string (a fuzz input), one byte a choice (two for more
/// than 256 options). Once the bytes run out every choice is the first one (`0`,
/// `false`): a short input makes a small machine.
#[derive(Clone, Debug)]
pub struct Bytes<'a> {
    data: &'a [u8],
}

impl<'a> Bytes<'a> {
    /// Choices from `data`, front to back.
    pub fn new(data: &'a [u8]) -> Bytes<'a> {
        Bytes { data }
    }

    fn byte(&mut self) -> Option<u8> {
        let (&b, rest) = self.data.split_first()?;
        self.data = rest;
        Some(b)
    }
}

impl Choices for Bytes<'_> {
    fn index(&mut self, n: usize) -> usize {
        if n <= 1 {
            return 0;
        }
        let v = match self.byte() {
            None => return 0,
            Some(b) if n <= 256 => usize::from(b),
            Some(b) => (usize::from(b) << 8) | usize::from(self.byte().unwrap_or(0)),
        };
        v % n
    }
    fn chance(&mut self, p: f64) -> bool {
        self.byte().is_some_and(|b| f64::from(b) < p * 256.0)
    }
}

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

/// The timed configurations the differential suites draw machines from (issue 19): a
/// time base with `after` rules in states and nested groups, guarded, to self and
/// `stay`; event-driven, clocked, and larger.
pub fn timed_configs() -> Vec<GenConfig> {
    let d = GenConfig::default();
    vec![
        GenConfig {
            timeouts: true,
            ..d.clone()
        },
        GenConfig {
            events: 0,
            timeouts: true,
            ..d.clone()
        },
        GenConfig {
            states: (6, 12),
            events: 4,
            inputs: 3,
            timeouts: true,
            ..d
        },
    ]
}

/// The counting configurations the differential suites draw machines from (issue 20):
/// comparisons in guards, operations in rules and in enter and leave lists; alone,
/// clocked, and with timeouts.
pub fn counter_configs() -> Vec<GenConfig> {
    let d = GenConfig::default();
    vec![
        GenConfig {
            counters: 2,
            ..d.clone()
        },
        GenConfig {
            events: 0,
            counters: 1,
            ..d.clone()
        },
        GenConfig {
            states: (4, 10),
            events: 4,
            inputs: 3,
            counters: 3,
            timeouts: true,
            ..d
        },
    ]
}

/// A scope in the generated member tree.
enum Node {
    State(usize),
    Group(usize, Vec<Node>),
}

/// Generates one spec named `Random<seed>`.
pub fn random_spec(seed: u64, cfg: &GenConfig) -> String {
    spec_from(Rng::new(seed), &format!("Random{seed}"), cfg, false).text
}

/// A spec written by [`spec_from`].
#[derive(Clone, Debug)]
pub struct Built {
    /// The spec.
    pub text: String,
    /// It declares a `never` or `recover` property (only with `rich`), which may not
    /// hold.
    pub has_property: bool,
}

/// Generates one spec, machine `name`, with choices from `rng`; `rich` adds the fuzz
/// target's extras (module documentation).
pub fn spec_from<C: Choices>(mut rng: C, name: &str, cfg: &GenConfig, rich: bool) -> Built {
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
    let mut s = String::new();
    let mut vis = "pub ";
    let mut allow_more = "";
    if rich {
        if rng.chance(0.3) {
            s.push_str("/// A machine the fuzzer built.\n");
        }
        // A constant guard (`false`) and states that are equal are fine here.
        allow_more = ", never_true_guard, equivalent_states";
        match rng.index(4) {
            1 => s.push_str("#[dispatch(match)]\n"),
            2 => s.push_str("#[minimize]\n"),
            _ => {}
        }
        vis = ["", "pub ", "pub(crate) "][rng.index(3)];
    }
    let write_policy = !rich || policy != "complete" || rng.chance(0.5);

    let mut g = Gen {
        rng,
        policy,
        clocked,
        events,
        inputs,
        outputs,
        actions,
        n_states,
        n_groups,
        rich,
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
    let _ = writeln!(
        s,
        "#[allow(unreachable_state, dead_end, unused_declaration, dead_rule, repeated_action{allow_more})]"
    );
    let _ = writeln!(s, "{vis}machine {name} {{");
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
    if write_policy {
        let _ = writeln!(s, "    unhandled {policy};");
    }
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
    let has_property = rich && g.properties();
    for node in &tree {
        g.node(node, 1, false);
    }
    g.out.push_str("}\n");
    Built {
        text: g.out,
        has_property,
    }
}

fn build_tree<C: Choices>(
    rng: &mut C,
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

struct Gen<C> {
    rng: C,
    policy: &'static str,
    clocked: bool,
    events: Vec<String>,
    inputs: Vec<String>,
    outputs: Vec<String>,
    actions: Vec<String>,
    n_states: usize,
    n_groups: usize,
    /// The fuzz target's extras ([`spec_from`]).
    rich: bool,
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

impl<C: Choices> Gen<C> {
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

    /// One atom of a property: an output, action, input, event or `in` a state or
    /// group, sometimes negated.
    fn atom(&mut self) -> String {
        let mut pool: Vec<String> = Vec::new();
        pool.extend(self.outputs.iter().cloned());
        pool.extend(self.actions.iter().cloned());
        pool.extend(self.inputs.iter().cloned());
        pool.extend(self.events.iter().cloned());
        pool.push(format!("in S{}", self.rng.index(self.n_states)));
        if self.n_groups > 0 {
            pool.push(format!("in G{}", self.rng.index(self.n_groups)));
        }
        let a = pool[self.rng.index(pool.len())].clone();
        if self.rng.chance(0.3) {
            format!("!{a}")
        } else {
            a
        }
    }

    /// Optional `never` and `recover` declarations; true when one was written.
    fn properties(&mut self) -> bool {
        let mut any = false;
        if self.rng.chance(0.3) {
            let mut p = self.atom();
            for _ in 0..self.rng.index(3) {
                let op = if self.rng.chance(0.6) { "&&" } else { "||" };
                let b = self.atom();
                p = format!("({p}) {op} {b}");
            }
            let _ = writeln!(self.out, "    never {p};");
            any = true;
        }
        if self.rng.chance(0.2) {
            let to = self.rng.index(self.n_states);
            let _ = write!(self.out, "    recover to S{to}");
            if self.n_states > 1 && self.rng.chance(0.5) {
                let mut except = self.rng.index(self.n_states);
                if except == to {
                    except = (except + 1) % self.n_states;
                }
                let _ = write!(self.out, " except S{except}");
            }
            self.out.push_str(";\n");
            any = true;
        }
        any
    }

    /// An exact partition of the input space as guard texts (`None` = always).
    fn partition(&mut self) -> Vec<Option<String>> {
        let n = self.inputs.len();
        if n == 0 || self.rng.chance(0.35) {
            return vec![None];
        }
        let x = self.inputs[self.rng.index(n)].clone();
        let y = self.inputs[self.rng.index(n)].clone();
        match self.rng.index(if self.rich { 6 } else { 4 }) {
            0 => vec![Some(x.clone()), Some(format!("!{x}"))],
            1 if x != y => vec![
                Some(format!("{x} && {y}")),
                Some(format!("{x} && !{y}")),
                Some(format!("!{x}")),
            ],
            2 if x != y => vec![Some(format!("{x} || {y}")), Some(format!("!({x} || {y})"))],
            3 if self.rich => vec![Some(format!("{x} || true")), Some("false".into())],
            4 if self.rich && x != y => vec![
                Some(format!("({x} || {y}) && !({x} && {y})")),
                Some(format!("({x} && {y}) || !({x} || {y})")),
            ],
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
