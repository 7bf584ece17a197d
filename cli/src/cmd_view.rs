//! `detent view FILE [--machine NAME] [--port N] [-o PAGE.html]`: the machine as a page
//! to click through (DESIGN.md, "The viewer").
//!
//! The page is one self-contained HTML file, built by `detent_compiler::emit::page`
//! (the diagram, the findings of `check`, the state table and the simulator emitted
//! from the lowered form); this file reads the spec, writes or serves the page and
//! watches the file.
//!
//! - `-o PAGE.html` writes the page (atomically) and exits.
//! - Otherwise the page is served on 127.0.0.1 only, at the port given (default 4787;
//!   `--port 0` picks a free one), and the address is printed. FILE is watched (its
//!   folder, so that editors that save by renaming are seen); each save bumps a version
//!   number that the page polls at `/version`, and the page then reloads itself,
//!   replaying its trace as far as the new machine still has the trace's events. A spec
//!   with errors is served as a page listing them, which reloads the same way once the
//!   file is fixed. Ctrl-C stops the server (the default signal handling: nothing is
//!   left to clean up).

use crate::io::{self, FAILED, OK};
use clap::Args;
use detent_compiler::check::render::{self, Source};
use detent_compiler::diag::Lint;
use detent_compiler::driver;
use detent_compiler::emit::page;
use detent_compiler::report::check::DiagnosticEntry;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;

/// The default port of `detent view`.
pub const DEFAULT_PORT: u16 = 4787;

/// Arguments of `detent view`.
#[derive(Args, Debug)]
pub struct ViewArgs {
    /// The spec file.
    pub file: PathBuf,
    /// Which machine, when the file has several.
    #[arg(long)]
    pub machine: Option<String>,
    /// Port to serve on, on 127.0.0.1 (0: any free port).
    #[arg(long, default_value_t = DEFAULT_PORT)]
    pub port: u16,
    /// Write the page as one self-contained file instead of serving it.
    #[arg(short = 'o', value_name = "PAGE.html")]
    pub out: Option<PathBuf>,
}

/// Runs `detent view`.
pub fn run(args: &ViewArgs) -> u8 {
    match &args.out {
        Some(out) => match page(&args.file, args.machine.as_deref(), None) {
            Ok(html) => match io::write_atomic(out, html.as_bytes()) {
                Ok(()) => OK,
                Err(e) => io::usage_error(e),
            },
            Err(Failure::Usage(msg)) => io::usage_error(msg),
            Err(Failure::Spec(text)) => {
                eprintln!("{text}");
                FAILED
            }
        },
        None => serve(args),
    }
}

/// Why no page could be made.
enum Failure {
    /// The file cannot be read, or `--machine` names no machine.
    Usage(String),
    /// The spec has errors (rendered as text).
    Spec(String),
}

/// The page of a machine of `file`. `live`: the version number the page polls for
/// (served), or `None` (a file).
fn page(file: &Path, machine: Option<&str>, live: Option<u64>) -> Result<String, Failure> {
    let name = file.display().to_string();
    let text = io::read_text(&name).map_err(Failure::Usage)?;
    let report = driver::check_source(&name, &text);
    // A violated property leaves the machine well defined: its counterexample is there
    // to replay.
    let errors = report.errors_except(&[Lint::Property]);
    if !errors.is_empty() {
        let src = Source::new(&report.file, &report.text);
        let mut out: Vec<String> = errors
            .iter()
            .map(|d| render::render_text(d, &src))
            .collect();
        out.push(render::summary_text(errors.len(), 0));
        return Err(Failure::Spec(out.join("\n")));
    }
    let mut reports = report.machines;
    let pick = match machine {
        Some(n) => reports
            .iter()
            .position(|m| m.name.as_deref() == Some(n))
            .ok_or_else(|| {
                let names: Vec<String> = reports.iter().filter_map(|m| m.name.clone()).collect();
                Failure::Usage(format!(
                    "`{name}` has no machine `{n}`; it has: {}",
                    names.join(", ")
                ))
            })?,
        None => match reports.len() {
            1 => 0,
            0 => return Err(Failure::Usage(format!("`{name}` defines no machine"))),
            _ => {
                let names: Vec<String> = reports.iter().filter_map(|m| m.name.clone()).collect();
                return Err(Failure::Usage(format!(
                    "`{name}` has several machines ({}); choose one with --machine NAME",
                    names.join(", ")
                )));
            }
        },
    };
    let mr = reports.swap_remove(pick);
    let findings: Vec<DiagnosticEntry> = mr
        .diagnostics
        .iter()
        .map(|d| DiagnosticEntry::new(d, &name))
        .collect();
    let m = mr
        .machine
        .ok_or_else(|| Failure::Usage(format!("`{name}`: the machine did not resolve")))?;
    Ok(page::machine_page(&name, &m, &findings, live))
}

