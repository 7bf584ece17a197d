//! Checker tests: each lint fires at the right place with the right witness, a clean
//! spec is clean, lint levels follow attributes and options, and name errors are found.

use detent_compiler::check::{apply_options, render, Options};
use detent_compiler::diag::{Diagnostic, Lint, Severity};
use detent_compiler::driver::check_source;

fn diags(text: &str) -> Vec<Diagnostic> {
    check_source("t.detent", text)
        .machines
        .into_iter()
        .flat_map(|m| m.diagnostics)
        .collect()
}

fn pos(d: &Diagnostic) -> (usize, usize) {
    render::line_col(d.span.expect("diagnostic has a span"))
}

fn only(text: &str, lint: Lint) -> Vec<Diagnostic> {
    diags(text).into_iter().filter(|d| d.lint == lint).collect()
}

fn witness(d: &Diagnostic) -> Vec<(&str, bool)> {
    d.witness
        .as_ref()
        .expect("a witness")
        .iter()
        .map(|(n, v)| (n.as_str(), *v))
        .collect()
}

const CLEAN: &str = "
/// A greenhouse vent.
machine Vent {
    events Hot, Cold;
    inputs wind;
    outputs open;
    actions log;
    start Shut;
    state Shut {
        Hot if !wind => Open, do log;
        Hot if wind => stay;
        Cold => stay;
    }
    state Open emit open {
        Cold | Hot => Shut;
    }
}
";

#[test]
fn a_clean_spec_is_clean() {
    assert!(diags(CLEAN).is_empty(), "{:#?}", diags(CLEAN));
}

#[test]
fn incomplete_reports_state_event_and_witness() {
    let text = "machine M {
    events Go, Stop;
    inputs a, b;
    start S;
    state S {
        Go if a && b => S;
        Stop => S;
    }
}";
    let found = only(text, Lint::Incomplete);
    assert_eq!(found.len(), 1);
    let d = &found[0];
    assert_eq!(d.severity, Severity::Error);
    assert_eq!(d.state.as_deref(), Some("S"));
    assert_eq!(d.event.as_deref(), Some("Go"));
    assert_eq!(pos(d), (5, 11));
    // The witness makes `a && b` false: check it really is uncovered.
    let w = witness(d);
    assert_eq!(w.len(), 2);
    let a = w.iter().find(|(n, _)| *n == "a").unwrap().1;
    let b = w.iter().find(|(n, _)| *n == "b").unwrap().1;
    assert!(!(a && b));
}

#[test]
fn a_missing_event_everywhere_is_incomplete_for_each_state() {
    let text = "machine M { events Go, Stop; start S; state S { Go => T; } state T { Go => S; } }";
    let found = only(text, Lint::Incomplete);
    let pairs: Vec<(String, String)> = found
        .iter()
        .map(|d| (d.state.clone().unwrap(), d.event.clone().unwrap()))
        .collect();
    assert_eq!(
        pairs,
        [("S".into(), "Stop".into()), ("T".into(), "Stop".into())]
    );
}

#[test]
fn ignore_and_reject_silence_incomplete() {
    for policy in ["ignore", "reject"] {
        let text = format!(
            "machine M {{ events Go, Stop; start S; unhandled {policy}; state S {{ Go => S; }} }}"
        );
        assert!(only(&text, Lint::Incomplete).is_empty());
    }
}

#[test]
fn group_rules_and_wildcards_cover_members() {
    let text = "machine M {
        events A, B, C;
        start S;
        group G {
            _ => T;
            state S { A => stay; }
            state T { B => S; }
        }
    }";
    assert!(only(text, Lint::Incomplete).is_empty());
}

#[test]
fn the_first_scope_with_rules_is_the_only_one_used() {
    // S names A with a partial guard; the group's full rule for A does not fill the gap.
    let text = "machine M {
        events A;
        inputs x;
        start S;
        group G {
            A => S;
            state S { A if x => stay; }
        }
    }";
    let found = only(text, Lint::Incomplete);
    assert_eq!(found.len(), 1);
    assert_eq!(witness(&found[0]), [("x", false)]);
}

#[test]
fn overlapping_rules_give_the_valuation_that_fires_both() {
    let text = "machine M {
    events Go;
    inputs a, b, c;
    start S;
    state S {
        Go if a || c => S;
        Go if !a => stay;
    }
}";
    let found = only(text, Lint::OverlappingRules);
    assert_eq!(found.len(), 1);
    let d = &found[0];
    assert_eq!(pos(d), (7, 9));
    assert_eq!(pos_of_related(d), (6, 9));
    let w = witness(d);
    let get = |n: &str| {
        w.iter()
            .find(|(x, _)| *x == n)
            .map(|p| p.1)
            .unwrap_or(false)
    };
    // Both guards hold under the witness.
    assert!((get("a") || get("c")) && !get("a"));
}

