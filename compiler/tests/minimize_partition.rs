//! Tests of the partition-refinement core: hand-worked cases, random tables against the
//! Moore baseline, well-definedness and minimality of the quotient, and two external
//! references (automata-lib from PyPI, regex-automata from crates.io).

#[path = "support/regex_export.rs"]
mod regex_export;

use std::collections::HashMap;
use std::io::Write;
use std::path::PathBuf;
use std::process::{Command, Stdio};

use detent_compiler::minimize::partition::{
    distinguish, hopcroft, moore_refinement, observe_labels, quotient, restrict_to_reachable, Dfa,
    Partition,
};
use detent_compiler::rng::Rng;
use detent_compiler::testing::dfa::random_dfa;

fn dfa(k: usize, delta: &[u32], initial: &[u32]) -> Dfa {
    let d = Dfa {
        n_states: initial.len(),
        n_symbols: k,
        delta: delta.to_vec(),
        initial: initial.to_vec(),
    };
    d.validate().expect("hand-written table is well formed");
    d
}

/// Both minimizers, checked to agree.
fn minimize(d: &Dfa) -> Partition {
    let h = hopcroft(d);
    assert_eq!(
        h,
        moore_refinement(d),
        "hopcroft and moore disagree on {d:?}"
    );
    h
}

// ---------------------------------------------------------------------------------
// Hand-worked cases (reasoning by hand, written down beside each; from memory of the
// usual exercises, not from a particular source).
// ---------------------------------------------------------------------------------

#[test]
fn parity_of_ones_with_duplicate_states() {
    // Alphabet {0, 1}; four states counting ones mod 4, labelled "even number of ones".
    // 0 -1-> 1 -1-> 2 -1-> 3 -1-> 0, every state loops on 0. Labels: 0,2 even; 1,3 odd.
    // Round 0 splits {0,2} | {1,3} by label. On 1, both even states go to an odd state
    // and both odd states to an even one; on 0 every state stays in its own block. So
    // the label partition is already stable: two classes, the parity automaton.
    let d = dfa(2, &[0, 1, 1, 2, 2, 3, 3, 0], &[1, 0, 1, 0]);
    let p = minimize(&d);
    assert_eq!(p.classes(), vec![vec![0, 2], vec![1, 3]]);
}

#[test]
fn mod_six_counter_observed_mod_three() {
    // One symbol; i -> i+1 mod 6; label 1 exactly on 0 and 3 (i mod 3 == 0).
    // States i and i+3 have the same label and successors i+1, i+4 which again differ by
    // 3, so {i, i+3} is a congruence. 1 and 2 are split after one step (1 -> 2 unlabelled,
    // 2 -> 3 labelled), so nothing coarser works: classes {0,3} {1,4} {2,5}.
    let d = dfa(1, &[1, 2, 3, 4, 5, 0], &[1, 0, 0, 1, 0, 0]);
    let p = minimize(&d);
    assert_eq!(p.classes(), vec![vec![0, 3], vec![1, 4], vec![2, 5]]);
    // The shortest word telling 1 from 2 has one symbol (see above); 0 from 1: empty.
    let q = quotient(&d, &p).expect("congruence");
    assert_eq!(
        distinguish(&observe_labels(&q, 1), &observe_labels(&q, 2)),
        Ok(Some(vec![0]))
    );
    assert_eq!(
        distinguish(&observe_labels(&q, 0), &observe_labels(&q, 1)),
        Ok(Some(vec![]))
    );
}

