//! A grammar-based spec builder driven by fuzz bytes (the structured target).
//!
//! The same construction as the differential tests' random spec generator
//! (`tests/src/gen.rs`), with every choice read from [`arbitrary::Unstructured`] instead
//! of a seeded generator, so libFuzzer's mutations steer the shape of the machine and
//! its coverage feedback finds the shapes that reach new code. The spec it writes has
//! no checker error by construction (each scope's rules for one trigger split the input
//! space exactly; under `unhandled complete` every (state, event) is covered), except a
//! `property` error when one of the optional `never`/`recover` declarations does not
//! hold. The structured target asserts exactly that.
//!
//! Sizes are bounded (at most 12 states, 4 events, 4 inputs, 3 outputs, 3 actions) so
//! every run, logic synthesis included, stays in milliseconds. Bytes that run out read
//! as zeros: the smallest machine.

use arbitrary::Unstructured;
use std::fmt::Write;

/// Choices read from the fuzz input.
struct Src<'a, 'b> {
    u: &'b mut Unstructured<'a>,
}

impl Src<'_, '_> {
    /// A number in `0..n` (0 when `n` is 0 or the bytes ran out).
    fn index(&mut self, n: usize) -> usize {
        if n <= 1 {
            return 0;
        }
        self.u.int_in_range(0..=n - 1).unwrap_or(0)
    }

    /// A number in `lo..=hi`.
    fn range(&mut self, lo: usize, hi: usize) -> usize {
        lo + self.index(hi.saturating_sub(lo) + 1)
    }

    /// True with about `p` chance for uniform bytes (false once the bytes ran out).
    fn chance(&mut self, p: f64) -> bool {
        let b: u8 = self.u.arbitrary().unwrap_or(255);
        f64::from(b) < p * 256.0
    }
}

/// The machine's shape, from the first bytes.
#[derive(Clone, Debug)]
struct Shape {
    states: usize,
    events: usize,
    inputs: usize,
    outputs: usize,
    actions: usize,
    groups: bool,
    policy: &'static str,
}

/// A scope in the generated member tree.
enum Node {
    State(usize),
    Group(usize, Vec<Node>),
}

/// What the structured target builds: the spec text and the back-end choices.
#[derive(Debug)]
pub struct Built {
    /// The spec.
    pub text: String,
    /// Logic synthesis encoding (0 binary, 1 Gray, 2 one-hot).
    pub encoding: u8,
    /// Flip-flop type (0 D, 1 T, 2 JK, 3 SR).
    pub flip_flop: u8,
    /// The spec declares a `never` or `recover` property (which may not hold).
    pub has_property: bool,
}

/// Builds one spec from the fuzz input.
pub fn build(u: &mut Unstructured<'_>) -> Built {
    let mut src = Src { u };
    let shape = Shape {
        states: src.range(1, 12),
        events: src.index(5),
        inputs: src.index(5),
        outputs: src.index(4),
        actions: src.index(4),
        groups: !src.chance(0.25),
        policy: ["complete", "ignore", "reject"][src.index(3)],
    };
    let encoding = src.index(3) as u8;
    let flip_flop = src.index(4) as u8;
    let clocked = shape.events == 0;
    let events: Vec<String> = (0..shape.events).map(|i| format!("Ev{i}")).collect();
    let inputs: Vec<String> = (0..shape.inputs).map(|i| format!("in{i}")).collect();
    let outputs: Vec<String> = (0..shape.outputs).map(|i| format!("out{i}")).collect();
    let actions: Vec<String> = (0..shape.actions).map(|i| format!("act{i}")).collect();

    let mut n_groups = 0usize;
    let tree = build_tree(&mut src, 0, shape.states, shape.groups, 0, &mut n_groups);

    let mut s = String::new();
    if src.chance(0.3) {
        s.push_str("/// A machine the fuzzer built.\n");
    }
    let _ = writeln!(
        s,
        "#[allow(unreachable_state, dead_end, unused_declaration, dead_rule, repeated_action, never_true_guard, equivalent_states)]"
    );
    match src.index(4) {
        1 => s.push_str("#[dispatch(match)]\n"),
        2 => s.push_str("#[minimize]\n"),
        _ => {}
    }
    let vis = ["", "pub ", "pub(crate) "][src.index(3)];
    let _ = writeln!(s, "{vis}machine Fuzz {{");
    if !clocked {
        let _ = writeln!(s, "    events {};", events.join(", "));
    }
    if !inputs.is_empty() {
        let _ = writeln!(s, "    inputs {};", inputs.join(", "));
    }
    if !outputs.is_empty() {
        let _ = writeln!(s, "    outputs {};", outputs.join(", "));
    }
    if !actions.is_empty() {
        let _ = writeln!(s, "    actions {};", actions.join(", "));
    }
    let _ = writeln!(s, "    start S0;");
    if shape.policy != "complete" || src.chance(0.5) {
        let _ = writeln!(s, "    unhandled {};", shape.policy);
    }
    let mut g = Gen {
        src,
        policy: shape.policy,
        clocked,
        events,
        inputs,
        outputs,
        actions,
        n_states: shape.states,
        n_groups,
        out: s,
    };
    let has_property = g.properties();
    for node in &tree {
        g.node(node, 1, false);
    }
    g.out.push_str("}\n");
    Built {
        text: g.out,
        encoding,
        flip_flop,
        has_property,
    }
}

