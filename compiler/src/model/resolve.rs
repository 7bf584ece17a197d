//! Name resolution: [`MachineAst`] to [`Machine`].
//!
//! Reports every name error it finds (not just the first): undefined and duplicate
//! names, a group used as a target, triggers in a clocked machine, a missing
//! `start`, and the limits of LANGUAGE.md.

use super::*;
use crate::diag::Diagnostic;
use crate::fxhash::FxMap;
use crate::model::bdd::MAX_BDD_NODES;
use crate::syntax::ast::{self, Attr, Body, DeclKind, Expr, MachineAst, Member};

/// Most states a machine may have.
pub const MAX_STATES: usize = 65_535;
/// Most events a machine may have.
pub const MAX_EVENTS: usize = 65_535;
/// Most inputs a machine may have.
pub const MAX_INPUTS: usize = 64;

/// Resolves every machine of a file, in source order: each machine, or its errors.
///
/// A machine whose name an earlier machine of the file already has is not resolved: its
/// one error, "machine `X` is defined twice", points at the first definition. This is
/// the only place that finds duplicate machines, so the CLI and the macro (both through
/// [`crate::driver`]) report them in the same words.
pub fn resolve_each(file: &ast::File) -> Vec<Result<Machine, Vec<Diagnostic>>> {
    let mut seen: FxMap<&str, Span> = FxMap::default();
    file.machines
        .iter()
        .map(|m| {
            if let Some(first) = seen.get(m.name.name.as_str()) {
                let mut d = Diagnostic::name_error(
                    m.name.span,
                    format!("machine `{}` is defined twice", m.name.name),
                );
                d.related.push((*first, "first defined here".into()));
                return Err(vec![d]);
            }
            seen.insert(&m.name.name, m.name.span);
            resolve(m)
        })
        .collect()
}

/// Resolves every machine of a file ([`resolve_each`]): the machines that resolve, and
/// every error of the others.
pub fn resolve_file(file: &ast::File) -> (Vec<Machine>, Vec<Diagnostic>) {
    let mut machines = Vec::new();
    let mut errors = Vec::new();
    for result in resolve_each(file) {
        match result {
            Ok(machine) => machines.push(machine),
            Err(mut e) => errors.append(&mut e),
        }
    }
    (machines, errors)
}

/// What a name in the input/output/action namespace denotes.
#[derive(Clone, Copy)]
enum Signal {
    Input(InputId),
    Output(OutputId),
    Action(ActionId),
    Counter(CounterId),
}

impl Signal {
    fn kind(self) -> &'static str {
        match self {
            Signal::Input(_) => "an input",
            Signal::Output(_) => "an output",
            Signal::Action(_) => "an action",
            Signal::Counter(_) => "a counter",
        }
    }
}

/// The largest counter bound and comparison constant (LANGUAGE.md, "Limits").
pub const MAX_COUNTER: u64 = u16::MAX as u64;

/// What a name in the state/group namespace denotes.
#[derive(Clone, Copy)]
enum Place {
    State(StateId),
    Group(GroupId),
}

/// The kinds of declared names a misspelling is compared with.
#[derive(Clone, Copy)]
enum Kind {
    Event,
    Input,
    Output,
    Action,
    Counter,
    State,
    Group,
}

struct Resolver<'a> {
    ast: &'a MachineAst,
    errors: Vec<Diagnostic>,
    events: Vec<Item>,
    event_ids: FxMap<String, EventId>,
    inputs: Vec<Item>,
    outputs: Vec<Item>,
    actions: Vec<Item>,
    signals: FxMap<String, (Signal, Span)>,
    places: FxMap<String, (Place, Span)>,
    states: Vec<State>,
    groups: Vec<Group>,
    rules: Vec<Rule>,
    bdd: BddStore,
    clocked: bool,
    /// More events (inputs) were declared than the limit allows, so none was: uses of
    /// them are not reported again, one by one.
    events_over_limit: bool,
    inputs_over_limit: bool,
    /// The resolved time base (after the declarations).
    timebase: Option<Timebase>,
    /// Where `timebase` is written, even when it did not resolve (no second error for
    /// every timeout rule).
    timebase_written: bool,
    /// The timers, in source order of their scopes.
    timers: Vec<Timer>,
    /// The counters, in declaration order.
    counters: Vec<Counter>,
    /// The counter comparisons guards make, in order of first use.
    atoms: Vec<Atom>,
    atom_ids: FxMap<Atom, AtomId>,
}

/// The longest duration, in ticks (LANGUAGE.md, "Limits").
pub const MAX_DURATION_TICKS: u64 = u32::MAX as u64;

/// The error for a machine whose guards need more than [`MAX_BDD_NODES`] nodes.
pub fn bdd_overflow_message(machine: &str, what: &str) -> String {
    format!(
        "machine `{machine}`: {what} need more than {MAX_BDD_NODES} decision-diagram nodes \
         (the limit); guards are ordered by input declaration, so declare inputs that a \
         guard combines next to each other in `inputs`, or split the guard"
    )
}

/// Resolves one machine.
pub fn resolve(ast: &MachineAst) -> Result<Machine, Vec<Diagnostic>> {
    let r = Resolver {
        ast,
        errors: Vec::new(),
        events: Vec::new(),
        event_ids: FxMap::default(),
        inputs: Vec::new(),
        outputs: Vec::new(),
        actions: Vec::new(),
        signals: FxMap::default(),
        places: FxMap::default(),
        states: Vec::new(),
        groups: Vec::new(),
        rules: Vec::new(),
        bdd: BddStore::new(),
        clocked: true,
        events_over_limit: false,
        inputs_over_limit: false,
        timebase: None,
        timebase_written: false,
        timers: Vec::new(),
        counters: Vec::new(),
        atoms: Vec::new(),
        atom_ids: FxMap::default(),
    };
    r.run()
}