#[test]
fn ends_in_ab_with_redundant_copies() {
    // Alphabet a=0, b=1; accept strings ending in "ab". States: 0 = nothing useful seen,
    // 1 = last symbol a, 2 = last two symbols ab (accepting); 3 is a copy of 0 and 4 a
    // copy of 1, wired in so that the copies are reached:
    //   a: 0->1 1->1 2->4 3->4 4->4      b: 0->3 1->2 2->3 3->3 4->2
    // Round 0: {0,1,3,4} | {2}. On b, 1 and 4 go to 2 (accepting), 0 and 3 go to 3:
    // split {0,3} | {1,4}. Then on a all of 0,1,3,4 go into {1,4}, on b {0,3} -> {0,3}
    // and {1,4} -> {2}: stable. Three classes, the textbook three-state automaton.
    let d = dfa(2, &[1, 3, 1, 2, 4, 3, 4, 3, 4, 2], &[0, 0, 1, 0, 0]);
    let p = minimize(&d);
    assert_eq!(p.classes(), vec![vec![0, 3], vec![1, 4], vec![2]]);
}

#[test]
fn unreachable_states_are_dropped_before_minimizing() {
    // One symbol. 0 -> 1 -> 0 is the reachable cycle, both labelled 0 (one class).
    // 2 -> 3 -> 2 is unreachable from 0, with 3 labelled 1. Over all states: 3 is alone
    // by its label, 2 is unlabelled but goes to a labelled state while 0 and 1 do not,
    // so {0,1} {2} {3}; after restricting to the states reachable from 0, one class.
    let d = dfa(1, &[1, 0, 3, 2], &[0, 0, 0, 1]);
    assert_eq!(minimize(&d).classes(), vec![vec![0, 1], vec![2], vec![3]]);
    let r = restrict_to_reachable(&d, 0);
    assert_eq!(r.old_of_new, vec![0, 1]);
    assert_eq!(r.new_of_old, vec![Some(0), Some(1), None, None]);
    assert_eq!(minimize(&r.dfa).n_classes, 1);
}

#[test]
fn chain_needs_one_round_per_state() {
    // One symbol, i -> i+1, the last state loops and alone is labelled 1. State i is
    // n-1-i steps from the label, so all n states are pairwise distinct and Moore's
    // refinement splits off one state per round (its O(n^2) worst case); the shortest
    // word telling 0 from 1 has n-2 symbols (after n-2 steps 1 is on the last state).
    let n = 50u32;
    let delta: Vec<u32> = (0..n).map(|i| (i + 1).min(n - 1)).collect();
    let mut initial = vec![0; n as usize];
    initial[n as usize - 1] = 1;
    let d = dfa(1, &delta, &initial);
    assert_eq!(minimize(&d).n_classes, n as usize);
    let w = distinguish(&observe_labels(&d, 0), &observe_labels(&d, 1)).expect("same alphabet");
    assert_eq!(w.map(|w| w.len()), Some(n as usize - 2));
}

#[test]
fn distinguish_across_different_machines() {
    // Machine A: two states over one symbol, 0 <-> 1, label 1 on state 1 (alternating).
    // Machine B: three states 0 -> 1 -> 2 -> 0, label 1 on state 1.
    // Observations from the starts: A gives 0 1 0 1 ..., B gives 0 1 0 0 ...; they first
    // differ after three symbols.
    let a = dfa(1, &[1, 0], &[0, 1]);
    let b = dfa(1, &[1, 2, 0], &[0, 1, 0]);
    assert_eq!(
        distinguish(&observe_labels(&a, 0), &observe_labels(&b, 0)),
        Ok(Some(vec![0, 0, 0]))
    );
    // A against a six-state unrolling of itself: equivalent.
    let c = dfa(1, &[1, 2, 3, 4, 5, 0], &[0, 1, 0, 1, 0, 1]);
    assert_eq!(
        distinguish(&observe_labels(&a, 0), &observe_labels(&c, 0)),
        Ok(None)
    );
}

// ---------------------------------------------------------------------------------
// Random tables.
// ---------------------------------------------------------------------------------

