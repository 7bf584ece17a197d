//! Export of a `regex_automata::dfa::dense::DFA` into detent's [`Dfa`], shared by the
//! external-reference test and the minimization benchmark.
//!
//! # What is exported, and why the state counts compare exactly
//!
//! States: the dead state, the quit state, every anchored start state (one per
//! look-behind context: text start and each of the 256 bytes, which covers all of
//! regex-automata's start types), and everything reachable from those on any input
//! class. One start type, "after the custom line terminator", is only reachable when
//! the line terminator is not `\n` (with the default, `\n` selects the "after LF"
//! start instead, and the custom start state sits in the table unused, yet counted by
//! regex-automata's minimizer); [`build`] therefore sets the line terminator to NUL,
//! so that every start state is reachable from some look-behind context. regex-automata's determinizer creates every non-special state by exploring
//! from the start states, and always allocates the dead state (index 0) and the quit
//! state (index 1), so this set is the whole table, before and after its minimizer.
//! After its minimizer every class still holds a start-reachable state, the dead state
//! or the quit state, so the same walk over the minimized DFA enumerates all of its
//! states, and its length is the minimized state count.
//!
//! Symbols: the DFA's byte equivalence classes, the end-of-input (EOI) class
//! included, numbered as regex-automata numbers them (`ByteClasses::get_by_unit`). The EOI class
//! matters: a dense DFA reports matches one byte late, so a match at the end of the
//! haystack shows up only through the EOI transition.
//!
//! Initial partition (the observable part of a state), as the search semantics need:
//! - match states by their set of pattern ids (a multi-pattern search reports which
//!   pattern matched, so match states for different sets are different);
//! - the quit state alone (entering it makes the search return an error, which is
//!   observable and unlike any other state);
//! - every other state, the dead state included, in one non-match block: the dead
//!   state only lets a search stop early, and a non-match state from which no match
//!   can be reached reports exactly what the dead state reports (nothing, ever).
//!
//! This is also the initial partition of regex-automata's own minimizer (match sets,
//! non-match with dead, quit), so the two minimizers solve the same problem.

use std::collections::{HashMap, VecDeque};

use detent_compiler::minimize::partition::Dfa;
use regex_automata::dfa::{dense, Automaton, StartKind};
use regex_automata::nfa::thompson;
use regex_automata::util::look::LookMatcher;
use regex_automata::util::primitives::StateID;
use regex_automata::util::{start, syntax};
use regex_automata::{Anchored, PatternID};

/// Builds a dense DFA for `patterns`: anchored starts, byte classes, bytes not Unicode,
/// NUL as the line terminator (see the module doc), minimized or not by
/// regex-automata, with byte 0xFF as a quit byte when `quit_ff`.
pub fn build(patterns: &[&str], minimize: bool, quit_ff: bool) -> dense::DFA<Vec<u32>> {
    let mut config = dense::Config::new()
        .minimize(minimize)
        .start_kind(StartKind::Anchored)
        .byte_classes(true);
    if quit_ff {
        config = config.quit(0xFF, true);
    }
    let mut look = LookMatcher::new();
    look.set_line_terminator(b'\0');
    dense::Builder::new()
        .configure(config)
        .syntax(
            syntax::Config::new()
                .unicode(false)
                .utf8(false)
                .line_terminator(b'\0'),
        )
        .thompson(thompson::Config::new().look_matcher(look))
        .build_many(patterns)
        .expect("regex builds")
}

/// Label of non-match states (the dead state included).
pub const NON_MATCH: u32 = 0;
/// Label of the quit state.
pub const QUIT: u32 = 1;

/// A regex-automata DFA as a detent [`Dfa`].
pub struct Exported {
    /// The table: state 0 is the dead state, state 1 the quit state.
    pub dfa: Dfa,
    /// The exported ids of the anchored start states (text start first, then the
    /// start after each byte 0..=255; the quit state for a quit look-behind byte).
    pub starts: Vec<u32>,
}

/// Exports `ra` (built with `StartKind::Anchored` or `Both`).
pub fn export(ra: &dense::DFA<Vec<u32>>) -> Exported {
    let classes = ra.byte_classes();
    let units: Vec<_> = classes.representatives(..).collect();
    let k = ra.alphabet_len();
    assert_eq!(units.len(), k, "one representative per class, EOI included");

    let mut id_of: Vec<StateID> = Vec::new();
    let mut index: HashMap<StateID, u32> = HashMap::new();
    let mut queue = VecDeque::new();
    let mut visit = |id: StateID, id_of: &mut Vec<StateID>, queue: &mut VecDeque<u32>| -> u32 {
        *index.entry(id).or_insert_with(|| {
            id_of.push(id);
            queue.push_back(id_of.len() as u32 - 1);
            id_of.len() as u32 - 1
        })
    };
    let dead = StateID::ZERO;
    let quit = StateID::new(1usize << ra.stride2()).expect("quit id");
    assert!(ra.is_dead_state(dead), "state 0 is the dead state");
    visit(dead, &mut id_of, &mut queue);
    visit(quit, &mut id_of, &mut queue);

    let mut starts = Vec::new();
    let contexts = std::iter::once(None).chain((0..=255u8).map(Some));
    for look_behind in contexts {
        let config = start::Config::new()
            .anchored(Anchored::Yes)
            .look_behind(look_behind);
        // A look-behind byte that is a quit byte makes the search fail at once: that
        // start context behaves as the quit state.
        let id = match ra.start_state(&config) {
            Ok(id) => id,
            Err(regex_automata::dfa::StartError::Quit { .. }) => quit,
            Err(e) => panic!("no anchored start state: {e}"),
        };
        starts.push(visit(id, &mut id_of, &mut queue));
    }

    let mut delta: Vec<u32> = Vec::new();
    while let Some(s) = queue.pop_front() {
        let id = id_of[s as usize];
        // Rows are filled in the order states were discovered, which is the order of
        // their ids (the queue is FIFO and ids are handed out in push order).
        assert_eq!(delta.len(), s as usize * k);
        let mut row = vec![0u32; k];
        for unit in &units {
            let next = match unit.as_u8() {
                Some(byte) => ra.next_state(id, byte),
                None => ra.next_eoi_state(id),
            };
            row[classes.get_by_unit(*unit)] = visit(next, &mut id_of, &mut queue);
        }
        delta.extend_from_slice(&row);
    }

    let mut pattern_sets: HashMap<Vec<PatternID>, u32> = HashMap::new();
    let initial = id_of
        .iter()
        .map(|&id| {
            if ra.is_quit_state(id) {
                QUIT
            } else if ra.is_match_state(id) {
                let set: Vec<PatternID> = (0..ra.match_len(id))
                    .map(|i| ra.match_pattern(id, i))
                    .collect();
                let next = 2 + pattern_sets.len() as u32;
                *pattern_sets.entry(set).or_insert(next)
            } else {
                NON_MATCH
            }
        })
        .collect();
    Exported {
        dfa: Dfa {
            n_states: id_of.len(),
            n_symbols: k,
            delta,
            initial,
        },
        starts,
    }
}
