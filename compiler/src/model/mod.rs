//! The resolved machine: names turned into dense ids, groups flattened, guards as BDDs.
//!
//! [`resolve`] turns a [`MachineAst`] into a [`Machine`] or reports name errors, and
//! ends by building the machine's lowered form ([`lower`]): the one definition of which
//! rule fires, which every later stage (interpreter, checker, minimizer, back ends)
//! reads.
//!
//! Numbering is declaration order everywhere: states in the order their `state`
//! keywords appear (inside groups too), events, inputs, outputs and actions in the
//! order of their lists. These are the numbers every back end uses.

pub mod bdd;
pub mod graph;
pub mod lower;
mod resolve;
pub mod steps;

pub use bdd::{Bdd, BddStore};
pub use resolve::{
    bdd_overflow_message, format_us, resolve, resolve_each, resolve_file, MAX_DURATION_TICKS,
    MAX_EVENTS, MAX_INPUTS, MAX_STATES,
};

use crate::diag::Lint;
pub use crate::syntax::ast::{Cmp, CounterOpKind};
use crate::syntax::ast::{DispatchStyle, LevelAttr, Policy, Vis};
use proc_macro2::Span;

macro_rules! id_type {
    ($(#[$doc:meta])* $name:ident) => {
        $(#[$doc])*
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
        pub struct $name(pub u32);

        impl $name {
            /// The id as an index into the machine's tables.
            pub fn index(self) -> usize {
                self.0 as usize
            }

            /// The id of the `i`th item.
            pub fn from_index(i: usize) -> Self {
                $name(i as u32)
            }
        }
    };
}

id_type!(
    /// A state, numbered in declaration order.
    StateId
);
id_type!(
    /// An event, numbered in declaration order (`Tick` is 0 in a clocked machine).
    EventId
);
id_type!(
    /// An input, numbered in declaration order; also its BDD variable.
    InputId
);
id_type!(
    /// An output line, numbered in declaration order.
    OutputId
);
id_type!(
    /// An action hook, numbered in declaration order.
    ActionId
);
id_type!(
    /// A group, numbered in declaration order.
    GroupId
);
id_type!(
    /// A rule, numbered in source order.
    RuleId
);
id_type!(
    /// A scope's timer (a state or group with `after` rules), numbered in source order
    /// of the scopes.
    TimerId
);

id_type!(
    /// A counter, numbered in declaration order.
    CounterId
);
id_type!(
    /// A comparison of a counter with a constant that some guard makes (an atom of the
    /// guards), numbered in order of first use; its BDD variable is
    /// [`ATOM_VAR_BASE`] plus its number.
    AtomId
);

/// The BDD variable of the first counter comparison: inputs are variables
/// `0..MAX_INPUTS`, comparisons come after them in the order.
pub const ATOM_VAR_BASE: u32 = resolve::MAX_INPUTS as u32;

/// A bounded counter (`counters strikes to 3;`): `0..=max`, starting at 0.
#[derive(Clone, Debug)]
pub struct Counter {
    /// The name.
    pub name: String,
    /// Where it is declared.
    pub span: Span,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// The largest value.
    pub max: u16,
}

/// A counter compared with a constant, as a guard reads it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Atom {
    /// The counter.
    pub counter: CounterId,
    /// The comparison.
    pub cmp: Cmp,
    /// The constant.
    pub value: u16,
}

impl Atom {
    /// Does the comparison hold when the counter is `v`?
    pub fn holds(&self, v: u16) -> bool {
        self.cmp.holds(u64::from(v), u64::from(self.value))
    }

    /// The atom's BDD variable.
    pub fn var(id: AtomId) -> u32 {
        ATOM_VAR_BASE + id.0
    }
}

/// A counter operation: `strikes += 1`, `strikes -= 1`, `strikes = 0`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct CounterOp {
    /// The counter.
    pub counter: CounterId,
    /// The operation.
    pub kind: CounterOpKind,
    /// The constant.
    pub value: u16,
}

