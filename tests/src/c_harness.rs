//! A C test harness for the C back end, and the interpreter's prediction of its output.
//!
//! [`harness_main`] writes a `main.c` for one machine that reads commands from stdin,
//! one per line, calls the generated `<p>_step` and prints one line per command:
//!
//! ```text
//! s EV BITS   step with event number EV and input bits (`0110`, `-` for none)
//! h EV BITS   the same with hooks = NULL
//! z EV BITS   the same with a hooks struct whose function pointers are all NULL
//! o EV        the same with out = NULL
//! m EV        the same with m = NULL
//! S N         store N in the machine's state byte (a corrupt value when N >= states)
//! ```
//!
//! Printed: `STATE RC OUTBITS ACTIONS READS` (`-` for no outputs / no actions / no
//! inputs read; `x` for the outputs of `o`), or `set N` for `S`. READS lists the input
//! numbers the step read, in order, one entry per call of an input hook.
//!
//! The input hooks are hostile: the first call of input `k` in a step returns bit `k`
//! of the command, and every further call of the same input in the same step returns
//! the opposite of the call before (a bouncing pin, a flag cleared on read). A step
//! that reads an input twice therefore both shows a repeated number in READS and sees
//! two different values. [`expected_lines`] computes the same lines with the reference
//! interpreter ([`Machine::step_reading`], which reads each input at most once, the
//! first time a test needs it), so a test compares them verbatim.

use crate::gen::Rng;
use detent_compiler::emit::c::{needs_hooks, CFiles, CNames};
use detent_compiler::interp::Config;
use detent_compiler::model::{EventId, Machine, StateId};
use std::fmt::Write;
use std::path::{Path, PathBuf};
use std::process::Command;

/// One harness command.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Cmd {
    /// `s`: a normal step.
    Step(i64, Vec<bool>),
    /// `h`: a step with NULL hooks.
    NullHooks(i64, Vec<bool>),
    /// `z`: a step with every hook pointer NULL.
    ZeroHooks(i64, Vec<bool>),
    /// `o`: a step with NULL out.
    NullOut(i64),
    /// `m`: a step with NULL machine.
    NullMachine(i64),
    /// `S`: overwrite the state byte.
    SetState(u32),
    /// Writes a raw value into timer `k` of the machine struct (a corrupt or restored
    /// byte; may exceed the timer's largest duration).
    SetTimer(usize, u32),
}

/// gcc's strict warning flags every generated file must pass.
pub const STRICT_FLAGS: &[&str] = &[
    "-std=c99",
    "-Wall",
    "-Wextra",
    "-Werror",
    "-pedantic",
    "-Wconversion",
    "-Wshadow",
];

/// Finds an external tool on PATH, or an error that says how to install it.
pub fn require_tool(name: &str) -> Result<PathBuf, String> {
    let path = std::env::var_os("PATH").unwrap_or_default();
    std::env::split_paths(&path)
        .map(|d| d.join(name))
        .find(|p| p.is_file())
        .ok_or_else(|| {
            format!(
                "`{name}` is not installed or not on PATH; run scripts/test.sh, which installs \
                 the Debian packages the tests need (gcc, gcc-arm-none-eabi, cppcheck)"
            )
        })
}

fn bits(v: &[bool]) -> String {
    if v.is_empty() {
        "-".into()
    } else {
        v.iter().map(|&b| if b { '1' } else { '0' }).collect()
    }
}

/// The text of a command list, one command per line.
pub fn trace_text(cmds: &[Cmd]) -> String {
    let mut out = String::new();
    for c in cmds {
        let _ = match c {
            Cmd::Step(e, v) => writeln!(out, "s {e} {}", bits(v)),
            Cmd::NullHooks(e, v) => writeln!(out, "h {e} {}", bits(v)),
            Cmd::ZeroHooks(e, v) => writeln!(out, "z {e} {}", bits(v)),
            Cmd::NullOut(e) => writeln!(out, "o {e}"),
            Cmd::NullMachine(e) => writeln!(out, "m {e}"),
            Cmd::SetState(n) => writeln!(out, "S {n}"),
            Cmd::SetTimer(k, v) => writeln!(out, "T{k} {v}"),
        };
    }
    out
}

