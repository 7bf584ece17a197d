//! Diagnostics: what every stage reports about a spec, with spans and witnesses.
//!
//! A [`Diagnostic`] is plain data; [`crate::check::render`] prints it in rustc's shape
//! (text), [`crate::report::check`] as the JSON of DESIGN.md and
//! [`crate::report::sarif`] as SARIF; the macro turns it into a compile error or warning
//! at its span.

use proc_macro2::Span;

/// The kinds of finding, each with the name users write in `#[allow(..)]` and on the
/// command line.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Lint {
    /// A parse error. Always an error.
    Syntax,
    /// A name error: undefined or duplicate names, a group used as a target, a trigger in
    /// a clocked machine, a missing `start`, a limit exceeded. Always an error.
    Name,
    /// An uncovered (state, event, valuation) under `unhandled complete`.
    Incomplete,
    /// Two rules of one scope can both fire.
    OverlappingRules,
    /// A state no path from the start reaches.
    UnreachableState,
    /// A non-terminal state, or a closed set of them, with no way out.
    DeadEnd,
    /// A guard no valuation satisfies.
    NeverTrueGuard,
    /// An event, input, output or action never used.
    UnusedDeclaration,
    /// States that minimization would merge.
    EquivalentStates,
    /// A name against the case convention.
    Naming,
    /// A `never` or `recover to` declaration is violated.
    Property,
    /// A rule in a reachable scope that fires in no reachable state.
    DeadRule,
    /// One step can run the same action twice.
    RepeatedAction,
    /// A counter operation can take a counter outside its range.
    CounterRange,
}

impl Lint {
    /// Every lint, in a fixed order.
    pub const ALL: [Lint; 14] = [
        Lint::Syntax,
        Lint::Name,
        Lint::Incomplete,
        Lint::OverlappingRules,
        Lint::UnreachableState,
        Lint::DeadEnd,
        Lint::NeverTrueGuard,
        Lint::UnusedDeclaration,
        Lint::EquivalentStates,
        Lint::Naming,
        Lint::Property,
        Lint::DeadRule,
        Lint::RepeatedAction,
        Lint::CounterRange,
    ];

    /// The lint's name as users write it.
    pub fn name(self) -> &'static str {
        match self {
            Lint::Syntax => "syntax",
            Lint::Name => "name",
            Lint::Incomplete => "incomplete",
            Lint::OverlappingRules => "overlapping_rules",
            Lint::UnreachableState => "unreachable_state",
            Lint::DeadEnd => "dead_end",
            Lint::NeverTrueGuard => "never_true_guard",
            Lint::UnusedDeclaration => "unused_declaration",
            Lint::EquivalentStates => "equivalent_states",
            Lint::Naming => "naming",
            Lint::Property => "property",
            Lint::DeadRule => "dead_rule",
            Lint::RepeatedAction => "repeated_action",
            Lint::CounterRange => "counter_range",
        }
    }

    /// Looks a lint up by name.
    pub fn from_name(name: &str) -> Option<Lint> {
        Lint::ALL.into_iter().find(|l| l.name() == name)
    }

    /// The level a lint has when nothing changes it.
    pub fn default_severity(self) -> Severity {
        match self {
            Lint::Syntax
            | Lint::Name
            | Lint::Incomplete
            | Lint::OverlappingRules
            | Lint::Property
            | Lint::CounterRange => Severity::Error,
            _ => Severity::Warning,
        }
    }

    /// Hard errors cannot be allowed or lowered to warnings: the machine they describe
    /// has no defined meaning (or the property the author asked for is false).
    pub fn is_hard_error(self) -> bool {
        self.default_severity() == Severity::Error
    }

    /// One line saying what the lint is about, for `--help` texts and SARIF rules.
    pub fn summary(self) -> &'static str {
        match self {
            Lint::Syntax => "The spec does not parse.",
            Lint::Name => "A name is undefined, duplicated, misused, or a limit is exceeded.",
            Lint::Incomplete => {
                "Some (state, event, input valuation) has no rule under `unhandled complete`."
            }
            Lint::OverlappingRules => "Two rules of one scope can both fire for the same event.",
            Lint::UnreachableState => "No path from the start state reaches this state.",
            Lint::DeadEnd => "A non-terminal state, or a closed set of states, has no way out.",
            Lint::NeverTrueGuard => "A guard that no input valuation satisfies.",
            Lint::UnusedDeclaration => "An event, input, output or action that nothing uses.",
            Lint::EquivalentStates => "States with the same behaviour that minimization merges.",
            Lint::Naming => {
                "A name against the convention (UpperCamelCase for machines, states, groups and \
                 events; snake_case for inputs, outputs and actions)."
            }
            Lint::Property => "A `never`, `recover to` or `ensure` declaration is violated.",
            Lint::DeadRule => "A rule that fires in no reachable state.",
            Lint::RepeatedAction => "One step can run the same action twice.",
            Lint::CounterRange => {
                "A counter operation can take a counter outside `0..=N` in a reachable \
                 configuration."
            }
        }
    }
}