fn item(d: &ast::DocIdent) -> Item {
    Item {
        name: d.ident.name.clone(),
        span: d.ident.span,
        doc: d.doc.clone(),
    }
}

impl<'a> Resolver<'a> {
    fn err(&mut self, span: Span, msg: impl Into<String>) {
        self.errors.push(Diagnostic::name_error(span, msg));
    }

    /// An error about an undefined name, with a "did you mean" help when one of the
    /// `kinds` of declared names is close to it.
    fn undefined(&mut self, i: &ast::Ident, msg: String, kinds: &[Kind]) {
        let mut names: Vec<&str> = Vec::new();
        for kind in kinds {
            match kind {
                Kind::Event => names.extend(self.events.iter().map(|e| e.name.as_str())),
                Kind::Input => names.extend(self.inputs.iter().map(|e| e.name.as_str())),
                Kind::Output => names.extend(self.outputs.iter().map(|e| e.name.as_str())),
                Kind::Action => names.extend(self.actions.iter().map(|e| e.name.as_str())),
                Kind::Counter => names.extend(self.counters.iter().map(|e| e.name.as_str())),
                Kind::State => names.extend(
                    self.places
                        .iter()
                        .filter(|(_, (p, _))| matches!(p, Place::State(_)))
                        .map(|(n, _)| n.as_str()),
                ),
                Kind::Group => names.extend(
                    self.places
                        .iter()
                        .filter(|(_, (p, _))| matches!(p, Place::Group(_)))
                        .map(|(n, _)| n.as_str()),
                ),
            }
        }
        let help = crate::naming::did_you_mean(&i.name, names);
        let mut d = Diagnostic::name_error(i.span, msg);
        d.helps.extend(help);
        self.errors.push(d);
    }

