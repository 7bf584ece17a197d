//! `detent import`: errors with row and column for bad tables, and the round trip
//! `table --format csv` -> import on every example, compared step by step through the
//! reference interpreter (there is no `equiv` command yet; when it lands, this test
//! can also ask it).

use detent_compiler::import::{import_csv, import_spec, parse_csv, ImportError};
use detent_compiler::model::{resolve_file, EventId, Machine, StateId};
use detent_compiler::table::to_csv;
use std::path::Path;

fn machine(text: &str) -> Machine {
    let file = detent_compiler::syntax::parse_source(text).expect("parses");
    let (mut ms, errors) = resolve_file(&file);
    assert!(errors.is_empty(), "{errors:?}");
    ms.remove(0)
}

/// Same next state (by name), outputs (by name), actions (by name, in order) and
/// handled/rejected outcome for every state, event and input valuation.
fn assert_same_behaviour(a: &Machine, b: &Machine, what: &str) {
    let names = |m: &Machine| m.states.iter().map(|s| s.name.clone()).collect::<Vec<_>>();
    assert_eq!(names(a), names(b), "{what}: same states in the same order");
    assert_eq!(
        a.state_name(a.start),
        b.state_name(b.start),
        "{what}: start"
    );
    assert_eq!(a.events.len(), b.events.len(), "{what}: events");
    let inputs: Vec<&str> = a.inputs.iter().map(|i| i.name.as_str()).collect();
    assert!(inputs.len() <= 12, "{what}: few enough inputs to enumerate");
    for si in 0..a.states.len() {
        let s = StateId::from_index(si);
        for ei in 0..a.events.len() {
            let e = EventId::from_index(ei);
            let eb = b.event_id(a.event_name(e)).expect("same event names");
            for bits in 0..(1u32 << inputs.len()) {
                let va: Vec<bool> = (0..inputs.len()).map(|i| bits >> i & 1 == 1).collect();
                let vb: Vec<bool> = b
                    .inputs
                    .iter()
                    .map(|inp| {
                        inputs
                            .iter()
                            .position(|n| *n == inp.name)
                            .is_some_and(|i| va[i])
                    })
                    .collect();
                let ra = a.step(s, e, &va);
                let rb = b.step(s, eb, &vb);
                let outs = |m: &Machine, o: Vec<detent_compiler::model::OutputId>| -> Vec<String> {
                    o.iter()
                        .map(|o| m.outputs[o.index()].name.clone())
                        .collect()
                };
                let acts = |m: &Machine, r: &detent_compiler::interp::StepResult| -> Vec<String> {
                    r.actions
                        .iter()
                        .map(|x| m.actions[x.index()].name.clone())
                        .collect()
                };
                let ctx = format!(
                    "{what}: {} on {} with {va:?}",
                    a.state_name(s),
                    a.event_name(e)
                );
                assert_eq!(
                    a.state_name(ra.to),
                    b.state_name(rb.to),
                    "{ctx}: next state"
                );
                assert_eq!(
                    outs(a, ra.outputs()),
                    outs(b, rb.outputs()),
                    "{ctx}: outputs"
                );
                assert_eq!(acts(a, &ra), acts(b, &rb), "{ctx}: actions");
                assert_eq!(ra.handled(), rb.handled(), "{ctx}: handled");
                assert_eq!(
                    matches!(ra.outcome, detent_compiler::interp::Outcome::Rejected),
                    matches!(rb.outcome, detent_compiler::interp::Outcome::Rejected),
                    "{ctx}: rejected"
                );
            }
        }
    }
}