/// A random command list: mostly valid steps, with some out-of-range events, NULL
/// arguments and corrupt or restored state bytes when `faults` is set.
pub fn random_cmds(rng: &mut Rng, m: &Machine, len: usize, faults: bool) -> Vec<Cmd> {
    let n_ev = m.events.len();
    let n_in = m.inputs.len();
    let state_max: u32 = if m.states.len() <= 256 { 255 } else { 65535 };
    (0..len)
        .map(|_| {
            let ins: Vec<bool> = (0..n_in).map(|_| rng.chance(0.5)).collect();
            let ev = rng.index(n_ev) as i64;
            if !faults || rng.chance(0.85) {
                return Cmd::Step(ev, ins);
            }
            match rng.index(7) {
                0 => Cmd::Step(
                    [n_ev as i64, n_ev as i64 + 1, -1, 1000, i64::from(i32::MAX)][rng.index(5)],
                    ins,
                ),
                1 => Cmd::NullHooks(ev, ins),
                2 => Cmd::ZeroHooks(ev, ins),
                3 => Cmd::NullOut(ev),
                4 => Cmd::NullMachine(ev),
                5 => Cmd::SetState(rng.index(m.states.len()) as u32),
                _ => Cmd::SetState(if rng.chance(0.5) {
                    m.states.len() as u32 + rng.index(3) as u32
                } else {
                    state_max
                }),
            }
        })
        .collect()
}

/// Random commands for a machine with timers: events from
/// [`crate::gen::random_timed_trace`] (the time base with probability `p_tick`) and,
/// with `faults`, the faults of [`random_cmds`] plus corrupt timer values (up to the
/// largest value of the timer's C type).
pub fn random_timed_cmds(
    rng: &mut Rng,
    m: &Machine,
    len: usize,
    p_tick: f64,
    faults: bool,
) -> Vec<Cmd> {
    let trace = crate::gen::random_timed_trace(rng, m.events.len(), m.inputs.len(), len, p_tick);
    trace
        .into_iter()
        .map(|(e, ins)| {
            if !faults || m.timers.is_empty() || rng.chance(0.97) {
                return Cmd::Step(e as i64, ins);
            }
            let k = rng.index(m.timers.len());
            let max = m.timers[k].max();
            let type_max: u32 = if max <= 255 {
                255
            } else if max <= 65535 {
                65535
            } else {
                u32::MAX
            };
            let v = match rng.index(3) {
                0 => rng.index(max as usize + 1) as u32,
                1 => max.saturating_add(1 + rng.index(3) as u32).min(type_max),
                _ => type_max,
            };
            Cmd::SetTimer(k, v)
        })
        .collect()
}

/// The timer part of a result line for a machine with timers: ` t=` and, per timer, its
/// value when it counts in the current state (`_` when it does not, or the state is
/// corrupt), then ` n=` and `next_timeout` (0: none). Empty without timers.
fn timer_suffix(m: &Machine, raw: u32, timers: &[u32]) -> String {
    if m.timers.is_empty() {
        return String::new();
    }
    let valid = (raw as usize) < m.states.len();
    let active = if valid {
        m.chain_timers(StateId(raw))
    } else {
        Vec::new()
    };
    let vals: Vec<String> = (0..m.timers.len())
        .map(|k| {
            if active.iter().any(|t| t.index() == k) {
                timers[k].to_string()
            } else {
                "_".to_string()
            }
        })
        .collect();
    let next = if valid {
        m.next_timeout(&Config {
            state: StateId(raw),
            timers: timers.to_vec(),
            counters: vec![0; m.counters.len()],
        })
        .unwrap_or(0)
    } else {
        0
    };
    format!(" t={} n={next}", vals.join(","))
}

fn bad_line(state: u32, m: &Machine) -> String {
    let zeros = if m.outputs.is_empty() {
        "-".to_string()
    } else {
        "0".repeat(m.outputs.len())
    };
    format!("{state} -1 {zeros} - -")
}

