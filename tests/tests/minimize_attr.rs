//! `#[minimize]`: the Rust back end generates from the minimized machine, merged states
//! become aliases of their class's first state, and behaviour is unchanged.

detent::machine! {
    /// A tank pump where `Draining` and `Emptying` were written twice by accident: they
    /// behave the same (same outputs, same actions, same targets).
    #[minimize]
    pub machine TankPump {
        events Full, Empty, Tick;
        outputs pump;
        actions log;
        start Idle;
        state Idle {
            Full => Draining;
            Empty | Tick => stay;
        }
        state Draining emit pump {
            Empty => Idle, do log;
            Tick => Emptying;
            Full => stay;
        }
        state Emptying emit pump {
            Empty => Idle, do log;
            Tick => Draining;
            Full => stay;
        }
    }
}

#[derive(Default)]
struct Log(Vec<&'static str>);

impl tank_pump::Hooks for Log {
    fn log(&mut self) {
        self.0.push("log");
    }
}

#[test]
fn merged_states_are_aliases_of_the_first_member() {
    use tank_pump::{Event, Machine, State};
    assert_eq!(State::ALL.len(), 2, "Draining and Emptying are one state");
    assert_eq!(State::Emptying, State::Draining);
    let mut m = Machine::new();
    let mut log = Log::default();
    assert!(m.step(Event::Full, &mut log).unwrap().pump);
    assert_eq!(m.state(), State::Draining);
    // Tick goes to `Emptying` in the spec: the same state after minimization.
    assert!(m.step(Event::Tick, &mut log).unwrap().pump);
    assert_eq!(m.state(), State::Emptying);
    assert!(!m.step(Event::Empty, &mut log).unwrap().pump);
    assert_eq!(m.state(), State::Idle);
    assert_eq!(log.0, ["log"]);
}

#[test]
fn the_minimized_machine_behaves_like_the_spec_under_the_interpreter() {
    // The same spec without `#[minimize]`, run by the interpreter, against the
    // generated (minimized) code on every trace of length 6.
    let spec = include_str!("minimize_attr.rs");
    let start = spec.find("    #[minimize]").unwrap();
    let end = spec[start..].find("\n}\n").unwrap() + start;
    let text = spec[start..end].replace("#[minimize]", "");
    let report = detent_compiler::driver::check_source("tank.detent", &text);
    let m = report.machines[0].machine.as_ref().expect("spec resolves");
    use tank_pump::{Event, Machine};
    for code in 0..3usize.pow(6) {
        let mut generated = Machine::new();
        let mut log = Log::default();
        let mut state = m.start;
        let mut c = code;
        for _ in 0..6 {
            let e = c % 3;
            c /= 3;
            let r = m.step(state, detent_compiler::model::EventId::from_index(e), &[]);
            state = r.to;
            let out = generated.step(Event::ALL[e], &mut log).unwrap();
            let pump_expected = r
                .outputs()
                .iter()
                .any(|o| m.outputs[o.index()].name == "pump");
            assert_eq!(out.pump, pump_expected);
            assert_eq!(generated.state().name(), {
                // The generated state is the first member of the class.
                let name = m.state_name(state);
                if name == "Emptying" {
                    "Draining"
                } else {
                    name
                }
            });
        }
    }
}
