//! The `detent` binary end to end: exit codes, formats and lint options of `check`,
//! input limits, and the `draw` and `import` commands.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn detent(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_detent"))
        .args(args)
        .output()
        .expect("the detent binary runs")
}

fn code(o: &Output) -> i32 {
    o.status.code().expect("exit code")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// A fresh scratch folder for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-cli-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

fn write(dir: &Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).expect("write spec");
    p.display().to_string()
}

const CLEAN: &str =
    "machine Clean { events Go; start A; state A { Go => B; } state B { Go => A; } }";
/// One warning (unused input), no error.
const WARNS: &str = "machine Warns { events Go; inputs spare; start A; state A { Go => stay; } }";
/// One error (incomplete: Go unhandled in B) and nothing else.
const ERRS: &str =
    "machine Errs { events Go; start A; state A { Go => B; } state B { Go => B; } state C { } }";
/// The warning silenced by the spec itself.
const ALLOWED: &str = "#[allow(unused_declaration)]
machine Allowed { events Go; inputs spare; start A; state A { Go => stay; } }";

fn examples() -> Vec<String> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples");
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .expect("examples/")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "detent"))
        .map(|p| p.display().to_string())
        .collect();
    v.sort();
    v
}

#[test]
fn exit_codes_and_json_shape() {
    let d = scratch("codes");
    let clean = write(&d, "clean.detent", CLEAN);
    let warns = write(&d, "warns.detent", WARNS);
    let errs = write(&d, "errs.detent", ERRS);
    assert_eq!(code(&detent(&["check", &clean])), 0);
    assert_eq!(code(&detent(&["check", &warns])), 0, "warnings alone pass");
    let o = detent(&["check", &errs]);
    assert_eq!(code(&o), 1);
    assert!(stderr(&o).contains("error[incomplete]"), "{}", stderr(&o));
    assert_eq!(
        code(&detent(&["check", "--format", "yaml", &clean])),
        2,
        "usage"
    );

    let o = detent(&["check", "--format", "json", &errs, &warns]);
    assert_eq!(code(&o), 1);
    let v: Value = serde_json::from_str(&stdout(&o)).expect("JSON on stdout");
    let machines = v["machines"].as_array().expect("machines");
    assert_eq!(machines.len(), 2, "many files, one report");
    assert_eq!(machines[0]["name"], "Errs");
    assert_eq!(machines[0]["file"], errs.as_str());
    let diags = machines[0]["diagnostics"].as_array().expect("diagnostics");
    let incomplete = diags
        .iter()
        .find(|d| d["lint"] == "incomplete")
        .expect("an incomplete diagnostic");
    assert_eq!(incomplete["level"], "error");
    assert_eq!(incomplete["state"], "C");
    assert_eq!(incomplete["event"], "Go");
    assert_eq!(incomplete["states"], serde_json::json!(["C"]));
    assert_eq!(incomplete["span"]["file"], errs.as_str());
    assert!(incomplete["span"]["line"].as_u64().is_some());
    assert!(incomplete["span"]["column"].as_u64().is_some());
    let errors = v["errors"].as_u64().expect("errors");
    let warnings = v["warnings"].as_u64().expect("warnings");
    let levels: Vec<&str> = machines
        .iter()
        .flat_map(|m| m["diagnostics"].as_array().into_iter().flatten())
        .filter_map(|d| d["level"].as_str())
        .collect();
    assert_eq!(
        errors as usize,
        levels.iter().filter(|l| **l == "error").count()
    );
    assert_eq!(
        warnings as usize,
        levels.iter().filter(|l| **l == "warning").count()
    );
    assert_eq!(machines[1]["diagnostics"][0]["lint"], "unused_declaration");
    assert_eq!(machines[1]["diagnostics"][0]["level"], "warning");
}

#[test]
fn deny_warnings_allow_and_spec_attributes() {
    let d = scratch("levels");
    let warns = write(&d, "warns.detent", WARNS);
    let allowed = write(&d, "allowed.detent", ALLOWED);
    let errs = write(&d, "errs.detent", ERRS);
    let o = detent(&["check", "--deny", "warnings", "--format", "json", &warns]);
    assert_eq!(code(&o), 1, "--deny warnings fails on a warning");
    let v: Value = serde_json::from_str(&stdout(&o)).expect("JSON");
    assert_eq!(v["errors"], 1);
    assert_eq!(v["warnings"], 0);
    assert_eq!(v["machines"][0]["diagnostics"][0]["level"], "error");
    let o = detent(&[
        "check",
        "--deny",
        "warnings",
        "--allow",
        "unused_declaration",
        &warns,
    ]);
    assert_eq!(
        code(&o),
        0,
        "--allow silences before --deny promotes: {}",
        stderr(&o)
    );
    assert_eq!(
        code(&detent(&["check", "--deny", "warnings", &allowed])),
        0,
        "#[allow] in the spec"
    );
    let o = detent(&[
        "check", "--allow", "naming", "--allow", "dead_end", "--format", "json", &warns,
    ]);
    assert_eq!(code(&o), 0, "repeatable --allow");
    let v: Value = serde_json::from_str(&stdout(&o)).expect("JSON");
    assert_eq!(v["warnings"], 1, "other lints still report");
    assert_eq!(
        code(&detent(&["check", "--allow", "incomplete", &errs])),
        2,
        "hard errors cannot be allowed"
    );
    assert_eq!(
        code(&detent(&["check", "--allow", "no_such_lint", &warns])),
        2
    );
    assert_eq!(code(&detent(&["check", "--deny", "naming", &warns])), 2);
}

