//! What `detent lsp` knows about a document: every name as written (declarations and
//! uses, with the kinds of thing each use can be), the group/state tree with each
//! scope's outputs and rules, for navigation, hover, symbols and completion.
//!
//! Built from the syntax tree alone (no resolution), so it is there for specs whose
//! rules still have errors. Positions are plain numbers (no spans kept), so the
//! tokenizer's span table can be freed after each analysis.

use detent_compiler::syntax::ast::*;
use detent_compiler::syntax::print::{print_duration, print_rule};
use proc_macro2::Span;

/// A range: 0-based line and character column of its start and end.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct Range {
    /// Start line (0-based).
    pub sl: u32,
    /// Start column, in characters.
    pub sc: u32,
    /// End line.
    pub el: u32,
    /// End column, in characters.
    pub ec: u32,
}

impl Range {
    /// The range a span covers.
    pub fn of(span: Span) -> Range {
        let (s, e) = (span.start(), span.end());
        Range {
            sl: s.line.saturating_sub(1) as u32,
            sc: s.column as u32,
            el: e.line.saturating_sub(1) as u32,
            ec: e.column as u32,
        }
    }

    /// Whether the position (line, character column) is inside or at the end.
    pub fn contains(&self, line: u32, col: u32) -> bool {
        (line, col) >= (self.sl, self.sc) && (line, col) <= (self.el, self.ec)
    }
}

/// What a name names.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Kind {
    /// A machine.
    Machine,
    /// A state.
    State,
    /// A group.
    Group,
    /// An event.
    Event,
    /// An input.
    Input,
    /// An output.
    Output,
    /// An action.
    Action,
    /// A counter.
    Counter,
}

impl Kind {
    /// The word for it.
    pub fn word(self) -> &'static str {
        match self {
            Kind::Machine => "machine",
            Kind::State => "state",
            Kind::Group => "group",
            Kind::Event => "event",
            Kind::Input => "input",
            Kind::Output => "output",
            Kind::Action => "action",
            Kind::Counter => "counter",
        }
    }
}

const PLACES: &[Kind] = &[Kind::State, Kind::Group];
const EVENTS: &[Kind] = &[Kind::Event];
const OUTPUTS: &[Kind] = &[Kind::Output];
const ACTIONS: &[Kind] = &[Kind::Action];
const COUNTERS: &[Kind] = &[Kind::Counter];
const GUARD_NAMES: &[Kind] = &[Kind::Input, Kind::Counter];
const PROPERTY_NAMES: &[Kind] = &[
    Kind::Output,
    Kind::Action,
    Kind::Input,
    Kind::Event,
    Kind::Counter,
];

/// One name as written.
#[derive(Clone, Debug)]
pub struct Occurrence {
    /// Which machine of the file.
    pub machine: usize,
    /// The name.
    pub name: String,
    /// Where.
    pub range: Range,
    /// `Some(kind)` where the name is declared; `None` for a use.
    pub decl: Option<Kind>,
    /// For a use: what the name can be there, most likely first.
    pub wants: &'static [Kind],
}

/// A rule of a scope, as the printer writes it.
#[derive(Clone, Debug)]
pub struct RuleInfo {
    /// The rule's text.
    pub text: String,
    /// The events its trigger names.
    pub events: Vec<String>,
    /// A `_` rule.
    pub wildcard: bool,
}

/// A state or group.
#[derive(Clone, Debug)]
pub struct ScopeInfo {
    /// Which machine.
    pub machine: usize,
    /// State or group.
    pub kind: Kind,
    /// Its name.
    pub name: String,
    /// Where the name is.
    pub range: Range,
    /// The enclosing group (an index into `scopes`).
    pub parent: Option<usize>,
    /// Its own `emit` list.
    pub emit: Vec<String>,
    /// Its rules, in order.
    pub rules: Vec<RuleInfo>,
    /// `enter do` actions.
    pub enter: Vec<String>,
    /// `leave do` actions.
    pub leave: Vec<String>,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// `terminal state`.
    pub terminal: bool,
    /// Nested scopes (indices into `scopes`), in order.
    pub children: Vec<usize>,
}

