//! `detent lsp`: a language server over standard input and output (the Language Server
//! Protocol, JSON-RPC; the `lsp-server` and `lsp-types` crates carry the protocol).
//!
//! Documents are synchronized whole. On every open and change the text goes through
//! the checker (`driver::check_source`, the whole of `detent check`) and its findings
//! are published: severity, lint name as code, notes, the counterexample trace and help
//! in the message, related spans as related information. Hover, definition, references,
//! rename, document symbols and completion read an index of the syntax tree
//! ([`crate::lsp_index`]); while the text does not parse, the last index that did
//! serves. Formatting is `detent fmt`'s layout.

use crate::io::{OK, USAGE};
use crate::lsp_index::{Index, Kind, Range};
use detent_compiler::check::render::trace_note;
use detent_compiler::diag::Severity;
use detent_compiler::driver;
use detent_compiler::syntax::{self, format::format_source};
use lsp_server::{Connection, ErrorCode, Message, Notification, Request, RequestId, Response};
use lsp_types as lt;
use std::collections::HashMap;

/// Keywords offered by completion: every word of the language, the ones of the time
/// and counting declarations included.
pub const KEYWORDS: &[&str] = &[
    "machine",
    "pub",
    "events",
    "inputs",
    "outputs",
    "actions",
    "start",
    "unhandled",
    "complete",
    "ignore",
    "reject",
    "never",
    "recover",
    "to",
    "except",
    "ensure",
    "within",
    "after",
    "steps",
    "timebase",
    "counters",
    "state",
    "terminal",
    "group",
    "emit",
    "enter",
    "leave",
    "do",
    "preempt",
    "if",
    "else",
    "stay",
    "true",
    "false",
    "in",
    "ticks",
    "us",
    "ms",
    "s",
];

/// Runs the server until the client says `exit`. Returns the exit code.
pub fn run() -> u8 {
    let (conn, threads) = Connection::stdio();
    let caps = match serde_json::to_value(capabilities()) {
        Ok(c) => c,
        Err(e) => return crate::io::usage_error(e),
    };
    if let Err(e) = conn.initialize(caps) {
        // The reader's own error (a malformed header, end of input) comes with the join;
        // the writer ends when the connection's sender is dropped.
        drop(conn);
        let why = match threads.join() {
            Err(io) => io.to_string(),
            Ok(()) => e.to_string(),
        };
        return crate::io::usage_error(format!(
            "lsp: no client to serve (standard input ended or does not speak the Language \
             Server Protocol: {why}); editors start `detent lsp` themselves"
        ));
    }
    let mut server = Server::default();
    let code = match server.main_loop(&conn) {
        Ok(()) => OK,
        Err(e) => crate::io::usage_error(format!("lsp: {e}")),
    };
    drop(conn);
    if let Err(e) = threads.join() {
        return crate::io::usage_error(format!("lsp: {e}"));
    }
    if code == OK {
        OK
    } else {
        USAGE
    }
}

fn capabilities() -> lt::ServerCapabilities {
    lt::ServerCapabilities {
        text_document_sync: Some(lt::TextDocumentSyncCapability::Kind(
            lt::TextDocumentSyncKind::FULL,
        )),
        hover_provider: Some(lt::HoverProviderCapability::Simple(true)),
        definition_provider: Some(lt::OneOf::Left(true)),
        references_provider: Some(lt::OneOf::Left(true)),
        rename_provider: Some(lt::OneOf::Left(true)),
        document_symbol_provider: Some(lt::OneOf::Left(true)),
        document_formatting_provider: Some(lt::OneOf::Left(true)),
        completion_provider: Some(lt::CompletionOptions::default()),
        ..Default::default()
    }
}

/// One open document.
struct Doc {
    text: String,
    /// The index of the latest text that parsed.
    index: Index,
}

#[derive(Default)]
struct Server {
    docs: HashMap<String, Doc>,
}

type Failure = Box<dyn std::error::Error + Send + Sync>;

