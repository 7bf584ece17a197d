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
}

/// The test's `Hooks`: inputs from the trace step, actions recorded.
#[derive(Default)]
pub struct Recorder {
    inputs: Vec<bool>,
    actions: Vec<usize>,
}

impl Recorder {
    /// Starts a step with these input values.
    pub fn begin(&mut self, inputs: &[bool]) {
        self.inputs = inputs.to_vec();
        self.actions.clear();
    }
    /// Input `i`'s value in this step (false when missing).
    pub fn input(&mut self, i: usize) -> bool {
        self.inputs.get(i).copied().unwrap_or(false)
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
