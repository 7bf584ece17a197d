//! The feature mechanism as generated code uses it, from a crate other than the
//! runtime and under `forbid(unsafe_code)`. Run under each feature:
//! `cargo test -p detent --features defmt|serde|defmt-trace` (and `--all-features`).
#![forbid(unsafe_code)]

mod bilge_pump {
    //! Shaped like generated code (DESIGN.md, "Generated Rust").
    ::detent::__derive_extras! {
        /// The states.
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
        #[repr(u8)]
        pub enum State { Idle = 0, Pumping = 1 }

        /// The events.
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
        #[repr(u8)]
        pub enum Event { FloatUp = 0, FloatDown = 1 }

        /// The outputs.
        #[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
        pub struct Outputs { pub pump: bool }

        /// The machine: one byte of state.
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
        pub struct Machine { state: State }
    }

    impl Machine {
        /// Start state.
        pub const fn new() -> Self {
            Self { state: State::Idle }
        }

        /// Steps with a trace line per transition.
        pub fn step(&mut self, event: Event) -> Result<Outputs, detent::Rejected> {
            let from = self.state;
            let to = match (from, event) {
                (State::Idle, Event::FloatUp) => State::Pumping,
                (State::Pumping, Event::FloatDown) => State::Idle,
                _ => return Err(detent::Rejected),
            };
            ::detent::__trace_transition!("BilgePump", from, event, to);
            self.state = to;
            Ok(Outputs {
                pump: to == State::Pumping,
            })
        }
    }

    impl detent::StateMachine for Machine {
        type State = State;
        type Event = Event;
        type Outputs = Outputs;
        const STATES: &'static [State] = &[State::Idle, State::Pumping];
        const EVENTS: &'static [Event] = &[Event::FloatUp, Event::FloatDown];
        fn start() -> Self {
            Self::new()
        }
        fn state(&self) -> State {
            self.state
        }
        fn outputs(&self) -> Outputs {
            Outputs {
                pump: self.state == State::Pumping,
            }
        }
        fn raw_state(&self) -> u16 {
            self.state as u16
        }
        fn restore_raw(raw: u16) -> Result<Self, detent::InvalidState> {
            match Self::STATES.get(usize::from(raw)) {
                Some(&state) => Ok(Self { state }),
                None => Err(detent::InvalidState { raw }),
            }
        }
    }
}

use bilge_pump::{Event, Machine, State};
use detent::{InvalidState, Rejected, StateMachine};

#[test]
fn generated_shape_steps_and_persists_through_the_trait() {
    let mut machine = Machine::new();
    assert_eq!(machine.step(Event::FloatDown), Err(Rejected));
    assert_eq!(machine.step(Event::FloatUp).map(|o| o.pump), Ok(true));
    let raw = machine.raw_state();
    assert_eq!(raw, 1);
    let restored = Machine::restore_raw(raw).unwrap();
    assert_eq!(restored.state(), State::Pumping);
    assert_eq!(Machine::restore_raw(2).err(), Some(InvalidState { raw: 2 }));
    assert_eq!(Machine::start().state(), State::Idle);
}

#[test]
fn error_values_display_readably() {
    assert_eq!(
        InvalidState { raw: 7 }.to_string(),
        "persisted value 7 is out of range (no such state, or a counter or timer past its bound)"
    );
    assert!(Rejected.to_string().contains("rejected"));
    let boxed: Box<dyn std::error::Error> = Box::new(Rejected);
    assert!(!boxed.to_string().is_empty());
}

#[cfg(feature = "serde")]
#[test]
fn serde_derives_round_trip_through_json() {
    let machine = Machine::new();
    let json = serde_json::to_string(&machine).unwrap();
    assert_eq!(json, r#"{"state":"Idle"}"#);
    assert_eq!(serde_json::from_str::<Machine>(&json).unwrap(), machine);
    let outputs: bilge_pump::Outputs = serde_json::from_str(r#"{"pump":true}"#).unwrap();
    assert!(outputs.pump);
    let invalid = serde_json::to_string(&InvalidState { raw: 300 }).unwrap();
    assert_eq!(invalid, r#"{"raw":300}"#);
    assert_eq!(serde_json::to_string(&Rejected).unwrap(), "null");
}

#[cfg(feature = "defmt")]
#[test]
fn defmt_format_is_derived() {
    // Compile-time check: these bounds hold only if the derives were added. (Host
    // tests cannot log through defmt: that needs a global logger and `defmt.x`.)
    fn is_format<T: detent::__private::defmt::Format>() {}
    is_format::<State>();
    is_format::<Event>();
    is_format::<bilge_pump::Outputs>();
    is_format::<Machine>();
    is_format::<Rejected>();
    is_format::<InvalidState>();
}
