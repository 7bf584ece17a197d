//! Shared helpers for the workspace-level tests: a random spec generator, the
//! no_std / panic-free build harness, and where to find the Python reference tools.

#![warn(missing_docs)]

pub mod c_ffi;
pub mod c_harness;
pub mod gen;
pub mod icarus;
pub mod nostd;
pub mod rust_forms;

use std::path::{Path, PathBuf};

/// The first `property` diagnostic of the first machine in the output of
/// `detent check --format json` on a spec with a violated property.
///
/// # Panics
///
/// When the check did not exit with 1 (a violated property is an error), its output
/// is not JSON, or it has no `property` diagnostic.
pub fn property_diagnostic(out: &std::process::Output) -> serde_json::Value {
    assert_eq!(
        out.status.code(),
        Some(1),
        "a violated property is an error: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    report["machines"][0]["diagnostics"]
        .as_array()
        .unwrap()
        .iter()
        .find(|d| d["lint"] == "property")
        .expect("a property diagnostic")
        .clone()
}

/// The workspace root (the directory holding the top-level `Cargo.toml`).
pub fn workspace_root() -> PathBuf {
    let manifest_dir = Path::new(env!("CARGO_MANIFEST_DIR"));
    // This crate lives at `<root>/tests`.
    manifest_dir
        .parent()
        .map_or_else(|| manifest_dir.to_path_buf(), Path::to_path_buf)
}

/// The number of random machines a soak run asks for: `$DETENT_SOAK_MACHINES` when set
/// to a positive number (`scripts/soak.sh` sets it), else `None` and each suite keeps
/// its own default count.
///
/// # Panics
///
/// When the variable is set but is not a positive number (a soak run that silently
/// fell back to the default count would report figures it did not reach).
pub fn soak_machines() -> Option<usize> {
    let v = std::env::var("DETENT_SOAK_MACHINES").ok()?;
    match v.trim().parse::<usize>() {
        Ok(n) if n > 0 => Some(n),
        _ => panic!("DETENT_SOAK_MACHINES must be a positive number, not `{v}`"),
    }
}

/// Random machines per configuration: `default` normally, and under
/// [`soak_machines`] `N` machines spread over `configs` configurations (never fewer
/// than `default`).
pub fn per_config(default: u64, configs: usize) -> u64 {
    soak_machines().map_or(default, |n| {
        (n.div_ceil(configs.max(1)) as u64).max(default)
    })
}

/// The seed of random machine `k` of configuration `ci`: `base + ci * 100 + k` for the
/// first 100 (the seeds the suites have always used), and past those (soak runs) seeds
/// from a range of their own, so no two (ci, k) share one.
pub fn machine_seed(base: u64, ci: usize, k: u64) -> u64 {
    if k < 100 {
        base + (ci as u64) * 100 + k
    } else {
        0x50A4_0000_0000 ^ (base << 8) ^ ((ci as u64) << 40) ^ k
    }
}

/// The first machine of a spec, parsed and resolved but not checked (for tests and
/// benchmarks of the checker's own findings, which a checked machine would not reach).
///
/// # Panics
///
/// When the spec does not parse or resolve (with the text and the errors).
pub fn resolved_machine(text: &str) -> detent_compiler::model::Machine {
    let file = detent_compiler::syntax::parse_source(text).expect("parses");
    let (mut machines, errors) = detent_compiler::model::resolve_file(&file);
    assert!(errors.is_empty(), "{text}\n{errors:#?}");
    machines.remove(0)
}

/// The one machine of a spec that must check with no error.
///
/// # Panics
///
/// When the spec has an error (listing them with the text), or no machine.
pub fn checked_machine(label: &str, text: &str) -> detent_compiler::model::Machine {
    let report = detent_compiler::driver::check_source(label, text);
    let errors: Vec<String> = report
        .diagnostics()
        .filter(|d| d.is_error())
        .map(|d| d.message.clone())
        .collect();
    assert!(errors.is_empty(), "{label}: {errors:?}\n{text}");
    report
        .machines
        .into_iter()
        .find_map(|m| m.machine)
        .unwrap_or_else(|| panic!("{label}: no machine\n{text}"))
}

/// A fresh scratch folder `detent-<tag>-<process id>` in the system's temporary folder
/// (emptied if an earlier run of this process id left it).
///
/// # Panics
///
/// When the folder cannot be made.
pub fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("{}: {e}", dir.display()));
    dir
}

/// The `.detent` files of a workspace folder (e.g. `"examples"`), sorted by path.
///
/// # Panics
///
/// When the folder cannot be read.
pub fn spec_files(dir: &str) -> Vec<PathBuf> {
    let dir = workspace_root().join(dir);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", dir.display()))
        .flatten()
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "detent"))
        .collect();
    files.sort();
    files
}

/// The Python interpreter for external-reference tests: `$DETENT_PYTHON` if set,
/// else `<workspace root>/.venv/bin/python` if it exists, else an error telling the
/// reader to run `scripts/test.sh` (tests must fail on it, never skip).
pub fn python() -> Result<PathBuf, String> {
    python_from(
        std::env::var_os("DETENT_PYTHON").map(PathBuf::from),
        &workspace_root(),
    )
}

fn python_from(from_env: Option<PathBuf>, root: &Path) -> Result<PathBuf, String> {
    if let Some(path) = from_env.filter(|p| !p.as_os_str().is_empty()) {
        return if path.exists() {
            Ok(path)
        } else {
            Err(format!(
                "DETENT_PYTHON is set to {}, which does not exist; fix it or run scripts/test.sh to install the test environment",
                path.display()
            ))
        };
    }
    let venv = root.join(".venv").join("bin").join("python");
    if venv.exists() {
        return Ok(venv);
    }
    Err(format!(
        "no Python found: DETENT_PYTHON is not set and {} does not exist; run scripts/test.sh to install the test environment",
        venv.display()
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn workspace_root_holds_the_workspace_manifest() {
        let manifest = std::fs::read_to_string(workspace_root().join("Cargo.toml")).unwrap();
        assert!(manifest.contains("[workspace]"));
    }

    #[test]
    fn python_prefers_the_env_var_then_the_venv_then_fails_with_advice() {
        let dir = std::env::temp_dir().join(format!("detent-python-{}", std::process::id()));
        let bin = dir.join(".venv").join("bin");
        std::fs::create_dir_all(&bin).unwrap();
        let missing = python_from(None, &dir).unwrap_err();
        assert!(missing.contains("run scripts/test.sh"), "{missing}");
        std::fs::write(bin.join("python"), "").unwrap();
        assert_eq!(python_from(None, &dir).unwrap(), bin.join("python"));
        let chosen = dir.join("chosen-python");
        std::fs::write(&chosen, "").unwrap();
        assert_eq!(python_from(Some(chosen.clone()), &dir).unwrap(), chosen);
        let bad = python_from(Some(dir.join("nope")), &dir).unwrap_err();
        assert!(bad.contains("scripts/test.sh"), "{bad}");
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
