//! Robust front end (issue 8): no input makes any `detent` command panic, hang or die on
//! a signal, deep nesting cannot overflow the stack, and the limits of LANGUAGE.md
//! ("Limits") are enforced with messages that state the limit.
//!
//! Method: a bounded, seeded mutation loop (common practice for fuzzing without a
//! fuzzer: random insert / delete / duplicate / swap of tokens and bytes over known-good
//! inputs) over every `examples/*.detent` and its trace; every mutant goes through every
//! CLI command the binary offers (found from `detent help`, so commands that land later
//! are covered without editing this file), and a larger number of mutants goes through
//! the library in-process under `catch_unwind`. A proptest strategy writes token soup
//! from the language's own tokens. Everything is seeded: a failure prints the seed and
//! the mutant, and reruns the same way.
//!
//! Figures (mutants, commands run) are printed with `--nocapture` and recorded in
//! RELIABILITY.md.

use detent_compiler::driver::check_source;
use detent_compiler::model::Machine;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// A command that runs longer than this is a hang.
const TIMEOUT: Duration = Duration::from_secs(10);
/// The same for inputs that are large on purpose.
const BIG_TIMEOUT: Duration = Duration::from_secs(120);

/// The workspace's one seeded generator (SplitMix64).
use detent_compiler::rng::Rng;

fn workspace_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("cli/ sits in the workspace")
        .to_path_buf()
}