#[test]
fn every_example_round_trips_through_csv() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples");
    let mut n = 0;
    for entry in std::fs::read_dir(&dir).expect("examples/") {
        let p = entry.expect("entry").path();
        if p.extension().is_none_or(|x| x != "detent") {
            continue;
        }
        let what = p.display().to_string();
        let original = machine(&std::fs::read_to_string(&p).expect("readable"));
        let csv = to_csv(&original);
        if detent_compiler::minimize::machine::has_group_timer(&original) {
            // A group's timer has no flat form: import refuses it, naming the row
            // (docs/table-csv.md).
            let e = import_spec(&csv).expect_err("a group timer is refused");
            assert!(e.to_string().contains("a timeout of group"), "{what}: {e}");
            n += 1;
            continue;
        }
        let spec = import_spec(&csv).unwrap_or_else(|e| panic!("{what}: {e}"));
        let imported = machine(&spec);
        assert_same_behaviour(&original, &imported, &what);
        assert_eq!(
            original.properties.len(),
            imported.properties.len(),
            "{what}"
        );
        assert_eq!(original.policy, imported.policy, "{what}");
        // The imported spec checks clean when the original does, and its table is the
        // same file again (a fixed point after one round). An import has no groups, so
        // a `preempt` marker becomes the narrowed guards of the rows after it: the
        // table is then a fixed point after the second round.
        let report = detent_compiler::driver::check_source("imported.detent", &spec);
        assert!(
            !report.has_errors(),
            "{what}: imported spec has errors:\n{spec}"
        );
        let again = to_csv(&imported);
        if original.rules.iter().any(|r| r.preempt) {
            assert!(csv.contains(",preempt"), "{what}");
            let twice = machine(&import_spec(&again).expect("second import"));
            assert_same_behaviour(&original, &twice, &what);
            assert_eq!(
                to_csv(&twice),
                again,
                "{what}: fixed point after two rounds"
            );
        } else {
            assert_eq!(again, csv, "{what}: export of the import is the same table");
        }
        n += 1;
    }
    assert!(n >= 6, "every example was tried");
}

const GOOD: &str = "state,event,guard,next,mealy,actions,moore\r\n\
@machine,Tank,,,,,\r\n\
@events,Fill Drain,,,,,\r\n\
@inputs,full leak,,,,,\r\n\
@outputs,valve alarm,,,,,\r\n\
@actions,log,,,,,\r\n\
@start,Empty,,,,,\r\n\
@unhandled,ignore,,,,,\r\n\
@never,in Filling && alarm,,,,,\r\n\
@recover,\"Empty except Broken\",,,,,\r\n\
Empty,,,,,,\r\n\
Empty,Fill,!(full || leak),Filling,,,\r\n\
Empty,Fill,leak && !full,Broken,alarm,log,\r\n\
Filling,,,,,,valve\r\n\
Filling,Fill,full,stay,,,valve\r\n\
Filling,Drain,,Empty,,,valve\r\n\
Broken,,,terminal,,,alarm\r\n";

#[test]
fn the_documented_example_imports() {
    // The example of docs/table-csv.md.
    let spec = import_spec(GOOD).expect("imports");
    let m = machine(&spec);
    assert_eq!(m.name, "Tank");
    assert_eq!(m.states.len(), 3);
    assert!(m.states[2].terminal);
    assert!(
        spec.contains("Fill if !(full || leak) => Filling;"),
        "{spec}"
    );
    assert!(spec.contains("never in Filling && alarm;"), "{spec}");
    assert!(spec.contains("recover to Empty except Broken;"), "{spec}");
    // LF line ends and a byte-order mark are accepted too.
    let lf = format!("\u{feff}{}", GOOD.replace("\r\n", "\n"));
    assert_eq!(import_spec(&lf).expect("LF imports"), spec);
}

fn error(text: &str) -> ImportError {
    match import_csv(text) {
        Ok(f) => panic!("expected an error, got {} machine(s)", f.machines.len()),
        Err(e) => e,
    }
}

/// `GOOD` with record `row` (1-based) replaced.
fn with_row(row: usize, record: &str) -> String {
    let mut lines: Vec<&str> = GOOD.split("\r\n").collect();
    lines[row - 1] = record;
    lines.join("\r\n")
}

