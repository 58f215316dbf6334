//! One run of the checker over a document's text, kept until the next run so
//! that requests (hover, code actions) can answer from it.

use std::collections::HashSet;
use std::path::Path;
use std::sync::Arc;

use check::{Checked, DataProvider, Diagnostic, ResolvedModel};
use syntax::{LineIndex, Parsed};

use crate::incremental::UnitCache;
use crate::index::SymbolIndex;

/// The checker's findings for one version of a document.
pub struct Analysis {
    pub version: i32,
    pub text: Arc<str>,
    pub index: LineIndex,
    pub parsed: Parsed,
    /// The checker's last run (data, lets, structure); after a partial run
    /// its models and diagnostics are only those it was asked to check.
    pub checked: Checked,
    /// Every diagnostic of the file, sorted by position.
    pub diagnostics: Vec<Diagnostic>,
    /// Every model of the file, in order.
    pub models: Vec<Arc<ResolvedModel>>,
}

/// Parse and check with the same checker as `slopewise check`, with data
/// from the cache, re-checking only the models and requests that changed.
pub fn analyze(
    text: Arc<str>,
    version: i32,
    base_dir: &Path,
    data: &dyn DataProvider,
    units: &mut UnitCache,
) -> Analysis {
    let parsed = syntax::parse(&text);
    let outcome = crate::incremental::check(&text, &parsed, base_dir, data, units);
    Analysis {
        version,
        index: LineIndex::new(&text),
        text,
        parsed,
        checked: outcome.checked,
        diagnostics: outcome.diagnostics,
        models: outcome.models,
    }
}

impl Analysis {
    pub fn column_names(&self) -> Vec<&str> {
        self.checked
            .data
            .as_ref()
            .map(|d| d.frame.columns().iter().map(|c| c.name.as_str()).collect())
            .unwrap_or_default()
    }
}

/// The symbol index of a parse, with column names from the last analysis.
pub fn symbols(parsed: &Parsed, last: Option<&Analysis>) -> SymbolIndex {
    let names: Vec<&str> = last.map(|a| a.column_names()).unwrap_or_default();
    let set: HashSet<&str> = names.into_iter().collect();
    SymbolIndex::build(parsed, &set)
}