/// A declared event, input, output or action, or a machine.
#[derive(Clone, Debug)]
pub struct Declared {
    /// Which machine.
    pub machine: usize,
    /// What it is.
    pub kind: Kind,
    /// Its name.
    pub name: String,
    /// Where it is declared.
    pub range: Range,
    /// Doc comment lines.
    pub doc: Vec<String>,
}

/// A machine of the file.
#[derive(Clone, Debug)]
pub struct MachineInfo {
    /// Its name.
    pub name: String,
    /// Where the name is.
    pub range: Range,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// Its top-level scopes (indices into `scopes`).
    pub top: Vec<usize>,
    /// The time base line, if any (`timebase Tick 1 ms`).
    pub timebase: Option<String>,
}

/// Everything about one document.
#[derive(Clone, Debug, Default)]
pub struct Index {
    /// The machines, in order.
    pub machines: Vec<MachineInfo>,
    /// States and groups of every machine.
    pub scopes: Vec<ScopeInfo>,
    /// Events, inputs, outputs and actions of every machine.
    pub declared: Vec<Declared>,
    /// Every name as written.
    pub occurrences: Vec<Occurrence>,
}

impl Index {
    /// Indexes a parsed file.
    pub fn build(file: &File) -> Index {
        let mut ix = Index::default();
        for (mi, m) in file.machines.iter().enumerate() {
            ix.machine(mi, m);
        }
        ix
    }

    fn occ(&mut self, machine: usize, id: &Ident, decl: Option<Kind>, wants: &'static [Kind]) {
        self.occurrences.push(Occurrence {
            machine,
            name: id.name.clone(),
            range: Range::of(id.span),
            decl,
            wants,
        });
    }

    fn machine(&mut self, mi: usize, m: &MachineAst) {
        self.machines.push(MachineInfo {
            name: m.name.name.clone(),
            range: Range::of(m.name.span),
            doc: m.doc.clone(),
            top: Vec::new(),
            timebase: None,
        });
        self.occ(mi, &m.name, Some(Kind::Machine), &[]);
        for d in &m.decls {
            let list = |kind| match &d.kind {
                DeclKind::Events(l)
                | DeclKind::Inputs(l)
                | DeclKind::Outputs(l)
                | DeclKind::Actions(l) => Some((kind, l)),
                _ => None,
            };
            let declared = match &d.kind {
                DeclKind::Events(_) => list(Kind::Event),
                DeclKind::Inputs(_) => list(Kind::Input),
                DeclKind::Outputs(_) => list(Kind::Output),
                DeclKind::Actions(_) => list(Kind::Action),
                _ => None,
            };
            if let Some((kind, l)) = declared {
                for di in l {
                    self.declared.push(Declared {
                        machine: mi,
                        kind,
                        name: di.ident.name.clone(),
                        range: Range::of(di.ident.span),
                        doc: di.doc.clone(),
                    });
                    self.occ(mi, &di.ident, Some(kind), &[]);
                }
                continue;
            }
            match &d.kind {
                DeclKind::Start(s) => self.occ(mi, s, None, PLACES),
                DeclKind::Never(e) => self.expr(mi, e, PROPERTY_NAMES),
                DeclKind::Ensure {
                    response, trigger, ..
                } => {
                    self.expr(mi, response, PROPERTY_NAMES);
                    self.expr(mi, trigger, PROPERTY_NAMES);
                }
                DeclKind::Counters(list) => {
                    for c in list {
                        self.declared.push(Declared {
                            machine: mi,
                            kind: Kind::Counter,
                            name: c.ident.name.clone(),
                            range: Range::of(c.ident.span),
                            doc: c.doc.clone(),
                        });
                        self.occ(mi, &c.ident, Some(Kind::Counter), &[]);
                    }
                }
                DeclKind::Recover { target, except } => {
                    self.occ(mi, target, None, PLACES);
                    for e in except {
                        self.occ(mi, e, None, PLACES);
                    }
                }
                DeclKind::Timebase { event, period } => {
                    if let Some(e) = event {
                        self.occ(mi, e, None, EVENTS);
                    }
                    let mut t = String::from("timebase");
                    if let Some(e) = event {
                        t.push(' ');
                        t.push_str(&e.name);
                    }
                    if let Some(p) = period {
                        t.push(' ');
                        t.push_str(&print_duration(p));
                    }
                    self.machines[mi].timebase = Some(t);
                }
                _ => {}
            }
        }
        for member in &m.members {
            let i = self.member(mi, member, None);
            self.machines[mi].top.push(i);
        }
    }

