//! `slopewise bench load`: how fast a large CSV file becomes a frame, and how
//! that compares with the pandas C reader on the same file when Python and
//! pandas are at hand.

use frame::bench_support::{generate_bench_csv, time_read_csv};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The timing script, compiled in so the benchmark runs from any directory.
const PANDAS_SCRIPT: &str = include_str!("../../../../tests/bench/pandas_load.py");

const REPEATS: usize = 3;

/// Generate a `rows`-row, 8-column CSV in the temp directory, time
/// `frame::read_csv` on it (best of 3), then pandas when it is installed.
/// Returns the report; the file is removed afterwards unless `keep`.
pub fn run_load(rows: usize, keep: bool) -> Result<String, String> {
    let dir = std::env::temp_dir().join("slopewise-bench");
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let csv = dir.join(format!("load-{rows}.csv"));
    let result = measure(&dir, &csv, rows);
    if !keep {
        let _ = std::fs::remove_file(&csv);
    }
    let mut report = result?;
    if keep {
        let _ = writeln!(report, "file kept: {}", csv.display());
    }
    Ok(report)
}

fn measure(dir: &Path, csv: &Path, rows: usize) -> Result<String, String> {
    let size = generate_bench_csv(csv, rows).map_err(|e| format!("{}: {e}", csv.display()))?;
    let mb = size as f64 / 1e6;
    let (secs, n_rows, n_cols) = time_read_csv(csv, REPEATS)?;
    if n_rows != rows {
        return Err(format!("read {n_rows} rows where the file has {rows}"));
    }
    let ours = mb / secs;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "file: {rows} rows x {n_cols} columns, {mb:.1} MB ({})",
        csv.display()
    );
    let _ = writeln!(
        out,
        "slopewise read_csv: {secs:.3} s, {ours:.1} MB/s (best of {REPEATS}, {} threads)",
        rayon_threads()
    );
    match pandas(dir, csv) {
        Ok(Some((theirs, their_secs))) => {
            let _ = writeln!(
                out,
                "pandas read_csv (C engine): {their_secs:.3} s, {theirs:.1} MB/s (best of {REPEATS})"
            );
            let _ = writeln!(out, "ratio slopewise / pandas: {:.2}", ours / theirs);
        }
        Ok(None) => {
            let _ = writeln!(
                out,
                "pandas is not installed for python3: comparison skipped"
            );
        }
        Err(e) => {
            let _ = writeln!(out, "pandas comparison failed: {e}");
        }
    }
    Ok(out)
}

fn rayon_threads() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}

/// MB/s and seconds of pandas, `None` when python3 or pandas is missing.
fn pandas(dir: &Path, csv: &Path) -> Result<Option<(f64, f64)>, String> {
    let available = Command::new("python3")
        .args(["-c", "import pandas"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    if !available {
        return Ok(None);
    }
    let script: PathBuf = dir.join("pandas_load.py");
    std::fs::write(&script, PANDAS_SCRIPT).map_err(|e| format!("{}: {e}", script.display()))?;
    let out = Command::new("python3")
        .arg(&script)
        .arg(csv)
        .arg(REPEATS.to_string())
        .output()
        .map_err(|e| e.to_string())?;
    if !out.status.success() {
        return Err(String::from_utf8_lossy(&out.stderr).trim().to_string());
    }
    let text = String::from_utf8_lossy(&out.stdout);
    let words: Vec<&str> = text.split_whitespace().collect();
    let field = |key: &str| {
        words
            .iter()
            .position(|w| *w == key)
            .and_then(|i| words.get(i + 1))
            .and_then(|v| v.parse::<f64>().ok())
    };
    match (field("pandas_mb_per_s"), field("seconds")) {
        (Some(rate), Some(secs)) => Ok(Some((rate, secs))),
        _ => Err(format!(
            "unexpected output from the pandas script: {}",
            text.trim()
        )),
    }
}
