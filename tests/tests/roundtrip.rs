//! Property test: random well-formed specs pretty-print and re-parse to the same
//! resolved model.

use detent_compiler::model::{resolve_file, Machine};
use detent_compiler::syntax::{parse_source, print::print_file};
use detent_tests::gen::{random_spec, GenConfig};
use proptest::prelude::*;

/// Everything of a model except spans and BDD node numbers.
fn fingerprint(m: &Machine) -> String {
    let names = |items: &[detent_compiler::model::Item]| {
        items
            .iter()
            .map(|i| (i.name.clone(), i.doc.clone()))
            .collect::<Vec<_>>()
    };
    let mut s = format!(
        "{} {:?} {:?} {} {:?} {:?} {:?} {:?} {:?} {:?} {:?} {} {:?}\n",
        m.name,
        m.doc,
        m.vis,
        m.clocked,
        names(&m.events),
        names(&m.inputs),
        names(&m.outputs),
        names(&m.actions),
        m.start,
        m.policy,
        m.dispatch,
        m.minimize,
        m.lints
    );
    for st in &m.states {
        s += &format!(
            "state {} {:?} {} {:?} {:?} {:?} {:?} {:?} {:?} {:?} {:?}\n",
            st.name,
            st.doc,
            st.terminal,
            st.parent,
            st.emit,
            st.moore,
            st.enter,
            st.leave,
            st.rules.named,
            st.rules.wildcard,
            st.lints
        );
    }
    for g in &m.groups {
        s += &format!(
            "group {} {:?} {:?} {:?} {:?} {:?} {:?} {:?} {:?} {:?}\n",
            g.name,
            g.parent,
            g.emit,
            g.enter,
            g.leave,
            g.rules.named,
            g.rules.preempt,
            g.rules.wildcard,
            g.states,
            g.lints
        );
    }
    for r in &m.rules {
        s += &format!(
            "rule {:?} {} {} {:?} {:?} {:?} {:?} {:?}\n",
            r.scope, r.preempt, r.otherwise, r.trigger, r.guard_expr, r.target, r.mealy, r.actions
        );
    }
    for p in &m.properties {
        match p {
            detent_compiler::model::Property::Never { prop, text, .. } => {
                s += &format!("never {prop:?} {text}\n")
            }
            detent_compiler::model::Property::Recover {
                target,
                except,
                text,
                ..
            } => s += &format!("recover {target:?} {except:?} {text}\n"),
            detent_compiler::model::Property::Ensure {
                response,
                within,
                trigger,
                text,
                ..
            } => s += &format!("ensure {response:?} {within:?} {trigger:?} {text}\n"),
        }
    }
    for c in &m.counters {
        s += &format!("counter {} {} {:?}\n", c.name, c.max, c.doc);
    }
    s += &format!("atoms {:?}\n", m.atoms);
    s
}

fn models(text: &str) -> Vec<String> {
    let ast = parse_source(text).unwrap_or_else(|e| panic!("{}\n{text}", e.message));
    let (machines, errors) = resolve_file(&ast);
    assert!(errors.is_empty(), "{errors:#?}\n{text}");
    machines.iter().map(fingerprint).collect()
}

fn config(kind: u8) -> GenConfig {
    match kind % 4 {
        0 => GenConfig::default(),
        1 => GenConfig {
            events: 0,
            ..GenConfig::default()
        },
        2 => GenConfig {
            states: (1, 20),
            events: 5,
            inputs: 4,
            outputs: 3,
            actions: 3,
            counters: 2,
            ..GenConfig::default()
        },
        _ => GenConfig {
            inputs: 0,
            outputs: 0,
            actions: 0,
            groups: false,
            ..GenConfig::default()
        },
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn print_then_parse_gives_the_same_model(seed in any::<u64>(), kind in any::<u8>()) {
        let text = random_spec(seed, &config(kind));
        let printed = print_file(&parse_source(&text).unwrap());
        prop_assert_eq!(models(&text), models(&printed));
        // Printing is a fixed point after one round.
        let again = print_file(&parse_source(&printed).unwrap());
        prop_assert_eq!(printed, again);
    }
}

#[test]
fn the_language_example_round_trips_with_docs_and_properties() {
    let text = r#"
/// Doc on the machine.
#[dispatch(match)]
#[allow(naming)]
pub machine Pump {
    events /// Rising float.
        Up, Down;
    inputs ok;
    outputs pump, alarm;
    actions log;
    start Idle;
    unhandled ignore;
    never alarm && pump;
    never in Running && !ok || log;
    recover to Idle except Fault;
    /// Idle doc.
    state Idle { Up if ok => Pumping; Up if !ok => Fault, do log; }
    group Running emit pump { enter do log; Down => Idle; state Pumping; }
    terminal state Fault emit alarm;
}
"#;
    let printed = print_file(&parse_source(text).unwrap());
    assert_eq!(models(text), models(&printed));
}