    fn run(mut self) -> Result<Machine, Vec<Diagnostic>> {
        let ast = self.ast;
        let mut seen_decl: FxMap<&'static str, Span> = FxMap::default();
        let mut start: Option<&ast::Ident> = None;
        let mut policy = Policy::Complete;
        let mut policy_span = None;
        let mut never = Vec::new();
        let mut recover = Vec::new();
        let mut timebase = None;
        let mut ensure = Vec::new();
        for d in &ast.decls {
            let key = match &d.kind {
                DeclKind::Events(_) => "events",
                DeclKind::Inputs(_) => "inputs",
                DeclKind::Outputs(_) => "outputs",
                DeclKind::Actions(_) => "actions",
                DeclKind::Start(_) => "start",
                DeclKind::Unhandled(_) => "unhandled",
                DeclKind::Never(_) => "never",
                DeclKind::Recover { .. } => "recover",
                DeclKind::Timebase { .. } => "timebase",
                DeclKind::Counters(_) => "counters",
                DeclKind::Ensure { .. } => "ensure",
            };
            if key != "never" && key != "recover" && key != "ensure" {
                if let Some(first) = seen_decl.get(key) {
                    let mut e = Diagnostic::name_error(
                        d.span,
                        format!("`{key}` is declared twice; a declaration appears at most once"),
                    );
                    e.related.push((*first, "first declared here".into()));
                    self.errors.push(e);
                    continue;
                }
                seen_decl.insert(key, d.span);
            }
            match &d.kind {
                DeclKind::Events(list) => {
                    self.clocked = false;
                    if list.len() > MAX_EVENTS {
                        self.events_over_limit = true;
                        self.err(
                            d.span,
                            format!("{} events declared; the limit is {MAX_EVENTS}", list.len()),
                        );
                        continue;
                    }
                    for e in list {
                        if let Some(&prev) = self.event_ids.get(&e.ident.name) {
                            let first = self.events[prev.index()].span;
                            let mut diag = Diagnostic::name_error(
                                e.ident.span,
                                format!("event `{}` is declared twice", e.ident.name),
                            );
                            diag.related.push((first, "first declared here".into()));
                            self.errors.push(diag);
                            continue;
                        }
                        let id = EventId::from_index(self.events.len());
                        self.event_ids.insert(e.ident.name.clone(), id);
                        self.events.push(item(e));
                    }
                }
                DeclKind::Inputs(list) => {
                    if list.len() > MAX_INPUTS {
                        self.inputs_over_limit = true;
                        self.err(
                            d.span,
                            format!("{} inputs declared; the limit is {MAX_INPUTS}", list.len()),
                        );
                        continue;
                    }
                    for e in list {
                        let id = InputId::from_index(self.inputs.len());
                        if self.declare_signal(e, Signal::Input(id)) {
                            self.inputs.push(item(e));
                        }
                    }
                }
                DeclKind::Outputs(list) => {
                    for e in list {
                        let id = OutputId::from_index(self.outputs.len());
                        if self.declare_signal(e, Signal::Output(id)) {
                            self.outputs.push(item(e));
                        }
                    }
                }
                DeclKind::Actions(list) => {
                    for e in list {
                        let id = ActionId::from_index(self.actions.len());
                        if self.declare_signal(e, Signal::Action(id)) {
                            self.actions.push(item(e));
                        }
                    }
                }
                DeclKind::Start(s) => start = Some(s),
                DeclKind::Unhandled(p) => {
                    policy = *p;
                    policy_span = Some(d.span);
                }
                DeclKind::Never(e) => never.push((e, d.span)),
                DeclKind::Recover { target, except } => recover.push((target, except, d.span)),
                DeclKind::Timebase { event, period } => timebase = Some((event, period, d.span)),
                DeclKind::Counters(list) => {
                    for c in list {
                        let id = CounterId::from_index(self.counters.len());
                        if c.max == 0 || c.max > MAX_COUNTER {
                            self.err(
                                c.max_span,
                                format!(
                                    "counter `{}` to {}: a counter's largest value is from 1 \
                                     to {MAX_COUNTER}",
                                    c.ident.name, c.max
                                ),
                            );
                            continue;
                        }
                        let doc = ast::DocIdent {
                            doc: c.doc.clone(),
                            ident: c.ident.clone(),
                        };
                        if self.declare_signal(&doc, Signal::Counter(id)) {
                            self.counters.push(Counter {
                                name: c.ident.name.clone(),
                                span: c.ident.span,
                                doc: c.doc.clone(),
                                max: c.max as u16,
                            });
                        }
                    }
                }
                DeclKind::Ensure {
                    response,
                    within,
                    trigger,
                } => ensure.push((response, within, trigger, d.span)),
            }
        }
        // An event shares no namespace with inputs, outputs and actions, but a property
        // names both kinds: one name for both would be ambiguous there.
        for ev in &self.events {
            if let Some((sig, first)) = self.signals.get(&ev.name) {
                let kind = sig.kind();
                let mut diag = Diagnostic::name_error(
                    ev.span,
                    format!("`{}` is both an event and {kind}", ev.name),
                );
                diag.related
                    .push((*first, format!("declared as {kind} here")));
                diag.notes.push(
                    "a property may name events, inputs, outputs and actions alike, so one \
                     name cannot be two of them"
                        .into(),
                );
                diag.helps.push(
                    "rename one of them (events are UpperCamelCase, the others snake_case)".into(),
                );
                self.errors.push(diag);
            }
        }
        if self.clocked {
            self.events.push(Item {
                name: "Tick".into(),
                span: ast.name.span,
                doc: vec!["One clock tick.".into()],
            });
        }

        if let Some((event, period, span)) = timebase {
            self.timebase_written = true;
            self.timebase = self.resolve_timebase(event.as_ref(), period.as_ref(), span);
        }

        // States and groups: ids in declaration order.
        self.declare_members(&ast.members, None);
        if self.states.len() > MAX_STATES {
            self.err(
                ast.name.span,
                format!(
                    "{} states declared; the limit is {MAX_STATES}",
                    self.states.len()
                ),
            );
            return Err(self.errors);
        }
        if self.states.is_empty() {
            self.err(
                ast.name.span,
                format!("machine `{}` has no states", ast.name.name),
            );
        }
        // Bodies: rules, emits, enter/leave.
        let mut state_counter = 0usize;
        let mut group_counter = 0usize;
        self.resolve_members(&ast.members, &mut state_counter, &mut group_counter);

        // Moore outputs: own plus every enclosing group's.
        for i in 0..self.states.len() {
            let mut moore = self.states[i].emit.clone();
            let mut g = self.states[i].parent;
            while let Some(id) = g {
                moore.extend_from_slice(&self.groups[id.index()].emit);
                g = self.groups[id.index()].parent;
            }
            moore.sort_unstable();
            moore.dedup();
            self.states[i].moore = moore;
        }

        let start = match start {
            None => {
                self.err(
                    ast.name.span,
                    format!("machine `{}` has no `start` declaration", ast.name.name),
                );
                None
            }
            Some(s) => self.state_ref(s, "start state"),
        };

        let mut properties = Vec::new();
        for (e, span) in never {
            if let Some(prop) = self.prop(e) {
                properties.push(Property::Never {
                    prop,
                    span,
                    text: format!("never {}", crate::syntax::print::print_expr(e)),
                });
            }
        }
        for (target, except, span) in recover {
            let t = self.state_ref(target, "recovery target");
            let ex: Vec<Option<StateId>> = except
                .iter()
                .map(|x| self.state_ref(x, "exception"))
                .collect();
            if let (Some(target), true) = (t, ex.iter().all(Option::is_some)) {
                let names: Vec<&str> = except.iter().map(|x| x.name.as_str()).collect();
                let text = if names.is_empty() {
                    format!("recover to {}", target_name(&self.states, target))
                } else {
                    format!(
                        "recover to {} except {}",
                        target_name(&self.states, target),
                        names.join(", ")
                    )
                };
                properties.push(Property::Recover {
                    target,
                    except: ex.into_iter().flatten().collect(),
                    span,
                    text,
                });
            }
        }

        for (response, within, trigger, span) in ensure {
            let text = format!(
                "ensure {} within {} after {}",
                crate::syntax::print::print_expr(response),
                crate::syntax::print::print_within(within),
                crate::syntax::print::print_expr(trigger)
            );
            let r = self.prop(response);
            let t = self.prop(trigger);
            let w = match within {
                ast::Within::Steps(n, at) => match u32::try_from(*n) {
                    Ok(n) => Some(Deadline::Steps(n)),
                    Err(_) => {
                        self.err(*at, "a deadline of more than 2^32 - 1 steps");
                        None
                    }
                },
                ast::Within::Time(d) => self.duration_ticks(d, "a deadline").map(Deadline::Ticks),
            };
            if let (Some(response), Some(trigger), Some(within)) = (r, t, w) {
                properties.push(Property::Ensure {
                    response,
                    within,
                    trigger,
                    span,
                    text,
                });
            }
        }

        let atom_domain = self.atom_domain();

        let mut lints = Vec::new();
        let mut dispatch = DispatchStyle::Table;
        let mut minimize = false;
        for a in &ast.attrs {
            match a {
                Attr::Dispatch(d, _) => dispatch = *d,
                Attr::Minimize(_) => minimize = true,
                Attr::Lint(..) => {}
            }
        }
        self.lint_attrs(&ast.attrs, &mut lints);

        if self.bdd.overflowed() {
            self.err(
                ast.name.span,
                bdd_overflow_message(&ast.name.name, "the guards of this machine"),
            );
        }
        if !self.errors.is_empty() {
            return Err(self.errors);
        }
        Machine {
            name: ast.name.name.clone(),
            span: ast.name.span,
            doc: ast.doc.clone(),
            vis: ast.vis,
            clocked: self.clocked,
            events: self.events,
            inputs: self.inputs,
            outputs: self.outputs,
            actions: self.actions,
            states: self.states,
            groups: self.groups,
            rules: self.rules,
            start: start.unwrap_or(StateId(0)),
            policy,
            policy_span,
            dispatch,
            minimize,
            properties,
            lints,
            timebase: self.timebase,
            timers: self.timers,
            counters: self.counters,
            atoms: self.atoms,
            atom_domain,
            bdd: self.bdd,
            lowered: super::lower::Lowered::default(),
        }
        .lowered_or_error()
    }

