//! The protocol trait: keeps the open documents, runs the checker off the
//! typing path, and hands each request to its feature module.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, SystemTime};

use tokio::sync::Notify;
use tower_lsp_server::jsonrpc::{Error, Result};
use tower_lsp_server::ls_types::*;
use tower_lsp_server::{Client, LanguageServer};

use crate::analysis::{analyze, symbols, Analysis};
use crate::completion::{complete, Sources};
use crate::convert;
use crate::data::DataCache;
use crate::document::{Change, Document};
use crate::navigate::{self, OutlineKind};

/// Settings of a server instance (tests set them; the binary uses the defaults).
#[derive(Clone, Debug)]
pub struct Options {
    /// Data files of this size and more are read in the background.
    pub background_min_bytes: u64,
    /// How often data files of open documents are looked at for changes on disk.
    pub poll_interval: Duration,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            background_min_bytes: crate::data::BACKGROUND_MIN_BYTES,
            poll_interval: Duration::from_millis(1000),
        }
    }
}

type Stamp = (u64, Option<SystemTime>);

struct DocState {
    doc: Document,
    base_dir: PathBuf,
    last: Option<Arc<Analysis>>,
    /// Wakes the document's checking task; a wake-up while it runs is kept
    /// (one permit), so a burst of keystrokes costs one more check, not one each.
    notify: Arc<Notify>,
    closed: Arc<AtomicBool>,
    /// The data file the last check read, and its length and time then.
    data: Option<(PathBuf, Option<Stamp>)>,
}

type Docs = Arc<Mutex<HashMap<Uri, DocState>>>;

/// A document, its last analysis, its tree and the names in it.
struct Indexed {
    doc: Document,
    last: Option<Arc<Analysis>>,
    parsed: syntax::Parsed,
    index: crate::index::SymbolIndex,
}

pub struct Backend {
    client: Client,
    docs: Docs,
    cache: DataCache,
    options: Options,
    polling: AtomicBool,
}

fn lock(docs: &Docs) -> std::sync::MutexGuard<'_, HashMap<Uri, DocState>> {
    docs.lock().unwrap_or_else(|e| e.into_inner())
}

fn stamp(path: &Path) -> Option<Stamp> {
    let m = std::fs::metadata(path).ok()?;
    Some((m.len(), m.modified().ok()))
}

impl Backend {
    pub fn new(client: Client, options: Options) -> Self {
        let docs: Docs = Arc::default();
        let for_loaded = docs.clone();
        let cache = DataCache::new(Arc::new(move |path: PathBuf| {
            for d in lock(&for_loaded).values() {
                // A document not yet checked may be the one waiting for it.
                if d.data.as_ref().is_none_or(|(p, _)| *p == path) {
                    d.notify.notify_one();
                }
            }
        }))
        .with_background_min(options.background_min_bytes);
        Backend {
            client,
            docs,
            cache,
            options,
            polling: AtomicBool::new(false),
        }
    }

    /// The server's copy of a document's text (tests compare it with the editor's).
    pub fn document_text(&self, uri: &Uri) -> Option<String> {
        lock(&self.docs).get(uri).map(|d| d.doc.text.clone())
    }

    /// The document's text, index and last analysis, copied out of the lock.
    fn snapshot(&self, uri: &Uri) -> Option<(Document, Option<Arc<Analysis>>, PathBuf)> {
        let docs = lock(&self.docs);
        let d = docs.get(uri)?;
        Some((d.doc.clone(), d.last.clone(), d.base_dir.clone()))
    }

    /// The document with its tree and the index of names in it: what every
    /// navigation request starts from.
    fn indexed(&self, uri: &Uri) -> Option<Indexed> {
        let (doc, last, _) = self.snapshot(uri)?;
        let parsed = syntax::parse(&doc.text);
        let index = symbols(&parsed, last.as_deref());
        Some(Indexed {
            doc,
            last,
            parsed,
            index,
        })
    }

