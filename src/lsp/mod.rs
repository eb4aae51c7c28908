//! `foldcheck lsp`: a Language Server Protocol server over stdio, for rig files and
//! catalogs.
//!
//! The server is a thin reader of the library's pipeline: each open document is analysed
//! by the same campaign run as `foldcheck check` (with the editor's texts standing in for
//! the files on disk, see [`campaign::Overlay`]), and every answer reads that run:
//! diagnostics are its findings, hovers its numbers, quick fixes its verified fixes.
//!
//! Features: diagnostics on open, change (debounced) and save; hover; go to definition
//! and find references; completion of names and enum values; code actions (verified fixes
//! and suppression comments). Positions are in UTF-16 code units unless the client offers
//! UTF-8 (`general.positionEncodings`).

pub mod complete;
pub mod hover;
pub mod position;
pub mod snapshot;
pub mod transport;

use crate::campaign::{self, Overlay};
use crate::finding::{Finding, Severity};
use crate::source::{FileId, Sources, Span};
use complete::{RESPONSES, Want};
use lsp_server::{Connection, ErrorCode, Message, Notification, Request, Response};
use lsp_types as lt;
use position::{Encoding, LineMap};
use serde_json::{Value, json};
use snapshot::{Snapshot, SymbolKind, file_key};
use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

/// How long the server waits after a change before analysing again.
pub const DEBOUNCE: Duration = Duration::from_millis(150);

/// The text a "suppress" code action writes after the rule name, to be replaced by the
/// user's reason.
pub const REASON_PLACEHOLDER: &str = "TODO: say why this is acceptable";

/// Serve the protocol on stdin and stdout until the client says `exit`. `Ok(true)` when
/// the client asked to shut down first, `Ok(false)` when it said `exit` (or closed the
/// connection) without (the protocol's exit status is then 1); `Err` is a protocol
/// failure.
pub fn run_stdio() -> Result<bool, String> {
    // Our own stdio transport: a frame that is not JSON gets a parse error reply and the
    // session goes on (lsp-server's own transport stops reading at such a frame).
    let (connection, io) = transport::stdio();
    let result = serve(&connection);
    drop(connection);
    let joined = io.join().map_err(|e| e.to_string());
    joined.and(result)
}

/// Serve the protocol on a connection: initialize, then the main loop. `Ok(true)` after
/// `shutdown` and `exit`, `Ok(false)` after `exit` alone or a closed connection.
pub fn serve(connection: &Connection) -> Result<bool, String> {
    let (id, params) = connection.initialize_start().map_err(|e| e.to_string())?;
    let offered: Vec<String> = params
        .pointer("/capabilities/general/positionEncodings")
        .and_then(Value::as_array)
        .map(|a| {
            a.iter()
                .filter_map(|v| v.as_str().map(str::to_string))
                .collect()
        })
        .unwrap_or_default();
    let enc = Encoding::negotiate(&offered);
    let result = json!({
        "capabilities": capabilities(enc),
        "serverInfo": { "name": "foldcheck", "version": env!("CARGO_PKG_VERSION") }
    });
    connection
        .initialize_finish(id, result)
        .map_err(|e| e.to_string())?;
    let mut server = Server {
        conn: connection,
        enc,
        docs: HashMap::new(),
        snaps: HashMap::new(),
        names: HashMap::new(),
        pending: HashMap::new(),
    };
    server.main_loop()
}

/// What the server announces.
fn capabilities(enc: Encoding) -> Value {
    json!({
        "positionEncoding": enc.name(),
        "textDocumentSync": {
            "openClose": true,
            "change": 2,
            "save": { "includeText": false }
        },
        "hoverProvider": true,
        "definitionProvider": true,
        "referencesProvider": true,
        "completionProvider": { "triggerCharacters": [" ", ":", "[", ","] },
        "codeActionProvider": { "codeActionKinds": ["quickfix"] }
    })
}

/// An open document.
struct Doc {
    path: PathBuf,
    key: PathBuf,
    text: String,
    version: i32,
}

