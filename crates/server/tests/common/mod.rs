//! An in-process client for the protocol tests: requests go straight into the
//! service (tower `ServiceExt`), and a task drains what the server sends so
//! that `publishDiagnostics` never blocks it.

#![allow(dead_code)] // each test file uses part of the helper

use std::path::{Path, PathBuf};
use std::time::Duration;

use futures::StreamExt;
use serde_json::{json, Value};
use server::{Backend, Options};
use tokio::sync::mpsc;
use tower::{Service, ServiceExt};
use tower_lsp_server::jsonrpc::Request;
use tower_lsp_server::ls_types::Uri;
use tower_lsp_server::LspService;

pub struct TestServer {
    service: LspService<Backend>,
    from_server: mpsc::UnboundedReceiver<Request>,
    next_id: i64,
    /// The answer to `initialize`.
    pub init: Value,
}

impl TestServer {
    pub async fn start(options: Options) -> TestServer {
        let (service, socket) = LspService::new(move |client| Backend::new(client, options));
        let (tx, rx) = mpsc::unbounded_channel();
        tokio::spawn(async move {
            let mut socket = socket;
            while let Some(msg) = socket.next().await {
                if tx.send(msg).is_err() {
                    break;
                }
            }
        });
        let mut s = TestServer {
            service,
            from_server: rx,
            next_id: 0,
            init: Value::Null,
        };
        s.init = s.request("initialize", json!({"capabilities": {}})).await;
        s.notify("initialized", json!({})).await;
        s
    }

    pub fn backend(&self) -> &Backend {
        self.service.inner()
    }

    /// Send a request and return its result; an error response is returned as
    /// `{"error": message}` so tests can assert on it.
    pub async fn request(&mut self, method: &'static str, params: Value) -> Value {
        self.next_id += 1;
        let req = Request::build(method)
            .id(self.next_id)
            .params(params)
            .finish();
        let resp = self
            .service
            .ready()
            .await
            .expect("service ready")
            .call(req)
            .await
            .expect("service call")
            .expect("a response to a request");
        let (_, body) = resp.into_parts();
        match body {
            Ok(v) => v,
            Err(e) => json!({"error": e.message}),
        }
    }

    pub async fn notify(&mut self, method: &'static str, params: Value) {
        let req = Request::build(method).params(params).finish();
        let resp = self
            .service
            .ready()
            .await
            .expect("service ready")
            .call(req)
            .await
            .expect("service call");
        assert!(resp.is_none(), "a notification got a response");
    }

    /// The next `publishDiagnostics` for `uri` with at least this version.
    pub async fn diagnostics(&mut self, uri: &str, min_version: i64) -> Value {
        loop {
            let msg = tokio::time::timeout(Duration::from_secs(20), self.from_server.recv())
                .await
                .expect("diagnostics within 20 s")
                .expect("server still running");
            if msg.method() != "textDocument/publishDiagnostics" {
                continue;
            }
            let p = msg.params().cloned().unwrap_or(Value::Null);
            if p["uri"] == uri && p["version"].as_i64().unwrap_or(-1) >= min_version {
                return p;
            }
        }
    }

    pub async fn open(&mut self, uri: &str, text: &str) -> Value {
        self.notify(
            "textDocument/didOpen",
            json!({"textDocument": {"uri": uri, "languageId": "slope", "version": 1, "text": text}}),
        )
        .await;
        self.diagnostics(uri, 1).await
    }

    /// One incremental change; returns the diagnostics of that version.
    pub async fn change(&mut self, uri: &str, version: i64, range: [u32; 4], text: &str) -> Value {
        self.notify(
            "textDocument/didChange",
            json!({
                "textDocument": {"uri": uri, "version": version},
                "contentChanges": [{"range": range_json(range), "text": text}]
            }),
        )
        .await;
        self.diagnostics(uri, version).await
    }

    /// The code actions the server offers for a range, with no diagnostics
    /// sent along (the server finds them itself).
    #[allow(dead_code)] // not every test file asks for code actions
    pub async fn code_actions(&mut self, uri: &str, range: [u32; 4]) -> Value {
        self.request(
            "textDocument/codeAction",
            json!({
                "textDocument": {"uri": uri},
                "range": range_json(range),
                "context": {"diagnostics": []}
            }),
        )
        .await
    }
}

pub fn range_json([l0, c0, l1, c1]: [u32; 4]) -> Value {
    json!({"start": {"line": l0, "character": c0}, "end": {"line": l1, "character": c1}})
}

pub fn pos(uri: &str, line: u32, character: u32) -> Value {
    json!({"textDocument": {"uri": uri}, "position": {"line": line, "character": character}})
}

/// A fresh folder with copies of files from the demo data (and any extra files).
pub fn workspace(name: &str, demo_files: &[&str], extra: &[(&str, &str)]) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("slopewise-lsp-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo-data");
    for f in demo_files {
        std::fs::copy(demo.join(f), dir.join(f)).unwrap();
    }
    for (f, text) in extra {
        std::fs::write(dir.join(f), text).unwrap();
    }
    dir
}

pub fn uri_of(path: &Path) -> String {
    Uri::from_file_path(path).unwrap().as_str().to_string()
}

/// Diagnostics as lines `line:col-line:col severity code: message` (0-based
/// UTF-16 positions, as sent), for snapshots.
pub fn render_diagnostics(p: &Value) -> String {
    let mut out = String::new();
    for d in p["diagnostics"].as_array().unwrap() {
        let r = &d["range"];
        let sev = match d["severity"].as_i64() {
            Some(1) => "error",
            Some(2) => "warning",
            Some(3) => "info",
            _ => "hint",
        };
        out.push_str(&format!(
            "{}:{}-{}:{} {sev} {}: {}\n",
            r["start"]["line"],
            r["start"]["character"],
            r["end"]["line"],
            r["end"]["character"],
            d["code"].as_str().unwrap_or(""),
            d["message"].as_str().unwrap_or("")
        ));
    }
    out
}

/// Completion items as `label (kind) detail` lines.
pub fn render_completion(v: &Value) -> String {
    let items = v.as_array().cloned().unwrap_or_default();
    let mut out = String::new();
    for i in items {
        out.push_str(&format!(
            "{} [{}] {}\n",
            i["label"].as_str().unwrap_or(""),
            i["kind"],
            i["detail"].as_str().unwrap_or("")
        ));
    }
    out
}

pub fn fast_options() -> Options {
    Options {
        poll_interval: Duration::from_millis(50),
        ..Options::default()
    }
}
