//! Covariance estimators for a least-squares fit: classical, HC1, HC3 and
//! cluster-robust (one- and two-way).
//!
//! Every matrix returned is over the kept columns, in the order of
//! [`Ols::kept`]; [`expand_vcov`] spreads one over all columns with NaN for
//! aliased ones. The sandwich `V·M·V` uses `V = (X'X)⁻¹` from the fit
//! (computed from R) and a meat `M` summed by blocks of rows with no copy of
//! the data and no per-row allocation ([`blocks`]).

use faer::{Mat, MatRef, Side};

use super::blocks;
use super::{GroupCodes, NumericError, Ols};

/// Threshold of HC3: a leverage `h ≥ 1 − LEVERAGE_ONE` counts as one.
pub const LEVERAGE_ONE: f64 = 1e-12;

/// Relative size of a negative eigenvalue (to the largest in magnitude) below
/// which the two-way cluster covariance is called not positive semi-definite
/// and fixed. Smaller negative values are rounding and are clipped silently.
pub const PSD_TOLERANCE: f64 = 1e-12;

fn nan_matrix(p: usize) -> Mat<f64> {
    Mat::full(p, p, f64::NAN)
}

fn check_shapes(x: MatRef<'_, f64>, fit: &Ols) -> Result<(), NumericError> {
    if x.ncols() != fit.coef.len() || x.nrows() != fit.residuals.len() {
        return Err(NumericError::Dimension(format!(
            "X is {}×{}, the fit has {} coefficients and {} residuals",
            x.nrows(),
            x.ncols(),
            fit.coef.len(),
            fit.residuals.len()
        )));
    }
    if fit.xtx_inv.nrows() != fit.kept.len() || fit.kept.iter().any(|&j| j >= x.ncols()) {
        return Err(NumericError::Dimension(
            "the fit's kept columns and (X'X)⁻¹ disagree".into(),
        ));
    }
    Ok(())
}

/// `V·M·V·c` with `V = (X'X)⁻¹`, symmetrized.
fn sandwich(fit: &Ols, meat: &Mat<f64>, c: f64) -> Mat<f64> {
    let v = &fit.xtx_inv;
    let out = v * meat * v;
    let p = out.nrows();
    Mat::from_fn(p, p, |i, j| 0.5 * (out[(i, j)] + out[(j, i)]) * c)
}

/// Classical covariance: s²·(X'X)⁻¹ with s² = RSS / df_resid. NaN when
/// `df_resid` is not positive or the shapes disagree.
pub fn vcov_classical(fit: &Ols, df_resid: f64) -> Mat<f64> {
    let p = fit.kept.len();
    if df_resid.is_nan() || df_resid <= 0.0 || fit.xtx_inv.nrows() != p || fit.xtx_inv.ncols() != p
    {
        return nan_matrix(p);
    }
    let s2 = fit.rss / df_resid;
    Mat::from_fn(p, p, |i, j| fit.xtx_inv[(i, j)] * s2)
}

/// HC1: n/(n−k)·(X'X)⁻¹ X' diag(e²) X (X'X)⁻¹, where `dof_k` is the k in n−k
/// (coefficients plus absorbed levels). MacKinnon & White (1985).
/// NaN when `n − dof_k ≤ 0` or the shapes disagree.
pub fn vcov_hc1(x: MatRef<'_, f64>, fit: &Ols, dof_k: f64) -> Mat<f64> {
    let p = fit.kept.len();
    let n = x.nrows() as f64;
    if check_shapes(x, fit).is_err() || (n - dof_k).is_nan() || n - dof_k <= 0.0 {
        return nan_matrix(p);
    }
    let meat = blocks::weighted_cross(x, &fit.kept, &fit.residuals);
    sandwich(fit, &meat, n / (n - dof_k))
}

/// Leverages `h_i = x_i'(X'X)⁻¹x_i` over the kept columns, summed by blocks of rows ([`blocks::quadratic_forms`], no `n×p` temporary).
pub fn leverages(x: MatRef<'_, f64>, fit: &Ols) -> Result<Vec<f64>, NumericError> {
    check_shapes(x, fit)?;
    Ok(blocks::quadratic_forms(x, &fit.kept, fit.xtx_inv.as_ref()))
}

