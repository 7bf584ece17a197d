//! The syntax tree of the machine spec language, exactly as written.
//!
//! Nothing here is resolved: names are strings with spans. [`crate::model`] turns an
//! AST into a [`crate::model::Machine`] with dense ids.

use proc_macro2::Span;

/// A name as written, with where it was written.
#[derive(Clone, Debug)]
pub struct Ident {
    /// The identifier text.
    pub name: String,
    /// Where it appears.
    pub span: Span,
}

impl PartialEq for Ident {
    fn eq(&self, other: &Self) -> bool {
        self.name == other.name
    }
}

/// A whole spec file or macro input: zero or more machines.
#[derive(Clone, Debug, Default)]
pub struct File {
    /// The machines, in source order.
    pub machines: Vec<MachineAst>,
}

/// Visibility of the generated module.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Vis {
    /// No visibility keyword: a private module.
    #[default]
    Private,
    /// `pub`.
    Pub,
    /// `pub(crate)`.
    PubCrate,
}

/// The Rust back end's dispatch style.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum DispatchStyle {
    /// `static` tables indexed by state and event (the default).
    #[default]
    Table,
    /// Nested `match` expressions.
    Match,
}

/// A lint level attribute: `allow`, `warn` or `deny`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LevelAttr {
    /// `#[allow(..)]`: silence.
    Allow,
    /// `#[warn(..)]`: report as a warning.
    Warn,
    /// `#[deny(..)]`: report as an error.
    Deny,
}

/// An attribute on a machine, group or state.
#[derive(Clone, Debug)]
pub enum Attr {
    /// `#[dispatch(table)]` or `#[dispatch(match)]`.
    Dispatch(DispatchStyle, Span),
    /// `#[allow(a, b)]`, `#[warn(..)]`, `#[deny(..)]`.
    Lint(LevelAttr, Vec<Ident>, Span),
    /// `#[minimize]`.
    Minimize(Span),
}

/// What `unhandled` says about uncovered (state, event, valuation) triples.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Policy {
    /// Uncovered triples are errors (the default).
    #[default]
    Complete,
    /// Uncovered events do nothing.
    Ignore,
    /// Uncovered events do nothing and are reported to the caller.
    Reject,
}

impl Policy {
    /// The keyword as written in a spec.
    pub fn keyword(self) -> &'static str {
        match self {
            Policy::Complete => "complete",
            Policy::Ignore => "ignore",
            Policy::Reject => "reject",
        }
    }
}

/// A list entry with its doc comment (`/// doc` before the name).
#[derive(Clone, Debug)]
pub struct DocIdent {
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// The name.
    pub ident: Ident,
}

/// A declaration at the top of a machine.
#[derive(Clone, Debug)]
pub enum DeclKind {
    /// `events A, B;`
    Events(Vec<DocIdent>),
    /// `inputs a, b;`
    Inputs(Vec<DocIdent>),
    /// `outputs a, b;`
    Outputs(Vec<DocIdent>),
    /// `actions a, b;`
    Actions(Vec<DocIdent>),
    /// `start S;`
    Start(Ident),
    /// `unhandled complete|ignore|reject;`
    Unhandled(Policy),
    /// `never P;`
    Never(Expr),
    /// `recover to S except T, U;`
    Recover {
        /// The state that must stay reachable.
        target: Ident,
        /// States exempted from the obligation.
        except: Vec<Ident>,
    },
    /// `counters strikes to 3, retries to 5;`
    Counters(Vec<CounterDecl>),
    /// `ensure R within SPAN after T;`
    Ensure {
        /// What must happen (`R`).
        response: Expr,
        /// How soon.
        within: Within,
        /// What starts the obligation (`T`).
        trigger: Expr,
    },
    /// `timebase Tick 1 ms;` (event-driven) or `timebase 10 us;` (clocked); the event
    /// and the period may each be left out.
    Timebase {
        /// The event that marks time (event-driven machines).
        event: Option<Ident>,
        /// The time one time-base event stands for.
        period: Option<Duration>,
    },
}

/// The unit of a duration.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum TimeUnit {
    /// Time-base events.
    Ticks,
    /// Microseconds.
    Us,
    /// Milliseconds.
    Ms,
    /// Seconds.
    S,
}

impl TimeUnit {
    /// The unit as written.
    pub fn keyword(self) -> &'static str {
        match self {
            TimeUnit::Ticks => "ticks",
            TimeUnit::Us => "us",
            TimeUnit::Ms => "ms",
            TimeUnit::S => "s",
        }
    }

    /// Microseconds in one unit (`None` for ticks).
    pub fn micros(self) -> Option<u64> {
        match self {
            TimeUnit::Ticks => None,
            TimeUnit::Us => Some(1),
            TimeUnit::Ms => Some(1_000),
            TimeUnit::S => Some(1_000_000),
        }
    }

    /// The unit a word names (`ticks`, `us`, `ms`, `s`).
    pub fn from_word(w: &str) -> Option<TimeUnit> {
        Some(match w {
            "ticks" => TimeUnit::Ticks,
            "us" => TimeUnit::Us,
            "ms" => TimeUnit::Ms,
            "s" => TimeUnit::S,
            _ => return None,
        })
    }
}

