//! Checking and fitting the first model of a file against a table the test
//! writes itself (invented data, built in the test from formulas).

use std::sync::atomic::{AtomicUsize, Ordering};

use check::{check, Checked, FileLoader};
use engine::{fit, FitOptions, ModelFit};

static COUNTER: AtomicUsize = AtomicUsize::new(0);

/// Write `csv` as `file` in a fresh temporary folder, check `text` (which names
/// `file` in its `source`) there, and fit its first model.
pub fn fit_written(file: &str, csv: &str, text: &str) -> (Checked, ModelFit) {
    let dir = std::env::temp_dir().join(format!(
        "slopewise-written-{}-{}",
        std::process::id(),
        COUNTER.fetch_add(1, Ordering::SeqCst)
    ));
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join(file), csv).unwrap();
    let parsed = syntax::parse(text);
    let c = check(text, &parsed, &dir, &FileLoader);
    let _ = std::fs::remove_dir_all(&dir);
    assert!(!c.has_errors(), "{:?}", c.diagnostics);
    let frame = &c.data.as_ref().unwrap().frame;
    let f = fit(&c.models[0], frame, None, &FitOptions::default()).unwrap();
    (c, f)
}
