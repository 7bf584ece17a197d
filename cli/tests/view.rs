//! `detent view`: the `-o` page is self-contained (no external address), the server
//! listens on 127.0.0.1 only, says so, refuses a port in use with a clear error, and
//! bumps the version the page polls when the file is saved. (The page itself is
//! clicked through in Chromium by `tests/tests/view_browser.rs`.)

use std::io::{BufRead, BufReader, Read, Write};
use std::net::TcpStream;
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

fn detent() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_detent"));
    c.current_dir(concat!(env!("CARGO_MANIFEST_DIR"), "/.."));
    c
}

fn temp_dir(tag: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("detent-view-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Every place a page could name something to fetch from elsewhere.
fn external_references(html: &str) -> Vec<String> {
    let mut found = Vec::new();
    for pat in [
        "http://", "https://", "=\"//", "='//", "url(//", "url(\"//", "url('//", "@import",
        "src=\"", "href=\"",
    ] {
        if let Some(i) = html.find(pat) {
            found.push(html[i.saturating_sub(30)..(i + 40).min(html.len())].to_string());
        }
    }
    found
}

#[test]
fn the_written_page_is_self_contained() {
    let dir = temp_dir("o");
    for example in [
        "greenhouse",
        "locker",
        "debounce",
        "kiln",
        "frame_parser",
        "pattern_detector",
    ] {
        let out = dir.join(format!("{example}.html"));
        let status = detent()
            .args(["view", &format!("examples/{example}.detent"), "-o"])
            .arg(&out)
            .status()
            .unwrap();
        assert!(status.success(), "{example}");
        let html = std::fs::read_to_string(&out).unwrap();
        assert!(html.starts_with("<!DOCTYPE html>"));
        assert!(
            html.contains("\\u003csvg"),
            "{example}: the diagram is inline"
        );
        assert!(
            html.contains("function choose(state, event, inp, before, cnt)"),
            "{example}: the simulator is inline"
        );
        assert_eq!(
            external_references(&html),
            Vec::<String>::new(),
            "{example}"
        );
        assert!(
            !html.contains("{{") && !html.contains("/*{{"),
            "{example}: a placeholder is left"
        );
    }
}

#[test]
fn the_check_finds_an_external_reference() {
    // The scan above is real: it sees each kind of address.
    for bad in [
        "<img src=\"x.png\">",
        "<a href=\"https://example.org\">",
        "<link rel=stylesheet href='//cdn.example/x.css'>",
        "background: url(//cdn.example/x.png)",
    ] {
        assert!(!external_references(bad).is_empty(), "{bad}");
    }
}

#[test]
fn a_spec_with_errors_writes_no_page() {
    let dir = temp_dir("bad");
    let spec = dir.join("bad.detent");
    std::fs::write(
        &spec,
        "machine M { events A; start S; state S { A => T; } }\n",
    )
    .unwrap();
    let out = dir.join("bad.html");
    let o = detent()
        .args(["view"])
        .arg(&spec)
        .arg("-o")
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    assert!(
        String::from_utf8_lossy(&o.stderr).contains("error"),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(!out.exists());
}

struct Server(Child);

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.0.kill();
        let _ = self.0.wait();
    }
}

fn get(port: u16, path: &str) -> (u16, String) {
    let mut s = TcpStream::connect(("127.0.0.1", port)).unwrap();
    write!(
        s,
        "GET {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n"
    )
    .unwrap();
    let mut text = String::new();
    s.read_to_string(&mut text).unwrap();
    let code = text[9..12].parse().unwrap();
    let body = text
        .split_once("\r\n\r\n")
        .map_or("", |(_, b)| b)
        .to_string();
    (code, body)
}

#[test]
fn serves_on_localhost_and_reloads_on_save() {
    let dir = temp_dir("serve");
    let spec = dir.join("m.detent");
    let v1 = "machine M { events Go; start A; state A { Go => B; } state B { Go => A; } }\n";
    std::fs::write(&spec, v1).unwrap();
    let mut child = detent()
        .args(["view", "--port", "0"])
        .arg(&spec)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut line = String::new();
    BufReader::new(child.stdout.take().unwrap())
        .read_line(&mut line)
        .unwrap();
    let server = Server(child);
    let addr = line
        .split("http://")
        .nth(1)
        .and_then(|r| r.split('/').next())
        .unwrap_or_else(|| panic!("no address in {line:?}"))
        .to_string();
    assert!(addr.starts_with("127.0.0.1:"), "{line}");
    let port: u16 = addr[10..].parse().unwrap();

    let (code, page) = get(port, "/");
    assert_eq!(code, 200);
    assert!(page.contains("\"machine\":\"M\""));
    let (_, v) = get(port, "/version");
    assert_eq!(get(port, "/nothing").0, 404);

    // The port is taken now: a second server says so clearly.
    let o = detent()
        .args(["view", "--port", &port.to_string()])
        .arg(&spec)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("in use") && err.contains("--port"), "{err}");

    // Save: the version changes and the page shows the new machine.
    std::fs::write(&spec, v1.replace("machine M", "machine N")).unwrap();
    let t0 = Instant::now();
    loop {
        let (_, now) = get(port, "/version");
        if now != v {
            break;
        }
        assert!(
            t0.elapsed() < Duration::from_secs(20),
            "no reload after a save"
        );
        std::thread::sleep(Duration::from_millis(100));
    }
    let (_, page) = get(port, "/");
    assert!(page.contains("\"machine\":\"N\""));

    // A broken save serves the errors, not a stale machine.
    std::fs::write(
        &spec,
        "machine N { events Go; start A; state A { Go => Z; } }\n",
    )
    .unwrap();
    let t0 = Instant::now();
    loop {
        let (_, page) = get(port, "/");
        if page.contains("\"errors\":") {
            break;
        }
        assert!(
            t0.elapsed() < Duration::from_secs(20),
            "the errors are not shown"
        );
        std::thread::sleep(Duration::from_millis(100));
    }
    drop(server);
}