    fn spawn_worker(&self, uri: Uri, notify: Arc<Notify>, closed: Arc<AtomicBool>) {
        let client = self.client.clone();
        let docs = self.docs.clone();
        let cache = self.cache.clone();
        tokio::spawn(async move {
            let mut units = Some(crate::incremental::UnitCache::default());
            loop {
                notify.notified().await;
                if closed.load(Ordering::Acquire) {
                    break;
                }
                let Some((text, version, base)) = lock(&docs).get(&uri).map(|d| {
                    (
                        Arc::<str>::from(d.doc.text.as_str()),
                        d.doc.version,
                        d.base_dir.clone(),
                    )
                }) else {
                    break;
                };
                let for_check = cache.clone();
                let mut mine = units.take().unwrap_or_default();
                let run = tokio::task::spawn_blocking(move || {
                    let a = analyze(text, version, &base, &for_check, &mut mine);
                    (a, mine)
                })
                .await;
                let a = match run {
                    Ok((a, u)) => {
                        units = Some(u);
                        Arc::new(a)
                    }
                    Err(e) => {
                        let msg = format!("slopewise: checking the file failed: {e}");
                        client.log_message(MessageType::ERROR, msg).await;
                        continue;
                    }
                };
                let diags: Vec<Diagnostic> = a
                    .diagnostics
                    .iter()
                    .map(|d| convert::diagnostic(&a.text, &a.index, d))
                    .collect();
                {
                    let mut map = lock(&docs);
                    let Some(d) = map.get_mut(&uri) else { break };
                    d.data = a.checked.data_path.clone().map(|p| {
                        let s = stamp(&p);
                        (p, s)
                    });
                    d.last = Some(a.clone());
                    // The read may have finished between the check and now.
                    let waiting = a.checked.data.as_ref().is_some_and(|v| !v.complete);
                    if waiting
                        && a.checked
                            .data_path
                            .as_deref()
                            .is_some_and(|p| cache.ready(p).is_some())
                    {
                        d.notify.notify_one();
                    }
                }
                crate::memory::after_check();
                client
                    .publish_diagnostics(uri.clone(), diags, Some(version))
                    .await;
            }
        });
    }

    /// Look at the data files of open documents now and then: a file changed
    /// by another program is read again and the documents re-checked. The
    /// same tick returns freed memory once checking has gone quiet.
    fn start_polling(&self) {
        if self.polling.swap(true, Ordering::AcqRel) {
            return;
        }
        let docs = self.docs.clone();
        let every = self.options.poll_interval;
        tokio::spawn(async move {
            loop {
                tokio::time::sleep(every).await;
                crate::memory::release_when_idle();
                let map = lock(&docs);
                for d in map.values() {
                    if let Some((p, s)) = &d.data {
                        if stamp(p) != *s {
                            d.notify.notify_one();
                        }
                    }
                }
            }
        });
    }
}

fn base_dir_of(uri: &Uri) -> PathBuf {
    uri.to_file_path()
        .and_then(|p| p.parent().map(Path::to_path_buf))
        .filter(|p| !p.as_os_str().is_empty())
        .or_else(|| std::env::current_dir().ok())
        .unwrap_or_else(|| PathBuf::from("."))
}

fn legend() -> SemanticTokensLegend {
    SemanticTokensLegend {
        token_types: crate::tokens::TYPES
            .iter()
            .map(|t| SemanticTokenType::new(t))
            .collect(),
        token_modifiers: crate::tokens::MODIFIERS
            .iter()
            .map(|m| SemanticTokenModifier::new(m))
            .collect(),
    }
}

