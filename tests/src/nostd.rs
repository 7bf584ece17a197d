//! The no_std / panic-free harness: builds generated Rust in a fresh `#![no_std]
//! #![forbid(unsafe_code)] #![deny(missing_docs)]` crate, in release, emits its
//! assembly and scans it for references to Rust's panic machinery.
//!
//! Method (common practice in embedded Rust, where "no panic path" is shown by the
//! absence of panic symbols in the optimized output): the crate is an `rlib` built by
//! `cargo rustc --release -- --emit asm=FILE` with one codegen unit and
//! `panic = "abort"`. An `rlib` codegens every non-generic function it defines, so the
//! caller exports what it wants checked as `#[inline(never)] pub fn` entry points
//! with concrete types (for instance `step` with a concrete `Hooks` type):
//! `#[no_mangle]` is not needed, and the crate stays free of `unsafe`. Nothing is
//! linked, so no panic handler or linker script is needed.
//!
//! The scan tokenizes the assembly (identifier characters of mangled names) and
//! matches each token against [`PANIC_SYMBOL_PATTERNS`], attributing it to the
//! enclosing symbol's label. Cost: one release build of a small crate (the runtime
//! is built once into a shared target directory and reused), then a linear scan of
//! the assembly text.
//!
//! Limits: the build is for the host target; a reference that the optimizer removed
//! is (correctly) not reported, so the entry points must exercise the code paths to
//! check; a panic path reached through an indirect call the optimizer cannot see is
//! reported only if its symbol appears somewhere in this crate's assembly.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::atomic::{AtomicU64, Ordering};

/// Substrings of (mangled or plain) symbol names that belong to panic machinery.
///
/// Legacy (`_ZN...E`) and v0 (`_R...`) mangling both spell a path segment as its
/// length then its name, so `9panicking` matches every item of `core::panicking`
/// (`panic`, `panic_fmt`, `panic_bounds_check`, `panic_const_*`, `assert_failed`,
/// ...) in both schemes. The other entries are panic entry points that live outside
/// `core::panicking` (slice and str indexing, `Option`/`Result` unwrapping, `RefCell`
/// borrows, `copy_from_slice`), the panic runtime, and unwinding. Source: from memory
/// of core's library source (`core/src/panicking.rs`, `core/src/slice/index.rs`,
/// `core/src/option.rs`, `core/src/result.rs`, `core/src/cell.rs`,
/// `core/src/str/mod.rs`); names shift between Rust versions, hence some overlap.
pub const PANIC_SYMBOL_PATTERNS: &[&str] = &[
    // core::panicking, every item (legacy and v0 mangling).
    "9panicking",
    // Entry points, also matched by name for unmangled or differently-mangled output.
    "panic_bounds_check",
    "panic_fmt",
    "panic_nounwind",
    "panic_const_",
    "panic_display",
    "panic_str",
    "panic_explicit",
    "panic_in_cleanup",
    "panic_cannot_unwind",
    "panic_misaligned_pointer_dereference",
    "panic_null_pointer_dereference",
    "unreachable_display",
    "assert_failed",
    // Slice and str indexing (core::slice::index, core::str).
    "slice_index_order_fail",
    "slice_start_index_len_fail",
    "slice_end_index_len_fail",
    "slice_start_index_overflow_fail",
    "slice_end_index_overflow_fail",
    "slice_index_fail",
    "slice_error_fail",
    "str_index_overflow_fail",
    "len_mismatch_fail",
    "copy_from_slice_len_mismatch",
    // Option / Result unwrapping.
    "unwrap_failed",
    "expect_failed",
    // RefCell borrow failures.
    "panic_already_borrowed",
    "panic_already_mutably_borrowed",
    "already_borrowed",
    // Allocation failures (never expected in no_std code, listed for completeness).
    "handle_alloc_error",
    "capacity_overflow",
    // The panic runtime and unwinding.
    "rust_begin_unwind",
    "rust_panic",
    "__rust_start_panic",
    "begin_panic",
    "_Unwind_Resume",
    "rust_eh_personality",
    // defmt's panic hook (`defmt::panic!`, `defmt::unreachable!`, ...).
    "_defmt_panic",
];

