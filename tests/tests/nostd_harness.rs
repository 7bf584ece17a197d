//! The no_std / panic-free harness, shown to pass on panic-free code and to fail on
//! code with a panic path (so a passing check of generated code means something).

use detent_tests::nostd::{build_nostd_and_check, build_nostd_and_check_with, NoStdOptions};

/// A hand-written machine in the shape of generated code (table style): a transition
/// table indexed by `#[repr(u8)]` enum discriminants, whose ranges the optimizer
/// knows, so no bounds check survives; `restore` uses `get`, never an index.
const PANIC_FREE_MACHINE: &str = r#"
/// A two-state pump controller.
pub mod bilge_pump {
    /// The states, in declaration order.
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
    #[repr(u8)]
    pub enum State {
        /// Waiting for water.
        Idle = 0,
        /// Pumping.
        Pumping = 1,
        /// Pump ran dry.
        DryRun = 2,
    }

    /// The events, in declaration order.
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
    #[repr(u8)]
    pub enum Event {
        /// The float switch rose.
        FloatUp = 0,
        /// The float switch fell.
        FloatDown = 1,
    }

    /// Moore outputs.
    #[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
    pub struct Outputs {
        /// Pump motor on.
        pub pump: bool,
    }

    /// Inputs and actions.
    pub trait Hooks {
        /// Whether the pump draws current.
        fn pump_current_ok(&mut self) -> bool;
        /// Logs a fault.
        fn log_fault(&mut self);
    }

    const STATES: [State; 3] = [State::Idle, State::Pumping, State::DryRun];
    const NONE: u8 = 0xFF;
    // NEXT[state][event]: target state number, or NONE when unhandled.
    const NEXT: [[u8; 2]; 3] = [[1, NONE], [NONE, 0], [NONE, 0]];
    const PUMP: [bool; 3] = [false, true, false];

    /// The machine: one byte of state.
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
    pub struct Machine {
        state: State,
    }

    impl Machine {
        /// Start state.
        pub const fn new() -> Self {
            Self { state: State::Idle }
        }

        /// Steps the machine.
        pub fn step<H: Hooks>(&mut self, event: Event, hooks: &mut H) -> Result<Outputs, detent::Rejected> {
            let target = NEXT[self.state as usize][event as usize];
            let Some(&next) = STATES.get(usize::from(target)) else {
                return Err(detent::Rejected);
            };
            let next = if next == State::Pumping && !hooks.pump_current_ok() {
                hooks.log_fault();
                State::DryRun
            } else {
                next
            };
            self.state = next;
            Ok(Outputs { pump: PUMP[next as usize] })
        }

        /// Restores a persisted state number.
        pub fn restore(raw: u8) -> Result<Self, detent::InvalidState> {
            match STATES.get(usize::from(raw)) {
                Some(&state) => Ok(Self { state }),
                None => Err(detent::InvalidState { raw: u16::from(raw) }),
            }
        }
    }
}

/// Concrete hooks for the entry points: reads a flag, counts faults.
pub struct PinHooks {
    /// Current-sense pin level.
    pub current_ok: bool,
    /// Faults logged.
    pub faults: u32,
}

impl bilge_pump::Hooks for PinHooks {
    fn pump_current_ok(&mut self) -> bool {
        self.current_ok
    }
    fn log_fault(&mut self) {
        self.faults = self.faults.wrapping_add(1);
    }
}

/// Entry point: `step` with concrete hooks.
#[inline(never)]
pub fn step_entry(
    machine: &mut bilge_pump::Machine,
    event: bilge_pump::Event,
    hooks: &mut PinHooks,
) -> Result<bilge_pump::Outputs, detent::Rejected> {
    machine.step(event, hooks)
}

/// Entry point: `restore` from a byte.
#[inline(never)]
pub fn restore_entry(raw: u8) -> Result<bilge_pump::Machine, detent::InvalidState> {
    bilge_pump::Machine::restore(raw)
}
"#;

#[test]
fn panic_free_machine_passes() {
    let report = build_nostd_and_check("harness_panic_free", PANIC_FREE_MACHINE).unwrap();
    assert!(
        report.defines("step_entry"),
        "entry point compiled: {:?}",
        report.functions()
    );
    assert!(report.defines("restore_entry"), "{:?}", report.functions());
    assert!(report.is_panic_free(), "{}", report.summary());
    report
        .check_entry_points(&["step_entry", "restore_entry"])
        .unwrap();
    eprintln!("{}", report.summary());
}

#[test]
fn panic_free_machine_passes_at_opt_level_s() {
    let options = NoStdOptions {
        opt_level: "s".to_owned(),
        ..NoStdOptions::default()
    };
    let report =
        build_nostd_and_check_with("harness_panic_free_s", PANIC_FREE_MACHINE, &options).unwrap();
    assert!(report.defines("step_entry"), "{:?}", report.functions());
    assert!(report.is_panic_free(), "{}", report.summary());
}

/// Four functions, each with a different kind of panic path, and one without.
const PANICKY: &str = r#"
const TABLE: [u8; 4] = [3, 1, 0, 2];

