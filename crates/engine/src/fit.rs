//! Fitting one checked model: design, within transform, least squares,
//! covariance, degrees of freedom and tests.
//!
//! Degrees of freedom (common practice): the absorbed fixed-effect levels count
//! against the residual df; for clustered errors, levels nested in a cluster
//! grouping do not count in the small-sample factor's K, and tests use G − 1 df
//! (the smaller G for two-way clustering).

use check::{DfMethod, ErrorsKind, Kind, PanelIndex, ResolvedModel};
use faer::Mat;
use frame::Frame;
use statrs::distribution::{ContinuousCDF, StudentsT};

use crate::design::{build, Design};
use crate::numeric::{
    demean, nested_in, ols, redundant_levels, vcov_classical, vcov_cluster, vcov_hc1, vcov_hc3,
    GroupCodes,
};
use crate::FitError;

/// Settings of the numerical work.
#[derive(Clone, Debug)]
pub struct FitOptions {
    /// Convergence tolerance of the within transform: the largest change in a
    /// sweep relative to the column's scale.
    pub tolerance: f64,
    pub max_iterations: usize,
    /// Confidence level of the intervals.
    pub level: f64,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            tolerance: 1e-10,
            max_iterations: 10_000,
            level: 0.95,
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct Coefficient {
    pub term: String,
    pub estimate: f64,
    pub std_error: f64,
    pub df: f64,
    pub t: f64,
    pub p: f64,
    pub ci_low: f64,
    pub ci_high: f64,
}

#[derive(Clone, Debug, PartialEq)]
pub struct FitStats {
    pub r2: f64,
    pub r2_adj: f64,
    /// Share of the within-group variation explained (models with `fixed`).
    pub r2_within: Option<f64>,
    /// Gaussian log-likelihood at the least-squares fit, with σ² = RSS/N.
    pub loglik: f64,
    /// −2 log-likelihood.
    pub deviance: f64,
    /// −2 loglik + 2p, with p the coefficients, the absorbed levels and σ².
    pub aic: f64,
    pub bic: f64,
    pub converged: bool,
    /// Sweeps of the within transform (0 without fixed effects).
    pub iterations: usize,
    /// The convergence tolerance the within transform used.
    pub tolerance: f64,
    pub rss: f64,
}

/// Rows of the data and why they were not used.
#[derive(Clone, Debug, PartialEq)]
pub struct Dropped {
    pub where_excluded: usize,
    pub missing: usize,
    /// For each variable, the rows it was missing in (a row can count for several).
    pub missing_by: Vec<(String, usize)>,
    pub singletons: usize,
}

/// Everything estimated for one model.
#[derive(Clone, Debug)]
pub struct ModelFit {
    pub name: String,
    pub kind: Kind,
    pub outcome: String,
    pub n_obs: usize,
    /// Groups of each fixed or cluster grouping in the estimation sample.
    pub n_groups: Vec<(String, usize)>,
    pub dropped: Dropped,
    pub coefficients: Vec<Coefficient>,
    /// Covariance of the coefficients, in their order.
    pub vcov: Mat<f64>,
    pub errors: ErrorsKind,
    pub cluster: Vec<String>,
    /// The small-sample factor of clustered errors (per grouping, in `cluster` order).
    pub cluster_factors: Vec<f64>,
    /// Clusters of each grouping (and their intersection for two-way clustering).
    pub n_clusters: Vec<usize>,
    pub df_resid: f64,
    /// The df of t tests and intervals: residual df, or clusters − 1.
    pub df_inference: f64,
    pub df_method: DfMethod,
    /// Levels of the fixed groupings estimated (absorbed), after redundancy.
    pub absorbed_levels: usize,
    pub stats: FitStats,
    /// Sentences for the notes under the table: dropped terms, corrections made.
    pub notes: Vec<String>,
    pub design: Design,
    /// Wall-clock seconds of each stage (`design`, `within`, `least squares`,
    /// `covariance`), for benchmarks; not part of any report.
    pub timings: Vec<(&'static str, f64)>,
}

/// Fit a checked model of kind `ols` or `within`.
pub fn fit(
    model: &ResolvedModel,
    frame: &Frame,
    panel: Option<&PanelIndex>,
    options: &FitOptions,
) -> Result<ModelFit, FitError> {
    let err = |message: String| FitError {
        model: model.name.clone(),
        message,
    };
    if !model.valid {
        return Err(err(
            "the model has errors; run `slopewise check` to see them".into(),
        ));
    }
    if model.kind == Kind::Mixed {
        return Err(err(
            "mixed models (with `vary`) cannot be estimated by this version yet; models with `fixed` or neither can".into(),
        ));
    }
    let started = std::time::Instant::now();
    let design = build(model, frame, panel)?;
    let design_secs = started.elapsed().as_secs_f64();
    let mut fit = estimate(model, design, options)?;
    fit.timings.insert(0, ("design", design_secs));
    Ok(fit)
}

/// Estimate a model from a design already built on its sample (pre-transform
/// columns). Split from [`fit`] so that resampling methods can refit a
/// rearranged design without evaluating the terms again; `model` supplies only
/// the settings (errors, df method, kind) and the row account.
pub fn estimate(
    model: &ResolvedModel,
    mut design: Design,
    options: &FitOptions,
) -> Result<ModelFit, FitError> {
    let err = |message: String| FitError {
        model: model.name.clone(),
        message,
    };
    let n = design.rows.len();
    let mut timings = Vec::new();
    let mut stage = std::time::Instant::now();
    let mut lap = |name: &'static str, timings: &mut Vec<(&'static str, f64)>| {
        timings.push((name, stage.elapsed().as_secs_f64()));
        stage = std::time::Instant::now();
    };
    let y_raw = design.y.clone();
    let mut notes = Vec::new();