/// Options for [`build_nostd_and_check_with`].
#[derive(Clone, Debug)]
pub struct NoStdOptions {
    /// Features of the `detent` runtime to enable (e.g. `"defmt-trace"`).
    pub detent_features: Vec<String>,
    /// Extra environment variables for the build (e.g. `DEFMT_LOG=trace`).
    pub env: Vec<(String, String)>,
    /// The release `opt-level` (`"3"`, `"s"`, `"z"`, ...).
    pub opt_level: String,
}

impl Default for NoStdOptions {
    fn default() -> Self {
        Self {
            detent_features: Vec::new(),
            env: Vec::new(),
            opt_level: "3".to_owned(),
        }
    }
}

/// One reference to panic machinery found in the assembly.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct PanicRef {
    /// The symbol as written in the assembly (mangled).
    pub symbol: String,
    /// The symbol demangled (legacy scheme; the hash is dropped).
    pub demangled: String,
    /// The demangled symbol whose body (or data) holds the reference.
    pub in_symbol: String,
    /// The 1-based line of the assembly where it appears.
    pub line: usize,
}

/// What the harness found in one build.
#[derive(Clone, Debug)]
pub struct NoStdReport {
    /// The crate name used for the build.
    pub crate_name: String,
    /// The emitted assembly text.
    pub asm: String,
    /// The scan of [`asm`](Self::asm): functions, symbol references, panic references.
    pub scan: AsmScan,
}

impl NoStdReport {
    /// Demangled names of the functions the assembly defines.
    pub fn functions(&self) -> &[String] {
        &self.scan.functions
    }

    /// Every reference to panic machinery anywhere in the crate, in assembly order.
    pub fn panic_refs(&self) -> &[PanicRef] {
        &self.scan.panic_refs
    }

    /// Whether the whole crate's assembly references no panic machinery.
    pub fn is_panic_free(&self) -> bool {
        self.scan.panic_refs.is_empty()
    }

    /// The panic references inside the entry points `roots` (demangled names or
    /// their last path segments, e.g. `"step_entry"`) and everything they reference,
    /// transitively. This is the check for generated code: a crate can hold panic
    /// paths that no entry point reaches (for example the `format` method that
    /// defmt's derive fills with `unreachable!()` because defmt never calls it).
    /// Errs when an entry point is not in the assembly.
    pub fn panic_refs_reachable_from(&self, roots: &[&str]) -> Result<Vec<&PanicRef>, String> {
        let reached = self.scan.reachable_from(roots)?;
        Ok(self
            .scan
            .panic_refs
            .iter()
            .zip(&self.scan.panic_ref_symbol)
            .filter(|(_, &symbol)| reached[symbol])
            .map(|(panic_ref, _)| panic_ref)
            .collect())
    }

    /// `Ok` when no panic reference is reachable from `roots`; otherwise `Err` with
    /// the offending references (and `Err` when an entry point is missing).
    pub fn check_entry_points(&self, roots: &[&str]) -> Result<(), String> {
        let found = self.panic_refs_reachable_from(roots)?;
        if found.is_empty() {
            return Ok(());
        }
        let mut message = format!("panic paths reachable from {roots:?}:\n");
        for panic_ref in found {
            let _ = writeln!(
                message,
                "  asm line {}: `{}` references `{}`",
                panic_ref.line, panic_ref.in_symbol, panic_ref.demangled
            );
        }
        Err(message)
    }

    /// The distinct offending symbols (demangled), in first-seen order.
    pub fn offending_symbols(&self) -> Vec<&str> {
        let mut seen: Vec<&str> = Vec::new();
        for panic_ref in &self.scan.panic_refs {
            if !seen.contains(&panic_ref.demangled.as_str()) {
                seen.push(&panic_ref.demangled);
            }
        }
        seen
    }

    /// The distinct symbols (demangled) that contain a panic reference.
    pub fn panicking_functions(&self) -> Vec<&str> {
        let mut seen: Vec<&str> = Vec::new();
        for panic_ref in &self.scan.panic_refs {
            if !seen.contains(&panic_ref.in_symbol.as_str()) {
                seen.push(&panic_ref.in_symbol);
            }
        }
        seen
    }

    /// Whether a function whose demangled name is `path` or ends with `::path` was
    /// emitted: use it to make sure the entry points were really compiled, so that
    /// "no panic" is not vacuous.
    pub fn defines(&self, path: &str) -> bool {
        let suffix = format!("::{path}");
        self.scan
            .functions
            .iter()
            .any(|f| f == path || f.ends_with(&suffix))
    }

