//! Completion that knows where the cursor is: which statement is being typed
//! and which of its parts, read from the words before the cursor (the tree of
//! a half-typed statement says too little).

use std::path::Path;

use frame::ColumnData;
use syntax::ast::StmtKind;
use syntax::Parsed;
use tower_lsp_server::ls_types as lsp;

use crate::analysis::Analysis;
use crate::scan::{scan, Piece, Tok};

/// Values offered after `at`; any signed SD multiple and percentile also work.
const AT_VALUES: &[(&str, &str)] = &[
    ("mean", "the moderator's mean"),
    ("-1sd", "one SD below the mean"),
    ("+1sd", "one SD above the mean"),
    ("min", "the smallest value in the data"),
    ("max", "the largest value in the data"),
    ("p10", "10th percentile"),
    ("p50", "the median"),
    ("p90", "90th percentile"),
];
const ERRORS: &[(&str, &str)] = &[
    ("classical", "homoskedastic standard errors"),
    ("hc1", "heteroskedasticity-robust, n/(n−k) scaled"),
    ("hc3", "heteroskedasticity-robust, leverage adjusted"),
    (
        "cluster",
        "clustered by one or two groupings: `cluster G` or `cluster G, H`",
    ),
];
const ESTIMATE: &[(&str, &str)] = &[
    ("reml", "restricted maximum likelihood (default)"),
    ("ml", "maximum likelihood (needed to compare fixed parts)"),
];
const DF: &[(&str, &str)] = &[
    (
        "satterthwaite",
        "Satterthwaite approximation (default for mixed models)",
    ),
    ("residual", "residual degrees of freedom"),
];