#[test]
fn sarif_for_many_files() {
    let d = scratch("sarif");
    let warns = write(&d, "warns.detent", WARNS);
    let errs = write(&d, "errs.detent", ERRS);
    let o = detent(&["check", "--format", "sarif", &warns, &errs]);
    assert_eq!(code(&o), 1);
    let v: Value = serde_json::from_str(&stdout(&o)).expect("SARIF is JSON");
    assert_eq!(v["version"], "2.1.0");
    assert_eq!(
        v["runs"].as_array().map(Vec::len),
        Some(1),
        "one run for all files"
    );
    let results = v["runs"][0]["results"].as_array().expect("results");
    assert_eq!(results[0]["ruleId"], "unused_declaration");
    assert!(results
        .iter()
        .any(|r| r["ruleId"] == "incomplete" && r["level"] == "error"));
    let uris: Vec<&str> = results
        .iter()
        .filter_map(|r| r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"].as_str())
        .collect();
    assert!(uris.iter().any(|u| u.ends_with("warns.detent")));
    assert!(uris.iter().any(|u| u.ends_with("errs.detent")));
    let o = detent(&["check", "--format", "sarif", "--deny", "warnings", &warns]);
    assert_eq!(code(&o), 1);
    let v: Value = serde_json::from_str(&stdout(&o)).expect("SARIF is JSON");
    assert_eq!(v["runs"][0]["results"][0]["level"], "error");
}

#[test]
fn every_example_checks_clean_in_one_run() {
    let ex = examples();
    assert!(ex.len() >= 6);
    let mut args = vec!["check", "--deny", "warnings"];
    args.extend(ex.iter().map(String::as_str));
    let o = detent(&args);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert!(stdout(&o).contains(&format!("{} machines checked", ex.len())));
}

#[test]
fn bad_inputs_exit_2() {
    let d = scratch("inputs");
    let clean = write(&d, "clean.detent", CLEAN);
    let missing = d.join("missing.detent").display().to_string();
    let o = detent(&["check", &missing]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("cannot read"), "{}", stderr(&o));
    let o = detent(&["check", &clean, &missing]);
    assert_eq!(
        code(&o),
        2,
        "an unreadable file among good ones still exits 2"
    );

    let bad_utf8 = d.join("latin1.detent");
    std::fs::write(&bad_utf8, b"machine M { events Caf\xe9; }").expect("write");
    let o = detent(&["check", &bad_utf8.display().to_string()]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("not valid UTF-8"), "{}", stderr(&o));

    // Over the 64 MiB limit (LANGUAGE.md, Limits): a sparse file, so no disk is used.
    let big = d.join("big.detent");
    let f = std::fs::File::create(&big).expect("create");
    f.set_len(64 * 1024 * 1024 + 1).expect("set_len");
    drop(f);
    let o = detent(&["check", &big.display().to_string()]);
    assert_eq!(code(&o), 2);
    assert!(stderr(&o).contains("limit"), "{}", stderr(&o));
    let _ = std::fs::remove_file(&big);
}

#[test]
fn draw_and_import_commands() {
    let d = scratch("draw");
    let kiln = examples()
        .into_iter()
        .find(|p| p.ends_with("kiln.detent"))
        .expect("kiln");
    let o = detent(&["draw", &kiln]);
    assert_eq!(code(&o), 0);
    assert!(
        stdout(&o).starts_with("digraph \"Kiln\" {"),
        "DOT by default"
    );
    let out = d.join("kiln.svg");
    let o = detent(&[
        "draw",
        &kiln,
        "--format",
        "svg",
        "-o",
        &out.display().to_string(),
    ]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert!(stdout(&o).is_empty(), "-o writes the file, not stdout");
    let svg = std::fs::read_to_string(&out).expect("SVG written");
    assert!(svg.contains("<svg") && svg.contains(">Ramping<"));
    let unwritable = d.join("no/such/dir/k.dot").display().to_string();
    assert_eq!(code(&detent(&["draw", &kiln, "-o", &unwritable])), 2);
    assert_eq!(code(&detent(&["draw", &kiln, "--machine", "Nope"])), 2);

    // table --format csv, then import, then check the imported spec.
    let o = detent(&["table", &kiln, "--format", "csv"]);
    assert_eq!(code(&o), 0);
    let csv = write(&d, "kiln.csv", &stdout(&o));
    let spec = d.join("kiln.imported.detent");
    let o = detent(&["import", &csv, "-o", &spec.display().to_string()]);
    assert_eq!(code(&o), 0, "{}", stderr(&o));
    assert_eq!(code(&detent(&["check", &spec.display().to_string()])), 0);
    let bad = write(
        &d,
        "bad.csv",
        "state,event,guard,next,mealy,actions,moore\n@machine,K,,,,\n",
    );
    let o = detent(&["import", &bad]);
    assert_eq!(code(&o), 1);
    assert!(stderr(&o).contains("row 2, column 7"), "{}", stderr(&o));
    let none = d.join("none.csv").display().to_string();
    assert_eq!(code(&detent(&["import", &none])), 2);
}

/// Two machines of one name: one message, from the driver, for every command (and the
/// macro, `macros/tests/ui/duplicate_machine.rs`), pointing at both definitions.
#[test]
fn a_machine_defined_twice_gets_the_drivers_one_message() {
    let dir = scratch("twice");
    let spec = "machine Twin { events Go; start A; state A { Go => stay; } }\n\
                machine Twin { events Go; start B; state B { Go => stay; } }\n";
    let file = write(&dir, "twice.detent", spec);
    let o = detent(&["check", &file]);
    assert_eq!(code(&o), 1);
    let err = stderr(&o);
    let expected = format!(
        "error[name]: machine `Twin` is defined twice\n --> {file}:2:9\n  |\n1 | machine Twin {{ events Go; start A; state A {{ Go => stay; }} }}\n  |         ---- first defined here\n2 | machine Twin {{ events Go; start B; state B {{ Go => stay; }} }}\n  |         ^^^^\n  |\n"
    );
    assert!(err.contains(&expected), "{err}");
    assert_eq!(err.matches("defined twice").count(), 1, "{err}");
    // The JSON report says the same, once, on the second machine.
    let o = detent(&["check", "--format", "json", &file]);
    let v: Value = serde_json::from_str(&stdout(&o)).expect("json");
    assert_eq!(v["errors"], 1);
    assert_eq!(v["machines"][0]["diagnostics"], serde_json::json!([]));
    assert_eq!(
        v["machines"][1]["diagnostics"][0]["message"],
        "machine `Twin` is defined twice"
    );
    // Other commands refuse the file with the same message.
    for args in [
        vec!["table", file.as_str(), "--machine", "Twin"],
        vec!["gen", "rust", file.as_str()],
    ] {
        let o = detent(&args);
        assert_eq!(code(&o), 1, "{args:?}");
        assert!(
            stderr(&o).contains("error[name]: machine `Twin` is defined twice"),
            "{args:?}: {}",
            stderr(&o)
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// Diagnostics are coloured only on a terminal (or under `CLICOLOR_FORCE`), and never
/// under `NO_COLOR`.
#[test]
fn colour_follows_the_terminal_and_no_color() {
    let dir = scratch("colour");
    let file = write(&dir, "errs.detent", ERRS);
    let run = |env: &[(&str, &str)]| {
        let mut c = Command::new(env!("CARGO_BIN_EXE_detent"));
        c.args(["check", &file])
            .env_remove("NO_COLOR")
            .env_remove("CLICOLOR")
            .env_remove("CLICOLOR_FORCE");
        for (k, v) in env {
            c.env(k, v);
        }
        stderr(&c.output().expect("runs"))
    };
    // A pipe: plain text.
    let plain = run(&[]);
    assert!(
        plain.contains("error[incomplete]") && !plain.contains('\x1b'),
        "{plain}"
    );
    // Forced colour: ANSI escapes around the same text.
    let forced = run(&[("CLICOLOR_FORCE", "1")]);
    assert!(forced.contains("\x1b["), "{forced}");
    assert_eq!(strip_ansi(&forced), plain);
    // NO_COLOR wins over everything.
    let no_color = run(&[("CLICOLOR_FORCE", "1"), ("NO_COLOR", "1")]);
    assert_eq!(no_color, plain);
    // A real terminal (a pseudo-terminal from util-linux's `script`): colour, unless
    // NO_COLOR is set.
    let on_tty = |no_color: bool| {
        let cmd = format!(
            "{}{} check {}",
            if no_color { "NO_COLOR=1 " } else { "" },
            env!("CARGO_BIN_EXE_detent"),
            file
        );
        let o = Command::new("script")
            .args(["-qec", &cmd, "/dev/null"])
            .env("TERM", "xterm-256color")
            .env_remove("NO_COLOR")
            .env_remove("CLICOLOR")
            .env_remove("CLICOLOR_FORCE")
            .output()
            .expect("`script` (util-linux) runs");
        stdout(&o)
    };
    let tty = on_tty(false);
    assert!(tty.contains("\x1b[") && tty.contains("error"), "{tty:?}");
    let tty_plain = on_tty(true);
    assert!(
        tty_plain.contains("error[incomplete]") && !tty_plain.contains('\x1b'),
        "{tty_plain:?}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

/// Removes ANSI SGR sequences (`ESC [ ... m`).
fn strip_ansi(s: &str) -> String {
    let mut out = String::new();
    let mut chars = s.chars().peekable();
    while let Some(c) = chars.next() {
        if c == '\x1b' && chars.peek() == Some(&'[') {
            for d in chars.by_ref() {
                if d == 'm' {
                    break;
                }
            }
        } else {
            out.push(c);
        }
    }
    out
}