    /// A readable summary of the offending references, for assertion messages.
    pub fn summary(&self) -> String {
        let mut out = format!(
            "crate `{}`: {} functions, {} panic references, {} trap instructions\n",
            self.crate_name,
            self.scan.functions.len(),
            self.scan.panic_refs.len(),
            self.scan.trap_instructions
        );
        for panic_ref in &self.scan.panic_refs {
            let _ = writeln!(
                out,
                "  asm line {}: `{}` references `{}`",
                panic_ref.line, panic_ref.in_symbol, panic_ref.demangled
            );
        }
        out
    }
}

/// Builds `generated_rust` as the body of a `#![no_std] #![forbid(unsafe_code)]
/// #![deny(missing_docs)]` library crate named `name` that depends on the `detent`
/// runtime, in release, and scans its assembly for panic machinery.
///
/// `generated_rust` is the whole crate body after those attributes: typically the
/// generator's `pub mod <machine> { ... }` plus documented `#[inline(never)] pub fn`
/// entry points that call `step` with a concrete `Hooks` type. Returns `Err` with the
/// compiler's output when the crate does not build (which is itself a failed check:
/// it means `std`, `unsafe` or an undocumented public item crept in).
pub fn build_nostd_and_check(name: &str, generated_rust: &str) -> Result<NoStdReport, String> {
    build_nostd_and_check_with(name, generated_rust, &NoStdOptions::default())
}

/// [`build_nostd_and_check`] with runtime features, environment and opt-level.
pub fn build_nostd_and_check_with(
    name: &str,
    generated_rust: &str,
    options: &NoStdOptions,
) -> Result<NoStdReport, String> {
    validate_crate_name(name)?;
    let root = crate::workspace_root();
    let crate_dir = unique_temp_dir(name)?;
    let result = build_in(&root, &crate_dir, name, generated_rust, options);
    // Best effort: a leftover temp dir is harmless.
    let _ = std::fs::remove_dir_all(&crate_dir);
    result
}

fn build_in(
    root: &Path,
    crate_dir: &Path,
    name: &str,
    generated_rust: &str,
    options: &NoStdOptions,
) -> Result<NoStdReport, String> {
    let src_dir = crate_dir.join("src");
    std::fs::create_dir_all(&src_dir).map_err(|e| format!("create {}: {e}", src_dir.display()))?;
    let runtime_dir = root.join("runtime");
    let features = options
        .detent_features
        .iter()
        .map(|f| format!("{f:?}"))
        .collect::<Vec<_>>()
        .join(", ");
    let manifest = format!(
        "[package]\n\
         name = {name:?}\n\
         version = \"0.0.0\"\n\
         edition = \"2021\"\n\
         publish = false\n\n\
         [lib]\n\
         path = \"src/lib.rs\"\n\
         crate-type = [\"rlib\"]\n\n\
         [dependencies]\n\
         detent = {{ path = {runtime:?}, features = [{features}] }}\n\n\
         [profile.release]\n\
         opt-level = {opt}\n\
         codegen-units = 1\n\
         panic = \"abort\"\n\
         debug = false\n\
         incremental = false\n\n\
         # Its own workspace, so no enclosing workspace claims it.\n\
         [workspace]\n",
        runtime = runtime_dir.display().to_string(),
        opt = opt_level_toml(&options.opt_level)?,
    );
    write_file(&crate_dir.join("Cargo.toml"), &manifest)?;
    let lib_rs = format!(
        "//! No-std check crate `{name}`, written by detent-tests' harness.\n\
         #![no_std]\n\
         #![forbid(unsafe_code)]\n\
         #![deny(missing_docs)]\n\n\
         {generated_rust}\n"
    );
    write_file(&src_dir.join("lib.rs"), &lib_rs)?;
    // The workspace's lock file pins the same versions the workspace tests use and
    // keeps cargo off the network; cargo drops the entries this crate does not need.
    let lock = root.join("Cargo.lock");
    if lock.is_file() {
        std::fs::copy(&lock, crate_dir.join("Cargo.lock"))
            .map_err(|e| format!("copy {}: {e}", lock.display()))?;
    }

    let asm_path = crate_dir.join("out.s");
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let mut command = Command::new(cargo);
    command
        .arg("rustc")
        .arg("--release")
        .arg("--lib")
        .arg("--quiet")
        .arg("--manifest-path")
        .arg(crate_dir.join("Cargo.toml"))
        .arg("--")
        .arg(format!("--emit=asm={}", asm_path.display()))
        .env("CARGO_TARGET_DIR", shared_target_dir(root))
        // Flags meant for the outer build must not leak into this one.
        .env_remove("RUSTFLAGS")
        .env_remove("CARGO_ENCODED_RUSTFLAGS")
        .env_remove("CARGO_BUILD_RUSTFLAGS");
    for (key, value) in &options.env {
        command.env(key, value);
    }
    let output = command
        .output()
        .map_err(|e| format!("could not run cargo: {e}"))?;
    if !output.status.success() {
        return Err(format!(
            "the no_std crate `{name}` did not build ({}):\n{}",
            output.status,
            String::from_utf8_lossy(&output.stderr)
        ));
    }
    let asm = std::fs::read_to_string(&asm_path)
        .map_err(|e| format!("read assembly {}: {e}", asm_path.display()))?;
    let scan = scan_asm(&asm);
    Ok(NoStdReport {
        crate_name: name.to_owned(),
        asm,
        scan,
    })
}