impl Server {
    fn main_loop(&mut self, conn: &Connection) -> Result<(), Failure> {
        for msg in &conn.receiver {
            match msg {
                Message::Request(req) => {
                    if conn.handle_shutdown(&req)? {
                        return Ok(());
                    }
                    let resp = self.request(req);
                    conn.sender.send(Message::Response(resp))?;
                }
                Message::Notification(n) => {
                    for out in self.notification(n) {
                        conn.sender.send(Message::Notification(out))?;
                    }
                }
                Message::Response(_) => {}
            }
        }
        Ok(())
    }

    fn notification(&mut self, n: Notification) -> Vec<Notification> {
        use lt::notification::{
            DidChangeTextDocument, DidCloseTextDocument, DidOpenTextDocument, Notification as _,
        };
        match n.method.as_str() {
            DidOpenTextDocument::METHOD => {
                let Ok(p) = serde_json::from_value::<lt::DidOpenTextDocumentParams>(n.params)
                else {
                    return Vec::new();
                };
                vec![self.update(p.text_document.uri, p.text_document.text)]
            }
            DidChangeTextDocument::METHOD => {
                let Ok(p) = serde_json::from_value::<lt::DidChangeTextDocumentParams>(n.params)
                else {
                    return Vec::new();
                };
                // Full synchronization: the last change holds the whole text.
                match p.content_changes.into_iter().last() {
                    Some(c) => vec![self.update(p.text_document.uri, c.text)],
                    None => Vec::new(),
                }
            }
            DidCloseTextDocument::METHOD => {
                let Ok(p) = serde_json::from_value::<lt::DidCloseTextDocumentParams>(n.params)
                else {
                    return Vec::new();
                };
                self.docs.remove(p.text_document.uri.as_str());
                vec![publish(p.text_document.uri, Vec::new())]
            }
            _ => Vec::new(),
        }
    }

    /// Checks the new text, indexes it, returns the diagnostics to publish.
    fn update(&mut self, uri: lt::Uri, text: String) -> Notification {
        let file = file_name(&uri);
        let report = driver::check_source(&file, &text);
        let mut diags = Vec::new();
        for d in report.diagnostics() {
            let range = d.span.map(Range::of).unwrap_or(Range {
                sl: 0,
                sc: 0,
                el: 0,
                ec: 0,
            });
            let mut message = d.message.clone();
            for n in &d.notes {
                message.push_str(&format!("\nnote: {n}"));
            }
            if let Some(t) = &d.trace {
                message.push_str(&format!("\nnote: {}", trace_note(t)));
            }
            for h in &d.helps {
                message.push_str(&format!("\nhelp: {h}"));
            }
            let related: Vec<lt::DiagnosticRelatedInformation> = d
                .related
                .iter()
                .map(|(span, label)| lt::DiagnosticRelatedInformation {
                    location: lt::Location {
                        uri: uri.clone(),
                        range: to_lsp(&text, Range::of(*span)),
                    },
                    message: label.clone(),
                })
                .collect();
            diags.push(lt::Diagnostic {
                range: to_lsp(&text, range),
                severity: Some(match d.severity {
                    Severity::Error => lt::DiagnosticSeverity::ERROR,
                    Severity::Warning => lt::DiagnosticSeverity::WARNING,
                }),
                code: Some(lt::NumberOrString::String(d.lint.name().to_string())),
                source: Some("detent".to_string()),
                message,
                related_information: (!related.is_empty()).then_some(related),
                ..Default::default()
            });
        }
        drop(report);
        let parsed = syntax::parse_source(&text).ok().map(|f| Index::build(&f));
        // Spans are positions into a per-thread table of every text tokenized; the
        // index keeps plain numbers, so the table is freed after each analysis (a long
        // editing session would otherwise grow it without bound).
        proc_macro2::extra::invalidate_current_thread_spans();
        let key = uri.as_str().to_string();
        let index = match (parsed, self.docs.remove(&key)) {
            (Some(ix), _) => ix,
            (None, Some(old)) => old.index,
            (None, None) => Index::default(),
        };
        self.docs.insert(key, Doc { text, index });
        publish(uri, diags)
    }