fn serve(args: &ViewArgs) -> u8 {
    // Fail early on a file that cannot be read or a machine that is not there.
    match page(&args.file, args.machine.as_deref(), Some(0)) {
        Err(Failure::Usage(msg)) => return io::usage_error(msg),
        Err(Failure::Spec(text)) => eprintln!("{text}"),
        Ok(_) => {}
    }
    let addr = format!("127.0.0.1:{}", args.port);
    let server = match tiny_http::Server::http(&addr) {
        Ok(s) => s,
        Err(e) => {
            let in_use = e
                .downcast_ref::<std::io::Error>()
                .is_some_and(|e| e.kind() == std::io::ErrorKind::AddrInUse);
            return if in_use {
                io::usage_error(format!(
                    "cannot serve on {addr}: the port is in use; choose another with --port N (--port 0 picks a free one)"
                ))
            } else {
                io::usage_error(format!("cannot serve on {addr}: {e}"))
            };
        }
    };
    let version = Arc::new(AtomicU64::new(1));
    let _watcher = match watch(&args.file, Arc::clone(&version)) {
        Ok(w) => w,
        Err(e) => return io::usage_error(format!("cannot watch {}: {e}", args.file.display())),
    };
    let shown = server
        .server_addr()
        .to_ip()
        .map_or(addr.clone(), |a| a.to_string());
    io::out(format!(
        "detent view: {} at http://{shown}/ (reloads when the file is saved; Ctrl-C stops)",
        args.file.display()
    ));
    for request in server.incoming_requests() {
        let v = version.load(Ordering::SeqCst);
        let (status, kind, body) = match request.url() {
            "/" | "/index.html" => {
                let body = match page(&args.file, args.machine.as_deref(), Some(v)) {
                    Ok(html) => html,
                    Err(Failure::Usage(msg)) | Err(Failure::Spec(msg)) => {
                        page::error_page(&args.file.display().to_string(), &msg, v)
                    }
                };
                (200, "text/html; charset=utf-8", body)
            }
            "/version" => (200, "text/plain; charset=utf-8", v.to_string()),
            _ => (404, "text/plain; charset=utf-8", "not found".to_string()),
        };
        let header = tiny_http::Header::from_bytes(&b"Content-Type"[..], kind.as_bytes())
            .expect("a valid header");
        let nocache = tiny_http::Header::from_bytes(&b"Cache-Control"[..], &b"no-store"[..])
            .expect("a valid header");
        let response = tiny_http::Response::from_string(body)
            .with_status_code(status)
            .with_header(header)
            .with_header(nocache);
        // A client that went away is no reason to stop serving.
        let _ = request.respond(response);
    }
    OK
}

/// Watches the folder of `file` and bumps `version` on every change to `file`.
fn watch(file: &Path, version: Arc<AtomicU64>) -> notify::Result<notify::RecommendedWatcher> {
    use notify::Watcher;
    let folder = match file.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = file.file_name().map(|n| n.to_os_string());
    let mut w = notify::recommended_watcher(move |res: notify::Result<notify::Event>| {
        if let Ok(ev) = res {
            let ours = ev
                .paths
                .iter()
                .any(|p| p.file_name().map(|n| n.to_os_string()) == name);
            if ours && !matches!(ev.kind, notify::EventKind::Access(_)) {
                version.fetch_add(1, Ordering::SeqCst);
            }
        }
    })?;
    w.watch(&folder, notify::RecursiveMode::NonRecursive)?;
    Ok(w)
}
