//! `slopewise fit FILE`: check, estimate every model, run the comparisons, report.

use std::path::Path;

use check::{FileLoader, RequestKind, Severity};
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
        match engine::fit(m, &frame, checked.panel_index.as_ref(), &options) {
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
    let pending: Vec<&str> = checked
        .requests
        .iter()
        .map(|r| match r.kind {
            RequestKind::Probe => "probe",
            RequestKind::Regions => "regions",
            RequestKind::Turning => "turning",
            RequestKind::Effect => "effect",
            RequestKind::Plot => "plot",
        })
        .collect();
    if !pending.is_empty() && format != ReportFormat::Json {
        eprintln!(
            "{name}: {} probing statement(s) ({}) were checked; computing them is not part of this version yet",
            pending.len(),
            dedup(&pending).join(", ")
        );
    }
    let results = Results {
        fits: &fits,
        comparisons: &comparisons,
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
        std::fs::write(&md, report::markdown(&results))
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
    let p = index.char_pos(text, offset);
    eprintln!("{name}:{}:{}: error: {e}", p.line + 1, p.col + 1);
    DiagnosticLine {
        severity: "error",
        message: e.to_string(),
        line: p.line + 1,
        column: p.col + 1,
    }
}

fn dedup<'a>(items: &[&'a str]) -> Vec<&'a str> {
    let mut out: Vec<&str> = Vec::new();
    for i in items {
        if !out.contains(i) {
            out.push(i);
        }
    }
    out
}