/// A random table with many equivalent states: `copies` copies of each state of a
/// random base table, each transition going to a random copy of the base successor,
/// and the ids shuffled. Its minimum has at most `base` classes.
fn blown_up(base: usize, copies: usize, k: usize, labels: u32, seed: u64) -> Dfa {
    let b = random_dfa(base, k, labels, seed);
    let mut rng = Rng::from_state(seed ^ 0xDEAD_BEEF);
    let n = base * copies;
    let mut perm: Vec<u32> = (0..n as u32).collect();
    for i in (1..n).rev() {
        perm.swap(i, rng.below(i as u64 + 1) as usize);
    }
    let mut delta = vec![0u32; n * k];
    let mut initial = vec![0u32; n];
    for s in 0..base {
        for c in 0..copies {
            let id = perm[s * copies + c] as usize;
            initial[id] = b.initial[s];
            for a in 0..k {
                let t = b.delta[s * k + a] as usize;
                delta[id * k + a] = perm[t * copies + rng.below(copies as u64) as usize];
            }
        }
    }
    Dfa {
        n_states: n,
        n_symbols: k,
        delta,
        initial,
    }
}

/// A mix of random tables: uniform ones (mostly already minimal) and blown-up ones.
fn random_tables(count: usize, labels: u32, seed: u64) -> Vec<Dfa> {
    let mut rng = Rng::from_state(seed);
    (0..count)
        .map(|i| {
            let k = 1 + rng.below(4) as usize;
            let s = rng.next_u64();
            if i % 2 == 0 {
                random_dfa(1 + rng.below(40) as usize, k, labels, s)
            } else {
                let base = 1 + rng.below(12) as usize;
                blown_up(base, 1 + rng.below(5) as usize, k, labels, s)
            }
        })
        .collect()
}

/// Moore's partitions level by level, written independently of the library: level r
/// separates exactly the states told apart by some word of length <= r.
fn moore_levels(d: &Dfa) -> Vec<Vec<u32>> {
    let k = d.n_symbols;
    let mut levels = vec![Partition::from_labels(&d.initial).class_of];
    loop {
        let prev = levels.last().expect("level 0").clone();
        let mut ids: HashMap<Vec<u32>, u32> = HashMap::new();
        let next: Vec<u32> = (0..d.n_states)
            .map(|s| {
                let mut sig = vec![prev[s]];
                sig.extend((0..k).map(|a| prev[d.delta[s * k + a] as usize]));
                let n = ids.len() as u32;
                *ids.entry(sig).or_insert(n)
            })
            .collect();
        let same = ids.len() == prev.iter().collect::<std::collections::HashSet<_>>().len();
        if same {
            return levels;
        }
        levels.push(next);
    }
}

/// The labels seen along `word` from `s` (the start label, then one per symbol).
fn trace(d: &Dfa, mut s: u32, word: &[u32]) -> Vec<u32> {
    let mut out = vec![d.initial[s as usize]];
    for &a in word {
        s = d.next(s, a);
        out.push(d.initial[s as usize]);
    }
    out
}

#[test]
fn random_tables_hopcroft_matches_moore_and_quotient_is_minimal() {
    let mut merged_somewhere = false;
    for d in random_tables(400, 3, 7) {
        let p = minimize(&d);
        merged_somewhere |= p.n_classes < d.n_states;

        // Well defined: every class's members share the label and go to the same
        // class on every symbol (quotient checks exactly this).
        let q = quotient(&d, &p).expect("the result is a congruence");
        assert_eq!(q.n_states, p.n_classes);

        // Minimal: no two classes can be merged, each pair has a distinguishing word,
        // and the word really distinguishes them when run on the original table.
        let classes = p.classes();
        let levels = moore_levels(&d);
        for c1 in 0..q.n_states as u32 {
            for c2 in c1 + 1..q.n_states as u32 {
                let w = distinguish(&observe_labels(&q, c1), &observe_labels(&q, c2))
                    .expect("same alphabet")
                    .expect("distinct classes are distinguishable");
                let (s1, s2) = (classes[c1 as usize][0], classes[c2 as usize][0]);
                assert_ne!(trace(&d, s1, &w), trace(&d, s2, &w));
                // Shortest: the first Moore level that separates them is |w|.
                let level = levels
                    .iter()
                    .position(|l| l[s1 as usize] != l[s2 as usize])
                    .expect("separated at some level");
                assert_eq!(w.len(), level, "witness not shortest");
            }
        }
        // Members of one class are equivalent.
        for class in &classes {
            for &s in &class[1..] {
                assert_eq!(
                    distinguish(&observe_labels(&d, class[0]), &observe_labels(&d, s)),
                    Ok(None)
                );
            }
        }
    }
    assert!(
        merged_somewhere,
        "the generator must produce reducible tables"
    );
}

