//! Reports of fitted models: aligned terminal tables, the JSON document of the
//! design (the stable machine interface) and markdown tables for manuscripts.
//! Everything here reads the engine's public results; nothing is computed
//! except formatting.

pub mod figure;
mod json;
mod json_probe;
mod markdown;
mod markdown_probe;
mod numbers;
mod probe_words;
mod text;
mod text_probe;

pub use json::document;
pub use markdown::markdown;
pub use numbers::{apa_p, number};
pub use text::text;

pub use engine::probe::Output;
use engine::{Comparison, ModelFit};

/// What one `slopewise fit` run produced, in file order.
pub struct Results<'a> {
    pub fits: &'a [ModelFit],
    pub comparisons: &'a [Comparison],
    /// Probing statements that were computed, in file order.
    pub probing: &'a [Output],
    /// Diagnostics with 1-based line and column.
    pub diagnostics: &'a [DiagnosticLine],
}

/// A diagnostic as reports show it.
#[derive(Clone, Debug, PartialEq)]
pub struct DiagnosticLine {
    pub severity: &'static str,
    pub message: String,
    pub line: usize,
    pub column: usize,
}

impl Results<'_> {
    /// The fit a probing result belongs to, for the notes under it.
    fn fit_named(&self, name: &str) -> Option<&ModelFit> {
        self.fits.iter().find(|f| f.name == name)
    }
}

/// Plain-words name of a model's kind, for titles.
fn kind_words(fit: &ModelFit) -> &'static str {
    match fit.kind {
        check::Kind::Ols => "least squares",
        check::Kind::Within => "fixed effects (within)",
        check::Kind::Mixed => "mixed model",
    }
}

/// The note naming the standard errors and the df of the tests.
fn errors_note(fit: &ModelFit) -> String {
    use check::ErrorsKind::*;
    let se = match fit.errors {
        Classical => "classical standard errors".to_string(),
        Hc1 => "heteroskedasticity-consistent standard errors (HC1)".to_string(),
        Hc3 => "heteroskedasticity-consistent standard errors (HC3)".to_string(),
        Cluster => {
            let groups: Vec<String> = fit
                .cluster
                .iter()
                .zip(&fit.n_clusters)
                .map(|(g, n)| format!("{g} ({} clusters)", check::count(*n)))
                .collect();
            let factors: Vec<String> = fit
                .cluster_factors
                .iter()
                .map(|f| format!("{f:.6}"))
                .collect();
            let kind = if fit.cluster.len() == 2 {
                "two-way clustered standard errors (sum of the two one-way terms minus their intersection)"
            } else {
                "clustered standard errors (CR1)"
            };
            format!(
                "{kind} by {}; small-sample factor G/(G−1)·(N−1)/(N−K) = {}",
                groups.join(" and "),
                factors.join(", ")
            )
        }
    };
    let df = match fit.errors {
        Cluster => format!(
            "t tests and intervals on {} df (clusters − 1)",
            number(fit.df_inference)
        ),
        _ => format!(
            "t tests and intervals on {} residual df",
            number(fit.df_inference)
        ),
    };
    format!("{se}; {df}")
}

/// The note accounting for every row of the data.
fn rows_note(fit: &ModelFit) -> String {
    let d = &fit.dropped;
    let mut parts = Vec::new();
    if d.where_excluded > 0 {
        parts.push(format!(
            "{} excluded by `where`",
            check::count(d.where_excluded)
        ));
    }
    if d.missing > 0 {
        let by: Vec<String> = d
            .missing_by
            .iter()
            .map(|(v, n)| format!("{v} {}", check::count(*n)))
            .collect();
        parts.push(format!(
            "{} dropped for missing values ({})",
            check::count(d.missing),
            by.join(", ")
        ));
    }
    if d.singletons > 0 {
        parts.push(format!(
            "{} dropped as singletons of a fixed grouping",
            check::count(d.singletons)
        ));
    }
    if parts.is_empty() {
        format!("all {} rows used", check::count(fit.n_obs))
    } else {
        format!(
            "{} rows used; {}",
            check::count(fit.n_obs),
            parts.join(", ")
        )
    }
}

/// "firm 400, year 17".
fn groups_words(fit: &ModelFit) -> String {
    fit.n_groups
        .iter()
        .map(|(g, n)| format!("{g} {}", check::count(*n)))
        .collect::<Vec<_>>()
        .join(", ")
}
