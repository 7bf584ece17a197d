//! `detent gen c FILE [-o OUTDIR] [--check]`: C99 header and source per machine.

use crate::io::{self, FAILED, OK, USAGE};
use detent_compiler::emit::c::{cell_count, generate_c, CFiles, MAX_C_CELLS};
use std::path::{Path, PathBuf};

/// Arguments of `detent gen c`.
#[derive(clap::Args, Debug)]
pub struct GenCArgs {
    /// The spec file; every machine in it gets `<snake>.h` and `<snake>.c`.
    pub file: PathBuf,
    /// Folder to write into (required: `-o .` for the current folder; it must exist).
    #[arg(short = 'o', value_name = "OUTDIR")]
    pub out_dir: Option<PathBuf>,
    /// Compare with the files on disk instead of writing; exit 1 when any is stale or
    /// missing.
    #[arg(long)]
    pub check: bool,
}

/// Runs `detent gen c` and returns the exit code.
pub fn run(args: &GenCArgs) -> u8 {
    let file = args.file.display().to_string();
    // Files are written only where the command says: `gen rust` without `-o` prints to
    // standard output, but two files per machine have no such place, so `gen c` asks.
    let Some(dir) = args.out_dir.clone() else {
        return io::usage_error(format!(
            "`gen c` writes a header and a source file per machine; say which folder with \
             `-o DIR` (`-o .` for the current folder): `detent gen c {} -o .`",
            io::shell_word(&file)
        ));
    };
    let machines = match io::load_machines(&args.file) {
        Ok(m) => m,
        Err(code) => return code,
    };
    // The banner names the file without its folder, so the output does not depend on
    // where the command runs from.
    let banner_name = args
        .file
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| file.clone());
    let mut outputs: Vec<CFiles> = Vec::new();
    for m in &machines {
        if cell_count(m) > MAX_C_CELLS {
            return io::usage_error(format!(
                "machine `{}` has {} states x {} events = {} cells; the C back end's dense \
                 table is limited to {MAX_C_CELLS} cells",
                m.name,
                m.states.len(),
                m.events.len(),
                cell_count(m)
            ));
        }
        let files = generate_c(m, &banner_name);
        if let Some(other) = outputs.iter().find(|o| o.stem == files.stem) {
            return io::usage_error(format!(
                "two machines of `{file}` would both write `{}.h` (`{}` and `{}`); rename one",
                files.stem, other.stem, m.name
            ));
        }
        outputs.push(files);
    }
    if outputs.is_empty() {
        return io::usage_error(format!("`{file}` defines no machine"));
    }
    // A missing folder is an error, never created silently (a mistyped `-o` would
    // scatter files); under `--check` the files are then missing, hence stale.
    if !args.check {
        if let Err(e) = io::missing_folder(&dir) {
            return io::usage_error(e);
        }
    }
    let mut stale = 0usize;
    for files in &outputs {
        for (ext, contents) in [("h", &files.header), ("c", &files.source)] {
            let path: PathBuf = Path::new(&dir).join(format!("{}.{ext}", files.stem));
            if args.check {
                if !io::is_fresh(&path, contents.as_bytes()) {
                    eprintln!(
                        "stale: `{}` is missing or differs from what `detent gen c` writes",
                        path.display()
                    );
                    stale += 1;
                }
            } else if let Err(e) = io::write_atomic(&path, contents.as_bytes()) {
                io::usage_error(e);
                return USAGE;
            } else {
                io::out(format!("wrote {}", path.display()));
            }
        }
    }
    if stale > 0 {
        eprintln!(
            "{stale} file{} out of date; run `detent gen c {} -o {}`",
            if stale == 1 { "" } else { "s" },
            io::shell_word(&file),
            io::shell_word(&dir.display().to_string())
        );
        FAILED
    } else {
        OK
    }
}
