//! The two error values generated machines return: [`Rejected`] from `step` and
//! [`InvalidState`] from `restore`.

use core::fmt;

crate::__derive_extras! {
    /// A machine declared with `unhandled reject` was given an event that no rule of
    /// its current state handles.
    ///
    /// The state did not change and no action ran. Machines declared with
    /// `unhandled ignore` never return this: they report the unhandled event as
    /// handled-with-no-effect instead.
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
    pub struct Rejected;
}

impl fmt::Display for Rejected {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("event rejected: no rule of the current state handles it")
    }
}

impl core::error::Error for Rejected {}

crate::__derive_extras! {
    /// A persisted state number (read back from flash, EEPROM or a retained
    /// register) that names no state of the machine, or, from `restore_with`, a
    /// persisted counter past its bound or timer past its longest timeout.
    ///
    /// State numbers are declaration order, the same numbers the C and Verilog back
    /// ends use; a number at or past the machine's state count is invalid. Treat it as
    /// corrupt storage: start the machine afresh with `Machine::new()`.
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
    pub struct InvalidState {
        /// The number that was read back: the state number, or the counter's or
        /// timer's value (`u16::MAX` for a timer value that does not fit).
        pub raw: u16,
    }
}

impl fmt::Display for InvalidState {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "persisted value {} is out of range (no such state, or a counter or timer past its bound)",
            self.raw
        )
    }
}

impl core::error::Error for InvalidState {}
