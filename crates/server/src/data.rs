//! The data files named by `source`, read once and kept per path.
//!
//! The checker asks for data on every keystroke, so answers must come from
//! memory: a file is read again only when its length or modification time
//! changes. A large file is read on a background thread; until it is ready the
//! checker gets a header-only view (`complete: false`) so unknown names are
//! reported at once. Files are read into memory rather than mapped, so another
//! program rewriting the file while it is read cannot bring the server down.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::SystemTime;

use check::{DataProvider, DataView};
use frame::{Column, Frame, ReadError, ReadOptions};

/// Files up to this size are read while the checker waits (a few milliseconds);
/// larger ones in the background.
pub const BACKGROUND_MIN_BYTES: u64 = 4 << 20;

/// What identifies one version of a file on disk.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct Stamp {
    len: u64,
    modified: Option<SystemTime>,
}

/// One view per frame, handed out as clones: the checker's cache of facts
/// travels in the view, so every check of the same data shares it.
#[derive(Clone, Debug)]
enum State {
    /// Being read; the header is known.
    Loading(DataView),
    Ready(DataView),
    Failed(ReadError),
}

#[derive(Clone, Debug)]
struct Entry {
    stamp: Stamp,
    options: ReadOptions,
    state: State,
}

/// Called with the path when a background read finishes, so the documents
/// that use it can be checked again with the values.
pub type OnLoaded = Arc<dyn Fn(PathBuf) + Send + Sync>;

/// The cache of frames, shared by every open document.
#[derive(Clone)]
pub struct DataCache {
    entries: Arc<Mutex<HashMap<PathBuf, Entry>>>,
    on_loaded: OnLoaded,
    background_min: u64,
}

impl DataCache {
    pub fn new(on_loaded: OnLoaded) -> Self {
        DataCache {
            entries: Arc::default(),
            on_loaded,
            background_min: BACKGROUND_MIN_BYTES,
        }
    }

    /// A cache that reads files of `bytes` and more in the background (tests
    /// use a small threshold to see the header-only stage on a small file).
    pub fn with_background_min(mut self, bytes: u64) -> Self {
        self.background_min = bytes;
        self
    }

    /// The frame of a path when its values are loaded.
    pub fn ready(&self, path: &Path) -> Option<Arc<Frame>> {
        match &self.lock().get(path)?.state {
            State::Ready(v) => Some(v.frame.clone()),
            _ => None,
        }
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, HashMap<PathBuf, Entry>> {
        // A panic elsewhere while holding the lock leaves the map usable.
        self.entries.lock().unwrap_or_else(|e| e.into_inner())
    }

    fn start_background(&self, path: PathBuf, stamp: Stamp, options: ReadOptions) {
        let me = self.clone();
        std::thread::spawn(move || {
            let state = match read_in_memory(&path, &options) {
                Ok(f) => State::Ready(DataView::new(Arc::new(f), true)),
                Err(e) => State::Failed(e),
            };
            {
                let mut map = me.lock();
                // Keep the result only if nobody started a newer read meanwhile.
                if let Some(e) = map.get_mut(&path) {
                    if e.stamp == stamp && e.options == options {
                        e.state = state;
                    }
                }
            }
            (me.on_loaded)(path);
        });
    }
}

impl DataProvider for DataCache {
    fn load(&self, path: &Path, options: &ReadOptions) -> Result<DataView, ReadError> {
        let meta = std::fs::metadata(path).map_err(|e| io_error(path, e))?;
        let stamp = Stamp {
            len: meta.len(),
            modified: meta.modified().ok(),
        };
        {
            let map = self.lock();
            if let Some(e) = map.get(path) {
                if e.stamp == stamp && &e.options == options {
                    return view(&e.state);
                }
            }
        }
        let state = if stamp.len < self.background_min {
            match read_in_memory(path, options) {
                Ok(f) => State::Ready(DataView::new(Arc::new(f), true)),
                Err(e) => State::Failed(e),
            }
        } else {
            match frame::read_header(path) {
                Ok(names) => State::Loading(DataView::new(Arc::new(header_frame(names)), false)),
                Err(e) => State::Failed(e),
            }
        };
        let background = matches!(state, State::Loading(_));
        let result = view(&state);
        self.lock().insert(
            path.to_path_buf(),
            Entry {
                stamp,
                options: options.clone(),
                state,
            },
        );
        if background {
            self.start_background(path.to_path_buf(), stamp, options.clone());
        }
        result
    }
}

fn view(state: &State) -> Result<DataView, ReadError> {
    match state {
        State::Loading(v) | State::Ready(v) => Ok(v.clone()),
        State::Failed(e) => Err(e.clone()),
    }
}

/// Read the whole file into memory, then parse: never a memory map.
pub fn read_in_memory(path: &Path, options: &ReadOptions) -> Result<Frame, ReadError> {
    let bytes = std::fs::read(path).map_err(|e| io_error(path, e))?;
    frame::read_csv_bytes(&bytes, options).map_err(|e| e.with_path(path))
}

/// Columns with names and no rows: enough for name resolution.
fn header_frame(names: Vec<String>) -> Frame {
    let cols: Vec<Column> = names
        .into_iter()
        .map(|n| Column::numeric(n, Vec::new()))
        .collect();
    Frame::try_from_columns(cols).unwrap_or_else(|_| Frame::from_columns(Vec::new()))
}

fn io_error(path: &Path, e: std::io::Error) -> ReadError {
    ReadError::Io {
        path: path.to_path_buf(),
        message: e.to_string(),
    }
}
