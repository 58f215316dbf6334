//! `slopewise check FILE`: every diagnostic, then a short account of each model.

use std::path::Path;

use check::{FileLoader, Kind};

use crate::render::{diagnostic_text, diagnostics_json, tally, use_colour};
use crate::Format;

/// Check several files; JSON output for several files is one document per line.
pub fn run_all(files: &[std::path::PathBuf], format: Format) -> Result<bool, String> {
    let mut clean = true;
    for f in files {
        clean &= run(f, format)?;
    }
    Ok(clean)
}

/// Returns Ok(false) when the file has errors.
pub fn run(file: &Path, format: Format) -> Result<bool, String> {
    let text = read_model_file(file)?;
    let parsed = syntax::parse(&text);
    // Absolute, so that messages about missing data files say where we looked.
    let parent = file
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let base = std::fs::canonicalize(parent).unwrap_or_else(|_| parent.to_path_buf());
    let base = base.as_path();
    let checked = check::check(&text, &parsed, base, &FileLoader);
    let name = file.display().to_string();
    match format {
        Format::Json => {
            let doc = diagnostics_json(&text, &checked.diagnostics);
            println!(
                "{}",
                serde_json::to_string(&doc).map_err(|e| e.to_string())?
            );
        }
        Format::Text => {
            let colour = use_colour();
            for d in &checked.diagnostics {
                eprint!("{}", diagnostic_text(&name, &text, d, colour));
            }
            if !checked.has_errors() {
                print!("{}", model_summary(&checked));
            }
            eprintln!("{name}: {}", tally(&checked.diagnostics));
        }
    }
    Ok(!checked.has_errors())
}

/// The folder paths in a model file are relative to: absolute, so that
/// messages about missing data files say where we looked.
pub fn model_base_dir(file: &Path) -> std::path::PathBuf {
    let parent = file
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    std::fs::canonicalize(parent).unwrap_or_else(|_| parent.to_path_buf())
}

/// A model file as text; errors name the file.
pub fn read_model_file(file: &Path) -> Result<String, String> {
    let bytes = std::fs::read(file)
        .map_err(|e| format!("cannot read model file {}: {e}", file.display()))?;
    String::from_utf8(bytes).map_err(|e| {
        let upto = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line = upto.iter().filter(|&&b| b == b'\n').count() + 1;
        format!(
            "model file {} is not UTF-8 text (line {line})",
            file.display()
        )
    })
}

/// What the checker resolved: for each model its kind, rows and terms with the
/// groupings they vary within, so a user sees how the file was understood.
fn model_summary(checked: &check::Checked) -> String {
    let mut out = String::new();
    for m in &checked.models {
        let kind = match m.kind {
            Kind::Ols => "least squares",
            Kind::Within => "fixed effects (within)",
            Kind::Mixed => "mixed model",
        };
        let outcome = m.outcome.as_ref().map_or("?", |o| o.label.as_str());
        out.push_str(&format!("model {}: {kind}, outcome {outcome}", m.name));
        if let Some(r) = &m.rows {
            out.push_str(&format!(
                ", {} of {} rows",
                check::count(r.used),
                check::count(r.total)
            ));
        }
        out.push('\n');
        let width = m
            .terms
            .iter()
            .map(|t| t.label.chars().count())
            .max()
            .unwrap_or(0);
        for t in &m.terms {
            let mut note = String::new();
            if !t.varies_within.is_empty() {
                note = format!("varies within {}", t.varies_within.join(", "));
            }
            if !t.absorbed_by.is_empty() {
                note = format!("absorbed by fixed {}", t.absorbed_by.join(", "));
            }
            out.push_str(&format!("  {:width$}  {note}\n", t.label));
        }
    }
    out
}
