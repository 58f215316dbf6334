//! Kernels over tall, narrow data in blocks of rows: the R factor of a QR, and
//! weighted cross-products. Each block is worked on by one thread with plain
//! loops (rayon across blocks); the matrices are at most a few dozen columns
//! wide, so the work is memory-bound and no general matrix routine is needed.
//! Doing it here also keeps the linear-algebra library's own thread pool out of
//! the hot path, where nested parallelism made two cores wait on each other.

use faer::{Mat, MatRef};
use rayon::prelude::*;

/// Rows per block: a block of a few columns stays in the cache of one core.
pub const BLOCK: usize = 1 << 14;

/// The block starts of `n` rows.
fn starts(n: usize) -> Vec<usize> {
    (0..n).step_by(BLOCK).collect()
}

/// The `c×c` upper-triangular R of a Householder QR of the `n×c` matrix whose
/// column `j` is `column(j)` divided by `scale[j]` (unit-length columns make
/// the later rank decision independent of units).
///
/// Algorithm ("tall-skinny" QR): each block of [`BLOCK`] rows is copied once,
/// scaled, into a column-major buffer and reduced to its triangle by
/// Householder reflections; the stacked triangles are reduced the same way,
/// pairwise, until one is left. The result equals the R of one QR of the whole
/// matrix up to the signs of its rows, which neither the least-squares solution
/// nor `(X'X)⁻¹ = R⁻¹R⁻ᵀ` depends on. Backward stable like any Householder QR.
/// With fewer rows than columns, the leading `n` rows of R are set and the rest
/// are zero.
pub fn tall_r(columns: &[&[f64]], scale: &[f64]) -> Mat<f64> {
    if columns.iter().any(|col| col.is_empty()) {
        return Mat::zeros(columns.len(), columns.len());
    }
    let c = columns.len();
    let n = columns.first().map_or(0, |col| col.len());
    let triangles: Vec<Vec<f64>> = starts(n)
        .into_par_iter()
        .map(|s| {
            let len = BLOCK.min(n - s);
            let mut a = vec![0.0; len * c];
            for (j, col) in columns.iter().enumerate() {
                let inv = 1.0 / scale[j];
                for (dst, src) in a[j * len..(j + 1) * len].iter_mut().zip(&col[s..s + len]) {
                    *dst = src * inv;
                }
            }
            householder_r(&mut a, len, c)
        })
        .collect();
    // Reduce the triangles: stack them in pairs and factor again.
    let mut level = triangles;
    while level.len() > 1 {
        level = level
            .par_chunks(2)
            .map(|pair| match pair {
                [one] => one.clone(),
                [a, b] => {
                    let rows = 2 * c;
                    let mut m = vec![0.0; rows * c];
                    for j in 0..c {
                        for i in 0..c {
                            m[j * rows + i] = a[j * c + i];
                            m[j * rows + c + i] = b[j * c + i];
                        }
                    }
                    householder_r(&mut m, rows, c)
                }
                _ => unreachable!("chunks of two"),
            })
            .collect();
    }
    let r = level.pop().unwrap_or_else(|| vec![0.0; c * c]);
    Mat::from_fn(c, c, |i, j| if i <= j { r[j * c + i] } else { 0.0 })
}

/// Householder QR in place of the column-major `m×c` matrix `a`; returns R as
/// a column-major `c×c` array (rows past `m` are zero).
fn householder_r(a: &mut [f64], m: usize, c: usize) -> Vec<f64> {
    for j in 0..c.min(m) {
        let (head, tail) = a.split_at_mut((j + 1) * m);
        let v = &mut head[j * m + j..j * m + m];
        let norm = v.iter().map(|x| x * x).sum::<f64>().sqrt();
        if norm == 0.0 {
            continue;
        }
        let alpha = if v[0] > 0.0 { -norm } else { norm };
        v[0] -= alpha;
        let vv = v.iter().map(|x| x * x).sum::<f64>();
        if vv > 0.0 {
            for l in 0..c - j - 1 {
                let col = &mut tail[l * m + j..l * m + m];
                let s: f64 = v.iter().zip(col.iter()).map(|(x, y)| x * y).sum();
                let f = 2.0 * s / vv;
                for (y, x) in col.iter_mut().zip(v.iter()) {
                    *y -= f * x;
                }
            }
        }
        v[0] = alpha;
    }
    let mut r = vec![0.0; c * c];
    for j in 0..c {
        for i in 0..=j.min(m.saturating_sub(1)) {
            r[j * c + i] = a[j * m + i];
        }
    }
    r
}