/// Indexes a table with an unchecked byte: a bounds check that can fail.
#[inline(never)]
pub fn next_state_unchecked(raw: u8) -> u8 {
    TABLE[raw as usize]
}

/// Slices a caller-given slice: a range check that can fail.
#[inline(never)]
pub fn window(data: &[u8], start: usize) -> u8 {
    data[start..].iter().fold(0, |a, b| a ^ b)
}

/// Unwraps a lookup that can miss.
#[inline(never)]
pub fn unwrap_lookup(raw: u8) -> u8 {
    *TABLE.get(usize::from(raw)).unwrap()
}

/// Divides by a caller-given number: a division-by-zero check.
#[inline(never)]
pub fn ratio(a: u32, b: u32) -> u32 {
    a / b
}

/// The same table read safely.
#[inline(never)]
pub fn next_state_checked(raw: u8) -> Option<u8> {
    TABLE.get(usize::from(raw)).copied()
}
"#;

#[test]
fn each_panic_path_is_reported_in_its_function() {
    let report = build_nostd_and_check("harness_panicky", PANICKY).unwrap();
    assert!(!report.is_panic_free(), "{}", report.summary());
    assert!(report
        .check_entry_points(&["next_state_unchecked"])
        .is_err());
    assert!(report.check_entry_points(&["ratio"]).is_err());
    report.check_entry_points(&["next_state_checked"]).unwrap();
    let offenders = report.panicking_functions();
    for function in [
        "harness_panicky::next_state_unchecked",
        "harness_panicky::window",
        "harness_panicky::unwrap_lookup",
        "harness_panicky::ratio",
    ] {
        assert!(
            offenders.contains(&function),
            "{function} not flagged:\n{}",
            report.summary()
        );
    }
    assert!(
        !offenders.contains(&"harness_panicky::next_state_checked"),
        "{}",
        report.summary()
    );
    let symbols = report.offending_symbols();
    assert!(
        symbols.iter().any(|s| s.ends_with("panic_bounds_check")),
        "{symbols:?}"
    );
    eprintln!("{}", report.summary());
}

#[test]
fn std_unsafe_and_undocumented_items_fail_the_build() {
    let uses_std = build_nostd_and_check(
        "harness_uses_std",
        "/// Allocates.\npub fn boxed() -> usize { std::vec![1u8].len() }",
    )
    .unwrap_err();
    assert!(uses_std.contains("std"), "{uses_std}");
    let uses_unsafe = build_nostd_and_check(
        "harness_uses_unsafe",
        "/// Reads unchecked.\npub fn get(t: &[u8]) -> u8 { unsafe { *t.get_unchecked(0) } }",
    )
    .unwrap_err();
    assert!(uses_unsafe.contains("unsafe"), "{uses_unsafe}");
    let undocumented = build_nostd_and_check("harness_undocumented", "pub fn f() {}").unwrap_err();
    assert!(
        undocumented.contains("missing documentation"),
        "{undocumented}"
    );
}

/// With `defmt-trace` on and `DEFMT_LOG=trace`, the trace macro really emits defmt
/// calls, still builds under `forbid(unsafe_code)`, and adds no panic path.
#[test]
fn defmt_trace_builds_under_forbid_unsafe_and_stays_panic_free() {
    let source = r#"
::detent::__derive_extras! {
    /// States.
    #[derive(Clone, Copy, Debug, PartialEq, Eq)]
    #[repr(u8)]
    pub enum State {
        /// Off.
        Off = 0,
        /// On.
        On = 1,
    }
    /// Events.
    #[derive(Clone, Copy, Debug, PartialEq, Eq)]
    #[repr(u8)]
    pub enum Event {
        /// Toggle.
        Toggle = 0,
    }
}

/// Steps with one trace line per transition.
#[inline(never)]
pub fn step(state: State, event: Event) -> State {
    let to = match state {
        State::Off => State::On,
        State::On => State::Off,
    };
    ::detent::__trace_transition!("Toggle", state, event, to);
    to
}
"#;
    let options = NoStdOptions {
        detent_features: vec!["defmt-trace".to_owned(), "serde".to_owned()],
        env: vec![("DEFMT_LOG".to_owned(), "trace".to_owned())],
        ..NoStdOptions::default()
    };
    let report = build_nostd_and_check_with("harness_defmt_trace", source, &options).unwrap();
    assert!(
        report.asm.contains("acquire_and_header") && report.asm.contains("_defmt_release"),
        "the trace line was compiled in"
    );
    assert!(report.defines("step"), "{:?}", report.functions());
    report.check_entry_points(&["step"]).unwrap();
    // defmt's derive fills the never-called `Format::format` with `unreachable!()`:
    // the whole-crate scan sees that panic, the entry-point check rightly does not.
    let panicking = report.panicking_functions();
    assert!(
        panicking
            .iter()
            .all(|f| f.contains("defmt::traits::Format>::format")),
        "{}",
        report.summary()
    );
}
