//! The [`StateMachine`] trait: what every generated `Machine` has in common, for code
//! that handles machines generically (persistence, logging, differential tests).

use crate::InvalidState;

/// Implemented by every generated `Machine`.
///
/// Stepping is not part of this trait: each machine's `step` is an inherent method
/// generic over the machine's own `Hooks` trait (one function per input and action),
/// and those traits differ from machine to machine.
///
/// State and event numbers are declaration order in the spec, the same numbers the C
/// and Verilog back ends use, so a state persisted by one build can be read back by
/// another as long as the states were not reordered.
pub trait StateMachine: Sized {
    /// The machine's state enum (`#[repr(u8)]`, or `u16` past 256 states).
    type State: Copy + Eq + core::fmt::Debug + 'static;
    /// The machine's event enum (`Tick` alone for a clocked machine).
    type Event: Copy + Eq + core::fmt::Debug + 'static;
    /// The machine's outputs: one `bool` per output, in declaration order.
    type Outputs: Copy + Eq + Default + core::fmt::Debug;
    /// Every state, in declaration order (index = state number).
    const STATES: &'static [Self::State];
    /// Every event, in declaration order (index = event number).
    const EVENTS: &'static [Self::Event];
    /// A machine in its start state; the same as the inherent `const fn new()`.
    ///
    /// Added to the trait so generic code (tests, persistence helpers) can make a
    /// machine without knowing its concrete type.
    fn start() -> Self;
    /// The current state.
    fn state(&self) -> Self::State;
    /// The Moore outputs of the current state.
    fn outputs(&self) -> Self::Outputs;
    /// The state number (declaration order) for persisting.
    fn raw_state(&self) -> u16;
    /// A machine in the state numbered `raw`, as returned by [`raw_state`]; fails
    /// when `raw` names no state (corrupt or stale storage).
    ///
    /// [`raw_state`]: StateMachine::raw_state
    fn restore_raw(raw: u16) -> Result<Self, InvalidState>;
}
