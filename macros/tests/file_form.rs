//! The file form of the macro, `#[detent::machine_file(file = ..)]`, built the way a
//! user builds it: a small crate on disk, compiled by cargo. (trybuild cannot host
//! these cases: it compiles from its own directory, so a path relative to the
//! crate's Cargo.toml cannot reach a spec file.)
//!
//! Pinned here: spec errors name `file:line:col` with the source line; warnings are
//! compiler warnings; the module's own items stay; a missing file is an error at the
//! path; editing the spec rebuilds.

use std::path::{Path, PathBuf};
use std::process::Command;

fn workspace_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .to_path_buf()
}

/// Writes a crate with `main_rs` and the given spec files; returns its directory.
fn write_crate(name: &str, main_rs: &str, specs: &[(&str, &str)]) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-file-form-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("src")).unwrap();
    std::fs::create_dir_all(dir.join("specs")).unwrap();
    let runtime = workspace_root().join("runtime");
    std::fs::write(
        dir.join("Cargo.toml"),
        format!(
            "[package]\nname = {name:?}\nversion = \"0.0.0\"\nedition = \"2021\"\npublish = false\n\n\
             [dependencies]\ndetent = {{ path = {:?} }}\n\n[workspace]\n",
            runtime.display().to_string()
        ),
    )
    .unwrap();
    std::fs::copy(workspace_root().join("Cargo.lock"), dir.join("Cargo.lock")).unwrap();
    std::fs::write(dir.join("src/main.rs"), main_rs).unwrap();
    for (file, text) in specs {
        std::fs::write(dir.join("specs").join(file), text).unwrap();
    }
    dir
}

/// `cargo run` in the crate: (success, stdout, stderr).
fn cargo_run(dir: &Path) -> (bool, String, String) {
    let target = std::env::var_os("CARGO_TARGET_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| workspace_root().join("target"))
        .join("file-form-tests");
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let out = Command::new(cargo)
        .args(["run", "--quiet", "--offline", "--manifest-path"])
        .arg(dir.join("Cargo.toml"))
        .env("CARGO_TARGET_DIR", target)
        .env_remove("RUSTFLAGS")
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const LAMP: &str = "/// A lamp.
pub machine Lamp {
    events On, Off;
    outputs light;
    start Dark;
    state Dark { On => Lit; Off => stay; }
    state Lit emit light { Off => Dark; On => stay; }
}
";

const UNUSED: &str = "pub machine Quiet {
    events On, Off;
    actions click;
    start Dark;
    state Dark { On => Lit; Off => stay; }
    state Lit { Off => Dark; On => stay; }
}
";

const INCOMPLETE: &str = "pub machine Lamp {
    events On, Off;
    start Dark;
    state Dark { On => Lit; }
    state Lit { Off => Dark; On => stay; }
}
";

#[test]
fn file_form_generates_keeps_items_warns_and_rebuilds_on_edit() {
    let main_rs = r#"
#[detent::machine_file(file = "specs/lamp.detent", dispatch = "match")]
mod lamp {
    pub fn wiring() -> u8 {
        7
    }
}

#[detent::machine_file(file = "specs/unused.detent")]
mod quiet {}

impl quiet::Hooks for () {
    fn click(&mut self) {}
}

fn main() {
    let mut m = lamp::Machine::new();
    println!("{:?} {}", m.state(), lamp::wiring());
    let out = m.step(lamp::Event::On, &mut ()).unwrap();
    println!("{:?} {}", m.state(), out.light);
    let _ = quiet::Machine::new();
}
"#;
    let dir = write_crate(
        "ff_ok",
        main_rs,
        &[("lamp.detent", LAMP), ("unused.detent", UNUSED)],
    );
    let (ok, stdout, stderr) = cargo_run(&dir);
    assert!(ok, "{stderr}");
    assert_eq!(stdout, "Dark 7\nLit true\n");
    // The warning: a compiler warning, naming the spec's file, line and column.
    assert!(
        stderr.contains("warning: use of deprecated constant"),
        "{stderr}"
    );
    assert!(stderr.contains("action `click` is never used"), "{stderr}");
    assert!(stderr.contains("--> specs/unused.detent:3:13"), "{stderr}");
    assert!(stderr.contains("3 |     actions click;"), "{stderr}");
    assert!(stderr.contains("[detent::unused_declaration]"), "{stderr}");

    // Editing the spec rebuilds: the start state changes.
    std::fs::write(
        dir.join("specs/lamp.detent"),
        LAMP.replace("start Dark;", "start Lit;"),
    )
    .unwrap();
    let (ok, stdout, stderr) = cargo_run(&dir);
    assert!(ok, "{stderr}");
    assert_eq!(stdout, "Lit 7\nLit true\n");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn file_form_errors_name_file_line_and_column() {
    let main_rs = r#"
#[detent::machine_file(file = "specs/incomplete.detent")]
mod lamp {}

#[detent::machine_file(file = "specs/nope.detent")]
mod missing {}

#[detent::machine_file(file = "specs/twice.detent")]
mod twice {}

fn main() {}
"#;
    let twice = "machine Twin { events Go; start A; state A { Go => stay; } }\n\
                 machine Twin { events Go; start B; state B { Go => stay; } }\n";
    let dir = write_crate(
        "ff_err",
        main_rs,
        &[("incomplete.detent", INCOMPLETE), ("twice.detent", twice)],
    );
    let (ok, _, stderr) = cargo_run(&dir);
    assert!(!ok);
    assert!(
        stderr.contains("error: state `Dark` has no rule for event `Off`"),
        "{stderr}"
    );
    assert!(
        stderr.contains("--> specs/incomplete.detent:4:11"),
        "{stderr}"
    );
    assert!(
        stderr.contains("4 |     state Dark { On => Lit; }"),
        "{stderr}"
    );
    assert!(stderr.contains("^^^^"), "{stderr}");
    assert!(stderr.contains("[detent::incomplete]"), "{stderr}");
    assert!(
        stderr.contains("cannot read the spec `specs/nope.detent`"),
        "{stderr}"
    );
    // The error points at the attribute's path in the Rust source.
    assert!(stderr.contains("src/main.rs:2:31"), "{stderr}");
    // A machine defined twice: the driver's one message, as the CLI prints it.
    assert!(
        stderr.contains("error: machine `Twin` is defined twice"),
        "{stderr}"
    );
    assert!(stderr.contains("--> specs/twice.detent:2:9"), "{stderr}");
    assert!(stderr.contains("---- first defined here"), "{stderr}");
    let _ = std::fs::remove_dir_all(&dir);
}