    // Within transform: sweep the fixed groupings out of y and every column.
    let codes: Vec<GroupCodes> = design.fixed.iter().map(|(_, c)| c.clone()).collect();
    let mut iterations = 0;
    let mut converged = true;
    let mut scales = Vec::new();
    if !codes.is_empty() {
        let mut cols: Vec<Vec<f64>> = Vec::with_capacity(design.columns.len() + 1);
        cols.push(std::mem::take(&mut design.y));
        scales = design.columns.iter().map(|c| norm(c)).collect();
        cols.append(&mut design.columns);
        let d = demean(&mut cols, &codes, options.tolerance, options.max_iterations);
        iterations = d.iterations;
        converged = d.converged;
        design.y = cols.remove(0);
        design.columns = cols;
        if !converged {
            return Err(err(format!(
                "the within transform did not converge: after {} sweeps the largest change was {:.2e}, above the tolerance {:.0e}; no estimates are reported",
                d.iterations, d.last_change, options.tolerance
            )));
        }
    }
    // Columns the fixed effects absorb come out of the within transform as
    // (numerically) zero: drop them with a note before least squares, which
    // would otherwise rescale the rounding noise into a column of its own.
    if !codes.is_empty() {
        let mut j = 0;
        while j < design.columns.len() {
            if norm(&design.columns[j]) <= 1e-9 * scales[j].max(f64::MIN_POSITIVE) {
                notes.push(format!(
                    "`{}` does not vary within the fixed effects and was dropped",
                    design.labels[j]
                ));
                design.columns.remove(j);
                design.labels.remove(j);
                design.term_of.remove(j);
                scales.remove(j);
            } else {
                j += 1;
            }
        }
        if design.columns.is_empty() {
            return Err(err(
                "every term is absorbed by the fixed effects; nothing is left to estimate".into(),
            ));
        }
    }
    let k_all = design.columns.len();
    if k_all == 0 {
        return Err(err("the model has no terms to estimate".into()));
    }
    lap("within", &mut timings);
    let x = Mat::from_fn(n, k_all, |i, j| design.columns[j][i]);
    let solved = ols(x.as_ref(), &design.y);
    lap("least squares", &mut timings);