/// What the user is typing, as far as completion cares.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Context {
    /// Nothing sensible to offer (inside a comment, a model's name, ...).
    Nothing,
    /// The start of a statement; `in_model` inside `model NAME { }`.
    StatementStart { in_model: bool },
    /// An expression: columns, `let` names, functions.
    Expression,
    /// A grouping id column.
    Grouping,
    /// Only these words.
    Words(&'static [(&'static str, &'static str)]),
    /// A model name.
    Model,
    /// The focal variable of a probing statement on this model.
    Focal(String),
    /// After a complete part: the words that may follow it, plus (for `vary`
    /// lists) more names.
    Next(&'static [(&'static str, &'static str)], bool),
    /// The data file of `source`.
    DataFile,
    /// After `at` or a comma in its list.
    AtValue,
}

const KW_FOLLOW_GROUP: &[(&str, &str)] = &[("in", "the next, outer grouping")];
const KW_FOLLOW_UNIT: &[(&str, &str)] = &[("over", "the time column")];
const KW_FOLLOW_SOURCE: &[(&str, &str)] = &[("missing", "extra texts that mean missing")];
const KW_FOLLOW_VARY: &[(&str, &str)] = &[("by", "the grouping the effects vary across")];
const KW_FOLLOW_FOCAL: &[(&str, &str)] = &[("across", "the moderator")];
const KW_FOLLOW_PROBE_MOD: &[(&str, &str)] = &[("at", "moderator values")];
const KW_FOLLOW_REGIONS_MOD: &[(&str, &str)] = &[("alpha", "the significance level")];
const KW_FOLLOW_PLOT_MOD: &[(&str, &str)] = &[
    ("at", "moderator values"),
    ("to", "the figure file: to \"FILE.svg\""),
];
const KW_FOLLOW_PLOT: &[(&str, &str)] = &[
    ("across", "the moderator"),
    ("to", "the figure file: to \"FILE.svg\""),
];
const KW_FOLLOW_TURNING: &[(&str, &str)] = &[("across", "the moderator")];
const KW_FOLLOW_VALUES: &[(&str, &str)] = &[("bootstrap", "bootstrap draws: bootstrap N seed S")];

fn is_keyword(word: &str, in_model: bool) -> bool {
    if in_model {
        syntax::MODEL_KEYWORDS.contains(&word)
    } else {
        syntax::STATEMENT_KEYWORDS.contains(&word)
    }
}

/// Work out the context at `offset` from the text before it.
pub fn context(text: &str, offset: usize) -> Context {
    let offset = floor_boundary(text, offset.min(text.len()));
    let toks = scan(&text[..offset]);
    // The piece the cursor is in or just after.
    let mut before: Vec<Tok> = toks;
    if let Some(last) = before.last() {
        if last.end == offset {
            match last.piece {
                Piece::Comment => return Context::Nothing,
                Piece::Str => {
                    let closed = last.end - last.start >= 2 && last.text(text).ends_with('"');
                    if closed {
                        return Context::Nothing;
                    }
                    let kw = before.iter().rev().nth(1).and_then(|t| t.word(text));
                    return if kw == Some("source") {
                        Context::DataFile
                    } else {
                        Context::Nothing
                    };
                }
                Piece::Word { .. } | Piece::Num => {
                    before.pop();
                }
                Piece::Punct(_) => {}
            }
        } else if last.piece == Piece::Comment && !text[last.end..offset].contains('\n') {
            return Context::Nothing;
        }
    }
    let before: Vec<Tok> = before
        .into_iter()
        .filter(|t| t.piece != Piece::Comment)
        .collect();

    // Are we inside a model body? Count braces after the last `model`.
    let mut depth = 0i32;
    let mut body_start = None;
    for (i, t) in before.iter().enumerate() {
        match t.piece {
            Piece::Punct('{') => {
                depth += 1;
                if depth == 1 {
                    body_start = Some(i + 1);
                }
            }
            Piece::Punct('}') => {
                depth = (depth - 1).max(0);
                if depth == 0 {
                    body_start = None;
                }
            }
            _ => {}
        }
    }
    let in_model = depth > 0;
    let floor = if in_model { body_start.unwrap_or(0) } else { 0 };

    // The statement the cursor is in: the last keyword that starts a line.
    let line_start = |t: &Tok| {
        text[..t.start]
            .rsplit('\n')
            .next()
            .unwrap_or("")
            .trim()
            .is_empty()
    };
    let mut stmt_at = None;
    for i in (floor..before.len()).rev() {
        let t = &before[i];
        if let Piece::Punct('}') = t.piece {
            break;
        }
        if let Some(w) = t.word(text) {
            if matches!(t.piece, Piece::Word { quoted: false })
                && line_start(t)
                && is_keyword(w, in_model)
            {
                stmt_at = Some(i);
                break;
            }
        }
    }

    let cursor_line_start = text[..offset]
        .rsplit('\n')
        .next()
        .unwrap_or("")
        .trim_start()
        .chars()
        .all(crate::scan::is_word_char);
    let prev = before.last();
    let continues = prev.is_some_and(|t| {
        matches!(
            t.piece,
            Piece::Punct('+' | '-' | '*' | '/' | '^' | '=' | ',' | '(' | ':' | '<' | '>' | '!')
        ) || matches!(
            t.word(text),
            Some("at" | "across" | "by" | "in" | "over" | "and" | "or" | "not")
        )
    });
    let at_brace = prev.is_some_and(|t| matches!(t.piece, Piece::Punct('{' | '}')));
    if prev.is_none() || at_brace || (cursor_line_start && !continues) {
        return Context::StatementStart { in_model };
    }

    let Some(si) = stmt_at else {
        // Inside a model without a keyword: the formula.
        return if in_model {
            formula_context(&before[floor..], text)
        } else {
            Context::Nothing
        };
    };
    let kw = before[si].word(text).unwrap_or("");
    let rest = &before[si + 1..];
    let words: Vec<Option<&str>> = rest.iter().map(|t| t.word(text)).collect();
    let last_punct = |c: char| rest.last().is_some_and(|t| t.piece == Piece::Punct(c));
    let last_word = words.last().copied().flatten();
    match kw {
        "let" | "where" => {
            if kw == "let" && !rest.iter().any(|t| t.piece == Piece::Punct('=')) {
                Context::Nothing
            } else {
                Context::Expression
            }
        }
        "source" => {
            if rest.is_empty() {
                Context::DataFile
            } else if rest.iter().any(|t| t.word(text) == Some("missing")) {
                Context::Nothing
            } else {
                Context::Next(KW_FOLLOW_SOURCE, false)
            }
        }
        "groups" => {
            if rest.is_empty() || last_word == Some("in") {
                Context::Grouping
            } else {
                Context::Next(KW_FOLLOW_GROUP, false)
            }
        }
        "panel" => {
            if rest.is_empty() || last_word == Some("over") {
                Context::Grouping
            } else if rest.len() == 1 {
                Context::Next(KW_FOLLOW_UNIT, false)
            } else {
                Context::Nothing
            }
        }
        "model" => Context::Nothing,
        "fixed" => Context::Grouping,
        "vary" => {
            if words.contains(&Some("by")) {
                Context::Grouping
            } else if rest.is_empty() || last_punct(',') || continues {
                Context::Expression
            } else {
                Context::Next(KW_FOLLOW_VARY, true)
            }
        }
        "errors" => {
            if rest.is_empty() {
                Context::Words(ERRORS)
            } else if words.first() == Some(&Some("cluster"))
                && (rest.len() == 1 || last_punct(','))
            {
                Context::Grouping
            } else {
                Context::Nothing
            }
        }
        "estimate" => Context::Words(ESTIMATE),
        "df" => Context::Words(DF),
        "compare" => Context::Model,
        "probe" | "regions" | "turning" | "effect" | "plot" => probe_context(kw, rest, text),
        _ => Context::Nothing,
    }
}

fn formula_context(rest: &[Tok], text: &str) -> Context {
    let _ = text;
    if rest.is_empty() {
        Context::StatementStart { in_model: true }
    } else {
        Context::Expression
    }
}

fn probe_context(kw: &str, rest: &[Tok], text: &str) -> Context {
    let colon = rest.iter().position(|t| t.piece == Piece::Punct(':'));
    let Some(colon) = colon else {
        return if rest.is_empty() {
            Context::Model
        } else {
            Context::Nothing
        };
    };
    let model = rest[..colon]
        .first()
        .and_then(|t| t.word(text))
        .unwrap_or("")
        .to_string();
    let after: Vec<&Tok> = rest[colon + 1..].iter().collect();
    let words: Vec<Option<&str>> = after.iter().map(|t| t.word(text)).collect();
    if after.is_empty() {
        return Context::Focal(model);
    }
    if kw == "effect" {
        return Context::Nothing;
    }
    let last = after.last().unwrap();
    let last_word = words.last().copied().flatten();
    if words.contains(&Some("to")) {
        return Context::Nothing;
    }
    if let Some(at) = words.iter().position(|w| *w == Some("at")) {
        if at == after.len() - 1 || last.piece == Piece::Punct(',') {
            return Context::AtValue;
        }
        return Context::Next(KW_FOLLOW_VALUES, false);
    }
    if last_word == Some("across") {
        return Context::Expression;
    }
    if words.contains(&Some("across")) {
        return Context::Next(
            match kw {
                "regions" => KW_FOLLOW_REGIONS_MOD,
                "plot" => KW_FOLLOW_PLOT_MOD,
                _ => KW_FOLLOW_PROBE_MOD,
            },
            false,
        );
    }
    Context::Next(
        match kw {
            "plot" => KW_FOLLOW_PLOT,
            "turning" => KW_FOLLOW_TURNING,
            _ => KW_FOLLOW_FOCAL,
        },
        false,
    )
}

fn floor_boundary(text: &str, mut offset: usize) -> usize {
    while offset > 0 && !text.is_char_boundary(offset) {
        offset -= 1;
    }
    offset
}

/// Everything needed to list candidates.
pub struct Sources<'a> {
    pub parsed: &'a Parsed,
    pub last: Option<&'a Analysis>,
    pub base_dir: &'a Path,
}