    fn declare_signal(&mut self, e: &ast::DocIdent, sig: Signal) -> bool {
        if let Some((prev, first)) = self.signals.get(&e.ident.name) {
            let kind = prev.kind();
            let mut diag = Diagnostic::name_error(
                e.ident.span,
                format!("`{}` is already declared as {kind}", e.ident.name),
            );
            diag.related.push((*first, "first declared here".into()));
            diag.notes.push(
                "inputs, outputs and actions share one namespace: they become hook \
                 functions and struct fields in generated code"
                    .into(),
            );
            self.errors.push(diag);
            return false;
        }
        self.signals
            .insert(e.ident.name.clone(), (sig, e.ident.span));
        true
    }

    fn declare_place(&mut self, name: &ast::Ident, place: Place) -> bool {
        if let Some((_, first)) = self.places.get(&name.name) {
            let mut diag = Diagnostic::name_error(
                name.span,
                format!("`{}` is already the name of a state or group", name.name),
            );
            diag.related.push((*first, "first declared here".into()));
            self.errors.push(diag);
            return false;
        }
        self.places.insert(name.name.clone(), (place, name.span));
        true
    }

    fn declare_members(&mut self, members: &[Member], parent: Option<GroupId>) {
        for m in members {
            match m {
                Member::State(s) => {
                    let id = StateId::from_index(self.states.len());
                    self.declare_place(&s.name, Place::State(id));
                    self.states.push(State {
                        name: s.name.name.clone(),
                        span: s.name.span,
                        doc: s.doc.clone(),
                        terminal: s.terminal,
                        parent,
                        emit: Vec::new(),
                        moore: Vec::new(),
                        enter: Vec::new(),
                        leave: Vec::new(),
                        rules: ScopeRules::default(),
                        lints: Vec::new(),
                    });
                    let mut g = parent;
                    while let Some(gid) = g {
                        self.groups[gid.index()].states.push(id);
                        g = self.groups[gid.index()].parent;
                    }
                }
                Member::Group(gr) => {
                    let id = GroupId::from_index(self.groups.len());
                    self.declare_place(&gr.name, Place::Group(id));
                    self.groups.push(Group {
                        name: gr.name.name.clone(),
                        span: gr.name.span,
                        doc: gr.doc.clone(),
                        parent,
                        emit: Vec::new(),
                        enter: Vec::new(),
                        leave: Vec::new(),
                        rules: ScopeRules::default(),
                        states: Vec::new(),
                        lints: Vec::new(),
                    });
                    self.declare_members(&gr.members, Some(id));
                }
            }
        }
    }

    fn resolve_members(&mut self, members: &[Member], sc: &mut usize, gc: &mut usize) {
        for m in members {
            match m {
                Member::State(s) => {
                    let id = StateId::from_index(*sc);
                    *sc += 1;
                    let emit = self.outputs_ref(&s.emit);
                    let mut lints = Vec::new();
                    self.lint_attrs(&s.attrs, &mut lints);
                    let (enter, leave, rules) = self.resolve_body(&s.body, Scope::State(id));
                    let st = &mut self.states[id.index()];
                    st.emit = emit;
                    st.enter = enter;
                    st.leave = leave;
                    st.rules = rules;
                    st.lints = lints;
                }
                Member::Group(g) => {
                    let id = GroupId::from_index(*gc);
                    *gc += 1;
                    let emit = self.outputs_ref(&g.emit);
                    let mut lints = Vec::new();
                    self.lint_attrs(&g.attrs, &mut lints);
                    let (enter, leave, rules) = self.resolve_body(&g.body, Scope::Group(id));
                    let gr = &mut self.groups[id.index()];
                    gr.emit = emit;
                    gr.enter = enter;
                    gr.leave = leave;
                    gr.rules = rules;
                    gr.lints = lints;
                    self.resolve_members(&g.members, sc, gc);
                }
            }
        }
    }

    fn lint_attrs(&mut self, attrs: &[Attr], out: &mut LintLevels) {
        for a in attrs {
            if let Attr::Lint(level, names, _) = a {
                for n in names {
                    match Lint::from_name(&n.name) {
                        None => {
                            let known: Vec<&str> = Lint::ALL
                                .iter()
                                .filter(|l| !l.is_hard_error())
                                .map(|l| l.name())
                                .collect();
                            let mut d = Diagnostic::name_error(
                                n.span,
                                format!("unknown lint `{}`", n.name),
                            );
                            d.helps
                                .push(format!("lints that levels apply to: {}", known.join(", ")));
                            self.errors.push(d);
                        }
                        Some(l) if l.is_hard_error() && *level != LevelAttr::Deny => {
                            let mut d = Diagnostic::name_error(
                                n.span,
                                format!(
                                    "`{}` is always an error and cannot be allowed or lowered",
                                    l.name()
                                ),
                            );
                            if l == Lint::Incomplete {
                                d.helps.push(
                                    "to leave (state, event) pairs unhandled on purpose, declare \
                                     `unhandled ignore;` or `unhandled reject;`"
                                        .into(),
                                );
                            }
                            self.errors.push(d);
                        }
                        Some(l) => out.push((l, *level)),
                    }
                }
            }
        }
    }

    fn outputs_ref(&mut self, list: &[ast::Ident]) -> Vec<OutputId> {
        let mut out = Vec::new();
        for i in list {
            match self.signals.get(&i.name) {
                Some((Signal::Output(o), _)) => out.push(*o),
                Some(_) => self.err(i.span, format!("`{}` is not an output", i.name)),
                None => {
                    self.undefined(i, format!("undefined output `{}`", i.name), &[Kind::Output])
                }
            }
        }
        out.sort_unstable();
        out.dedup();
        out
    }