/// Every example spec with its trace (the trace is empty when there is none).
fn examples() -> Vec<(String, Vec<u8>, Vec<u8>)> {
    let dir = workspace_root().join("examples");
    let mut out = Vec::new();
    for e in std::fs::read_dir(&dir).expect("examples/ exists").flatten() {
        let p = e.path();
        if p.extension().is_some_and(|x| x == "detent") {
            let name = p.file_stem().unwrap().to_string_lossy().into_owned();
            let spec = std::fs::read(&p).unwrap();
            let trace = std::fs::read(p.with_extension("trace")).unwrap_or_default();
            out.push((name, spec, trace));
        }
    }
    out.sort();
    assert!(out.len() >= 5, "expected the example specs in examples/");
    out
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-robust-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

// ---------------------------------------------------------------------------------------
// Mutation

/// Tokens of the language (LANGUAGE.md, "Grammar") and some that are not, for inserts.
const POOL: &[&str] = &[
    "machine",
    "pub",
    "events",
    "inputs",
    "outputs",
    "actions",
    "start",
    "unhandled",
    "complete",
    "ignore",
    "reject",
    "never",
    "recover",
    "to",
    "except",
    "state",
    "group",
    "terminal",
    "emit",
    "enter",
    "leave",
    "do",
    "if",
    "stay",
    "in",
    "true",
    "false",
    "_",
    "=>",
    "|",
    "||",
    "&&",
    "!",
    "(",
    ")",
    "{",
    "}",
    "[",
    "]",
    ";",
    ",",
    "#",
    "#[allow(",
    "#[deny(naming)]",
    "#[minimize]",
    "#[dispatch(match)]",
    "///",
    "//",
    "/*",
    "*/",
    "\"",
    "'",
    "'a",
    "r#",
    "=",
    "==",
    "->",
    "::",
    ".",
    "..",
    "@",
    "$",
    "?",
    "Tick",
    "Idle",
    "x",
    "0",
    "1",
    "18446744073709551616",
    "1e999",
    "0x",
    "\\",
    "\u{feff}",
    "\u{202e}",
    "é",
    "\u{1F600}",
    "\t",
    "\r",
    "\n",
];

/// Splits text into tokens: identifier/number runs, whitespace runs, single others.
fn tokens(bytes: &[u8]) -> Vec<Vec<u8>> {
    let mut out: Vec<Vec<u8>> = Vec::new();
    let class = |b: u8| {
        if b.is_ascii_alphanumeric() || b == b'_' || b >= 0x80 {
            0
        } else if b.is_ascii_whitespace() {
            1
        } else {
            2
        }
    };
    for &b in bytes {
        match out.last_mut() {
            Some(last) if class(b) != 2 && class(last[0]) == class(b) => last.push(b),
            _ => out.push(vec![b]),
        }
    }
    out
}

/// Deep nesting: 10,000 levels of parentheses in a guard or of groups.
fn deep(kind: usize) -> Vec<u8> {
    const LEVELS: usize = 10_000;
    let mut s = String::from("machine Deep { events Go; inputs a; start S; unhandled ignore;\n");
    match kind {
        0 => {
            s.push_str("state S { Go if ");
            s.push_str(&"(".repeat(LEVELS));
            s.push('a');
            s.push_str(&")".repeat(LEVELS));
            s.push_str(" => stay; }\n");
        }
        1 => {
            s.push_str("state S { Go if ");
            s.push_str(&"!".repeat(LEVELS));
            s.push_str("a => stay; }\n");
        }
        2 => {
            for i in 0..LEVELS {
                s.push_str(&format!("group G{i} {{ "));
            }
            s.push_str("state S;");
            s.push_str(&" }".repeat(LEVELS));
        }
        _ => {
            // Unbalanced: opens only.
            s.push_str(&"{[(".repeat(LEVELS));
        }
    }
    s.push_str("}\n");
    s.into_bytes()
}

/// One mutation of `bytes`. `kinds` names which kind was applied (for the figures).
fn mutate_once(rng: &mut Rng, bytes: &[u8], names: &[Vec<u8>]) -> Vec<u8> {
    let mut toks = tokens(bytes);
    let n = toks.len().max(1);
    match rng.index(16) {
        0 => {
            if !toks.is_empty() {
                toks.remove(rng.index(n));
            }
        }
        1 => {
            let t = POOL[rng.index(POOL.len())].as_bytes().to_vec();
            toks.insert(rng.index(n + 1).min(toks.len()), t);
        }
        2 => {
            if !toks.is_empty() {
                let i = rng.index(n);
                let t = toks[i].clone();
                toks.insert(i, t);
            }
        }
        3 => {
            if toks.len() >= 2 {
                let (i, j) = (rng.index(n), rng.index(n));
                toks.swap(i, j);
            }
        }
        4 => {
            // Delete a run of tokens.
            if !toks.is_empty() {
                let i = rng.index(n);
                let len = 1 + rng.index(20);
                toks.drain(i..(i + len).min(toks.len()));
            }
        }
        5 => {
            // Duplicate a run of tokens (a copied line or block).
            if !toks.is_empty() {
                let i = rng.index(n);
                let len = 1 + rng.index(40);
                let run: Vec<Vec<u8>> = toks[i..(i + len).min(toks.len())].to_vec();
                let at = rng.index(n);
                for (k, t) in run.into_iter().enumerate() {
                    toks.insert((at + k).min(toks.len()), t);
                }
            }
        }
        6 => {
            // A name from the spec in a random place (undefined and duplicate names).
            if !names.is_empty() {
                let t = names[rng.index(names.len())].clone();
                toks.insert(rng.index(n + 1).min(toks.len()), t);
            }
        }
        _ => {
            // Byte-level mutations.
            let mut b = bytes.to_vec();
            let at = rng.index(b.len() + 1).min(b.len());
            match rng.index(9) {
                0 => {
                    if !b.is_empty() {
                        b.remove(at.min(b.len() - 1));
                    }
                }
                1 => b.insert(at, rng.next_u64() as u8),
                2 => b.insert(at, 0),
                3 => {
                    // Invalid UTF-8: a lone continuation byte, a truncated sequence,
                    // an overlong encoding, a surrogate.
                    let bad: [&[u8]; 5] = [b"\x80", b"\xC3", b"\xC0\xAF", b"\xED\xA0\x80", b"\xFF"];
                    let s = bad[rng.index(bad.len())];
                    b.splice(at..at, s.iter().copied());
                }
                4 => {
                    let digits = "9".repeat(1 + rng.index(400));
                    b.splice(at..at, digits.bytes());
                }
                5 => {
                    let name = "n".repeat(1 + rng.index(200_000));
                    b.splice(at..at, name.bytes());
                }
                6 => b.truncate(at),
                7 => {
                    if !b.is_empty() {
                        let i = at.min(b.len() - 1);
                        b[i] ^= 1 << rng.index(8);
                    }
                }
                _ => {
                    let nest = 1 + rng.index(300);
                    let mut s = "(".repeat(nest);
                    s.push_str(&")".repeat(if rng.chance(0.5) { nest } else { 0 }));
                    b.splice(at..at, s.bytes());
                }
            }
            return b;
        }
    }
    toks.concat()
}

/// Identifiers in a spec, for name mutations.
fn names_of(bytes: &[u8]) -> Vec<Vec<u8>> {
    let mut v: Vec<Vec<u8>> = tokens(bytes)
        .into_iter()
        .filter(|t| t[0].is_ascii_alphabetic())
        .collect();
    v.sort();
    v.dedup();
    v
}

/// The `index`-th mutant of a spec: 1 to 4 mutations, or one of the fixed hostile
/// inputs every few mutants.
fn mutant(rng: &mut Rng, spec: &[u8], index: usize) -> Vec<u8> {
    match index {
        0 => Vec::new(),
        1 => spec.iter().copied().filter(|&b| b != b'\n').collect(),
        2..=5 => deep(index - 2),
        _ => {
            let names = names_of(spec);
            let mut b = spec.to_vec();
            for _ in 0..1 + rng.index(4) {
                b = mutate_once(rng, &b, &names);
            }
            b
        }
    }
}

// ---------------------------------------------------------------------------------------
// Running the binary

/// What a finished command did.
struct Ran {
    code: i32,
    stderr: String,
    /// Standard output, where `--format json|sarif` reports go.
    stdout: String,
}

/// Runs `detent ARGS` with stdin, kills it after [`TIMEOUT`] and fails the test, and
/// fails on any exit other than 0, 1 or 2 (a signal, or 101 for a panic), or a non-zero
/// exit without a message.
fn run_detent(args: &[&std::ffi::OsStr], stdin: &[u8], what: &dyn Fn() -> String) -> Ran {
    run_detent_within(TIMEOUT, args, stdin, what)
}

/// [`run_detent`] with a longer limit, for inputs that are large on purpose (a debug
/// build on two busy cores takes seconds on them; a hang takes forever).
fn run_detent_within(
    timeout: Duration,
    args: &[&std::ffi::OsStr],
    stdin: &[u8],
    what: &dyn Fn() -> String,
) -> Ran {
    let mut child = Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the detent binary runs");
    // Feed stdin and drain the pipes from threads so no pipe can block the child.
    let mut input = child.stdin.take().unwrap();
    let stdin = stdin.to_vec();
    let feeder = std::thread::spawn(move || {
        let _ = input.write_all(&stdin);
    });
    let mut out_pipe = child.stdout.take().unwrap();
    let mut err_pipe = child.stderr.take().unwrap();
    let out_reader = std::thread::spawn(move || {
        let mut v = Vec::new();
        let _ = std::io::Read::read_to_end(&mut out_pipe, &mut v);
        v
    });
    let err_reader = std::thread::spawn(move || {
        let mut v = Vec::new();
        let _ = std::io::Read::read_to_end(&mut err_pipe, &mut v);
        v
    });
    let start = Instant::now();
    let status = loop {
        if let Some(s) = child.try_wait().unwrap() {
            break s;
        }
        if start.elapsed() > timeout {
            let _ = child.kill();
            let _ = child.wait();
            panic!("hang: `detent {args:?}` ran over {timeout:?} on {}", what());
        }
        std::thread::sleep(Duration::from_millis(2));
    };
    let _ = feeder.join();
    let stdout = String::from_utf8_lossy(&out_reader.join().unwrap()).into_owned();
    let stderr = String::from_utf8_lossy(&err_reader.join().unwrap()).into_owned();
    let Some(code) = status.code() else {
        panic!(
            "`detent {args:?}` died on a signal ({status}) on {}\n{stderr}",
            what()
        );
    };
    assert!(
        (0..=2).contains(&code),
        "`detent {args:?}` exited {code} (101 is a panic) on {}\n{stderr}",
        what()
    );
    // A machine-readable report (`--format json|sarif`) carries its findings on stdout.
    let machine_readable = args.iter().any(|a| *a == "json" || *a == "sarif");
    if code != 0 {
        assert!(
            !stderr.trim().is_empty() || (machine_readable && !stdout.trim().is_empty()),
            "`detent {args:?}` exited {code} without a message on {}",
            what()
        );
    }
    Ran {
        code,
        stderr,
        stdout,
    }
}

/// The subcommands the binary offers, from `detent help` (and `detent gen help`).
fn offered_commands() -> Vec<String> {
    let list = |args: &[&str]| -> Vec<String> {
        let o = Command::new(env!("CARGO_BIN_EXE_detent"))
            .args(args)
            .output()
            .unwrap();
        let text = String::from_utf8_lossy(&o.stdout).into_owned();
        text.lines()
            .skip_while(|l| !l.starts_with("Commands:"))
            .skip(1)
            .take_while(|l| l.starts_with("  "))
            .filter_map(|l| l.split_whitespace().next().map(str::to_string))
            .filter(|c| c != "help")
            .collect()
    };
    let mut cmds = Vec::new();
    for c in list(&["help"]) {
        if c == "gen" {
            for t in list(&["gen", "help"]) {
                cmds.push(format!("gen {t}"));
            }
        } else {
            cmds.push(c);
        }
    }
    for must in ["check", "table", "run", "gen c"] {
        assert!(
            cmds.iter().any(|c| c == must),
            "`detent {must}` is missing: {cmds:?}"
        );
    }
    cmds
}

/// The argument lists that exercise one command on a spec file. `other` is a second,
/// well-formed spec (for `equiv`), `trace` a trace file, `out` a scratch folder.
fn invocations(
    cmd: &str,
    spec: &Path,
    other: &Path,
    trace: &Path,
    out: &Path,
) -> Vec<Vec<std::ffi::OsString>> {
    let s = |x: &str| std::ffi::OsString::from(x);
    let p = |x: &Path| x.as_os_str().to_os_string();
    match cmd {
        "check" => vec![
            vec![s("check"), p(spec)],
            vec![
                s("check"),
                p(spec),
                s("--format"),
                s("json"),
                s("--deny"),
                s("warnings"),
            ],
            vec![s("check"), p(spec), s("--format"), s("sarif")],
        ],
        "table" => vec![vec![s("table"), p(spec), s("--format"), s("csv")]],
        "run" => vec![
            vec![s("run"), p(spec), s("--trace"), p(trace)],
            vec![
                s("run"),
                p(spec),
                s("--trace"),
                p(trace),
                s("--format"),
                s("text"),
            ],
        ],
        // Served mode runs until stopped; the page it serves is the one `-o` writes.
        "view" => vec![vec![s("view"), p(spec), s("-o"), p(&out.join("m.html"))]],
        "minimize" => vec![
            vec![s("minimize"), p(spec), s("--format"), s("spec")],
            vec![s("minimize"), p(spec), s("--format"), s("json")],
        ],
        "equiv" => vec![
            vec![s("equiv"), p(spec), p(other)],
            vec![s("equiv"), p(other), p(spec), s("--format"), s("json")],
        ],
        "tour" => vec![vec![s("tour"), p(spec), s("--format"), s("json")]],
        "logic" => vec![vec![
            s("logic"),
            p(spec),
            s("--verilog"),
            p(&out.join("m.v")),
            s("--testbench"),
            p(&out.join("m_tb.v")),
        ]],
        "draw" => vec![
            vec![
                s("draw"),
                p(spec),
                s("--format"),
                s("svg"),
                s("-o"),
                p(&out.join("m.svg")),
            ],
            vec![s("draw"), p(spec), s("--format"), s("dot")],
        ],
        "import" => {
            // The CSV written beside the spec (a mutated table) when there is one, and
            // the spec itself, which is no CSV at all.
            let mut v = vec![vec![
                s("import"),
                p(spec),
                s("-o"),
                p(&out.join("imported.detent")),
            ]];
            let csv = spec.with_extension("csv");
            if csv.is_file() {
                v.push(vec![
                    s("import"),
                    p(&csv),
                    s("-o"),
                    p(&out.join("imported.detent")),
                ]);
            }
            v
        }
        "gen c" => vec![vec![s("gen"), s("c"), p(spec), s("-o"), p(out)]],
        // In place would change the mutant under the commands that follow; the layout
        // check reads and formats all the same. (`fmt -` would read the empty stdin.)
        "fmt" => vec![vec![s("fmt"), s("--check"), p(spec)]],
        // With nothing on standard input the server finds no client and exits; the
        // protocol itself, with mutated specs, is driven by cli/tests/lsp.rs.
        "lsp" => vec![vec![s("lsp")]],
        "gen rust" => vec![
            vec![s("gen"), s("rust"), p(spec), s("-o"), p(&out.join("m.rs"))],
            vec![
                s("gen"),
                s("rust"),
                p(spec),
                s("--dispatch"),
                s("match"),
                s("-o"),
                p(&out.join("m.rs")),
            ],
        ],
        other => {
            panic!("robust.rs does not know how to run `detent {other}`: add it to `invocations`")
        }
    }
}

/// Runs every offered command on `spec` (and `trace`). Returns (commands run, exit 0s).
fn run_all(
    cmds: &[String],
    spec: &Path,
    other: &Path,
    trace: &Path,
    out: &Path,
    what: &dyn Fn() -> String,
) -> (usize, usize) {
    let (mut runs, mut ok) = (0, 0);
    for c in cmds {
        for args in invocations(c, spec, other, trace, out) {
            let refs: Vec<&std::ffi::OsStr> = args.iter().map(|a| a.as_os_str()).collect();
            let r = run_detent(&refs, b"", what);
            runs += 1;
            ok += usize::from(r.code == 0);
        }
    }
    (runs, ok)
}

#[test]
fn every_command_exits_cleanly_on_mutated_examples() {
    const MUTANTS_PER_EXAMPLE: usize = 40;
    let cmds = offered_commands();
    let dir = scratch("cli-mutants");
    let (mut mutants, mut runs, mut zero) = (0usize, 0usize, 0usize);
    for (name, spec, trace) in examples() {
        let mut rng = Rng::new(0xD37E_0008 ^ name.len() as u64);
        let good = dir.join(format!("{name}.detent"));
        std::fs::write(&good, &spec).unwrap();
        // The example's table as CSV, mutated beside each mutant for `import`.
        let table = Command::new(env!("CARGO_BIN_EXE_detent"))
            .args(["table", "--format", "csv"])
            .arg(&good)
            .output()
            .unwrap()
            .stdout;
        for i in 0..MUTANTS_PER_EXAMPLE {
            let m = mutant(&mut rng, &spec, i);
            // Every third mutant also gets a mutated trace.
            let t = if i % 3 == 2 && !trace.is_empty() {
                mutate_once(&mut rng, &trace, &names_of(&spec))
            } else {
                trace.clone()
            };
            let f = dir.join("mutant.detent");
            let tf = dir.join("mutant.trace");
            std::fs::write(&f, &m).unwrap();
            std::fs::write(&tf, &t).unwrap();
            let csv = if i % 2 == 0 {
                mutate_once(&mut rng, &table, &names_of(&spec))
            } else {
                table.clone()
            };
            std::fs::write(dir.join("mutant.csv"), &csv).unwrap();
            let out = dir.join("out");
            let what = || {
                format!(
                    "mutant {i} of {name} (seed {:#x}):\n{}\n--- trace:\n{}",
                    0xD37E_0008u64 ^ name.len() as u64,
                    String::from_utf8_lossy(&m[..m.len().min(4000)]),
                    String::from_utf8_lossy(&t[..t.len().min(1000)])
                )
            };
            let (r, z) = run_all(&cmds, &f, &good, &tf, &out, &what);
            mutants += 1;
            runs += r;
            zero += z;
        }
    }
    println!(
        "robust CLI: {mutants} mutants x {} commands ({:?}) = {runs} runs, {zero} exited 0, none panicked, hung or died on a signal",
        cmds.len(),
        cmds
    );
    assert!(runs >= mutants * 5);
    let _ = std::fs::remove_dir_all(&dir);
}

/// The library calls behind the commands, on one mutant; panics propagate.
fn exercise_library(text: &str, trace: &str) -> usize {
    let report = check_source("mutant.detent", text);
    let _ = report.has_errors();
    let mut machines = 0;
    if report.has_errors() {
        return 0;
    }
    for m in report.machines.iter().filter_map(|r| r.machine.as_ref()) {
        machines += 1;
        exercise_machine(m, trace);
    }
    machines
}

fn exercise_machine(m: &Machine, trace: &str) {
    use detent_compiler::table::{render, TableFormat};
    for f in [TableFormat::Text, TableFormat::Json, TableFormat::Csv] {
        let _ = render(m, f);
    }
    if let Ok(steps) = detent_compiler::trace::parse_trace(m, trace) {
        let lines = detent_compiler::trace::run_json_lines(m, &steps);
        assert_eq!(lines.len(), steps.len() + 1);
    }
    if detent_compiler::emit::c::cell_count(m) <= 1 << 16 {
        let _ = detent_compiler::emit::c::generate_c(m, "mutant.detent");
    }
    // minimize: the printed spec parses and checks again, and is equivalent. A machine
    // with a group's timer has no flat spec (`minimize --format spec` refuses it, and
    // `#[minimize]` keeps it as it is): only its quotient is compared.
    if !detent_compiler::minimize::machine::has_group_timer(m) {
        let spec = detent_compiler::minimize::minimized_spec(m);
        let again = check_source("minimized.detent", &spec);
        let errors: Vec<&str> = again
            .diagnostics()
            .filter(|d| d.is_error())
            .map(|d| d.message.as_str())
            .collect();
        assert!(
            errors.is_empty(),
            "the minimized spec has errors {errors:?}:\n{spec}"
        );
    }
    let q = detent_compiler::minimize::minimized_machine(m);
    assert!(matches!(
        detent_compiler::minimize::equiv::equiv(m, &q),
        Ok(None)
    ));
    // tour: fires every reachable transition.
    let t = detent_compiler::tour::tour(m);
    assert_eq!(t.covers, t.transitions, "the tour misses transitions");
    // draw and the CSV round trip through import.
    let _ = detent_compiler::emit::dot::to_dot(m);
    let _ = detent_compiler::emit::svg::render_svg(&detent_compiler::emit::diagram::to_diagram(m));
    let csv = render(m, TableFormat::Csv);
    let _ = detent_compiler::import::import_spec(&csv);
}

/// `import` on text that is no table.
fn exercise_import(text: &str) {
    let _ = detent_compiler::import::import_spec(text);
}

#[test]
fn the_library_never_panics_on_thousands_of_mutants() {
    const MUTANTS_PER_EXAMPLE: usize = 1000;
    let (mut mutants, mut clean) = (0usize, 0usize);
    let mut failures = Vec::new();
    for (name, spec, trace) in examples() {
        let seed = 0x5EED_0008 ^ (name.len() as u64) << 8;
        let mut rng = Rng::new(seed);
        let trace_text = String::from_utf8_lossy(&trace).into_owned();
        for i in 0..MUTANTS_PER_EXAMPLE {
            let m = mutant(&mut rng, &spec, i);
            let t = if i % 2 == 1 {
                String::from_utf8_lossy(&mutate_once(&mut rng, trace.as_slice(), &names_of(&spec)))
                    .into_owned()
            } else {
                trace_text.clone()
            };
            let text = String::from_utf8_lossy(&m).into_owned();
            mutants += 1;
            match std::panic::catch_unwind(|| {
                exercise_import(&text);
                exercise_library(&text, &t)
            }) {
                Ok(n) => clean += usize::from(n > 0),
                Err(_) => failures.push(format!(
                    "mutant {i} of {name} (seed {seed:#x}):\n{}\n--- trace:\n{t}",
                    &text[..text.len().min(4000)]
                )),
            }
        }
    }
    println!("robust library: {mutants} mutants through check, table, run, gen c, minimize, equiv, tour, draw and import; {clean} still error-free");
    assert!(
        failures.is_empty(),
        "{} panics; first:\n{}",
        failures.len(),
        failures[0]
    );
}

// ---------------------------------------------------------------------------------------
// Token soup (proptest)

mod soup {
    use super::{exercise_library, POOL};
    use proptest::prelude::*;

    /// A piece of soup: a pool token, a name, or a number.
    fn piece() -> impl Strategy<Value = String> {
        prop_oneof![
            6 => proptest::sample::select(POOL).prop_map(str::to_string),
            2 => proptest::sample::select(&["A", "B", "S0", "S1", "Ev0", "in0", "out0", "act0", "G0"][..])
                .prop_map(str::to_string),
            1 => any::<u64>().prop_map(|n| n.to_string()),
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 2000, rng_seed: proptest::test_runner::RngSeed::Fixed(8), failure_persistence: None, ..ProptestConfig::default() })]

        /// Random token soup, with a machine header half of the time so the parser gets
        /// past the first token.
        #[test]
        fn token_soup_never_panics_and_neither_does_csv_soup(header in any::<bool>(), pieces in proptest::collection::vec(piece(), 0..120)) {
            let mut text = String::new();
            if header {
                text.push_str("machine M { events A, B; inputs x; outputs y; actions z; start S0; ");
            }
            for p in &pieces {
                text.push_str(p);
                text.push(' ');
            }
            exercise_library(&text, "A x=1\nB\nTick\n");
            super::exercise_import(&text.replace(' ', ","));
        }
    }
}