struct Server<'c> {
    conn: &'c Connection,
    enc: Encoding,
    docs: HashMap<lt::Url, Doc>,
    snaps: HashMap<lt::Url, Snapshot>,
    /// Names of the last analysis that resolved, for completion while the text does not.
    names: HashMap<lt::Url, HashMap<SymbolKind, Vec<String>>>,
    /// Documents changed and not analysed yet, with when to analyse them.
    pending: HashMap<lt::Url, Instant>,
}

/// A request's failure: an LSP error code and a message.
type Failure = (i32, String);

impl Server<'_> {
    fn main_loop(&mut self) -> Result<bool, String> {
        loop {
            let next = self.pending.values().min().copied();
            let msg = match next {
                Some(at) => {
                    let wait = at.saturating_duration_since(Instant::now());
                    match self.conn.receiver.recv_timeout(wait) {
                        Ok(m) => Some(m),
                        Err(crossbeam_timeout) if crossbeam_timeout.is_timeout() => None,
                        Err(_) => return Ok(false),
                    }
                }
                None => match self.conn.receiver.recv() {
                    Ok(m) => Some(m),
                    Err(_) => return Ok(false),
                },
            };
            let Some(msg) = msg else {
                let due: Vec<lt::Url> = self
                    .pending
                    .iter()
                    .filter(|(_, at)| **at <= Instant::now())
                    .map(|(u, _)| u.clone())
                    .collect();
                for uri in due {
                    self.pending.remove(&uri);
                    self.refresh(&uri);
                }
                continue;
            };
            match msg {
                Message::Request(req) => {
                    if self.conn.handle_shutdown(&req).map_err(|e| e.to_string())? {
                        return Ok(true);
                    }
                    let id = req.id.clone();
                    let resp = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                        self.request(req)
                    }))
                    .unwrap_or_else(|_| {
                        Err((
                            ErrorCode::InternalError as i32,
                            "internal error while answering the request".to_string(),
                        ))
                    });
                    let resp = match resp {
                        Ok(v) => Response::new_ok(id, v),
                        Err((code, message)) => Response::new_err(id, code, message),
                    };
                    self.send(resp.into());
                }
                Message::Notification(n) => {
                    if n.method == "exit" {
                        return Ok(false);
                    }
                    let _ = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                        self.notification(n)
                    }));
                }
                Message::Response(_) => {}
            }
        }
    }

    fn send(&self, msg: Message) {
        let _ = self.conn.sender.send(msg);
    }

    fn notification(&mut self, n: Notification) {
        match n.method.as_str() {
            "textDocument/didOpen" => {
                let Ok(p) = serde_json::from_value::<lt::DidOpenTextDocumentParams>(n.params)
                else {
                    return;
                };
                let d = p.text_document;
                let path = path_of(&d.uri);
                self.docs.insert(
                    d.uri.clone(),
                    Doc {
                        key: file_key(&path),
                        path,
                        text: d.text,
                        version: d.version,
                    },
                );
                self.refresh(&d.uri);
            }
            "textDocument/didChange" => {
                let Ok(p) = serde_json::from_value::<lt::DidChangeTextDocumentParams>(n.params)
                else {
                    return;
                };
                let enc = self.enc;
                let Some(doc) = self.docs.get_mut(&p.text_document.uri) else {
                    return;
                };
                for change in p.content_changes {
                    match change.range {
                        None => doc.text = change.text,
                        Some(r) => {
                            let map = LineMap::new(&doc.text);
                            let a = map.offset(&doc.text, r.start, enc);
                            let b = map.offset(&doc.text, r.end, enc).max(a);
                            doc.text.replace_range(a..b, &change.text);
                        }
                    }
                }
                doc.version = p.text_document.version;
                self.pending
                    .insert(p.text_document.uri, Instant::now() + DEBOUNCE);
            }
            "textDocument/didSave" => {
                let Ok(p) = serde_json::from_value::<lt::DidSaveTextDocumentParams>(n.params)
                else {
                    return;
                };
                self.pending.remove(&p.text_document.uri);
                self.refresh(&p.text_document.uri);
            }
            "textDocument/didClose" => {
                let Ok(p) = serde_json::from_value::<lt::DidCloseTextDocumentParams>(n.params)
                else {
                    return;
                };
                let uri = p.text_document.uri;
                self.pending.remove(&uri);
                self.snaps.remove(&uri);
                self.names.remove(&uri);
                if let Some(doc) = self.docs.remove(&uri) {
                    self.publish_raw(&uri, Vec::new(), None);
                    // Rigs that read it now read the file on disk.
                    for other in self.dependents(&doc.key, &uri) {
                        self.analyse(&other);
                    }
                }
            }
            _ => {}
        }
    }

    /// Analyse a document now, then every open document whose last analysis read it (a
    /// changed catalog changes the rigs that include it).
    fn refresh(&mut self, uri: &lt::Url) {
        self.analyse(uri);
        let Some(key) = self.docs.get(uri).map(|d| d.key.clone()) else {
            return;
        };
        for other in self.dependents(&key, uri) {
            self.pending.remove(&other);
            self.analyse(&other);
        }
    }

    /// Open documents other than `except` whose last analysis read the file `key`.
    fn dependents(&self, key: &Path, except: &lt::Url) -> Vec<lt::Url> {
        let mut out: Vec<lt::Url> = self
            .snaps
            .iter()
            .filter(|(u, _)| *u != except)
            .filter(|(_, s)| s.outcome.sources.iter().any(|sf| file_key(&sf.path) == key))
            .map(|(u, _)| u.clone())
            .collect();
        out.sort();
        out
    }

    fn overlay(&self) -> Arc<Overlay> {
        let mut map = Overlay::new();
        for d in self.docs.values() {
            map.insert(campaign::absolute(&d.path), d.text.clone());
            map.insert(d.key.clone(), d.text.clone());
        }
        Arc::new(map)
    }

    /// Analyse one open document and publish its diagnostics.
    fn analyse(&mut self, uri: &lt::Url) {
        let Some(doc) = self.docs.get(uri) else {
            return;
        };
        let snap = snapshot::analyse(&doc.path, self.overlay());
        let diagnostics = self.diagnostics(&snap, doc);
        let version = doc.version;
        let names = [
            SymbolKind::Clock,
            SymbolKind::Sensor,
            SymbolKind::Module,
            SymbolKind::Channel,
        ]
        .map(|k| (k, snap.names(k)));
        if names.iter().any(|(_, n)| !n.is_empty()) {
            self.names.insert(uri.clone(), names.into_iter().collect());
        }
        self.snaps.insert(uri.clone(), snap);
        self.publish_raw(uri, diagnostics, Some(version));
    }

    fn publish_raw(&self, uri: &lt::Url, diagnostics: Vec<lt::Diagnostic>, version: Option<i32>) {
        let params = lt::PublishDiagnosticsParams {
            uri: uri.clone(),
            diagnostics,
            version,
        };
        self.send(Notification::new("textDocument/publishDiagnostics".to_string(), params).into());
    }

    fn diagnostics(&self, snap: &Snapshot, doc: &Doc) -> Vec<lt::Diagnostic> {
        if let Some(why) = &snap.fatal {
            return vec![lt::Diagnostic {
                range: lt::Range::default(),
                severity: Some(lt::DiagnosticSeverity::ERROR),
                source: Some("foldcheck".to_string()),
                message: format!("foldcheck could not check this file: {why}"),
                ..Default::default()
            }];
        }
        let Some(file) = snap.file else {
            return Vec::new();
        };
        let sources = &snap.outcome.sources;
        snap.outcome
            .findings
            .iter()
            .filter(|f| f.primary.span.file == file && f.suppressed.is_none())
            .map(|f| self.diagnostic(sources, f, doc))
            .collect()
    }

    fn diagnostic(&self, sources: &Sources, f: &Finding, doc: &Doc) -> lt::Diagnostic {
        let related: Vec<lt::DiagnosticRelatedInformation> = f
            .secondary
            .iter()
            .filter_map(|l| {
                Some(lt::DiagnosticRelatedInformation {
                    location: self.location(sources, l.span)?,
                    message: l.text.clone(),
                })
            })
            .collect();
        let mut message = f.message.clone();
        if let Some(h) = &f.help {
            message.push_str("\nhelp: ");
            message.push_str(h);
        }
        lt::Diagnostic {
            range: self.range_in(&doc.text, f.primary.span),
            severity: Some(match f.severity {
                Severity::Error => lt::DiagnosticSeverity::ERROR,
                Severity::Warning => lt::DiagnosticSeverity::WARNING,
                Severity::Note => lt::DiagnosticSeverity::INFORMATION,
            }),
            code: Some(lt::NumberOrString::String(f.rule.to_string())),
            source: Some("foldcheck".to_string()),
            message,
            related_information: (!related.is_empty()).then_some(related),
            data: f
                .fingerprint
                .as_ref()
                .map(|fp| json!({ "fingerprint": fp })),
            ..Default::default()
        }
    }

    fn range_in(&self, text: &str, span: Span) -> lt::Range {
        LineMap::new(text).range(text, span.start as usize, span.end as usize, self.enc)
    }

    /// The URI of a file of a run: the open document's when it is open.
    fn uri_of(&self, sources: &Sources, file: FileId) -> Option<lt::Url> {
        let sf = sources.iter().find(|s| s.id == file)?;
        let key = file_key(&sf.path);
        if let Some((u, _)) = self.docs.iter().find(|(_, d)| d.key == key) {
            return Some(u.clone());
        }
        lt::Url::from_file_path(campaign::absolute(&sf.path)).ok()
    }

    fn location(&self, sources: &Sources, span: Span) -> Option<lt::Location> {
        let sf = sources.iter().find(|s| s.id == span.file)?;
        Some(lt::Location {
            uri: self.uri_of(sources, span.file)?,
            range: self.range_in(&sf.text, span),
        })
    }

    /// Analyse now a document whose last change is still waiting.
    fn flush(&mut self, uri: &lt::Url) {
        if self.pending.remove(uri).is_some() || !self.snaps.contains_key(uri) {
            self.refresh(uri);
        }
    }

    fn request(&mut self, req: Request) -> Result<Value, Failure> {
        let params = req.params;
        // Answer about the text as it is now: analyse a document whose change is waiting.
        if let Some(uri) = params
            .pointer("/textDocument/uri")
            .and_then(Value::as_str)
            .and_then(|u| lt::Url::parse(u).ok())
        {
            self.flush(&uri);
        }
        let bad = |e: serde_json::Error| (ErrorCode::InvalidParams as i32, e.to_string());
        match req.method.as_str() {
            "textDocument/hover" => {
                let p: lt::HoverParams = serde_json::from_value(params).map_err(bad)?;
                let tp = p.text_document_position_params;
                let Some((snap, file, offset)) = self.locate(&tp) else {
                    return Ok(Value::Null);
                };
                let Some(text) = snap
                    .target_at(file, offset)
                    .and_then(|t| hover::hover(snap, t))
                else {
                    return Ok(Value::Null);
                };
                let hover = lt::Hover {
                    contents: lt::HoverContents::Markup(lt::MarkupContent {
                        kind: lt::MarkupKind::Markdown,
                        value: text,
                    }),
                    range: None,
                };
                Ok(serde_json::to_value(hover).unwrap_or(Value::Null))
            }
            "textDocument/definition" => {
                let p: lt::GotoDefinitionParams = serde_json::from_value(params).map_err(bad)?;
                let tp = p.text_document_position_params;
                let Some((snap, file, offset)) = self.locate(&tp) else {
                    return Ok(Value::Null);
                };
                let Some(o) = snap.occurrence_at(file, offset) else {
                    return Ok(Value::Null);
                };
                let loc = self.location(&snap.outcome.sources, o.def);
                Ok(serde_json::to_value(loc).unwrap_or(Value::Null))
            }
            "textDocument/references" => {
                let p: lt::ReferenceParams = serde_json::from_value(params).map_err(bad)?;
                let Some((snap, file, offset)) = self.locate(&p.text_document_position) else {
                    return Ok(Value::Null);
                };
                let Some(o) = snap.occurrence_at(file, offset) else {
                    return Ok(Value::Null);
                };
                let locs: Vec<lt::Location> = snap
                    .references(o.def)
                    .into_iter()
                    .filter(|r| p.context.include_declaration || r.at != r.def)
                    .filter_map(|r| self.location(&snap.outcome.sources, r.at))
                    .collect();
                Ok(serde_json::to_value(locs).unwrap_or(Value::Null))
            }
            "textDocument/completion" => {
                let p: lt::CompletionParams = serde_json::from_value(params).map_err(bad)?;
                Ok(self.completion(&p.text_document_position))
            }
            "textDocument/codeAction" => {
                let p: lt::CodeActionParams = serde_json::from_value(params).map_err(bad)?;
                Ok(self.code_actions(&p))
            }
            other => Err((
                ErrorCode::MethodNotFound as i32,
                format!("foldcheck does not handle `{other}`"),
            )),
        }
    }

    /// The snapshot, file and byte offset of a position in an open document.
    fn locate(&self, tp: &lt::TextDocumentPositionParams) -> Option<(&Snapshot, FileId, usize)> {
        let uri = &tp.text_document.uri;
        let doc = self.docs.get(uri)?;
        let snap = self.snaps.get(uri)?;
        let offset = LineMap::new(&doc.text).offset(&doc.text, tp.position, self.enc);
        Some((snap, snap.file?, offset))
    }

    fn completion(&self, tp: &lt::TextDocumentPositionParams) -> Value {
        let Some(doc) = self.docs.get(&tp.text_document.uri) else {
            return Value::Null;
        };
        let map = LineMap::new(&doc.text);
        let offset = map.offset(&doc.text, tp.position, self.enc);
        let line_start = doc.text[..offset].rfind('\n').map_or(0, |p| p + 1);
        let prefix = &doc.text[line_start..offset];
        let above = doc.text[..line_start].lines().rev();
        let Some((want, col)) = complete::context(prefix, above) else {
            return Value::Null;
        };
        let range = map.range(&doc.text, line_start + col, offset, self.enc);
        let (labels, kind, detail): (Vec<String>, lt::CompletionItemKind, String) = match want {
            Want::Name(k) => {
                let names = self
                    .names
                    .get(&tp.text_document.uri)
                    .and_then(|m| m.get(&k))
                    .cloned()
                    .unwrap_or_default();
                (
                    names,
                    lt::CompletionItemKind::REFERENCE,
                    k.noun().to_string(),
                )
            }
            Want::Response => (
                RESPONSES.iter().map(|s| s.to_string()).collect(),
                lt::CompletionItemKind::ENUM_MEMBER,
                "filter response".to_string(),
            ),
            Want::Unit(k) => (
                k.units().iter().map(|u| u.0.to_string()).collect(),
                lt::CompletionItemKind::UNIT,
                k.noun().to_string(),
            ),
        };
        let items: Vec<lt::CompletionItem> = labels
            .into_iter()
            .enumerate()
            .map(|(i, label)| lt::CompletionItem {
                text_edit: Some(lt::CompletionTextEdit::Edit(lt::TextEdit {
                    range,
                    new_text: label.clone(),
                })),
                label,
                kind: Some(kind),
                detail: Some(detail.clone()),
                sort_text: Some(format!("{i:04}")),
                ..Default::default()
            })
            .collect();
        serde_json::to_value(lt::CompletionResponse::Array(items)).unwrap_or(Value::Null)
    }

    fn code_actions(&mut self, p: &lt::CodeActionParams) -> Value {
        let uri = &p.text_document.uri;
        let (Some(doc), Some(snap)) = (self.docs.get(uri), self.snaps.get_mut(uri)) else {
            return json!([]);
        };
        let map = LineMap::new(&doc.text);
        let want_a = map.offset(&doc.text, p.range.start, self.enc);
        let want_b = map.offset(&doc.text, p.range.end, self.enc);
        // Fixes are verified here, for this range only (not on every change): a fix
        // that fails takes its help with it, so the diagnostics are sent again.
        if snap.verify_range(want_a, want_b) {
            let version = doc.version;
            let diagnostics = self.diagnostics(&self.snaps[uri], &self.docs[uri]);
            self.publish_raw(uri, diagnostics, Some(version));
        }
        let (Some(doc), Some(snap)) = (self.docs.get(uri), self.snaps.get(uri)) else {
            return json!([]);
        };
        let Some(file) = snap.file else {
            return json!([]);
        };
        let sources = &snap.outcome.sources;
        let mut actions = Vec::new();
        let mut seen = HashSet::new();
        for f in snap.outcome.findings.iter().filter(|f| {
            f.primary.span.file == file
                && f.suppressed.is_none()
                && (f.primary.span.start as usize) <= want_b
                && want_a <= f.primary.span.end as usize
        }) {
            let diag = self.diagnostic(sources, f, doc);
            if let Some(fix) = &f.fix {
                let mut changes: HashMap<lt::Url, Vec<lt::TextEdit>> = HashMap::new();
                for e in &fix.edits {
                    let Some(loc) = self.location(sources, e.span) else {
                        continue;
                    };
                    changes.entry(loc.uri).or_default().push(lt::TextEdit {
                        range: loc.range,
                        new_text: e.replacement.clone(),
                    });
                }
                actions.push(lt::CodeAction {
                    title: fix.description.clone(),
                    kind: Some(lt::CodeActionKind::QUICKFIX),
                    diagnostics: Some(vec![diag.clone()]),
                    edit: Some(lt::WorkspaceEdit {
                        changes: Some(changes),
                        ..Default::default()
                    }),
                    is_preferred: Some(true),
                    ..Default::default()
                });
            }
            if suppressible(f.rule) && seen.insert((f.rule, f.primary.span.start)) {
                let text = &doc.text;
                let at = f.primary.span.start as usize;
                let line_start = text.as_bytes()[..at.min(text.len())]
                    .iter()
                    .rposition(|&b| b == b'\n')
                    .map_or(0, |p| p + 1);
                let line = &text[line_start..];
                let indent = line.len() - line.trim_start_matches(' ').len();
                let new_text = format!(
                    "{}# foldcheck: allow {} -- {REASON_PLACEHOLDER}\n",
                    " ".repeat(indent),
                    f.rule
                );
                let pos = map.position(text, line_start, self.enc);
                let mut changes = HashMap::new();
                changes.insert(
                    uri.clone(),
                    vec![lt::TextEdit {
                        range: lt::Range::new(pos, pos),
                        new_text,
                    }],
                );
                actions.push(lt::CodeAction {
                    title: format!("Suppress `{}` here, with a reason", f.rule),
                    kind: Some(lt::CodeActionKind::QUICKFIX),
                    diagnostics: Some(vec![diag]),
                    edit: Some(lt::WorkspaceEdit {
                        changes: Some(changes),
                        ..Default::default()
                    }),
                    ..Default::default()
                });
            }
        }
        serde_json::to_value(actions).unwrap_or_else(|_| json!([]))
    }
}

/// Whether a suppression comment may name the rule: input rules are always errors (see
/// [`crate::finding::is_input_rule`]), and a suppression comment does not suppress a
/// `suppression` finding.
pub fn suppressible(rule: &str) -> bool {
    !crate::finding::is_input_rule(rule)
        && rule != "suppression"
        && crate::rules::rule(rule).is_some()
}

/// The file a URI names; a URI that is not a file (an unsaved buffer) gets a path in the
/// working directory named after its last segment, so that it is analysed all the same.
fn path_of(uri: &lt::Url) -> PathBuf {
    if let Ok(p) = uri.to_file_path() {
        return campaign::absolute(&p);
    }
    let name = uri
        .path_segments()
        .and_then(|mut s| s.next_back().map(str::to_string))
        .filter(|s| !s.is_empty())
        .unwrap_or_else(|| "untitled.rig.yaml".to_string());
    campaign::absolute(Path::new(&name))
}
