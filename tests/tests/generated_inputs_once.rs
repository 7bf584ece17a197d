//! Generated Rust reads each input hook at most once per step, only when a test it
//! evaluates needs it, and in the order the interpreter reads it (LANGUAGE.md,
//! "Inputs"; DESIGN.md, "Generated Rust").
//!
//! The hooks here are hostile: every input flips its value on every call, as a
//! bouncing pin or a register cleared on read can. A back end that reads an input
//! twice in a step sees two values and can choose a rule the interpreter does not
//! choose, or none at all in a step the checker proved covered. Each machine is built
//! in both dispatch styles through the file form of the macro (which emits what `gen
//! rust` writes) and stepped over random events next to
//! [`Machine::step_reading`](detent_compiler::model::Machine::step_reading), whose
//! reads go through the same flipping levels: at every step the inputs read (which,
//! in what order), the state, the outputs, the actions and the rejection must agree.
//!
//! Machines: `examples/debounce.detent` and `examples/frame_parser.detent` (one input
//! per test, the other choice `else`), `examples/greenhouse.detent` and
//! `examples/locker.detent` (an input read by one test and reused by the next), and
//! `tests/specs/sampled_guards.detent` (inputs that a later test may or may not have
//! read already, depending on the path).

use detent_compiler::driver::check_source;
use detent_compiler::model::{EventId, InputId, Machine, StateId};
use detent_compiler::rng::Rng;

/// Input hooks whose value flips on every call, recording every call; actions
/// recorded in order.
#[derive(Clone, Debug, Default)]
struct Flipping {
    /// The value input `i` returns on its next call.
    levels: Vec<bool>,
    /// The inputs read in this step, in call order.
    reads: Vec<usize>,
    /// The actions run in this step, in order.
    actions: Vec<usize>,
}

impl Flipping {
    fn new(levels: Vec<bool>) -> Self {
        Flipping {
            levels,
            ..Flipping::default()
        }
    }

    fn read(&mut self, i: usize) -> bool {
        self.reads.push(i);
        let v = self.levels[i];
        self.levels[i] = !v;
        v
    }

    fn act(&mut self, a: usize) {
        self.actions.push(a);
    }
}

/// What one step of a generated machine showed.
#[derive(Clone, Debug, PartialEq, Eq)]
struct Seen {
    reads: Vec<usize>,
    state: usize,
    outputs: Vec<bool>,
    actions: Vec<usize>,
    rejected: bool,
}

/// `impl Hooks for Flipping` for one generated module, and a stepping function
/// `fn(state, event number, hooks) -> (new state, outputs, rejected)`.
macro_rules! form {
    ($module:ident, inputs: [$($input:ident = $i:expr),*], actions: [$($action:ident = $a:expr),*], outputs: [$($output:ident),*]) => {
        impl $module::Hooks for Flipping {
            $(fn $input(&mut self) -> bool { self.read($i) })*
            $(fn $action(&mut self) { self.act($a) })*
        }

        impl Stepper for $module::Machine {
            fn step_number(&mut self, event: usize, hooks: &mut Flipping) -> (Vec<bool>, bool) {
                let (o, rejected) = match self.step($module::Event::ALL[event], hooks) {
                    Ok(o) => (o, false),
                    Err(::detent::Rejected) => (self.outputs(), true),
                };
                let _ = &o;
                (vec![$(o.$output),*], rejected)
            }
            fn state_number(&self) -> usize {
                self.state() as usize
            }
        }
    };
}

/// A generated machine, stepped by event number.
trait Stepper {
    fn step_number(&mut self, event: usize, hooks: &mut Flipping) -> (Vec<bool>, bool);
    fn state_number(&self) -> usize;
}

#[detent::machine_file(file = "../examples/debounce.detent", dispatch = "table")]
mod debounce_table {}
#[detent::machine_file(file = "../examples/debounce.detent", dispatch = "match")]
mod debounce_match {}
form!(debounce_table, inputs: [raw = 0], actions: [on_press = 0, on_release = 1], outputs: [pressed, press_edge]);
form!(debounce_match, inputs: [raw = 0], actions: [on_press = 0, on_release = 1], outputs: [pressed, press_edge]);

#[detent::machine_file(file = "../examples/frame_parser.detent", dispatch = "table")]
mod frame_parser_table {}
#[detent::machine_file(file = "../examples/frame_parser.detent", dispatch = "match")]
mod frame_parser_match {}
form!(frame_parser_table,
    inputs: [length_ok = 0, last_byte = 1, sum_ok = 2],
    actions: [reset_frame = 0, store_length = 1, store_byte = 2, deliver_frame = 3,
              count_bad_length = 4, count_bad_sum = 5, count_gap = 6, count_resync = 7],
    outputs: [receiving, frame_ready]);
