//! The parser's fast path (token trees straight to the AST) against the syn path it
//! stands in for: on every spec of the repository, on random specs and on mutated
//! copies of them (most of which are invalid), parsing with the fast path off and
//! on (in both of its token-handling modes) gives the same tree, with every span at
//! the same byte range, or the same error message at the same place.

use detent_compiler::syntax::{parse_source_with, FastPath, SyntaxError};
use detent_tests::gen::{random_spec, GenConfig, Rng};
use std::path::{Path, PathBuf};

const MODES: [FastPath; 2] = [FastPath::Move, FastPath::Copy];

/// The tree's `Debug` text with every span (`bytes(lo..hi)`, offsets into
/// `proc_macro2`'s source map, which grows with every parse) made relative to the
/// parsed text, so two parses of one text compare equal exactly when their trees
/// and all their spans do.
fn canon(file: &detent_compiler::syntax::ast::File) -> String {
    let text = format!("{file:#?}");
    let Some(m) = file.machines.first() else {
        return text;
    };
    let abs = span_lo(&format!("{:?}", m.name.span)).expect("a span prints as bytes(..)");
    let base = abs as i64 - m.name.span.byte_range().start as i64;
    let mut out = String::with_capacity(text.len());
    let mut rest = text.as_str();
    while let Some(at) = rest.find("bytes(") {
        out.push_str(&rest[..at + 6]);
        rest = &rest[at + 6..];
        let close = rest.find(')').expect("bytes(..) closes");
        let (lo, hi) = rest[..close].split_once("..").expect("lo..hi");
        let lo: i64 = lo.parse().expect("number");
        let hi: i64 = hi.parse().expect("number");
        out.push_str(&format!("{}..{}", lo - base, hi - base));
        rest = &rest[close..];
    }
    out.push_str(rest);
    out
}

fn span_lo(debug: &str) -> Option<usize> {
    debug
        .strip_prefix("bytes(")?
        .split_once("..")?
        .0
        .parse()
        .ok()
}

fn show_error(e: &SyntaxError) -> String {
    let (s, t) = (e.span.start(), e.span.end());
    format!(
        "{} at {}:{}-{}:{} bytes {:?}",
        e.message,
        s.line,
        s.column,
        t.line,
        t.column,
        e.span.byte_range()
    )
}

fn outcome(text: &str, mode: FastPath) -> Result<String, String> {
    parse_source_with(text, mode)
        .map(|f| canon(&f))
        .map_err(|e| show_error(&e))
}

/// Parses `text` every way and asserts one outcome; returns whether it parsed.
fn same_everywhere(what: &str, text: &str) -> bool {
    let reference = outcome(text, FastPath::Off);
    for mode in MODES {
        let got = outcome(text, mode);
        assert_eq!(
            got, reference,
            "{what}: fast path {mode:?} differs from the syn path on:\n{text}"
        );
    }
    reference.is_ok()
}

/// Every `.detent` file in the repository (outside build output and git data).
fn repo_specs() -> Vec<(PathBuf, String)> {
    fn walk(dir: &Path, out: &mut Vec<(PathBuf, String)>) {
        let Ok(entries) = std::fs::read_dir(dir) else {
            return;
        };
        let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok()).map(|e| e.path()).collect();
        paths.sort();
        for p in paths {
            let name = p.file_name().map(|n| n.to_string_lossy().into_owned());
            if p.is_dir() {
                if !matches!(name.as_deref(), Some("target" | ".git" | "node_modules")) {
                    walk(&p, out);
                }
            } else if p.extension().is_some_and(|x| x == "detent") {
                let text = std::fs::read_to_string(&p).expect("spec is readable");
                out.push((p, text));
            }
        }
    }
    let mut out = Vec::new();
    walk(
        &PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(".."),
        &mut out,
    );
    out
}