/// The result of [`scan_asm`].
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct AsmScan {
    /// Demangled names of the functions defined (`.type NAME,@function`).
    pub functions: Vec<String>,
    /// Every symbol the assembly defines (labels at column 0 that are not
    /// assembler-local), demangled; the index is the symbol's id. Id 0 stands for
    /// anything before the first label.
    pub symbols: Vec<String>,
    /// `references[id]`: ids of the defined symbols that symbol `id` names (calls,
    /// tail jumps, addresses taken), sorted, without repeats.
    pub references: Vec<Vec<usize>>,
    /// Every panic reference, in order.
    pub panic_refs: Vec<PanicRef>,
    /// `panic_ref_symbol[i]`: the symbol id holding `panic_refs[i]`.
    pub panic_ref_symbol: Vec<usize>,
    /// Count of trap instructions (`ud2`, `udf`, `brk`).
    pub trap_instructions: usize,
}

impl AsmScan {
    /// The ids of the symbols reachable from the defined symbols whose demangled
    /// name is `root` or ends with `::root`, following [`references`](Self::references)
    /// (breadth-first; linear in symbols plus references). Errs when a root is not
    /// defined, so a check cannot pass vacuously on code that was never compiled.
    pub fn reachable_from(&self, roots: &[&str]) -> Result<Vec<bool>, String> {
        let mut reached = vec![false; self.symbols.len()];
        let mut queue = Vec::new();
        for root in roots {
            let suffix = format!("::{root}");
            let ids: Vec<usize> = (0..self.symbols.len())
                .filter(|&id| self.symbols[id] == *root || self.symbols[id].ends_with(&suffix))
                .collect();
            if ids.is_empty() {
                return Err(format!("entry point `{root}` is not in the assembly"));
            }
            queue.extend(ids);
        }
        while let Some(id) = queue.pop() {
            if std::mem::replace(&mut reached[id], true) {
                continue;
            }
            queue.extend(
                self.references[id]
                    .iter()
                    .copied()
                    .filter(|&next| !reached[next]),
            );
        }
        Ok(reached)
    }
}