impl CounterOp {
    /// The counter's value after the operation, from `v`, kept in `0..=max` (an
    /// operation that would leave the range stops at its end, the generated code's
    /// saturating behaviour), and whether it would have left the range.
    pub fn apply(&self, v: u16, max: u16) -> (u16, bool) {
        match self.kind {
            CounterOpKind::Add => {
                let x = u32::from(v) + u32::from(self.value);
                if x > u32::from(max) {
                    (max, true)
                } else {
                    (x as u16, false)
                }
            }
            CounterOpKind::Sub => match v.checked_sub(self.value) {
                Some(x) => (x, false),
                None => (0, true),
            },
            CounterOpKind::Set => {
                if self.value > max {
                    (max, true)
                } else {
                    (self.value, false)
                }
            }
        }
    }
}

/// One operation of a transition's sequence, run in order.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Op {
    /// Call an action hook.
    Action(ActionId),
    /// Change a counter.
    Counter(CounterOp),
}

impl Op {
    /// The action, when the operation is one.
    pub fn action(&self) -> Option<ActionId> {
        match self {
            Op::Action(a) => Some(*a),
            Op::Counter(_) => None,
        }
    }
}

/// The actions of an operation list, in order.
pub fn actions_of(ops: &[Op]) -> impl Iterator<Item = ActionId> + '_ {
    ops.iter().filter_map(Op::action)
}

/// The time base: the event that marks time, and what one such event stands for.
#[derive(Clone, Debug)]
pub struct Timebase {
    /// The event (`Tick`, the clock, in a clocked machine).
    pub event: EventId,
    /// The period in microseconds, when the spec gives one.
    pub period_us: Option<u64>,
    /// Where `timebase` is written.
    pub span: Span,
}

/// The timer of one scope: counts time-base events from the scope's entry, saturating
/// at its largest duration (LANGUAGE.md, "Time and counts").
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Timer {
    /// The state or group whose `after` rules read it.
    pub scope: Scope,
    /// The distinct durations of its `after` rules, in ticks, ascending.
    pub durations: Vec<u32>,
}

impl Timer {
    /// The value it saturates at: its largest duration.
    pub fn max(&self) -> u32 {
        self.durations.last().copied().unwrap_or(0)
    }
}

/// A declared name (event, input, output or action).
#[derive(Clone, Debug)]
pub struct Item {
    /// The name.
    pub name: String,
    /// Where it is declared.
    pub span: Span,
    /// Its doc comment lines.
    pub doc: Vec<String>,
}

/// Lint level attributes on one node (machine, group or state), in source order.
pub type LintLevels = Vec<(Lint, LevelAttr)>;

/// Where a rule is written: a state's body or a group's.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Scope {
    /// A state's own rules.
    State(StateId),
    /// A group's rules, inherited by every member.
    Group(GroupId),
}

/// The rules of one scope, indexed by the event they name.
#[derive(Clone, Debug, Default)]
pub struct ScopeRules {
    /// Rules naming each event, sorted by event id (`preempt` rules are apart).
    pub named: Vec<(EventId, Vec<RuleId>)>,
    /// `preempt` rules naming each event, sorted by event id (groups only).
    pub preempt: Vec<(EventId, Vec<RuleId>)>,
    /// `_` rules (and, in a clocked machine, every rule but timeouts).
    pub wildcard: Vec<RuleId>,
    /// `after` rules by duration in ticks, ascending.
    pub timeouts: Vec<(u32, Vec<RuleId>)>,
    /// The scope's timer, when it has `after` rules.
    pub timer: Option<TimerId>,
}

/// A state.
#[derive(Clone, Debug)]
pub struct State {
    /// The name.
    pub name: String,
    /// Where the name is written.
    pub span: Span,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// Marked `terminal`.
    pub terminal: bool,
    /// The innermost enclosing group.
    pub parent: Option<GroupId>,
    /// Moore outputs written on the state itself.
    pub emit: Vec<OutputId>,
    /// All Moore outputs: the state's and every enclosing group's, ascending.
    pub moore: Vec<OutputId>,
    /// `enter do` actions and counter operations, in order.
    pub enter: Vec<Op>,
    /// `leave do` actions and counter operations, in order.
    pub leave: Vec<Op>,
    /// The state's own rules.
    pub rules: ScopeRules,
    /// Lint attributes on the state.
    pub lints: LintLevels,
}

