//! Go to definition, references, rename and the document outline, all read
//! from the symbol index of the current text.

use syntax::ast::StmtKind;
use syntax::{Parsed, Span};

use crate::index::{SymKind, SymbolIndex};

/// The span of the definition of the name at `offset` (`let` and model names).
pub fn definition(index: &SymbolIndex, offset: usize) -> Option<Span> {
    let occ = index.at(offset)?;
    if !matches!(occ.kind, SymKind::Let | SymKind::Model) {
        return None;
    }
    index.definition(occ.kind, &occ.name).map(|d| d.span)
}

/// Every occurrence of the `let` or model name at `offset`.
pub fn references(index: &SymbolIndex, offset: usize, include_definition: bool) -> Vec<Span> {
    let Some(occ) = index.at(offset) else {
        return Vec::new();
    };
    if !matches!(occ.kind, SymKind::Let | SymKind::Model) {
        return Vec::new();
    }
    index
        .all(occ.kind, &occ.name)
        .filter(|o| include_definition || !o.is_def)
        .map(|o| o.span)
        .collect()
}

/// Why a rename cannot be done, in a sentence for the user.
pub type RenameError = String;

/// The span of the `let` name at `offset`, if it can be renamed.
pub fn prepare_rename(index: &SymbolIndex, offset: usize) -> Result<Span, RenameError> {
    match index.at(offset) {
        Some(o) if o.kind == SymKind::Let => Ok(o.span),
        Some(_) => Err("only `let` names can be renamed".into()),
        None => Err("there is no name here to rename".into()),
    }
}

/// Edits renaming the `let` at `offset` to `new_name` everywhere.
pub fn rename(
    index: &SymbolIndex,
    offset: usize,
    new_name: &str,
    columns: &[&str],
) -> Result<Vec<(Span, String)>, RenameError> {
    prepare_rename(index, offset)?;
    let occ = index.at(offset).expect("prepare_rename found it");
    let bare = new_name.trim_matches('`');
    if bare.is_empty() {
        return Err("the new name is empty".into());
    }
    if columns.contains(&bare) {
        return Err(format!(
            "`{bare}` is a column of the data; a `let` of that name would hide it"
        ));
    }
    if index
        .occurrences
        .iter()
        .any(|o| o.is_def && o.kind == SymKind::Let && o.name == bare && o.name != occ.name)
    {
        return Err(format!("a `let` named `{bare}` already exists"));
    }
    let written = check::quote_name(bare);
    Ok(index
        .all(SymKind::Let, &occ.name)
        .map(|o| (o.span, written.clone()))
        .collect())
}

/// One outline entry.
#[derive(Clone, Debug, PartialEq)]
pub struct Symbol {
    pub name: String,
    pub detail: String,
    pub kind: OutlineKind,
    pub span: Span,
    pub name_span: Span,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OutlineKind {
    Data,
    Let,
    Model,
    Request,
}

/// The outline: the data source, lets, models and probing statements.
pub fn symbols(parsed: &Parsed, text: &str) -> Vec<Symbol> {
    let mut out = Vec::new();
    for s in &parsed.file.stmts {
        let line = text
            .get(s.span.start..s.span.end)
            .unwrap_or("")
            .lines()
            .next()
            .unwrap_or("")
            .trim()
            .to_string();
        let (name, kind, name_span) = match &s.kind {
            StmtKind::Source { path, .. } => (path.value.clone(), OutlineKind::Data, path.span),
            StmtKind::Let { name, .. } => (name.name.clone(), OutlineKind::Let, name.span),
            StmtKind::Model(m) => (m.name.name.clone(), OutlineKind::Model, m.name.span),
            StmtKind::Probe { target, .. }
            | StmtKind::Regions { target, .. }
            | StmtKind::Turning { target, .. }
            | StmtKind::Effect { target }
            | StmtKind::Plot { target, .. } => {
                (line.clone(), OutlineKind::Request, target.model.span)
            }
            StmtKind::Compare { models } => match models.first() {
                Some(m) => (line.clone(), OutlineKind::Request, m.span),
                None => continue,
            },
            StmtKind::Groups { .. } | StmtKind::Panel { .. } => {
                (line.clone(), OutlineKind::Data, s.span)
            }
            StmtKind::Where { .. } | StmtKind::Error => continue,
        };
        if name.is_empty() {
            continue;
        }
        out.push(Symbol {
            name,
            detail: line,
            kind,
            span: s.span,
            name_span,
        });
    }
    out
}