/// One counter of a `counters` declaration: `strikes to 3`.
#[derive(Clone, Debug)]
pub struct CounterDecl {
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// The counter's name.
    pub ident: Ident,
    /// Its largest value (`N` of `0..=N`).
    pub max: u64,
    /// Where the bound is written.
    pub max_span: Span,
}

/// The span of an `ensure` deadline.
#[derive(Clone, Copy, Debug)]
pub enum Within {
    /// A duration of the time base.
    Time(Duration),
    /// `N steps`: steps of any event.
    Steps(u64, Span),
}

impl Within {
    /// Where the span is written.
    pub fn span(&self) -> Span {
        match self {
            Within::Time(d) => d.span,
            Within::Steps(_, s) => *s,
        }
    }
}

/// A counter operation's kind.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum CounterOpKind {
    /// `+= k`
    Add,
    /// `-= k`
    Sub,
    /// `= k`
    Set,
}

impl CounterOpKind {
    /// The operator as written.
    pub fn symbol(self) -> &'static str {
        match self {
            CounterOpKind::Add => "+=",
            CounterOpKind::Sub => "-=",
            CounterOpKind::Set => "=",
        }
    }
}

/// An item of a `do` list: an action, or a counter operation.
#[derive(Clone, Debug)]
pub enum OpAst {
    /// An action hook.
    Action(Ident),
    /// `name += k`, `name -= k`, `name = k`.
    Counter {
        /// The counter.
        name: Ident,
        /// The operation.
        kind: CounterOpKind,
        /// The constant.
        value: u64,
        /// Where the constant is written.
        value_span: Span,
    },
}

impl OpAst {
    /// The name the item starts with (the action or the counter).
    pub fn name(&self) -> &Ident {
        match self {
            OpAst::Action(i) | OpAst::Counter { name: i, .. } => i,
        }
    }
}

/// A comparison of a counter with a constant.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Cmp {
    /// `==`
    Eq,
    /// `!=`
    Ne,
    /// `<`
    Lt,
    /// `<=`
    Le,
    /// `>`
    Gt,
    /// `>=`
    Ge,
}

impl Cmp {
    /// The operator as written.
    pub fn symbol(self) -> &'static str {
        match self {
            Cmp::Eq => "==",
            Cmp::Ne => "!=",
            Cmp::Lt => "<",
            Cmp::Le => "<=",
            Cmp::Gt => ">",
            Cmp::Ge => ">=",
        }
    }

    /// The comparison that holds exactly when this one does not.
    pub fn negated(self) -> Cmp {
        match self {
            Cmp::Eq => Cmp::Ne,
            Cmp::Ne => Cmp::Eq,
            Cmp::Lt => Cmp::Ge,
            Cmp::Le => Cmp::Gt,
            Cmp::Gt => Cmp::Le,
            Cmp::Ge => Cmp::Lt,
        }
    }

    /// Does `value CMP k` hold?
    pub fn holds(self, value: u64, k: u64) -> bool {
        match self {
            Cmp::Eq => value == k,
            Cmp::Ne => value != k,
            Cmp::Lt => value < k,
            Cmp::Le => value <= k,
            Cmp::Gt => value > k,
            Cmp::Ge => value >= k,
        }
    }
}

/// A duration as written: `250 ms`, `250ms`, `40 ticks`.
#[derive(Clone, Copy, Debug)]
pub struct Duration {
    /// The number.
    pub value: u64,
    /// The unit.
    pub unit: TimeUnit,
    /// Where the number is written.
    pub span: Span,
}

/// A declaration with the span of its keyword.
#[derive(Clone, Debug)]
pub struct Decl {
    /// What is declared.
    pub kind: DeclKind,
    /// The keyword's span.
    pub span: Span,
}

/// A machine as written.
#[derive(Clone, Debug)]
pub struct MachineAst {
    /// Attributes other than doc comments.
    pub attrs: Vec<Attr>,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// Visibility of the generated module.
    pub vis: Vis,
    /// The machine's name.
    pub name: Ident,
    /// Declarations, in source order.
    pub decls: Vec<Decl>,
    /// States and groups, in source order.
    pub members: Vec<Member>,
}

/// A state or a group.
#[derive(Clone, Debug)]
pub enum Member {
    /// `state X ...`
    State(StateAst),
    /// `group G { ... }`
    Group(GroupAst),
}

/// A state as written.
#[derive(Clone, Debug)]
pub struct StateAst {
    /// Attributes other than doc comments.
    pub attrs: Vec<Attr>,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// `terminal state`.
    pub terminal: bool,
    /// The state's name.
    pub name: Ident,
    /// Moore outputs (`emit a, b`).
    pub emit: Vec<Ident>,
    /// Rules and enter/leave actions.
    pub body: Vec<Body>,
}