/// A group of states.
#[derive(Clone, Debug)]
pub struct Group {
    /// The name.
    pub name: String,
    /// Where the name is written.
    pub span: Span,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// The enclosing group.
    pub parent: Option<GroupId>,
    /// Moore outputs shared by every member.
    pub emit: Vec<OutputId>,
    /// `enter do` actions and counter operations.
    pub enter: Vec<Op>,
    /// `leave do` actions and counter operations.
    pub leave: Vec<Op>,
    /// The group's rules.
    pub rules: ScopeRules,
    /// Every state inside the group, nested groups included, ascending.
    pub states: Vec<StateId>,
    /// Lint attributes on the group.
    pub lints: LintLevels,
}

/// A guard over inputs, kept in the author's shape for code generation; its exact
/// meaning is the rule's [`Rule::guard`] BDD.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub enum Guard {
    /// An input's value.
    Input(InputId),
    /// A constant.
    Const(bool),
    /// Negation.
    Not(Box<Guard>),
    /// Conjunction.
    And(Box<Guard>, Box<Guard>),
    /// Disjunction.
    Or(Box<Guard>, Box<Guard>),
    /// A counter compared with a constant ([`Machine::atoms`]), read as the counter was
    /// at the start of the step.
    Atom(AtomId),
}

impl Guard {
    /// Evaluates the guard under a valuation of the inputs, every counter comparison
    /// false (see [`Guard::eval_with`]).
    pub fn eval(&self, inputs: &dyn Fn(InputId) -> bool) -> bool {
        self.eval_with(inputs, &|_| false)
    }

    /// Evaluates the guard under a valuation of the inputs and of the counter
    /// comparisons.
    pub fn eval_with(
        &self,
        inputs: &dyn Fn(InputId) -> bool,
        atoms: &dyn Fn(AtomId) -> bool,
    ) -> bool {
        match self {
            Guard::Atom(a) => atoms(*a),
            Guard::Not(g) => !g.eval_with(inputs, atoms),
            Guard::And(a, b) => a.eval_with(inputs, atoms) && b.eval_with(inputs, atoms),
            Guard::Or(a, b) => a.eval_with(inputs, atoms) || b.eval_with(inputs, atoms),
            Guard::Input(i) => inputs(*i),
            Guard::Const(b) => *b,
        }
    }

    /// The counter comparisons the guard reads, ascending, without duplicates.
    pub fn atoms(&self) -> Vec<AtomId> {
        fn go(g: &Guard, out: &mut Vec<AtomId>) {
            match g {
                Guard::Atom(a) => out.push(*a),
                Guard::Not(x) => go(x, out),
                Guard::And(a, b) | Guard::Or(a, b) => {
                    go(a, out);
                    go(b, out);
                }
                Guard::Input(_) | Guard::Const(_) => {}
            }
        }
        let mut out = Vec::new();
        go(self, &mut out);
        out.sort_unstable();
        out.dedup();
        out
    }
}

/// Where a rule goes.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Target {
    /// Internal transition: no state change, no enter/leave actions.
    Stay,
    /// To a state (possibly the current one: an external self-transition).
    To(StateId),
}

/// What fires a rule.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Trigger {
    /// The named events.
    Events(Vec<EventId>),
    /// `_`: every event the scope names nowhere else.
    Wildcard,
    /// The clock of a clocked machine (no trigger written).
    Tick,
    /// `after D`: the time-base event that brings the scope's timer to `D` ticks.
    After(u32),
}

