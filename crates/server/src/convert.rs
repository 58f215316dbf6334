//! The one place where editor-neutral spans and diagnostics become protocol
//! types (UTF-16 positions) and protocol positions become byte offsets.

use tower_lsp_server::ls_types as lsp;

use syntax::{LineCol, LineIndex, Span};

pub fn position(text: &str, index: &LineIndex, offset: usize) -> lsp::Position {
    let lc = index.utf16_pos(text, offset);
    lsp::Position::new(lc.line as u32, lc.col as u32)
}

pub fn range(text: &str, index: &LineIndex, span: Span) -> lsp::Range {
    lsp::Range::new(
        position(text, index, span.start),
        position(text, index, span.end),
    )
}

pub fn line_col(p: lsp::Position) -> LineCol {
    LineCol {
        line: p.line as usize,
        col: p.character as usize,
    }
}

pub fn offset(text: &str, index: &LineIndex, p: lsp::Position) -> usize {
    index.offset_of_utf16(text, line_col(p))
}

pub fn severity(s: check::Severity) -> lsp::DiagnosticSeverity {
    match s {
        check::Severity::Error => lsp::DiagnosticSeverity::ERROR,
        check::Severity::Warning => lsp::DiagnosticSeverity::WARNING,
        check::Severity::Hint => lsp::DiagnosticSeverity::HINT,
    }
}

pub fn diagnostic(text: &str, index: &LineIndex, d: &check::Diagnostic) -> lsp::Diagnostic {
    lsp::Diagnostic {
        range: range(text, index, d.span),
        severity: Some(severity(d.severity)),
        code: Some(lsp::NumberOrString::String(d.code.to_string())),
        source: Some("slopewise".into()),
        message: d.message.clone(),
        ..Default::default()
    }
}

pub fn text_edit(text: &str, index: &LineIndex, span: Span, new_text: &str) -> lsp::TextEdit {
    lsp::TextEdit::new(range(text, index, span), new_text.to_string())
}
