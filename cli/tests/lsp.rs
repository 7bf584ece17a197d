//! `detent lsp` spoken to as an editor does: the binary is spawned, and a client in this
//! test writes JSON-RPC messages (with `Content-Length` headers) to its standard input
//! and reads its answers: initialize, didOpen, didChange, every request the server
//! offers, shutdown and exit. Mutated examples go through didChange with requests at
//! random positions: the server answers every request and never dies.

use detent_compiler::rng::Rng;
use serde_json::{json, Value};
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, ChildStdout, Command, Stdio};
use std::sync::mpsc::{channel, Receiver};
use std::time::Duration;

struct Client {
    child: Child,
    stdin: ChildStdin,
    rx: Receiver<Value>,
    next_id: i64,
    /// Notifications seen while waiting for responses.
    notes: Vec<Value>,
}

fn read_message(r: &mut BufReader<ChildStdout>) -> Option<Value> {
    let mut len = None;
    loop {
        let mut line = String::new();
        if r.read_line(&mut line).ok()? == 0 {
            return None;
        }
        let line = line.trim_end();
        if line.is_empty() {
            break;
        }
        if let Some(v) = line.strip_prefix("Content-Length: ") {
            len = v.parse::<usize>().ok();
        }
    }
    let mut buf = vec![0; len?];
    r.read_exact(&mut buf).ok()?;
    serde_json::from_slice(&buf).ok()
}

impl Client {
    fn start() -> Client {
        let mut child = Command::new(env!("CARGO_BIN_EXE_detent"))
            .arg("lsp")
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::inherit())
            .spawn()
            .unwrap();
        let stdin = child.stdin.take().unwrap();
        let mut stdout = BufReader::new(child.stdout.take().unwrap());
        let (tx, rx) = channel();
        std::thread::spawn(move || {
            while let Some(v) = read_message(&mut stdout) {
                if tx.send(v).is_err() {
                    break;
                }
            }
        });
        let mut c = Client {
            child,
            stdin,
            rx,
            next_id: 1,
            notes: Vec::new(),
        };
        let init = c.request(
            "initialize",
            json!({"processId": null, "rootUri": null, "capabilities": {}}),
        );
        let caps = &init["result"]["capabilities"];
        for cap in [
            "hoverProvider",
            "definitionProvider",
            "referencesProvider",
            "renameProvider",
            "documentSymbolProvider",
            "documentFormattingProvider",
            "completionProvider",
        ] {
            assert!(!caps[cap].is_null(), "server does not offer {cap}: {init}");
        }
        c.notify("initialized", json!({}));
        c
    }

    fn send(&mut self, v: Value) {
        let body = v.to_string();
        write!(self.stdin, "Content-Length: {}\r\n\r\n{body}", body.len()).unwrap();
        self.stdin.flush().unwrap();
    }

    fn notify(&mut self, method: &str, params: Value) {
        self.send(json!({"jsonrpc": "2.0", "method": method, "params": params}));
    }

    fn recv(&mut self) -> Value {
        self.rx
            .recv_timeout(Duration::from_secs(60))
            .expect("the server answers within a minute")
    }

    fn request(&mut self, method: &str, params: Value) -> Value {
        let id = self.next_id;
        self.next_id += 1;
        self.send(json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params}));
        loop {
            let v = self.recv();
            if v["id"] == json!(id) {
                return v;
            }
            self.notes.push(v);
        }
    }

    /// The next diagnostics published for `uri`.
    fn diagnostics(&mut self, uri: &str) -> Vec<Value> {
        if let Some(i) = self.notes.iter().position(|n| {
            n["method"] == "textDocument/publishDiagnostics" && n["params"]["uri"] == uri
        }) {
            let n = self.notes.remove(i);
            return n["params"]["diagnostics"].as_array().unwrap().clone();
        }
        loop {
            let v = self.recv();
            if v["method"] == "textDocument/publishDiagnostics" && v["params"]["uri"] == uri {
                return v["params"]["diagnostics"].as_array().unwrap().clone();
            }
            self.notes.push(v);
        }
    }

    fn open(&mut self, uri: &str, text: &str) -> Vec<Value> {
        self.notify(
            "textDocument/didOpen",
            json!({"textDocument": {"uri": uri, "languageId": "detent", "version": 1, "text": text}}),
        );
        self.diagnostics(uri)
    }

    fn change(&mut self, uri: &str, version: i64, text: &str) -> Vec<Value> {
        self.notify(
            "textDocument/didChange",
            json!({"textDocument": {"uri": uri, "version": version}, "contentChanges": [{"text": text}]}),
        );
        self.diagnostics(uri)
    }

    fn at(&mut self, method: &str, uri: &str, line: u32, character: u32, extra: Value) -> Value {
        let mut params = json!({"textDocument": {"uri": uri}, "position": {"line": line, "character": character}});
        if let Value::Object(m) = extra {
            for (k, v) in m {
                params[k] = v;
            }
        }
        let r = self.request(method, params);
        assert!(r.get("error").is_none(), "{method} failed: {r}");
        r["result"].clone()
    }

    fn stop(mut self) {
        let r = self.request("shutdown", Value::Null);
        assert!(r.get("error").is_none(), "{r}");
        self.notify("exit", Value::Null);
        let status = self.child.wait().unwrap();
        assert!(status.success(), "detent lsp exited with {status}");
    }
}