fn pos_of_related(d: &Diagnostic) -> (usize, usize) {
    render::line_col(d.related[0].0)
}

#[test]
fn overlap_from_a_group_rule_is_reported_once() {
    let text = "machine M {
        events Go;
        start S;
        group G {
            Go => S;
            Go => T;
            state S;
            state T;
        }
    }";
    assert_eq!(only(text, Lint::OverlappingRules).len(), 1);
}

#[test]
fn unreachable_states_are_warned() {
    let text = "machine M { events Go; start S; state S { Go => S; } state Lost { Go => S; } }";
    let found = only(text, Lint::UnreachableState);
    assert_eq!(found.len(), 1);
    assert_eq!(found[0].state.as_deref(), Some("Lost"));
    assert_eq!(found[0].severity, Severity::Warning);
    assert_eq!(pos(&found[0]), (1, 60));
}

#[test]
fn a_state_behind_a_never_true_guard_is_unreachable() {
    let text = "machine M { events Go; inputs a; start S;
        state S { Go if a && !a => T; Go if !(a && !a) => stay; }
        state T { Go => S; } }";
    let found = only(text, Lint::UnreachableState);
    assert_eq!(found.len(), 1);
    assert_eq!(found[0].state.as_deref(), Some("T"));
    assert_eq!(only(text, Lint::NeverTrueGuard).len(), 1);
}

#[test]
fn dead_ends_single_and_sets_and_terminal() {
    let text = "machine M {
        events Go, Back;
        start A;
        state A { Go => B; Back => C; }
        state B { Go | Back => stay; }
        state C { Go => D; Back => stay; }
        state D { Go | Back => C; }
    }";
    let found = only(text, Lint::DeadEnd);
    assert_eq!(found.len(), 2, "{found:#?}");
    assert_eq!(found[0].states, ["B"]);
    assert_eq!(found[1].states, ["C", "D"]);
    // `terminal` silences it.
    let terminal = text
        .replace("state B", "terminal state B")
        .replace("state D", "terminal state D");
    assert!(only(&terminal, Lint::DeadEnd).is_empty());
}

#[test]
fn a_strongly_connected_machine_has_no_dead_end() {
    assert!(only(CLEAN, Lint::DeadEnd).is_empty());
}

#[test]
fn never_true_guard_points_at_the_guard() {
    let text = "machine M { events Go; inputs a; start S; unhandled ignore;
        state S { Go if false => S; Go if a && !a => stay; } }";
    let found = only(text, Lint::NeverTrueGuard);
    assert_eq!(found.len(), 2);
    assert_eq!(pos(&found[0]), (2, 25));
    assert_eq!(pos(&found[1]), (2, 43));
}

#[test]
fn unused_declarations_are_found() {
    let text = "machine M {
        events Go, Spare;
        inputs used_in, spare_in;
        outputs used_out, spare_out;
        actions used_act, spare_act;
        start S;
        unhandled ignore;
        state S emit used_out { Go if used_in => stay, do used_act; }
    }";
    let names: Vec<String> = only(text, Lint::UnusedDeclaration)
        .iter()
        .map(|d| d.message.clone())
        .collect();
    assert_eq!(names.len(), 4, "{names:#?}");
    for n in ["Spare", "spare_in", "spare_out", "spare_act"] {
        assert!(names.iter().any(|m| m.contains(&format!("`{n}`"))), "{n}");
    }
}

#[test]
fn naming_convention() {
    let text = "machine bad_name { events go_now; inputs BadInput; start idle; state idle { go_now if BadInput => stay; go_now if !BadInput => stay; } }";
    let found = only(text, Lint::Naming);
    let msgs: Vec<&str> = found.iter().map(|d| d.message.as_str()).collect();
    assert_eq!(found.len(), 4, "{msgs:#?}");
    assert!(found
        .iter()
        .any(|d| d.helps.iter().any(|h| h == "rename it `BadName`")));
    assert!(found
        .iter()
        .any(|d| d.helps.iter().any(|h| h == "rename it `bad_input`")));
}

#[test]
fn lint_levels_follow_the_innermost_attribute() {
    let text = "#[allow(unreachable_state)]
    machine M {
        events Go;
        start S;
        state S { Go => S; }
        state A { Go => S; }
        #[warn(unreachable_state)]
        group G {
            state B { Go => S; }
            #[deny(unreachable_state)]
            state C { Go => S; }
        }
    }";
    let found = only(text, Lint::UnreachableState);
    let levels: Vec<(String, Severity)> = found
        .iter()
        .map(|d| (d.state.clone().unwrap(), d.severity))
        .collect();
    assert_eq!(
        levels,
        [
            ("B".into(), Severity::Warning),
            ("C".into(), Severity::Error)
        ]
    );
}