pub fn complete(text: &str, offset: usize, src: &Sources<'_>) -> Vec<lsp::CompletionItem> {
    let mut out = Vec::new();
    match context(text, offset) {
        Context::Nothing => {}
        Context::StatementStart { in_model } => {
            let kws = if in_model {
                syntax::MODEL_KEYWORDS
            } else {
                syntax::STATEMENT_KEYWORDS
            };
            for k in kws {
                out.push(keyword(k, statement_doc(k)));
            }
            if in_model {
                // A formula line begins with the outcome.
                names(src, &mut out, false);
            }
        }
        Context::Expression => {
            names(src, &mut out, false);
            functions(&mut out);
        }
        Context::Grouping => names(src, &mut out, true),
        Context::Words(words) => words.iter().for_each(|(w, d)| out.push(value(w, d))),
        Context::Model => models(src, &mut out),
        Context::Focal(model) => focal(src, &model, &mut out),
        Context::Next(words, more_names) => {
            words.iter().for_each(|(w, d)| out.push(keyword(w, d)));
            if more_names {
                names(src, &mut out, false);
            }
        }
        Context::DataFile => data_files(src.base_dir, &mut out),
        Context::AtValue => AT_VALUES.iter().for_each(|(w, d)| out.push(value(w, d))),
    }
    out
}

