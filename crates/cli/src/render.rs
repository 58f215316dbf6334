//! Diagnostics for people (source excerpts with the span underlined) and for
//! scripts (the JSON document of the design: 1-based lines and columns).

use std::io::IsTerminal;

use ariadne::{Color, Config, IndexType, Label, Report, ReportKind, Source};
use check::{Diagnostic, Severity};
use syntax::LineIndex;

/// Whether to colour output: only on a terminal, and never when NO_COLOR is set.
pub fn use_colour() -> bool {
    std::io::stderr().is_terminal() && std::env::var_os("NO_COLOR").is_none()
}

/// One diagnostic as text: `file:line:col`, the message, the excerpt.
pub fn diagnostic_text(file: &str, text: &str, d: &Diagnostic, colour: bool) -> String {
    let (kind, col) = match d.severity {
        Severity::Error => (ReportKind::Error, Color::Red),
        Severity::Warning => (ReportKind::Warning, Color::Yellow),
        Severity::Hint => (ReportKind::Custom("Hint", Color::Cyan), Color::Cyan),
    };
    let span = clamp(text, d.span.start, d.span.end);
    let mut report = Report::build(kind, (file, span.clone()))
        .with_config(
            Config::default()
                .with_index_type(IndexType::Byte)
                .with_color(colour),
        )
        .with_code(d.code)
        .with_message(&d.message)
        .with_label(Label::new((file, span)).with_color(col));
    if let Some(fix) = &d.fix {
        report = report.with_help(format!("quick fix: {}", fix.title));
    }
    let mut out = Vec::new();
    let _ = report.finish().write((file, Source::from(text)), &mut out);
    String::from_utf8_lossy(&out).into_owned()
}

/// An empty span at the very end is shown on the last character, so the
/// excerpt has something to underline.
fn clamp(text: &str, start: usize, end: usize) -> std::ops::Range<usize> {
    let start = start.min(text.len());
    let end = end.clamp(start, text.len());
    if start == end && start == text.len() && start > 0 {
        let mut s = start - 1;
        while !text.is_char_boundary(s) {
            s -= 1;
        }
        return s..start;
    }
    start..end
}

/// The diagnostics document: `{"diagnostics": [...]}`, lines and columns 1-based,
/// columns counted in characters, end exclusive.
pub fn diagnostics_json(text: &str, diags: &[Diagnostic]) -> serde_json::Value {
    let index = LineIndex::new(text);
    let items: Vec<serde_json::Value> = diags
        .iter()
        .map(|d| {
            let s = index.char_pos(text, d.span.start);
            let e = index.char_pos(text, d.span.end);
            let mut v = serde_json::json!({
                "severity": d.severity.as_str(),
                "code": d.code,
                "message": d.message,
                "line": s.line + 1,
                "column": s.col + 1,
                "end_line": e.line + 1,
                "end_column": e.col + 1,
            });
            if let Some(fix) = &d.fix {
                let edits: Vec<serde_json::Value> = fix
                    .edits
                    .iter()
                    .map(|ed| {
                        let a = index.char_pos(text, ed.span.start);
                        let b = index.char_pos(text, ed.span.end);
                        serde_json::json!({
                            "line": a.line + 1, "column": a.col + 1,
                            "end_line": b.line + 1, "end_column": b.col + 1,
                            "text": ed.text,
                        })
                    })
                    .collect();
                v["fix"] = serde_json::json!({"title": fix.title, "edits": edits});
            }
            v
        })
        .collect();
    serde_json::json!({ "diagnostics": items })
}

/// "2 errors, 1 warning, 0 hints".
pub fn tally(diags: &[Diagnostic]) -> String {
    let n = |s| diags.iter().filter(|d| d.severity == s).count();
    let word = |k: usize, w: &str| format!("{k} {w}{}", if k == 1 { "" } else { "s" });
    format!(
        "{}, {}, {}",
        word(n(Severity::Error), "error"),
        word(n(Severity::Warning), "warning"),
        word(n(Severity::Hint), "hint")
    )
}