#[test]
fn hard_errors_cannot_be_allowed() {
    let text = "#[allow(incomplete)] machine M { events Go; start S; state S; }";
    let found = only(text, Lint::Name);
    assert_eq!(found.len(), 1);
    assert!(found[0].message.contains("cannot be allowed"));
    let text = "#[allow(no_such_lint)] machine M { events Go; start S; state S { Go => S; } }";
    assert!(only(text, Lint::Name)[0]
        .message
        .contains("unknown lint `no_such_lint`"));
}

#[test]
fn options_allow_and_deny_warnings() {
    let text = "machine M { events Go; start S; state S { Go => S; } state Lost { Go => S; } }";
    let all = diags(text);
    assert_eq!(all.len(), 1);
    let denied = apply_options(
        all.clone(),
        &Options {
            allow: vec![],
            deny_warnings: true,
        },
    );
    assert_eq!(denied[0].severity, Severity::Error);
    let allowed = apply_options(
        all,
        &Options {
            allow: vec![Lint::UnreachableState],
            deny_warnings: true,
        },
    );
    assert!(allowed.is_empty());
}

#[test]
fn name_errors() {
    let cases: &[(&str, &str, (usize, usize))] = &[
        ("machine M { events Go; start S; state S { Go => Nowhere; } }", "undefined state `Nowhere`", (1, 49)),
        ("machine M { events Go; start S; state S { Stop => S; } }", "undefined event `Stop`", (1, 43)),
        ("machine M { events Go; start S; state S { Go if x => S; } }", "undefined input `x`", (1, 49)),
        ("machine M { events Go; start S; state S emit lamp; }", "undefined output `lamp`", (1, 46)),
        ("machine M { events Go; start S; state S { Go => S, do ring; } }", "undefined action `ring`", (1, 55)),
        ("machine M { events Go; start S; state S { Go => S; } state S; }", "already the name of a state or group", (1, 60)),
        ("machine M { events Go, Go; start S; state S { Go => S; } }", "event `Go` is declared twice", (1, 24)),
        ("machine M { inputs a; outputs a; start S; state S; }", "already declared as an input", (1, 31)),
        ("machine M { events Go; start G; group G { state S { Go => S; } } }", "is a group", (1, 30)),
        ("machine M { events Go; start S; group G { state S { Go => G; } } }", "is a group", (1, 59)),
        ("machine M { start S; state S { Tick => S; } }", "a trigger in a clocked machine", (1, 32)),
        ("machine M { events Go; start S; state S { => S; } }", "has no trigger", (1, 43)),
        ("machine M { events Go; state S { Go => S; } }", "has no `start` declaration", (1, 9)),
        ("machine M { events Go; start S; start S; state S { Go => S; } }", "declared twice", (1, 33)),
        ("machine M { events Go; start S; never nope; state S { Go => S; } }", "undefined name `nope`", (1, 39)),
        ("machine M { events Go; inputs a; start S; state S { Go if a => S; Go if !a => S; } } machine M { start S; state S; }", "defined twice", (1, 94)),
    ];
    for (text, fragment, at) in cases {
        let found = diags(text);
        let d = found
            .iter()
            .find(|d| d.lint == Lint::Name)
            .unwrap_or_else(|| panic!("{text}: no name error in {found:#?}"));
        assert!(d.message.contains(fragment), "{text}: {}", d.message);
        assert_eq!(pos(d), *at, "{text}: {}", d.message);
    }
}

#[test]
fn limits_are_enforced_with_messages() {
    let inputs: Vec<String> = (0..65).map(|i| format!("i{i}")).collect();
    let text = format!(
        "machine M {{ inputs {}; start S; state S; }}",
        inputs.join(", ")
    );
    let d = &only(&text, Lint::Name)[0];
    assert!(
        d.message.contains("65 inputs declared; the limit is 64"),
        "{}",
        d.message
    );
    let mut states = String::from("machine M { start S0; unhandled ignore; ");
    for i in 0..65_536 {
        states.push_str(&format!("state S{i}; "));
    }
    states.push('}');
    let d = &only(&states, Lint::Name)[0];
    assert!(
        d.message
            .contains("65536 states declared; the limit is 65535"),
        "{}",
        d.message
    );
}

#[test]
fn sixty_four_inputs_are_fine_when_each_rule_names_few() {
    let inputs: Vec<String> = (0..64).map(|i| format!("i{i}")).collect();
    let mut text = format!(
        "machine M {{ events Go; inputs {}; start S; ",
        inputs.join(", ")
    );
    text.push_str("state S { Go if i0 && i63 => S; Go if !(i0 && i63) => stay; } }");
    let found = diags(&text);
    // Only the unused inputs i1..i62 are reported; coverage and overlap are decided.
    assert!(
        found.iter().all(|d| d.lint == Lint::UnusedDeclaration),
        "{found:#?}"
    );
    assert_eq!(found.len(), 62);
}