/// How bad a finding is, after lint levels are applied.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Severity {
    /// Fails the check.
    Error,
    /// Reported; fails only under `--deny warnings`.
    Warning,
}

impl Severity {
    /// `error` or `warning`.
    pub fn name(self) -> &'static str {
        match self {
            Severity::Error => "error",
            Severity::Warning => "warning",
        }
    }
}

/// One step of a counterexample trace: an event and the input values of the step.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TraceStep {
    /// The event name (`Tick` for clocked machines).
    pub event: String,
    /// Values of every input, in declaration order.
    pub inputs: Vec<(String, bool)>,
}

/// A finding about a spec.
#[derive(Clone, Debug)]
pub struct Diagnostic {
    /// Which lint.
    pub lint: Lint,
    /// Its level after attributes and flags.
    pub severity: Severity,
    /// The headline, without the `error[lint]:` prefix.
    pub message: String,
    /// Where; `None` only for findings about a whole file.
    pub span: Option<Span>,
    /// The state it is about, when one.
    pub state: Option<String>,
    /// The event it is about, when one.
    pub event: Option<String>,
    /// Every state it is about (one for most lints, a class for `equivalent_states`).
    pub states: Vec<String>,
    /// An input valuation that shows the problem.
    pub witness: Option<Vec<(String, bool)>>,
    /// A trace from the start that shows the problem (`property`).
    pub trace: Option<Vec<TraceStep>>,
    /// Secondary locations with a label ("the other rule is here").
    pub related: Vec<(Span, String)>,
    /// `= note:` lines.
    pub notes: Vec<String>,
    /// `= help:` lines.
    pub helps: Vec<String>,
}

impl Diagnostic {
    /// A new diagnostic at the lint's default level.
    pub fn new(lint: Lint, span: Option<Span>, message: impl Into<String>) -> Self {
        Diagnostic {
            lint,
            severity: lint.default_severity(),
            message: message.into(),
            span,
            state: None,
            event: None,
            states: Vec::new(),
            witness: None,
            trace: None,
            related: Vec::new(),
            notes: Vec::new(),
            helps: Vec::new(),
        }
    }

    /// An error of lint [`Lint::Name`].
    pub fn name_error(span: Span, message: impl Into<String>) -> Self {
        Diagnostic::new(Lint::Name, Some(span), message)
    }

    /// Sets the state the finding is about (and lists it in `states`).
    pub fn with_state(mut self, state: &str) -> Self {
        self.state = Some(state.to_string());
        if !self.states.iter().any(|s| s == state) {
            self.states.push(state.to_string());
        }
        self
    }

    /// Sets the event.
    pub fn with_event(mut self, event: &str) -> Self {
        self.event = Some(event.to_string());
        self
    }

    /// Adds a note line.
    pub fn note(mut self, note: impl Into<String>) -> Self {
        self.notes.push(note.into());
        self
    }

    /// Adds a help line.
    pub fn help(mut self, help: impl Into<String>) -> Self {
        self.helps.push(help.into());
        self
    }

    /// True for errors.
    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }
}
