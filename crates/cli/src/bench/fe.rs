//! `slopewise bench fe`: a large unbalanced panel fitted with two and three
//! fixed groupings and one- and two-way clustered errors, timed stage by stage,
//! beside a straightforward numpy/pandas pipeline on the same file.

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::Arc;
use std::time::Instant;

use check::{DataProvider, DataView};
use frame::bench_support::Rng;
use frame::{ReadError, ReadOptions};

const NUMPY_SCRIPT: &str = include_str!("../../../../tests/bench/fe_numpy.py");

/// Hands the checker a frame loaded beforehand, so loading is timed on its own.
struct Loaded(Arc<frame::Frame>);

impl DataProvider for Loaded {
    fn load(&self, _: &Path, _: &ReadOptions) -> Result<DataView, ReadError> {
        Ok(DataView::new(self.0.clone(), true))
    }
}

/// Write the panel: `units` units over `periods` periods with about 4% of the
/// unit-periods missing; five regressors correlated with the unit effect; a
/// region that changes over time for a fifth of the units.
fn generate(path: &Path, units: usize, periods: usize) -> std::io::Result<(usize, u64)> {
    let file = std::fs::File::create(path)?;
    let mut w = std::io::BufWriter::with_capacity(1 << 20, file);
    writeln!(w, "unit,period,region,x1,x2,x3,x4,x5,y")?;
    let mut rng = Rng(0x5EED_2026);
    let beta = [0.5, -0.3, 0.2, 0.1, -0.4];
    let period_effect: Vec<f64> = (0..periods)
        .map(|t| 0.05 * t as f64 + 0.3 * rng.normal())
        .collect();
    let mut rows = 0;
    for u in 0..units {
        let a = rng.normal();
        let mover = u % 5 == 0;
        for (t, gt) in period_effect.iter().enumerate() {
            if rng.uniform() < 0.04 {
                continue;
            }
            let region = if mover { (u + t / 8) % 50 } else { u % 50 };
            let mut x = [0.0; 5];
            for xk in x.iter_mut() {
                *xk = 0.5 * a + rng.normal();
            }
            let y: f64 =
                x.iter().zip(&beta).map(|(a, b)| a * b).sum::<f64>() + a + gt + rng.normal();
            writeln!(
                w,
                "u{u},{t},r{region},{:.4},{:.4},{:.4},{:.4},{:.4},{y:.4}",
                x[0], x[1], x[2], x[3], x[4]
            )?;
            rows += 1;
        }
    }
    w.flush()?;
    Ok((rows, std::fs::metadata(path)?.len()))
}

struct Setup {
    label: &'static str,
    fixed: &'static str,
    cluster: &'static str,
}

const SETUPS: [Setup; 3] = [
    Setup {
        label: "fixed unit, period; cluster unit",
        fixed: "unit, period",
        cluster: "unit",
    },
    Setup {
        label: "fixed unit, period; cluster unit, period",
        fixed: "unit, period",
        cluster: "unit, period",
    },
    Setup {
        label: "fixed unit, period, region; cluster unit",
        fixed: "unit, period, region",
        cluster: "unit",
    },
];

pub fn run_fe(units: usize, periods: usize, keep: bool, baseline: bool) -> Result<String, String> {
    let dir = std::env::temp_dir().join("slopewise-bench");
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let csv = dir.join(format!("fe-{units}x{periods}.csv"));
    let result = measure(&dir, &csv, units, periods, baseline);
    if !keep {
        let _ = std::fs::remove_file(&csv);
    }
    result
}

/// Collects the report and prints each line as soon as it is known, since the
/// baseline can take minutes.
struct Report(String);

impl std::fmt::Write for Report {
    fn write_str(&mut self, s: &str) -> std::fmt::Result {
        print!("{s}");
        let _ = std::io::stdout().flush();
        self.0.push_str(s);
        Ok(())
    }
}

