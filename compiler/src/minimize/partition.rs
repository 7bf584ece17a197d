//! Partition refinement over a complete deterministic transition system.
//!
//! This is the machine-independent core of detent's minimizer. A [`Dfa`] is a complete
//! transition table over dense ids (`n_states` states, `n_symbols` symbols) plus an
//! *initial label* per state: states with different labels are never equivalent. The
//! label carries everything observable about a state (for detent machines: Moore outputs,
//! and whatever the encoder folds in); observable per-transition outputs are folded into
//! the symbol alphabet or the labels by the caller.
//!
//! # Method and cost
//!
//! [`hopcroft`] follows J. Hopcroft, "An n log n algorithm for minimizing states in a
//! finite automaton" (1971): it refines the coarsest partition compatible with the
//! initial labels by splitters (block, symbol) until every block is stable.
//!
//! - Time O(k n log n) for `n` states and `k` symbols: each split enqueues only the
//!   smaller half, so a state is in an enqueued splitter at most log2 n times per symbol,
//!   and each time its incoming transitions on that symbol are scanned once.
//! - Memory O(k n): the inverse transitions are built once by a counting sort on the
//!   target, as one `u32` offset per state and one `u32` transition id `s * k + a` per
//!   transition (`u64` only when `n k` exceeds `u32`), so the source and the symbol of
//!   each incoming transition come from one word; the refinable partition takes three
//!   `u32` per state (element, position, block) and three per block (start, end,
//!   marked count), and the worklist holds at most one entry per block. For 1,000,000
//!   states x 8 symbols that is about 60 MB beside the 32 MB input table.
//! - Worklist entries are blocks, not (block, symbol) pairs: every block that enters the
//!   worklist enters it for all symbols at once (the initial blocks bar the largest, and
//!   the smaller half of each split), so one entry per block suffices and the splitters
//!   of a popped block are processed symbol by symbol.
//!
//! # Memory traffic
//!
//! On large random tables nearly every step is a cache (and TLB) miss: the inverse list
//! of a splitter member, then per source its state slot, its block slot and its
//! element slot. Done one source at a time these misses form a chain the processor
//! must wait out in turn. The loop is therefore organized so that independent misses
//! overlap, without changing what is computed:
//!
//! - blocks are popped in *batches* of about 64 members (each block stays its own
//!   splitter: a block snapshotted before an earlier batch member splits it is a union
//!   of current blocks, as valid a splitter and no larger than when it was queued, so
//!   the O(k n log n) bound stands);
//! - the sources of a batch are gathered first, one pass over the members' inverse
//!   lists, bucketed by (block, symbol) into one flat reused buffer (no per-splitter
//!   allocation);
//! - both that pass and the marking pass work in chunks of 32: a first loop issues the
//!   loads of the whole chunk (independent of each other, so their misses overlap), the
//!   second does the dependent work on lines already in L1.
//!
//! Per-state slots (position, block) and per-block slots (start, end, marked) stay
//! arrays of structs: marking reads both fields of a state and all of its block, so
//! one line each. Keeping the transitions in a refinable partition of their own,
//! grouped by (symbol, target block), as A. Valmari and P. Lehtinen do ("Efficient
//! minimization of DFAs with partial transition functions", 2008), would make a
//! splitter's incoming transitions one contiguous range, but every split would then
//! move the transitions into the new block, one random inverse lookup per member of
//! it: the same misses, moved rather than removed, so it is not done here. On random
//! tables at 2^20 states the batched loop is about 3x faster than the direct one; the
//! remaining growth above n log n is memory latency, shown in BENCHMARKS.md against a
//! baseline walk over the same inverse lists.
//!
//! [`moore_refinement`] is the naive baseline, E. F. Moore's iterated refinement
//! ("Gedanken-experiments on sequential machines", 1956): recompute every state's
//! signature (its block and the blocks of its successors) until no block splits.
//! O(k n) per round and up to n rounds, so O(k n^2) in the worst case (a chain that
//! splits one state per round); on random tables it needs only about log n rounds.
//!
//! [`distinguish`] searches the product of two machines breadth-first from a pair of
//! start states and returns a shortest input word after which their observations
//! differ, in O(k n_a n_b) time in the worst case.

use crate::fxhash::FastHash;
use std::collections::{HashMap, HashSet, VecDeque};