/// What the harness must print for the commands, by the reference interpreter.
pub fn expected_lines(m: &Machine, cmds: &[Cmd]) -> Vec<String> {
    let hooks_needed = needs_hooks(m);
    let mut raw: u32 = m.start.0;
    let mut timers: Vec<u32> = vec![0; m.timers.len()];
    let mut counters: Vec<u16> = vec![0; m.counters.len()];
    let mut out = Vec::new();
    for c in cmds {
        let valid =
            |e: i64| (0..m.events.len() as i64).contains(&e) && (raw as usize) < m.states.len();
        let line = match c {
            Cmd::SetState(n) => {
                raw = *n;
                out.push(format!("set {n}"));
                continue;
            }
            Cmd::SetTimer(k, v) => {
                timers[*k] = *v;
                out.push(format!("timer {k} {v}"));
                continue;
            }
            Cmd::NullOut(e) => {
                let _ = e;
                out.push(format!("{raw} -1 x - -"));
                continue;
            }
            Cmd::NullMachine(_) => bad_line(raw, m),
            Cmd::NullHooks(e, _) | Cmd::ZeroHooks(e, _) if hooks_needed || !valid(*e) => {
                bad_line(raw, m)
            }
            Cmd::Step(e, _) if !valid(*e) => bad_line(raw, m),
            Cmd::Step(e, ins) | Cmd::NullHooks(e, ins) | Cmd::ZeroHooks(e, ins) => {
                let mut config = Config {
                    state: StateId(raw),
                    timers: timers.clone(),
                    counters: counters.clone(),
                };
                let r = m.step_config(&mut config, EventId(*e as u32), ins);
                raw = r.to.0;
                timers = config.timers;
                counters = config.counters;
                let outs = r.outputs();
                let ob = if m.outputs.is_empty() {
                    "-".to_string()
                } else {
                    (0..m.outputs.len())
                        .map(|i| {
                            if outs.iter().any(|o| o.index() == i) {
                                '1'
                            } else {
                                '0'
                            }
                        })
                        .collect()
                };
                let acts = if r.actions.is_empty() {
                    "-".to_string()
                } else {
                    r.actions
                        .iter()
                        .map(|a| a.0.to_string())
                        .collect::<Vec<_>>()
                        .join(",")
                };
                let reads = if r.inputs_read.is_empty() {
                    "-".to_string()
                } else {
                    r.inputs_read
                        .iter()
                        .map(|i| i.0.to_string())
                        .collect::<Vec<_>>()
                        .join(",")
                };
                format!(
                    "{raw} {} {ob} {acts} {reads}",
                    if r.handled() { 0 } else { 1 }
                )
            }
        };
        out.push(format!("{line}{}", timer_suffix(m, raw, &timers)));
    }
    out
}