    /// An item of a `do` list: an action, or a counter operation.
    fn op(&mut self, mi: usize, op: &OpAst) {
        match op {
            OpAst::Action(a) => self.occ(mi, a, None, ACTIONS),
            OpAst::Counter { name, .. } => self.occ(mi, name, None, COUNTERS),
        }
    }

    fn expr(&mut self, mi: usize, e: &Expr, wants: &'static [Kind]) {
        match e {
            Expr::Name(i) => self.occ(mi, i, None, wants),
            Expr::Compare { name, .. } => self.occ(mi, name, None, COUNTERS),
            Expr::In(i) => self.occ(mi, i, None, PLACES),
            Expr::Const(..) => {}
            Expr::Not(inner, _) | Expr::Paren(inner, _) => self.expr(mi, inner, wants),
            Expr::And(a, b) | Expr::Or(a, b) => {
                self.expr(mi, a, wants);
                self.expr(mi, b, wants);
            }
        }
    }

    fn member(&mut self, mi: usize, member: &Member, parent: Option<usize>) -> usize {
        let (kind, name, emit, body, doc, terminal) = match member {
            Member::State(s) => (Kind::State, &s.name, &s.emit, &s.body, &s.doc, s.terminal),
            Member::Group(g) => (Kind::Group, &g.name, &g.emit, &g.body, &g.doc, false),
        };
        let at = self.scopes.len();
        self.scopes.push(ScopeInfo {
            machine: mi,
            kind,
            name: name.name.clone(),
            range: Range::of(name.span),
            parent,
            emit: emit.iter().map(|i| i.name.clone()).collect(),
            rules: Vec::new(),
            enter: Vec::new(),
            leave: Vec::new(),
            doc: doc.clone(),
            terminal,
            children: Vec::new(),
        });
        self.occ(mi, name, Some(kind), &[]);
        for e in emit {
            self.occ(mi, e, None, OUTPUTS);
        }
        for b in body {
            match b {
                Body::Enter(list, _) | Body::Leave(list, _) => {
                    for a in list {
                        self.op(mi, a);
                    }
                    let names = list.iter().map(|i| i.name().name.clone());
                    if matches!(b, Body::Enter(..)) {
                        self.scopes[at].enter.extend(names);
                    } else {
                        self.scopes[at].leave.extend(names);
                    }
                }
                Body::Rule(r) => {
                    let mut events = Vec::new();
                    let mut wildcard = false;
                    match &r.trigger {
                        Some(Trigger::Events(evs)) => {
                            for e in evs {
                                self.occ(mi, e, None, EVENTS);
                                events.push(e.name.clone());
                            }
                        }
                        Some(Trigger::Wildcard(_)) => wildcard = true,
                        None => {}
                    }
                    if let Some(g) = &r.guard {
                        self.expr(mi, g, GUARD_NAMES);
                    }
                    if let Target::State(t) = &r.target {
                        self.occ(mi, t, None, PLACES);
                    }
                    for e in &r.emit {
                        self.occ(mi, e, None, OUTPUTS);
                    }
                    for a in &r.actions {
                        self.op(mi, a);
                    }
                    self.scopes[at].rules.push(RuleInfo {
                        text: print_rule(r),
                        events,
                        wildcard,
                    });
                }
            }
        }
        if let Member::Group(g) = member {
            for m in &g.members {
                let c = self.member(mi, m, Some(at));
                self.scopes[at].children.push(c);
            }
        }
        at
    }