pub fn capabilities() -> ServerCapabilities {
    ServerCapabilities {
        position_encoding: Some(PositionEncodingKind::UTF16),
        text_document_sync: Some(TextDocumentSyncCapability::Options(
            TextDocumentSyncOptions {
                open_close: Some(true),
                change: Some(TextDocumentSyncKind::INCREMENTAL),
                ..Default::default()
            },
        )),
        completion_provider: Some(CompletionOptions {
            trigger_characters: Some(vec![":".into(), ",".into(), "\"".into(), "(".into()]),
            ..Default::default()
        }),
        hover_provider: Some(HoverProviderCapability::Simple(true)),
        definition_provider: Some(OneOf::Left(true)),
        references_provider: Some(OneOf::Left(true)),
        rename_provider: Some(OneOf::Right(RenameOptions {
            prepare_provider: Some(true),
            work_done_progress_options: Default::default(),
        })),
        document_symbol_provider: Some(OneOf::Left(true)),
        document_formatting_provider: Some(OneOf::Left(true)),
        code_action_provider: Some(CodeActionProviderCapability::Options(CodeActionOptions {
            code_action_kinds: Some(vec![CodeActionKind::QUICKFIX]),
            ..Default::default()
        })),
        semantic_tokens_provider: Some(SemanticTokensServerCapabilities::SemanticTokensOptions(
            SemanticTokensOptions {
                legend: legend(),
                full: Some(SemanticTokensFullOptions::Bool(true)),
                range: None,
                work_done_progress_options: Default::default(),
            },
        )),
        ..Default::default()
    }
}

fn to_range(doc: &Document, span: syntax::Span) -> Range {
    convert::range(&doc.text, &doc.index, span)
}

impl LanguageServer for Backend {
    async fn initialize(&self, _: InitializeParams) -> Result<InitializeResult> {
        Ok(InitializeResult {
            capabilities: capabilities(),
            server_info: Some(ServerInfo {
                name: "slopewise".into(),
                version: Some(env!("CARGO_PKG_VERSION").into()),
            }),
            offset_encoding: None,
        })
    }

    async fn initialized(&self, _: InitializedParams) {
        self.start_polling();
    }

    async fn shutdown(&self) -> Result<()> {
        for d in lock(&self.docs).values() {
            d.closed.store(true, Ordering::Release);
            d.notify.notify_one();
        }
        Ok(())
    }

    async fn did_open(&self, params: DidOpenTextDocumentParams) {
        let td = params.text_document;
        let notify = Arc::new(Notify::new());
        let closed = Arc::new(AtomicBool::new(false));
        let state = DocState {
            doc: Document::new(td.version, td.text),
            base_dir: base_dir_of(&td.uri),
            last: None,
            notify: notify.clone(),
            closed: closed.clone(),
            data: None,
        };
        if let Some(old) = lock(&self.docs).insert(td.uri.clone(), state) {
            old.closed.store(true, Ordering::Release);
            old.notify.notify_one();
        }
        self.spawn_worker(td.uri, notify.clone(), closed);
        notify.notify_one();
    }

    async fn did_change(&self, params: DidChangeTextDocumentParams) {
        let changes: Vec<Change> = params
            .content_changes
            .into_iter()
            .map(|c| Change {
                range: c
                    .range
                    .map(|r| (convert::line_col(r.start), convert::line_col(r.end))),
                text: c.text,
            })
            .collect();
        let mut docs = lock(&self.docs);
        if let Some(d) = docs.get_mut(&params.text_document.uri) {
            d.doc.apply(params.text_document.version, &changes);
            d.notify.notify_one();
        }
    }

    async fn did_save(&self, params: DidSaveTextDocumentParams) {
        if let Some(d) = lock(&self.docs).get(&params.text_document.uri) {
            d.notify.notify_one();
        }
    }

    async fn did_close(&self, params: DidCloseTextDocumentParams) {
        let uri = params.text_document.uri;
        if let Some(d) = lock(&self.docs).remove(&uri) {
            d.closed.store(true, Ordering::Release);
            d.notify.notify_one();
        }
        self.client.publish_diagnostics(uri, Vec::new(), None).await;
    }

    async fn completion(&self, params: CompletionParams) -> Result<Option<CompletionResponse>> {
        let pos = params.text_document_position;
        let Some((doc, last, base)) = self.snapshot(&pos.text_document.uri) else {
            return Ok(None);
        };
        let offset = doc.offset(convert::line_col(pos.position));
        let parsed = syntax::parse(&doc.text);
        let src = Sources {
            parsed: &parsed,
            last: last.as_deref(),
            base_dir: &base,
        };
        let items = complete(&doc.text, offset, &src);
        Ok(Some(CompletionResponse::Array(items)))
    }

