//! Least squares by Householder QR with a pivoted-QR rank decision.

use faer::{Mat, MatRef};

use super::blocks;
use super::NumericError;

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

/// The relative rank tolerance for `n` rows and `k` columns: `max(n, k)·ε`,
/// the threshold rank-revealing factorizations use (the rank rule for singular
/// values). Applied to columns scaled to unit length, so it reads: a column is
/// collinear when its distance from the span of the columns kept before it is
/// at most `max(n, k)·ε` of the largest column length.
pub fn rank_tolerance(n: usize, k: usize) -> f64 {
    n.max(k).max(1) as f64 * f64::EPSILON
}

/// Least squares of `y` on the columns of `x`; see [`try_ols`] for the
/// algorithm. Never panics: on inputs `try_ols` rejects (lengths that differ,
/// NaN or infinite values) every column is reported aliased, the coefficients
/// and residuals are NaN and `rss` is NaN.
pub fn ols(x: MatRef<'_, f64>, y: &[f64]) -> Ols {
    match try_ols(x, y) {
        Ok(fit) => fit,
        Err(_) => Ols {
            coef: vec![f64::NAN; x.ncols()],
            residuals: vec![f64::NAN; y.len()],
            xtx_inv: Mat::zeros(0, 0),
            kept: Vec::new(),
            aliased: (0..x.ncols()).collect(),
            rss: f64::NAN,
        },
    }
}

/// Least squares of `y` on the columns of `x`, with collinear columns aliased.
///
/// Algorithm:
/// 1. Scale every column of X (and y) to unit Euclidean length, so the rank
///    decision does not depend on units; an all-zero column is aliased at once.
/// 2. Householder QR of `[X y]` by blocks of rows ([`blocks::tall_r`], one pass over the data): `R₀` is a small
///    `(k+1)`-column triangle with the same inner products as `[X y]`, so every
///    later step works on it alone.
/// 3. Rank `r` = the number of diagonal entries of the column-pivoted QR of
///    `R₀`'s X part with `|R_ii| > tol·|R_11|`, `tol = max(n, k)·ε`
///    ([`rank_tolerance`]).
/// 4. Which columns to keep: in the original order, a column is kept when its
///    distance from the span of the columns kept before it (classical
///    Gram–Schmidt with re-orthogonalization) exceeds `tol·|R_11|`, until `r`
///    columns are kept. So of a collinear set the *later* columns are aliased,
///    deterministically.
/// 5. The fit on the kept columns: QR of their part of `R₀`; coefficients by
///    back substitution; `(X'X)⁻¹ = R⁻¹R⁻ᵀ` (never by inverting X'X),
///    unscaled; residuals `y − Xb` from the original data.
///
/// With no rows every column is aliased. With fewer rows than columns at most
/// `n` columns are kept.
pub fn try_ols(x: MatRef<'_, f64>, y: &[f64]) -> Result<Ols, NumericError> {
    let (n, k) = (x.nrows(), x.ncols());
    if y.len() != n {
        return Err(NumericError::Dimension(format!(
            "X has {n} rows, y has {} values",
            y.len()
        )));
    }
    let y_scale = norm2(y);
    if !y_scale.is_finite() {
        return Err(NumericError::NonFinite("the outcome".into()));
    }
    let mut scale = vec![0.0; k];
    for (j, s) in scale.iter_mut().enumerate() {
        *s = norm2(&blocks::column(x, j));
        if !s.is_finite() {
            return Err(NumericError::NonFinite(format!("column {j} of X")));
        }
    }
    let nonzero: Vec<usize> = (0..k).filter(|&j| scale[j] > 0.0).collect();
    let y_scale = if y_scale > 0.0 { y_scale } else { 1.0 };

    let (kept, small) = if n == 0 || nonzero.is_empty() {
        (Vec::new(), Mat::zeros(0, 0))
    } else {
        choose_columns(x, y, &scale, y_scale, &nonzero)
    };
    let p = kept.len();

    // The fit on the kept columns.
    let mut coef = vec![f64::NAN; k];
    let mut xtx_inv = Mat::zeros(p, p);
    let mut residuals = y.to_vec();
    if p > 0 {
        // `small` is [A_K c]: the kept columns' part of R₀ and Q'y. Its QR gives
        // the triangle of the kept columns and their Q'y, with no further pass
        // over the data.
        let r0 = small.qr().thin_R().to_owned();
        let r = Mat::from_fn(p, p, |i, j| if i <= j { r0[(i, j)] } else { 0.0 });
        let qty: Vec<f64> = (0..p).map(|i| r0[(i, p)]).collect();
        let rinv = upper_inverse(r.as_ref());
        for a in 0..p {
            let mut b = 0.0;
            for (l, q) in qty.iter().enumerate().skip(a) {
                b += rinv[(a, l)] * q;
            }
            coef[kept[a]] = b * y_scale / scale[kept[a]];
        }
        for a in 0..p {
            for b in 0..=a {
                // (R⁻¹R⁻ᵀ)_ab = Σ_l R⁻¹_al R⁻¹_bl, l ≥ max(a, b).
                let mut s = 0.0;
                for l in a..p {
                    s += rinv[(a, l)] * rinv[(b, l)];
                }
                let v = s / (scale[kept[a]] * scale[kept[b]]);
                xtx_inv[(a, b)] = v;
                xtx_inv[(b, a)] = v;
            }
        }
        let kept_columns: Vec<std::borrow::Cow<'_, [f64]>> =
            kept.iter().map(|&j| blocks::column(x, j)).collect();
        let kept_coef: Vec<f64> = kept.iter().map(|&j| coef[j]).collect();
        blocks::subtract_fitted(&mut residuals, &kept_columns, &kept_coef);
    }
    let rss = residuals.iter().map(|e| e * e).sum();
    let aliased = (0..k).filter(|j| !kept.contains(j)).collect();
    Ok(Ols {
        coef,
        residuals,
        xtx_inv,
        kept,
        aliased,
        rss,
    })
}