    /// The occurrence under a position.
    pub fn at(&self, line: u32, col: u32) -> Option<&Occurrence> {
        self.occurrences
            .iter()
            .find(|o| o.range.contains(line, col))
    }

    /// What an occurrence names: its kind and where it is declared (`None` for a name
    /// nothing declares).
    pub fn resolve(&self, o: &Occurrence) -> Option<(Kind, Range)> {
        if let Some(k) = o.decl {
            return Some((k, o.range));
        }
        let decls: Vec<&Occurrence> = self
            .occurrences
            .iter()
            .filter(|d| d.machine == o.machine && d.decl.is_some() && d.name == o.name)
            .collect();
        for want in o.wants {
            if let Some(d) = decls.iter().find(|d| d.decl == Some(*want)) {
                return Some((*want, d.range));
            }
        }
        decls
            .first()
            .map(|d| (d.decl.unwrap_or(Kind::State), d.range))
    }

    /// Every occurrence (declaration included) that names the same thing as `o`.
    pub fn references(&self, o: &Occurrence) -> Vec<&Occurrence> {
        let Some(target) = self.resolve(o) else {
            return self
                .occurrences
                .iter()
                .filter(|x| x.machine == o.machine && x.name == o.name && x.decl.is_none())
                .collect();
        };
        self.occurrences
            .iter()
            .filter(|x| x.machine == o.machine && x.name == o.name)
            .filter(|x| self.resolve(x) == Some(target))
            .collect()
    }

    /// The machine a line belongs to: the last one whose name is on or above it.
    pub fn machine_at(&self, line: u32) -> Option<usize> {
        let mut best = None;
        for (i, m) in self.machines.iter().enumerate() {
            if m.range.sl <= line {
                best = Some(i);
            }
        }
        best.or(if self.machines.is_empty() {
            None
        } else {
            Some(0)
        })
    }

    /// The scope a name declares (state or group) in a machine.
    pub fn scope(&self, machine: usize, kind: Kind, name: &str) -> Option<&ScopeInfo> {
        self.scopes
            .iter()
            .find(|s| s.machine == machine && s.kind == kind && s.name == name)
    }