// ---------------------------------------------------------------------------------------
// Deep recursion

/// Runs `f` in a thread with a small stack: a recursion that the parser does not bound
/// overflows it and aborts the test process.
fn on_small_stack<T: Send + 'static>(kib: usize, f: impl FnOnce() -> T + Send + 'static) -> T {
    std::thread::Builder::new()
        .stack_size(kib * 1024)
        .spawn(f)
        .unwrap()
        .join()
        .expect("no panic")
}

/// The small stack: 384 KiB. The parser stops at `MAX_NESTING` (128) levels; in a debug
/// build 128 frames of its `!` recursion take about 300 KiB (measured: 256 KiB
/// overflows, 384 KiB does not), while 10,000 unbounded levels would take over 20 MiB.
/// `DEEP_STACK_KIB` overrides it for measuring.
fn stack_kib() -> usize {
    std::env::var("DEEP_STACK_KIB")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(384)
}

#[test]
fn ten_thousand_levels_are_rejected_on_a_small_stack() {
    for kind in 0..4 {
        let text = String::from_utf8(deep(kind)).unwrap();
        let msgs = on_small_stack(stack_kib(), move || {
            let r = check_source("deep.detent", &text);
            assert!(
                r.has_errors(),
                "10,000 levels (kind {kind}) must be an error"
            );
            r.diagnostics()
                .map(|d| d.message.clone())
                .collect::<Vec<_>>()
        });
        let all = msgs.join("\n");
        // Kind 3 never closes a bracket: the tokenizer refuses it before any nesting.
        assert!(
            kind == 3 || all.contains("nested deeper than"),
            "kind {kind}: the message should state the nesting limit: {all}"
        );
    }
}

