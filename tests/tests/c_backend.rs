//! The C back end against the reference interpreter, gcc, cppcheck and a Cortex-M4
//! cross-compiler.
//!
//! External references: gcc's `-std=c99 -pedantic` diagnostics and its address and
//! undefined-behaviour sanitizers (the C99 standard as gcc implements it); cppcheck's
//! static analysis; Debian's `arm-none-eabi-gcc` and `arm-none-eabi-size` for the
//! footprint (common practice for reporting flash and RAM of embedded C).

use detent_compiler::driver::check_source;
use detent_compiler::emit::c::{generate_c, table_sizes, CFiles};
use detent_compiler::model::Machine;
use detent_tests::c_harness::{
    build_harness, expected_lines, random_cmds, random_timed_cmds, require_tool, run_harness,
    with_counter_faults, Cmd, STRICT_FLAGS,
};
use detent_tests::gen::{random_spec, GenConfig, Rng};
use detent_tests::workspace_root;
use std::path::{Path, PathBuf};
use std::process::Command;

/// Spec files: every `examples/*.detent` plus the hand-written specs of `tests/c/specs`.
fn spec_files() -> Vec<PathBuf> {
    let root = workspace_root();
    let mut files = Vec::new();
    for dir in [root.join("examples"), root.join("tests/c/specs")] {
        if let Ok(rd) = std::fs::read_dir(&dir) {
            for e in rd.flatten() {
                let p = e.path();
                if p.extension().is_some_and(|x| x == "detent") {
                    files.push(p);
                }
            }
        }
    }
    files.sort();
    assert!(
        files.len() >= 4,
        "expected the hand-written specs in tests/c/specs"
    );
    files
}

/// Every machine of a spec text, which must check without errors.
fn machines_of(name: &str, text: &str) -> Vec<Machine> {
    let report = check_source(name, text);
    let errors: Vec<_> = report.diagnostics().filter(|d| d.is_error()).collect();
    assert!(errors.is_empty(), "{name} has errors: {errors:#?}");
    report
        .machines
        .into_iter()
        .filter_map(|m| m.machine)
        .collect()
}

fn file_machines() -> Vec<(String, Machine)> {
    let mut out = Vec::new();
    for f in spec_files() {
        let text = std::fs::read_to_string(&f).unwrap();
        let name = f.file_name().unwrap().to_string_lossy().to_string();
        for m in machines_of(&name, &text) {
            out.push((name.clone(), m));
        }
    }
    out
}

/// Specs built in code for the layout's corner cases: more than 256 states
/// (`uint16_t` state), 40 outputs (a `uint64_t` mask), 70 outputs (several mask
/// words), names that are C keywords, a machine with no transitions at all.
fn corner_specs() -> Vec<(String, String)> {
    let mut ring = String::from(
        "machine BigRing {\n events Next, Back;\n inputs skip;\n outputs odd;\n actions lap;\n start S0;\n unhandled ignore;\n",
    );
    for i in 0..300 {
        let next = (i + 1) % 300;
        let jump = (i + 7) % 300;
        let back = (i + 299) % 300;
        let emit = if i % 2 == 1 { " emit odd" } else { "" };
        let lap = if next == 0 { ", do lap" } else { "" };
        ring.push_str(&format!(
            " state S{i}{emit} {{ Next if !skip => S{next}{lap}; Next if skip => S{jump}; Back => S{back}; }}\n"
        ));
    }
    ring.push_str("}\n");
    let wide = |name: &str, n: usize| {
        let outs: Vec<String> = (0..n).map(|i| format!("o{i}")).collect();
        let mut s = format!(
            "machine {name} {{\n events Go, Stop;\n inputs x;\n outputs {};\n start A;\n unhandled reject;\n",
            outs.join(", ")
        );
        s.push_str(&format!(
            " state A emit o0, o{} {{ Go if x => B, emit o{}, o{}; Stop => stay, emit o33; }}\n",
            n - 1,
            n / 2,
            n - 2
        ));
        s.push_str(&format!(
            " state B emit o{} {{ Go => A, emit o1; Stop if !x => B, emit o{}; }}\n}}\n",
            n - 3,
            n - 1
        ));
        s
    };
    let keywords = "#[allow(naming)]\nmachine Keywords {\n events Int, Default;\n inputs int, class;\n outputs bool, register;\n actions switch, new, NULL;\n start A;\n unhandled ignore;\n state A emit register { Int if int && !class => B, do switch, new; Default => A, emit bool, do NULL; }\n state B { Int => A; Default if class => stay; }\n}\n";
    let frozen = "machine Frozen {\n events Poke;\n outputs on;\n start Only;\n unhandled reject;\n #[allow(dead_end)]\n state Only emit on;\n}\n";
    vec![
        ("big_ring.detent".into(), ring),
        ("wide40.detent".into(), wide("Wide40", 40)),
        ("wide70.detent".into(), wide("Wide70", 70)),
        ("keywords.detent".into(), keywords.into()),
        ("frozen.detent".into(), frozen.into()),
    ]
}