    /// A `do` list: actions and counter operations, in order.
    fn ops_ref(&mut self, list: &[ast::OpAst]) -> Vec<Op> {
        let mut out = Vec::new();
        for op in list {
            match op {
                ast::OpAst::Action(i) => match self.signals.get(&i.name) {
                    Some((Signal::Action(a), _)) => out.push(Op::Action(*a)),
                    Some((Signal::Counter(_), _)) => {
                        let mut d = Diagnostic::name_error(
                            i.span,
                            format!("`{}` is a counter, not an action", i.name),
                        );
                        d.helps.push(format!(
                            "change it with `{0} += 1`, `{0} -= 1` or `{0} = 0`",
                            i.name
                        ));
                        self.errors.push(d);
                    }
                    Some(_) => self.err(i.span, format!("`{}` is not an action", i.name)),
                    None => self.undefined(
                        i,
                        format!("undefined action `{}`", i.name),
                        &[Kind::Action, Kind::Counter],
                    ),
                },
                ast::OpAst::Counter {
                    name,
                    kind,
                    value,
                    value_span,
                } => {
                    let Some(c) = self.counter_ref(name) else {
                        continue;
                    };
                    let max = self.counters[c.index()].max;
                    if *kind == CounterOpKind::Set && *value > u64::from(max) {
                        self.err(
                            *value_span,
                            format!(
                                "`{} = {value}`: counter `{}` ranges over 0..={max}",
                                name.name, name.name
                            ),
                        );
                        continue;
                    }
                    if *value > MAX_COUNTER {
                        self.err(
                            *value_span,
                            format!("{value} is over {MAX_COUNTER}, the largest counter value"),
                        );
                        continue;
                    }
                    out.push(Op::Counter(CounterOp {
                        counter: c,
                        kind: *kind,
                        value: *value as u16,
                    }));
                }
            }
        }
        out
    }

    /// A counter named in an operation or a comparison.
    fn counter_ref(&mut self, i: &ast::Ident) -> Option<CounterId> {
        match self.signals.get(&i.name) {
            Some((Signal::Counter(c), _)) => Some(*c),
            Some((sig, _)) => {
                let kind = sig.kind();
                self.err(
                    i.span,
                    format!("`{}` is {kind}, not a counter; only counters are compared with numbers or changed with `+=`, `-=`, `=`", i.name),
                );
                None
            }
            None => {
                self.undefined(
                    i,
                    format!("undefined counter `{}`", i.name),
                    &[Kind::Counter],
                );
                None
            }
        }
    }

    /// The counter comparison `name cmp value`, interned.
    fn atom_ref(&mut self, name: &ast::Ident, cmp: Cmp, value: u64, at: Span) -> Option<Atom> {
        let c = self.counter_ref(name)?;
        if value > MAX_COUNTER {
            self.err(
                at,
                format!("{value} is over {MAX_COUNTER}, the largest counter value"),
            );
            return None;
        }
        Some(Atom {
            counter: c,
            cmp,
            value: value as u16,
        })
    }

    /// The valuations of the comparisons' variables that some counter values give:
    /// per counter, the union over its values of the comparisons they make true.
    fn atom_domain(&mut self) -> Bdd {
        let mut domain = Bdd::TRUE;
        for (ci, c) in self.counters.iter().enumerate() {
            let mine: Vec<(AtomId, Atom)> = self
                .atoms
                .iter()
                .enumerate()
                .filter(|(_, a)| a.counter.index() == ci)
                .map(|(k, a)| (AtomId::from_index(k), *a))
                .collect();
            if mine.is_empty() {
                continue;
            }
            let mut rows: Vec<Vec<bool>> = (0..=c.max)
                .map(|v| mine.iter().map(|(_, a)| a.holds(v)).collect())
                .collect();
            rows.sort_unstable();
            rows.dedup();
            let mut union = Bdd::FALSE;
            for row in rows {
                let mut cube = Bdd::TRUE;
                for ((id, _), &b) in mine.iter().zip(&row) {
                    let v = self.bdd.var(Atom::var(*id));
                    let lit = if b { v } else { self.bdd.not(v) };
                    cube = self.bdd.and(cube, lit);
                }
                union = self.bdd.or(union, cube);
            }
            domain = self.bdd.and(domain, union);
        }
        domain
    }

    fn state_ref(&mut self, i: &ast::Ident, what: &str) -> Option<StateId> {
        match self.places.get(&i.name) {
            Some((Place::State(s), _)) => Some(*s),
            Some((Place::Group(_), _)) => {
                let mut d = Diagnostic::name_error(
                    i.span,
                    format!("`{}` is a group; the {what} must be a state", i.name),
                );
                d.helps.push("name one of the group's states".into());
                self.errors.push(d);
                None
            }
            None => {
                self.undefined(i, format!("undefined state `{}`", i.name), &[Kind::State]);
                None
            }
        }
    }