/// A complete deterministic transition system with dense ids.
///
/// `delta` is row-major: the successor of state `s` on symbol `a` is
/// `delta[s * n_symbols + a]`. `initial[s]` is an arbitrary label; two states with
/// different labels are never equivalent (this is how outputs are carried).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Dfa {
    /// Number of states; states are `0..n_states`.
    pub n_states: usize,
    /// Number of symbols; symbols are `0..n_symbols`.
    pub n_symbols: usize,
    /// Row-major successor table of length `n_states * n_symbols`.
    pub delta: Vec<u32>,
    /// Initial block label per state (length `n_states`).
    pub initial: Vec<u32>,
}

/// Why a [`Dfa`] is malformed.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum DfaError {
    /// `delta.len()` is not `n_states * n_symbols`.
    #[error("transition table has {actual} entries, expected {expected}")]
    DeltaLength {
        /// The expected length.
        expected: usize,
        /// The actual length.
        actual: usize,
    },
    /// `initial.len()` is not `n_states`.
    #[error("initial labels have {actual} entries, expected {expected}")]
    InitialLength {
        /// The expected length.
        expected: usize,
        /// The actual length.
        actual: usize,
    },
    /// A successor is not a state.
    #[error("state {state} goes to {target} on symbol {symbol}, which is not a state")]
    TargetOutOfRange {
        /// The source state.
        state: u32,
        /// The symbol.
        symbol: u32,
        /// The out-of-range successor.
        target: u32,
    },
    /// More states than dense `u32` ids can name.
    #[error("{0} states do not fit in u32 ids")]
    TooManyStates(usize),
}

impl Dfa {
    /// Checks the table shape and that every successor is a state.
    pub fn validate(&self) -> Result<(), DfaError> {
        if self.n_states >= u32::MAX as usize {
            return Err(DfaError::TooManyStates(self.n_states));
        }
        let expected = self.n_states * self.n_symbols;
        if self.delta.len() != expected {
            return Err(DfaError::DeltaLength {
                expected,
                actual: self.delta.len(),
            });
        }
        if self.initial.len() != self.n_states {
            return Err(DfaError::InitialLength {
                expected: self.n_states,
                actual: self.initial.len(),
            });
        }
        if let Some(i) = self.delta.iter().position(|&t| t as usize >= self.n_states) {
            return Err(DfaError::TargetOutOfRange {
                state: (i / self.n_symbols) as u32,
                symbol: (i % self.n_symbols) as u32,
                target: self.delta[i],
            });
        }
        Ok(())
    }

    /// The successor of `state` on `symbol`.
    #[inline]
    pub fn next(&self, state: u32, symbol: u32) -> u32 {
        self.delta[state as usize * self.n_symbols + symbol as usize]
    }

    fn assert_valid(&self) {
        if let Err(e) = self.validate() {
            panic!("malformed Dfa: {e}");
        }
    }
}

/// A partition of the states: `class_of[s]` is the class of state `s`.
///
/// Classes are numbered canonically, in the order of their first member (the class of
/// state 0 is 0, the next state not in it opens class 1, and so on), so two equal
/// partitions have equal `class_of` vectors.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Partition {
    /// The class of each state.
    pub class_of: Vec<u32>,
    /// The number of classes.
    pub n_classes: usize,
}

impl Partition {
    /// Canonical partition from arbitrary per-state labels (equal labels, same class).
    pub fn from_labels(labels: &[u32]) -> Partition {
        let mut map: HashMap<u32, u32, FastHash> = HashMap::default();
        let class_of = labels
            .iter()
            .map(|&l| {
                let next = map.len() as u32;
                *map.entry(l).or_insert(next)
            })
            .collect();
        Partition {
            class_of,
            n_classes: map.len(),
        }
    }

    /// The classes, in class order, each listing its members in increasing state order.
    pub fn classes(&self) -> Vec<Vec<u32>> {
        let mut out = vec![Vec::new(); self.n_classes];
        for (s, &c) in self.class_of.iter().enumerate() {
            out[c as usize].push(s as u32);
        }
        out
    }
}

/// Hopcroft's partition refinement (1971): the coarsest partition of `dfa`'s states
/// that refines the initial labels and is stable under every symbol, i.e. the state
/// equivalence of the machine. O(k n log n) time, O(k n) memory (see the module doc).
///
/// All states take part, reachable or not; restrict with [`restrict_to_reachable`]
/// first when only the reachable part matters.
///
/// # Panics
///
/// When `dfa` is malformed (see [`Dfa::validate`]).
pub fn hopcroft(dfa: &Dfa) -> Partition {
    hopcroft_with_stats(dfa).0
}

/// Step counts of one [`hopcroft`] run, for benchmarks: they grow as k n log n, while
/// the time per step grows with the working set once it leaves the caches.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct HopcroftStats {
    /// (block, symbol) splitters processed.
    pub splitters: u64,
    /// States marked: incoming transitions scanned over all splitters.
    pub marks: u64,
    /// Block splits.
    pub splits: u64,
}

