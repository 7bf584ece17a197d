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

detent::machine! {
    /// Counters and a timer: `restore_with` takes both.
    #[allow(equivalent_states, unused_declaration)]
    machine Strikes {
        events Bad, Good, Tick;
        timebase Tick;
        counters
            /// Wrong tries.
            strikes to 3,
            big to 300;
        start Open;
        unhandled ignore;
        state Open {
            Bad if strikes < 2 => stay, do strikes += 1;
            Bad if strikes >= 2 => Locked, do strikes += 1;
            Good => stay, do strikes = 0, big = 300;
        }
        state Locked {
            after 5 ticks => Open, do strikes -= 3;
        }
    }

    #[dispatch(match)]
    #[allow(equivalent_states, unused_declaration)]
    machine StrikesMatch {
        events Bad, Good, Tick;
        timebase Tick;
        counters strikes to 3, big to 300;
        start Open;
        unhandled ignore;
        state Open {
            Bad if strikes < 2 => stay, do strikes += 1;
            Bad if strikes >= 2 => Locked, do strikes += 1;
            Good => stay, do strikes = 0, big = 300;
        }
        state Locked {
            after 5 ticks => Open, do strikes -= 3;
        }
    }
}

/// `restore_with` refuses every counter and timer value out of range (carrying it) and
/// takes every value in range; the restored machine goes on from there.
#[test]
fn restore_with_validates_counters_and_timers() {
    macro_rules! check {
        ($m:ident) => {{
            use $m::{Counters, Event, Machine, State, Timers};
            let m = Machine::new();
            assert_eq!(m.counters(), Counters { strikes: 0, big: 0 });
            let _: (u8, u16) = (m.counters().strikes, m.counters().big);
            // Every counter value: in range restores, past the bound is refused.
            for v in 0..=u8::MAX {
                let c = Counters { strikes: v, big: 0 };
                let r = Machine::restore_with(0, c, Timers::default());
                if v <= 3 {
                    assert_eq!(r.map(|m| m.counters()), Ok(c));
                } else {
                    assert_eq!(r, Err(InvalidState { raw: u16::from(v) }));
                }
            }
            for v in [299u16, 300, 301, 1000, u16::MAX] {
                let c = Counters { strikes: 0, big: v };
                let r = Machine::restore_with(0, c, Timers::default());
                if v <= 300 {
                    assert!(r.is_ok());
                } else {
                    assert_eq!(r, Err(InvalidState { raw: v }));
                }
            }
            // A bad state number first.
            assert_eq!(
                Machine::restore_with(9, Counters::default(), Timers::default()),
                Err(InvalidState { raw: 9 })
            );
            // Timers: past the longest timeout, or running in a state that has none.
            let locked = State::Locked as u8;
            for v in 0..=u8::MAX {
                let t = Timers { locked: v };
                let r = Machine::restore_with(locked, Counters::default(), t);
                if v <= 5 {
                    assert_eq!(r.map(|m| m.timers()), Ok(t));
                } else {
                    assert_eq!(r, Err(InvalidState { raw: u16::from(v) }));
                }
                let open = Machine::restore_with(0, Counters::default(), t);
                assert_eq!(open.is_ok(), v == 0);
            }
            // Restored at strikes 2 in Open: one more Bad locks, the timeout unlocks
            // and takes the strikes back to 0 (saturating at 0 from 3).
            let mut m = Machine::restore_with(
                0,
                Counters {
                    strikes: 2,
                    big: 300,
                },
                Timers::default(),
            )
            .unwrap();
            m.step(Event::Bad, &mut ()).unwrap();
            assert_eq!(m.state(), State::Locked);
            assert_eq!(
                m.counters(),
                Counters {
                    strikes: 3,
                    big: 300
                }
            );
            // restore(raw) alone: everything at 0.
            let r = Machine::restore(locked).unwrap();
            assert_eq!(
                (r.counters(), r.timers()),
                (Counters::default(), Timers::default())
            );
            let mut m = Machine::restore_with(
                locked,
                Counters { strikes: 3, big: 7 },
                Timers { locked: 4 },
            )
            .unwrap();
            m.step(Event::Tick, &mut ()).unwrap();
            assert_eq!(m.state(), State::Open);
            assert_eq!(m.counters(), Counters { strikes: 0, big: 7 });
        }};
    }
    check!(strikes);
    check!(strikes_match);
}