    fn resolve_body(&mut self, body: &[Body], scope: Scope) -> (Vec<Op>, Vec<Op>, ScopeRules) {
        let mut enter = Vec::new();
        let mut leave = Vec::new();
        let mut named: FxMap<EventId, Vec<RuleId>> = FxMap::default();
        let mut preempt: FxMap<EventId, Vec<RuleId>> = FxMap::default();
        let mut wildcard = Vec::new();
        let mut timeouts: FxMap<u32, Vec<RuleId>> = FxMap::default();
        // The `else` rules seen so far: per event (`None`: among the `_` rules), where.
        let mut elses: FxMap<Option<EventId>, Span> = FxMap::default();
        for b in body {
            match b {
                Body::Enter(list, _) => {
                    let mut a = self.ops_ref(list);
                    enter.append(&mut a);
                }
                Body::Leave(list, _) => {
                    let mut a = self.ops_ref(list);
                    leave.append(&mut a);
                }
                Body::Rule(ast_rule) => {
                    if let Some(rule) = self.resolve_rule(ast_rule, scope) {
                        let id = RuleId::from_index(self.rules.len());
                        if let Some(at) = ast_rule.otherwise {
                            let keys: Vec<Option<EventId>> = match &rule.trigger {
                                Trigger::Events(evs) => evs.iter().map(|e| Some(*e)).collect(),
                                Trigger::Wildcard | Trigger::Tick => vec![None],
                                Trigger::After(_) => Vec::new(),
                            };
                            for k in keys {
                                if let Some(first) = elses.insert(k, at) {
                                    let what = match k {
                                        Some(e) => {
                                            format!("event `{}`", self.events[e.index()].name)
                                        }
                                        None if self.clocked => "the clock tick".to_string(),
                                        None => "the `_` rules".to_string(),
                                    };
                                    let mut d = Diagnostic::name_error(
                                        at,
                                        format!("a second `else` rule for {what} in this scope"),
                                    );
                                    d.related.push((first, "the first `else` rule".into()));
                                    d.helps.push(
                                        "keep one `else` per event and scope: it takes every \
                                         valuation the scope's other rules leave"
                                            .into(),
                                    );
                                    self.errors.push(d);
                                }
                            }
                        }
                        match &rule.trigger {
                            Trigger::Events(evs) => {
                                let list = if rule.preempt {
                                    &mut preempt
                                } else {
                                    &mut named
                                };
                                for e in evs {
                                    list.entry(*e).or_default().push(id);
                                }
                            }
                            Trigger::Wildcard | Trigger::Tick => wildcard.push(id),
                            Trigger::After(d) => timeouts.entry(*d).or_default().push(id),
                        }
                        self.rules.push(rule);
                    }
                }
            }
        }
        let sorted = |map: FxMap<EventId, Vec<RuleId>>| {
            let mut v: Vec<(EventId, Vec<RuleId>)> = map.into_iter().collect();
            v.sort_unstable_by_key(|(e, _)| *e);
            v
        };
        let mut timeouts: Vec<(u32, Vec<RuleId>)> = timeouts.into_iter().collect();
        timeouts.sort_unstable_by_key(|(d, _)| *d);
        let timer = (!timeouts.is_empty()).then(|| {
            let id = TimerId::from_index(self.timers.len());
            self.timers.push(Timer {
                scope,
                durations: timeouts.iter().map(|(d, _)| *d).collect(),
            });
            id
        });
        (
            enter,
            leave,
            ScopeRules {
                named: sorted(named),
                preempt: sorted(preempt),
                wildcard,
                timeouts,
                timer,
            },
        )
    }

    fn resolve_rule(&mut self, rule: &ast::RuleAst, scope: Scope) -> Option<Rule> {
        let before = self.errors.len();
        if let Some(at) = rule.preempt {
            if let Scope::State(_) = scope {
                let mut d = Diagnostic::name_error(
                    at,
                    "`preempt` in a state: only a group's rules can preempt its members' rules",
                );
                d.helps.push(
                    "move the rule into a group around the state, or drop `preempt` (a \
                     state's own rules already come before its groups' rules)"
                        .into(),
                );
                self.errors.push(d);
            }
            match &rule.trigger {
                Some(ast::Trigger::Wildcard(w)) => {
                    let mut d =
                        Diagnostic::name_error(*w, "`preempt _`: a preempt rule names its events");
                    d.helps.push(
                        "name the events the rule must take from every member \
                         (`preempt Stop | Fault => Idle;`)"
                            .into(),
                    );
                    self.errors.push(d);
                }
                None if self.clocked => {
                    let mut d = Diagnostic::name_error(
                        at,
                        "`preempt` in a clocked machine: a preempt rule names its events, \
                         and a clocked machine's rules have no trigger",
                    );
                    d.helps.push(
                        "in a clocked machine a group's rules apply on each tick; guard the \
                         members' rules instead"
                            .into(),
                    );
                    self.errors.push(d);
                }
                _ => {}
            }
            if let Some(e) = rule.otherwise {
                let mut d = Diagnostic::name_error(
                    e,
                    "`preempt ... else`: a preempt rule cannot be an `else` rule",
                );
                d.helps.push(
                    "give the preempt rule a guard (or none), and put the `else` rule among \
                     the members' rules"
                        .into(),
                );
                self.errors.push(d);
            }
        }
        let trigger = match (&rule.trigger, self.clocked) {
            _ if rule.after.is_some() => {
                let d = rule
                    .after
                    .as_ref()
                    .map(|d| self.duration_ticks(d, "a timeout"));
                match d {
                    Some(Some(ticks)) => Trigger::After(ticks),
                    _ => Trigger::Tick,
                }
            }
            (None, true) => Trigger::Tick,
            (None, false) => {
                self.err(
                    rule.span,
                    "this rule has no trigger; in an event-driven machine every rule names \
                     its events (or `_`)",
                );
                Trigger::Tick
            }
            (Some(t), true) => {
                let span = match t {
                    ast::Trigger::Events(e) => e[0].span,
                    ast::Trigger::Wildcard(s) => *s,
                };
                let mut d = Diagnostic::name_error(
                    span,
                    "a trigger in a clocked machine: a machine without an `events` line steps \
                     on every clock tick, and its rules have no trigger",
                );
                d.helps
                    .push("remove the trigger, or declare the machine's `events`".into());
                self.errors.push(d);
                Trigger::Tick
            }
            (Some(ast::Trigger::Wildcard(_)), false) => Trigger::Wildcard,
            (Some(ast::Trigger::Events(list)), false) => {
                let mut ids = Vec::new();
                for e in list {
                    match self.event_ids.get(&e.name) {
                        Some(&id) => {
                            if ids.contains(&id) {
                                self.err(
                                    e.span,
                                    format!("event `{}` is named twice in this trigger", e.name),
                                );
                            }
                            ids.push(id);
                        }
                        None if self.events_over_limit => {}
                        None => self.undefined(
                            e,
                            format!("undefined event `{}`", e.name),
                            &[Kind::Event],
                        ),
                    }
                }
                Trigger::Events(ids)
            }
        };
        let (guard_expr, guard) = match &rule.guard {
            None => (None, Bdd::TRUE),
            Some(e) => match self.guard(e) {
                Some((g, b)) => (Some(g), b),
                None => (None, Bdd::TRUE),
            },
        };
        let target = match &rule.target {
            ast::Target::Stay(_) => Target::Stay,
            ast::Target::State(t) => match self.state_ref(t, "target of a rule") {
                Some(s) => Target::To(s),
                None => Target::Stay,
            },
        };
        let mealy = self.outputs_ref(&rule.emit);
        let actions = self.ops_ref(&rule.actions);
        if self.errors.len() > before {
            return None;
        }
        Some(Rule {
            span: rule.span,
            guard_span: rule
                .guard
                .as_ref()
                .map(Expr::full_span)
                .or(rule.otherwise)
                .unwrap_or(rule.span),
            scope,
            preempt: rule.preempt.is_some(),
            otherwise: rule.otherwise.is_some(),
            trigger,
            guard_expr,
            guard,
            target,
            mealy,
            actions,
        })
    }

