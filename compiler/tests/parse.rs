//! Parser tests: every construct of LANGUAGE.md parses to the expected tree, and each
//! kind of syntax error is reported at the right line and column.

use detent_compiler::syntax::ast::*;
use detent_compiler::syntax::{parse_source, print::print_file};

fn parse(text: &str) -> File {
    match parse_source(text) {
        Ok(f) => f,
        Err(e) => {
            let lc = e.span.start();
            panic!("{}:{}: {}", lc.line, lc.column + 1, e.message)
        }
    }
}

/// (message, line, 1-based column) of the syntax error.
fn error(text: &str) -> (String, usize, usize) {
    let e = parse_source(text).expect_err("expected a syntax error");
    let lc = e.span.start();
    (e.message, lc.line, lc.column + 1)
}

const FULL: &str = r#"
/// A kiln.
/// Second line.
#[dispatch(match)]
#[minimize]
#[allow(naming, dead_end)]
pub(crate) machine Kiln {
    events
        /// Door closed.
        DoorShut,
        Tick, Abort;
    inputs door_ok, hot;
    outputs heater, lamp;
    actions log, beep,;
    start Idle;
    unhandled reject;
    never heater && !door_ok;
    never in Firing && lamp || (beep);
    recover to Idle except Fault;

    state Idle emit lamp {
        DoorShut if door_ok && !hot => Firing, emit lamp, do log, beep;
        _ => stay;
    }
    /// The firing phases.
    #[warn(unreachable_state)]
    group Firing emit heater {
        enter do log;
        leave do beep;
        Abort => Idle;
        state Ramp { Tick if hot || false => Soak; Tick if !(hot || false) => stay; }
        group Inner { state Soak; }
    }
    #[deny(dead_end)]
    terminal state Fault emit lamp;
}
"#;

#[test]
fn every_construct_parses() {
    let f = parse(FULL);
    assert_eq!(f.machines.len(), 1);
    let m = &f.machines[0];
    assert_eq!(m.name.name, "Kiln");
    assert_eq!(m.vis, Vis::PubCrate);
    assert_eq!(m.doc, vec!["A kiln.", "Second line."]);
    assert!(matches!(
        m.attrs[0],
        Attr::Dispatch(DispatchStyle::Match, _)
    ));
    assert!(matches!(m.attrs[1], Attr::Minimize(_)));
    match &m.attrs[2] {
        Attr::Lint(LevelAttr::Allow, names, _) => {
            assert_eq!(
                names.iter().map(|n| n.name.as_str()).collect::<Vec<_>>(),
                ["naming", "dead_end"]
            )
        }
        other => panic!("{other:?}"),
    }
    assert_eq!(m.decls.len(), 9);
    match &m.decls[0].kind {
        DeclKind::Events(evs) => {
            assert_eq!(evs.len(), 3);
            assert_eq!(evs[0].doc, vec!["Door closed."]);
            assert_eq!(evs[2].ident.name, "Abort");
        }
        other => panic!("{other:?}"),
    }
    match &m.decls[3].kind {
        DeclKind::Actions(a) => assert_eq!(a.len(), 2, "trailing comma accepted"),
        other => panic!("{other:?}"),
    }
    assert!(matches!(
        m.decls[5].kind,
        DeclKind::Unhandled(Policy::Reject)
    ));
    match &m.decls[7].kind {
        // `in Firing && lamp || (beep)` is `(in Firing && lamp) || (beep)`.
        DeclKind::Never(Expr::Or(a, b)) => {
            assert!(matches!(**a, Expr::And(..)));
            assert!(matches!(**b, Expr::Paren(..)));
        }
        other => panic!("{other:?}"),
    }
    match &m.decls[8].kind {
        DeclKind::Recover { target, except } => {
            assert_eq!(target.name, "Idle");
            assert_eq!(except[0].name, "Fault");
        }
        other => panic!("{other:?}"),
    }
    assert_eq!(m.members.len(), 3);
    let Member::State(idle) = &m.members[0] else {
        panic!()
    };
    assert_eq!(idle.emit[0].name, "lamp");
    let Body::Rule(r) = &idle.body[0] else {
        panic!()
    };
    assert!(matches!(&r.trigger, Some(Trigger::Events(e)) if e[0].name == "DoorShut"));
    assert!(matches!(&r.guard, Some(Expr::And(..))));
    assert!(matches!(&r.target, Target::State(t) if t.name == "Firing"));
    assert_eq!(r.emit.len(), 1);
    assert_eq!(r.actions.len(), 2);
    let Body::Rule(w) = &idle.body[1] else {
        panic!()
    };
    assert!(matches!(w.trigger, Some(Trigger::Wildcard(_))));
    assert!(matches!(w.target, Target::Stay(_)));
    let Member::Group(g) = &m.members[1] else {
        panic!()
    };
    assert_eq!(g.doc, vec!["The firing phases."]);
    assert!(matches!(g.attrs[0], Attr::Lint(LevelAttr::Warn, _, _)));
    assert!(matches!(g.body[0], Body::Enter(..)));
    assert!(matches!(g.body[1], Body::Leave(..)));
    assert_eq!(g.members.len(), 2);
    let Member::Group(inner) = &g.members[1] else {
        panic!()
    };
    assert!(
        matches!(&inner.members[0], Member::State(s) if s.name.name == "Soak" && s.body.is_empty())
    );
    let Member::State(fault) = &m.members[2] else {
        panic!()
    };
    assert!(fault.terminal);
    assert!(matches!(fault.attrs[0], Attr::Lint(LevelAttr::Deny, _, _)));
}