#[test]
fn nesting_just_under_the_limit_checks_and_generates_on_a_1_mib_stack() {
    use detent_compiler::syntax::parse::MAX_NESTING;
    // Parentheses and groups nested as deep as the parser allows still go through every
    // pass; the deepest recursion is bounded by MAX_NESTING.
    let depth = MAX_NESTING - 4;
    let mut parens = String::from(
        "machine P { events Go; inputs a, b; start S; unhandled ignore;\n state S { Go if ",
    );
    parens.push_str(&"(".repeat(depth));
    parens.push_str("a && !b");
    parens.push_str(&")".repeat(depth));
    parens.push_str(" => T; }\n state T { Go => S; }\n}\n");
    let mut groups = String::from("machine Q { events Go; start S; unhandled ignore;\n");
    for i in 0..depth {
        groups.push_str(&format!("group G{i} {{\n"));
    }
    groups.push_str("state S { Go => T; }\n state T { Go => S; }\n");
    groups.push_str(&"}\n".repeat(depth));
    groups.push_str("}\n");
    for text in [parens, groups] {
        on_small_stack(1024, move || {
            let r = check_source("deep.detent", &text);
            let errs: Vec<_> = r
                .diagnostics()
                .filter(|d| d.is_error())
                .map(|d| d.message.clone())
                .collect();
            assert!(errs.is_empty(), "{errs:?}");
            assert_eq!(exercise_library(&text, "Go a=1\nGo\n"), 1);
        });
    }
}

