//! The wording of messages a new user reads first (issue "First-use defects", item 9):
//! "did you mean" for misspelled names, one error (not a cascade) past the input limit,
//! a `never_true_guard` caret under the whole guard, counts with the right plural, and an
//! `incomplete` that says why a `_` rule does not cover the event.

use detent_compiler::driver::check_source;
use detent_compiler::report::check::render_file;
use detent_compiler::report::tour::TourReport;
use detent_compiler::tour::tour;

fn rendered(text: &str) -> String {
    render_file(&check_source("m.detent", text), false).join("\n")
}

fn messages(text: &str) -> Vec<(String, Vec<String>)> {
    check_source("m.detent", text)
        .diagnostics()
        .map(|d| (d.message.clone(), d.helps.clone()))
        .collect()
}

#[test]
fn misspelled_names_get_a_suggestion() {
    let text = "
machine Pump {
    events FloatUp, FloatDown;
    inputs current_ok;
    outputs pump;
    actions start_timer;
    start Idle;
    never pmp;
    recover to Idlle;
    state Idle { FlotUp if curent_ok => Pumping; FloatUp if !current_ok => stay; FloatDown => stay; }
    state Pumping emit pmp { FloatUp => stay, do start_timr; FloatDown => Idel; }
    group Far { state Lone { FloatUp | FloatDown => stay; } }
}";
    let got = messages(text);
    let help = |msg: &str| -> Vec<String> {
        got.iter()
            .find(|(m, _)| m == msg)
            .unwrap_or_else(|| panic!("no `{msg}` in {got:#?}"))
            .1
            .clone()
    };
    assert_eq!(
        help("undefined event `FlotUp`"),
        ["did you mean `FloatUp`?"]
    );
    assert_eq!(
        help("undefined input `curent_ok`"),
        ["did you mean `current_ok`?"]
    );
    assert_eq!(help("undefined output `pmp`"), ["did you mean `pump`?"]);
    assert_eq!(
        help("undefined action `start_timr`"),
        ["did you mean `start_timer`?"]
    );
    assert_eq!(help("undefined state `Idel`"), ["did you mean `Idle`?"]);
    assert_eq!(help("undefined state `Idlle`"), ["did you mean `Idle`?"]);
    assert_eq!(
        help("undefined name `pmp`: expected an event, input, output or action"),
        ["did you mean `pump`?"]
    );
    // Nothing close: no guess.
    let far = messages("machine M { events Go; start A; state A { Go => Zebra; } }");
    assert_eq!(far[0].0, "undefined state `Zebra`");
    assert!(far[0].1.is_empty(), "{far:?}");
    // The help is printed.
    assert!(rendered(text).contains("= help: did you mean `FloatUp`?"));
}

#[test]
fn closest_prefers_case_and_declaration_independent_ties() {
    use detent_compiler::naming::closest;
    assert_eq!(closest("idle", ["Idle", "Idly"]), Some("Idle"));
    assert_eq!(closest("Abc", ["Abd", "Abe"]), Some("Abd"));
    assert_eq!(closest("Abc", ["Abe", "Abd"]), Some("Abd"));
    // Short names: one edit is a third of three characters; `c` is not `a`.
    assert_eq!(closest("c", ["a", "b"]), None);
    assert_eq!(closest("B", ["a", "b"]), Some("b"));
    assert_eq!(closest("Go", ["Stop", "Halt"]), None);
    assert_eq!(
        closest("X", ["X"]),
        None,
        "the name itself is no suggestion"
    );
}

/// Before: past 64 inputs every input used in a guard got its own "undefined input".
#[test]
fn one_error_past_the_input_limit() {
    let inputs: Vec<String> = (0..70).map(|i| format!("i{i}")).collect();
    let guards: Vec<String> = (0..70).map(|i| format!("Go if i{i} => stay;")).collect();
    let text = format!(
        "machine Wide {{ events Go; inputs {}; start A; never i3; state A {{ {} }} }}",
        inputs.join(", "),
        guards.join(" ")
    );
    let got = messages(&text);
    assert_eq!(
        got.iter().map(|(m, _)| m.as_str()).collect::<Vec<_>>(),
        ["70 inputs declared; the limit is 64"],
        "{got:#?}"
    );
}

/// Before: the caret stood under the guard's first operand only.
#[test]
fn never_true_guard_underlines_the_whole_guard() {
    let text = "machine M {
    events Go;
    inputs a, b;
    start A;
    unhandled ignore;
    state A { Go if !b => stay; Go if a && !a && (b || !b) => stay; }
}";
    let out = rendered(text);
    let line = "    state A { Go if !b => stay; Go if a && !a && (b || !b) => stay; }";
    let start = line.find("a && !a").unwrap();
    let width = "a && !a && (b || !b)".len();
    let caret = format!("{}{}", " ".repeat(start), "^".repeat(width));
    assert!(
        out.lines()
            .any(|l| l.ends_with(&caret) && l.trim_start().starts_with('|')),
        "{out}"
    );
    assert!(out.contains("warning[never_true_guard]"), "{out}");
}

/// Before: `1 steps`, `1 resets`, `1 literals`.
#[test]
fn counts_have_the_right_plural() {
    let report = check_source(
        "m.detent",
        "machine One { events Go; start A; unhandled ignore; state A { Go => B; } terminal state B; }",
    );
    let m = report.into_machines().remove(0);
    let summary = TourReport::new(&m, &tour(&m)).summary;
    assert!(
        summary.contains(": 1 step, 0 resets, covers 1 of 1 transition ("),
        "{summary}"
    );
    let report = check_source(
        "m.detent",
        "machine Two { events Go, Back; start A; unhandled ignore;
           state A { Go => B; Back => C; } terminal state B; terminal state C; }",
    );
    let m = report.into_machines().remove(0);
    let summary = TourReport::new(&m, &tour(&m)).summary;
    assert!(
        summary.contains(": 2 steps, 1 reset, covers 2 of 2 transitions"),
        "{summary}"
    );
    // A property counterexample of one step.
    let out = rendered(
        "machine P { events Go; outputs o; start A; never o; state A { Go => B; } state B emit o { Go => stay; } }",
    );
    assert!(
        out.contains("shortest trace from the start state (1 step,"),
        "{out}"
    );
}

/// The explanation follows the lowered form's `reached` list: here the lookup reaches
/// `Ramp`'s rules naming `Tick`, and the `_` of `Ramp` (and of `Firing`) is not reached.
#[test]
fn incomplete_says_why_the_wildcard_does_not_cover() {
    let text = "
machine Kiln {
    events Tick, Start;
    inputs ok, hot;
    start Idle;
    state Idle { Start => Ramp; Tick => stay; }
    group Firing {
        _ => Idle;
        state Ramp { Tick if ok && hot => stay; Tick if ok && !hot => Idle; _ => stay; }
    }
}";
    let report = check_source("m.detent", text);
    let d = report
        .diagnostics()
        .find(|d| d.lint.name() == "incomplete")
        .expect("incomplete");
    assert_eq!(
        d.notes[1],
        "the `_` rule of state `Ramp` does not cover `Tick` here: the lookup takes the rules \
         naming `Tick` in state `Ramp` instead, and what their guards leave open is unhandled"
    );
    // No `_` anywhere: no such note.
    let plain = check_source(
        "m.detent",
        "machine K { events Tick; inputs ok; start A; state A { Tick if ok => stay; } }",
    );
    let d = plain
        .diagnostics()
        .find(|d| d.lint.name() == "incomplete")
        .expect("incomplete");
    assert_eq!(d.notes.len(), 1, "{:?}", d.notes);
}
