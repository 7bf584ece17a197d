//! Reading specs and writing outputs: size limits, UTF-8, atomic writes.

use detent_compiler::check::{self, render, FileReport};
use detent_compiler::diag::Lint;
use detent_compiler::model::Machine;
use detent_compiler::syntax::MAX_FILE_BYTES;
use std::io::Write;
use std::path::Path;

/// Exit code: success.
pub const OK: u8 = 0;
/// Exit code: the spec has errors, a file is stale, or machines differ.
pub const FAILED: u8 = 1;
/// Exit code: usage or I/O error.
pub const USAGE: u8 = 2;

/// Prints an error about usage or I/O and returns the exit code for it.
pub fn usage_error(msg: impl std::fmt::Display) -> u8 {
    eprintln!("error: {msg}");
    USAGE
}

/// Reads a text file, refusing files over the size limit and text that is not UTF-8.
/// `-` reads standard input.
pub fn read_text(path: &str) -> Result<String, String> {
    let bytes = if path == "-" {
        let mut buf = Vec::new();
        std::io::Read::read_to_end(
            &mut std::io::Read::take(std::io::stdin(), MAX_FILE_BYTES + 1),
            &mut buf,
        )
        .map_err(|e| format!("cannot read standard input: {e}"))?;
        buf
    } else {
        let meta = std::fs::metadata(path).map_err(|e| format!("cannot read `{path}`: {e}"))?;
        if meta.is_dir() {
            return Err(format!("`{path}` is a directory, not a file"));
        }
        if meta.len() > MAX_FILE_BYTES {
            return Err(format!(
                "`{path}` is {} bytes; the limit is {MAX_FILE_BYTES} bytes (64 MiB)",
                meta.len()
            ));
        }
        std::fs::read(path).map_err(|e| format!("cannot read `{path}`: {e}"))?
    };
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(format!(
            "`{path}` is over the limit of {MAX_FILE_BYTES} bytes (64 MiB)"
        ));
    }
    String::from_utf8(bytes).map_err(|e| {
        format!(
            "`{path}` is not valid UTF-8 (first bad byte at offset {})",
            e.utf8_error().valid_up_to()
        )
    })
}

/// Prints a file report's diagnostics as text to stderr.
pub fn print_report_text(report: &FileReport) {
    let src = render::Source {
        name: &report.file,
        text: &report.text,
    };
    for d in report.diagnostics() {
        eprintln!("{}", render::render_text(d, &src));
    }
}

/// Loads every machine of a spec file for commands other than `check`, refusing a
/// file with errors. Errors are printed; the `Err` holds the exit code.
pub fn load_machines(path: &Path) -> Result<Vec<Machine>, u8> {
    load_machines_tolerating(path, &[])
}

/// Like [`load_machines`], but errors of the `tolerated` lints do not refuse the file
/// (`run` replays the counterexample of a violated property on the machine itself).
pub fn load_machines_tolerating(path: &Path, tolerated: &[Lint]) -> Result<Vec<Machine>, u8> {
    let file = path.display().to_string();
    let text = read_text(&file).map_err(usage_error)?;
    let report = check::check_source(&file, &text);
    let errors: Vec<_> = report
        .diagnostics()
        .filter(|d| d.is_error() && !tolerated.contains(&d.lint))
        .cloned()
        .collect();
    if !errors.is_empty() {
        let src = render::Source {
            name: &report.file,
            text: &report.text,
        };
        for d in &errors {
            eprintln!("{}", render::render_text(d, &src));
        }
        eprintln!("{}", render::summary_text(errors.len(), 0));
        return Err(FAILED);
    }
    Ok(report
        .machines
        .into_iter()
        .filter_map(|m| m.machine)
        .collect())
}

/// Loads one error-free machine (`--machine NAME`, or the file's only machine).
/// Errors are printed; the `Err` holds the exit code.
pub fn load_machine(path: &Path, name: Option<&str>) -> Result<Machine, u8> {
    pick_machine(path, load_machines(path)?, name)
}