#[test]
fn clocked_rules_have_no_trigger_and_comments_are_skipped() {
    let f = parse(
        "machine Det { inputs bit; outputs found; start A; /* block */
         state A { if bit => B; if !bit => stay; } // line
         state B emit found { => A; } }",
    );
    let Member::State(a) = &f.machines[0].members[0] else {
        panic!()
    };
    let Body::Rule(r) = &a.body[0] else { panic!() };
    assert!(r.trigger.is_none());
    let Member::State(b) = &f.machines[0].members[1] else {
        panic!()
    };
    let Body::Rule(r) = &b.body[0] else { panic!() };
    assert!(r.trigger.is_none() && r.guard.is_none());
}

#[test]
fn several_machines_in_one_file() {
    let f = parse("machine A { start X; state X; } machine B { start Y; state Y; }");
    assert_eq!(f.machines.len(), 2);
}

#[test]
fn printing_round_trips_the_full_example() {
    let f = parse(FULL);
    let printed = print_file(&f);
    let again = parse(&printed);
    assert_eq!(print_file(&again), printed);
}

#[test]
fn syntax_errors_have_locations() {
    // Each case: text, expected message fragment, line, column.
    let cases: &[(&str, &str, usize, usize)] = &[
        ("machin M {}", "expected `machine`", 1, 1),
        (
            "machine M { start A; state A { X => ; } }",
            "expected a target state or `stay`",
            1,
            37,
        ),
        (
            "machine M {\n  start A;\n  state A { X => A }\n}",
            "expected `;`",
            3,
            20,
        ),
        (
            "machine M { events A; start S; state S; events B; }",
            "declarations come before states",
            1,
            41,
        ),
        (
            "machine M { start S; state S { Go if a = b => S; } }",
            "expected `=>`",
            1,
            40,
        ),
        (
            "machine M { start S; state S { Go if => S; } }",
            "expected an input or counter name",
            1,
            38,
        ),
        (
            "machine M { unhandled maybe; }",
            "expected `complete`, `ignore` or `reject`",
            1,
            23,
        ),
        ("machine M { start fn; }", "found Rust keyword `fn`", 1, 19),
        ("machine M { start stay; }", "reserved word", 1, 19),
        (
            "machine M { start S; state S { Go if in S => S; } }",
            "only allowed in `never`",
            1,
            38,
        ),
        (
            "#[frobnicate] machine M {}",
            "unknown attribute `frobnicate`",
            1,
            1,
        ),
        (
            "#[dispatch(tree)] machine M {}",
            "unknown dispatch style `tree`",
            1,
            12,
        ),
        (
            "machine M { start S; #[dispatch(match)] state S; }",
            "applies to a machine",
            1,
            22,
        ),
        (
            "machine M { start S; state S { state T; } }",
            "a state cannot contain states",
            1,
            32,
        ),
        (
            "machine M { /// doc\n events A; }",
            "documents nothing",
            1,
            13,
        ),
        (
            "machine M { start S; state S { Go => S, do a, emit b; } }",
            "expected `, emit ...` before `, do ...`",
            1,
            45,
        ),
        (
            "machine M { recover Idle; }",
            "expected `to` after `recover`",
            1,
            21,
        ),
        (
            "machine M { start S; terminal S; }",
            "expected `state` after `terminal`",
            1,
            31,
        ),
    ];
    for (text, fragment, line, col) in cases {
        let (msg, l, c) = error(text);
        assert!(
            msg.contains(fragment),
            "{text:?}: message {msg:?} lacks {fragment:?}"
        );
        assert_eq!((l, c), (*line, *col), "{text:?}: {msg}");
    }
}

#[test]
fn lexer_errors_are_reported() {
    let (msg, _, _) = error("machine M { start \"unterminated; }");
    assert!(msg.contains("cannot tokenize"), "{msg}");
}

#[test]
fn deep_nesting_is_refused_without_overflowing_the_stack() {
    let deep_parens = format!(
        "machine M {{ inputs a; start S; state S {{ Go if {}a{} => S; }} }}",
        "(".repeat(10_000),
        ")".repeat(10_000)
    );
    let (msg, _, _) = error(&deep_parens);
    assert!(msg.contains("nested deeper"), "{msg}");
    let deep_not = format!(
        "machine M {{ inputs a; start S; state S {{ Go if {}a => S; }} }}",
        "!".repeat(10_000)
    );
    let (msg, _, _) = error(&deep_not);
    assert!(msg.contains("nested deeper"), "{msg}");
    let mut groups = String::from("machine M { start S; ");
    for i in 0..10_000 {
        groups.push_str(&format!("group G{i} {{ "));
    }
    groups.push_str("state S;");
    groups.push_str(&"}".repeat(10_001));
    let (msg, _, _) = error(&groups);
    assert!(msg.contains("nested deeper"), "{msg}");
    let long_chain = format!(
        "machine M {{ inputs a; start S; state S {{ Go if a{} => S; }} }}",
        " && a".repeat(5_000)
    );
    let (msg, _, _) = error(&long_chain);
    assert!(msg.contains("more than 1024 operands"), "{msg}");
}