/// A group as written.
#[derive(Clone, Debug)]
pub struct GroupAst {
    /// Attributes other than doc comments.
    pub attrs: Vec<Attr>,
    /// Doc comment lines.
    pub doc: Vec<String>,
    /// The group's name.
    pub name: Ident,
    /// Moore outputs shared by every member.
    pub emit: Vec<Ident>,
    /// Rules and enter/leave actions of the group itself.
    pub body: Vec<Body>,
    /// Nested states and groups.
    pub members: Vec<Member>,
}

/// An item in a state or group body.
// A rule is much larger than an enter/leave list; the tree is built once per parse
// and read in place, so boxing every rule would cost allocations for nothing.
#[allow(clippy::large_enum_variant)]
#[derive(Clone, Debug)]
pub enum Body {
    /// `enter do a, b;` (actions and counter operations, in order)
    Enter(Vec<OpAst>, Span),
    /// `leave do a, b;`
    Leave(Vec<OpAst>, Span),
    /// A rule.
    Rule(RuleAst),
}

/// What fires a rule.
#[derive(Clone, Debug)]
pub enum Trigger {
    /// `A | B`
    Events(Vec<Ident>),
    /// `_`: every event no other rule of the scope names.
    Wildcard(Span),
}

/// Where a rule goes.
#[derive(Clone, Debug)]
pub enum Target {
    /// `stay`: internal transition.
    Stay(Span),
    /// A named state.
    State(Ident),
}

/// A rule as written.
#[derive(Clone, Debug)]
pub struct RuleAst {
    /// `preempt`: where the keyword is written (groups only).
    pub preempt: Option<Span>,
    /// `after D`: a timeout rule (no trigger, no `preempt`, no `else`).
    pub after: Option<Duration>,
    /// The trigger; `None` in clocked machines.
    pub trigger: Option<Trigger>,
    /// The guard after `if`.
    pub guard: Option<Expr>,
    /// `else` instead of a guard: where the keyword is written.
    pub otherwise: Option<Span>,
    /// The target after `=>`.
    pub target: Target,
    /// Mealy outputs (`, emit a`).
    pub emit: Vec<Ident>,
    /// Actions and counter operations (`, do f, n += 1`), in order.
    pub actions: Vec<OpAst>,
    /// Span of the rule's first token.
    pub span: Span,
}

/// A guard or property expression.
#[derive(Clone, Debug)]
pub enum Expr {
    /// A name (an input in guards; an input, output or action in properties).
    Name(Ident),
    /// `in X` (properties only).
    In(Ident),
    /// `true` or `false`.
    Const(bool, Span),
    /// `!e`
    Not(Box<Expr>, Span),
    /// `a && b`
    And(Box<Expr>, Box<Expr>),
    /// `a || b`
    Or(Box<Expr>, Box<Expr>),
    /// `(e)`: kept so that printing round-trips the author's grouping. The span covers
    /// both parentheses.
    Paren(Box<Expr>, Span),
    /// `counter CMP k`: a counter compared with a constant.
    Compare {
        /// The counter.
        name: Ident,
        /// The comparison.
        cmp: Cmp,
        /// The constant.
        value: u64,
        /// Where the constant is written.
        value_span: Span,
    },
}

impl Expr {
    /// The span of the expression's first token (the whole group for `( .. )`).
    pub fn span(&self) -> Span {
        match self {
            Expr::Name(i) | Expr::In(i) | Expr::Compare { name: i, .. } => i.span,
            Expr::Const(_, s) | Expr::Not(_, s) | Expr::Paren(_, s) => *s,
            Expr::And(a, _) | Expr::Or(a, _) => a.span(),
        }
    }

    /// The span of the expression's last token (the whole group for `( .. )`).
    pub fn last_span(&self) -> Span {
        match self {
            Expr::Name(i) | Expr::In(i) => i.span,
            Expr::Compare { value_span, .. } => *value_span,
            Expr::Const(_, s) | Expr::Paren(_, s) => *s,
            Expr::Not(inner, _) => inner.last_span(),
            Expr::And(_, b) | Expr::Or(_, b) => b.last_span(),
        }
    }

    /// The span of the whole expression, from its first token to its last. Where spans
    /// cannot be joined (a procedural macro on stable Rust), the first token's.
    pub fn full_span(&self) -> Span {
        let first = self.span();
        first.join(self.last_span()).unwrap_or(first)
    }
}

/// Joins a chain `x1 op x2 op ... op xn` of one associative operator as a balanced tree,
/// in order, so that its depth is log2(n) and not n: every pass that recurses over
/// expressions (resolver, checker, printer) then needs little stack even for
/// [`MAX_TERMS`](super::lexicon::MAX_TERMS) operands. Chains of up to three keep the left-nested shape
/// (`(x1 op x2) op x3`); the printer writes every shape the same way.
pub(crate) fn balanced(mut operands: Vec<Expr>, join: fn(Box<Expr>, Box<Expr>) -> Expr) -> Expr {
    if operands.len() == 1 {
        return operands.remove(0);
    }
    let right = operands.split_off(operands.len().div_ceil(2));
    join(
        Box::new(balanced(operands, join)),
        Box::new(balanced(right, join)),
    )
}