/// A rule.
#[derive(Clone, Debug)]
pub struct Rule {
    /// Where the rule starts.
    pub span: Span,
    /// Where its guard is written (the rule's span when it has none).
    pub guard_span: Span,
    /// The state or group whose body holds it.
    pub scope: Scope,
    /// `preempt`: considered before any rule of the group's members.
    pub preempt: bool,
    /// `else`: fires for every valuation the scope's other rules for its events leave
    /// (its `guard` is `TRUE`; the lowering places it last).
    pub otherwise: bool,
    /// What fires it.
    pub trigger: Trigger,
    /// The guard as written (`None`: always true).
    pub guard_expr: Option<Guard>,
    /// The guard's meaning.
    pub guard: Bdd,
    /// Where it goes.
    pub target: Target,
    /// Mealy outputs of the rule, ascending.
    pub mealy: Vec<OutputId>,
    /// The rule's own actions and counter operations, in written order.
    pub actions: Vec<Op>,
}

impl Rule {
    /// The timer of the scope that holds the rule (for `after` rules).
    pub fn scope_timer(&self, m: &Machine) -> Option<TimerId> {
        m.scope_rules(self.scope).timer
    }
}

/// A property expression (`never P`).
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Prop {
    /// An input's value in the step.
    Input(InputId),
    /// An output is high after the step.
    Output(OutputId),
    /// An action ran in the step.
    Action(ActionId),
    /// The step consumed this event (false at step 0).
    Event(EventId),
    /// The state after the step is this one.
    InState(StateId),
    /// The state after the step is inside this group.
    InGroup(GroupId),
    /// A counter after the step compared with a constant.
    Compare(CounterId, Cmp, u16),
    /// A constant.
    Const(bool),
    /// Negation.
    Not(Box<Prop>),
    /// Conjunction.
    And(Box<Prop>, Box<Prop>),
    /// Disjunction.
    Or(Box<Prop>, Box<Prop>),
}

/// A declared property.
#[derive(Clone, Debug)]
pub enum Property {
    /// `never P;`
    Never {
        /// The condition that must never hold.
        prop: Prop,
        /// The declaration's span.
        span: Span,
        /// The property as written, for messages.
        text: String,
    },
    /// `ensure R within SPAN after T;`
    Ensure {
        /// What must become true.
        response: Prop,
        /// The span.
        within: Deadline,
        /// What starts the obligation.
        trigger: Prop,
        /// The declaration's span.
        span: Span,
        /// The property as written, for messages.
        text: String,
    },
    /// `recover to S except T, U;`
    Recover {
        /// The state that must stay reachable.
        target: StateId,
        /// Exempted states.
        except: Vec<StateId>,
        /// The declaration's span.
        span: Span,
        /// The property as written, for messages.
        text: String,
    },
}

/// The span of an `ensure` deadline, resolved.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Deadline {
    /// Time-base events (a duration, in ticks).
    Ticks(u32),
    /// Steps of any event.
    Steps(u32),
}

/// A resolved machine.
#[derive(Clone, Debug)]
pub struct Machine {
    /// The machine's name (UpperCamelCase).
    pub name: String,
    /// Where the name is written.
    pub span: Span,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// Visibility of the generated module.
    pub vis: Vis,
    /// No `events` line: one implicit `Tick` event.
    pub clocked: bool,
    /// Events (just `Tick` when clocked).
    pub events: Vec<Item>,
    /// Inputs.
    pub inputs: Vec<Item>,
    /// Outputs.
    pub outputs: Vec<Item>,
    /// Actions.
    pub actions: Vec<Item>,
    /// States, in declaration order.
    pub states: Vec<State>,
    /// Groups, in declaration order.
    pub groups: Vec<Group>,
    /// Rules, in source order.
    pub rules: Vec<Rule>,
    /// The start state.
    pub start: StateId,
    /// What happens on uncovered (state, event, valuation).
    pub policy: Policy,
    /// Where `unhandled` is written, if it is.
    pub policy_span: Option<Span>,
    /// The Rust back end's dispatch style.
    pub dispatch: DispatchStyle,
    /// `#[minimize]`.
    pub minimize: bool,
    /// Declared properties.
    pub properties: Vec<Property>,
    /// Lint attributes on the machine.
    pub lints: LintLevels,
    /// The time base, when declared.
    pub timebase: Option<Timebase>,
    /// The timers of the scopes with `after` rules.
    pub timers: Vec<Timer>,
    /// The counters, in declaration order.
    pub counters: Vec<Counter>,
    /// The counter comparisons the guards make (each once).
    pub atoms: Vec<Atom>,
    /// The valuations of the comparisons' BDD variables that some counter values give
    /// (`TRUE` without comparisons): what "every valuation of inputs and counters"
    /// ranges over.
    pub atom_domain: Bdd,
    /// The node table of every guard (and of the lowered form's regions).
    pub bdd: BddStore,
    /// The lowered transition table: the one definition of which rule fires
    /// ([`lower`]).
    pub lowered: lower::Lowered,
}