    fn request(&mut self, req: Request) -> Response {
        use lt::request::{
            Completion, DocumentSymbolRequest, Formatting, GotoDefinition, HoverRequest,
            References, Rename, Request as _,
        };
        let id = req.id.clone();
        let result = match req.method.as_str() {
            HoverRequest::METHOD => self.with(req, |s, p: lt::HoverParams| s.hover(p)),
            GotoDefinition::METHOD => {
                self.with(req, |s, p: lt::GotoDefinitionParams| s.definition(p))
            }
            References::METHOD => self.with(req, |s, p: lt::ReferenceParams| s.references(p)),
            Rename::METHOD => self.with(req, |s, p: lt::RenameParams| s.rename(p)),
            DocumentSymbolRequest::METHOD => {
                self.with(req, |s, p: lt::DocumentSymbolParams| s.symbols(p))
            }
            Formatting::METHOD => self.with(req, |s, p: lt::DocumentFormattingParams| s.format(p)),
            Completion::METHOD => self.with(req, |s, p: lt::CompletionParams| s.complete(p)),
            other => Err((
                ErrorCode::MethodNotFound,
                format!("detent lsp does not answer `{other}`"),
            )),
        };
        respond(id, result)
    }

    fn with<P: serde::de::DeserializeOwned>(
        &mut self,
        req: Request,
        f: impl FnOnce(&mut Self, P) -> Answer,
    ) -> Answer {
        let p: P = serde_json::from_value(req.params)
            .map_err(|e| (ErrorCode::InvalidParams, format!("bad parameters: {e}")))?;
        f(self, p)
    }

    fn doc(&self, uri: &lt::Uri) -> Result<&Doc, (ErrorCode, String)> {
        self.docs.get(uri.as_str()).ok_or((
            ErrorCode::InvalidParams,
            format!("`{}` is not open", uri.as_str()),
        ))
    }

    /// The document and the (line, character column) of an LSP position.
    fn locate(
        &self,
        p: &lt::TextDocumentPositionParams,
    ) -> Result<(&Doc, u32, u32), (ErrorCode, String)> {
        let doc = self.doc(&p.text_document.uri)?;
        let (line, col) = from_lsp(&doc.text, p.position);
        Ok((doc, line, col))
    }

    fn hover(&mut self, p: lt::HoverParams) -> Answer {
        let (doc, line, col) = self.locate(&p.text_document_position_params)?;
        let Some(o) = doc.index.at(line, col) else {
            return Ok(serde_json::Value::Null);
        };
        let Some(text) = doc.index.hover(o) else {
            return Ok(serde_json::Value::Null);
        };
        to_json(lt::Hover {
            contents: lt::HoverContents::Markup(lt::MarkupContent {
                kind: lt::MarkupKind::Markdown,
                value: text,
            }),
            range: Some(to_lsp(&doc.text, o.range)),
        })
    }

    fn definition(&mut self, p: lt::GotoDefinitionParams) -> Answer {
        let uri = p.text_document_position_params.text_document.uri.clone();
        let (doc, line, col) = self.locate(&p.text_document_position_params)?;
        let Some(o) = doc.index.at(line, col) else {
            return Ok(serde_json::Value::Null);
        };
        let Some((_, range)) = doc.index.resolve(o) else {
            return Ok(serde_json::Value::Null);
        };
        to_json(lt::GotoDefinitionResponse::Scalar(lt::Location {
            uri,
            range: to_lsp(&doc.text, range),
        }))
    }

    fn references(&mut self, p: lt::ReferenceParams) -> Answer {
        let uri = p.text_document_position.text_document.uri.clone();
        let (doc, line, col) = self.locate(&p.text_document_position)?;
        let Some(o) = doc.index.at(line, col) else {
            return Ok(serde_json::Value::Null);
        };
        let locs: Vec<lt::Location> = doc
            .index
            .references(o)
            .into_iter()
            .filter(|x| p.context.include_declaration || x.decl.is_none())
            .map(|x| lt::Location {
                uri: uri.clone(),
                range: to_lsp(&doc.text, x.range),
            })
            .collect();
        to_json(locs)
    }