    async fn hover(&self, params: HoverParams) -> Result<Option<Hover>> {
        let pos = params.text_document_position_params;
        let Some(Indexed {
            doc,
            last,
            parsed,
            index,
        }) = self.indexed(&pos.text_document.uri)
        else {
            return Ok(None);
        };
        let offset = doc.offset(convert::line_col(pos.position));
        let Some(occ) = index.at(offset) else {
            return Ok(None);
        };
        // Column summaries read whole columns: off the protocol thread.
        let occ = occ.clone();
        let text = doc.text.clone();
        let last2 = last.clone();
        let md = tokio::task::spawn_blocking(move || {
            crate::hover::hover(&occ, &parsed, &text, last2.as_deref())
        })
        .await
        .map_err(|_| Error::internal_error())?;
        let Some(md) = md else { return Ok(None) };
        let occ = index.at(offset).expect("found above");
        Ok(Some(Hover {
            contents: HoverContents::Markup(MarkupContent {
                kind: MarkupKind::Markdown,
                value: md,
            }),
            range: Some(to_range(&doc, occ.span)),
        }))
    }

    async fn goto_definition(
        &self,
        params: GotoDefinitionParams,
    ) -> Result<Option<GotoDefinitionResponse>> {
        let pos = params.text_document_position_params;
        let uri = pos.text_document.uri;
        let Some(Indexed { doc, index, .. }) = self.indexed(&uri) else {
            return Ok(None);
        };
        let offset = doc.offset(convert::line_col(pos.position));
        Ok(navigate::definition(&index, offset).map(|span| {
            GotoDefinitionResponse::Scalar(Location::new(uri.clone(), to_range(&doc, span)))
        }))
    }

    async fn references(&self, params: ReferenceParams) -> Result<Option<Vec<Location>>> {
        let pos = params.text_document_position;
        let uri = pos.text_document.uri;
        let Some(Indexed { doc, index, .. }) = self.indexed(&uri) else {
            return Ok(None);
        };
        let offset = doc.offset(convert::line_col(pos.position));
        let spans = navigate::references(&index, offset, params.context.include_declaration);
        Ok(Some(
            spans
                .into_iter()
                .map(|s| Location::new(uri.clone(), to_range(&doc, s)))
                .collect(),
        ))
    }

    async fn prepare_rename(
        &self,
        params: TextDocumentPositionParams,
    ) -> Result<Option<PrepareRenameResponse>> {
        let Some(Indexed { doc, index, .. }) = self.indexed(&params.text_document.uri) else {
            return Ok(None);
        };
        let offset = doc.offset(convert::line_col(params.position));
        match navigate::prepare_rename(&index, offset) {
            Ok(span) => Ok(Some(PrepareRenameResponse::Range(to_range(&doc, span)))),
            Err(msg) => Err(Error::invalid_params(msg)),
        }
    }

    async fn rename(&self, params: RenameParams) -> Result<Option<WorkspaceEdit>> {
        let pos = params.text_document_position;
        let uri = pos.text_document.uri;
        let Some(Indexed {
            doc, last, index, ..
        }) = self.indexed(&uri)
        else {
            return Ok(None);
        };
        let offset = doc.offset(convert::line_col(pos.position));
        let columns = last
            .as_deref()
            .map(|a| a.column_names())
            .unwrap_or_default();
        let edits = navigate::rename(&index, offset, &params.new_name, &columns)
            .map_err(Error::invalid_params)?;
        let edits = edits
            .into_iter()
            .map(|(s, t)| TextEdit::new(to_range(&doc, s), t))
            .collect();
        Ok(Some(WorkspaceEdit {
            changes: Some(HashMap::from([(uri, edits)])),
            ..Default::default()
        }))
    }