#[test]
fn the_longest_operand_chains_check_on_a_small_stack() {
    use detent_compiler::syntax::parse::MAX_TERMS;
    // `a && b && ...` parses into a left-deep tree as deep as it has operands, and the
    // resolver and checker recurse over it: MAX_TERMS bounds that depth.
    for op in [" && ", " || "] {
        for n in [MAX_TERMS, MAX_TERMS + 1] {
            let names: Vec<String> = (0..n).map(|i| format!("i{}", i % 60)).collect();
            let text = format!(
                "machine Chain {{ events Go; inputs {}; start S; unhandled ignore;\n state S {{ Go if {} => T; }}\n state T {{ Go => S; }}\n}}\n",
                (0..60).map(|i| format!("i{i}")).collect::<Vec<_>>().join(", "),
                names.join(op)
            );
            on_small_stack(stack_kib(), move || {
                let r = check_source("chain.detent", &text);
                let errs: Vec<String> = r
                    .diagnostics()
                    .filter(|d| d.is_error())
                    .map(|d| d.message.clone())
                    .collect();
                if n > MAX_TERMS {
                    assert!(
                        errs.iter()
                            .any(|e| e.contains(&format!("more than {MAX_TERMS} operands"))),
                        "{errs:?}"
                    );
                } else {
                    assert!(errs.is_empty(), "{errs:?}");
                    exercise_library(&text, "Go i0=1\nGo\n");
                }
            });
        }
    }
}

