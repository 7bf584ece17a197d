//! Bindings to the generated C of `tests/c/specs/bilge_pump.detent`, linked in by the
//! crate's build script, for the FFI test.

use std::ffi::{c_char, c_int, c_void};

/// `struct bilge_pump_machine`.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default)]
pub struct BilgePumpMachine {
    /// The state number.
    pub state: u8,
}

/// `struct bilge_pump_outputs`.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct BilgePumpOutputs {
    /// Output `pump`.
    pub pump: bool,
    /// Output `alarm`.
    pub alarm: bool,
}

/// `struct bilge_pump_hooks`.
#[repr(C)]
pub struct BilgePumpHooks {
    /// Input `pump_current_ok`.
    pub pump_current_ok: Option<unsafe extern "C" fn(*mut c_void) -> bool>,
    /// Action `start_timer`.
    pub start_timer: Option<unsafe extern "C" fn(*mut c_void)>,
    /// Action `log_fault`.
    pub log_fault: Option<unsafe extern "C" fn(*mut c_void)>,
}

extern "C" {
    /// `bilge_pump_init`.
    pub fn bilge_pump_init(m: *mut BilgePumpMachine);
    /// `bilge_pump_step` (the event is passed as its number).
    pub fn bilge_pump_step(
        m: *mut BilgePumpMachine,
        ev: c_int,
        hooks: *const BilgePumpHooks,
        ctx: *mut c_void,
        out: *mut BilgePumpOutputs,
    ) -> c_int;
    /// `bilge_pump_state_name`.
    pub fn bilge_pump_state_name(s: c_int) -> *const c_char;
    /// `bilge_pump_event_name`.
    pub fn bilge_pump_event_name(ev: c_int) -> *const c_char;
}
