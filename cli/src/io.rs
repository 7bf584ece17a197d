//! Reading specs and writing outputs: the driver's reading (size limit, UTF-8), the
//! choice of colour for diagnostics on standard error, atomic writes.

use detent_compiler::check::render::{self, Source};
use detent_compiler::diag::Lint;
use detent_compiler::driver::{self, FileReport};
use detent_compiler::model::Machine;
use detent_compiler::report::check::render_file;
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

/// Reads a text file through the driver (size limit, UTF-8); `-` reads standard input.
pub fn read_text(path: &str) -> Result<String, String> {
    driver::read_text(path).map_err(|e| e.to_string())
}

/// True when text on standard error gets colours: a terminal that supports them, and
/// neither `NO_COLOR` nor `CLICOLOR=0` set (`CLICOLOR_FORCE` forces them).
pub fn stderr_color() -> bool {
    anstream::AutoStream::choice(&std::io::stderr()) != anstream::ColorChoice::Never
}

/// Prints a file report's diagnostics as text to stderr.
pub fn print_report_text(report: &FileReport) {
    for text in render_file(report, stderr_color()) {
        eprintln!("{text}");
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
    let report = driver::check_source(&file, &text);
    let errors = report.errors_except(tolerated);
    if !errors.is_empty() {
        let src = Source::new(&report.file, &report.text);
        let color = stderr_color();
        for d in &errors {
            if color {
                eprintln!("{}", render::render_colored(d, &src));
            } else {
                eprintln!("{}", render::render_text(d, &src));
            }
        }
        eprintln!("{}", render::summary_text(errors.len(), 0));
        return Err(FAILED);
    }
    Ok(report.into_machines())
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

/// Writes a file atomically: a temporary file with an unpredictable name
/// (`.<name>.<random>.detent-tmp`), created
/// exclusively in the same folder (`tempfile`: `O_EXCL`, so a file or symbolic link
/// planted there is never opened or followed), written, flushed and synced, then
/// renamed over the target. A failure leaves any previous file untouched and removes
/// the temporary file.
pub fn write_atomic(path: &Path, contents: &[u8]) -> Result<(), String> {
    let fail = |e: std::io::Error| format!("cannot write `{}`: {e}", path.display());
    let Some(name) = path.file_name() else {
        return Err(format!("`{}` is not a file path", path.display()));
    };
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    missing_folder(&dir)?;
    // `.<name>.<random>.detent-tmp`: hidden, and recognisably ours if a kill leaves it.
    let prefix = format!(".{}.", name.to_string_lossy());
    let mut tmp = tempfile::Builder::new()
        .prefix(&prefix)
        .suffix(".detent-tmp")
        .tempfile_in(&dir)
        .map_err(fail)?;
    tmp.write_all(contents).map_err(fail)?;
    tmp.as_file().sync_all().map_err(fail)?;
    tmp.persist(path).map_err(|e| fail(e.error))?;
    Ok(())
}

/// An error naming `dir` when it is not an existing folder. detent never creates
/// folders: a mistyped output path is reported, not silently made.
pub fn missing_folder(dir: &Path) -> Result<(), String> {
    if dir.is_dir() {
        Ok(())
    } else if dir.exists() {
        Err(format!("`{}` is not a folder", dir.display()))
    } else {
        Err(format!(
            "the folder `{}` does not exist; create it first (detent does not create \
             folders)",
            dir.display()
        ))
    }
}

/// A path or word as one shell word: as it is when it holds only characters a shell
/// leaves alone, else in single quotes (a suggested command pastes as printed).
pub fn shell_word(word: &str) -> String {
    let plain = !word.is_empty()
        && word
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "_-./:=+,@%".contains(c));
    if plain {
        word.to_string()
    } else {
        format!("'{}'", word.replace('\'', "'\\''"))
    }
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
    fn a_temp_file_that_cannot_be_created_writes_nothing() {
        let dir = scratch("no-temp");
        // The folder the output should go to does not exist: no temporary file can be
        // created there, and nothing is created anywhere.
        let target = dir.join("missing").join("out.txt");
        let e = write_atomic(&target, b"new").unwrap_err();
        assert!(e.contains("does not exist") && e.contains("missing"), "{e}");
        assert!(names(&dir).is_empty());
        let _ = std::fs::remove_dir_all(&dir);
    }

    /// The temporary file used to be `.<name>.detent-tmp-<pid>`, opened with
    /// `File::create`, which follows a symbolic link: a link planted at that name
    /// pointing outside the output folder made the write land there (and the rename
    /// then left the output a link to it). Now the name is random and the file is
    /// created exclusively: the planted links are neither followed nor replaced.
    #[cfg(unix)]
    #[test]
    fn a_symlink_planted_at_the_old_temp_name_is_not_followed() {
        let out_dir = scratch("symlink-out");
        let outside = scratch("symlink-victim");
        let victim = outside.join("victim.txt");
        std::fs::write(&victim, "precious").unwrap();
        let target = out_dir.join("out.txt");
        std::fs::write(&target, "old").unwrap();
        // Links at the old predictable name for this process and its neighbours.
        let pid = std::process::id();
        let mut planted = Vec::new();
        for p in pid.saturating_sub(2)..=pid + 2 {
            let link = out_dir.join(format!(".out.txt.detent-tmp-{p}"));
            std::os::unix::fs::symlink(&victim, &link).unwrap();
            planted.push(link);
        }
        write_atomic(&target, b"new contents").unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"new contents");
        assert!(
            !std::fs::symlink_metadata(&target)
                .unwrap()
                .file_type()
                .is_symlink(),
            "the output is a plain file"
        );
        // Nothing outside the output folder changed.
        assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");
        assert_eq!(names(&outside), vec!["victim.txt".to_string()]);
        // The planted links are still there, still links, and no temporary file is left.
        for link in &planted {
            assert!(std::fs::symlink_metadata(link)
                .unwrap()
                .file_type()
                .is_symlink());
        }
        let mut expected: Vec<String> = planted
            .iter()
            .map(|l| l.file_name().unwrap().to_string_lossy().into_owned())
            .collect();
        expected.push("out.txt".to_string());
        expected.sort();
        assert_eq!(names(&out_dir), expected);
        let _ = std::fs::remove_dir_all(&out_dir);
        let _ = std::fs::remove_dir_all(&outside);
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
