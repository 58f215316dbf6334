//! Semantic tokens: names coloured by what they resolve to (a `let`, a
//! model, a column, a function), plus keywords, strings, numbers and comments.

use syntax::Span;

use crate::index::{SymKind, SymbolIndex};
use crate::scan::{scan, Piece};

/// The legend, in the order the token type numbers refer to.
pub const TYPES: &[&str] = &[
    "keyword",    // 0
    "variable",   // 1: let names
    "class",      // 2: model names
    "property",   // 3: columns
    "function",   // 4
    "enumMember", // 5: option words and named values
    "string",     // 6
    "number",     // 7
    "comment",    // 8
    "operator",   // 9
];
/// Modifier bit 0: the place a name is defined.
pub const MODIFIERS: &[&str] = &["declaration"];

/// Words that are keywords inside statements (after the statement's first word).
const INNER_KEYWORDS: &[&str] = &[
    "in",
    "over",
    "by",
    "across",
    "at",
    "to",
    "alpha",
    "missing",
    "bootstrap",
    "seed",
    "and",
    "or",
    "not",
];

/// One token: byte span, type index, modifier bits.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Token {
    pub span: Span,
    pub ty: u32,
    pub modifiers: u32,
}

pub fn tokens(text: &str, index: &SymbolIndex) -> Vec<Token> {
    let mut out = Vec::new();
    let mut occ = index.occurrences.iter().peekable();
    for t in scan(text) {
        let span = Span::new(t.start, t.end);
        // Names the index knows come from the tree; the rest by their look.
        while occ.peek().is_some_and(|o| o.span.end <= span.start) {
            occ.next();
        }
        if let Some(o) = occ.peek().filter(|o| o.span == span) {
            let ty = match o.kind {
                SymKind::Let => 1,
                SymKind::Model => 2,
                SymKind::Column => 3,
                SymKind::Function => 4,
                SymKind::Option => 5,
                SymKind::Unknown => continue,
            };
            out.push(Token {
                span,
                ty,
                modifiers: u32::from(o.is_def),
            });
            continue;
        }
        let ty = match t.piece {
            Piece::Comment => 8,
            Piece::Str => 6,
            Piece::Num => 7,
            Piece::Punct('{' | '}' | '(' | ')' | ',' | ':') => continue,
            Piece::Punct(_) => 9,
            Piece::Word { quoted: true } => continue,
            Piece::Word { quoted: false } => {
                let w = t.text(text);
                let kw = syntax::STATEMENT_KEYWORDS.contains(&w)
                    || syntax::MODEL_KEYWORDS.contains(&w)
                    || INNER_KEYWORDS.contains(&w);
                if !kw {
                    continue;
                }
                0
            }
        };
        out.push(Token {
            span,
            ty,
            modifiers: 0,
        });
    }
    out
}
