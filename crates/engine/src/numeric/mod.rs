//! The numerical core: least squares, covariance estimators and the within
//! transform, on plain columns and matrices. Knows nothing of the language.
//!
//! PUBLIC API CONTRACT: the model-fitting layer (`crate::fit`) is written
//! against these names.

use faer::{Mat, MatRef};

/// Dense group codes of one grouping over the rows being estimated.
#[derive(Clone, Debug, PartialEq)]
pub struct GroupCodes {
    /// One code per row in `0..n_groups`.
    pub codes: Vec<u32>,
    /// Rows per group.
    pub counts: Vec<u32>,
}

impl GroupCodes {
    /// Codes from arbitrary `u32` ids (re-densified; order of first appearance).
    pub fn from_ids(ids: &[u32]) -> GroupCodes {
        let _ = ids;
        todo!()
    }
    pub fn n_groups(&self) -> usize {
        self.counts.len()
    }
}

/// Rows to keep after removing, repeatedly, every row that is alone in its group
/// in any grouping (removing one can create another). Returns the mask and the
/// number of rows removed.
pub fn singleton_rows(groupings: &[GroupCodes]) -> (Vec<bool>, usize) {
    let _ = groupings;
    todo!()
}

/// How the within transform ended.
#[derive(Clone, Debug, PartialEq)]
pub struct Demeaned {
    pub iterations: usize,
    pub converged: bool,
    /// The largest change of any value in the last sweep, relative to the column's scale.
    pub last_change: f64,
}

/// Sweep the means of every grouping out of each column, in place: the residual
/// of projecting on all groupings' indicators at once (alternating projections
/// with acceleration). Converged when the largest change in a sweep falls below
/// `tol` relative to the column's scale. One grouping needs one exact sweep.
pub fn demean(columns: &mut [Vec<f64>], groupings: &[GroupCodes], tol: f64, max_iter: usize) -> Demeaned {
    let _ = (columns, groupings, tol, max_iter);
    todo!()
}

/// Levels of the absorbed groupings that are redundant (not estimable
/// separately): 1 for one grouping (the intercept), the number of connected
/// components of the bipartite group graph for two; for more, the rule stated in
/// the implementation's doc comment.
pub fn redundant_levels(groupings: &[GroupCodes]) -> usize {
    let _ = groupings;
    todo!()
}

/// Whether every group of `inner` lies inside one group of `outer`.
pub fn nested_in(inner: &GroupCodes, outer: &GroupCodes) -> bool {
    let _ = (inner, outer);
    todo!()
}

/// A least-squares solution by column-pivoted QR.
#[derive(Clone, Debug)]
pub struct Ols {
    /// One per column of X; NaN for an aliased (collinear) column.
    pub coef: Vec<f64>,
    pub residuals: Vec<f64>,
    /// (X'X)⁻¹ over the kept columns, in the order of `kept`.
    pub xtx_inv: Mat<f64>,
    /// Column indexes kept (full rank), ascending.
    pub kept: Vec<usize>,
    /// Column indexes found collinear with earlier columns, ascending.
    pub aliased: Vec<usize>,
    pub rss: f64,
}

/// Least squares of `y` on the columns of `x`. Collinearity is decided by the
/// pivoted QR's diagonal relative to the largest (tolerance stated in the doc
/// of the implementation); aliased columns are reported, not an error here.
pub fn ols(x: MatRef<'_, f64>, y: &[f64]) -> Ols {
    let _ = (x, y);
    todo!()
}

/// Classical covariance: s²·(X'X)⁻¹ with s² = RSS / df_resid.
pub fn vcov_classical(fit: &Ols, df_resid: f64) -> Mat<f64> {
    let _ = (fit, df_resid);
    todo!()
}

/// HC1: n/(n−k)·(X'X)⁻¹ X' diag(e²) X (X'X)⁻¹, where `dof_k` is the k in n−k
/// (coefficients plus absorbed levels). MacKinnon & White (1985).
pub fn vcov_hc1(x: MatRef<'_, f64>, fit: &Ols, dof_k: f64) -> Mat<f64> {
    let _ = (x, fit, dof_k);
    todo!()
}

/// HC3: (X'X)⁻¹ X' diag(e²/(1−h)²) X (X'X)⁻¹; `extra_leverage` adds to each
/// row's h the leverage of absorbed indicators (1/n_g for one fixed grouping).
/// Long & Ervin (2000).
pub fn vcov_hc3(x: MatRef<'_, f64>, fit: &Ols, extra_leverage: Option<&[f64]>) -> Mat<f64> {
    let _ = (x, fit, extra_leverage);
    todo!()
}

/// Cluster-robust covariance (Liang & Zeger 1986) for one grouping, or two
/// (Cameron, Gelbach & Miller 2011: V_A + V_B − V_{A∩B}), each term scaled by
/// `factor(G)` (the caller's small-sample factor given the cluster count G).
/// For two groupings, a result that is not positive semi-definite is fixed by
/// setting negative eigenvalues to zero; `psd_fixed` says whether that happened.
pub fn vcov_cluster(
    x: MatRef<'_, f64>,
    fit: &Ols,
    clusters: &[&GroupCodes],
    factor: &dyn Fn(usize) -> f64,
) -> ClusterVcov {
    let _ = (x, fit, clusters, factor);
    todo!()
}

#[derive(Clone, Debug)]
pub struct ClusterVcov {
    pub vcov: Mat<f64>,
    pub psd_fixed: bool,
    /// Number of clusters of each grouping (and of their intersection for two).
    pub n_clusters: Vec<usize>,
}