#[test]
fn bad_tables_are_reported_at_row_and_column() {
    let at = |e: ImportError| (e.row, e.column);
    // Truncated row: the 7th field is missing.
    let e = error(&with_row(12, "Empty,Fill,!(full || leak),Filling,,"));
    assert_eq!(at(e.clone()), (12, 7), "{e}");
    assert!(e.message.contains("truncated"), "{e}");
    // Unknown declaration kind.
    let e = error(&with_row(3, "@eventz,Fill Drain,,,,,"));
    assert_eq!(at(e.clone()), (3, 1), "{e}");
    assert!(e.message.contains("unknown declaration `@eventz`"), "{e}");
    // Bad quoting: a quote inside an unquoted field, text after a closing quote, and a
    // quoted field never closed.
    assert_eq!(
        at(error(&with_row(12, "Empty,Fill,!(fu\"ll),Filling,,,"))),
        (12, 3)
    );
    assert_eq!(
        at(error(&with_row(12, "Empty,\"Fill\"x,,Filling,,,"))),
        (12, 2)
    );
    let e = error(&with_row(17, "Broken,,,terminal,,,\"alarm"));
    assert_eq!(at(e.clone()), (17, 7), "{e}");
    assert!(e.message.contains("not closed"), "{e}");
    // Duplicate state record.
    let e = error(&with_row(14, "Empty,,,,,,"));
    assert_eq!(at(e.clone()), (14, 1), "{e}");
    assert!(
        e.message.contains("two state records (first at row 11)"),
        "{e}"
    );
    // Names that are not declared, where they are used.
    assert_eq!(at(error(&with_row(12, "Empty,Fil,,Filling,,,"))), (12, 2));
    assert_eq!(
        at(error(&with_row(12, "Empty,Fill,ful,Filling,,,"))),
        (12, 3)
    );
    assert_eq!(
        at(error(&with_row(12, "Empty,Fill,full &&,Filling,,,"))),
        (12, 3)
    );
    assert_eq!(at(error(&with_row(12, "Empty,Fill,,Nowhere,,,"))), (12, 4));
    assert_eq!(
        at(error(&with_row(12, "Empty,Fill,,Filling,valve2,,"))),
        (12, 5)
    );
    assert_eq!(
        at(error(&with_row(12, "Empty,Fill,,Filling,,lg,"))),
        (12, 6)
    );
    assert_eq!(
        at(error(&with_row(15, "Filling,Fill,full,stay,,,alarm"))),
        (15, 7)
    );
    assert_eq!(at(error(&with_row(9, "@never,in Nowhere,,,,,"))), (9, 2));
    assert_eq!(at(error(&with_row(7, "@start,Nowhere,,,,,"))), (7, 2));
    assert_eq!(
        at(error(&with_row(2, "@machine,type,,,,,"))),
        (2, 2),
        "a keyword"
    );
    assert_eq!(
        at(error(&with_row(
            1,
            "state,event,guard,next,mealy,action,moore"
        ))),
        (1, 6)
    );
    // A missing declaration is reported at the first state record.
    assert_eq!(at(error(&with_row(7, ""))), (11, 1));
    // A lone carriage return.
    assert_eq!(
        at(error(&with_row(12, "Empty,Fill\r,,Filling,,,"))),
        (12, 2)
    );
    assert_eq!(at(error("")), (0, 0));
}

#[test]
fn csv_reader_follows_rfc_4180() {
    // RFC 4180, section 2: quoted fields may hold commas, doubled quotes and line
    // breaks; a final record end is optional.
    let recs = parse_csv("a,\"b,c\",\"say \"\"hi\"\"\"\r\n\"two\nlines\",,\"\"\nlast,x,y")
        .expect("parses");
    assert_eq!(recs.len(), 3);
    assert_eq!(recs[0].fields, ["a", "b,c", "say \"hi\""]);
    assert_eq!(recs[1].fields, ["two\nlines", "", ""]);
    assert_eq!(recs[1].row, 2);
    assert_eq!(recs[2].fields, ["last", "x", "y"]);
    assert_eq!(
        recs[2].row, 3,
        "a line break inside quotes does not start a row"
    );
}

#[test]
fn no_input_makes_the_reader_panic() {
    // Every prefix and every single-byte corruption of a good table gives a result or an
    // error, never a panic.
    for cut in 0..=GOOD.len() {
        if GOOD.is_char_boundary(cut) {
            let _ = import_spec(&GOOD[..cut]);
        }
    }
    for i in 0..GOOD.len() {
        for c in ['"', ',', '\r', '\n', '@', '(', '!', ' '] {
            let mut t = GOOD.to_string();
            t.replace_range(i..i + 1, &c.to_string());
            let _ = import_spec(&t);
        }
    }
    // Deep nesting stops at the parser's bound instead of overflowing the stack.
    let deep = format!("{}full{}", "(".repeat(100_000), ")".repeat(100_000));
    let e = error(&with_row(15, &format!("Filling,Fill,{deep},stay,,,valve")));
    assert_eq!((e.row, e.column), (15, 3));
}