/// [`hopcroft`], also returning its step counts.
///
/// # Panics
///
/// When `dfa` is malformed (see [`Dfa::validate`]).
pub fn hopcroft_with_stats(dfa: &Dfa) -> (Partition, HopcroftStats) {
    dfa.assert_valid();
    if dfa.n_states == 0 {
        let empty = Partition {
            class_of: Vec::new(),
            n_classes: 0,
        };
        return (empty, HopcroftStats::default());
    }
    // Transition ids `s * k + a` are `u32` whenever they fit (always, below 2^29
    // states at 8 symbols), halving the inverse index against `u64`.
    if dfa.delta.len() <= u32::MAX as usize {
        refine::<u32>(dfa)
    } else {
        refine::<u64>(dfa)
    }
}

/// An unsigned index type for transition ids and offsets into the inverse lists.
trait Index: Copy {
    const ZERO: Self;
    fn from_usize(i: usize) -> Self;
    fn to_usize(self) -> usize;
}

impl Index for u32 {
    const ZERO: Self = 0;
    #[inline(always)]
    fn from_usize(i: usize) -> Self {
        i as u32
    }
    #[inline(always)]
    fn to_usize(self) -> usize {
        self as usize
    }
}

impl Index for u64 {
    const ZERO: Self = 0;
    #[inline(always)]
    fn from_usize(i: usize) -> Self {
        i as u64
    }
    #[inline(always)]
    fn to_usize(self) -> usize {
        self as usize
    }
}

/// Sources per chunk of the two-pass marking loop: the first pass issues the
/// independent loads of a chunk, the second does the dependent work on warm lines.
/// 32 chunks of state slots, block slots and element slots fit easily in L1.
const CHUNK: usize = 32;

/// Members per batch of popped blocks: enough independent inverse lists and sources
/// to keep a dozen misses in flight, few enough that their lines stay in L1/L2.
const BATCH: usize = 64;

/// The inverse of the transition function, grouped by target: the transitions into
/// `t` are the ids `s * k + a` in `trans[off[t]..off[t + 1]]`, in increasing order.
struct Inverse<I> {
    off: Vec<I>,
    trans: Vec<I>,
}

impl<I: Index> Inverse<I> {
    /// Counting sort by target: one histogram pass over `delta`, and one scatter pass
    /// backwards that turns the inclusive prefix sums into start offsets in place.
    fn new(dfa: &Dfa) -> Inverse<I> {
        let n = dfa.n_states;
        let mut off = vec![I::ZERO; n + 1];
        for &t in &dfa.delta {
            let c = &mut off[t as usize];
            *c = I::from_usize(c.to_usize() + 1);
        }
        let mut sum = 0usize;
        for c in off.iter_mut() {
            sum += c.to_usize();
            *c = I::from_usize(sum);
        }
        let mut trans = vec![I::ZERO; dfa.delta.len()];
        for (i, &t) in dfa.delta.iter().enumerate().rev() {
            let c = &mut off[t as usize];
            let at = c.to_usize() - 1;
            *c = I::from_usize(at);
            trans[at] = I::from_usize(i);
        }
        Inverse { off, trans }
    }

    /// The transitions into `t`.
    #[inline]
    fn of(&self, t: u32) -> &[I] {
        let t = t as usize;
        &self.trans[self.off[t].to_usize()..self.off[t + 1].to_usize()]
    }

    /// Loads the first line of the inverse list of each target in `chunk` (see
    /// [`Refinable::warm`]).
    #[inline]
    fn warm(&self, chunk: &[u32]) -> u32 {
        let mut acc = 0u32;
        for &t in chunk {
            if let Some(i) = self.trans.get(self.off[t as usize].to_usize()) {
                acc ^= i.to_usize() as u32;
            }
        }
        acc
    }
}