    // Aliased columns now mean a genuine collinearity among the terms: an error naming them.
    if let Some(&j) = solved.aliased.first() {
        let partners = collinear_partners(&design, &solved.kept, j);
        return Err(err(format!(
            "the terms are collinear: `{}` is a linear combination of {}; remove one of them",
            design.labels[j],
            if partners.is_empty() {
                "the other terms".to_string()
            } else {
                partners.join(", ")
            }
        )));
    }
    let k = solved.kept.len();
    // Nothing is aliased past this point, so every column of `x` is kept.
    debug_assert_eq!(k, k_all);
    let xk = x;

    let absorbed_levels = absorbed_rank(&codes);
    let df_resid = n as f64 - k as f64 - absorbed_levels as f64;
    if df_resid <= 0.0 {
        return Err(err(format!(
            "no residual degrees of freedom: {n} rows for {k} coefficients and {absorbed_levels} absorbed levels"
        )));
    }

    let mut cluster_factors = Vec::new();
    let mut n_clusters = Vec::new();
    let (vcov, df_inference) = match model.errors {
        ErrorsKind::Classical => (vcov_classical(&solved, df_resid), df_resid),
        ErrorsKind::Hc1 => (
            vcov_hc1(xk.as_ref(), &solved, (k + absorbed_levels) as f64),
            df_resid,
        ),
        ErrorsKind::Hc3 => {
            let extra = match codes.len() {
                0 => None,
                1 => Some(codes[0].codes.iter().map(|&c| 1.0 / codes[0].counts[c as usize] as f64).collect::<Vec<_>>()),
                _ => {
                    return Err(err(
                        "hc3 errors need the leverage of every row, which is not available with more than one fixed grouping; use hc1 or clustered errors".into(),
                    ))
                }
            };
            (vcov_hc3(xk.as_ref(), &solved, extra.as_deref()), df_resid)
        }
        ErrorsKind::Cluster => {
            let nested: usize = design
                .fixed
                .iter()
                .filter(|(_, f)| design.clusters.iter().any(|(_, c)| nested_in(f, c)))
                .map(|(_, f)| f.n_groups())
                .sum();
            let k_c = k as f64 + absorbed_levels.saturating_sub(nested) as f64;
            let nf = n as f64;
            let factor = move |g: usize| {
                let g = g as f64;
                g / (g - 1.0) * (nf - 1.0) / (nf - k_c)
            };
            let groups: Vec<&GroupCodes> = design.clusters.iter().map(|(_, c)| c).collect();
            let cv = vcov_cluster(xk.as_ref(), &solved, &groups, &factor);
            if cv.psd_fixed {
                notes.push("the two-way clustered covariance was not positive semi-definite; its negative eigenvalues were set to zero".into());
            }
            let g_min = design
                .clusters
                .iter()
                .map(|(_, c)| c.n_groups())
                .min()
                .unwrap_or(0);
            if g_min < 2 {
                return Err(err("clustered errors need at least two clusters".into()));
            }
            cluster_factors = design
                .clusters
                .iter()
                .map(|(_, c)| factor(c.n_groups()))
                .collect();
            n_clusters = cv.n_clusters.clone();
            (cv.vcov, (g_min - 1) as f64)
        }
    };