    fn rename(&mut self, p: lt::RenameParams) -> Answer {
        let uri = p.text_document_position.text_document.uri.clone();
        let (doc, line, col) = self.locate(&p.text_document_position)?;
        let Some(o) = doc.index.at(line, col) else {
            return Err((
                ErrorCode::InvalidParams,
                "no name here to rename".to_string(),
            ));
        };
        let new = p.new_name.trim();
        let valid = new
            .chars()
            .next()
            .is_some_and(|c| c.is_ascii_alphabetic() || c == '_')
            && new.chars().all(|c| c.is_ascii_alphanumeric() || c == '_')
            && new != "_";
        if !valid || KEYWORDS.contains(&new) || syntax::RESERVED.contains(&new) {
            return Err((
                ErrorCode::InvalidParams,
                format!("`{new}` cannot be a name: names are identifiers, not keywords"),
            ));
        }
        if let Some(clash) = doc
            .index
            .occurrences
            .iter()
            .find(|x| x.machine == o.machine && x.decl.is_some() && x.name == new)
        {
            return Err((
                ErrorCode::InvalidParams,
                format!(
                    "`{new}` already names a {} of this machine",
                    clash.decl.map_or("thing", Kind::word)
                ),
            ));
        }
        let edits: Vec<lt::TextEdit> = doc
            .index
            .references(o)
            .into_iter()
            .map(|x| lt::TextEdit {
                range: to_lsp(&doc.text, x.range),
                new_text: new.to_string(),
            })
            .collect();
        // lsp-types keys `WorkspaceEdit::changes` by `Uri`, whose interior cell only
        // caches parsing; its hash and equality are those of the text.
        #[allow(clippy::mutable_key_type)]
        let mut changes = HashMap::new();
        changes.insert(uri, edits);
        to_json(lt::WorkspaceEdit {
            changes: Some(changes),
            ..Default::default()
        })
    }

    fn symbols(&mut self, p: lt::DocumentSymbolParams) -> Answer {
        let doc = self.doc(&p.text_document.uri)?;
        let ix = &doc.index;
        let text = &doc.text;
        #[allow(deprecated)]
        fn sym(
            text: &str,
            name: &str,
            kind: lt::SymbolKind,
            detail: Option<String>,
            range: Range,
            children: Vec<lt::DocumentSymbol>,
        ) -> lt::DocumentSymbol {
            let r = to_lsp(text, range);
            lt::DocumentSymbol {
                name: name.to_string(),
                detail,
                kind,
                tags: None,
                deprecated: None,
                range: r,
                selection_range: r,
                children: (!children.is_empty()).then_some(children),
            }
        }
        fn scope(ix: &Index, text: &str, i: usize) -> lt::DocumentSymbol {
            let s = &ix.scopes[i];
            let children = s.children.iter().map(|c| scope(ix, text, *c)).collect();
            let kind = if s.kind == Kind::Group {
                lt::SymbolKind::NAMESPACE
            } else {
                lt::SymbolKind::ENUM_MEMBER
            };
            let detail = (!s.emit.is_empty()).then(|| format!("emit {}", s.emit.join(", ")));
            sym(text, &s.name, kind, detail, s.range, children)
        }
        let mut out = Vec::new();
        for (mi, m) in ix.machines.iter().enumerate() {
            let mut children = Vec::new();
            for d in ix.declared.iter().filter(|d| d.machine == mi) {
                let kind = match d.kind {
                    Kind::Event => lt::SymbolKind::EVENT,
                    Kind::Input => lt::SymbolKind::VARIABLE,
                    Kind::Output => lt::SymbolKind::FIELD,
                    _ => lt::SymbolKind::FUNCTION,
                };
                children.push(sym(
                    text,
                    &d.name,
                    kind,
                    Some(d.kind.word().to_string()),
                    d.range,
                    Vec::new(),
                ));
            }
            for t in &m.top {
                children.push(scope(ix, text, *t));
            }
            out.push(sym(
                text,
                &m.name,
                lt::SymbolKind::CLASS,
                Some("machine".to_string()),
                m.range,
                children,
            ));
        }
        to_json(lt::DocumentSymbolResponse::Nested(out))
    }

