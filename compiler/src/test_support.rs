//! Fixtures shared by the unit tests.

use crate::model::Machine;

/// Parses and resolves a one-machine spec that must be clean of errors.
pub(crate) fn machine(src: &str) -> Machine {
    let file = crate::syntax::parse_source(src).expect("test spec parses");
    let (mut machines, errors) = crate::model::resolve_file(&file);
    assert!(errors.is_empty(), "test spec resolves: {errors:?}");
    machines.remove(0)
}

/// The Gate machine: `_` at two levels (a group's named rule beats a state's `_`),
/// enter/leave actions, `stay` against an external self-transition through a group's
/// `_`, `unhandled reject`, a `recover to` property.
pub(crate) const GATE: &str = "
    machine Gate {
        events Open, Close, Knock, Ping;
        outputs busy;
        actions log, ring, door_in, door_out, shut_in, shut_out;
        start Shut;
        unhandled reject;
        recover to Shut except Locked, Ajar;

        group Door {
            enter do door_in;
            leave do door_out;
            Knock => stay, do ring;
            _ => Shut, do log;
            state Shut {
                enter do shut_in;
                leave do shut_out;
                Open => Ajar;
                Ping => Locked;
            }
            state Ajar emit busy {
                Close => Shut;
                _ => stay;
            }
        }
        state Locked {
            Open => Shut;
        }
    }";