/// `(a0 && b0) || ... || (aN && bN)` with every `a` declared before every `b`: its
/// decision diagram in declaration order has 2^N nodes (Bryant 1986).
fn blowup_spec(pairs: usize, split: bool) -> String {
    let a: Vec<String> = (0..pairs).map(|i| format!("a{i}")).collect();
    let b: Vec<String> = (0..pairs).map(|i| format!("b{i}")).collect();
    let term = |i: usize| format!("(a{i} && b{i})");
    let rules = if split {
        // Each guard is small; their union (the coverage check) is not.
        let h = pairs / 2;
        format!(
            "Go if {} => T; Go if {} => S;",
            (0..h).map(term).collect::<Vec<_>>().join(" || "),
            (h..pairs).map(term).collect::<Vec<_>>().join(" || ")
        )
    } else {
        format!(
            "Go if {} => T;",
            (0..pairs).map(term).collect::<Vec<_>>().join(" || ")
        )
    };
    format!(
        "#[allow(unused_declaration)]\nmachine Blowup {{ events Go; inputs {}, {}; start S; unhandled {};\n state S {{ {rules} }}\n state T {{ Go => S; }}\n}}\n",
        a.join(", "),
        b.join(", "),
        if split { "complete" } else { "ignore" }
    )
}

#[test]
fn guards_without_a_small_decision_diagram_are_an_error_not_a_hang() {
    let cmds = offered_commands();
    let dir = scratch("blowup");
    let good = dir.join("good.detent");
    std::fs::write(
        &good,
        "machine D { events Go; start S; state S { Go => stay; } }\n",
    )
    .unwrap();
    let trace = dir.join("t.trace");
    std::fs::write(&trace, "Go\n").unwrap();
    for (pairs, split) in [(32, false), (24, true)] {
        let f = dir.join(format!("blowup{pairs}.detent"));
        std::fs::write(&f, blowup_spec(pairs, split)).unwrap();
        let what = || format!("{pairs} pairs, split {split}");
        // Every command goes through the same check: the first form of each, and the split
        // case through `check` only.
        // `import` reads CSV tables, not specs.
        for c in cmds
            .iter()
            // `fmt` lays text out without resolving it; `lsp` reads no file argument.
            .filter(|c| *c != "import" && *c != "fmt" && *c != "lsp")
            .filter(|c| !split || *c == "check")
        {
            if let Some(args) = invocations(c, &f, &good, &trace, &dir.join("out")).first() {
                let refs: Vec<&std::ffi::OsStr> = args.iter().map(|a| a.as_os_str()).collect();
                let r = run_detent_within(BIG_TIMEOUT, &refs, b"", &what);
                if r.stderr.contains("not built yet") {
                    continue; // a format that does not exist yet (SARIF before it lands)
                }
                // `equiv` says "could not compare" (2) for a spec with errors.
                let expected = if *c == "equiv" { 2 } else { 1 };
                assert_eq!(r.code, expected, "`detent {c}`: {}", r.stderr);
                assert!(
                    r.stderr.contains("1048576 decision-diagram nodes")
                        || r.stdout.contains("1048576 decision-diagram nodes"),
                    "`detent {c}`: {}",
                    r.stderr
                );
            }
        }
    }
    // Declared pairwise, the same guard is small and checks clean.
    let mut fine = blowup_spec(32, false);
    let interleaved: Vec<String> = (0..32)
        .flat_map(|i| [format!("a{i}"), format!("b{i}")])
        .collect();
    let decl = fine.lines().nth(1).unwrap().to_string();
    let start = decl.find("inputs ").unwrap() + "inputs ".len();
    let end = decl.find("; start").unwrap();
    fine = fine.replace(&decl[start..end], &interleaved.join(", "));
    let r = check_text("interleaved", &fine);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let _ = std::fs::remove_dir_all(&dir);
}

