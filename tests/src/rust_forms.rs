//! The types the generated Rust differential cases use (`tests/build.rs` writes them into
//! `OUT_DIR/differential.rs`: every random spec in `gen rust` table and match styles, the
//! inline macro and the file-form macro, each with a runner). A test file that
//! `include!`s them imports [`Observed`] and [`Recorder`] at its crate root and [`Case`]
//! where the include sits.

/// What one step shows to the host.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Observed {
    /// State number after the step.
    pub state: usize,
    /// Every output, in declaration order.
    pub outputs: Vec<bool>,
    /// `Err(Rejected)` from `step`.
    pub rejected: bool,
    /// Action numbers in the order they ran.
    pub actions: Vec<usize>,
    /// Input numbers in the order the step called their hooks, one entry per call.
    pub reads: Vec<usize>,
    /// The timers after the step, in timer order (empty without timers).
    pub timers: Vec<u32>,
    /// `next_timeout` after the step (`None` without timers).
    pub next_timeout: Option<u32>,
    /// The counters after the step, in declaration order (empty without counters).
    pub counters: Vec<u16>,
}

/// The test's `Hooks`: hostile inputs, actions recorded.
///
/// Input `i` reads the trace step's value on its first call in a step; every further
/// call in the same step returns the opposite of the call before, as a bouncing pin or
/// a flag cleared on read would. Every call is logged, so a step that reads an input
/// twice shows it (and, reading two different values, may take a step the interpreter
/// does not).
#[derive(Default)]
pub struct Recorder {
    inputs: Vec<bool>,
    actions: Vec<usize>,
    reads: Vec<usize>,
}

impl Recorder {
    /// Starts a step with these input values (the value of each input's first read).
    pub fn begin(&mut self, inputs: &[bool]) {
        self.inputs = inputs.to_vec();
        self.actions.clear();
        self.reads.clear();
    }
    /// Input `i`'s value for this call: the step's value (false when missing) on the
    /// first call, flipped on every further call in the same step.
    pub fn input(&mut self, i: usize) -> bool {
        let earlier = self.reads.iter().filter(|&&r| r == i).count();
        self.reads.push(i);
        self.inputs.get(i).copied().unwrap_or(false) ^ (earlier % 2 == 1)
    }
    /// The input numbers read in this step, one entry per call, in order.
    pub fn take_reads(&mut self) -> Vec<usize> {
        std::mem::take(&mut self.reads)
    }
    /// Records that action `i` ran.
    pub fn action(&mut self, i: usize) {
        self.actions.push(i);
    }
    /// The actions of this step, in order.
    pub fn take(&mut self) -> Vec<usize> {
        std::mem::take(&mut self.actions)
    }
}

/// Runs one form of a machine over a trace of (event number, input values); the first
/// entry is the start state (step 0).
pub type Runner = fn(&[(usize, Vec<bool>)]) -> Vec<Observed>;

/// A generated machine and its runners.
pub struct Case {
    /// The case's name (`s<seed>`).
    pub name: &'static str,
    /// The spec text.
    pub spec: &'static str,
    /// (form, runner) for every form.
    pub runners: &'static [(&'static str, Runner)],
}
