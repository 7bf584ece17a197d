//! The API of generated machines (DESIGN.md, "Generated Rust"), through the macro:
//! sizes and representations, numbering, names, `restore`, `reject`, `impl Hooks for
//! ()`, and the runtime's `StateMachine` trait.

use detent::{InvalidState, Rejected, StateMachine};

detent::machine! {
    /// A three-position selector.
    pub machine Selector {
        events Up, Down, Park;
        outputs lit;
        start Low;
        unhandled reject;

        /// The lowest position.
        state Low { Up => Mid; }
        state Mid emit lit { Up => High; Down => Low; }
        state High { Down => Mid; Park => stay; }
    }

    #[dispatch(match)]
    machine Counter {
        inputs carry;
        actions wrap;
        start Zero;
        state Zero { if carry => One; if !carry => stay; }
        state One { if carry => Zero, do wrap; if !carry => stay; }
    }
}

include!(concat!(env!("OUT_DIR"), "/wide.rs"));

#[test]
fn one_byte_of_state_numbers_in_declaration_order() {
    use selector::{Event, Machine, State};
    assert_eq!(core::mem::size_of::<Machine>(), 1);
    assert_eq!(core::mem::size_of::<State>(), 1);
    assert_eq!(State::ALL, [State::Low, State::Mid, State::High]);
    assert_eq!(State::High as u8, 2);
    assert_eq!(Event::ALL, [Event::Up, Event::Down, Event::Park]);
    assert_eq!(State::Mid.name(), "Mid");
    assert_eq!(Event::Park.name(), "Park");
    assert_eq!(Machine::new().state(), State::Low);
    assert_eq!(Machine::default(), Machine::new());
}

#[test]
fn reject_returns_err_and_changes_nothing() {
    use selector::{Event, Machine, Outputs, State};
    let mut m = Machine::new();
    assert_eq!(m.step(Event::Down, &mut ()), Err(Rejected));
    assert_eq!(m.state(), State::Low);
    assert_eq!(m.step(Event::Up, &mut ()), Ok(Outputs { lit: true }));
    assert_eq!(m.outputs(), Outputs { lit: true });
    assert_eq!(m.step(Event::Up, &mut ()), Ok(Outputs { lit: false }));
    assert_eq!(m.step(Event::Park, &mut ()), Ok(Outputs { lit: false }));
    assert_eq!(m.state(), State::High);
}

#[test]
fn restore_accepts_every_state_and_rejects_the_rest() {
    use selector::{Machine, State};
    for s in State::ALL {
        assert_eq!(Machine::restore(s as u8).unwrap().state(), s);
    }
    assert_eq!(Machine::restore(3), Err(InvalidState { raw: 3 }));
    assert_eq!(Machine::restore(255), Err(InvalidState { raw: 255 }));
    assert_eq!(
        <Machine as StateMachine>::restore_raw(256),
        Err(InvalidState { raw: 256 })
    );
}

#[test]
fn the_state_machine_trait() {
    fn persist_and_restore<M: StateMachine>(m: &M) -> M {
        M::restore_raw(m.raw_state()).unwrap()
    }
    let mut m = selector::Machine::new();
    m.step(selector::Event::Up, &mut ()).unwrap();
    assert_eq!(persist_and_restore(&m), m);
    assert_eq!(<selector::Machine as StateMachine>::STATES.len(), 3);
    assert_eq!(<selector::Machine as StateMachine>::EVENTS.len(), 3);
    assert_eq!(selector::Machine::start(), selector::Machine::new());
}

struct Bits {
    carry: bool,
    wraps: u32,
}

impl counter::Hooks for Bits {
    fn carry(&mut self) -> bool {
        self.carry
    }
    fn wrap(&mut self) {
        self.wraps += 1;
    }
}

#[test]
fn clocked_machine_steps_on_tick_with_hooks() {
    use counter::{Event, Machine, State};
    assert_eq!(Event::ALL, [Event::Tick]);
    let mut m = Machine::new();
    let mut bits = Bits {
        carry: true,
        wraps: 0,
    };
    for _ in 0..5 {
        m.step(Event::Tick, &mut bits).unwrap();
    }
    assert_eq!((m.state(), bits.wraps), (State::One, 2));
    bits.carry = false;
    m.step(Event::Tick, &mut bits).unwrap();
    assert_eq!(m.state(), State::One);
}

#[test]
fn past_256_states_the_state_is_two_bytes() {
    use wide::{Event, Machine, State};
    assert_eq!(core::mem::size_of::<Machine>(), 2);
    assert_eq!(State::ALL.len(), 300);
    assert_eq!(State::W299 as u16, 299);
    let mut m = Machine::new();
    m.step(Event::Back, &mut ()).unwrap();
    assert_eq!(m.state(), State::W299);
    assert_eq!(Machine::restore(299).unwrap().state(), State::W299);
    assert_eq!(Machine::restore(300), Err(InvalidState { raw: 300 }));
}