/// A machine with a group of `n` states that a `never` property names.
fn big_group_spec(n: usize) -> String {
    let mut spec = String::from(
        "#[allow(unreachable_state, dead_end, equivalent_states)]\nmachine Big { events Go; outputs lit; start S0; unhandled ignore;\n never in Huge && lit;\n group Huge {\n",
    );
    for i in 0..n {
        spec.push_str(&format!("  state S{i};\n"));
    }
    spec.push_str(" }\n state Out emit lit { Go => S0; }\n}\n");
    spec
}

#[test]
fn big_groups_named_in_properties_print_on_a_small_stack() {
    // `in G` over a group of 60,000 states is flattened into a disjunction of 60,000
    // terms by the passes that print specs and tables; none may recurse that deep.
    on_small_stack(stack_kib(), || {
        let text = big_group_spec(60_000);
        let r = check_source("big.detent", &text);
        assert!(!r.has_errors());
        let m = r.machines[0].machine.as_ref().unwrap();
        let csv = detent_compiler::table::render(m, detent_compiler::table::TableFormat::Csv);
        assert!(csv.contains("in S59999"));
        let spec = detent_compiler::minimize::minimized_spec(m);
        assert!(spec.contains("never"), "{}", &spec[..spec.len().min(400)]);
    });
}

