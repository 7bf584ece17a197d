//! The dispatch benchmark's machines: three sizes (`small`: the 4-state locker of
//! `examples/`, `medium`: 50 states, `large`: 1,000 states, both random specs from a
//! fixed seed), each as detent's table-style `step`, its match-style `step` and a
//! hand-written `match` baseline (see `build.rs` and `build/handwritten.rs`).
//!
//! Every form implements [`Variant`], so the benchmark (`benches/dispatch.rs`) and the
//! agreement test (`tests/agree.rs`) drive them the same way. The measured function of
//! each form is its out-of-line `step_entry` (`<size>::<form>::step_entry`), which
//! `scripts/dispatch_size.sh` also sizes in the release object.

#![forbid(unsafe_code)]

use detent_compiler::rng::Rng;

/// Events per timed pass of the benchmark: long enough that the branch predictor
/// cannot learn the sequence.
pub const BENCH_EVENTS: usize = 16_384;

/// Seed of the benchmark's event buffers ([`random_events`]).
pub const BENCH_SEED: u64 = 0xD15_BA7C;

/// The benchmark's hooks: inputs are bits of `levels`, each action folds its number
/// into `acc` (order-sensitive, so the actions cannot be dropped or reordered).
#[derive(Clone, Copy, Debug, Default)]
pub struct Host {
    /// Input `i` is bit `i`.
    pub levels: u32,
    /// A checksum of the actions run so far.
    pub acc: u32,
}

impl Host {
    /// Input number `i`.
    #[inline(always)]
    pub fn input(&self, i: u32) -> bool {
        (self.levels >> i) & 1 != 0
    }

    /// Runs action number `i`.
    #[inline(always)]
    pub fn action(&mut self, i: u32) {
        self.acc = self.acc.rotate_left(5) ^ (i + 1);
    }
}

/// The tests' hooks: inputs are bits of `levels`, actions are recorded in order.
#[derive(Clone, Debug, Default)]
pub struct Recorder {
    /// Input `i` is bit `i`.
    pub levels: u32,
    /// The actions run, by number.
    pub actions: Vec<u32>,
}

impl Recorder {
    /// Input number `i`.
    pub fn input(&self, i: u32) -> bool {
        (self.levels >> i) & 1 != 0
    }

    /// Records action number `i`.
    pub fn action(&mut self, i: u32) {
        self.actions.push(i);
    }
}

/// One form of one machine, as the benchmark and the tests drive it.
pub trait Variant {
    /// The machine type.
    type Machine;
    /// The event type.
    type Event: Copy;
    /// What `step` returns.
    type Out;
    /// `"table"`, `"matched"` or `"hand"`.
    const FORM: &'static str;
    /// A machine in its start state.
    fn start() -> Self::Machine;
    /// Event number `i` (declaration order).
    fn event(i: usize) -> Self::Event;
    /// One step through the out-of-line `step_entry` with the benchmark's hooks.
    fn entry(machine: &mut Self::Machine, event: Self::Event, host: &mut Host) -> Self::Out;
    /// The outputs as bits (output `i` is bit `i`), `None` when the step was rejected.
    fn observe(out: &Self::Out) -> Option<u64>;
    /// One step with recording hooks, observed.
    fn step_recorded(
        machine: &mut Self::Machine,
        event: Self::Event,
        rec: &mut Recorder,
    ) -> Option<u64>;
    /// The current state's number (declaration order).
    fn state(machine: &Self::Machine) -> usize;
}

/// A seeded random sequence of `(event number, input levels)`: events uniform over
/// `0..events`, each of the `inputs` levels a fair coin (the workspace's one generator,
/// [`Rng::events`], so the same seed gives the same buffer everywhere).
pub fn random_events(seed: u64, events: usize, inputs: usize, len: usize) -> Vec<(usize, u32)> {
    Rng::new(seed).events(events, inputs, len)
}

/// A buffer of [`random_events`] in one variant's event type.
pub fn event_buffer<V: Variant>(events: &[(usize, u32)]) -> Vec<(V::Event, u8)> {
    events
        .iter()
        .map(|&(e, levels)| (V::event(e), levels as u8))
        .collect()
}

/// Runs one variant over a buffer from its start state, black-boxing every result;
/// returns the action checksum.
#[inline(always)]
pub fn run<V: Variant>(buffer: &[(V::Event, u8)]) -> u32 {
    let mut machine = V::start();
    let mut host = Host::default();
    for &(event, levels) in buffer {
        host.levels = u32::from(levels);
        std::hint::black_box(V::entry(&mut machine, event, &mut host));
    }
    std::hint::black_box(&machine);
    host.acc
}

/// Machines in the bank of [`run_bank`].
pub const BANK: usize = 8;

/// Runs a bank of [`BANK`] machines of one form (a row of lockers, one machine each)
/// over a buffer, event `k` going to machine `k % BANK`, black-boxing every result;
/// returns the action checksum. Unlike [`run`], one step does not wait for the state
/// the step before it wrote: the steps of different machines are independent, as in
/// firmware that keeps one machine per channel.
#[inline(always)]
pub fn run_bank<V: Variant>(buffer: &[(V::Event, u8)]) -> u32 {
    let mut machines: [V::Machine; BANK] = std::array::from_fn(|_| V::start());
    let mut host = Host::default();
    for (k, &(event, levels)) in buffer.iter().enumerate() {
        host.levels = u32::from(levels);
        std::hint::black_box(V::entry(&mut machines[k % BANK], event, &mut host));
    }
    std::hint::black_box(&machines);
    host.acc
}

include!(concat!(env!("OUT_DIR"), "/machines.rs"));
