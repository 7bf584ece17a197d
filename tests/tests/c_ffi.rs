//! The generated C linked into Rust (through the `cc` crate, see `tests/build.rs`):
//! the C machine and the interpreter run the same trace, and state numbers cross the
//! FFI boundary both ways.

// Calls the generated C through its ABI: the one place in the workspace with unsafe code.
#![allow(unsafe_code)]

use detent_compiler::driver::check_source;
use detent_compiler::emit::c::generate_c;
use detent_compiler::model::{EventId, Machine, StateId};
use detent_tests::c_ffi::*;
use detent_tests::gen::Rng;
use detent_tests::workspace_root;
use std::ffi::{c_void, CStr};

fn spec() -> (String, Machine) {
    let path = workspace_root().join("tests/c/specs/bilge_pump.detent");
    let text = std::fs::read_to_string(&path).unwrap();
    let report = check_source("bilge_pump.detent", &text);
    assert!(!report.has_errors());
    let m = report.machines.into_iter().next().unwrap().machine.unwrap();
    (text, m)
}

/// The library the build script compiles must be what `gen c` writes today.
#[test]
fn ffi_files_are_fresh() {
    let (_, m) = spec();
    let files = generate_c(&m, "bilge_pump.detent");
    let dir = workspace_root().join("tests/c/ffi");
    let h = std::fs::read_to_string(dir.join("bilge_pump.h")).unwrap();
    let c = std::fs::read_to_string(dir.join("bilge_pump.c")).unwrap();
    assert!(
        h == files.header && c == files.source,
        "tests/c/ffi is stale: run `detent gen c tests/c/specs/bilge_pump.detent -o tests/c/ffi`"
    );
}

#[derive(Default)]
struct Ctx {
    current_ok: bool,
    actions: Vec<u32>,
}

unsafe extern "C" fn pump_current_ok(ctx: *mut c_void) -> bool {
    // SAFETY: the test passes a `*mut Ctx` as `ctx`.
    unsafe { (*(ctx as *mut Ctx)).current_ok }
}
unsafe extern "C" fn start_timer(ctx: *mut c_void) {
    // SAFETY: as above.
    unsafe { (*(ctx as *mut Ctx)).actions.push(0) }
}
unsafe extern "C" fn log_fault(ctx: *mut c_void) {
    // SAFETY: as above.
    unsafe { (*(ctx as *mut Ctx)).actions.push(1) }
}

const HOOKS: BilgePumpHooks = BilgePumpHooks {
    pump_current_ok: Some(pump_current_ok),
    start_timer: Some(start_timer),
    log_fault: Some(log_fault),
};

fn c_step(m: &mut BilgePumpMachine, ev: u32, ok: bool) -> (i32, BilgePumpOutputs, Vec<u32>) {
    let mut ctx = Ctx {
        current_ok: ok,
        ..Ctx::default()
    };
    let mut out = BilgePumpOutputs::default();
    // SAFETY: every pointer is valid for the call; the hooks match the C prototypes.
    let rc = unsafe {
        bilge_pump_step(
            m,
            ev as i32,
            &HOOKS,
            &mut ctx as *mut Ctx as *mut c_void,
            &mut out,
        )
    };
    (rc, out, ctx.actions)
}

fn c_state_name(s: u32) -> String {
    // SAFETY: the function returns a static NUL-terminated string for any value.
    unsafe { CStr::from_ptr(bilge_pump_state_name(s as i32)) }
        .to_string_lossy()
        .into_owned()
}

#[test]
fn c_and_interpreter_agree_step_by_step_and_share_state_numbers() {
    let (_, m) = spec();
    let mut cm = BilgePumpMachine::default();
    // SAFETY: `cm` is a valid machine.
    unsafe { bilge_pump_init(&mut cm) };
    assert_eq!(u32::from(cm.state), m.start.0);
    let mut rng = Rng::new(6);
    let mut state = m.start;
    let mut visited = vec![false; m.states.len()];
    for step in 0..2000 {
        // Every 100 steps, hand the state across: the Rust side stores a state number
        // (the interpreter's `StateId`) into the C machine's byte, as a restore from
        // flash would.
        if step % 100 == 50 {
            state = StateId(rng.index(m.states.len()) as u32);
            cm.state = state.0 as u8;
        }
        let ev = rng.index(m.events.len()) as u32;
        let ok = rng.chance(0.7);
        let want = m.step(state, EventId(ev), &[ok]);
        let (rc, out, actions) = c_step(&mut cm, ev, ok);
        assert_eq!(rc, if want.handled() { 0 } else { 1 }, "step {step}");
        // The byte C stored is the interpreter's state number, and names agree.
        assert_eq!(u32::from(cm.state), want.to.0, "step {step}");
        assert_eq!(
            c_state_name(u32::from(cm.state)),
            m.state_name(StateId(u32::from(cm.state)))
        );
        let outs = want.outputs();
        let high = |name: &str| outs.iter().any(|o| m.outputs[o.index()].name == name);
        assert_eq!(
            out,
            BilgePumpOutputs {
                pump: high("pump"),
                alarm: high("alarm")
            },
            "step {step}"
        );
        assert_eq!(
            actions,
            want.actions.iter().map(|a| a.0).collect::<Vec<_>>()
        );
        state = want.to;
        visited[state.index()] = true;
    }
    assert!(
        visited.iter().all(|&v| v),
        "the trace visits every state: {visited:?}"
    );
    // A byte that is no state is refused without running anything.
    cm.state = m.states.len() as u8;
    let (rc, out, actions) = c_step(&mut cm, 0, true);
    assert_eq!(
        (rc, out, actions.len()),
        (-1, BilgePumpOutputs::default(), 0)
    );
    assert_eq!(c_state_name(99), "?");
    // SAFETY: as for state names.
    let ev = unsafe { CStr::from_ptr(bilge_pump_event_name(2)) };
    assert_eq!(ev.to_str().unwrap(), m.event_name(EventId(2)));
}
