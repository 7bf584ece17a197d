//! `detent fmt`'s layout (`syntax::format`) keeps the meaning and the comments, and is a
//! fixed point: on every example, on random specs (with and without time), on random
//! specs re-indented and strewn with comments and blank lines, and on token-level
//! mutants that still parse. Meaning: the formatted text parses to the same syntax tree
//! (printed without layout) and, where both check clean and the machine has no timers
//! (`equiv` compares untimed machines), `equiv` finds no difference.

use detent_compiler::driver::check_source;
use detent_compiler::minimize::equiv::equiv;
use detent_compiler::syntax::format::format_source;
use detent_compiler::syntax::{parse_source, print::print_file};
use detent_tests::gen::{random_spec, GenConfig, Rng};
use std::path::Path;

/// The plain comments of a text in order (`//` and `/* */`, not doc comments), by a
/// scan of its own, trimmed.
fn comments(text: &str) -> Vec<String> {
    let mut out = Vec::new();
    let b = text.as_bytes();
    let mut i = 0;
    while i < b.len() {
        if b[i..].starts_with(b"///") && !b[i..].starts_with(b"////") {
            while i < b.len() && b[i] != b'\n' {
                i += 1;
            }
        } else if b[i..].starts_with(b"//") {
            let s = i;
            while i < b.len() && b[i] != b'\n' {
                i += 1;
            }
            out.push(text[s..i].trim().to_string());
        } else if b[i..].starts_with(b"/*") {
            let s = i;
            let mut depth = 0;
            while i < b.len() {
                if b[i..].starts_with(b"/*") {
                    depth += 1;
                    i += 2;
                } else if b[i..].starts_with(b"*/") {
                    depth -= 1;
                    i += 2;
                    if depth == 0 {
                        break;
                    }
                } else {
                    i += 1;
                }
            }
            out.push(
                text[s..i]
                    .lines()
                    .map(str::trim)
                    .collect::<Vec<_>>()
                    .join("\n"),
            );
        } else {
            i += 1;
        }
    }
    out
}

/// Checks one text; returns whether `equiv` compared it.
fn check(what: &str, text: &str) -> bool {
    let Ok(tree) = parse_source(text) else {
        assert!(
            format_source(text).is_err(),
            "{what}: formats a text that does not parse"
        );
        return false;
    };
    let formatted = format_source(text).unwrap_or_else(|e| panic!("{what}: {}", e.message));
    let again = format_source(&formatted).unwrap();
    assert_eq!(again, formatted, "{what}: formatting twice differs\n{text}");
    let tree2 = parse_source(&formatted).expect("the formatted text parses");
    assert_eq!(
        print_file(&tree),
        print_file(&tree2),
        "{what}: the syntax tree changed\n--- before\n{text}\n--- after\n{formatted}"
    );
    assert_eq!(
        comments(text),
        comments(&formatted),
        "{what}: comments lost or moved out of order\n--- before\n{text}\n--- after\n{formatted}"
    );
    assert!(
        formatted.ends_with('\n') && !formatted.ends_with("\n\n"),
        "{what}"
    );
    assert!(
        !formatted.contains("\n\n\n"),
        "{what}: two blank lines in a row"
    );
    let a = check_source("a.detent", text);
    let b = check_source("b.detent", &formatted);
    if a.has_errors() {
        return false;
    }
    let (ma, mb) = (a.into_machines(), b.into_machines());
    assert_eq!(ma.len(), mb.len(), "{what}");
    let mut compared = false;
    for (x, y) in ma.iter().zip(&mb) {
        if x.has_timers() {
            continue;
        }
        let d = equiv(x, y).unwrap_or_else(|_| panic!("{what}: declarations differ"));
        assert!(
            d.is_none(),
            "{what}: `equiv` finds a difference after formatting"
        );
        compared = true;
    }
    compared
}

/// Re-indents lines at random, adds own-line and trailing comments and blank lines.
fn decorate(rng: &mut Rng, spec: &str) -> String {
    let mut out = String::new();
    for (n, line) in spec.lines().enumerate() {
        if rng.chance(0.15) {
            out.push('\n');
        }
        if rng.chance(0.15) {
            out.push_str(&" ".repeat(rng.below(9) as usize));
            out.push_str(&format!("// note {n}\n"));
        }
        out.push_str(&" ".repeat(rng.below(9) as usize));
        out.push_str(line.trim());
        if rng.chance(0.2) && !line.contains("//") {
            out.push_str(&" ".repeat(1 + rng.below(6) as usize));
            if rng.chance(0.5) {
                out.push_str(&format!("// tail {n}"));
            } else {
                out.push_str(&format!("/* block {n} */"));
            }
        }
        out.push('\n');
    }
    out
}

/// A token-level mutant: delete, duplicate or swap a few whitespace-separated words.
fn mutate(rng: &mut Rng, spec: &str) -> String {
    let mut words: Vec<String> = spec.split(' ').map(str::to_string).collect();
    for _ in 0..1 + rng.below(3) {
        let i = rng.index(words.len());
        match rng.below(3) {
            0 => {
                words.remove(i);
            }
            1 => {
                let w = words[rng.index(words.len())].clone();
                words.insert(i, w);
            }
            _ => {
                let j = rng.index(words.len());
                words.swap(i, j);
            }
        }
    }
    words.join(" ")
}

#[test]
fn examples_format_to_the_same_machine_and_keep_their_comments() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples");
    let mut n = 0;
    for e in std::fs::read_dir(&dir).unwrap().flatten() {
        let p = e.path();
        if p.extension().is_some_and(|x| x == "detent") {
            let text = std::fs::read_to_string(&p).unwrap();
            assert!(!comments(&text).is_empty() || n > 0);
            check(&p.display().to_string(), &text);
            let mut rng = Rng::new(0xF0_0025 ^ n);
            check(
                &format!("{} decorated", p.display()),
                &decorate(&mut rng, &text),
            );
            n += 1;
        }
    }
    assert!(n >= 5);
}

#[test]
fn random_specs_decorated_and_mutated_keep_meaning_and_comments() {
    let mut rng = Rng::new(0x0025_F0A7);
    let (mut compared, mut mutants_parsed) = (0, 0);
    for seed in 0..150u64 {
        for timeouts in [false, true] {
            let cfg = GenConfig {
                timeouts,
                ..GenConfig::default()
            };
            let spec = random_spec(seed, &cfg);
            compared += usize::from(check(&format!("seed {seed} timeouts {timeouts}"), &spec));
            let d = decorate(&mut rng, &spec);
            compared += usize::from(check(&format!("seed {seed} decorated"), &d));
            let m = mutate(&mut rng, &d);
            mutants_parsed += usize::from(parse_source(&m).is_ok());
            check(&format!("seed {seed} mutant"), &m);
        }
    }
    // The test compares machines, not only texts.
    assert!(compared > 100, "only {compared} equiv comparisons");
    assert!(mutants_parsed > 20, "only {mutants_parsed} mutants parse");
}