/// Chooses `--machine NAME`, or the file's only machine.
pub fn pick_machine(
    path: &Path,
    mut machines: Vec<Machine>,
    name: Option<&str>,
) -> Result<Machine, u8> {
    let file = path.display().to_string();
    match name {
        Some(n) => match machines.iter().position(|m| m.name == n) {
            Some(i) => Ok(machines.swap_remove(i)),
            None => {
                let names: Vec<&str> = machines.iter().map(|m| m.name.as_str()).collect();
                Err(usage_error(format!(
                    "`{file}` has no machine `{n}`; it has: {}",
                    names.join(", ")
                )))
            }
        },
        None => match machines.len() {
            0 => Err(usage_error(format!("`{file}` defines no machine"))),
            1 => Ok(machines.remove(0)),
            _ => {
                let names: Vec<&str> = machines.iter().map(|m| m.name.as_str()).collect();
                Err(usage_error(format!(
                    "`{file}` has several machines ({}); choose one with --machine NAME",
                    names.join(", ")
                )))
            }
        },
    }
}

/// Writes a file atomically: a temporary file in the same folder, flushed and synced,
/// then renamed over the target. A failure leaves any previous file untouched.
pub fn write_atomic(path: &Path, contents: &[u8]) -> Result<(), String> {
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .ok_or_else(|| format!("`{}` is not a file path", path.display()))?
        .to_string_lossy()
        .to_string();
    let tmp = dir.join(format!(".{name}.detent-tmp-{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(contents)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    result.map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        format!("cannot write `{}`: {e}", path.display())
    })
}

/// `--check` support: compares `contents` with the file at `path`. Returns true when
/// the file exists and is identical.
pub fn is_fresh(path: &Path, contents: &[u8]) -> bool {
    std::fs::read(path).is_ok_and(|old| old == contents)
}

/// Prints a line to standard output; a closed pipe (`detent ... | head`) ends the
/// process quietly instead of panicking.
pub fn out(line: impl std::fmt::Display) {
    let mut stdout = std::io::stdout().lock();
    if let Err(e) = writeln!(stdout, "{line}") {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            std::process::exit(0);
        }
        eprintln!("error: cannot write to standard output: {e}");
        std::process::exit(i32::from(USAGE));
    }
}

#[cfg(test)]
mod tests {
    use super::write_atomic;
    use std::path::PathBuf;

    fn scratch(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("detent-io-{}-{name}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    fn names(dir: &std::path::Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn replaces_the_whole_file_and_leaves_no_temp_file() {
        let dir = scratch("replace");
        let target = dir.join("out.txt");
        std::fs::write(&target, "old old old old").unwrap();
        write_atomic(&target, b"new").unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"new");
        assert_eq!(names(&dir), vec!["out.txt".to_string()]);
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn a_temp_file_that_cannot_be_created_keeps_the_previous_file() {
        let dir = scratch("no-temp");
        let target = dir.join("out.txt");
        std::fs::write(&target, "previous").unwrap();
        // The temp file's name is taken by a folder, so creating it fails.
        let tmp = dir.join(format!(".out.txt.detent-tmp-{}", std::process::id()));
        std::fs::create_dir_all(&tmp).unwrap();
        let e = write_atomic(&target, b"new").unwrap_err();
        assert!(e.contains("cannot write") && e.contains("out.txt"), "{e}");
        assert_eq!(std::fs::read_to_string(&target).unwrap(), "previous");
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn a_rename_that_fails_removes_the_temp_file() {
        let dir = scratch("no-rename");
        // The target is a non-empty folder: the rename over it fails after the temp file
        // was written in full.
        let target = dir.join("out.txt");
        std::fs::create_dir_all(target.join("inside")).unwrap();
        let e = write_atomic(&target, b"new").unwrap_err();
        assert!(e.contains("out.txt"), "{e}");
        assert_eq!(names(&dir), vec!["out.txt".to_string()]);
        assert!(target.join("inside").is_dir());
        // A path with no file name is refused before anything is written.
        assert!(write_atomic(&dir.join(".."), b"x").is_err());
        let _ = std::fs::remove_dir_all(&dir);
    }
}