    async fn document_symbol(
        &self,
        params: DocumentSymbolParams,
    ) -> Result<Option<DocumentSymbolResponse>> {
        let Some((doc, _, _)) = self.snapshot(&params.text_document.uri) else {
            return Ok(None);
        };
        let parsed = syntax::parse(&doc.text);
        #[allow(deprecated)] // `deprecated` is a required field of the struct
        let out = navigate::symbols(&parsed, &doc.text)
            .into_iter()
            .map(|s| DocumentSymbol {
                name: s.name,
                detail: Some(s.detail),
                kind: match s.kind {
                    OutlineKind::Data => SymbolKind::FILE,
                    OutlineKind::Let => SymbolKind::VARIABLE,
                    OutlineKind::Model => SymbolKind::CLASS,
                    OutlineKind::Request => SymbolKind::EVENT,
                },
                tags: None,
                deprecated: None,
                range: to_range(&doc, s.span),
                selection_range: to_range(&doc, s.name_span),
                children: None,
            })
            .collect();
        Ok(Some(DocumentSymbolResponse::Nested(out)))
    }

    async fn formatting(&self, params: DocumentFormattingParams) -> Result<Option<Vec<TextEdit>>> {
        let Some((doc, _, _)) = self.snapshot(&params.text_document.uri) else {
            return Ok(None);
        };
        // The formatter of `slopewise fmt`; a file with syntax errors is left alone.
        let Some(formatted) = syntax::format(&doc.text) else {
            return Ok(None);
        };
        if formatted == doc.text {
            return Ok(Some(Vec::new()));
        }
        let whole = syntax::Span::new(0, doc.text.len());
        Ok(Some(vec![TextEdit::new(to_range(&doc, whole), formatted)]))
    }

    async fn semantic_tokens_full(
        &self,
        params: SemanticTokensParams,
    ) -> Result<Option<SemanticTokensResult>> {
        let Some(Indexed { doc, index, .. }) = self.indexed(&params.text_document.uri) else {
            return Ok(None);
        };
        let mut data = Vec::new();
        let (mut line, mut col) = (0u32, 0u32);
        for t in crate::tokens::tokens(&doc.text, &index) {
            let start = doc.position(t.span.start);
            let end = doc.position(t.span.end);
            if end.line != start.line {
                continue;
            }
            let (l, c) = (start.line as u32, start.col as u32);
            let delta_start = if l == line { c - col } else { c };
            data.push(SemanticToken {
                delta_line: l - line,
                delta_start,
                length: (end.col - start.col) as u32,
                token_type: t.ty,
                token_modifiers_bitset: t.modifiers,
            });
            line = l;
            col = c;
        }
        Ok(Some(SemanticTokensResult::Tokens(SemanticTokens {
            result_id: None,
            data,
        })))
    }

    async fn code_action(&self, params: CodeActionParams) -> Result<Option<CodeActionResponse>> {
        let uri = params.text_document.uri;
        let Some((doc, last, _)) = self.snapshot(&uri) else {
            return Ok(None);
        };
        // Fixes carry byte spans of the text they were found in: only offer
        // them while that is still the editor's text.
        let Some(a) = last.filter(|a| a.version == doc.version && *a.text == *doc.text) else {
            return Ok(Some(Vec::new()));
        };
        let lo = doc.offset(convert::line_col(params.range.start));
        let hi = doc.offset(convert::line_col(params.range.end));
        let mut out = Vec::new();
        for d in &a.diagnostics {
            let Some(fix) = &d.fix else { continue };
            if d.span.end < lo || d.span.start > hi {
                continue;
            }
            let edits = fix
                .edits
                .iter()
                .map(|e| convert::text_edit(&a.text, &a.index, e.span, &e.text))
                .collect();
            out.push(CodeActionOrCommand::CodeAction(CodeAction {
                title: fix.title.clone(),
                kind: Some(CodeActionKind::QUICKFIX),
                diagnostics: Some(vec![convert::diagnostic(&a.text, &a.index, d)]),
                edit: Some(WorkspaceEdit {
                    changes: Some(HashMap::from([(uri.clone(), edits)])),
                    ..Default::default()
                }),
                is_preferred: Some(true),
                ..Default::default()
            }));
        }
        Ok(Some(out))
    }
}
