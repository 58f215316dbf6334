//! `slopewise fit FILE`: check, estimate every model, run the comparisons and
//! the probing statements, write the figures, report.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use check::{FileLoader, RequestKind, Severity};
use engine::probe::{Output, ProbeOptions};
use engine::{FitOptions, ModelFit};
use report::{DiagnosticLine, Results};
use syntax::LineIndex;

use crate::check_cmd::{model_base_dir, read_model_file};
use crate::render::{diagnostic_text, tally, use_colour};
use crate::ReportFormat;

pub fn run(file: &Path, format: ReportFormat, out: Option<&Path>) -> Result<bool, String> {
    let text = read_model_file(file)?;
    let parsed = syntax::parse(&text);
    let base = model_base_dir(file);
    let checked = check::check(&text, &parsed, &base, &FileLoader);
    let name = file.display().to_string();
    let index = LineIndex::new(&text);
    let mut lines: Vec<DiagnosticLine> = checked
        .diagnostics
        .iter()
        .map(|d| {
            let p = index.char_pos(&text, d.span.start);
            DiagnosticLine {
                severity: d.severity.as_str(),
                message: d.message.clone(),
                line: p.line + 1,
                column: p.col + 1,
            }
        })
        .collect();
    let colour = use_colour();
    if format != ReportFormat::Json {
        for d in checked
            .diagnostics
            .iter()
            .filter(|d| d.severity != Severity::Hint || checked.has_errors())
        {
            eprint!("{}", diagnostic_text(&name, &text, d, colour));
        }
    }
    if checked.has_errors() {
        if format == ReportFormat::Json {
            let doc = report::document(&Results {
                fits: &[],
                comparisons: &[],
                probing: &[],
                diagnostics: &lines,
            });
            println!(
                "{}",
                serde_json::to_string_pretty(&doc).map_err(|e| e.to_string())?
            );
        }
        eprintln!(
            "{name}: {}; nothing was estimated",
            tally(&checked.diagnostics)
        );
        return Ok(false);
    }
    let frame = checked
        .data
        .as_ref()
        .map(|d| d.frame.clone())
        .ok_or("the data file could not be read")?;
    let options = FitOptions::default();
    let mut fits: Vec<ModelFit> = Vec::new();
    let mut fit_of = vec![None; checked.models.len()];
    let mut all_ok = true;
    for (i, m) in checked.models.iter().enumerate() {
        match engine::fit(m, &frame, checked.panel_index.as_deref(), &options) {
            Ok(f) => {
                fit_of[i] = Some(fits.len());
                fits.push(f);
            }
            Err(e) => {
                all_ok = false;
                lines.push(estimation_error(
                    &name,
                    &text,
                    &index,
                    m.name_span.start,
                    &e,
                ));
            }
        }
    }
    let mut comparisons = Vec::new();
    for c in &checked.comparisons {
        let picked: Option<Vec<&ModelFit>> = c
            .models
            .iter()
            .map(|&i| fit_of[i].map(|k| &fits[k]))
            .collect();
        let Some(picked) = picked else { continue };
        for pair in picked.windows(2) {
            match engine::compare(pair[0], pair[1]) {
                Ok(r) => comparisons.push(r),
                Err(e) => {
                    all_ok = false;
                    lines.push(estimation_error(&name, &text, &index, c.span.start, &e));
                }
            }
        }
    }
    let mut probing: Vec<Output> = Vec::new();
    for r in &checked.requests {
        let Some(k) = fit_of[r.model] else {
            let model = &checked.models[r.model].name;
            lines.push(statement_line(
                "warning",
                &name,
                &text,
                &index,
                r.span.start,
                &format!(
                    "`{}` was not computed because model `{model}` was not estimated",
                    kind_word(r.kind)
                ),
            ));
            continue;
        };
        let progress = progress_bar(r, format);
        let tick = || {
            if let Some(p) = &progress {
                p.inc(1);
            }
        };
        let probe_options = ProbeOptions {
            level: options.level,
            on_draw: Some(&tick),
            fit: options.clone(),
            groups: &checked.groups,
        };
        let result = engine::probe::run(
            r,
            &checked.models[r.model],
            &fits[k],
            &frame,
            checked.panel_index.as_deref(),
            &probe_options,
        );
        if let Some(p) = progress {
            p.finish_and_clear();
        }
        match result {
            Ok(Output::Plot(mut plot)) => {
                plot.path = figure_path(&plot.path, &base, out);
                match write_figure(&plot, out.is_some()) {
                    Ok(()) => probing.push(Output::Plot(plot)),
                    Err(message) => {
                        all_ok = false;
                        lines.push(statement_line(
                            "error",
                            &name,
                            &text,
                            &index,
                            r.span.start,
                            &message,
                        ));
                    }
                }
            }
            Ok(o) => probing.push(o),
            Err(e) => {
                all_ok = false;
                lines.push(estimation_error(&name, &text, &index, r.span.start, &e));
            }
        }
    }
    let results = Results {
        fits: &fits,
        comparisons: &comparisons,
        probing: &probing,
        diagnostics: &lines,
    };
    match format {
        ReportFormat::Text => print!("{}", report::text(&results)),
        ReportFormat::Markdown => print!("{}", report::markdown(&results)),
        ReportFormat::Json => {
            let doc = report::document(&results);
            println!(
                "{}",
                serde_json::to_string_pretty(&doc).map_err(|e| e.to_string())?
            );
        }
    }
    if let Some(dir) = out {
        std::fs::create_dir_all(dir)
            .map_err(|e| format!("cannot create folder {}: {e}", dir.display()))?;
        let md = dir.join("report.md");
        // Figures in the folder are linked by file name, so the folder can be moved whole.
        let linked: Vec<Output> = probing.iter().map(|o| relative_to(o, dir)).collect();
        let in_dir = Results {
            probing: &linked,
            ..results
        };
        std::fs::write(&md, report::markdown(&in_dir))
            .map_err(|e| format!("cannot write {}: {e}", md.display()))?;
        let js = dir.join("report.json");
        let doc =
            serde_json::to_string_pretty(&report::document(&results)).map_err(|e| e.to_string())?;
        std::fs::write(&js, doc).map_err(|e| format!("cannot write {}: {e}", js.display()))?;
        eprintln!("wrote {} and {}", md.display(), js.display());
    }
    Ok(all_ok)
}