#[test]
fn big_groups_named_in_properties_go_through_every_command() {
    let cmds = offered_commands();
    let dir = scratch("big-group");
    let f = dir.join("big.detent");
    std::fs::write(&f, big_group_spec(30_000)).unwrap();
    let trace = dir.join("t.trace");
    std::fs::write(&trace, "Go\nGo\n").unwrap();
    for c in &cmds {
        // The first form of each command: they all share the path to the machine.
        if let Some(args) = invocations(c, &f, &f, &trace, &dir.join("out")).first() {
            let refs: Vec<&std::ffi::OsStr> = args.iter().map(|a| a.as_os_str()).collect();
            run_detent_within(BIG_TIMEOUT, &refs, b"", &|| {
                "a group of 30,000 states in `never`".into()
            });
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn ten_thousand_levels_through_every_command() {
    let cmds = offered_commands();
    let dir = scratch("deep");
    let good = dir.join("good.detent");
    std::fs::write(
        &good,
        "machine D { events Go; start S; state S { Go => stay; } }\n",
    )
    .unwrap();
    let trace = dir.join("t.trace");
    std::fs::write(&trace, "Go\n").unwrap();
    for kind in 0..4 {
        let f = dir.join(format!("deep{kind}.detent"));
        std::fs::write(&f, deep(kind)).unwrap();
        let what = || format!("10,000 levels, kind {kind}");
        for c in &cmds {
            for args in invocations(c, &f, &good, &trace, &dir.join("out")) {
                let refs: Vec<&std::ffi::OsStr> = args.iter().map(|a| a.as_os_str()).collect();
                let r = run_detent(&refs, b"", &what);
                assert_ne!(r.code, 0, "`detent {c}` accepted 10,000 levels");
            }
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
}

// ---------------------------------------------------------------------------------------
// Files that are not specs

#[test]
fn empty_files_directories_missing_files_and_huge_files_are_clean_errors() {
    let cmds = offered_commands();
    let dir = scratch("files");
    let good = dir.join("good.detent");
    std::fs::write(
        &good,
        "machine D { events Go; start S; state S { Go => stay; } }\n",
    )
    .unwrap();
    let trace = dir.join("t.trace");
    std::fs::write(&trace, "Go\n").unwrap();
    let empty = dir.join("empty.detent");
    std::fs::write(&empty, "").unwrap();
    let folder = dir.join("folder.detent");
    std::fs::create_dir_all(&folder).unwrap();
    let missing = dir.join("missing.detent");
    // 64 MiB + 1 byte, sparse: the tool must refuse it from its size, not read it.
    let huge = dir.join("huge.detent");
    let f = std::fs::File::create(&huge).unwrap();
    f.set_len(64 * 1024 * 1024 + 1).unwrap();
    drop(f);
    for (label, path) in [
        ("empty", &empty),
        ("directory", &folder),
        ("missing", &missing),
        ("64 MiB + 1", &huge),
    ] {
        let what = || format!("the {label} file");
        // `lsp` takes no file: it serves what an editor sends.
        for c in cmds.iter().filter(|c| *c != "lsp") {
            for args in invocations(c, path, &good, &trace, &dir.join("out")) {
                let refs: Vec<&std::ffi::OsStr> = args.iter().map(|a| a.as_os_str()).collect();
                let r = run_detent(&refs, b"", &what);
                if label == "64 MiB + 1" && c != "import" {
                    assert_eq!(r.code, 2, "`detent {c}` on a 64 MiB + 1 file: {}", r.stderr);
                    assert!(r.stderr.contains("64 MiB"), "`detent {c}`: {}", r.stderr);
                }
                if label == "directory" || label == "missing" {
                    assert_eq!(r.code, 2, "`detent {c}` on a {label}: {}", r.stderr);
                }
            }
        }
        // The trace file too.
        let r = run_detent(
            &[
                "run".as_ref(),
                good.as_os_str(),
                "--trace".as_ref(),
                path.as_os_str(),
            ],
            b"",
            &what,
        );
        assert_eq!(
            r.code,
            if label == "empty" { 0 } else { 2 },
            "{label} trace: {}",
            r.stderr
        );
    }
    // A trace over the limit on standard input.
    let big = vec![b'\n'; 64 * 1024 * 1024 + 10];
    let r = run_detent(
        &[
            "run".as_ref(),
            good.as_os_str(),
            "--trace".as_ref(),
            "-".as_ref(),
        ],
        &big,
        &|| "a 64 MiB + 10 trace on stdin".into(),
    );
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(r.stderr.contains("64 MiB"), "{}", r.stderr);
    let _ = std::fs::remove_dir_all(&dir);
}

// ---------------------------------------------------------------------------------------
// Limits (LANGUAGE.md, "Limits")

/// `detent check` on generated text: the exit code and stderr.
fn check_text(name: &str, text: &str) -> Ran {
    let dir = scratch(name);
    let f = dir.join(format!("{name}.detent"));
    std::fs::write(&f, text).unwrap();
    let r = run_detent(&["check".as_ref(), f.as_os_str()], b"", &|| {
        name.to_string()
    });
    let _ = std::fs::remove_dir_all(&dir);
    r
}

#[test]
fn more_than_65535_states_is_an_error_that_states_the_limit() {
    let mut s = String::from("machine Many { events Go; start S0; unhandled ignore;\n");
    for i in 0..65_536 {
        s.push_str(&format!("state S{i};\n"));
    }
    s.push_str("}\n");
    let r = check_text("states", &s);
    assert_eq!(r.code, 1, "{}", r.stderr);
    assert!(
        r.stderr.contains("65536 states") && r.stderr.contains("65535"),
        "{}",
        &r.stderr[..r.stderr.len().min(2000)]
    );
}

#[test]
fn more_than_65535_events_is_an_error_that_states_the_limit() {
    let names: Vec<String> = (0..65_536).map(|i| format!("E{i}")).collect();
    let s = format!(
        "machine Many {{ events {}; start S; unhandled ignore; state S; }}\n",
        names.join(", ")
    );
    let r = check_text("events", &s);
    assert_eq!(r.code, 1, "{}", r.stderr);
    assert!(
        r.stderr.contains("65536 events") && r.stderr.contains("65535"),
        "{}",
        &r.stderr[..r.stderr.len().min(2000)]
    );
}

#[test]
fn more_than_64_inputs_is_an_error_that_states_the_limit_and_64_are_fine() {
    let spec = |n: usize| {
        let names: Vec<String> = (0..n).map(|i| format!("in{i}")).collect();
        // Every input in a guard, so none is unused and the coverage check sees them all.
        let guard = names.join(" && ");
        format!(
            "#[allow(unused_declaration)]\nmachine Wide {{ events Go; inputs {}; start S; unhandled ignore;\n state S {{ Go if {guard} => T; }}\n state T {{ Go => S; }}\n}}\n",
            names.join(", ")
        )
    };
    let r = check_text("inputs65", &spec(65));
    assert_eq!(r.code, 1, "{}", r.stderr);
    assert!(
        r.stderr.contains("65 inputs") && r.stderr.contains("64"),
        "{}",
        r.stderr
    );
    let r = check_text("inputs64", &spec(64));
    assert_eq!(r.code, 0, "64 inputs are within the limit: {}", r.stderr);
}