    lap("covariance", &mut timings);
    let t_dist = StudentsT::new(0.0, 1.0, df_inference)
        .map_err(|e| err(format!("invalid t distribution: {e}")))?;
    let q = t_dist.inverse_cdf(0.5 + options.level / 2.0);
    let coefficients = solved
        .kept
        .iter()
        .enumerate()
        .map(|(i, &j)| {
            let estimate = solved.coef[j];
            let std_error = vcov[(i, i)].max(0.0).sqrt();
            let t = estimate / std_error;
            Coefficient {
                term: design.labels[j].clone(),
                estimate,
                std_error,
                df: df_inference,
                t,
                p: 2.0 * t_dist.sf(t.abs()),
                ci_low: estimate - q * std_error,
                ci_high: estimate + q * std_error,
            }
        })
        .collect();

    let rss = solved.rss;
    let mean = y_raw.iter().sum::<f64>() / n as f64;
    let tss: f64 = y_raw.iter().map(|v| (v - mean).powi(2)).sum();
    let r2 = 1.0 - rss / tss;
    let r2_within =
        (!codes.is_empty()).then(|| 1.0 - rss / design.y.iter().map(|v| v * v).sum::<f64>());
    let nf = n as f64;
    let loglik = -nf / 2.0 * ((2.0 * std::f64::consts::PI * rss / nf).ln() + 1.0);
    let params = (k + absorbed_levels + 1) as f64;
    let rows = model.rows.as_ref();
    let mut n_groups: Vec<(String, usize)> = design
        .fixed
        .iter()
        .map(|(g, c)| (g.clone(), c.n_groups()))
        .collect();
    for (g, c) in &design.clusters {
        if !n_groups.iter().any(|(h, _)| h == g) {
            n_groups.push((g.clone(), c.n_groups()));
        }
    }
    Ok(ModelFit {
        name: model.name.clone(),
        kind: model.kind,
        outcome: model
            .outcome
            .as_ref()
            .map(|o| o.label.clone())
            .unwrap_or_default(),
        n_obs: n,
        n_groups,
        dropped: Dropped {
            where_excluded: rows.map_or(0, |r| r.excluded_by_where),
            missing: rows.map_or(0, |r| r.dropped_missing),
            missing_by: rows.map_or_else(Vec::new, |r| r.missing_by.clone()),
            singletons: design.singletons,
        },
        coefficients,
        vcov,
        errors: model.errors,
        cluster: design.clusters.iter().map(|(g, _)| g.clone()).collect(),
        cluster_factors,
        n_clusters,
        df_resid,
        df_inference,
        df_method: model.df,
        absorbed_levels,
        stats: FitStats {
            r2,
            r2_adj: 1.0 - (1.0 - r2) * (nf - 1.0) / df_resid,
            r2_within,
            loglik,
            deviance: -2.0 * loglik,
            aic: -2.0 * loglik + 2.0 * params,
            bic: -2.0 * loglik + nf.ln() * params,
            converged,
            iterations,
            tolerance: options.tolerance,
            rss,
        },
        notes,
        design,
        timings,
    })
}

/// The rank of the indicator matrices of the fixed groupings together: the
/// levels actually estimated. One grouping: all its levels; several: the sum
/// less the redundant levels.
fn absorbed_rank(codes: &[GroupCodes]) -> usize {
    match codes.len() {
        0 => 0,
        1 => codes[0].n_groups(),
        _ => {
            let total: usize = codes.iter().map(GroupCodes::n_groups).sum();
            total.saturating_sub(redundant_levels(codes))
        }
    }
}

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// The kept columns that an aliased column is a combination of.
fn collinear_partners(design: &Design, kept: &[usize], j: usize) -> Vec<String> {
    let n = design.rows.len();
    let x = Mat::from_fn(n, kept.len(), |i, c| design.columns[kept[c]][i]);
    let aux = ols(x.as_ref(), &design.columns[j]);
    let scale = norm(&design.columns[j]).max(f64::MIN_POSITIVE);
    kept.iter()
        .zip(&aux.coef)
        .filter(|(&c, b)| b.is_finite() && (b.abs() * norm(&design.columns[c])) > 1e-6 * scale)
        .map(|(&c, _)| format!("`{}`", design.labels[c]))
        .collect()
}