const URI: &str = "file:///work/lamp.detent";

/// Line and column (UTF-16, as the protocol counts) of the `nth` occurrence of `needle`.
fn pos(text: &str, needle: &str, nth: usize) -> (u32, u32) {
    let mut seen = 0;
    for (l, line) in text.lines().enumerate() {
        let mut from = 0;
        while let Some(i) = line[from..].find(needle) {
            let at = from + i;
            if seen == nth {
                return (l as u32, line[..at].encode_utf16().count() as u32);
            }
            seen += 1;
            from = at + 1;
        }
    }
    panic!("`{needle}` #{nth} not found");
}

fn range_start(r: &Value) -> (u32, u32) {
    (
        r["start"]["line"].as_u64().unwrap() as u32,
        r["start"]["character"].as_u64().unwrap() as u32,
    )
}

const LAMP: &str = "\
/// A lamp with a dimmer.
machine Lamp {
    events Press, Tick;
    inputs daylight;
    outputs on, bright;
    actions click;
    start Off;
    timebase Tick 1 ms;
    never bright && !on;

    state Off { Press if !daylight => Full, do click; Press else => stay; Tick => stay; }
    /// Lit: the lamp is on.
    group Lit emit on {
        preempt Press if daylight => Off;
        Tick => stay;
        state Full emit bright { Press => Dim; after 5 s => Dim; }
        state Dim { Press => Off, do click; }
    }
}
";