/// Scans assembly text (GNU assembler syntax, as rustc emits it) for panic
/// references and for the references between the symbols it defines. Linear in the
/// text's length (plus sorting each symbol's reference list).
pub fn scan_asm(asm: &str) -> AsmScan {
    let mut scan = AsmScan {
        symbols: vec![String::from("<top of file>")],
        ..AsmScan::default()
    };
    let mut mangled_ids: std::collections::HashMap<&str, usize> = std::collections::HashMap::new();
    // Tokens seen in each symbol's body, resolved to ids once every label is known.
    let mut body_tokens: Vec<Vec<&str>> = vec![Vec::new()];
    let mut current = 0;
    for (index, raw_line) in asm.lines().enumerate() {
        let line = strip_comment(raw_line);
        let trimmed = line.trim();
        if trimmed.is_empty() {
            continue;
        }
        // A label at column 0 that is not assembler-local starts a new symbol.
        if !line.starts_with([' ', '\t']) {
            if let Some(label) = trimmed.strip_suffix(':') {
                if !label.starts_with(".L") && !label.starts_with('L') {
                    let label = label.trim_matches('"');
                    current = scan.symbols.len();
                    scan.symbols.push(demangle(label));
                    body_tokens.push(Vec::new());
                    mangled_ids.insert(label, current);
                }
                continue;
            }
        }
        if let Some(rest) = trimmed.strip_prefix(".type") {
            if let Some((symbol, kind)) = rest.split_once(',') {
                if kind.trim() == "@function" {
                    scan.functions
                        .push(demangle(symbol.trim().trim_matches('"')));
                }
            }
            continue;
        }
        // Of the directives only data ones (`.quad sym`, a vtable or a jump table)
        // hold references; the others name symbols without referring to them
        // (`.globl next_fn`, `.section .text.next_fn`) or carry text and paths.
        let directive = trimmed.split_whitespace().next().unwrap_or("");
        if directive.starts_with('.')
            && !matches!(
                directive,
                ".quad" | ".long" | ".word" | ".short" | ".byte" | ".xword" | ".4byte" | ".8byte"
            )
        {
            continue;
        }
        if matches!(directive, "ud2" | "udf" | "brk") {
            scan.trap_instructions += 1;
        }
        for token in line.split(|c: char| !(c.is_ascii_alphanumeric() || "_$.".contains(c))) {
            if token.is_empty() {
                continue;
            }
            if PANIC_SYMBOL_PATTERNS.iter().any(|p| token.contains(p)) {
                scan.panic_refs.push(PanicRef {
                    symbol: token.to_owned(),
                    demangled: demangle(token),
                    in_symbol: scan.symbols[current].clone(),
                    line: index + 1,
                });
                scan.panic_ref_symbol.push(current);
            }
            body_tokens[current].push(token);
        }
    }
    scan.references = body_tokens
        .iter()
        .map(|tokens| {
            let mut ids: Vec<usize> = tokens
                .iter()
                .filter_map(|t| mangled_ids.get(t).copied())
                .collect();
            ids.sort_unstable();
            ids.dedup();
            ids
        })
        .collect();
    scan
}

/// Demangles a Rust symbol: the legacy scheme (`_ZN` length-prefixed segments `E`,
/// the trailing `h<hash>` dropped) and the plain paths of the v0 scheme (`_R` with
/// `N`/`C` path nodes, as the standard library's symbols use; generic arguments and
/// impl paths come back mangled). Anything else comes back unchanged.
pub fn demangle(symbol: &str) -> String {
    if let Some(v0) = symbol
        .strip_prefix("_R")
        .or_else(|| symbol.strip_prefix("__R"))
    {
        return demangle_v0_path(&mut V0Cursor { rest: v0 }).unwrap_or_else(|| symbol.to_owned());
    }
    demangle_legacy(symbol)
}

struct V0Cursor<'a> {
    rest: &'a str,
}

impl V0Cursor<'_> {
    fn take(&mut self) -> Option<u8> {
        let byte = *self.rest.as_bytes().first()?;
        self.rest = &self.rest[1..];
        Some(byte)
    }

    /// An optional `s<base-62>_` disambiguator, skipped.
    fn skip_disambiguator(&mut self) -> Option<()> {
        if let Some(after) = self.rest.strip_prefix('s') {
            let end = after.find('_')?;
            self.rest = &after[end + 1..];
        }
        Some(())
    }

    /// `<decimal length> [_] <bytes>` (punycode identifiers are not handled).
    fn identifier(&mut self) -> Option<&str> {
        let digits = self.rest.bytes().take_while(u8::is_ascii_digit).count();
        let len: usize = self.rest[..digits].parse().ok()?;
        let mut after = &self.rest[digits..];
        if let Some(stripped) = after.strip_prefix('_') {
            after = stripped;
        }
        let ident = after.get(..len)?;
        self.rest = &after[len..];
        Some(ident)
    }
}

/// The v0 grammar's `<path>` for crate roots and nested paths, from memory of the
/// v0 mangling RFC (2603).
fn demangle_v0_path(cursor: &mut V0Cursor<'_>) -> Option<String> {
    match cursor.take()? {
        b'C' => {
            cursor.skip_disambiguator()?;
            cursor.identifier().map(str::to_owned)
        }
        b'N' => {
            let namespace = cursor.take()?;
            let parent = demangle_v0_path(cursor)?;
            cursor.skip_disambiguator()?;
            let ident = cursor.identifier()?;
            Some(match (namespace, ident.is_empty()) {
                (b'C', _) => format!("{parent}::{{closure}}"),
                (_, true) => format!("{parent}::{{{}}}", namespace as char),
                _ => format!("{parent}::{ident}"),
            })
        }
        _ => None,
    }
}