    /// The `timebase` declaration: its event (declared; the clock in a clocked machine)
    /// and its period (a time, at least 1 us).
    fn resolve_timebase(
        &mut self,
        event: Option<&ast::Ident>,
        period: Option<&ast::Duration>,
        span: Span,
    ) -> Option<Timebase> {
        let before = self.errors.len();
        let event = match (event, self.clocked) {
            (None, true) => Some(EventId(0)),
            (Some(e), true) if e.name == "Tick" => Some(EventId(0)),
            (Some(e), true) => {
                let mut d = Diagnostic::name_error(
                    e.span,
                    format!(
                        "`timebase {}`: a clocked machine's time base is its clock tick",
                        e.name
                    ),
                );
                d.helps.push(
                    "write `timebase 10 us;` (the period of one tick), or declare the \
                     machine's `events` to mark time with an event"
                        .into(),
                );
                self.errors.push(d);
                None
            }
            (None, false) => {
                let mut d = Diagnostic::name_error(
                    span,
                    "this time base names no event: an event-driven machine marks time with \
                     one of its events",
                );
                d.helps
                    .push("write `timebase Tick 1 ms;` with `Tick` in `events`".into());
                self.errors.push(d);
                None
            }
            (Some(e), false) => match self.event_ids.get(&e.name) {
                Some(&id) => Some(id),
                None if self.events_over_limit => None,
                None => {
                    self.undefined(
                        e,
                        format!("undefined event `{}` as the time base", e.name),
                        &[Kind::Event],
                    );
                    None
                }
            },
        };
        let period_us = match period {
            None => None,
            Some(p) => match p.unit.micros() {
                None => {
                    self.err(
                        p.span,
                        "the time base's period is a time (`1 ms`, `10 us`), not a number of ticks",
                    );
                    None
                }
                Some(unit) => match p.value.checked_mul(unit) {
                    Some(0) => {
                        self.err(p.span, "the time base's period must be longer than zero");
                        None
                    }
                    Some(us) => Some(us),
                    None => {
                        self.err(
                            p.span,
                            "this period does not fit in 64 bits of microseconds",
                        );
                        None
                    }
                },
            },
        };
        if self.errors.len() > before {
            return None;
        }
        Some(Timebase {
            event: event?,
            period_us,
            span,
        })
    }

    /// A duration in time-base ticks: at least one, at most [`MAX_DURATION_TICKS`], a
    /// whole number of periods. `None` (with an error) otherwise.
    // `u64::is_multiple_of` needs Rust 1.87; the workspace's MSRV is 1.85.
    #[allow(clippy::manual_is_multiple_of)]
    fn duration_ticks(&mut self, d: &ast::Duration, what: &str) -> Option<u32> {
        if !self.timebase_written {
            let mut e = Diagnostic::name_error(
                d.span,
                format!("{what} needs a time base, and this machine declares none"),
            );
            e.helps.push(if self.clocked {
                "declare the period of one clock tick: `timebase 1 ms;` (or `timebase;` and \
                 durations in `ticks`)"
                    .into()
            } else {
                "declare the event that marks time and its period: `timebase Tick 1 ms;`".into()
            });
            self.errors.push(e);
            return None;
        }
        let tb = self.timebase.clone()?;
        let ticks = match (d.unit.micros(), tb.period_us) {
            (None, _) => d.value,
            (Some(_), None) => {
                let mut e = Diagnostic::name_error(
                    d.span,
                    format!(
                        "`{} {}`: the time base has no period, so durations are in `ticks`",
                        d.value,
                        d.unit.keyword()
                    ),
                );
                e.helps.push(
                    "give the time base a period (`timebase Tick 1 ms;`) or write the \
                     duration in ticks"
                        .into(),
                );
                self.errors.push(e);
                return None;
            }
            (Some(unit), Some(period)) => {
                let Some(us) = d.value.checked_mul(unit) else {
                    self.err(
                        d.span,
                        "this duration does not fit in 64 bits of microseconds",
                    );
                    return None;
                };
                if us % period != 0 {
                    self.err(
                        d.span,
                        format!(
                            "`{} {}` is not a whole number of time-base periods ({})",
                            d.value,
                            d.unit.keyword(),
                            format_us(period)
                        ),
                    );
                    return None;
                }
                us / period
            }
        };
        if ticks == 0 {
            self.err(
                d.span,
                format!("{what} of zero: a duration is at least one time-base period"),
            );
            return None;
        }
        if ticks > MAX_DURATION_TICKS {
            self.err(
                d.span,
                format!(
                    "{what} of {ticks} ticks; the limit is {MAX_DURATION_TICKS} ticks (2^32 - 1)"
                ),
            );
            return None;
        }
        Some(ticks as u32)
    }