fn measure(
    dir: &Path,
    csv: &Path,
    units: usize,
    periods: usize,
    baseline: bool,
) -> Result<String, String> {
    let mut out = Report(String::new());
    let (rows, bytes) =
        generate(csv, units, periods).map_err(|e| format!("{}: {e}", csv.display()))?;
    let _ = writeln!(
        out,
        "panel: {rows} rows ({units} units x up to {periods} periods, unbalanced), 5 regressors, {:.1} MB CSV",
        bytes as f64 / 1e6
    );
    let warm_mb = (bytes as usize * 4) >> 20;
    let warm_secs = warm_up_memory(warm_mb);
    let _ = writeln!(
        out,
        "memory warm-up: {warm_mb} MB touched once in {warm_secs:.2} s (on a virtual machine the host backs memory on first touch, which would otherwise be timed as the program's)"
    );
    let t = Instant::now();
    let frame = Arc::new(frame::read_csv(csv, &ReadOptions::default()).map_err(|e| e.to_string())?);
    let load = t.elapsed().as_secs_f64();
    // Numeric data: the 8 numeric columns (6 regressor/outcome + period) plus the codes of the 2 id columns.
    let numeric_mb = (rows * (7 * 8 + 2 * 4)) as f64 / 1e6;
    let _ = writeln!(out, "load: {load:.3} s");
    for s in &SETUPS {
        let text = format!(
            "source \"{}\"\nmodel m {{\n  y = x1 + x2 + x3 + x4 + x5\n  fixed {}\n  errors cluster {}\n}}\n",
            csv.file_name().and_then(|n| n.to_str()).unwrap_or("fe.csv"),
            s.fixed,
            s.cluster
        );
        reset_peak_memory();
        let base_rss = peak_rss_mb();
        let t = Instant::now();
        let parsed = syntax::parse(&text);
        let checked = check::check(&text, &parsed, dir, &Loaded(frame.clone()));
        let check_secs = t.elapsed().as_secs_f64();
        if checked.has_errors() {
            return Err(format!("{:?}", checked.diagnostics));
        }
        let t = Instant::now();
        let fit = engine::fit(
            &checked.models[0],
            &frame,
            None,
            &engine::FitOptions::default(),
        )
        .map_err(|e| e.to_string())?;
        let fit_secs = t.elapsed().as_secs_f64();
        let peak = peak_rss_mb();
        let _ = writeln!(
            out,
            "{}: check {check_secs:.3} s, fit {fit_secs:.3} s ({} sweeps), peak memory {:.0} MB above the loaded frame ({:.1}x the {numeric_mb:.0} MB of numeric data)",
            s.label,
            fit.stats.iterations,
            (peak - base_rss).max(0.0),
            (peak - base_rss).max(0.0) / numeric_mb
        );
        let stages: Vec<String> = fit
            .timings
            .iter()
            .map(|(name, secs)| format!("{name} {secs:.3} s"))
            .collect();
        let _ = writeln!(out, "  stages: {}", stages.join(", "));
        let coef: Vec<String> = fit
            .coefficients
            .iter()
            .map(|c| format!("{:.4}", c.estimate))
            .collect();
        let _ = writeln!(
            out,
            "  coefficients {} (true 0.5 -0.3 0.2 0.1 -0.4)",
            coef.join(" ")
        );
        if !baseline {
            continue;
        }
        match numpy(dir, csv, s) {
            Ok(Some((secs, iterations))) => {
                let _ = writeln!(
                    out,
                    "  numpy/pandas pipeline: fit {secs:.3} s ({iterations} sweeps); ratio {:.1}x",
                    secs / fit_secs
                );
            }
            Ok(None) => {
                let _ = writeln!(
                    out,
                    "  numpy/pandas pipeline: skipped (python3 with numpy and pandas not found)"
                );
            }
            Err(e) => {
                let _ = writeln!(out, "  numpy/pandas pipeline failed: {e}");
            }
        }
    }
    Ok(out.0)
}

/// Touch `mb` megabytes once and free them. A fresh virtual machine backs
/// guest memory lazily: the first write to a page costs many times a later
/// one (measured here: about 7 s per GB cold against 0.4 s warm). Without
/// this, whichever stage first needs new memory pays for the host, and the
/// figures would not describe the program. The time is printed.
fn warm_up_memory(mb: usize) -> f64 {
    let t = Instant::now();
    let mut buf: Vec<u8> = Vec::with_capacity(mb << 20);
    // One write per page is what backs it.
    buf.resize(mb << 20, 1);
    let mut sum = 0u64;
    for page in buf.chunks(4096) {
        sum = sum.wrapping_add(page[0] as u64);
    }
    std::hint::black_box(sum);
    drop(buf);
    t.elapsed().as_secs_f64()
}

/// Run the baseline script; `None` when Python or its libraries are missing.
fn numpy(dir: &Path, csv: &Path, s: &Setup) -> Result<Option<(f64, u64)>, String> {
    let probe = Command::new("python3")
        .args(["-c", "import numpy, pandas"])
        .output();
    if !matches!(probe, Ok(o) if o.status.success()) {
        return Ok(None);
    }
    let script: PathBuf = dir.join("fe_numpy.py");
    std::fs::write(&script, NUMPY_SCRIPT).map_err(|e| e.to_string())?;
    let out = Command::new("python3")
        .arg(&script)
        .arg(csv)
        .args(["--outcome", "y", "--x", "x1,x2,x3,x4,x5"])
        .args(["--fixed", &s.fixed.replace(' ', "")])
        .args(["--cluster", &s.cluster.replace(' ', "")])
        .args(["--tol", "1e-8"])
        .output()
        .map_err(|e| e.to_string())?;
    if !out.status.success() {
        return Err(String::from_utf8_lossy(&out.stderr).into_owned());
    }
    let stdout = String::from_utf8_lossy(&out.stdout);
    let line = stdout.lines().last().unwrap_or("");
    let v: serde_json::Value = serde_json::from_str(line).map_err(|e| format!("{e}: {line}"))?;
    Ok(Some((
        v["fit_seconds"].as_f64().unwrap_or(f64::NAN),
        v["iterations"].as_u64().unwrap_or(0),
    )))
}

/// Peak resident memory of this process in MB (Linux; 0 elsewhere).
fn peak_rss_mb() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines().find(|l| l.starts_with("VmHWM:")).and_then(|l| {
                l.split_whitespace()
                    .nth(1)
                    .and_then(|k| k.parse::<f64>().ok())
            })
        })
        .map_or(0.0, |kb| kb / 1024.0)
}

/// Reset the peak so each setup is measured on its own (Linux: writing 5 to clear_refs).
fn reset_peak_memory() {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
}
