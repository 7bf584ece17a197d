//! The exact minimizer against sympy's `SOPform` (PyPI `sympy`, `sympy.logic.SOPform`):
//! on random functions of up to 10 variables with don't-cares, detent's exact literal
//! count is never above SOPform's (SOPform's final cover step is a dominance-based
//! reduction, not a proven minimum, so it may be larger; our cover is verified on its own).
//!
//! The interpreter is `$DETENT_PYTHON`, else `<workspace>/.venv/bin/python`; the test
//! fails (never skips) when neither exists.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use detent_compiler::logic::{check_cover, minimize, Function, Method};
use detent_compiler::testing::logic::{random_function, Rng};

fn workspace_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_else(|| PathBuf::from("."))
}

fn python() -> PathBuf {
    if let Some(p) = std::env::var_os("DETENT_PYTHON") {
        return PathBuf::from(p);
    }
    let fallback = workspace_root().join(".venv/bin/python");
    assert!(
        fallback.exists(),
        "no Python with sympy: set DETENT_PYTHON or run scripts/test.sh (it creates \
         {}), then rerun",
        fallback.display()
    );
    fallback
}

/// Runs `tests/python/sopform.py` on the functions; returns (literals, seconds) each.
fn sopform(functions: &[Function]) -> Vec<(usize, f64)> {
    let input: Vec<serde_json::Value> = functions
        .iter()
        .map(|f| serde_json::json!({"vars": f.vars, "on": f.on, "dc": f.dc}))
        .collect();
    let script = workspace_root().join("tests/python/sopform.py");
    let mut child = Command::new(python())
        .arg(&script)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .expect("start the Python interpreter (see DETENT_PYTHON / scripts/test.sh)");
    child
        .stdin
        .take()
        .expect("stdin")
        .write_all(serde_json::Value::Array(input).to_string().as_bytes())
        .expect("write functions to sopform.py");
    let out = child.wait_with_output().expect("sopform.py output");
    assert!(
        out.status.success(),
        "sopform.py failed (is sympy installed?)"
    );
    let parsed: Vec<serde_json::Value> =
        serde_json::from_slice(&out.stdout).expect("sopform.py prints JSON");
    parsed
        .iter()
        .map(|v| {
            (
                v["literals"].as_u64().expect("literals") as usize,
                v["seconds"].as_f64().expect("seconds"),
            )
        })
        .collect()
}

#[test]
fn exact_never_worse_than_sympy_sopform() {
    let mut rng = Rng::from_state(0x5e5_0001);
    let mut functions = Vec::new();
    for round in 0..40 {
        let n = 2 + round % 9; // 2..=10
                               // Dense up to 8 variables; sparser at 9-10 so that SOPform stays quick.
        let (on, dc) = if n <= 8 { (300, 150) } else { (60, 60) };
        functions.push(random_function(&mut rng, n, on, dc));
    }
    let reference = sopform(&functions);
    assert_eq!(reference.len(), functions.len());
    let (mut ours_total, mut theirs_total, mut smaller) = (0, 0, 0);
    for (f, &(theirs, _)) in functions.iter().zip(reference.iter()) {
        let cover = minimize(f).unwrap();
        check_cover(f, &cover).unwrap();
        assert_eq!(cover.method, Method::Exact, "n={}", f.vars.len());
        assert!(
            cover.literals <= theirs,
            "n={}: detent {} literals > SOPform {theirs}; on={:?} dc={:?}",
            f.vars.len(),
            cover.literals,
            f.on,
            f.dc
        );
        ours_total += cover.literals;
        theirs_total += theirs;
        smaller += usize::from(cover.literals < theirs);
    }
    println!(
        "detent exact {ours_total} literals vs SOPform {theirs_total} over {} functions \
         ({smaller} strictly smaller)",
        functions.len()
    );
}
