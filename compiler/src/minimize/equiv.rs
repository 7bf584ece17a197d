//! Equivalence of two machines, with a shortest distinguishing input sequence.
//!
//! **Method.** Both machines are encoded over one alphabet ([`super::encode`]): the
//! union of their event classes, split into the atoms of both machines' guards (the
//! second machine's names are mapped to the first's by name, so declaration order may
//! differ). The product machine is searched breadth-first from the pair of start states
//! ([`super::partition::distinguish`]): step 0 compares the start states' Moore
//! outputs, and a step from a pair (p, q) on a symbol compares what the two machines
//! observably do (rejected or not, Mealy outputs, Moore outputs after the step, the
//! whole action sequence). The first pair of steps that differs ends the search; since
//! the search is breadth-first, its word is a shortest distinguishing sequence. The
//! state sets and names of the two machines play no part. Cost O(k n_a n_b) in the
//! worst case for k symbols, memory proportional to the pairs visited.
//!
//! Machines with timers are encoded over their configurations (state and timer values,
//! [`super::encode::encode_configs`]) and the product is searched from the pair of
//! start configurations, so a witness may need thousands of time-base events (printed
//! as `Tick *N`).
//!
//! The witness is then replayed through the reference interpreter on both machines to
//! report what each did at the step where they disagree.

use super::encode::{encode, encode_configs, named_inputs, Alphabet, Encoded, Interner, Side};
use super::partition::{distinguish, Observed};
use crate::interp::{Outcome, StepResult};
use crate::model::{Item, Machine, StateId};