/// The harness `main.c` for a machine whose generated files have stem `p`.
pub fn harness_main(m: &Machine) -> String {
    let n = CNames::new(m);
    let p = &n.p;
    let st_ty = if m.states.len() <= 256 {
        "uint8_t"
    } else {
        "uint16_t"
    };
    let mut c = String::new();
    let _ = writeln!(
        c,
        "/* Test harness for {p}.c, written by detent's test suite. */\n#include <stdio.h>\n#include <stdlib.h>\n#include <string.h>\n#include \"{p}.h\"\n\n#define MAX_ACTIONS 4096u\n#define MAX_READS 4096u\n\nstruct harness_ctx {{\n    const char *bits;\n    size_t n_bits;\n    unsigned int actions[MAX_ACTIONS];\n    size_t n_actions;\n    unsigned int reads[MAX_READS];\n    size_t n_reads;\n}};\n"
    );
    if !m.inputs.is_empty() {
        let _ = writeln!(
            c,
            "/* Hostile: the first call of input k in a step returns bit k, every further call\n   of it in the same step the opposite of the call before. Every call is logged. */\nstatic bool harness_input(void *ctx, size_t k)\n{{\n    struct harness_ctx *c = (struct harness_ctx *)ctx;\n    size_t i;\n    size_t earlier = 0u;\n    bool v = k < c->n_bits && c->bits[k] == '1';\n    for (i = 0u; i < c->n_reads && i < MAX_READS; ++i) {{\n        if (c->reads[i] == (unsigned int)k) {{\n            ++earlier;\n        }}\n    }}\n    if (c->n_reads < MAX_READS) {{\n        c->reads[c->n_reads] = (unsigned int)k;\n    }}\n    c->n_reads++;\n    return (earlier % 2u == 1u) ? !v : v;\n}}\n"
        );
    }
    if !m.actions.is_empty() {
        let _ = writeln!(
            c,
            "static void harness_action(void *ctx, unsigned int a)\n{{\n    struct harness_ctx *c = (struct harness_ctx *)ctx;\n    if (c->n_actions < MAX_ACTIONS) {{\n        c->actions[c->n_actions] = a;\n    }}\n    c->n_actions++;\n}}\n"
        );
    }
    let mut inits = Vec::new();
    for i in 0..m.inputs.len() {
        let _ = writeln!(
            c,
            "static bool in_{i}(void *ctx) {{ return harness_input(ctx, {i}u); }}"
        );
        inits.push(format!("in_{i}"));
    }
    for a in 0..m.actions.len() {
        let _ = writeln!(
            c,
            "static void act_{a}(void *ctx) {{ harness_action(ctx, {a}u); }}"
        );
        inits.push(format!("act_{a}"));
    }
    if inits.is_empty() {
        inits.push("0u".into());
    }
    let _ = writeln!(
        c,
        "\nstatic void print_result(const struct {p}_machine *m, int rc, const struct {p}_outputs *out,\n    const struct harness_ctx *c)\n{{\n    size_t i;\n    printf(\"%u %d \", (unsigned int)m->state, rc);"
    );
    if m.outputs.is_empty() {
        let _ = writeln!(c, "    (void)out;\n    putchar('-');");
    }
    let timer_print = if m.timers.is_empty() {
        String::new()
    } else {
        let mut t = String::from(
            "    fputs(\" t=\", stdout);\n    if ((unsigned int)m->state < (unsigned int)STATE_COUNT_) {\n",
        );
        t.push_str("        switch ((unsigned int)m->state) {\n");
        for si in 0..m.states.len() {
            let chain = m.chain_timers(StateId::from_index(si));
            let _ = writeln!(t, "        case {si}u:");
            for (k, f) in n.timers.iter().enumerate() {
                let sep = if k == 0 { "" } else { "," };
                if chain.iter().any(|x| x.index() == k) {
                    let _ = writeln!(
                        t,
                        "            printf(\"{sep}%lu\", (unsigned long)m->{f});"
                    );
                } else {
                    let _ = writeln!(t, "            fputs(\"{sep}_\", stdout);");
                }
            }
            let _ = writeln!(t, "            break;");
        }
        t.push_str("        default:\n            break;\n        }\n    } else {\n");
        let unders = vec!["_"; m.timers.len()].join(",");
        let _ = writeln!(t, "        fputs(\"{unders}\", stdout);\n    }}");
        let _ = writeln!(
            t,
            "    printf(\" n=%lu\", (unsigned long){p}_next_timeout(m));"
        );
        t
    };
    for o in &n.outputs {
        let _ = writeln!(c, "    putchar(out->{o} ? '1' : '0');");
    }
    let _ = writeln!(
        c,
        "    putchar(' ');\n    if (c->n_actions == 0u) {{\n        putchar('-');\n    }}\n    for (i = 0u; i < c->n_actions && i < MAX_ACTIONS; ++i) {{\n        printf(\"%s%u\", i == 0u ? \"\" : \",\", c->actions[i]);\n    }}\n    putchar(' ');\n    if (c->n_reads == 0u) {{\n        putchar('-');\n    }}\n    for (i = 0u; i < c->n_reads && i < MAX_READS; ++i) {{\n        printf(\"%s%u\", i == 0u ? \"\" : \",\", c->reads[i]);\n    }}\n{timer_print}    putchar('\\n');\n}}\n",
        timer_print = timer_print.replace("STATE_COUNT_", &format!("{}_STATE_COUNT", n.up))
    );
    let _ = writeln!(
        c,
        "int main(void)\n{{\n    const struct {p}_hooks hooks = {{ {} }};\n    struct {p}_hooks zero_hooks;\n    struct {p}_machine m;\n    struct {p}_outputs out;\n    static char line[8192];\n    static struct harness_ctx hc;\n    {p}_init(&m);\n    while (fgets(line, (int)sizeof line, stdin) != NULL) {{\n        char *end = NULL;\n        long ev = strtol(line + 1, &end, 10);\n        int rc;\n        while (*end == ' ') {{\n            ++end;\n        }}\n        hc.bits = end;\n        hc.n_bits = strcspn(end, \" \\r\\n\");\n        hc.n_actions = 0u;\n        hc.n_reads = 0u;\n        memset(&out, 1, sizeof out);\n        switch (line[0]) {{\n        case 's':\n            rc = {p}_step(&m, (enum {p}_event)ev, &hooks, &hc, &out);\n            print_result(&m, rc, &out, &hc);\n            break;\n        case 'h':\n            rc = {p}_step(&m, (enum {p}_event)ev, NULL, &hc, &out);\n            print_result(&m, rc, &out, &hc);\n            break;\n        case 'z':\n            memset(&zero_hooks, 0, sizeof zero_hooks);\n            rc = {p}_step(&m, (enum {p}_event)ev, &zero_hooks, &hc, &out);\n            print_result(&m, rc, &out, &hc);\n            break;\n        case 'o':\n            rc = {p}_step(&m, (enum {p}_event)ev, &hooks, &hc, NULL);\n            printf(\"%u %d x - -\\n\", (unsigned int)m.state, rc);\n            break;\n        case 'm':\n            rc = {p}_step(NULL, (enum {p}_event)ev, &hooks, &hc, &out);\n            print_result(&m, rc, &out, &hc);\n            break;\n        case 'S':\n            m.state = ({st_ty})ev;\n            printf(\"set %ld\\n\", ev);\n            break;\n{set_timer}        default:\n            fprintf(stderr, \"bad command: %s\", line);\n            return 2;\n        }}\n        if ({p}_state_name((enum {p}_state)m.state) == NULL || {p}_event_name((enum {p}_event)ev) == NULL) {{\n            return 3;\n        }}\n    }}\n    return 0;\n}}",
        inits.join(", "),
        set_timer = set_timer_case(m, &n)
    );
    c
}