/// A node in the scope tree, for lint-level lookup.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Site {
    /// The whole machine.
    Machine,
    /// A state (and, outward, its groups and the machine).
    State(StateId),
    /// A group (and, outward, its parents and the machine).
    Group(GroupId),
}

impl Machine {
    /// Builds the lowered form into a machine fresh from resolution. The decision-diagram
    /// limit is an error here (with the message the checker gave before), so no later
    /// stage ever answers from a store that overflowed.
    pub fn lowered_or_error(mut self) -> Result<Machine, Vec<crate::diag::Diagnostic>> {
        let mut bdd = std::mem::take(&mut self.bdd);
        match lower::lower(&self, &mut bdd) {
            Ok(lowered) => {
                self.bdd = bdd;
                self.lowered = lowered;
                Ok(self)
            }
            Err(lower::LowerError::TooManyNodes) => Err(vec![crate::diag::Diagnostic::name_error(
                self.span,
                bdd_overflow_message(&self.name, "the firing regions of this machine's rules"),
            )]),
            Err(lower::LowerError::TooManyVariants(s)) => {
                Err(vec![crate::diag::Diagnostic::name_error(
                    self.states[s.index()].span,
                    format!(
                        "state `{}`: its timers have more than {} combinations of due \
                         timeouts (the limit); give its scopes fewer distinct durations",
                        self.states[s.index()].name,
                        lower::MAX_VARIANTS
                    ),
                )])
            }
        }
    }

    /// Looks a state up by name.
    pub fn state_id(&self, name: &str) -> Option<StateId> {
        self.states
            .iter()
            .position(|s| s.name == name)
            .map(StateId::from_index)
    }

    /// Looks an event up by name.
    pub fn event_id(&self, name: &str) -> Option<EventId> {
        self.events
            .iter()
            .position(|s| s.name == name)
            .map(EventId::from_index)
    }

    /// Looks an input up by name.
    pub fn input_id(&self, name: &str) -> Option<InputId> {
        self.inputs
            .iter()
            .position(|s| s.name == name)
            .map(InputId::from_index)
    }

    /// The state's name.
    pub fn state_name(&self, s: StateId) -> &str {
        &self.states[s.index()].name
    }

    /// The event's name.
    pub fn event_name(&self, e: EventId) -> &str {
        &self.events[e.index()].name
    }

    /// The enclosing groups of a state, innermost first.
    pub fn ancestors(&self, s: StateId) -> Vec<GroupId> {
        let mut out = Vec::new();
        let mut g = self.states[s.index()].parent;
        while let Some(id) = g {
            out.push(id);
            g = self.groups[id.index()].parent;
        }
        out
    }

    /// The scopes searched for a state's rules, innermost first.
    pub fn scope_chain(&self, s: StateId) -> Vec<Scope> {
        let mut chain = vec![Scope::State(s)];
        chain.extend(self.ancestors(s).into_iter().map(Scope::Group));
        chain
    }

    /// The rules of one scope.
    pub fn scope_rules(&self, scope: Scope) -> &ScopeRules {
        match scope {
            Scope::State(s) => &self.states[s.index()].rules,
            Scope::Group(g) => &self.groups[g.index()].rules,
        }
    }

    /// Is the state inside the group (at any depth)?
    pub fn group_contains(&self, g: GroupId, s: StateId) -> bool {
        self.groups[g.index()].states.binary_search(&s).is_ok()
    }