fn demangle_legacy(symbol: &str) -> String {
    let body = symbol
        .strip_prefix("__ZN")
        .or_else(|| symbol.strip_prefix("_ZN"))
        .or_else(|| symbol.strip_prefix("ZN"));
    let Some(mut rest) = body else {
        return symbol.to_owned();
    };
    let mut segments: Vec<String> = Vec::new();
    while !rest.starts_with('E') {
        let digits = rest.bytes().take_while(u8::is_ascii_digit).count();
        let Ok(len) = rest[..digits].parse::<usize>() else {
            return symbol.to_owned();
        };
        let after = &rest[digits..];
        let Some(segment) = after.get(..len) else {
            return symbol.to_owned();
        };
        segments.push(unescape_segment(segment));
        rest = &after[len..];
    }
    if let Some(last) = segments.last() {
        let is_hash = last.len() == 17
            && last.starts_with('h')
            && last[1..].bytes().all(|b| b.is_ascii_hexdigit());
        if is_hash {
            segments.pop();
        }
    }
    segments.join("::")
}

fn unescape_segment(segment: &str) -> String {
    // A leading `_` escapes a segment that starts with `$`.
    let segment = if segment.starts_with("_$") {
        &segment[1..]
    } else {
        segment
    };
    let mut out = String::with_capacity(segment.len());
    let mut rest = segment;
    while !rest.is_empty() {
        if let Some(after) = rest.strip_prefix("..") {
            out.push_str("::");
            rest = after;
        } else if let Some(after) = rest.strip_prefix('$') {
            let Some(end) = after.find('$') else {
                out.push_str(rest);
                break;
            };
            let code = &after[..end];
            let text = match code {
                "SP" => "@".to_owned(),
                "BP" => "*".to_owned(),
                "RF" => "&".to_owned(),
                "LT" => "<".to_owned(),
                "GT" => ">".to_owned(),
                "LP" => "(".to_owned(),
                "RP" => ")".to_owned(),
                "C" => ",".to_owned(),
                _ => code
                    .strip_prefix('u')
                    .and_then(|hex| u32::from_str_radix(hex, 16).ok())
                    .and_then(char::from_u32)
                    .map_or_else(|| format!("${code}$"), String::from),
            };
            out.push_str(&text);
            rest = &after[end + 1..];
        } else {
            let next = rest.find(['$', '.']).unwrap_or(rest.len()).max(1);
            out.push_str(&rest[..next]);
            rest = &rest[next..];
        }
    }
    out
}

fn strip_comment(line: &str) -> &str {
    // rustc's x86 output uses `#` comments; ARM uses `@` (but `@` also marks symbol
    // modifiers like `@PLT`, which the tokenizer splits off anyway).
    match line.find('#') {
        Some(at) => &line[..at],
        None => line,
    }
}

fn validate_crate_name(name: &str) -> Result<(), String> {
    let valid = name.chars().next().is_some_and(|c| c.is_ascii_lowercase())
        && name
            .chars()
            .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_');
    if valid {
        Ok(())
    } else {
        Err(format!(
            "crate name `{name}` must be lowercase ASCII letters, digits and `_`, starting with a letter"
        ))
    }
}

fn opt_level_toml(level: &str) -> Result<String, String> {
    match level {
        "0" | "1" | "2" | "3" => Ok(level.to_owned()),
        "s" | "z" => Ok(format!("{level:?}")),
        _ => Err(format!("unknown opt-level `{level}`")),
    }
}