#[test]
fn larger_random_tables_hopcroft_matches_moore() {
    for (i, &n) in [500usize, 2000, 5000].iter().enumerate() {
        for labels in [1u32, 2, 5] {
            let d = random_dfa(n, 3, labels, 100 + i as u64);
            minimize(&d);
            let b = blown_up(n / 10, 10, 2, labels, 200 + i as u64);
            let p = minimize(&b);
            assert!(p.n_classes <= n / 10);
        }
    }
}

// ---------------------------------------------------------------------------------
// External reference 1: automata-lib (PyPI), `automata.fa.dfa.DFA.minify`.
// ---------------------------------------------------------------------------------

fn workspace_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("compiler/ has a parent")
        .to_path_buf()
}

/// The Python interpreter: `DETENT_PYTHON`, else `<workspace>/.venv/bin/python`.
fn python() -> PathBuf {
    if let Some(p) = std::env::var_os("DETENT_PYTHON") {
        let p = PathBuf::from(p);
        assert!(
            p.exists(),
            "DETENT_PYTHON={} does not exist; run scripts/test.sh to set up the venv",
            p.display()
        );
        return p;
    }
    let p = workspace_root().join(".venv/bin/python");
    assert!(
        p.exists(),
        "no Python for the reference tests: set DETENT_PYTHON or run scripts/test.sh \
         (which creates {})",
        p.display()
    );
    p
}

#[test]
fn automata_lib_agrees_on_minimal_state_counts() {
    // Source: automata-lib (PyPI), DFA.minify(): removes unreachable states, then
    // merges indistinguishable ones (final / non-final initial partition).
    let mut rng = Rng::from_state(42);
    let tables = random_tables(300, 2, 99);
    let mut specs = Vec::new();
    let mut ours = Vec::new();
    for d in &tables {
        let start = rng.below(d.n_states as u64) as u32;
        let r = restrict_to_reachable(d, start);
        ours.push(hopcroft(&r.dfa).n_classes);
        let transitions: Vec<Vec<u32>> = (0..d.n_states)
            .map(|s| d.delta[s * d.n_symbols..(s + 1) * d.n_symbols].to_vec())
            .collect();
        let finals: Vec<usize> = (0..d.n_states).filter(|&s| d.initial[s] == 1).collect();
        specs.push(serde_json::json!({
            "states": d.n_states,
            "alphabet": d.n_symbols,
            "transitions": transitions,
            "initial": start,
            "finals": finals,
        }));
    }
    let script = workspace_root().join("tests/python/automata_minimize.py");
    let mut child = Command::new(python())
        .arg(&script)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start the reference script");
    let input = serde_json::to_vec(&specs).expect("json");
    child
        .stdin
        .take()
        .expect("stdin")
        .write_all(&input)
        .expect("write to the reference script");
    let out = child.wait_with_output().expect("reference script output");
    assert!(
        out.status.success(),
        "{} failed (is automata-lib installed? run scripts/test.sh): {}",
        script.display(),
        String::from_utf8_lossy(&out.stderr)
    );
    let theirs: Vec<usize> = String::from_utf8_lossy(&out.stdout)
        .lines()
        .map(|l| l.trim().parse().expect("a count per line"))
        .collect();
    assert_eq!(theirs.len(), ours.len());
    let mut reduced = 0;
    for (i, (o, t)) in ours.iter().zip(&theirs).enumerate() {
        assert_eq!(
            o, t,
            "table {i}: hopcroft {o} classes, automata-lib {t} states"
        );
        reduced += usize::from(*o < tables[i].n_states);
    }
    assert!(
        reduced > 50,
        "too few tables where minimization does anything"
    );
}