    /// Hover text (Markdown) for what an occurrence names.
    pub fn hover(&self, o: &Occurrence) -> Option<String> {
        let (kind, _) = self.resolve(o)?;
        let mi = o.machine;
        let mut out = String::new();
        let doc = |out: &mut String, doc: &[String]| {
            if !doc.is_empty() {
                out.push_str(&doc.join("\n"));
                out.push_str("\n\n");
            }
        };
        match kind {
            Kind::State | Kind::Group => {
                let s = self.scope(mi, kind, &o.name)?;
                let mut chain = Vec::new();
                let mut p = s.parent;
                while let Some(g) = p {
                    chain.push(&self.scopes[g]);
                    p = self.scopes[g].parent;
                }
                let within = chain
                    .iter()
                    .map(|g| format!("`{}`", g.name))
                    .collect::<Vec<_>>()
                    .join(" in ");
                out.push_str(&format!(
                    "**{}{}** `{}`{}\n\n",
                    if s.terminal { "terminal " } else { "" },
                    kind.word(),
                    s.name,
                    if within.is_empty() {
                        String::new()
                    } else {
                        format!(" in group {within}")
                    }
                ));
                doc(&mut out, &s.doc);
                let mut moore: Vec<String> = s.emit.clone();
                for g in &chain {
                    for e in &g.emit {
                        if !moore.contains(e) {
                            moore.push(format!("{e} (from `{}`)", g.name));
                        }
                    }
                }
                out.push_str(&format!(
                    "Moore outputs: {}\n\n",
                    if moore.is_empty() {
                        "none".to_string()
                    } else {
                        moore.join(", ")
                    }
                ));
                if !s.enter.is_empty() {
                    out.push_str(&format!("Enter: do {}\n\n", s.enter.join(", ")));
                }
                if !s.leave.is_empty() {
                    out.push_str(&format!("Leave: do {}\n\n", s.leave.join(", ")));
                }
                out.push_str("Rules:\n");
                if s.rules.is_empty() {
                    out.push_str("- none of its own\n");
                }
                for r in &s.rules {
                    out.push_str(&format!("- `{}`\n", r.text));
                }
                for g in &chain {
                    if g.rules.is_empty() {
                        continue;
                    }
                    out.push_str(&format!("\nInherited from group `{}`:\n", g.name));
                    for r in &g.rules {
                        out.push_str(&format!("- `{}`\n", r.text));
                    }
                }
                if kind == Kind::Group {
                    let members: Vec<String> = s
                        .children
                        .iter()
                        .map(|c| format!("`{}`", self.scopes[*c].name))
                        .collect();
                    out.push_str(&format!("\nMembers: {}\n", members.join(", ")));
                }
            }
            Kind::Event => {
                out.push_str(&format!("**event** `{}`\n\n", o.name));
                if let Some(d) = self.declared_item(mi, kind, &o.name) {
                    doc(&mut out, &d.doc);
                }
                let mut handlers = Vec::new();
                let mut wild = Vec::new();
                for s in self.scopes.iter().filter(|s| s.machine == mi) {
                    for r in &s.rules {
                        if r.events.contains(&o.name) {
                            handlers.push(format!(
                                "- {} `{}`: `{}`",
                                s.kind.word(),
                                s.name,
                                r.text
                            ));
                        } else if r.wildcard && !wild.contains(&s.name) {
                            wild.push(s.name.clone());
                        }
                    }
                }
                if handlers.is_empty() {
                    out.push_str("Handled by no rule that names it.\n");
                } else {
                    out.push_str("Handled by:\n");
                    out.push_str(&handlers.join("\n"));
                    out.push('\n');
                }
                if !wild.is_empty() {
                    out.push_str(&format!(
                        "\n`_` rules (where no rule names it) in: {}\n",
                        wild.iter()
                            .map(|w| format!("`{w}`"))
                            .collect::<Vec<_>>()
                            .join(", ")
                    ));
                }
                if let Some(tb) = &self.machines[mi].timebase {
                    if tb.split_whitespace().nth(1) == Some(o.name.as_str()) {
                        out.push_str(&format!("\nThe time base: `{tb};`\n"));
                    }
                }
            }
            Kind::Input | Kind::Output | Kind::Action | Kind::Counter => {
                out.push_str(&format!("**{}** `{}`\n\n", kind.word(), o.name));
                if let Some(d) = self.declared_item(mi, kind, &o.name) {
                    doc(&mut out, &d.doc);
                }
                let uses = self
                    .references(o)
                    .iter()
                    .filter(|x| x.decl.is_none())
                    .count();
                out.push_str(&format!(
                    "Used {uses} time{}.\n",
                    if uses == 1 { "" } else { "s" }
                ));
                if kind == Kind::Output {
                    let moore: Vec<String> = self
                        .scopes
                        .iter()
                        .filter(|s| s.machine == mi && s.emit.contains(&o.name))
                        .map(|s| format!("`{}`", s.name))
                        .collect();
                    if !moore.is_empty() {
                        out.push_str(&format!("\nMoore output of: {}\n", moore.join(", ")));
                    }
                }
            }
            Kind::Machine => {
                let m = &self.machines[mi];
                out.push_str(&format!("**machine** `{}`\n\n", m.name));
                doc(&mut out, &m.doc);
                let count = |k: Kind| {
                    self.declared
                        .iter()
                        .filter(|d| d.machine == mi && d.kind == k)
                        .count()
                };
                let states = self
                    .scopes
                    .iter()
                    .filter(|s| s.machine == mi && s.kind == Kind::State)
                    .count();
                out.push_str(&format!(
                    "{states} states, {} events, {} inputs, {} outputs, {} actions\n",
                    count(Kind::Event),
                    count(Kind::Input),
                    count(Kind::Output),
                    count(Kind::Action)
                ));
            }
        }
        Some(out)
    }

    fn declared_item(&self, machine: usize, kind: Kind, name: &str) -> Option<&Declared> {
        self.declared
            .iter()
            .find(|d| d.machine == machine && d.kind == kind && d.name == name)
    }
}