/// Steps 2–4 of [`try_ols`]: the kept columns among `nonzero`, ascending, and
/// the small matrix `[A_K c]` (the kept columns of `R₀` and its last column).
fn choose_columns(
    x: MatRef<'_, f64>,
    y: &[f64],
    scale: &[f64],
    y_scale: f64,
    nonzero: &[usize],
) -> (Vec<usize>, Mat<f64>) {
    let (n, k) = (x.nrows(), x.ncols());
    let q = nonzero.len();
    let owned: Vec<std::borrow::Cow<'_, [f64]>> =
        nonzero.iter().map(|&j| blocks::column(x, j)).collect();
    let mut columns: Vec<&[f64]> = owned.iter().map(|c| c.as_ref()).collect();
    columns.push(y);
    let mut scales: Vec<f64> = nonzero.iter().map(|&j| scale[j]).collect();
    scales.push(y_scale);
    let r0 = blocks::tall_r(&columns, &scales);
    let rows = r0.nrows();
    let a = Mat::from_fn(rows, q, |i, j| if i <= j { r0[(i, j)] } else { 0.0 });
    let tol = rank_tolerance(n, k);
    let piv = a.col_piv_qr();
    let rp = piv.thin_R();
    let diag = rows.min(q);
    let r11 = if diag > 0 { rp[(0, 0)].abs() } else { 0.0 };
    if r11 == 0.0 || !r11.is_finite() {
        return (Vec::new(), Mat::zeros(0, 0));
    }
    let threshold = tol * r11;
    let rank = (0..diag).filter(|&i| rp[(i, i)].abs() > threshold).count();

    // Greedy in the original order: keep a column if it is far enough from the
    // span of those kept before it.
    let mut basis: Vec<Vec<f64>> = Vec::with_capacity(rank);
    let mut kept = Vec::with_capacity(rank);
    let mut kept_pos = Vec::with_capacity(rank);
    for (j, &col) in nonzero.iter().enumerate() {
        if basis.len() == rank {
            break;
        }
        let mut v: Vec<f64> = (0..rows).map(|i| a[(i, j)]).collect();
        for _ in 0..2 {
            let proj: Vec<f64> = basis.iter().map(|b| dot(b, &v)).collect();
            for (b, c) in basis.iter().zip(&proj) {
                for (vi, bi) in v.iter_mut().zip(b) {
                    *vi -= c * bi;
                }
            }
        }
        let d = norm2(&v);
        if d > threshold {
            v.iter_mut().for_each(|vi| *vi /= d);
            basis.push(v);
            kept.push(col);
            kept_pos.push(j);
        }
    }
    let p = kept.len();
    let small = Mat::from_fn(rows, p + 1, |i, j| {
        let c = if j < p { kept_pos[j] } else { q };
        if i <= c {
            r0[(i, c)]
        } else {
            0.0
        }
    });
    (kept, small)
}

/// Inverse of an upper-triangular matrix with nonzero diagonal by back substitution.
pub(crate) fn upper_inverse(r: MatRef<'_, f64>) -> Mat<f64> {
    let p = r.nrows();
    let mut inv = Mat::zeros(p, p);
    for j in 0..p {
        // Solve R z = e_j; z is zero below j.
        inv[(j, j)] = 1.0 / r[(j, j)];
        for i in (0..j).rev() {
            let mut s = 0.0;
            for l in i + 1..=j {
                s += r[(i, l)] * inv[(l, j)];
            }
            inv[(i, j)] = -s / r[(i, i)];
        }
    }
    inv
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Euclidean length without overflow or underflow for extreme values; NaN or
/// infinite when a value is. One pass for ordinary data (the plain sum of
/// squares is exact enough when it neither overflows nor underflows); a
/// second, scaled pass otherwise.
fn norm2(values: &[f64]) -> f64 {
    let ss: f64 = values.iter().map(|v| v * v).sum();
    if ss.is_finite() && ss > 1e-280 {
        return ss.sqrt();
    }
    if values.iter().any(|v| !v.is_finite()) {
        return f64::NAN;
    }
    let big = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    if big == 0.0 {
        return 0.0;
    }
    big * values
        .iter()
        .map(|v| (v / big) * (v / big))
        .sum::<f64>()
        .sqrt()
}