    fn guard(&mut self, e: &Expr) -> Option<(Guard, Bdd)> {
        Some(match e {
            Expr::Name(i) => match self.signals.get(&i.name) {
                Some((Signal::Input(id), _)) => {
                    let id = *id;
                    (Guard::Input(id), self.bdd.var(id.0))
                }
                Some((Signal::Counter(_), _)) => {
                    let mut d = Diagnostic::name_error(
                        i.span,
                        format!("`{}` is a counter: compare it with a number", i.name),
                    );
                    d.helps
                        .push(format!("write `{} > 0`, `{} == 3`, ...", i.name, i.name));
                    self.errors.push(d);
                    return None;
                }
                Some(_) => {
                    self.err(
                        i.span,
                        format!(
                            "`{}` is not an input; guards read inputs and counters only",
                            i.name
                        ),
                    );
                    return None;
                }
                // Past the input limit no input is declared: that one error is enough.
                None if self.inputs_over_limit => return None,
                None => {
                    self.undefined(i, format!("undefined input `{}`", i.name), &[Kind::Input]);
                    return None;
                }
            },
            Expr::In(i) => {
                self.err(i.span, "`in` is only allowed in properties");
                return None;
            }
            Expr::Compare {
                name,
                cmp,
                value,
                value_span,
            } => {
                let atom = self.atom_ref(name, *cmp, *value, *value_span)?;
                let id = match self.atom_ids.get(&atom) {
                    Some(&id) => id,
                    None => {
                        let id = AtomId::from_index(self.atoms.len());
                        self.atoms.push(atom);
                        self.atom_ids.insert(atom, id);
                        id
                    }
                };
                (Guard::Atom(id), self.bdd.var(Atom::var(id)))
            }
            Expr::Const(b, _) => (Guard::Const(*b), self.bdd.constant(*b)),
            Expr::Not(inner, _) => {
                let (g, b) = self.guard(inner)?;
                let nb = self.bdd.not(b);
                (Guard::Not(Box::new(g)), nb)
            }
            Expr::Paren(inner, _) => self.guard(inner)?,
            Expr::And(a, b) => {
                let ga = self.guard(a);
                let gb = self.guard(b);
                let ((ga, ba), (gb, bb)) = (ga?, gb?);
                let r = self.bdd.and(ba, bb);
                (Guard::And(Box::new(ga), Box::new(gb)), r)
            }
            Expr::Or(a, b) => {
                let ga = self.guard(a);
                let gb = self.guard(b);
                let ((ga, ba), (gb, bb)) = (ga?, gb?);
                let r = self.bdd.or(ba, bb);
                (Guard::Or(Box::new(ga), Box::new(gb)), r)
            }
        })
    }

    fn prop(&mut self, e: &Expr) -> Option<Prop> {
        Some(match e {
            Expr::Name(i) => match self.signals.get(&i.name) {
                Some((Signal::Input(x), _)) => Prop::Input(*x),
                Some((Signal::Output(x), _)) => Prop::Output(*x),
                Some((Signal::Action(x), _)) => Prop::Action(*x),
                Some((Signal::Counter(_), _)) => {
                    let mut d = Diagnostic::name_error(
                        i.span,
                        format!("`{}` is a counter: compare it with a number", i.name),
                    );
                    d.helps
                        .push(format!("write `{} >= 3`, `{} == 0`, ...", i.name, i.name));
                    self.errors.push(d);
                    return None;
                }
                None => match self.events.iter().position(|e| e.name == i.name) {
                    Some(e) => Prop::Event(EventId::from_index(e)),
                    None if self.inputs_over_limit => return None,
                    None => {
                        self.undefined(
                            i,
                            format!(
                                "undefined name `{}`: expected an event, input, output or action",
                                i.name
                            ),
                            &[Kind::Event, Kind::Input, Kind::Output, Kind::Action],
                        );
                        return None;
                    }
                },
            },
            Expr::In(i) => match self.places.get(&i.name) {
                Some((Place::State(s), _)) => Prop::InState(*s),
                Some((Place::Group(g), _)) => Prop::InGroup(*g),
                None => {
                    self.undefined(
                        i,
                        format!("undefined state or group `{}`", i.name),
                        &[Kind::State, Kind::Group],
                    );
                    return None;
                }
            },
            Expr::Compare {
                name,
                cmp,
                value,
                value_span,
            } => {
                let a = self.atom_ref(name, *cmp, *value, *value_span)?;
                Prop::Compare(a.counter, a.cmp, a.value)
            }
            Expr::Const(b, _) => Prop::Const(*b),
            Expr::Not(inner, _) => Prop::Not(Box::new(self.prop(inner)?)),
            Expr::Paren(inner, _) => self.prop(inner)?,
            Expr::And(a, b) => {
                let (a, b) = (self.prop(a), self.prop(b));
                Prop::And(Box::new(a?), Box::new(b?))
            }
            Expr::Or(a, b) => {
                let (a, b) = (self.prop(a), self.prop(b));
                Prop::Or(Box::new(a?), Box::new(b?))
            }
        })
    }
}

/// A period in the largest unit that states it exactly (`1 ms`, `250 us`).
// `u64::is_multiple_of` needs Rust 1.87; the workspace's MSRV is 1.85.
#[allow(clippy::manual_is_multiple_of)]
pub fn format_us(us: u64) -> String {
    if us % 1_000_000 == 0 {
        format!("{} s", us / 1_000_000)
    } else if us % 1_000 == 0 {
        format!("{} ms", us / 1_000)
    } else {
        format!("{us} us")
    }
}

fn target_name(states: &[State], s: StateId) -> &str {
    &states[s.index()].name
}