fn shared_target_dir(root: &Path) -> PathBuf {
    let base = std::env::var_os("CARGO_TARGET_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| root.join("target"));
    base.join("nostd-check")
}

fn unique_temp_dir(name: &str) -> Result<PathBuf, String> {
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    let dir = std::env::temp_dir().join(format!(
        "detent-nostd-{name}-{}-{}-{nanos}",
        std::process::id(),
        COUNTER.fetch_add(1, Ordering::Relaxed)
    ));
    std::fs::create_dir_all(&dir).map_err(|e| format!("create {}: {e}", dir.display()))?;
    Ok(dir)
}

fn write_file(path: &Path, text: &str) -> Result<(), String> {
    std::fs::write(path, text).map_err(|e| format!("write {}: {e}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demangles_legacy_symbols_and_drops_the_hash() {
        assert_eq!(
            demangle("_ZN4core9panicking18panic_bounds_check17h0123456789abcdefE"),
            "core::panicking::panic_bounds_check"
        );
        assert_eq!(
            demangle(
                "_ZN50_$LT$T$u20$as$u20$core..convert..Into$LT$U$GT$$GT$4into17hffffffffffffffffE"
            ),
            "<T as core::convert::Into<U>>::into"
        );
        assert_eq!(
            demangle("_RNvNtCsgEmfK2I1SDS_4core9panicking18panic_bounds_check"),
            "core::panicking::panic_bounds_check"
        );
        assert_eq!(
            demangle("_RNvNtNtCsgEmfK2I1SDS_4core9panicking11panic_const23panic_const_div_by_zero"),
            "core::panicking::panic_const::panic_const_div_by_zero"
        );
        assert_eq!(demangle("memcpy"), "memcpy");
        assert_eq!(
            demangle("_ZN3foo"),
            "_ZN3foo",
            "truncated names come back as they were"
        );
    }

    /// Hand-written assembly in the shape rustc emits for x86_64 (from memory).
    #[test]
    fn scan_finds_calls_and_attributes_them_to_their_function() {
        let asm = "\
\t.section\t.text._ZN5check6lookup17h1111111111111111E,\"ax\",@progbits
\t.globl\t_ZN5check6lookup17h1111111111111111E
\t.type\t_ZN5check6lookup17h1111111111111111E,@function
_ZN5check6lookup17h1111111111111111E:
\tcmpq\t$3, %rdi
\tjae\t.LBB0_2
\tretq
.LBB0_2:
\tleaq\t.Lanon.1(%rip), %rdx
\tcallq\t*_ZN4core9panicking18panic_bounds_check17h2222222222222222E@GOTPCREL(%rip)
\tud2
\t.type\t_ZN5check4safe17h3333333333333333E,@function
_ZN5check4safe17h3333333333333333E:
\tmovl\t$1, %eax # panic_fmt in a comment is not a reference
\tretq
\t.type\t_ZN5check6caller17h4444444444444444E,@function
_ZN5check6caller17h4444444444444444E:
\tjmp\t_ZN5check6lookup17h1111111111111111E
.Lanon.1:
\t.asciz\t\"src/panicking.rs panic_fmt\"
";
        let scan = scan_asm(asm);
        assert_eq!(
            scan.functions,
            ["check::lookup", "check::safe", "check::caller"]
        );
        assert_eq!(scan.trap_instructions, 1);
        assert_eq!(scan.panic_refs.len(), 1, "{:?}", scan.panic_refs);
        let found = &scan.panic_refs[0];
        assert_eq!(found.demangled, "core::panicking::panic_bounds_check");
        assert_eq!(found.in_symbol, "check::lookup");
        assert_eq!(found.line, 10);
        // caller -> lookup (a tail jump) reaches the panic; safe reaches nothing.
        let symbol_id = |name: &str| scan.symbols.iter().position(|s| s == name).unwrap();
        let (lookup, safe, caller) = (
            symbol_id("check::lookup"),
            symbol_id("check::safe"),
            symbol_id("check::caller"),
        );
        assert_eq!(scan.references[caller], [lookup]);
        let from_caller = scan.reachable_from(&["caller"]).unwrap();
        assert!(from_caller[lookup] && !from_caller[safe]);
        let from_safe = scan.reachable_from(&["check::safe"]).unwrap();
        assert!(!from_safe[lookup]);
        assert!(scan.reachable_from(&["absent"]).is_err());
    }

    #[test]
    fn rejects_bad_crate_names_and_opt_levels() {
        assert!(validate_crate_name("bilge_pump_2").is_ok());
        assert!(validate_crate_name("").is_err());
        assert!(validate_crate_name("Bad-Name").is_err());
        assert!(opt_level_toml("s").is_ok_and(|s| s == "\"s\""));
        assert!(opt_level_toml("fast").is_err());
    }
}