/// Hand-written specs for what the corpus may not hold: doc comments of every form
/// (escaped, raw as rustc writes them, on list entries, on states in groups), raw
/// names, lint attributes on states, clocked machines, every declaration, names
/// that are words of the language, and deep but legal nesting.
const EXTRA: &[&str] = &[
    r##"
/// A "quoted" doc \ with a backslash.
/** A block doc
    over lines. */
#[dispatch(match)]
#[allow(naming, dead_end, unreachable_state, unused_declaration)]
pub machine Docs {
    events
        /// Plain doc.
        A,
        #[doc = r" raw doc"]
        B,
        #[doc = r#"raw "quoted" doc"#]
        C,
        D,;
    inputs r#in, state, group, terminal, enter, leave, emit;
    outputs lamp, r#fn;
    actions log, /// Tab	inside.
        beep,;
    start r#S0;
    unhandled ignore;
    never lamp && !(state || group);
    never in G && (r#fn || true || false);
    recover to S0 except T, U,;
    /// State doc.
    #[doc = r"raw state doc"]
    state S0 emit lamp, {
        A if r#in && !(state) || ((group)) => stay, emit lamp, do log, beep;
        B | C if !!terminal => T, emit lamp,;
        _ => S0, do log,;
        enter do log;
        leave do log, beep;
    }
    #[warn(unreachable_state)]
    terminal state T;
    #[doc = "escaped\tdoc"]
    state Z;
    group G emit lamp {
        /// In a group.
        state U { A => S0; }
        terminal state V emit r#fn;
        state r#fn;
        #[deny(dead_end)]
        state W;
        enter do log;
        A => V;
        _ if enter => stay;
        group H { state X; B => X; group I { state Y; } }
    }
}
machine Clocked {
    inputs go, stop;
    actions tick;
    start Idle;
    state Idle { if go && !stop => Run; => stay; }
    state Run { if stop => Idle; if !stop => Run, do tick; }
}
"##,
    "machine Empty {}",
    "machine OnlyDecls { events A; start S; }",
    "machine M { events state, group, terminal, enter, leave; inputs x; start S; state S { state => S; group | terminal => stay; enter => S; leave if x => S; } }",
    "machine M { events A; inputs x; start S; group G { state => S; terminal => S; state if x => S; } state S; }",
    "machine M { events A; start S; group G { state fn; } state S; }",
    "machine M { events A; start S; group G { state gen; } state S; }",
    "machine M { events stay; start S; }",
    "machine M { events A; start S; state S { A => S, emit; } }",
    "machine M { events A, start S; }",
    "machine M { events A; start S; state S { A if a || => S; A if (a b) => S; } }",
    "machine M { events A; start S; state S { A if a | b => S; A if a & & b => S; A if a ! b => S; } }",
    "machine M { events A; start S; state S { A => S;; } }",
    "machine M { events A; start S; state S { A => S } }",
    "machine M { events A; start S; state S { A => S; ",
    "machine M { events A; start S; state S { A => S; } state T { /// doc\n A => S; } }",
    "machine M { events A; start S; state S { #[allow(x)] A => S; } }",
    "machine M { events A; start S; group G { /// doc\n A => S; state S; } }",
    "machine M { events A; /// doc\n start S; state S; }",
    "machine M { events #[allow(x)] A; start S; state S; }",
    "machine M { events #[doc = b\"x\"] A; start S; state S; }",
    "machine M { events #[doc = \"x\"y] A; start S; state S; }",
    "machine M { events #[doc(x)] A; start S; state S; }",
    "machine M { events #![doc = \"x\"] A; start S; state S; }",
    "machine M { #[doc = 1] state S; }",
    "machine M { start 1; state S; }",
    "machine M { start S; state S { A => 'a; } }",
    "machine M { start S; state S emit a, b, { } state T emit { } }",
    "machine M { start S; state S emit a b; }",
    "machine M { start S; state S; state T = ; }",
    "machine M { start S; unhandled; unhandled reject extra; }",
    "machine M { start S; recover to; recover to S except; }",
    "machine M { start S; never; never in; never in S && in T; }",
    "machine M { start S; state S { A => S, do a, emit b; } }",
    "machine M { start S; state S { A => S, emit a, do; } }",
    "machine M { start S; state S { A => S, , do x; } }",
    "machine M { start S; state S { A | => S; | A => S; A || B => S; } }",
    "machine M { start S; state S { _ | A => S; A _ => S; } }",
    "machine M { start S; state S { A if in S => S; } }",
    "machine M { start S; state S { A if true && false || !true => S; } }",
    "machine M { start S; state S { A => stay stay; } }",
    "machine M { start S; state S { A = > S; A =>> S; A => S, emit r#fn; } }",
    "machine M { start S; state S { A => r#stay; r#A => S; } }",
    "machine M { start S; state S { A => _; _ => fn; fn => S; } }",
    "machine M { start S; terminal S; terminal state; }",
    "machine M { start S; group G { state S } }",
    "machine M { start S; group G; state S; }",
    "machine M { start S; state S { [A] => S; (A) => S; } }",
    "machine M { start S; state S { A if [a] => S; A if {a} => S; } }",
];

#[test]
fn repository_specs_parse_the_same_both_ways() {
    let specs = repo_specs();
    assert!(
        specs.len() >= 10,
        "expected the examples and test specs, found {}",
        specs.len()
    );
    for (path, text) in &specs {
        same_everywhere(&path.display().to_string(), text);
    }
}

#[test]
fn hand_written_specs_parse_the_same_both_ways() {
    let parsed: Vec<usize> = (0..EXTRA.len())
        .filter(|&i| same_everywhere(&format!("extra #{i}"), EXTRA[i]))
        .collect();
    // The first five are valid, most of the rest are not: both kinds are exercised.
    assert!(parsed.starts_with(&[0, 1, 2, 3, 4]), "{parsed:?}");
    assert!(parsed.len() < 12, "{parsed:?}");
}

fn configs() -> Vec<GenConfig> {
    vec![
        GenConfig::default(),
        GenConfig {
            events: 0,
            ..GenConfig::default()
        },
        GenConfig {
            states: (10, 30),
            events: 6,
            inputs: 4,
            ..GenConfig::default()
        },
        GenConfig {
            groups: false,
            inputs: 0,
            ..GenConfig::default()
        },
    ]
}

#[test]
fn random_specs_parse_the_same_both_ways() {
    for (ci, cfg) in configs().iter().enumerate() {
        for seed in 0..60u64 {
            let text = random_spec(seed * 7 + ci as u64, cfg);
            assert!(
                same_everywhere(&format!("random spec {ci}/{seed}"), &text),
                "generated specs are valid:\n{text}"
            );
        }
    }
}

/// Words and punctuation a mutation may insert: the language's keywords and
/// operators, Rust keywords, literals, attributes and doc comments.
const VOCAB: &[&str] = &[
    ";",
    ",",
    "=>",
    "=",
    ">",
    "|",
    "||",
    "&",
    "&&",
    "!",
    "(",
    ")",
    "{",
    "}",
    "[",
    "]",
    "#",
    "_",
    "if",
    "do",
    "emit",
    "stay",
    "in",
    "state",
    "group",
    "terminal",
    "enter",
    "leave",
    "events",
    "inputs",
    "start",
    "never",
    "recover",
    "to",
    "except",
    "unhandled",
    "fn",
    "gen",
    "true",
    "false",
    "r#x",
    "r#fn",
    "1",
    "\"s\"",
    "'c'",
    "#[doc = \"d\"]",
    "#[allow(naming)]",
    "/// doc\n",
    "#[dispatch(match)]",
    "::",
    "->",
    "$",
    "X",
    "S0",
];

fn mutate(rng: &mut Rng, text: &str) -> String {
    let chars: Vec<char> = text.chars().collect();
    let at = rng.index(chars.len() + 1);
    let mut out: String;
    match rng.index(5) {
        0 => {
            // Delete a short run.
            let len = rng.range(1, 6).min(chars.len() - at.min(chars.len()));
            out = chars[..at].iter().collect();
            out.extend(&chars[at + len..]);
        }
        1 | 2 => {
            // Insert a token, spaced or not.
            let w = VOCAB[rng.index(VOCAB.len())];
            out = chars[..at].iter().collect();
            if rng.chance(0.5) {
                out.push(' ');
            }
            out.push_str(w);
            if rng.chance(0.5) {
                out.push(' ');
            }
            out.extend(&chars[at..]);
        }
        3 => {
            // Replace the word at `at` (or the next one).
            let mut s = at;
            while s < chars.len() && !chars[s].is_alphanumeric() {
                s += 1;
            }
            let mut e = s;
            while e < chars.len() && (chars[e].is_alphanumeric() || chars[e] == '_') {
                e += 1;
            }
            out = chars[..s].iter().collect();
            out.push_str(VOCAB[rng.index(VOCAB.len())]);
            out.extend(&chars[e..]);
        }
        _ => {
            // Duplicate or drop a line.
            let mut lines: Vec<&str> = text.lines().collect();
            if lines.is_empty() {
                return text.to_string();
            }
            let l = rng.index(lines.len());
            if rng.chance(0.5) {
                lines.insert(l, lines[l]);
            } else {
                lines.remove(l);
            }
            out = lines.join("\n");
        }
    }
    out
}

#[test]
fn mutated_specs_fail_or_parse_the_same_both_ways() {
    let mut bases: Vec<String> = repo_specs().into_iter().map(|(_, t)| t).collect();
    bases.extend(EXTRA.iter().take(2).map(|s| s.to_string()));
    for (ci, cfg) in configs().iter().enumerate() {
        for seed in 0..8u64 {
            bases.push(random_spec(1000 + seed * 7 + ci as u64, cfg));
        }
    }
    let mut rng = Rng::new(0x5eed);
    let (mut ok, mut failed) = (0usize, 0usize);
    for (bi, base) in bases.iter().enumerate() {
        for k in 0..120 {
            let mut text = base.clone();
            for _ in 0..rng.range(1, 3) {
                text = mutate(&mut rng, &text);
            }
            if same_everywhere(&format!("base {bi}, mutant {k}"), &text) {
                ok += 1;
            } else {
                failed += 1;
            }
        }
    }
    // Both outcomes occur often, so both are compared.
    assert!(ok > 500 && failed > 2000, "{ok} parsed, {failed} failed");
}