// ---------------------------------------------------------------------------------
// External reference 2: regex-automata (crates.io), dense DFA with minimize(true).
// ---------------------------------------------------------------------------------

use regex_automata::dfa::dense;
use regex_export::build;

/// The number of state lines in a dense DFA's Debug output (one per state, from the
/// line after the header to the first blank line).
fn debug_state_lines(ra: &dense::DFA<Vec<u32>>) -> usize {
    format!("{ra:?}")
        .lines()
        .skip(1)
        .take_while(|l| !l.trim().is_empty())
        .count()
}

#[test]
fn regex_automata_minimized_state_counts_match() {
    // Source: regex-automata (crates.io), dense::Config::minimize(true). How the states
    // are counted on both sides is described in tests/support/regex_export.rs: the
    // dead and quit states and everything reachable from the anchored start states,
    // which is the whole table on both sides, so the counts compare exactly.
    let cases: &[(&[&str], bool)] = &[
        (&["a"], false),
        (&["ab|ac"], false),
        (&["(a|b)*abb"], false),
        (&["[a-c]*(abc|bbc)"], false),
        (&["foo|foobar|fob|fo+"], false),
        (&["a{3,7}"], false),
        (&["(x|y){2}z?"], false),
        (&["[01]*1[01]{4}"], false),
        (&["(ab|ba)*|(ab)+c"], false),
        (&["(?i)hello|help|helm"], false),
        (&[r"\bfoo\b|\bbar"], false),
        (&[r"(?m)^ab$|c"], false),
        (&["ab", "abc", "b+", "(a|b)c"], false),
        (&["[^\n]*x", "x[a-z]{2}"], false),
        (&["[01]*1[01]{8}"], false),
        (&["(a|aa|aaa)*b{2,5}", "(ab)*b+"], false),
        (&["a.*b"], true),
        (&["(q|w)+e", "w"], true),
    ];
    let mut reduced = 0;
    for (patterns, quit) in cases {
        let unmin = regex_export::export(&build(patterns, false, *quit));
        let min = regex_export::export(&build(patterns, true, *quit));
        let p = hopcroft(&unmin.dfa);
        assert_eq!(
            p.n_classes, min.dfa.n_states,
            "{patterns:?}: hopcroft {} classes on {} states, regex-automata minimized to {}",
            p.n_classes, unmin.dfa.n_states, min.dfa.n_states
        );
        // Cross-check the claim that the walk covers the whole table: the Debug output
        // of a dense DFA prints one line per state before its first blank line.
        for (ra, ex) in [
            (build(patterns, false, *quit), &unmin),
            (build(patterns, true, *quit), &min),
        ] {
            assert_eq!(debug_state_lines(&ra), ex.dfa.n_states, "{patterns:?}");
        }
        reduced += usize::from(p.n_classes < unmin.dfa.n_states);
        // regex-automata's result is minimal under the same observations ...
        assert_eq!(
            hopcroft(&min.dfa).n_classes,
            min.dfa.n_states,
            "{patterns:?}"
        );
        // ... and equivalent to our quotient from every start context.
        let q = quotient(&unmin.dfa, &p).expect("congruence");
        for (&su, &sm) in unmin.starts.iter().zip(&min.starts) {
            let su = p.class_of[su as usize];
            assert_eq!(
                distinguish(&observe_labels(&q, su), &observe_labels(&min.dfa, sm)),
                Ok(None),
                "{patterns:?}"
            );
        }
    }
    assert!(
        reduced >= 3,
        "only {reduced} cases where minimization merges states"
    );
}