fn statement_doc(k: &str) -> &'static str {
    match k {
        "source" => "the data file: source \"FILE.csv\"",
        "groups" => "nesting of id columns, innermost first: groups team in dept",
        "panel" => "panel structure: panel UNIT over TIME",
        "let" => "a derived variable: let NAME = EXPR",
        "where" => "keep rows where a condition holds",
        "model" => "a model: model NAME { OUTCOME = TERMS ... }",
        "probe" => "effect of X at moderator values: probe M: X across W at V, ...",
        "regions" => "Johnson–Neyman regions: regions M: X across W",
        "turning" => "turning point of a curve: turning M: X",
        "effect" => "average marginal effect: effect M: X",
        "plot" => "a figure: plot M: X across W to \"FILE.svg\"",
        "compare" => "test nested models: compare M1, M2",
        "fixed" => "fixed effects swept out by the within transform: fixed A, B",
        "vary" => "random intercept and slopes: vary intercept, X by G",
        "errors" => "standard errors: classical | hc1 | hc3 | cluster G",
        "estimate" => "estimation method of a mixed model: reml | ml",
        "df" => "degrees of freedom: satterthwaite | residual",
        _ => "",
    }
}

fn keyword(k: &str, doc: &str) -> lsp::CompletionItem {
    lsp::CompletionItem {
        label: k.to_string(),
        kind: Some(lsp::CompletionItemKind::KEYWORD),
        detail: (!doc.is_empty()).then(|| doc.to_string()),
        ..Default::default()
    }
}

fn value(k: &str, doc: &str) -> lsp::CompletionItem {
    lsp::CompletionItem {
        label: k.to_string(),
        kind: Some(lsp::CompletionItemKind::ENUM_MEMBER),
        detail: Some(doc.to_string()),
        ..Default::default()
    }
}

/// The name as it must be written: backticks around a name that is not an identifier.
fn written(name: &str) -> String {
    check::quote_name(name)
}