/// The harness's `T<k> <v>` command: writes `v` into timer `k` (cast to its C type).
fn set_timer_case(m: &Machine, n: &CNames) -> String {
    if m.timers.is_empty() {
        return String::new();
    }
    let mut t = String::from(
        "        case 'T': {\n            unsigned long v = strtoul(end, NULL, 10);\n            switch (ev) {\n",
    );
    for (k, f) in n.timers.iter().enumerate() {
        let max = m.timers[k].max();
        let ty = if max <= 255 {
            "uint8_t"
        } else if max <= 65535 {
            "uint16_t"
        } else {
            "uint32_t"
        };
        let _ = writeln!(
            t,
            "            case {k}:\n                m.{f} = ({ty})v;\n                break;"
        );
    }
    t.push_str("            default:\n                break;\n            }\n            printf(\"timer %ld %lu\\n\", ev, v);\n            break;\n        }\n");
    t
}

/// Writes the generated files and the harness into `dir` and builds the harness with
/// the strict flags and `-fsanitize=address,undefined`. Returns the executable.
pub fn build_harness(dir: &Path, m: &Machine, files: &CFiles) -> Result<PathBuf, String> {
    let gcc = require_tool("gcc")?;
    std::fs::create_dir_all(dir).map_err(|e| e.to_string())?;
    let h = dir.join(format!("{}.h", files.stem));
    let c = dir.join(format!("{}.c", files.stem));
    let main = dir.join("main.c");
    std::fs::write(&h, &files.header).map_err(|e| e.to_string())?;
    std::fs::write(&c, &files.source).map_err(|e| e.to_string())?;
    std::fs::write(&main, harness_main(m)).map_err(|e| e.to_string())?;
    let exe = dir.join("harness");
    let out = Command::new(gcc)
        .args(STRICT_FLAGS)
        .args([
            "-g",
            "-O1",
            "-fsanitize=address,undefined",
            "-fno-sanitize-recover=all",
        ])
        .arg(&c)
        .arg(&main)
        .arg("-o")
        .arg(&exe)
        .output()
        .map_err(|e| format!("cannot run gcc: {e}"))?;
    if !out.status.success() {
        return Err(format!(
            "gcc failed on {}:\n{}",
            dir.display(),
            String::from_utf8_lossy(&out.stderr)
        ));
    }
    Ok(exe)
}

/// Runs a harness on commands; returns its stdout lines, or an error with its stderr
/// when it fails or a sanitizer reports anything.
pub fn run_harness(exe: &Path, cmds: &[Cmd]) -> Result<Vec<String>, String> {
    use std::io::Write as _;
    let mut child = Command::new(exe)
        .env("ASAN_OPTIONS", "detect_leaks=1:abort_on_error=0")
        .env("UBSAN_OPTIONS", "print_stacktrace=1:halt_on_error=1")
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .map_err(|e| format!("cannot run {}: {e}", exe.display()))?;
    let text = trace_text(cmds);
    if let Some(mut stdin) = child.stdin.take() {
        stdin
            .write_all(text.as_bytes())
            .map_err(|e| e.to_string())?;
    }
    let out = child.wait_with_output().map_err(|e| e.to_string())?;
    let stderr = String::from_utf8_lossy(&out.stderr);
    if !out.status.success() || !stderr.trim().is_empty() {
        return Err(format!("harness failed ({}):\n{stderr}", out.status));
    }
    Ok(String::from_utf8_lossy(&out.stdout)
        .lines()
        .map(str::to_string)
        .collect())
}