form!(frame_parser_match,
    inputs: [length_ok = 0, last_byte = 1, sum_ok = 2],
    actions: [reset_frame = 0, store_length = 1, store_byte = 2, deliver_frame = 3,
              count_bad_length = 4, count_bad_sum = 5, count_gap = 6, count_resync = 7],
    outputs: [receiving, frame_ready]);

#[detent::machine_file(file = "../examples/greenhouse.detent", dispatch = "table")]
mod greenhouse_table {}
#[detent::machine_file(file = "../examples/greenhouse.detent", dispatch = "match")]
mod greenhouse_match {}
form!(greenhouse_table,
    inputs: [too_cold = 0, too_hot = 1, raining = 2],
    actions: [log_wind = 0, log_rain = 1],
    outputs: [heater, vent_open, circulation_fan]);
form!(greenhouse_match,
    inputs: [too_cold = 0, too_hot = 1, raining = 2],
    actions: [log_wind = 0, log_rain = 1],
    outputs: [heater, vent_open, circulation_fan]);

#[detent::machine_file(file = "../examples/locker.detent", dispatch = "table")]
mod locker_table {}
#[detent::machine_file(file = "../examples/locker.detent", dispatch = "match")]
mod locker_match {}
form!(locker_table,
    inputs: [code_matches = 0, door_closed = 1],
    actions: [buffer_digit = 0, clear_buffer = 1, beep_error = 2, release_bolt = 3,
              engage_bolt = 4],
    outputs: [bolt_released, keypad_lit, lockout_lamp]);
form!(locker_match,
    inputs: [code_matches = 0, door_closed = 1],
    actions: [buffer_digit = 0, clear_buffer = 1, beep_error = 2, release_bolt = 3,
              engage_bolt = 4],
    outputs: [bolt_released, keypad_lit, lockout_lamp]);

#[detent::machine_file(file = "specs/sampled_guards.detent", dispatch = "table")]
mod sampled_table {}
#[detent::machine_file(file = "specs/sampled_guards.detent", dispatch = "match")]
mod sampled_match {}
form!(sampled_table, inputs: [a = 0, b = 1, c = 2], actions: [x = 0, y = 1, z = 2], outputs: [hit]);
form!(sampled_match, inputs: [a = 0, b = 1, c = 2], actions: [x = 0, y = 1, z = 2], outputs: [hit]);

#[detent::machine_file(file = "specs/timed_sampled.detent", dispatch = "table")]
mod timed_table {}
#[detent::machine_file(file = "specs/timed_sampled.detent", dispatch = "match")]
mod timed_match {}
form!(timed_table, inputs: [a = 0, b = 1], actions: [x = 0, y = 1], outputs: [busy]);
form!(timed_match, inputs: [a = 0, b = 1], actions: [x = 0, y = 1], outputs: [busy]);

/// The resolved machine of a spec, for the interpreter.
fn model(name: &str, text: &str) -> Machine {
    let report = check_source(name, text);
    assert!(!report.has_errors(), "{name} has errors");
    report
        .machines
        .into_iter()
        .find_map(|m| m.machine)
        .expect("one machine")
}

/// Steps `generated` and the interpreter side by side over `steps` random events with
/// flipping inputs (each side flips its own copy of the same levels), and returns the
/// number of input-hook calls the generated code made. Fails at the first step where
/// the two differ in the inputs read (set and order), state, outputs, actions or
/// rejection, or where an input was read twice.
fn agree(m: &Machine, generated: &mut dyn Stepper, seed: u64, steps: usize) -> usize {
    let mut rng = Rng::from_state(seed);
    let n_inputs = m.inputs.len();
    let levels: Vec<bool> = (0..n_inputs).map(|_| rng.next_u64() & 1 == 1).collect();
    let mut hooks = Flipping::new(levels.clone());
    let mut reference = Flipping::new(levels);
    let mut config = m.start_config();
    let mut calls = 0;
    for step in 1..=steps {
        // Now and then the inputs take new levels (on both sides alike).
        if rng.next_u64().is_multiple_of(4) {
            let fresh: Vec<bool> = (0..n_inputs).map(|_| rng.next_u64() & 1 == 1).collect();
            hooks.levels.clone_from(&fresh);
            reference.levels = fresh;
        }
        let event = (rng.next_u64() % m.events.len() as u64) as usize;
        hooks.reads.clear();
        hooks.actions.clear();
        let (outputs, rejected) = generated.step_number(event, &mut hooks);
        let seen = Seen {
            reads: hooks.reads.clone(),
            state: generated.state_number(),
            outputs,
            actions: hooks.actions.clone(),
            rejected,
        };
        calls += seen.reads.len();

        let r = m.step_config_reading(
            &mut config,
            EventId::from_index(event),
            &mut |i: InputId| reference.read(i.index()),
        );
        let high = r.outputs();
        let expected = Seen {
            reads: r.inputs_read.iter().map(|i| i.index()).collect(),
            state: r.to.index(),
            outputs: (0..m.outputs.len())
                .map(|o| high.iter().any(|h| h.index() == o))
                .collect(),
            actions: r.actions.iter().map(|a| a.index()).collect(),
            rejected: matches!(r.outcome, detent_compiler::interp::Outcome::Rejected),
        };
        let mut once = seen.reads.clone();
        once.sort_unstable();
        once.dedup();
        assert_eq!(
            once.len(),
            seen.reads.len(),
            "{}: step {step} (event {}) read an input twice: {:?}",
            m.name,
            m.events[event].name,
            seen.reads
        );
        assert_eq!(
            seen,
            expected,
            "{}: step {step}, event {} in state {}: generated (left) and interpreter (right) differ",
            m.name,
            m.events[event].name,
            m.states[r.from.index()].name
        );
        assert_eq!(StateId::from_index(seen.state), config.state);
    }
    calls
}

