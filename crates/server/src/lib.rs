//! The slopewise language server.
//!
//! A thin protocol layer over the same checker as `slopewise check`: the
//! [`backend`] implements the protocol trait and delegates to one module per
//! feature, which work in editor terms (byte spans, plain strings); protocol
//! types are made in [`convert`] and in the backend only. Data files are read
//! once into a per-path cache ([`data`]) and reloaded when they change on disk.

pub mod analysis;
pub mod backend;
pub mod completion;
pub mod convert;
pub mod data;
pub mod document;
pub mod hover;
pub mod incremental;
pub mod index;
pub mod memory;
pub mod navigate;
pub mod scan;
pub mod tokens;

pub use backend::{Backend, Options};

use tower_lsp_server::{LspService, Server};

/// Serve the protocol on standard input and output until the client exits.
pub fn run_stdio() -> Result<(), String> {
    memory::configure();
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .enable_all()
        .build()
        .map_err(|e| format!("cannot start the language server: {e}"))?;
    runtime.block_on(async {
        let (stdin, stdout) = (tokio::io::stdin(), tokio::io::stdout());
        let (service, socket) = LspService::new(|client| Backend::new(client, Options::default()));
        Server::new(stdin, stdout, socket).serve(service).await;
    });
    Ok(())
}