/// Print an estimation error at its statement and keep it for the JSON document.
fn estimation_error(
    name: &str,
    text: &str,
    index: &LineIndex,
    offset: usize,
    e: &engine::FitError,
) -> DiagnosticLine {
    statement_line("error", name, text, index, offset, &e.to_string())
}

fn kind_word(k: RequestKind) -> &'static str {
    match k {
        RequestKind::Probe => "probe",
        RequestKind::Regions => "regions",
        RequestKind::Turning => "turning",
        RequestKind::Effect => "effect",
        RequestKind::Plot => "plot",
    }
}

/// A progress bar for a bootstrap on a terminal in text mode; nothing otherwise.
fn progress_bar(r: &check::Request, format: ReportFormat) -> Option<indicatif::ProgressBar> {
    let (draws, _) = r.bootstrap?;
    if format != ReportFormat::Text || !std::io::stderr().is_terminal() {
        return None;
    }
    let bar = indicatif::ProgressBar::new(u64::from(draws));
    if let Ok(style) = indicatif::ProgressStyle::with_template(
        "  {msg}: bootstrap {bar:30} {pos}/{len} draws, {elapsed} (about {eta} left)",
    ) {
        bar.set_style(style);
    }
    bar.set_message(kind_word(r.kind));
    Some(bar)
}

/// Where a figure goes: as the statement says (resolved against the model
/// file's folder), except that with `--out DIR` a relative path goes into DIR.
fn figure_path(resolved: &Path, base: &Path, out: Option<&Path>) -> PathBuf {
    match (out, resolved.strip_prefix(base)) {
        (Some(dir), Ok(rel)) => dir.join(rel),
        _ => resolved.to_path_buf(),
    }
}

/// Write one figure; under `--out` its folder is created as needed (a folder
/// beside the model file must already exist: the checker said so).
fn write_figure(plot: &engine::probe::PlotResult, make_folder: bool) -> Result<(), String> {
    if make_folder {
        if let Some(parent) = plot.path.parent() {
            std::fs::create_dir_all(parent)
                .map_err(|e| format!("cannot create folder {}: {e}", parent.display()))?;
        }
    }
    std::fs::write(&plot.path, report::figure::svg(plot))
        .map_err(|e| format!("cannot write the figure {}: {e}", plot.path.display()))
}

/// A plot's path relative to `dir` when it lies inside it.
fn relative_to(o: &Output, dir: &Path) -> Output {
    match o {
        Output::Plot(p) => {
            let mut p = p.clone();
            if let Ok(rel) = p.path.strip_prefix(dir) {
                p.path = rel.to_path_buf();
            }
            Output::Plot(p)
        }
        other => other.clone(),
    }
}

/// Print a message of `severity` at a statement and keep it for the JSON document.
fn statement_line(
    severity: &'static str,
    name: &str,
    text: &str,
    index: &LineIndex,
    offset: usize,
    message: &str,
) -> DiagnosticLine {
    let p = index.char_pos(text, offset);
    eprintln!("{name}:{}:{}: {severity}: {message}", p.line + 1, p.col + 1);
    DiagnosticLine {
        severity,
        message: message.to_string(),
        line: p.line + 1,
        column: p.col + 1,
    }
}