/// `Σ_i w_i² x_i x_iᵀ` over the columns `cols` of `x`: the meat of the
/// heteroskedasticity-consistent sandwiches (`w` = residual, or residual over
/// `1 − h`). Blocks in parallel, each summing its own `p×p` part; the sums are
/// added in block order, so the result does not depend on the thread count.
pub fn weighted_cross(x: MatRef<'_, f64>, cols: &[usize], w: &[f64]) -> Mat<f64> {
    let p = cols.len();
    let n = x.nrows();
    let parts: Vec<Vec<f64>> = starts(n)
        .into_par_iter()
        .map(|s| {
            let len = BLOCK.min(n - s);
            let ws = &w[s..s + len];
            // Weighted copies of the block's columns, then their inner products.
            let scaled: Vec<Vec<f64>> = cols
                .iter()
                .map(|&j| {
                    let col = x.col(j).subrows(s, len);
                    col.iter().zip(ws).map(|(v, wi)| v * wi).collect()
                })
                .collect();
            let mut out = vec![0.0; p * p];
            for a in 0..p {
                for b in 0..=a {
                    let d: f64 = scaled[a].iter().zip(&scaled[b]).map(|(u, v)| u * v).sum();
                    out[a * p + b] = d;
                    out[b * p + a] = d;
                }
            }
            out
        })
        .collect();
    sum_parts(&parts, p)
}

/// `Σ_g u_g u_gᵀ` for score sums stored row-major, one row of `p` per group.
pub fn grouped_cross(u: &[f64], p: usize) -> Mat<f64> {
    let groups = u.len().checked_div(p).unwrap_or(0);
    let parts: Vec<Vec<f64>> = starts(groups)
        .into_par_iter()
        .map(|s| {
            let len = BLOCK.min(groups - s);
            let mut out = vec![0.0; p * p];
            for row in u[s * p..(s + len) * p].chunks_exact(p) {
                for a in 0..p {
                    let ua = row[a];
                    if ua == 0.0 {
                        continue;
                    }
                    for b in 0..=a {
                        out[a * p + b] += ua * row[b];
                    }
                }
            }
            for a in 0..p {
                for b in 0..a {
                    out[b * p + a] = out[a * p + b];
                }
            }
            out
        })
        .collect();
    sum_parts(&parts, p)
}

/// Leverages `h_i = x_iᵀ V x_i` over the columns `cols`, by blocks, without an
/// `n×p` temporary.
pub fn quadratic_forms(x: MatRef<'_, f64>, cols: &[usize], v: MatRef<'_, f64>) -> Vec<f64> {
    let p = cols.len();
    let n = x.nrows();
    let mut h = vec![0.0; n];
    h.par_chunks_mut(BLOCK).enumerate().for_each(|(b, out)| {
        let s = b * BLOCK;
        let len = out.len();
        for a in 0..p {
            let xa = x.col(cols[a]).subrows(s, len);
            for c in 0..p {
                let vac = v[(a, c)];
                if vac == 0.0 {
                    continue;
                }
                let xc = x.col(cols[c]).subrows(s, len);
                for ((hi, xi), yi) in out.iter_mut().zip(xa.iter()).zip(xc.iter()) {
                    *hi += vac * xi * yi;
                }
            }
        }
    });
    h
}

/// `e -= Σ_j b_j x_j` over blocks of rows in parallel: the residuals from the
/// original columns, each row touched once.
pub fn subtract_fitted<C: AsRef<[f64]> + Sync>(e: &mut [f64], columns: &[C], b: &[f64]) {
    e.par_chunks_mut(BLOCK).enumerate().for_each(|(i, out)| {
        let s = i * BLOCK;
        for (col, bj) in columns.iter().zip(b) {
            let col = &col.as_ref()[s..s + out.len()];
            for (ei, xi) in out.iter_mut().zip(col) {
                *ei -= bj * xi;
            }
        }
    });
}

fn sum_parts(parts: &[Vec<f64>], p: usize) -> Mat<f64> {
    let mut total = vec![0.0; p * p];
    for part in parts {
        for (t, v) in total.iter_mut().zip(part) {
            *t += v;
        }
    }
    Mat::from_fn(p, p, |a, b| total[a * p + b])
}

/// Column `j` of `x` as a slice, copied only when the view is not contiguous.
pub fn column(x: MatRef<'_, f64>, j: usize) -> std::borrow::Cow<'_, [f64]> {
    match x.col(j).try_as_col_major() {
        Some(c) => std::borrow::Cow::Borrowed(c.as_slice()),
        None => std::borrow::Cow::Owned(x.col(j).iter().copied().collect()),
    }
}