/// A generated machine in its start state.
type Start = fn() -> Box<dyn Stepper>;

/// Both styles of one machine against the interpreter; each must read some input
/// (a test that never reads proves nothing).
fn both_styles(name: &str, text: &str, table: Start, matched: Start) {
    let m = model(name, text);
    for (style, start) in [("table", table), ("match", matched)] {
        for seed in 0..4u64 {
            let calls = agree(&m, &mut *start(), 0x5EED_0000 + seed, 2_000);
            assert!(calls > 0, "{name} ({style}): no input was read");
        }
    }
}

#[test]
fn debounce_reads_raw_once_per_sample() {
    both_styles(
        "debounce.detent",
        include_str!("../../examples/debounce.detent"),
        || Box::new(debounce_table::Machine::new()),
        || Box::new(debounce_match::Machine::new()),
    );
}

#[test]
fn frame_parser_reads_each_flag_once_per_byte() {
    both_styles(
        "frame_parser.detent",
        include_str!("../../examples/frame_parser.detent"),
        || Box::new(frame_parser_table::Machine::new()),
        || Box::new(frame_parser_match::Machine::new()),
    );
}

#[test]
fn greenhouse_reuses_a_reading_in_later_tests() {
    both_styles(
        "greenhouse.detent",
        include_str!("../../examples/greenhouse.detent"),
        || Box::new(greenhouse_table::Machine::new()),
        || Box::new(greenhouse_match::Machine::new()),
    );
}

#[test]
fn locker_reads_the_code_check_once() {
    both_styles(
        "locker.detent",
        include_str!("../../examples/locker.detent"),
        || Box::new(locker_table::Machine::new()),
        || Box::new(locker_match::Machine::new()),
    );
}

#[test]
fn inputs_read_on_some_paths_only_are_read_once() {
    both_styles(
        "sampled_guards.detent",
        include_str!("../specs/sampled_guards.detent"),
        || Box::new(sampled_table::Machine::new()),
        || Box::new(sampled_match::Machine::new()),
    );
}

#[test]
fn timeouts_test_due_first_and_read_each_input_once() {
    both_styles(
        "timed_sampled.detent",
        include_str!("../specs/timed_sampled.detent"),
        || Box::new(timed_table::Machine::new()),
        || Box::new(timed_match::Machine::new()),
    );
}

#[detent::machine_file(file = "specs/keypad_counted.detent", dispatch = "table")]
mod keypad_table {}
#[detent::machine_file(file = "specs/keypad_counted.detent", dispatch = "match")]
mod keypad_match {}
form!(keypad_table, inputs: [code_ok = 0], actions: [beep = 0, clear = 1], outputs: [unlocked, locked_out]);
form!(keypad_match, inputs: [code_ok = 0], actions: [beep = 0, clear = 1], outputs: [unlocked, locked_out]);

/// Counter comparisons beside an input in every test of a cell (`code_ok && uses <
/// 1000`, `!code_ok && strikes < 2`, ..): the input is read once, before the
/// comparison, as the interpreter reads it, and the counters steer the choice.
#[test]
fn counter_comparisons_read_each_input_once() {
    both_styles(
        "keypad_counted.detent",
        include_str!("../specs/keypad_counted.detent"),
        || Box::new(keypad_table::Machine::new()),
        || Box::new(keypad_match::Machine::new()),
    );
}