fn refine<I: Index>(dfa: &Dfa) -> (Partition, HopcroftStats) {
    let mut stats = HopcroftStats::default();
    let k = dfa.n_symbols;
    let inv = Inverse::<I>::new(dfa);
    let mut p = Refinable::new(&Partition::from_labels(&dfa.initial));

    // Initial worklist: every initial block but one of the largest (for a complete
    // DFA the preimages of all blocks but one determine the last one).
    let largest = (0..p.n_blocks()).max_by_key(|&b| p.size(b)).unwrap_or(0);
    let mut work: Vec<u32> = (0..p.n_blocks() as u32)
        .filter(|&b| b as usize != largest)
        .collect();

    // Work goes in batches of popped blocks; all buffers are reused across batches.
    let shift = k.is_power_of_two().then(|| k.trailing_zeros());
    let mut members: Vec<u32> = Vec::new();
    let mut member_bounds: Vec<usize> = Vec::new();
    let mut by_symbol: Vec<Vec<u32>> = vec![Vec::new(); k];
    let mut sources: Vec<u32> = Vec::new();
    let mut group_ends: Vec<usize> = Vec::new();
    let mut touched: Vec<u32> = Vec::new();
    let mut warm = 0u32;
    while !work.is_empty() {
        // A batch: pop blocks until about BATCH members are in hand, snapshotting
        // their members (marking reorders elements inside blocks, the splitters'
        // own included). Each block is still its own splitter; a snapshot taken
        // before an earlier batch member splits the block is a union of current
        // blocks, which is as valid a splitter and no larger than when it was queued.
        members.clear();
        member_bounds.clear();
        member_bounds.push(0);
        while members.len() < BATCH {
            let Some(b) = work.pop() else { break };
            members.extend_from_slice(p.members(b as usize));
            member_bounds.push(members.len());
        }
        stats.splitters += (k * (member_bounds.len() - 1)) as u64;

        // Sources of the batch's incoming transitions, grouped by (block, symbol).
        sources.clear();
        group_ends.clear();
        // The inverse lists of each CHUNK of members (across blocks) are loaded ahead.
        let mut warmed = 0usize;
        for w in member_bounds.windows(2) {
            for (j, &t) in members.iter().enumerate().take(w[1]).skip(w[0]) {
                if j == warmed {
                    warmed = (j + CHUNK).min(members.len());
                    warm ^= inv.warm(&members[j..warmed]);
                }
                for &i in inv.of(t) {
                    let i = i.to_usize();
                    let (s, a) = match shift {
                        Some(sh) => (i >> sh, i & (k - 1)),
                        None => (i / k, i % k),
                    };
                    by_symbol[a].push(s as u32);
                }
            }
            for bucket in by_symbol.iter_mut() {
                sources.extend_from_slice(bucket);
                group_ends.push(sources.len());
                bucket.clear();
            }
        }
        stats.marks += sources.len() as u64;

        // Mark group by group, splitting the touched blocks at each group's end.
        // The lines of each CHUNK of sources are loaded ahead in one pass.
        let mut at = 0usize;
        let mut warmed = 0usize;
        for &end in &group_ends {
            while at < end {
                if at == warmed {
                    warmed = (at + CHUNK).min(sources.len());
                    warm ^= p.warm(&sources[at..warmed]);
                }
                let stop = end.min(warmed);
                for &s in &sources[at..stop] {
                    p.mark(s, &mut touched);
                }
                at = stop;
            }
            for &x in &touched {
                // Split off the smaller half as a new block; it enters the worklist
                // for all symbols (Hopcroft's rule: if (X, c) is pending, both halves
                // must be; otherwise the smaller one suffices).
                if let Some(z) = p.split(x as usize) {
                    stats.splits += 1;
                    work.push(z as u32);
                }
            }
            touched.clear();
        }
    }
    // The warm-up loads must not be optimized away.
    std::hint::black_box(warm);
    (p.into_partition(), stats)
}

/// A refinable partition: the states of each block are contiguous in `elems`.
/// Marked states of a block sit at the front of its range. Per-state and per-block
/// fields are stored together (array of structs), since marking reads both fields of
/// a state and all three of its block: one cache line each.
struct Refinable {
    elems: Vec<u32>,
    state: Vec<StateSlot>,
    block: Vec<BlockSlot>,
}

#[derive(Clone, Copy)]
struct StateSlot {
    /// Position of the state in `elems`.
    pos: u32,
    /// Block of the state.
    block: u32,
}

#[derive(Clone, Copy)]
struct BlockSlot {
    start: u32,
    end: u32,
    marked: u32,
}

impl Refinable {
    fn new(initial: &Partition) -> Refinable {
        let n = initial.class_of.len();
        let nb = initial.n_classes;
        // Counting sort of the states by initial block.
        let mut start = vec![0u32; nb + 1];
        for &c in &initial.class_of {
            start[c as usize + 1] += 1;
        }
        for i in 1..=nb {
            start[i] += start[i - 1];
        }
        let mut block: Vec<BlockSlot> = Vec::with_capacity(n);
        block.extend((0..nb).map(|b| BlockSlot {
            start: start[b],
            end: start[b + 1],
            marked: 0,
        }));
        let mut fill = start;
        let mut elems = vec![0u32; n];
        let mut state = vec![StateSlot { pos: 0, block: 0 }; n];
        for (s, &c) in initial.class_of.iter().enumerate() {
            let at = fill[c as usize];
            elems[at as usize] = s as u32;
            state[s] = StateSlot { pos: at, block: c };
            fill[c as usize] += 1;
        }
        Refinable {
            elems,
            state,
            block,
        }
    }