#[test]
fn an_editor_session_diagnostics_hover_navigation_rename_symbols_format_completion() {
    let mut c = Client::start();
    let diags = c.open(URI, LAMP);
    assert!(diags.is_empty(), "a clean spec has no findings: {diags:?}");

    // A change with an error: published at the token, with the lint as code.
    let broken = LAMP.replace("Press => Dim;", "Press => Dimm;");
    let diags = c.change(URI, 2, &broken);
    let err = diags
        .iter()
        .find(|d| d["message"].as_str().unwrap().contains("Dimm"))
        .unwrap_or_else(|| panic!("no finding about `Dimm`: {diags:?}"));
    assert_eq!(err["severity"], 1);
    assert_eq!(err["source"], "detent");
    assert_eq!(range_start(&err["range"]), pos(&broken, "Dimm", 0));
    assert!(
        err["message"]
            .as_str()
            .unwrap()
            .contains("did you mean `Dim`"),
        "{err}"
    );

    // An incomplete state: the witness is in the message; a violated property names
    // the trace.
    let incomplete = LAMP.replace("Press else => stay; ", "");
    let diags = c.change(URI, 3, &incomplete);
    let inc = diags
        .iter()
        .find(|d| d["code"] == "incomplete")
        .unwrap_or_else(|| panic!("{diags:?}"));
    assert!(
        inc["message"].as_str().unwrap().contains("daylight"),
        "{inc}"
    );
    let prop = LAMP.replace(
        "never bright && !on;",
        "never bright && !on;\n    never Press && on;",
    );
    let diags = c.change(URI, 4, &prop);
    let p = diags
        .iter()
        .find(|d| d["message"].as_str().unwrap().contains("trace"))
        .unwrap_or_else(|| panic!("no property finding with a trace: {diags:?}"));
    assert_eq!(p["severity"], 1, "{p}");

    // Related information: a dead rule points at the rule that hides it.
    let dead = LAMP.replace(
        "Tick => stay; }\n    ///",
        "Tick => stay; Tick => Full; }\n    ///",
    );
    let diags = c.change(URI, 5, &dead);
    assert!(
        diags.iter().any(|d| d["relatedInformation"]
            .as_array()
            .is_some_and(|r| !r.is_empty() && r[0]["location"]["uri"] == URI)),
        "some finding carries related information: {diags:?}"
    );

    // Back to the clean text; a text that does not parse keeps the last index.
    assert!(c.change(URI, 6, LAMP).is_empty());
    let half = LAMP.replace("state Dim {", "state Dim {{");
    let diags = c.change(URI, 7, &half);
    assert_eq!(diags[0]["code"], "syntax", "{diags:?}");
    let (l, ch) = pos(&half, "=> Full", 0);
    let def = c.at("textDocument/definition", URI, l, ch + 4, json!({}));
    assert_eq!(range_start(&def["range"]), pos(&half, "Full emit", 0));
    assert!(c.change(URI, 8, LAMP).is_empty());

    // Hover on a state: Moore outputs (own and the group's), rules, inherited rules.
    let (l, ch) = pos(LAMP, "Full emit", 0);
    let h = c.at("textDocument/hover", URI, l, ch + 1, json!({}));
    let text = h["contents"]["value"].as_str().unwrap();
    assert!(text.contains("**state** `Full` in group `Lit`"), "{text}");
    assert!(
        text.contains("bright") && text.contains("on (from `Lit`)"),
        "{text}"
    );
    assert!(
        text.contains("`Press => Dim;`") && text.contains("`after 5 s => Dim;`"),
        "{text}"
    );
    assert!(text.contains("Inherited from group `Lit`"), "{text}");
    assert!(
        text.contains("`preempt Press if daylight => Off;`"),
        "{text}"
    );
    // Hover on an event: its handlers; on the time base event, the time base.
    let (l, ch) = pos(LAMP, "Tick", 0);
    let h = c.at("textDocument/hover", URI, l, ch, json!({}));
    let text = h["contents"]["value"].as_str().unwrap();
    assert!(text.contains("**event** `Tick`"), "{text}");
    assert!(text.contains("state `Off`: `Tick => stay;`"), "{text}");
    assert!(text.contains("group `Lit`: `Tick => stay;`"), "{text}");
    assert!(text.contains("timebase Tick 1 ms"), "{text}");
    // Hover on a group: its doc comment and members.
    let (l, ch) = pos(LAMP, "Lit emit", 0);
    let text = c.at("textDocument/hover", URI, l, ch, json!({}))["contents"]["value"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(
        text.contains("Lit: the lamp is on.") && text.contains("Members: `Full`, `Dim`"),
        "{text}"
    );
    // Nothing under the cursor: null.
    assert!(c.at("textDocument/hover", URI, 9, 0, json!({})).is_null());

    // Definition from a rule's target, an input in a guard, an output, an action.
    for (use_, nth, decl, dnth) in [
        ("Dim;", 0, "Dim {", 0),
        ("daylight =>", 0, "daylight;", 0),
        ("bright &&", 0, "bright;", 0),
        ("click;", 1, "click;", 0),
        ("Off;", 0, "Off {", 0),
        ("Lit emit", 0, "Lit emit", 0),
    ] {
        let (l, ch) = pos(LAMP, use_, nth);
        let def = c.at("textDocument/definition", URI, l, ch, json!({}));
        assert_eq!(def["uri"], URI, "definition of {use_}");
        assert_eq!(range_start(&def["range"]), pos(LAMP, decl, dnth), "{use_}");
    }

    // References of an event: the declaration, the time base, every trigger.
    let (l, ch) = pos(LAMP, "Press", 0);
    let refs = c.at(
        "textDocument/references",
        URI,
        l,
        ch,
        json!({"context": {"includeDeclaration": true}}),
    );
    assert_eq!(refs.as_array().unwrap().len(), 6, "{refs}");
    let refs = c.at(
        "textDocument/references",
        URI,
        l,
        ch,
        json!({"context": {"includeDeclaration": false}}),
    );
    assert_eq!(refs.as_array().unwrap().len(), 5, "{refs}");
    // References of an output: declaration, emit lists, the property.
    let (l, ch) = pos(LAMP, "on,", 0);
    let refs = c.at(
        "textDocument/references",
        URI,
        l,
        ch,
        json!({"context": {"includeDeclaration": true}}),
    );
    assert_eq!(refs.as_array().unwrap().len(), 3, "{refs}");

    // Rename a state: every use changes; the result checks clean.
    let (l, ch) = pos(LAMP, "Dim {", 0);
    let edit = c.at("textDocument/rename", URI, l, ch, json!({"newName": "Low"}));
    let edits = edit["changes"][URI].as_array().unwrap().clone();
    assert_eq!(edits.len(), 3, "{edit}");
    let renamed = apply(LAMP, &edits);
    assert_eq!(renamed, LAMP.replace("Dim", "Low"));
    assert!(c.change(URI, 9, &renamed).is_empty());
    assert!(c.change(URI, 10, LAMP).is_empty());
    // A keyword or a taken name is refused.
    for bad in ["stay", "Off", "9x", "after"] {
        let r = c.request(
            "textDocument/rename",
            json!({"textDocument": {"uri": URI}, "position": {"line": l, "character": ch}, "newName": bad}),
        );
        assert!(
            r.get("error").is_some(),
            "renaming to `{bad}` is refused: {r}"
        );
    }

    // Document symbols: the machine, its names, the group/state tree.
    let syms = c.request(
        "textDocument/documentSymbol",
        json!({"textDocument": {"uri": URI}}),
    )["result"]
        .clone();
    let machine = &syms[0];
    assert_eq!(machine["name"], "Lamp");
    let kids: Vec<&str> = machine["children"]
        .as_array()
        .unwrap()
        .iter()
        .map(|k| k["name"].as_str().unwrap())
        .collect();
    assert_eq!(
        kids,
        ["Press", "Tick", "daylight", "on", "bright", "click", "Off", "Lit"]
    );
    let lit = &machine["children"][7];
    let states: Vec<&str> = lit["children"]
        .as_array()
        .unwrap()
        .iter()
        .map(|k| k["name"].as_str().unwrap())
        .collect();
    assert_eq!(states, ["Full", "Dim"]);

    // Formatting: the layout of `detent fmt`; formatting that again changes nothing.
    let fmt = c.request(
        "textDocument/formatting",
        json!({"textDocument": {"uri": URI}, "options": {"tabSize": 4, "insertSpaces": true}}),
    )["result"]
        .clone();
    let formatted = apply(LAMP, fmt.as_array().unwrap());
    assert_eq!(
        formatted,
        detent_compiler::syntax::format::format_source(LAMP).unwrap()
    );
    assert!(formatted.contains("    state Off {\n        Press if !daylight => Full, do click;\n"));
    assert!(c.change(URI, 11, &formatted).is_empty());
    let again = c.request(
        "textDocument/formatting",
        json!({"textDocument": {"uri": URI}, "options": {"tabSize": 4, "insertSpaces": true}}),
    )["result"]
        .clone();
    assert_eq!(again, json!([]));

    // Completion: the machine's names and the keywords (time and counting included).
    let items = c.at("textDocument/completion", URI, 12, 8, json!({}));
    let labels: Vec<&str> = items
        .as_array()
        .unwrap()
        .iter()
        .map(|i| i["label"].as_str().unwrap())
        .collect();
    for want in [
        "Off", "Full", "Dim", "Lit", "Press", "Tick", "daylight", "bright", "click", "stay",
        "after", "timebase", "counters", "ensure", "within",
    ] {
        assert!(
            labels.contains(&want),
            "completion lacks `{want}`: {labels:?}"
        );
    }

    // An unknown request is an error, not a crash.
    let r = c.request("textDocument/unknownThing", json!({}));
    assert!(r.get("error").is_some());
    c.stop();
}

#[test]
fn positions_count_utf16_units_as_the_protocol_does() {
    // A doc comment with characters outside the Basic Multilingual Plane before a name
    // on the same line would shift columns if they were counted in bytes or chars.
    let text = "machine M { events Go; outputs lit; start A; /* 🔥🔥 */ state A { Go => B; } state B emit lit { Go => A; } }\n";
    let mut c = Client::start();
    let diags = c.open(URI, text);
    assert!(diags.is_empty(), "{diags:?}");
    let (l, ch) = pos(text, "=> B", 0);
    let def = c.at("textDocument/definition", URI, l, ch + 3, json!({}));
    assert_eq!(range_start(&def["range"]), pos(text, "B emit", 0));
    c.stop();
}

#[test]
fn mutated_examples_never_stop_the_server() {
    let root: PathBuf = Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .into();
    let mut c = Client::start();
    let mut rng = Rng::new(0x15B_0025);
    let mut version = 1;
    let mut requests = 0;
    for e in std::fs::read_dir(root.join("examples")).unwrap().flatten() {
        let p = e.path();
        if p.extension().is_none_or(|x| x != "detent") {
            continue;
        }
        let text = std::fs::read_to_string(&p).unwrap();
        let uri = format!("file:///ex/{}", p.file_name().unwrap().to_string_lossy());
        c.open(&uri, &text);
        for _ in 0..15 {
            let mut bytes: Vec<char> = text.chars().collect();
            for _ in 0..1 + rng.below(4) {
                let i = rng.below(bytes.len() as u64) as usize;
                match rng.below(3) {
                    0 => {
                        bytes.remove(i);
                    }
                    1 => {
                        let j = rng.below(bytes.len() as u64) as usize;
                        bytes.insert(i, bytes[j]);
                    }
                    _ => {
                        let j = rng.below(bytes.len() as u64) as usize;
                        bytes.swap(i, j);
                    }
                }
            }
            let mutant: String = bytes.into_iter().collect();
            version += 1;
            c.change(&uri, version, &mutant);
            let lines = mutant.lines().count().max(1) as u64;
            for method in [
                "textDocument/hover",
                "textDocument/definition",
                "textDocument/references",
                "textDocument/completion",
            ] {
                let line = rng.below(lines) as u32;
                let ch = rng.below(60) as u32;
                let mut params = json!({"textDocument": {"uri": uri}, "position": {"line": line, "character": ch}});
                if method.ends_with("references") {
                    params["context"] = json!({"includeDeclaration": true});
                }
                let r = c.request(method, params);
                assert!(r.get("error").is_none(), "{method} failed on a mutant: {r}");
                requests += 1;
            }
            let r = c.request(
                "textDocument/formatting",
                json!({"textDocument": {"uri": uri}, "options": {"tabSize": 4, "insertSpaces": true}}),
            );
            assert!(r.get("error").is_none(), "{r}");
            requests += 1;
        }
    }
    assert!(requests > 300, "{requests}");
    c.stop();
}

/// Applies text edits (non-overlapping) to a text.
fn apply(text: &str, edits: &[Value]) -> String {
    let lines: Vec<&str> = text.split('\n').collect();
    let offset = |p: &Value| -> usize {
        let l = p["line"].as_u64().unwrap() as usize;
        let ch = p["character"].as_u64().unwrap() as usize;
        if l >= lines.len() {
            return text.len();
        }
        let start: usize = lines[..l].iter().map(|x| x.len() + 1).sum();
        let mut units = 0;
        let mut byte = 0;
        for c in lines[l].chars() {
            if units >= ch {
                break;
            }
            units += c.len_utf16();
            byte += c.len_utf8();
        }
        (start + byte).min(text.len())
    };
    let mut spans: Vec<(usize, usize, String)> = edits
        .iter()
        .map(|e| {
            (
                offset(&e["range"]["start"]),
                offset(&e["range"]["end"]),
                e["newText"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    spans.sort_by_key(|s| std::cmp::Reverse(s.0));
    let mut out = text.to_string();
    for (s, e, t) in spans {
        out.replace_range(s..e, &t);
    }
    out
}
