//! `detent run --format text`: one readable line per step, exact text; JSON stays the
//! default.

use std::io::Write;
use std::process::{Command, Output, Stdio};

fn detent(args: &[&str], stdin: &str) -> Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_detent"))
        .current_dir(concat!(env!("CARGO_MANIFEST_DIR"), "/.."))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run detent");
    child
        .stdin
        .take()
        .unwrap()
        .write_all(stdin.as_bytes())
        .unwrap();
    child.wait_with_output().unwrap()
}

#[test]
fn text_lines_are_exact() {
    let trace = "Digit\nEnter\nDigit\nEnter code_matches=1\n";
    let out = detent(
        &[
            "run",
            "examples/locker.detent",
            "--trace",
            "-",
            "--format",
            "text",
        ],
        trace,
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(
        String::from_utf8(out.stdout).unwrap(),
        "step 0: start in Locked; outputs: none\n\
         step 1: Digit (no inputs) Locked -> Entering; outputs: keypad_lit; actions: buffer_digit; counters: strikes = 0\n\
         step 2: Enter (no inputs) Entering -> Locked; outputs: none; actions: clear_buffer, beep_error; counters: strikes = 1\n\
         step 3: Digit (no inputs) Locked -> Entering; outputs: keypad_lit; actions: buffer_digit; counters: strikes = 1\n\
         step 4: Enter (code_matches=1) Entering -> Unlocked; outputs: bolt_released; actions: clear_buffer, release_bolt; counters: strikes = 0\n"
    );
}

#[test]
fn unhandled_steps_say_so_and_json_stays_the_default() {
    let spec = "machine M {\n  events Go, Nop;\n  start A;\n  unhandled reject;\n  state A { Go => B; }\n  state B { Go => A; }\n}\n";
    let dir = std::env::temp_dir().join(format!("detent-run-text-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("m.detent");
    std::fs::write(&file, spec).unwrap();
    let file = file.to_str().unwrap();
    let text = detent(
        &["run", file, "--trace", "-", "--format", "text"],
        "Nop\nGo\n",
    );
    assert_eq!(
        String::from_utf8(text.stdout).unwrap(),
        "step 0: start in A; outputs: none\n\
         step 1: Nop (no inputs) A -> A, rejected; outputs: none; actions: none\n\
         step 2: Go (no inputs) A -> B; outputs: none; actions: none\n"
    );
    let json = detent(&["run", file, "--trace", "-"], "Go\n");
    let first = String::from_utf8(json.stdout).unwrap();
    assert!(first.starts_with("{\"step\":0"), "{first}");
}