fn build_tree(
    src: &mut Src<'_, '_>,
    lo: usize,
    hi: usize,
    groups: bool,
    depth: usize,
    n_groups: &mut usize,
) -> Vec<Node> {
    let mut out = Vec::new();
    let mut i = lo;
    while i < hi {
        if groups && depth < 3 && hi - i >= 2 && src.chance(0.3) {
            let len = src.range(1, (hi - i).min(4));
            let id = *n_groups;
            *n_groups += 1;
            let inner = build_tree(src, i, i + len, groups, depth + 1, n_groups);
            out.push(Node::Group(id, inner));
            i += len;
        } else {
            out.push(Node::State(i));
            i += 1;
        }
    }
    out
}

struct Gen<'a, 'b> {
    src: Src<'a, 'b>,
    policy: &'static str,
    clocked: bool,
    events: Vec<String>,
    inputs: Vec<String>,
    outputs: Vec<String>,
    actions: Vec<String>,
    n_states: usize,
    n_groups: usize,
    out: String,
}

impl Gen<'_, '_> {
    fn indent(&mut self, level: usize) {
        for _ in 0..level {
            self.out.push_str("    ");
        }
    }

    fn pick_some(&mut self, names: &[String], p: f64) -> Vec<String> {
        names
            .iter()
            .filter(|_| self.src.chance(p))
            .cloned()
            .collect()
    }

    /// One atom of a property: an output, action, input, event or `in` a state/group.
    fn atom(&mut self) -> String {
        let mut pool: Vec<String> = Vec::new();
        pool.extend(self.outputs.iter().cloned());
        pool.extend(self.actions.iter().cloned());
        pool.extend(self.inputs.iter().cloned());
        pool.extend(self.events.iter().cloned());
        pool.push(format!("in S{}", self.src.index(self.n_states)));
        if self.n_groups > 0 {
            pool.push(format!("in G{}", self.src.index(self.n_groups)));
        }
        let a = pool[self.src.index(pool.len())].clone();
        if self.src.chance(0.3) {
            format!("!{a}")
        } else {
            a
        }
    }

    /// Optional `never` and `recover` declarations; true when one was written.
    fn properties(&mut self) -> bool {
        let mut any = false;
        if self.src.chance(0.3) {
            let mut p = self.atom();
            for _ in 0..self.src.index(3) {
                let op = if self.src.chance(0.6) { "&&" } else { "||" };
                let b = self.atom();
                p = format!("({p}) {op} {b}");
            }
            let _ = writeln!(self.out, "    never {p};");
            any = true;
        }
        if self.src.chance(0.2) {
            let to = self.src.index(self.n_states);
            let _ = write!(self.out, "    recover to S{to}");
            if self.n_states > 1 && self.src.chance(0.5) {
                let mut except = self.src.index(self.n_states);
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
        if n == 0 || self.src.chance(0.35) {
            return vec![None];
        }
        let x = self.inputs[self.src.index(n)].clone();
        let y = self.inputs[self.src.index(n)].clone();
        match self.src.index(6) {
            0 => vec![Some(x.clone()), Some(format!("!{x}"))],
            1 if x != y => vec![
                Some(format!("{x} && {y}")),
                Some(format!("{x} && !{y}")),
                Some(format!("!{x}")),
            ],
            2 if x != y => vec![Some(format!("{x} || {y}")), Some(format!("!({x} || {y})"))],
            3 => vec![Some(format!("{x} || true")), Some("false".into())],
            4 if x != y => vec![
                Some(format!("({x} || {y}) && !({x} && {y})")),
                Some(format!("({x} && {y}) || !({x} || {y})")),
            ],
            _ => vec![Some(format!("!!{x}")), Some(format!("!{x}"))],
        }
    }

    /// The rules of one trigger: one rule per part of a partition, sometimes with an
    /// `else` (never for preempt rules).
    fn rules(&mut self, trigger: &str, level: usize, preempt: bool) {
        let mut parts = self.partition();
        let otherwise = !preempt && self.src.chance(0.25);
        let n = parts.len();
        if otherwise && n > 1 && self.src.chance(0.7) {
            parts[n - 1] = Some("else".into());
        } else if otherwise {
            parts.push(Some("else".into()));
        }
        for guard in parts {
            let is_else = guard.as_deref() == Some("else");
            if !is_else
                && (preempt || self.policy != "complete")
                && self.src.chance(if preempt { 0.4 } else { 0.25 })
            {
                continue;
            }
            let target = if self.src.chance(0.2) {
                "stay".to_string()
            } else {
                format!("S{}", self.src.index(self.n_states))
            };
            let outputs = self.outputs.clone();
            let actions = self.actions.clone();
            let emit = self.pick_some(&outputs, 0.25);
            let act = self.pick_some(&actions, 0.3);
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

    /// A scope's rules. `must_cover`: every event needs a rule here. Returns true when
    /// the scope covers every event.
    fn scope_rules(&mut self, level: usize, must_cover: bool, is_group: bool) -> bool {
        if self.clocked {
            let write = must_cover || self.src.chance(if is_group { 0.5 } else { 0.7 });
            if write {
                self.rules("", level, false);
            }
            return write;
        }
        let p = if is_group { 0.3 } else { 0.6 };
        let mut handled: Vec<usize> = (0..self.events.len())
            .filter(|_| self.src.chance(p))
            .collect();
        let wildcard = self.src.chance(0.3);
        if must_cover && !wildcard {
            handled = (0..self.events.len()).collect();
        }
        let mut i = 0;
        while i < handled.len() {
            let take = if i + 1 < handled.len() && self.src.chance(0.3) {
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
        if is_group && self.src.chance(0.35) {
            let e = self.src.index(self.events.len());
            let mut trig = self.events[e].clone();
            let f = self.src.index(self.events.len());
            if f != e && self.src.chance(0.3) {
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
            if self.src.chance(0.25) {
                let list = self.pick_some(&actions, 0.5);
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
                let terminal = if self.src.chance(0.05) {
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