/// Declarations that differ between two machines, by kind.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("{}", self.describe())]
pub struct DeclMismatch {
    /// One entry per kind that differs: (kind, names only in A, names only in B).
    pub diffs: Vec<(&'static str, Vec<String>, Vec<String>)>,
}

impl DeclMismatch {
    /// The message: a headline, then one line per kind that differs.
    fn describe(&self) -> String {
        let mut out =
            "the machines do not declare the same events, inputs, outputs and actions".to_string();
        for (kind, a, b) in &self.diffs {
            let list = |v: &[String]| {
                if v.is_empty() {
                    "none".to_string()
                } else {
                    v.iter()
                        .map(|n| format!("`{n}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                }
            };
            out.push_str(&format!(
                "\n  {kind}: only in A: {}; only in B: {}",
                list(a),
                list(b)
            ));
        }
        out
    }
}

/// Compares the declarations by name.
pub fn compare_declarations(a: &Machine, b: &Machine) -> Result<(), DeclMismatch> {
    fn diff(x: &[Item], y: &[Item]) -> (Vec<String>, Vec<String>) {
        let only = |p: &[Item], q: &[Item]| {
            p.iter()
                .filter(|i| !q.iter().any(|j| j.name == i.name))
                .map(|i| i.name.clone())
                .collect::<Vec<_>>()
        };
        (only(x, y), only(y, x))
    }
    let mut diffs = Vec::new();
    for (kind, x, y) in [
        ("events", &a.events, &b.events),
        ("inputs", &a.inputs, &b.inputs),
        ("outputs", &a.outputs, &b.outputs),
        ("actions", &a.actions, &b.actions),
    ] {
        let (oa, ob) = diff(x, y);
        if !oa.is_empty() || !ob.is_empty() {
            diffs.push((kind, oa, ob));
        }
    }
    if diffs.is_empty() {
        Ok(())
    } else {
        Err(DeclMismatch { diffs })
    }
}

/// One step of a distinguishing sequence.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct WitnessStep {
    /// The event's name.
    pub event: String,
    /// Every input's value, in the first machine's declaration order.
    pub inputs: Vec<(String, bool)>,
}

/// What one machine did at the step where the two disagree.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct StepView {
    /// State before the step (at step 0: the start state).
    pub from: String,
    /// State after the step.
    pub to: String,
    /// `fired`, `ignored` or `rejected` (`start` at step 0).
    pub outcome: &'static str,
    /// Mealy outputs of the step.
    pub mealy: Vec<String>,
    /// Moore outputs after the step.
    pub moore: Vec<String>,
    /// Actions the step ran, in order.
    pub actions: Vec<String>,
}

/// Two machines that behave differently.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Difference {
    /// A shortest input sequence after which they differ (empty: the start states'
    /// Moore outputs already differ).
    pub witness: Vec<WitnessStep>,
    /// The step where they disagree: `witness.len()` (0 for the start states).
    pub step: usize,
    /// What the first machine did there.
    pub a: StepView,
    /// What the second machine did there.
    pub b: StepView,
}

fn view_start(m: &Machine, s: StateId) -> StepView {
    StepView {
        from: m.state_name(s).to_string(),
        to: m.state_name(s).to_string(),
        outcome: "start",
        mealy: Vec::new(),
        moore: m.states[s.index()]
            .moore
            .iter()
            .map(|o| m.outputs[o.index()].name.clone())
            .collect(),
        actions: Vec::new(),
    }
}

fn view_step(m: &Machine, r: &StepResult) -> StepView {
    let out = |ids: &[crate::model::OutputId]| {
        ids.iter()
            .map(|o| m.outputs[o.index()].name.clone())
            .collect()
    };
    StepView {
        from: m.state_name(r.from).to_string(),
        to: m.state_name(r.to).to_string(),
        outcome: match r.outcome {
            Outcome::Fired(_) => "fired",
            Outcome::Ignored => "ignored",
            Outcome::Rejected => "rejected",
        },
        mealy: out(&r.mealy),
        moore: out(&r.moore),
        actions: r
            .actions
            .iter()
            .map(|a| m.actions[a.index()].name.clone())
            .collect(),
    }
}

/// Why two machines could not be compared.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum EquivError {
    /// Their declarations differ.
    #[error(transparent)]
    Decl(#[from] DeclMismatch),
    /// A machine with timers has more configurations than exact analysis explores.
    #[error(transparent)]
    Limit(#[from] crate::configs::ConfigLimit),
}

/// Shortest distinguishing word between two machines with timers from their start
/// configurations, by breadth-first search over pairs of configurations (the product
/// of their configuration encodings); `None` when equivalent.
fn search_configs(
    sa: &Side<'_>,
    sb: &Side<'_>,
    alphabet: &Alphabet,
) -> Result<Option<Vec<u32>>, crate::configs::ConfigLimit> {
    let mut interner = Interner::default();
    let limit = crate::configs::MAX_CONFIGS;
    let ea = encode_configs(sa, alphabet, &mut interner, &[sa.m.start_config()], limit)?.enc;
    let eb = encode_configs(sb, alphabet, &mut interner, &[sb.m.start_config()], limit)?.enc;
    Ok(search_encoded(&ea, 0, &eb, 0, alphabet.symbols.len()))
}

fn search_encoded(
    ea: &Encoded,
    start_a: u32,
    eb: &Encoded,
    start_b: u32,
    k: usize,
) -> Option<Vec<u32>> {
    let oa = Observed {
        dfa: &ea.dfa,
        start: start_a,
        state_label: |s: u32| ea.moore[s as usize] as u64,
        step_label: |s: u32, x: u32| ea.obs[s as usize * k + x as usize] as u64,
    };
    let ob = Observed {
        dfa: &eb.dfa,
        start: start_b,
        state_label: |s: u32| eb.moore[s as usize] as u64,
        step_label: |s: u32, x: u32| eb.obs[s as usize * k + x as usize] as u64,
    };
    match distinguish(&oa, &ob) {
        Ok(w) => w,
        Err(e) => panic!("internal error: product search failed: {e}"),
    }
}

/// Shortest distinguishing word between two (machine, start state) sides that share
/// `alphabet`, as symbol indices; `None` when equivalent.
fn search(
    sa: &Side<'_>,
    start_a: StateId,
    sb: &Side<'_>,
    start_b: StateId,
    alphabet: &Alphabet,
) -> Option<Vec<u32>> {
    let mut interner = Interner::default();
    let ea = encode(sa, alphabet, &mut interner);
    let eb = encode(sb, alphabet, &mut interner);
    // Both encodings come from the same alphabet and valid machines, so the search
    // cannot fail on shape; treat a failure as "no witness found" would hide bugs, so
    // surface it as a panic with context.
    search_encoded(&ea, start_a.0, &eb, start_b.0, alphabet.symbols.len())
}

fn witness_of(reference: &Machine, alphabet: &Alphabet, word: &[u32]) -> Vec<WitnessStep> {
    word.iter()
        .map(|&x| {
            let sym = &alphabet.symbols[x as usize];
            WitnessStep {
                event: reference.event_name(sym.event).to_string(),
                inputs: named_inputs(reference, &sym.inputs),
            }
        })
        .collect()
}

/// Compares two machines from their start states. `Ok(None)`: equivalent;
/// `Ok(Some(d))`: a shortest distinguishing sequence and what each machine did where
/// they disagree; `Err`: their declarations differ (by name; order may differ).
///
/// Machines with timers are compared over configurations: breadth first over pairs of
/// configurations from the two start configurations, so the witness is shortest in
/// steps (time-base events included); `Err(Limit)` past
/// [`crate::configs::MAX_CONFIGS`] configurations of either machine.
pub fn equiv(a: &Machine, b: &Machine) -> Result<Option<Difference>, EquivError> {
    compare_declarations(a, b)?;
    let sa = Side::reference(a);
    let sb = Side::by_name(a, b).ok_or_else(|| DeclMismatch {
        // Same names but different counts: duplicated names cannot occur in resolved
        // machines, so this only guards against misuse.
        diffs: vec![("declarations", Vec::new(), Vec::new())],
    })?;
    let alphabet = Alphabet::build(&[sa.clone(), sb.clone()]);
    let found = if a.has_configs() || b.has_configs() {
        search_configs(&sa, &sb, &alphabet)?
    } else {
        search(&sa, a.start, &sb, b.start, &alphabet)
    };
    let Some(word) = found else {
        return Ok(None);
    };
    let witness = witness_of(a, &alphabet, &word);
    if word.is_empty() {
        return Ok(Some(Difference {
            witness,
            step: 0,
            a: view_start(a, a.start),
            b: view_start(b, b.start),
        }));
    }
    let (mut pa, mut pb) = (a.start_config(), b.start_config());
    let mut last = None;
    for &x in &word {
        let sym = &alphabet.symbols[x as usize];
        let ra = a.step_config(
            &mut pa,
            sa.event_of_ref[sym.event.index()],
            &sa.local_inputs(&sym.inputs),
        );
        let rb = b.step_config(
            &mut pb,
            sb.event_of_ref[sym.event.index()],
            &sb.local_inputs(&sym.inputs),
        );
        last = Some((ra, rb));
    }
    let (ra, rb) = last.expect("word is not empty");
    Ok(Some(Difference {
        step: word.len(),
        witness,
        a: view_step(a, &ra),
        b: view_step(b, &rb),
    }))
}

/// A shortest input sequence that tells two states of one machine apart, or `None`
/// when they are equivalent (the same relation [`super::minimize`] computes).
pub fn distinguish_states(m: &Machine, s: StateId, t: StateId) -> Option<Vec<WitnessStep>> {
    let side = Side::reference(m);
    let alphabet = Alphabet::build(std::slice::from_ref(&side));
    let word = search(&side, s, &side, t, &alphabet)?;
    Some(witness_of(m, &alphabet, &word))
}