    fn n_blocks(&self) -> usize {
        self.block.len()
    }

    fn size(&self, b: usize) -> u32 {
        self.block[b].end - self.block[b].start
    }

    fn members(&self, b: usize) -> &[u32] {
        let BlockSlot { start, end, .. } = self.block[b];
        &self.elems[start as usize..end as usize]
    }

    /// Loads, without changing anything, the lines that marking `chunk` will touch:
    /// each state's slot, its block's slot and its element slot. The loads of
    /// different states are independent, so the processor overlaps their misses,
    /// where [`Refinable::mark`] alone would wait for each chain in turn. Returns a
    /// value folded from the loads, for the caller to keep them alive.
    #[inline]
    fn warm(&self, chunk: &[u32]) -> u32 {
        let mut acc = 0u32;
        for &s in chunk {
            let StateSlot { pos, block } = self.state[s as usize];
            acc ^= self.block[block as usize].marked ^ self.elems[pos as usize];
        }
        acc
    }

    /// Moves `s` into the marked front of its block; records the block the first time.
    #[inline]
    fn mark(&mut self, s: u32, touched: &mut Vec<u32>) {
        let StateSlot {
            pos: here,
            block: b,
        } = self.state[s as usize];
        let blk = &mut self.block[b as usize];
        let m = blk.marked;
        let target = blk.start + m;
        if here < target {
            // Already marked. Cannot happen within one splitter (a source has one
            // successor per symbol); the check keeps the structure sound anyway.
            return;
        }
        if m == 0 {
            touched.push(b);
        }
        blk.marked = m + 1;
        let other = self.elems[target as usize];
        self.elems[target as usize] = s;
        self.elems[here as usize] = other;
        self.state[s as usize].pos = target;
        self.state[other as usize].pos = here;
    }

    /// Splits block `x` into its marked and unmarked parts, when both are non-empty.
    /// The smaller part becomes a new block, whose id is returned.
    fn split(&mut self, x: usize) -> Option<usize> {
        let BlockSlot { start, end, marked } = self.block[x];
        self.block[x].marked = 0;
        if marked == end - start {
            return None;
        }
        let mid = start + marked;
        let z = self.block.len();
        let (zs, ze) = if marked <= end - mid {
            self.block[x].start = mid;
            (start, mid)
        } else {
            self.block[x].end = mid;
            (mid, end)
        };
        self.block.push(BlockSlot {
            start: zs,
            end: ze,
            marked: 0,
        });
        for &st in &self.elems[zs as usize..ze as usize] {
            self.state[st as usize].block = z as u32;
        }
        Some(z)
    }

    fn into_partition(self) -> Partition {
        let block_of: Vec<u32> = self.state.iter().map(|s| s.block).collect();
        canonical(&block_of, self.block.len())
    }
}

/// Renumbers dense block ids `0..n_blocks` by first member in state order.
fn canonical(block_of: &[u32], n_blocks: usize) -> Partition {
    let mut rename = vec![u32::MAX; n_blocks];
    let mut next = 0u32;
    let class_of = block_of
        .iter()
        .map(|&b| {
            let r = &mut rename[b as usize];
            if *r == u32::MAX {
                *r = next;
                next += 1;
            }
            *r
        })
        .collect();
    Partition {
        class_of,
        n_classes: next as usize,
    }
}

/// Moore's iterated signature refinement: the naive O(k n^2) baseline, used to test
/// [`hopcroft`] and as the benchmark baseline. Each round gives every state the
/// signature (class, class of each successor) and renumbers; it stops when a round
/// splits nothing. Returns the same canonical partition as [`hopcroft`].
///
/// # Panics
///
/// When `dfa` is malformed (see [`Dfa::validate`]).
pub fn moore_refinement(dfa: &Dfa) -> Partition {
    dfa.assert_valid();
    let n = dfa.n_states;
    let k = dfa.n_symbols;
    let mut part = Partition::from_labels(&dfa.initial);
    let w = k + 1;
    let mut sig = vec![0u32; n * w];
    loop {
        for s in 0..n {
            let row = &mut sig[s * w..(s + 1) * w];
            row[0] = part.class_of[s];
            for a in 0..k {
                row[a + 1] = part.class_of[dfa.delta[s * k + a] as usize];
            }
        }
        let mut ids: HashMap<&[u32], u32, FastHash> = HashMap::default();
        ids.reserve(part.n_classes * 2);
        let class_of: Vec<u32> = (0..n)
            .map(|s| {
                let next = ids.len() as u32;
                *ids.entry(&sig[s * w..(s + 1) * w]).or_insert(next)
            })
            .collect();
        let n_classes = ids.len();
        // The new partition refines the old one (the old class is part of the
        // signature), so an equal count means nothing split.
        let done = n_classes == part.n_classes;
        part = Partition {
            class_of,
            n_classes,
        };
        if done {
            return part;
        }
    }
}

