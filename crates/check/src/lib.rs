//! The checker: resolves a parsed `.slope` file against its data.
//!
//! One engine serves `slopewise check`, `slopewise fit` and the language server:
//! it reports every diagnostic of the language (syntax, names, types, levels,
//! nesting, panel structure, lower-order terms, absorbed terms, probes) and
//! returns the resolved models the engine estimates. Data is obtained through a
//! [`DataProvider`], so the server can cache frames and the CLI can read a file
//! exactly once.

mod context;
mod diagnostic;
mod eval;
mod facts;
mod model;
mod request;
mod resolve;
mod structure;
mod suggest;
mod value;

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use frame::{ReadError, ReadOptions};
use syntax::ast::StmtKind;
use syntax::Parsed;

pub use context::{count, label_of, DataView, LetDef};
pub use diagnostic::{codes, Diagnostic, Edit, Fix, Severity};
pub use eval::{format_number, mean_sd, Evaluated, Evaluator, PanelIndex};
pub use facts::Facts;
pub use model::{
    DfMethod, ErrorsKind, Grouping, Kind, Method, RandomEffects, ResolvedFactor, ResolvedModel,
    ResolvedTerm, RowAccount,
};
pub use request::{At, AtSpec, Comparison, Request, RequestKind};
pub use resolve::quote_name;
pub use structure::FileLoader;
pub use suggest::nearest;
pub use value::{Ty, Value};

/// Where the checker gets data from. The CLI reads the file; the language
/// server answers from its cache (possibly with only the header so far).
pub trait DataProvider {
    fn load(&self, path: &Path, options: &ReadOptions) -> Result<DataView, ReadError>;
}

/// Everything the checker found and resolved.
#[derive(Debug)]
pub struct Checked {
    /// Sorted by position in the file.
    pub diagnostics: Vec<Diagnostic>,
    /// The data file named by `source`, resolved against the model file's folder.
    pub data_path: Option<PathBuf>,
    pub data: Option<DataView>,
    pub lets: Vec<LetDef>,
    /// Column indexes of `groups A in B`, innermost first.
    pub groups: Vec<usize>,
    /// Unit and time columns of `panel`.
    pub panel: Option<(usize, usize)>,
    /// Rows ordered by unit and time, for evaluating `lag`, `lead` and `diff`.
    pub panel_index: Option<Arc<PanelIndex>>,
    pub models: Vec<ResolvedModel>,
    pub requests: Vec<Request>,
    pub comparisons: Vec<Comparison>,
}

impl Checked {
    pub fn has_errors(&self) -> bool {
        self.diagnostics
            .iter()
            .any(|d| d.severity == Severity::Error)
    }
}

/// Check a parsed file. `base_dir` is the folder of the model file: paths in
/// `source` and `plot` are relative to it.
pub fn check(text: &str, parsed: &Parsed, base_dir: &Path, data: &dyn DataProvider) -> Checked {
    let mut ctx = context::Ctx {
        text,
        diags: Vec::new(),
        data: None,
        lets: Vec::new(),
        let_index: HashMap::new(),
        let_positions: HashMap::new(),
        panel: None,
        panel_index: None,
    };
    for e in &parsed.errors {
        ctx.push(Diagnostic::error(codes::SYNTAX, e.span, e.message.clone()));
    }
    let stmts = &parsed.file.stmts;
    let data_path = ctx.load_source(stmts, base_dir, data);

    for s in stmts {
        if let StmtKind::Let { name, .. } = &s.kind {
            ctx.let_positions
                .entry(name.name.clone())
                .or_insert(s.span.end);
        }
    }

    // Structure first: `lag` anywhere needs to know about `panel`, and nesting
    // checks need the declared groups.
    let mut groups = Vec::new();
    let mut seen_groups = false;
    let mut seen_panel = false;
    for s in stmts {
        match &s.kind {
            StmtKind::Groups { levels } => {
                if seen_groups {
                    ctx.push(Diagnostic::error(
                        codes::SECOND_STRUCTURE,
                        s.span,
                        "the nesting is already declared; write all levels on one line: `groups team in dept`",
                    ));
                    continue;
                }
                seen_groups = true;
                groups = ctx.check_groups(levels, s.span);
            }
            StmtKind::Panel { unit, time } => {
                if seen_panel {
                    ctx.push(Diagnostic::error(
                        codes::SECOND_STRUCTURE,
                        s.span,
                        "the panel is already declared; a file has one `panel UNIT over TIME`",
                    ));
                    continue;
                }
                seen_panel = true;
                ctx.check_panel(unit, time);
            }
            _ => {}
        }
    }
    let mut structure = groups.clone();
    if let Some((u, t)) = ctx.panel {
        structure.push(u);
        structure.push(t);
    }

    // Top-level `where` applies to every model, wherever it stands.
    let mut top_filters = Vec::new();
    for s in stmts {
        if let StmtKind::Where { cond } = &s.kind {
            if let Some(v) = ctx.check_where(cond) {
                top_filters.push(v);
            }
        }
    }

    let mut models: Vec<ResolvedModel> = Vec::new();
    let mut requests = Vec::new();
    let mut comparisons = Vec::new();
    for s in stmts {
        match &s.kind {
            StmtKind::Let { name, value } => ctx.check_let(name, value, s.span),
            StmtKind::Model(m) => {
                if models.iter().any(|o| o.name == m.name.name) {
                    let msg = format!(
                        "a model named `{}` is already defined; give each model its own name",
                        m.name.name
                    );
                    ctx.push(Diagnostic::error(codes::DUPLICATE_NAME, m.name.span, msg));
                    continue;
                }
                let rm = ctx.check_model(m, &top_filters, &structure);
                models.push(rm);
            }
            StmtKind::Compare { models: names } => {
                if let Some(c) = ctx.check_compare(names, s.span, &models) {
                    comparisons.push(c);
                }
            }
            kind @ (StmtKind::Probe { .. }
            | StmtKind::Regions { .. }
            | StmtKind::Turning { .. }
            | StmtKind::Effect { .. }
            | StmtKind::Plot { .. }) => {
                if let Some(r) = ctx.check_request(kind, s.span, &models, base_dir) {
                    requests.push(r);
                }
            }
            StmtKind::Source { .. }
            | StmtKind::Groups { .. }
            | StmtKind::Panel { .. }
            | StmtKind::Where { .. }
            | StmtKind::Error => {}
        }
    }

    let mut diagnostics = std::mem::take(&mut ctx.diags);
    diagnostics.sort_by_key(|d| (d.span.start, d.severity, d.span.end));
    diagnostics.dedup();
    Checked {
        diagnostics,
        data_path,
        data: ctx.data.take(),
        lets: std::mem::take(&mut ctx.lets),
        groups,
        panel: ctx.panel,
        panel_index: ctx.panel_index.take(),
        models,
        requests,
        comparisons,
    }
}