    /// The level a lint has at a site: the innermost `allow`/`warn`/`deny` attribute
    /// that names it (state, then its groups outward, then the machine), if any.
    pub fn lint_attr(&self, lint: Lint, site: Site) -> Option<LevelAttr> {
        let find = |levels: &LintLevels| {
            levels
                .iter()
                .rev()
                .find(|(l, _)| *l == lint)
                .map(|(_, lvl)| *lvl)
        };
        let mut group = match site {
            Site::Machine => None,
            Site::State(s) => {
                let st = &self.states[s.index()];
                if let Some(l) = find(&st.lints) {
                    return Some(l);
                }
                st.parent
            }
            Site::Group(g) => Some(g),
        };
        while let Some(g) = group {
            let gr = &self.groups[g.index()];
            if let Some(l) = find(&gr.lints) {
                return Some(l);
            }
            group = gr.parent;
        }
        find(&self.lints)
    }

    /// The site a rule's diagnostics belong to.
    pub fn rule_site(&self, rule: RuleId) -> Site {
        match self.rules[rule.index()].scope {
            Scope::State(s) => Site::State(s),
            Scope::Group(g) => Site::Group(g),
        }
    }

    /// The timers of a state's active scopes (the state, then its groups outward).
    pub fn chain_timers(&self, s: StateId) -> Vec<TimerId> {
        self.scope_chain(s)
            .into_iter()
            .filter_map(|sc| self.scope_rules(sc).timer)
            .collect()
    }

    /// A duration of `ticks` time-base events as the spec would write it: in the largest
    /// time unit that states it exactly when the time base has a period (`20 ms`),
    /// else in ticks (`20 ticks`).
    pub fn duration_text(&self, ticks: u32) -> String {
        match self.timebase.as_ref().and_then(|t| t.period_us) {
            Some(p) => resolve::format_us(u64::from(ticks) * p),
            None => format!("{ticks} ticks"),
        }
    }

    /// True when the machine has timeout rules.
    pub fn has_timers(&self) -> bool {
        !self.timers.is_empty()
    }

    /// True when the machine has counters.
    pub fn has_counters(&self) -> bool {
        !self.counters.is_empty()
    }

    /// True when a state alone does not say what the machine does next (timers or
    /// counters): analyses then run over configurations ([`crate::configs`]).
    pub fn has_configs(&self) -> bool {
        self.has_timers() || self.has_counters()
    }

    /// The input ids a BDD depends on (counter comparisons left out).
    pub fn guard_inputs(&self, guard: Bdd) -> Vec<InputId> {
        self.bdd
            .support(guard)
            .into_iter()
            .filter(|&v| v < ATOM_VAR_BASE)
            .map(InputId)
            .collect()
    }

    /// The value of each counter comparison for the given counter values.
    pub fn atom_values(&self, counters: &[u16]) -> Vec<bool> {
        self.atoms
            .iter()
            .map(|a| a.holds(counters.get(a.counter.index()).copied().unwrap_or(0)))
            .collect()
    }

    /// The counter comparison a BDD variable stands for, if it stands for one.
    pub fn atom_of_var(&self, var: u32) -> Option<AtomId> {
        var.checked_sub(ATOM_VAR_BASE)
            .filter(|&k| (k as usize) < self.atoms.len())
            .map(AtomId)
    }

    /// An operation as written: `beep`, `strikes += 1`.
    pub fn op_text(&self, op: &Op) -> String {
        match op {
            Op::Action(a) => self.actions[a.index()].name.clone(),
            Op::Counter(c) => format!(
                "{} {} {}",
                self.counters[c.counter.index()].name,
                c.kind.symbol(),
                c.value
            ),
        }
    }

    /// A `do` list as written: `beep, strikes += 1`.
    pub fn ops_text(&self, ops: &[Op]) -> String {
        ops.iter()
            .map(|op| self.op_text(op))
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// A counter comparison as written: `strikes < 3`.
    pub fn atom_text(&self, a: AtomId) -> String {
        let atom = &self.atoms[a.index()];
        format!(
            "{} {} {}",
            self.counters[atom.counter.index()].name,
            atom.cmp.symbol(),
            atom.value
        )
    }
}
