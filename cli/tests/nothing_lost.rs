//! Nothing lost (issue 8): every file detent writes is written atomically (a temporary
//! file in the same folder, then a rename), so a failed or interrupted run leaves the
//! previous file intact and never a half-written file under the real name; traces with
//! unknown events or inputs are errors with line numbers.
//!
//! A write is made to fail, or the process is killed in the middle of it, with the
//! file-size limit (`ulimit -f`, POSIX `setrlimit(RLIMIT_FSIZE)`): past the limit the
//! kernel sends SIGXFSZ, which kills the process, or, when the signal is ignored, makes
//! `write` fail with EFBIG (POSIX `write()`, common practice for inducing write errors).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn detent() -> Command {
    Command::new(env!("CARGO_BIN_EXE_detent"))
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-lost-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// A machine whose generated C header and source are both well over 4 KiB.
fn big_spec() -> String {
    let mut s = String::from(
        "machine Wide {\n events Next, Back;\n outputs odd;\n start S0;\n unhandled ignore;\n",
    );
    for i in 0..120 {
        let emit = if i % 2 == 1 { " emit odd" } else { "" };
        s.push_str(&format!(
            " state S{i}{emit} {{ Next => S{}; Back => S{}; }}\n",
            (i + 1) % 120,
            (i + 119) % 120
        ));
    }
    s.push_str("}\n");
    s
}

fn names_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

/// `detent gen c SPEC -o OUT` under `ulimit -f 4` (4 blocks: 2 KiB in dash, which counts
/// 512-byte blocks, 4 KiB in bash), with SIGXFSZ ignored or left to kill.
fn gen_c_with_file_limit(spec: &Path, out: &Path, ignore_signal: bool) -> Output {
    let script = format!(
        "{}ulimit -f 4 && exec \"$0\" gen c \"$1\" -o \"$2\"",
        if ignore_signal { "trap '' XFSZ; " } else { "" }
    );
    Command::new("sh")
        .arg("-c")
        .arg(script)
        .arg(env!("CARGO_BIN_EXE_detent"))
        .arg(spec)
        .arg(out)
        .output()
        .unwrap()
}

const OLD: &str = "/* the previous header, which must survive */\n";

#[test]
fn a_failing_write_keeps_the_previous_file_and_leaves_no_temp_file() {
    let dir = scratch("efbig");
    let spec = dir.join("wide.detent");
    std::fs::write(&spec, big_spec()).unwrap();
    let out = dir.join("gen");
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("wide.h"), OLD).unwrap();
    let o = gen_c_with_file_limit(&spec, &out, true);
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("cannot write") && stderr.contains("wide.h"),
        "{stderr}"
    );
    assert_eq!(std::fs::read_to_string(out.join("wide.h")).unwrap(), OLD);
    // The temporary file was removed, and the source was never started.
    assert_eq!(names_in(&out), vec!["wide.h".to_string()]);
    // Without the limit the same run writes both files completely.
    let o = detent()
        .args(["gen", "c"])
        .arg(&spec)
        .arg("-o")
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let header = std::fs::read_to_string(out.join("wide.h")).unwrap();
    assert!(
        header.len() > 4096 && header.trim_end().ends_with("#endif /* DETENT_WIDE_H */"),
        "{header}"
    );
    assert_eq!(
        names_in(&out),
        vec!["wide.c".to_string(), "wide.h".to_string()]
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_run_killed_mid_write_never_leaves_a_partial_file_under_the_real_name() {
    let dir = scratch("killed");
    let spec = dir.join("wide.detent");
    std::fs::write(&spec, big_spec()).unwrap();
    let out = dir.join("gen");
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("wide.h"), OLD).unwrap();
    let o = gen_c_with_file_limit(&spec, &out, false);
    // Killed by SIGXFSZ in the middle of writing the temporary file.
    assert_eq!(o.status.code(), None, "expected a kill by SIGXFSZ: {o:?}");
    assert_eq!(std::fs::read_to_string(out.join("wide.h")).unwrap(), OLD);
    assert!(!out.join("wide.c").exists());
    // What a kill leaves is the hidden temporary file only, which no build picks up.
    for name in names_in(&out) {
        assert!(
            name == "wide.h" || (name.starts_with(".wide.h.") && name.contains("detent-tmp")),
            "unexpected file {name}"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn an_output_path_that_is_a_directory_or_under_a_file_is_an_error_that_changes_nothing() {
    let dir = scratch("dir-target");
    let spec = dir.join("wide.detent");
    std::fs::write(&spec, big_spec()).unwrap();
    // `wide.h` is a non-empty folder: the rename over it fails.
    let out = dir.join("gen");
    std::fs::create_dir_all(out.join("wide.h")).unwrap();
    std::fs::write(out.join("wide.h").join("keep"), "kept").unwrap();
    let o = detent()
        .args(["gen", "c"])
        .arg(&spec)
        .arg("-o")
        .arg(&out)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("wide.h"), "{stderr}");
    assert_eq!(names_in(&out), vec!["wide.h".to_string()]);
    assert_eq!(
        std::fs::read_to_string(out.join("wide.h").join("keep")).unwrap(),
        "kept"
    );
    // The output folder is a file.
    let file = dir.join("plain");
    std::fs::write(&file, "plain").unwrap();
    let o = detent()
        .args(["gen", "c"])
        .arg(&spec)
        .arg("-o")
        .arg(&file)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(!o.stderr.is_empty());
    assert_eq!(std::fs::read_to_string(&file).unwrap(), "plain");
    let _ = std::fs::remove_dir_all(&dir);
}

const SMALL: &str = "machine Door {\n events Open, Close;\n inputs locked;\n start Shut;\n unhandled ignore;\n state Shut { Open if !locked => Ajar; }\n state Ajar { Close => Shut; }\n}\n";

/// `detent run` on a trace: (exit code, stdout, stderr).
fn run_trace(trace: &str) -> (Option<i32>, String, String) {
    let dir = scratch("trace");
    let spec = dir.join("door.detent");
    std::fs::write(&spec, SMALL).unwrap();
    let t = dir.join("t.trace");
    std::fs::write(&t, trace).unwrap();
    let o = detent()
        .arg("run")
        .arg(&spec)
        .arg("--trace")
        .arg(&t)
        .output()
        .unwrap();
    let _ = std::fs::remove_dir_all(&dir);
    (
        o.status.code(),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

#[test]
fn traces_with_unknown_events_or_inputs_are_errors_with_line_numbers() {
    let (code, out, _) = run_trace("Open\nClose\nOpen locked=1\n");
    assert_eq!(code, Some(0));
    assert_eq!(out.lines().count(), 4);
    for (trace, line, words) in [
        ("Open\n# fine\nSlam\n", 3, "unknown event `Slam`"),
        ("Open\nClose locked=1 draft=1\n", 2, "draft"),
        ("Open locked=2\n", 1, "locked"),
        ("\n\n\n\nOpen locked\n", 5, "locked"),
        (
            "{\"event\":\"Open\",\"inputs\":{\"nope\":true}}\n",
            1,
            "nope",
        ),
        ("Open Close\n", 1, "Close"),
    ] {
        let (code, out, err) = run_trace(trace);
        assert_eq!(code, Some(2), "{trace:?}: {err}");
        assert!(
            out.is_empty(),
            "{trace:?}: nothing runs before the trace is known good: {out}"
        );
        assert!(
            err.contains(&format!("t.trace:{line}:")),
            "{trace:?}: {err}"
        );
        assert!(err.contains(words), "{trace:?}: {err}");
    }
}