/// HC3: (X'X)⁻¹ X' diag(e²/(1−h)²) X (X'X)⁻¹; `extra_leverage` adds to each
/// row's h the leverage of absorbed indicators (1/n_g for one fixed grouping).
/// Long & Ervin (2000).
///
/// HC3 is undefined when a row's leverage is one (`h ≥ 1 − 1e-12`, see
/// [`LEVERAGE_ONE`]); this function then returns a matrix of NaN, and
/// [`vcov_hc3_checked`] says which row.
pub fn vcov_hc3(x: MatRef<'_, f64>, fit: &Ols, extra_leverage: Option<&[f64]>) -> Mat<f64> {
    vcov_hc3_checked(x, fit, extra_leverage).unwrap_or_else(|_| nan_matrix(fit.kept.len()))
}

/// [`vcov_hc3`] with the reason when it is undefined: shapes that disagree,
/// or a row of leverage one.
pub fn vcov_hc3_checked(
    x: MatRef<'_, f64>,
    fit: &Ols,
    extra_leverage: Option<&[f64]>,
) -> Result<Mat<f64>, NumericError> {
    let mut h = leverages(x, fit)?;
    if let Some(extra) = extra_leverage {
        if extra.len() != h.len() {
            return Err(NumericError::Dimension(format!(
                "{} extra leverages for {} rows",
                extra.len(),
                h.len()
            )));
        }
        h.iter_mut().zip(extra).for_each(|(hi, e)| *hi += e);
    }
    let mut w = vec![0.0; h.len()];
    for (i, (wi, &hi)) in w.iter_mut().zip(&h).enumerate() {
        if hi.is_nan() || hi >= 1.0 - LEVERAGE_ONE {
            return Err(NumericError::LeverageOne {
                row: i,
                leverage: hi,
            });
        }
        *wi = fit.residuals[i] / (1.0 - hi);
    }
    let meat = blocks::weighted_cross(x, &fit.kept, &w);
    Ok(sandwich(fit, &meat, 1.0))
}

#[derive(Clone, Debug)]
pub struct ClusterVcov {
    pub vcov: Mat<f64>,
    pub psd_fixed: bool,
    /// Number of clusters of each grouping (and of their intersection for two).
    pub n_clusters: Vec<usize>,
}

/// Cluster-robust covariance (Liang & Zeger 1986) for one grouping, or two
/// (Cameron, Gelbach & Miller 2011: V_A + V_B − V_{A∩B}), each term scaled by
/// `factor(G)` (the caller's small-sample factor given the cluster count G).
/// For two groupings, a result that is not positive semi-definite is fixed by
/// setting negative eigenvalues to zero; `psd_fixed` says whether that happened.
///
/// Never panics: on inputs [`try_vcov_cluster`] rejects, the matrix is NaN and
/// `n_clusters` is empty.
pub fn vcov_cluster(
    x: MatRef<'_, f64>,
    fit: &Ols,
    clusters: &[&GroupCodes],
    factor: &dyn Fn(usize) -> f64,
) -> ClusterVcov {
    try_vcov_cluster(x, fit, clusters, factor).unwrap_or_else(|_| ClusterVcov {
        vcov: nan_matrix(fit.kept.len()),
        psd_fixed: false,
        n_clusters: Vec::new(),
    })
}

/// [`vcov_cluster`] with a reason when the inputs do not fit.
///
/// The meat of one grouping is `Σ_g u_g u_g'` with score sums
/// `u_g = Σ_{i∈g} x_i e_i`, accumulated in one pass over the rows into a
/// G×k array. G counts groups with at least one row. For two groupings, the
/// intersection grouping (distinct pairs) gives the third term, and the sum is
/// eigen-decomposed (self-adjoint); eigenvalues below
/// `−PSD_TOLERANCE·max|λ|` set `psd_fixed`, and all negative eigenvalues are
/// set to zero.
pub fn try_vcov_cluster(
    x: MatRef<'_, f64>,
    fit: &Ols,
    clusters: &[&GroupCodes],
    factor: &dyn Fn(usize) -> f64,
) -> Result<ClusterVcov, NumericError> {
    check_shapes(x, fit)?;
    for g in clusters {
        g.validate(x.nrows())?;
    }
    match clusters {
        [a] => {
            let (v, g) = one_way(x, fit, a);
            let f = factor(g);
            Ok(ClusterVcov {
                vcov: scaled(&v, f),
                psd_fixed: false,
                n_clusters: vec![g],
            })
        }
        [a, b] => {
            let ab = GroupCodes::intersect(a, b)?;
            let (va, ga) = one_way(x, fit, a);
            let (vb, gb) = one_way(x, fit, b);
            let (vab, gab) = one_way(x, fit, &ab);
            let (fa, fb, fab) = (factor(ga), factor(gb), factor(gab));
            let p = va.nrows();
            let sum = Mat::from_fn(p, p, |i, j| {
                fa * va[(i, j)] + fb * vb[(i, j)] - fab * vab[(i, j)]
            });
            let (vcov, psd_fixed) = clip_negative(sum)?;
            Ok(ClusterVcov {
                vcov,
                psd_fixed,
                n_clusters: vec![ga, gb, gab],
            })
        }
        other => Err(NumericError::ClusterCount(other.len())),
    }
}