/// The states reachable from `start` (breadth-first search), as a flag per state.
///
/// # Panics
///
/// When `start` is not a state or `dfa` is malformed.
pub fn reachable(dfa: &Dfa, start: u32) -> Vec<bool> {
    dfa.assert_valid();
    assert!(
        (start as usize) < dfa.n_states,
        "start state {start} out of range"
    );
    let k = dfa.n_symbols;
    let mut seen = vec![false; dfa.n_states];
    let mut queue = VecDeque::new();
    seen[start as usize] = true;
    queue.push_back(start);
    while let Some(s) = queue.pop_front() {
        for &t in &dfa.delta[s as usize * k..(s as usize + 1) * k] {
            if !seen[t as usize] {
                seen[t as usize] = true;
                queue.push_back(t);
            }
        }
    }
    seen
}

/// A [`Dfa`] restricted to the states reachable from a start state.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Restricted {
    /// The reachable part, renumbered densely in increasing order of old id.
    pub dfa: Dfa,
    /// The start state in the new numbering.
    pub start: u32,
    /// Old id of each new state.
    pub old_of_new: Vec<u32>,
    /// New id of each old state, `None` for unreachable states.
    pub new_of_old: Vec<Option<u32>>,
}

/// Restricts `dfa` to the states reachable from `start`, keeping their relative order.
///
/// # Panics
///
/// When `start` is not a state or `dfa` is malformed.
pub fn restrict_to_reachable(dfa: &Dfa, start: u32) -> Restricted {
    let seen = reachable(dfa, start);
    let k = dfa.n_symbols;
    let mut new_of_old = vec![None; dfa.n_states];
    let mut old_of_new = Vec::new();
    for (s, &r) in seen.iter().enumerate() {
        if r {
            new_of_old[s] = Some(old_of_new.len() as u32);
            old_of_new.push(s as u32);
        }
    }
    let mut delta = Vec::with_capacity(old_of_new.len() * k);
    for &s in &old_of_new {
        for &t in &dfa.delta[s as usize * k..(s as usize + 1) * k] {
            // Successors of reachable states are reachable.
            delta.push(new_of_old[t as usize].unwrap_or(u32::MAX));
        }
    }
    let initial = old_of_new
        .iter()
        .map(|&s| dfa.initial[s as usize])
        .collect();
    Restricted {
        dfa: Dfa {
            n_states: old_of_new.len(),
            n_symbols: k,
            delta,
            initial,
        },
        start: new_of_old[start as usize].unwrap_or(0),
        old_of_new,
        new_of_old,
    }
}

/// The quotient of `dfa` by `partition`: one state per class (its label and successors
/// taken from the class's first member). `None` when the partition is not a
/// congruence: some class mixes labels, or two members of a class go to different
/// classes on some symbol.
///
/// # Panics
///
/// When `dfa` is malformed or `partition` does not cover its states.
pub fn quotient(dfa: &Dfa, partition: &Partition) -> Option<Dfa> {
    dfa.assert_valid();
    assert_eq!(partition.class_of.len(), dfa.n_states, "partition size");
    let k = dfa.n_symbols;
    let m = partition.n_classes;
    let mut rep = vec![u32::MAX; m];
    for (s, &c) in partition.class_of.iter().enumerate() {
        if rep[c as usize] == u32::MAX {
            rep[c as usize] = s as u32;
        }
    }
    if rep.contains(&u32::MAX) {
        return None;
    }
    let cls = |s: u32| partition.class_of[s as usize];
    let mut delta = Vec::with_capacity(m * k);
    for &r in &rep {
        for a in 0..k {
            delta.push(cls(dfa.delta[r as usize * k + a]));
        }
    }
    let initial: Vec<u32> = rep.iter().map(|&r| dfa.initial[r as usize]).collect();
    for s in 0..dfa.n_states {
        let c = cls(s as u32) as usize;
        if dfa.initial[s] != initial[c] {
            return None;
        }
        for a in 0..k {
            if cls(dfa.delta[s * k + a]) != delta[c * k + a] {
                return None;
            }
        }
    }
    Some(Dfa {
        n_states: m,
        n_symbols: k,
        delta,
        initial,
    })
}