#[test]
fn text_rendering_has_rustc_shape() {
    let text = "machine M {\n    events Go, Stop;\n    start S;\n    state S { Go => S; }\n}\n";
    let report = check_source("shape.detent", text);
    let d = report
        .diagnostics()
        .find(|d| d.lint == Lint::Incomplete)
        .unwrap();
    let out = render::render_text(d, &render::Source::new("shape.detent", text));
    let expected = "error[incomplete]: state `S` has no rule for event `Stop`
 --> shape.detent:4:11
  |
4 |     state S { Go => S; }
  |           ^
  |
  = help: add a rule for `Stop` here or in an enclosing group, or declare `unhandled ignore;` (or `reject`) to leave it unhandled
";
    assert_eq!(out, expected);
}

#[test]
fn json_rendering_has_the_documented_fields() {
    let text = "machine M { events Go; inputs ok; start S; state S { Go if ok => S; } }";
    let report = check_source("x.detent", text);
    let d = report.diagnostics().next().unwrap();
    let v = serde_json::to_value(detent_compiler::report::check::DiagnosticEntry::new(
        d, "x.detent",
    ))
    .expect("json");
    assert_eq!(v["lint"], "incomplete");
    assert_eq!(v["level"], "error");
    assert_eq!(v["state"], "S");
    assert_eq!(v["event"], "Go");
    assert_eq!(v["states"], serde_json::json!(["S"]));
    assert_eq!(v["witness"], serde_json::json!({"ok": false}));
    assert_eq!(
        v["span"],
        serde_json::json!({"file": "x.detent", "line": 1, "column": 50})
    );
    let keys: Vec<&String> = v.as_object().unwrap().keys().collect();
    assert_eq!(
        &keys[..8],
        ["lint", "level", "message", "state", "event", "states", "witness", "span"]
    );
}

#[test]
fn carets_are_as_wide_as_the_characters_above_them() {
    // Each CJK character takes two terminal columns: the caret line is padded by the
    // display width of what comes before the name (41 columns for 39 characters) and
    // has four carets under the two characters; `-->` counts characters.
    let text = "machine M { events Go; start 状態; state 状態 { Go => stay; } }\n";
    let report = check_source("wide.detent", text);
    let d = report
        .diagnostics()
        .find(|d| d.lint == Lint::Naming)
        .expect("a naming warning");
    let out = render::render_text(d, &render::Source::new("wide.detent", text));
    let expected = format!(
        "warning[naming]: state `状態` should have an UpperCamelCase name
 --> wide.detent:1:40
  |
1 | machine M {{ events Go; start 状態; state 状態 {{ Go => stay; }} }}
  | {}^^^^
  |
  = help: rename it `状態`
",
        " ".repeat(41)
    );
    assert_eq!(out, expected);
}

#[test]
fn tabs_before_a_span_keep_the_caret_under_it() {
    // The shown line has each tab as one space, so the caret sits under the name.
    let text = "machine M {\n\tevents Go;\n\tstart S;\n\tstate S { Go => S; }\n\tstate\tLost { Go => S; }\n}\n";
    let report = check_source("tabs.detent", text);
    let d = report
        .diagnostics()
        .find(|d| d.lint == Lint::UnreachableState)
        .expect("Lost is unreachable");
    let out = render::render_text(d, &render::Source::new("tabs.detent", text));
    assert!(
        out.contains(" --> tabs.detent:5:8\n  |\n5 |  state Lost { Go => S; }\n  |        ^^^^\n"),
        "{out}"
    );
}

#[test]
fn multi_line_spans_get_a_margin_bracket() {
    use detent_compiler::diag::Diagnostic;
    // A span over two lines (no lint makes one today; syntax errors from the macro
    // can): drawn from its first character to its last.
    let text = "machine M {\n    events Go;\n}\n";
    let tokens: proc_macro2::TokenStream = text.parse().unwrap();
    let group = tokens
        .into_iter()
        .find_map(|t| match t {
            proc_macro2::TokenTree::Group(g) => Some(g),
            _ => None,
        })
        .unwrap();
    let d = Diagnostic::new(Lint::Syntax, Some(group.span()), "a span over lines");
    let out = render::render_text(&d, &render::Source::new("multi.detent", text));
    assert_eq!(
        out,
        "error[syntax]: a span over lines
 --> multi.detent:1:11
  |
1 |   machine M {
  |  ___________^
2 | |     events Go;
3 | | }
  | |_^
  |
"
    );
}