fn scaled(v: &Mat<f64>, f: f64) -> Mat<f64> {
    Mat::from_fn(v.nrows(), v.ncols(), |i, j| v[(i, j)] * f)
}

/// The unscaled one-way sandwich and the number of non-empty clusters.
fn one_way(x: MatRef<'_, f64>, fit: &Ols, g: &GroupCodes) -> (Mat<f64>, usize) {
    let p = fit.kept.len();
    let ng = g.n_groups();
    // One row per cluster (as the intersection of unit and period usually is):
    // the score sums are the rows' own scores, so the meat is Σ e²xxᵀ.
    if ng == x.nrows() && g.counts.iter().all(|&c| c == 1) {
        let meat = blocks::weighted_cross(x, &fit.kept, &fit.residuals);
        return (sandwich(fit, &meat, 1.0), ng);
    }
    // Score sums, row-major G×p, in one pass over the rows.
    let columns: Vec<std::borrow::Cow<'_, [f64]>> =
        fit.kept.iter().map(|&j| blocks::column(x, j)).collect();
    let mut u = vec![0.0; ng * p];
    for (i, (&c, e)) in g.codes.iter().zip(&fit.residuals).enumerate() {
        let row = &mut u[c as usize * p..(c as usize + 1) * p];
        for (slot, col) in row.iter_mut().zip(&columns) {
            *slot += col[i] * e;
        }
    }
    let meat = blocks::grouped_cross(&u, p);
    (sandwich(fit, &meat, 1.0), g.n_nonempty())
}

/// Sets negative eigenvalues to zero; reports whether any was clearly negative.
fn clip_negative(v: Mat<f64>) -> Result<(Mat<f64>, bool), NumericError> {
    let p = v.nrows();
    if p == 0 {
        return Ok((v, false));
    }
    if v.col_iter().any(|c| c.iter().any(|x| !x.is_finite())) {
        return Ok((v, false));
    }
    let evd = v
        .self_adjoint_eigen(Side::Lower)
        .map_err(|_| NumericError::Eigen)?;
    let s: Vec<f64> = (0..p).map(|i| evd.S()[i]).collect();
    let big = s.iter().fold(0.0f64, |m, l| m.max(l.abs()));
    let fixed = s.iter().any(|&l| l < -PSD_TOLERANCE * big);
    if s.iter().all(|&l| l >= 0.0) {
        return Ok((v, false));
    }
    let u = evd.U();
    let out = Mat::from_fn(p, p, |i, j| {
        (0..p)
            .map(|l| u[(i, l)] * s[l].max(0.0) * u[(j, l)])
            .sum::<f64>()
    });
    Ok((out, fixed))
}

/// A kept-column covariance spread over all `fit.coef.len()` columns, NaN in the
/// rows and columns of aliased coefficients.
pub fn expand_vcov(fit: &Ols, v: MatRef<'_, f64>) -> Mat<f64> {
    let k = fit.coef.len();
    let mut out = Mat::full(k, k, f64::NAN);
    if v.nrows() != fit.kept.len() || v.ncols() != fit.kept.len() {
        return out;
    }
    for (a, &i) in fit.kept.iter().enumerate() {
        for (b, &j) in fit.kept.iter().enumerate() {
            out[(i, j)] = v[(a, b)];
        }
    }
    out
}