/// Columns (with their type and levels), then `let` names. For groupings the
/// declared groups and panel columns come first.
fn names(src: &Sources<'_>, out: &mut Vec<lsp::CompletionItem>, grouping: bool) {
    let mut preferred: Vec<String> = Vec::new();
    for s in &src.parsed.file.stmts {
        match &s.kind {
            StmtKind::Groups { levels } => preferred.extend(levels.iter().map(|l| l.name.clone())),
            StmtKind::Panel { unit, time } => {
                preferred.push(unit.name.clone());
                preferred.push(time.name.clone());
            }
            _ => {}
        }
    }
    if let Some(data) = src.last.and_then(|a| a.checked.data.as_ref()) {
        let frame = &data.frame;
        for c in frame.columns() {
            let detail = if !data.complete {
                "column (data still loading)".to_string()
            } else {
                match &c.data {
                    ColumnData::Numeric(_) => "numeric column".to_string(),
                    ColumnData::Categorical(cat) => {
                        format!("text column, {} levels", cat.levels.len())
                    }
                }
            };
            let rank = if grouping && preferred.contains(&c.name) {
                "0"
            } else {
                "1"
            };
            out.push(lsp::CompletionItem {
                label: c.name.clone(),
                kind: Some(lsp::CompletionItemKind::FIELD),
                detail: Some(detail),
                insert_text: Some(written(&c.name)),
                sort_text: Some(format!("{rank}{}", c.name)),
                ..Default::default()
            });
        }
    }
    if grouping {
        return;
    }
    for s in &src.parsed.file.stmts {
        if let StmtKind::Let { name, value } = &s.kind {
            let def = src
                .last
                .and_then(|a| a.text.get(value.span.start..value.span.end))
                .map(str::to_string);
            out.push(lsp::CompletionItem {
                label: name.name.clone(),
                kind: Some(lsp::CompletionItemKind::VARIABLE),
                detail: Some(match def {
                    Some(d) if !d.is_empty() => format!("let {} = {d}", name.name),
                    _ => "let".to_string(),
                }),
                insert_text: Some(written(&name.name)),
                sort_text: Some(format!("0{}", name.name)),
                ..Default::default()
            });
        }
    }
}

fn functions(out: &mut Vec<lsp::CompletionItem>) {
    for f in syntax::FUNCTIONS {
        out.push(lsp::CompletionItem {
            label: f.name.to_string(),
            kind: Some(lsp::CompletionItemKind::FUNCTION),
            detail: Some(f.signature.to_string()),
            documentation: Some(lsp::Documentation::String(f.doc.to_string())),
            sort_text: Some(format!("2{}", f.name)),
            ..Default::default()
        });
    }
}

fn models(src: &Sources<'_>, out: &mut Vec<lsp::CompletionItem>) {
    for s in &src.parsed.file.stmts {
        if let StmtKind::Model(m) = &s.kind {
            out.push(lsp::CompletionItem {
                label: m.name.name.clone(),
                kind: Some(lsp::CompletionItemKind::MODULE),
                detail: Some("model".into()),
                ..Default::default()
            });
        }
    }
}

/// The model's terms' variables first (what a probe can name), then every name.
fn focal(src: &Sources<'_>, model: &str, out: &mut Vec<lsp::CompletionItem>) {
    let mut seen = Vec::new();
    if let Some(m) = src
        .last
        .and_then(|a| a.models.iter().find(|m| m.name == model))
    {
        for t in &m.terms {
            for f in &t.factors {
                if !seen.contains(&f.label) {
                    seen.push(f.label.clone());
                    out.push(lsp::CompletionItem {
                        label: f.label.clone(),
                        kind: Some(lsp::CompletionItemKind::VARIABLE),
                        detail: Some(format!("in model {model}")),
                        sort_text: Some(format!("0{}", f.label)),
                        ..Default::default()
                    });
                }
            }
        }
    }
    let mut rest = Vec::new();
    names(src, &mut rest, false);
    out.extend(rest.into_iter().filter(|i| !seen.contains(&i.label)));
}

fn data_files(dir: &Path, out: &mut Vec<lsp::CompletionItem>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut names: Vec<String> = entries
        .flatten()
        .filter_map(|e| e.file_name().into_string().ok())
        .filter(|n| n.to_ascii_lowercase().ends_with(".csv"))
        .collect();
    names.sort();
    for n in names {
        out.push(lsp::CompletionItem {
            label: n,
            kind: Some(lsp::CompletionItemKind::FILE),
            detail: Some("data file".into()),
            ..Default::default()
        });
    }
}