/// One side of an equivalence query for [`distinguish`]: a machine, its start state,
/// and what can be observed of it.
///
/// `state_label(s)` is observed in every state entered (and in the start state);
/// `step_label(s, a)` is observed when symbol `a` is taken from state `s` (a Mealy
/// output, an action signature). Labels are compared between the two sides, so both
/// must use the same encoding.
pub struct Observed<'a, S, T>
where
    S: Fn(u32) -> u64,
    T: Fn(u32, u32) -> u64,
{
    /// The machine.
    pub dfa: &'a Dfa,
    /// The start state.
    pub start: u32,
    /// Per-state observation.
    pub state_label: S,
    /// Per-transition observation.
    pub step_label: T,
}

/// The observations of a plain [`Dfa`]: its initial labels, nothing on transitions.
pub fn observe_labels(
    dfa: &Dfa,
    start: u32,
) -> Observed<'_, impl Fn(u32) -> u64 + '_, impl Fn(u32, u32) -> u64> {
    Observed {
        dfa,
        start,
        state_label: move |s: u32| dfa.initial[s as usize] as u64,
        step_label: |_: u32, _: u32| 0u64,
    }
}

/// Why [`distinguish`] could not compare two machines.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum DistinguishError {
    /// The machines have different alphabets.
    #[error("machines have different alphabets ({a} and {b} symbols)")]
    SymbolCount {
        /// Symbols of the first machine.
        a: usize,
        /// Symbols of the second machine.
        b: usize,
    },
    /// A start state is not a state of its machine.
    #[error("start state {start} out of range (machine has {n_states})")]
    StartOutOfRange {
        /// The start state given.
        start: u32,
        /// States of that machine.
        n_states: usize,
    },
    /// A machine is malformed.
    #[error("malformed machine: {0}")]
    Malformed(DfaError),
}

/// Pairs up to this many (n_a * n_b) use a flat bit set for the visited map.
const FLAT_VISITED_LIMIT: usize = 1 << 27;