fn random_machines() -> Vec<(String, Machine)> {
    let configs = [
        GenConfig::default(),
        GenConfig {
            events: 0,
            ..GenConfig::default()
        },
        GenConfig {
            inputs: 0,
            outputs: 0,
            actions: 0,
            ..GenConfig::default()
        },
        GenConfig {
            states: (10, 30),
            events: 6,
            inputs: 4,
            outputs: 9,
            actions: 3,
            ..GenConfig::default()
        },
    ];
    let mut out = Vec::new();
    for (ci, cfg) in configs.iter().enumerate() {
        for seed in 0..8u64 {
            let name = format!("random_{ci}_{seed}.detent");
            let text = random_spec(seed * 31 + ci as u64, cfg);
            for m in machines_of(&name, &text) {
                out.push((name.clone(), m));
            }
        }
    }
    out
}

fn all_machines() -> Vec<(String, Machine)> {
    let mut all = file_machines();
    for (name, text) in corner_specs() {
        for m in machines_of(&name, &text) {
            all.push((name.clone(), m));
        }
    }
    all
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir()
        .join(format!("detent-c-{}", std::process::id()))
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn write_files(dir: &Path, files: &CFiles) -> (PathBuf, PathBuf) {
    let h = dir.join(format!("{}.h", files.stem));
    let c = dir.join(format!("{}.c", files.stem));
    std::fs::write(&h, &files.header).unwrap();
    std::fs::write(&c, &files.source).unwrap();
    (h, c)
}

#[test]
fn generated_c_compiles_without_warnings_as_c99_and_the_header_as_cpp() {
    let gcc = require_tool("gcc").unwrap_or_else(|e| panic!("{e}"));
    let gpp = require_tool("g++").unwrap_or_else(|e| panic!("{e}"));
    let mut machines = all_machines();
    machines.extend(random_machines());
    for (i, (file, m)) in machines.iter().enumerate() {
        let files = generate_c(m, file);
        let dir = scratch(&format!("strict-{i}"));
        let (_, c) = write_files(&dir, &files);
        let out = Command::new(&gcc)
            .args(STRICT_FLAGS)
            .arg("-c")
            .arg(&c)
            .arg("-o")
            .arg(dir.join("x.o"))
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{file} / {}:\n{}\n{}",
            m.name,
            String::from_utf8_lossy(&out.stderr),
            files.source
        );
        // The header from C++ (`extern "C"`), with C++'s own pedantic warnings.
        let cpp = dir.join("use.cpp");
        std::fs::write(
            &cpp,
            format!(
                "#include \"{}.h\"\nint main() {{ struct {}_machine m; {}_init(&m); return {}_state_name(({}_state)m.state) == 0; }}\n",
                files.stem, files.stem, files.stem, files.stem, files.stem
            ),
        )
        .unwrap();
        let out = Command::new(&gpp)
            .args([
                "-std=c++11",
                "-Wall",
                "-Wextra",
                "-Werror",
                "-pedantic",
                "-fsyntax-only",
            ])
            .arg(&cpp)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{file} as C++:\n{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}

fn differential(tag: &str, machines: &[(String, Machine)], traces: usize, len: usize) {
    for (i, (file, m)) in machines.iter().enumerate() {
        let files = generate_c(m, file);
        let dir = scratch(&format!("{tag}-{i}"));
        let exe = build_harness(&dir, m, &files).unwrap_or_else(|e| panic!("{e}"));
        let mut rng = Rng::new(0xC0FFEE + i as u64);
        for k in 0..traces {
            let cmds = random_cmds(&mut rng, m, len, k % 2 == 1);
            let got =
                run_harness(&exe, &cmds).unwrap_or_else(|e| panic!("{file} / {}: {e}", m.name));
            let want = expected_lines(m, &cmds);
            assert_eq!(got.len(), want.len(), "{file}: line count");
            for (j, (g, w)) in got.iter().zip(&want).enumerate() {
                assert_eq!(
                    g, w,
                    "{file} / {}: command {j} `{:?}` differs (C left, interpreter right)",
                    m.name, cmds[j]
                );
            }
        }
    }
}

#[test]
fn c_matches_the_interpreter_on_every_example_and_corner_spec() {
    differential("files", &all_machines(), 6, 400);
}

#[test]
fn c_matches_the_interpreter_on_random_machines() {
    differential("random", &random_machines(), 4, 300);
}

/// Random machines with timeouts (nested groups, guarded timeouts, self and stay
/// targets, clocked and event-driven, every policy), with or without a period.
fn random_timed_machines() -> Vec<(String, Machine)> {
    let mut out = Vec::new();
    for (ci, policy) in [None, Some("ignore"), Some("reject"), Some("complete")]
        .into_iter()
        .enumerate()
    {
        for (di, events) in [0usize, 3, 5].into_iter().enumerate() {
            for seed in 0..3u64 {
                let cfg = GenConfig {
                    events,
                    timeouts: true,
                    policy,
                    ..GenConfig::default()
                };
                let name = format!("timed_{ci}_{di}_{seed}.detent");
                let text = random_spec(seed * 131 + (ci * 7 + di) as u64, &cfg);
                let report = check_source(&name, &text);
                if report.has_errors() {
                    // `complete` can be unsatisfiable for a random spec: skip it there.
                    assert_eq!(policy, Some("complete"), "{text}");
                    continue;
                }
                for m in report.machines.into_iter().filter_map(|m| m.machine) {
                    if m.has_timers() {
                        out.push((name.clone(), m));
                    }
                }
            }
        }
    }
    out
}

/// Command list `k` for a machine (see [`c_agrees_on_commands`]).
type Commands<'a> = dyn FnMut(&mut Rng, &Machine, usize) -> Vec<Cmd> + 'a;
/// A machine, a command list and the lines the interpreter predicts for it.
type OnList<'a> = dyn FnMut(&Machine, &[Cmd], &[String]) + 'a;

/// Builds each machine's C harness (ASan and UBSan) and runs 4 command lists on it,
/// `commands(rng, machine, k)` for list `k`; every line the C prints must be the line
/// the interpreter predicts. `seen(machine, commands, predicted lines)` gets each list.
/// Returns the number of commands run.
fn c_agrees_on_commands(
    machines: &[(String, Machine)],
    tag: &str,
    seed: u64,
    commands: &mut Commands<'_>,
    seen: &mut OnList<'_>,
) -> usize {
    let mut steps = 0;
    for (i, (file, m)) in machines.iter().enumerate() {
        let files = generate_c(m, file);
        let dir = scratch(&format!("{tag}-{i}"));
        let exe =
            build_harness(&dir, m, &files).unwrap_or_else(|e| panic!("{e}\n{}", files.source));
        let mut rng = Rng::new(seed + i as u64);
        for k in 0..4 {
            let cmds = commands(&mut rng, m, k);
            let got = run_harness(&exe, &cmds).unwrap_or_else(|e| panic!("{file}: {e}"));
            let want = expected_lines(m, &cmds);
            assert_eq!(got.len(), want.len(), "{file}: line count");
            for (j, (g, w)) in got.iter().zip(&want).enumerate() {
                assert_eq!(
                    g, w,
                    "{file} / {}: command {j} `{:?}` differs (C left, interpreter right)\n{}",
                    m.name, cmds[j], files.source
                );
            }
            steps += cmds.len();
            seen(m, &cmds, &want);
        }
    }
    steps
}

/// C against the interpreter on timed machines: every step compares the state,
/// outputs, actions, handled, the inputs read (hostile hooks), the timers of the active
/// scopes and `next_timeout`; half the traces also write corrupt timer values (above
/// the largest duration, up to the type's maximum) and corrupt states.
#[test]
fn c_matches_the_interpreter_on_random_timed_machines() {
    let machines = random_timed_machines();
    let mut timeouts = 0usize;
    let steps = c_agrees_on_commands(
        &machines,
        "timed",
        0x71_3ED,
        &mut |rng, m, k| {
            let mut cmds = random_timed_cmds(rng, m, 400, 0.7, k % 2 == 1);
            if k % 2 == 1 {
                cmds.extend(random_cmds(rng, m, 60, true));
            }
            cmds
        },
        &mut |m, cmds, _| {
            // Steps where a timeout rule fired: the interpreter says which rule.
            let mut config = m.start_config();
            for c in cmds {
                if let Cmd::Step(e, ins) = c {
                    if (*e as usize) < m.events.len() {
                        let r = m.step_config(
                            &mut config,
                            detent_compiler::model::EventId(*e as u32),
                            ins,
                        );
                        if r.rule().is_some_and(|rule| {
                            matches!(
                                m.rules[rule.index()].trigger,
                                detent_compiler::model::Trigger::After(_)
                            )
                        }) {
                            timeouts += 1;
                        }
                    }
                } else {
                    break;
                }
            }
        },
    );
    eprintln!(
        "{} timed machines, {steps} commands, {timeouts} timeouts fired (C)",
        machines.len()
    );
    assert!(machines.len() >= 24, "{}", machines.len());
    assert!(
        timeouts * 20 > steps,
        "{timeouts} timeouts in {steps} commands"
    );
}

/// Random machines with counters (comparisons in guards, operations in rules and in
/// enter and leave lists), alone, clocked and with timeouts, under every policy.
fn random_counted_machines() -> Vec<(String, Machine)> {
    let mut out = Vec::new();
    for (ci, policy) in [None, Some("ignore"), Some("reject")]
        .into_iter()
        .enumerate()
    {
        for (di, (events, counters, timeouts)) in [
            (3usize, 2usize, false),
            (0, 1, false),
            (4, 3, true),
            (0, 2, true),
        ]
        .into_iter()
        .enumerate()
        {
            for seed in 0..3u64 {
                let cfg = GenConfig {
                    events,
                    counters,
                    timeouts,
                    policy,
                    ..GenConfig::default()
                };
                let name = format!("counted_{ci}_{di}_{seed}.detent");
                let text = random_spec(seed * 173 + (ci * 11 + di) as u64 + 900, &cfg);
                let report = check_source(&name, &text);
                assert!(!report.has_errors(), "{text}");
                for m in report.machines.into_iter().filter_map(|m| m.machine) {
                    out.push((name.clone(), m));
                }
            }
        }
    }
    out
}

/// C against the interpreter on machines with counters: every step compares the
/// state, outputs, actions, handled, the inputs read (hostile hooks), the timers and
/// every counter. Half the command lists write counters: values in range (a restored
/// machine: the interpreter goes on from them) and corrupt ones past the bound, up to
/// the largest value of the member's type, on which `step` must return -1 with every
/// output low and no hook called, until a later write puts the counter back in range.
/// ASan and UBSan watch every run.
#[test]
fn c_matches_the_interpreter_on_random_counted_machines() {
    let machines = random_counted_machines();
    let (mut changed, mut refused) = (0usize, 0usize);
    let steps = c_agrees_on_commands(
        &machines,
        "counted",
        0xC0_0A7,
        &mut |rng, m, k| {
            let mut cmds = random_timed_cmds(rng, m, 300, 0.5, k % 2 == 1);
            if k % 2 == 1 {
                cmds = with_counter_faults(rng, m, cmds, 0.05);
                cmds.extend(random_cmds(rng, m, 40, true));
            }
            cmds
        },
        &mut |_, cmds, want| {
            let mut last = String::new();
            for (c, line) in cmds.iter().zip(want) {
                if let Cmd::Step(..) = c {
                    let counters = line.rsplit(" c=").next().unwrap_or("").to_string();
                    changed += usize::from(!last.is_empty() && counters != last);
                    refused += usize::from(line.split(' ').nth(1) == Some("-1"));
                    last = counters;
                }
            }
        },
    );
    eprintln!(
        "{} counter machines, {steps} commands, {changed} steps changed a counter, {refused} refused (C)",
        machines.len()
    );
    assert!(machines.len() >= 30, "{}", machines.len());
    assert!(
        changed * 20 > steps,
        "{changed} counter changes in {steps} commands"
    );
    assert!(refused > 20, "{refused} steps returned -1");
}

#[test]
fn bad_arguments_return_minus_one_without_sanitizer_reports() {
    let (file, m) = file_machines()
        .into_iter()
        .find(|(_, m)| m.name == "DoorLock")
        .expect("tests/c/specs/door_lock.detent");
    let files = generate_c(&m, &file);
    let exe = build_harness(&scratch("bad"), &m, &files).unwrap_or_else(|e| panic!("{e}"));
    let n_ev = m.events.len() as i64;
    let ins = vec![true; m.inputs.len()];
    let mut cmds = vec![
        Cmd::Step(n_ev, ins.clone()),
        Cmd::Step(-1, ins.clone()),
        Cmd::Step(i64::from(i32::MAX), ins.clone()),
        Cmd::NullHooks(0, ins.clone()),
        Cmd::ZeroHooks(0, ins.clone()),
        Cmd::NullOut(0),
        Cmd::NullMachine(0),
    ];
    for raw in [m.states.len() as u32, 200, 255] {
        cmds.push(Cmd::SetState(raw));
        for e in 0..n_ev {
            cmds.push(Cmd::Step(e, ins.clone()));
        }
    }
    cmds.push(Cmd::SetState(0));
    cmds.push(Cmd::Step(0, ins.clone()));
    let got = run_harness(&exe, &cmds).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(got, expected_lines(&m, &cmds));
    let minus_one = got.iter().filter(|l| l.contains(" -1 ")).count();
    // 7 bad calls, then 3 corrupt bytes x every event.
    assert_eq!(minus_one, 7 + 3 * m.events.len(), "{got:#?}");
    assert!(
        !got.last().unwrap().contains(" -1 "),
        "a restored state steps again"
    );
}

#[test]
fn cppcheck_finds_nothing_in_the_generated_c() {
    let cppcheck = require_tool("cppcheck").unwrap_or_else(|e| panic!("{e}"));
    let dir = scratch("cppcheck");
    let mut sources = Vec::new();
    for (file, m) in all_machines() {
        let files = generate_c(&m, &file);
        sources.push(write_files(&dir, &files).1);
    }
    let out = Command::new(cppcheck)
        .args([
            "--std=c99",
            "--enable=warning,style,performance,portability",
            "--inline-suppr",
            "--error-exitcode=1",
            "--quiet",
        ])
        .arg(format!("-I{}", dir.display()))
        .args(&sources)
        .output()
        .unwrap();
    let report = String::from_utf8_lossy(&out.stderr);
    assert!(
        out.status.success() && report.trim().is_empty(),
        "cppcheck:\n{report}"
    );
}

/// Text, data and bss of one object file, by `arm-none-eabi-size` (Berkeley format).
fn arm_size(size_tool: &Path, obj: &Path) -> (u64, u64, u64) {
    let out = Command::new(size_tool).arg(obj).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    let line = text.lines().nth(1).expect("a size line");
    let nums: Vec<u64> = line
        .split_whitespace()
        .take(3)
        .map(|x| x.parse().unwrap())
        .collect();
    (nums[0], nums[1], nums[2])
}

/// Cross-builds every spec for a Cortex-M4 and reports flash and RAM. With
/// `DETENT_UPDATE_FOOTPRINT=1` it rewrites the table in `docs/c-footprint.md`.
#[test]
fn cortex_m4_build_keeps_everything_in_flash() {
    let gcc = require_tool("arm-none-eabi-gcc").unwrap_or_else(|e| panic!("{e}"));
    let size = require_tool("arm-none-eabi-size").unwrap_or_else(|e| panic!("{e}"));
    let dir = scratch("arm");
    let mut rows = Vec::new();
    let mut machines = file_machines();
    for (name, text) in corner_specs() {
        if name != "keywords.detent" {
            machines.extend(
                machines_of(&name, &text)
                    .into_iter()
                    .map(|m| (name.clone(), m)),
            );
        }
    }
    for (file, m) in &machines {
        let files = generate_c(m, file);
        let (_, c) = write_files(&dir, &files);
        let obj = dir.join(format!("{}.o", files.stem));
        let out = Command::new(&gcc)
            .args([
                "-Os",
                "-mcpu=cortex-m4",
                "-mthumb",
                "-ffunction-sections",
                "-fdata-sections",
            ])
            .args(STRICT_FLAGS)
            .arg("-c")
            .arg(&c)
            .arg("-o")
            .arg(&obj)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{file}:\n{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let (text, data, bss) = arm_size(&size, &obj);
        assert_eq!(
            (data, bss),
            (0, 0),
            "{file}: generated C must use no RAM of its own"
        );
        let t = table_sizes(m);
        assert!(
            text as usize > t.table_bytes,
            "{file}: the tables live in .text/.rodata"
        );
        rows.push(format!(
            "| `{file}` `{}` | {} | {} | {} | {} | {} | {} | {} | {text} | {data} | {bss} |",
            m.name,
            t.states,
            t.events,
            t.cells,
            t.cell_table_bytes,
            t.transitions,
            t.table_bytes,
            text as usize - t.table_bytes,
        ));
    }
    let table = rows.join("\n");
    println!("{table}");
    if std::env::var_os("DETENT_UPDATE_FOOTPRINT").is_some() {
        let path = workspace_root().join("docs/c-footprint.md");
        let doc = std::fs::read_to_string(&path).unwrap_or_default();
        let (start, end) = ("<!-- footprint:start -->", "<!-- footprint:end -->");
        let (a, b) = (
            doc.find(start).expect("start marker"),
            doc.find(end).expect("end marker"),
        );
        let head = "| spec / machine | states | events | cells | cell table B | transitions | all tables B | code B (text - tables) | text | data | bss |\n| --- | --: | --: | --: | --: | --: | --: | --: | --: | --: | --: |";
        let new = format!("{}{start}\n{head}\n{table}\n{}", &doc[..a], &doc[b..]);
        std::fs::write(&path, new).unwrap();
    }
}
