//! `detent fmt FILE... [--check]`: rewrites files atomically in the canonical layout,
//! `--check` lists the files that would change and exits 1, a syntax error exits 1
//! with the diagnostic, `-` formats standard input; every formatted example is the same
//! machine as the original by `detent equiv`.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

fn detent() -> Command {
    Command::new(env!("CARGO_BIN_EXE_detent"))
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-fmt-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn text(o: &Output) -> (String, String) {
    (
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

const MESSY: &str = "machine Fan {   events Up,Down; // two buttons\n  outputs fast;start Slow;\n\n\n  unhandled ignore;\n  state Slow{Up=>Fast;}\n  // the fast state\n  state Fast emit fast { Down=>Slow; }\n}\n";

const TIDY: &str = "machine Fan {\n    events Up, Down;  // two buttons\n    outputs fast;\n    start Slow;\n\n    unhandled ignore;\n    state Slow {\n        Up => Fast;\n    }\n    // the fast state\n    state Fast emit fast {\n        Down => Slow;\n    }\n}\n";

#[test]
fn formats_in_place_and_check_lists_files_that_would_change() {
    let dir = scratch("inplace");
    let messy = dir.join("messy.detent");
    let tidy = dir.join("tidy.detent");
    std::fs::write(&messy, MESSY).unwrap();
    std::fs::write(&tidy, TIDY).unwrap();

    let o = detent()
        .args(["fmt", "--check"])
        .arg(&messy)
        .arg(&tidy)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    let (out, err) = text(&o);
    assert!(
        out.contains("would reformat: ") && out.contains("messy.detent"),
        "{out}"
    );
    assert!(!out.contains("tidy.detent"), "{out}");
    assert!(err.contains("1 file not in the canonical layout"), "{err}");
    assert_eq!(
        std::fs::read_to_string(&messy).unwrap(),
        MESSY,
        "--check writes nothing"
    );

    let o = detent().arg("fmt").arg(&messy).arg(&tidy).output().unwrap();
    assert_eq!(o.status.code(), Some(0), "{:?}", text(&o));
    assert_eq!(std::fs::read_to_string(&messy).unwrap(), TIDY);
    // No temporary file is left behind.
    let names: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 2, "{names:?}");

    let o = detent()
        .args(["fmt", "--check"])
        .arg(&messy)
        .arg(&tidy)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{:?}", text(&o));
    assert!(o.stdout.is_empty());
}

#[test]
fn errors_and_standard_input() {
    let dir = scratch("errors");
    let bad = dir.join("bad.detent");
    std::fs::write(&bad, "machine M {\n    state A {\n        => ;\n    }\n}\n").unwrap();
    let before = std::fs::read(&bad).unwrap();
    let o = detent().arg("fmt").arg(&bad).output().unwrap();
    assert_eq!(o.status.code(), Some(1));
    let (_, err) = text(&o);
    assert!(
        err.contains("error[syntax]") && err.contains("bad.detent:3:"),
        "{err}"
    );
    assert_eq!(
        std::fs::read(&bad).unwrap(),
        before,
        "a file with errors is left alone"
    );

    let o = detent()
        .arg("fmt")
        .arg(dir.join("missing.detent"))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));

    let mut child = detent()
        .args(["fmt", "-"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(MESSY.as_bytes())
        .unwrap();
    let o = child.wait_with_output().unwrap();
    assert_eq!(o.status.code(), Some(0));
    assert_eq!(String::from_utf8_lossy(&o.stdout), TIDY);
}

#[test]
fn every_formatted_example_is_the_same_machine_by_equiv() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap();
    let dir = scratch("examples");
    let mut n = 0;
    for e in std::fs::read_dir(root.join("examples")).unwrap().flatten() {
        let p = e.path();
        if p.extension().is_none_or(|x| x != "detent") {
            continue;
        }
        let copy = dir.join(p.file_name().unwrap());
        std::fs::copy(&p, &copy).unwrap();
        let o = detent().arg("fmt").arg(&copy).output().unwrap();
        assert_eq!(o.status.code(), Some(0), "{:?}", text(&o));
        let o = detent().arg("equiv").arg(&p).arg(&copy).output().unwrap();
        assert_eq!(o.status.code(), Some(0), "{}: {:?}", p.display(), text(&o));
        let o = detent()
            .args(["fmt", "--check"])
            .arg(&copy)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(0), "idempotent: {:?}", text(&o));
        let o = detent().arg("check").arg(&copy).output().unwrap();
        assert_eq!(o.status.code(), Some(0), "{:?}", text(&o));
        n += 1;
    }
    assert!(n >= 5);
}