/// A shortest word telling `a` and `b` apart, or `None` when they are equivalent.
///
/// Breadth-first search over the product machine from `(a.start, b.start)`, with
/// parent pointers. The empty word distinguishes when the start labels differ; a word
/// `w·x` distinguishes when after `w` the two step labels on `x` differ, or the state
/// labels of the states entered on `x` do. The visited map is a flat bit set when
/// `n_a * n_b` is at most 2^27, a hash set beyond. O(k n_a n_b) time at worst,
/// memory proportional to the pairs visited.
pub fn distinguish<SA, TA, SB, TB>(
    a: &Observed<'_, SA, TA>,
    b: &Observed<'_, SB, TB>,
) -> Result<Option<Vec<u32>>, DistinguishError>
where
    SA: Fn(u32) -> u64,
    TA: Fn(u32, u32) -> u64,
    SB: Fn(u32) -> u64,
    TB: Fn(u32, u32) -> u64,
{
    for side in [a.dfa, b.dfa] {
        side.validate().map_err(DistinguishError::Malformed)?;
    }
    if a.dfa.n_symbols != b.dfa.n_symbols {
        return Err(DistinguishError::SymbolCount {
            a: a.dfa.n_symbols,
            b: b.dfa.n_symbols,
        });
    }
    for (start, dfa) in [(a.start, a.dfa), (b.start, b.dfa)] {
        if start as usize >= dfa.n_states {
            return Err(DistinguishError::StartOutOfRange {
                start,
                n_states: dfa.n_states,
            });
        }
    }
    let k = a.dfa.n_symbols;
    let nb = b.dfa.n_states as u64;
    if (a.state_label)(a.start) != (b.state_label)(b.start) {
        return Ok(Some(Vec::new()));
    }

    enum Visited {
        Flat(Vec<u64>),
        Sparse(HashSet<u64, FastHash>),
    }
    impl Visited {
        /// Marks `key`; true when it was new.
        fn insert(&mut self, key: u64) -> bool {
            match self {
                Visited::Flat(bits) => {
                    let (w, bit) = ((key / 64) as usize, 1u64 << (key % 64));
                    let new = bits[w] & bit == 0;
                    bits[w] |= bit;
                    new
                }
                Visited::Sparse(set) => set.insert(key),
            }
        }
    }
    let pairs = a.dfa.n_states.saturating_mul(b.dfa.n_states);
    let mut visited = if pairs <= FLAT_VISITED_LIMIT {
        Visited::Flat(vec![0u64; pairs.div_ceil(64)])
    } else {
        Visited::Sparse(HashSet::default())
    };

    // Queue entries: (state in a, state in b, index of parent entry, symbol taken).
    let mut queue: Vec<(u32, u32, u32, u32)> = vec![(a.start, b.start, u32::MAX, 0)];
    visited.insert(a.start as u64 * nb + b.start as u64);
    let mut head = 0usize;
    while head < queue.len() {
        let (p, q, _, _) = queue[head];
        for x in 0..k as u32 {
            let (p2, q2) = (a.dfa.next(p, x), b.dfa.next(q, x));
            let differs = (a.step_label)(p, x) != (b.step_label)(q, x)
                || (a.state_label)(p2) != (b.state_label)(q2);
            if differs {
                let mut word = vec![x];
                let mut at = head;
                while queue[at].2 != u32::MAX {
                    word.push(queue[at].3);
                    at = queue[at].2 as usize;
                }
                word.reverse();
                return Ok(Some(word));
            }
            if visited.insert(p2 as u64 * nb + q2 as u64) {
                queue.push((p2, q2, head as u32, x));
            }
        }
        head += 1;
    }
    Ok(None)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dfa(k: usize, delta: &[u32], initial: &[u32]) -> Dfa {
        Dfa {
            n_states: initial.len(),
            n_symbols: k,
            delta: delta.to_vec(),
            initial: initial.to_vec(),
        }
    }

    #[test]
    fn validate_rejects_bad_tables() {
        assert!(matches!(
            dfa(2, &[0, 1, 1], &[0, 0]).validate(),
            Err(DfaError::DeltaLength { .. })
        ));
        assert!(matches!(
            dfa(1, &[0, 2], &[0, 0]).validate(),
            Err(DfaError::TargetOutOfRange { target: 2, .. })
        ));
        let mut short = dfa(1, &[0, 1], &[0, 0]);
        short.initial.pop();
        assert!(matches!(
            short.validate(),
            Err(DfaError::InitialLength { .. })
        ));
    }

    #[test]
    fn empty_and_symbolless() {
        // No states: no classes. No symbols: classes are exactly the label classes.
        assert_eq!(hopcroft(&dfa(1, &[], &[])).n_classes, 0);
        let d = dfa(0, &[], &[5, 7, 5, 9]);
        let p = hopcroft(&d);
        assert_eq!(p.class_of, vec![0, 1, 0, 2]);
        assert_eq!(p, moore_refinement(&d));
    }

    #[test]
    fn split_halves_keep_the_structure_consistent() {
        // A chain 0 -> 1 -> 2 -> 3 -> 3 where only 3 is labelled 1: every state is
        // distinguished by its distance to 3, so all four classes are singletons.
        let d = dfa(1, &[1, 2, 3, 3], &[0, 0, 0, 1]);
        let p = hopcroft(&d);
        assert_eq!(p.n_classes, 4);
        assert_eq!(p.class_of, vec![0, 1, 2, 3]);
        assert_eq!(p, moore_refinement(&d));
    }

    #[test]
    fn from_labels_is_canonical() {
        let p = Partition::from_labels(&[9, 3, 9, 4, 3]);
        assert_eq!(p.class_of, vec![0, 1, 0, 2, 1]);
        assert_eq!(p.classes(), vec![vec![0, 2], vec![1, 4], vec![3]]);
    }

    #[test]
    fn distinguish_checks_alphabets_and_starts() {
        let a = dfa(1, &[0], &[0]);
        let b = dfa(2, &[0, 0], &[0]);
        assert!(matches!(
            distinguish(&observe_labels(&a, 0), &observe_labels(&b, 0)),
            Err(DistinguishError::SymbolCount { a: 1, b: 2 })
        ));
        assert!(matches!(
            distinguish(&observe_labels(&a, 0), &observe_labels(&a, 3)),
            Err(DistinguishError::StartOutOfRange { start: 3, .. })
        ));
    }

    #[test]
    fn distinguish_uses_step_labels() {
        // One state, one symbol, a self-loop; the two sides differ only in the output
        // of the transition, so the shortest witness is the one-symbol word [0].
        let d = dfa(1, &[0], &[0]);
        let a = Observed {
            dfa: &d,
            start: 0,
            state_label: |_| 0,
            step_label: |_, _| 1,
        };
        let b = Observed {
            dfa: &d,
            start: 0,
            state_label: |_| 0,
            step_label: |_, _| 2,
        };
        assert_eq!(distinguish(&a, &b), Ok(Some(vec![0])));
        assert_eq!(distinguish(&a, &a), Ok(None));
    }
}
