//! The slopewise model language: lexer, parser, syntax tree and formatter.
//!
//! Parsing never fails: [`parse`] returns the tree it could build *and* every
//! syntax error it met, so editors and the checker always have something to
//! work with. This crate knows nothing of files, data or numbers beyond literals.

pub mod ast;
mod format;
mod lexer;
mod line_index;
mod parser;
mod span;
mod values;

pub use line_index::{LineCol, LineIndex};
pub use span::Span;
pub use values::{
    named_value, FunctionInfo, NamedValue, FUNCTIONS, MODEL_KEYWORDS, STATEMENT_KEYWORDS,
};

/// The result of parsing: a (possibly partial) tree, the comments and all syntax errors.
#[derive(Clone, Debug, PartialEq)]
pub struct Parsed {
    pub file: ast::File,
    pub comments: Vec<ast::Comment>,
    pub errors: Vec<SyntaxError>,
}

/// One syntax error with the byte span it concerns.
#[derive(Clone, Debug, PartialEq)]
pub struct SyntaxError {
    pub span: Span,
    /// A complete sentence for the user, e.g. "expected `=` after the outcome, found `+`".
    pub message: String,
}

/// Parse a whole file. Never panics, whatever the input.
pub fn parse(text: &str) -> Parsed {
    let lexed = lexer::lex(text);
    let mut errors = lexed.errors;
    let file = parser::parse_tokens(text, lexed.tokens, &mut errors);
    errors.sort_by_key(|e| (e.span.start, e.span.end));
    Parsed {
        file,
        comments: lexed.comments,
        errors,
    }
}

/// Reprint a file in canonical form, keeping comments. Returns `None` when the
/// file has syntax errors (formatting a broken file would lose text).
pub fn format(text: &str) -> Option<String> {
    let parsed = parse(text);
    if !parsed.errors.is_empty() {
        return None;
    }
    Some(format::format_parsed(text, &parsed))
}