    fn format(&mut self, p: lt::DocumentFormattingParams) -> Answer {
        let doc = self.doc(&p.text_document.uri)?;
        let formatted = match format_source(&doc.text) {
            Ok(f) => f,
            // A text that does not parse is left alone; its diagnostics say why.
            Err(_) => return Ok(serde_json::Value::Null),
        };
        if formatted == doc.text {
            return to_json(Vec::<lt::TextEdit>::new());
        }
        let lines = doc.text.split('\n').count() as u32;
        to_json(vec![lt::TextEdit {
            range: lt::Range {
                start: lt::Position::new(0, 0),
                end: lt::Position::new(lines, 0),
            },
            new_text: formatted,
        }])
    }

    fn complete(&mut self, p: lt::CompletionParams) -> Answer {
        let (doc, line, _) = self.locate(&p.text_document_position)?;
        let ix = &doc.index;
        let mut items = Vec::new();
        if let Some(mi) = ix.machine_at(line) {
            let mut seen = std::collections::HashSet::new();
            for o in ix.occurrences.iter().filter(|o| o.machine == mi) {
                let Some(k) = o.decl else { continue };
                if k == Kind::Machine || !seen.insert((o.name.clone(), k)) {
                    continue;
                }
                let kind = match k {
                    Kind::State => lt::CompletionItemKind::ENUM_MEMBER,
                    Kind::Group => lt::CompletionItemKind::MODULE,
                    Kind::Event => lt::CompletionItemKind::EVENT,
                    Kind::Input => lt::CompletionItemKind::VARIABLE,
                    Kind::Output => lt::CompletionItemKind::FIELD,
                    Kind::Action => lt::CompletionItemKind::FUNCTION,
                    Kind::Counter => lt::CompletionItemKind::VARIABLE,
                    Kind::Machine => lt::CompletionItemKind::CLASS,
                };
                items.push(lt::CompletionItem {
                    label: o.name.clone(),
                    kind: Some(kind),
                    detail: Some(k.word().to_string()),
                    ..Default::default()
                });
            }
        }
        for k in KEYWORDS {
            items.push(lt::CompletionItem {
                label: (*k).to_string(),
                kind: Some(lt::CompletionItemKind::KEYWORD),
                ..Default::default()
            });
        }
        to_json(lt::CompletionResponse::Array(items))
    }
}

type Answer = Result<serde_json::Value, (ErrorCode, String)>;

fn to_json<T: serde::Serialize>(v: T) -> Answer {
    serde_json::to_value(v).map_err(|e| (ErrorCode::InternalError, e.to_string()))
}

fn respond(id: RequestId, result: Answer) -> Response {
    match result {
        Ok(v) => Response::new_ok(id, v),
        Err((code, msg)) => Response::new_err(id, code as i32, msg),
    }
}

fn publish(uri: lt::Uri, diagnostics: Vec<lt::Diagnostic>) -> Notification {
    use lt::notification::{Notification as _, PublishDiagnostics};
    Notification::new(
        PublishDiagnostics::METHOD.to_string(),
        lt::PublishDiagnosticsParams {
            uri,
            diagnostics,
            version: None,
        },
    )
}

/// The file name diagnostics name: the last segment of the URI's path.
fn file_name(uri: &lt::Uri) -> String {
    let s = uri.as_str();
    s.rsplit('/').next().unwrap_or(s).to_string()
}

/// A range in characters to the protocol's UTF-16 positions.
fn to_lsp(text: &str, r: Range) -> lt::Range {
    lt::Range {
        start: position(text, r.sl, r.sc),
        end: position(text, r.el, r.ec),
    }
}

fn position(text: &str, line: u32, col: u32) -> lt::Position {
    let l = text.split('\n').nth(line as usize).unwrap_or("");
    let units: usize = l.chars().take(col as usize).map(char::len_utf16).sum();
    lt::Position::new(line, units as u32)
}

/// A protocol position (UTF-16) to (line, character column).
fn from_lsp(text: &str, p: lt::Position) -> (u32, u32) {
    let l = text.split('\n').nth(p.line as usize).unwrap_or("");
    let mut units = 0u32;
    let mut col = 0u32;
    for c in l.chars() {
        if units >= p.character {
            break;
        }
        units += c.len_utf16() as u32;
        col += 1;
    }
    (p.line, col)
}
