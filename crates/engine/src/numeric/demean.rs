//! The within transform for one or more groupings: alternating projections
//! (Guimarães & Portugal 2010; Gaure 2013, Computational Statistics & Data
//! Analysis 66) run in the space of group effects, with Irons–Tuck
//! extrapolation.
//!
//! ## Algorithm
//! Demeaning x by groupings 0..K is the least-squares residual
//! `x − Σ_k D_k α_k`, where `D_k` are the indicator matrices. Alternating
//! projections (subtract grouping 0's means, then grouping 1's, …) are block
//! Gauss–Seidel on the normal equations for the α's, so the sweep is done on
//! the α's directly and x itself is read only twice (group sums at the start,
//! the residual at the end):
//!
//! - The grouping with the most levels is the *primary* one; the rows are
//!   sorted by it once (counting sort), and the codes of the other groupings
//!   are stored in that order, so a sweep streams through `u32` codes with the
//!   primary's effects read in runs and the others' (usually few) in cache.
//! - One sweep `F`: `α_0 = D_0⁻¹(D_0'x − D_0'Σ_{j≥1}D_jα_j)`, then for each
//!   further grouping k in turn `α_k = D_k⁻¹(D_k'x − D_k'Σ_{j≠k}D_jα_j)` with
//!   the newest values. The state of the iteration is θ = (α_1, …, α_{K−1}).
//! - Acceleration: after two plain sweeps `θ₁ = F(θ₀)`, `θ₂ = F(θ₁)` the next
//!   start is the Irons–Tuck (1969) extrapolation
//!   `θ₂ − (Δθ₂·Δ²θ / Δ²θ·Δ²θ)·Δθ₂`, with `Δθ₂ = θ₂ − θ₁` and
//!   `Δ²θ = θ₂ − 2θ₁ + θ₀`.
//! - Convergence: after every plain sweep, the change is
//!   `max_g |Δα_0,g| + Σ_{k≥1} max_g |Δα_k,g|`, a bound on the largest change
//!   of any demeaned value in that sweep, divided by the column's scale
//!   (max |x| of the original column). Converged when it is at most `tol`.
//!   As with every stopping rule based on the change per sweep, the distance
//!   to the exact residual can exceed `tol` when convergence is slow (about
//!   change / (1 − rate)); the acceleration keeps the rate small.
//! - One grouping: one exact sweep (subtract the group means), no iteration.
//!
//! Columns are independent and run in parallel (rayon); all work arrays are
//! allocated once per column, never per row or per sweep. At the end the
//! primary's effects are recomputed from the final θ, so the residual's sums
//! within the primary groups are zero to rounding; the others' are within the
//! tolerance.

use rayon::prelude::*;

use super::{GroupCodes, NumericError};

/// How the within transform ended.
#[derive(Clone, Debug, PartialEq)]
pub struct Demeaned {
    /// Plain sweeps done (the most of any column); 1 for one grouping.
    pub iterations: usize,
    pub converged: bool,
    /// The largest change of any value in the last sweep, relative to the column's scale.
    pub last_change: f64,
}

/// Sweep the means of every grouping out of each column, in place: the residual
/// of projecting on all groupings' indicators at once (alternating projections
/// with acceleration). Converged when the largest change in a sweep falls below
/// `tol` relative to the column's scale. One grouping needs one exact sweep.
///
/// See the module documentation for the algorithm. Never panics: when the
/// columns and groupings do not fit together (see [`try_demean`]) the columns
/// are left unchanged and the result says `converged: false`, `last_change:
/// NaN`. A column with NaN or infinite values is left unchanged and reported
/// not converged; an all-zero column is converged at once. `max_iter` counts
/// plain sweeps; with `max_iter = 0` and two or more groupings only the
/// primary grouping's means are removed.
pub fn demean(
    columns: &mut [Vec<f64>],
    groupings: &[GroupCodes],
    tol: f64,
    max_iter: usize,
) -> Demeaned {
    try_demean(columns, groupings, tol, max_iter).unwrap_or(Demeaned {
        iterations: 0,
        converged: false,
        last_change: f64::NAN,
    })
}

/// [`demean`] with an error when the inputs do not fit: columns of different
/// lengths, a grouping whose length differs from the columns', or a code not
/// below its grouping's `n_groups()`. Counts are recomputed from the codes.
pub fn try_demean(
    columns: &mut [Vec<f64>],
    groupings: &[GroupCodes],
    tol: f64,
    max_iter: usize,
) -> Result<Demeaned, NumericError> {
    let Some(first) = columns.first() else {
        return Ok(Demeaned {
            iterations: 0,
            converged: true,
            last_change: 0.0,
        });
    };
    let n = first.len();
    if let Some(c) = columns.iter().find(|c| c.len() != n) {
        return Err(NumericError::Dimension(format!(
            "columns of {n} and {} rows",
            c.len()
        )));
    }
    for g in groupings {
        g.validate(n)?;
    }
    if groupings.is_empty() {
        return Ok(Demeaned {
            iterations: 0,
            converged: true,
            last_change: 0.0,
        });
    }
    let plan = Plan::new(groupings);
    let results: Vec<ColumnResult> = columns
        .par_iter_mut()
        .map(|col| plan.column(col, groupings, tol, max_iter))
        .collect();
    Ok(Demeaned {
        iterations: results.iter().map(|r| r.sweeps).max().unwrap_or(0),
        converged: results.iter().all(|r| r.converged),
        last_change: results.iter().fold(0.0f64, |m, r| {
            if m.is_nan() || r.change.is_nan() {
                f64::NAN
            } else {
                m.max(r.change)
            }
        }),
    })
}

struct ColumnResult {
    sweeps: usize,
    converged: bool,
    change: f64,
}

/// What every column shares: the sort by the primary grouping.
struct Plan {
    /// Index of the primary grouping (the most levels).
    primary: usize,
    /// Indexes of the other groupings, in their given order.
    others: Vec<usize>,
    /// 1 / count per group, per grouping (given order); 0 for empty groups.
    inv: Vec<Vec<f64>>,
    /// Start of each primary group's run in the sorted order (G_0 + 1 entries).
    starts: Vec<usize>,
    /// Codes of each other grouping in the sorted order.
    sorted: Vec<Vec<u32>>,
    /// Offset of each other grouping's effects in the flat state θ.
    offsets: Vec<usize>,
    /// Length of θ.
    state_len: usize,
}

impl Plan {
    fn new(groupings: &[GroupCodes]) -> Plan {
        let n = groupings[0].codes.len();
        let primary = (0..groupings.len())
            .max_by_key(|&k| (groupings[k].n_groups(), std::cmp::Reverse(k)))
            .unwrap_or(0);
        let others: Vec<usize> = (0..groupings.len()).filter(|&k| k != primary).collect();
        let inv = groupings
            .iter()
            .map(|g| {
                let mut c = vec![0u32; g.n_groups()];
                for &code in &g.codes {
                    c[code as usize] += 1;
                }
                c.iter()
                    .map(|&m| if m > 0 { 1.0 / m as f64 } else { 0.0 })
                    .collect()
            })
            .collect::<Vec<Vec<f64>>>();
        let p = &groupings[primary];
        let g0 = p.n_groups();
        let mut starts = vec![0usize; g0 + 1];
        for &c in &p.codes {
            starts[c as usize + 1] += 1;
        }
        for g in 0..g0 {
            starts[g + 1] += starts[g];
        }
        let mut sorted: Vec<Vec<u32>> = others.iter().map(|_| vec![0u32; n]).collect();
        if !others.is_empty() {
            let mut next = starts[..g0].to_vec();
            for (i, &c) in p.codes.iter().enumerate() {
                let pos = next[c as usize];
                next[c as usize] += 1;
                for (s, &k) in sorted.iter_mut().zip(&others) {
                    s[pos] = groupings[k].codes[i];
                }
            }
        }
        let mut offsets = Vec::with_capacity(others.len());
        let mut state_len = 0;
        for &k in &others {
            offsets.push(state_len);
            state_len += groupings[k].n_groups();
        }
        Plan {
            primary,
            others,
            inv,
            starts,
            sorted,
            offsets,
            state_len,
        }
    }

    fn column(
        &self,
        x: &mut [f64],
        groupings: &[GroupCodes],
        tol: f64,
        max_iter: usize,
    ) -> ColumnResult {
        let scale = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if x.iter().any(|v| !v.is_finite()) {
            return ColumnResult {
                sweeps: 0,
                converged: false,
                change: f64::NAN,
            };
        }
        if scale == 0.0 {
            return ColumnResult {
                sweeps: 0,
                converged: true,
                change: 0.0,
            };
        }
        // Group sums of x, per grouping.
        let sums: Vec<Vec<f64>> = groupings
            .iter()
            .map(|g| {
                let mut s = vec![0.0; g.n_groups()];
                for (&c, &v) in g.codes.iter().zip(x.iter()) {
                    s[c as usize] += v;
                }
                s
            })
            .collect();
        if self.others.is_empty() {
            let g = &groupings[self.primary];
            let means: Vec<f64> = sums[self.primary]
                .iter()
                .zip(&self.inv[self.primary])
                .map(|(s, i)| s * i)
                .collect();
            for (v, &c) in x.iter_mut().zip(&g.codes) {
                *v -= means[c as usize];
            }
            return ColumnResult {
                sweeps: 1,
                converged: true,
                change: 0.0,
            };
        }

        let g0 = groupings[self.primary].n_groups();
        let mut ws = Work {
            theta0: vec![0.0; self.state_len],
            theta1: vec![0.0; self.state_len],
            theta2: vec![0.0; self.state_len],
            alpha_prev: vec![0.0; g0],
            alpha: vec![0.0; g0],
            acc: vec![
                0.0;
                self.others
                    .iter()
                    .map(|&k| groupings[k].n_groups())
                    .max()
                    .unwrap_or(0)
            ],
        };
        let mut sweeps = 0usize;
        let mut converged = false;
        let mut change = f64::NAN;
        // Which buffer holds the final state: 0, 1 or 2.
        let mut last = 0u8;
        while sweeps < max_iter {
            // θ₁ = F(θ₀)
            self.sweep(
                &sums,
                &ws.theta0,
                &mut ws.theta1,
                &mut ws.alpha,
                &mut ws.acc,
            );
            sweeps += 1;
            change = self.change(&ws.theta0, &ws.theta1, &ws.alpha, &ws.alpha_prev) / scale;
            std::mem::swap(&mut ws.alpha, &mut ws.alpha_prev);
            last = 1;
            if change <= tol {
                converged = true;
                break;
            }
            if sweeps >= max_iter {
                break;
            }
            // θ₂ = F(θ₁)
            self.sweep(
                &sums,
                &ws.theta1,
                &mut ws.theta2,
                &mut ws.alpha,
                &mut ws.acc,
            );
            sweeps += 1;
            change = self.change(&ws.theta1, &ws.theta2, &ws.alpha, &ws.alpha_prev) / scale;
            std::mem::swap(&mut ws.alpha, &mut ws.alpha_prev);
            last = 2;
            if change <= tol {
                converged = true;
                break;
            }
            if sweeps >= max_iter {
                break;
            }
            // Irons–Tuck: θ₀ ← θ₂ − (Δθ₂·Δ²θ / Δ²θ·Δ²θ) Δθ₂.
            let (mut num, mut den) = (0.0, 0.0);
            for ((&t0, &t1), &t2) in ws.theta0.iter().zip(&ws.theta1).zip(&ws.theta2) {
                let d2 = t2 - t1;
                let dd = t2 - 2.0 * t1 + t0;
                num += d2 * dd;
                den += dd * dd;
            }
            let step = if den > 0.0 && (num / den).is_finite() {
                num / den
            } else {
                0.0
            };
            for ((t0, &t1), &t2) in ws.theta0.iter_mut().zip(&ws.theta1).zip(&ws.theta2) {
                *t0 = t2 - step * (t2 - t1);
            }
            last = 0;
        }
        let theta = match last {
            1 => &ws.theta1,
            2 => &ws.theta2,
            _ => &ws.theta0,
        };
        // Primary effects from the final θ, then the residual in the original order.
        self.primary_step(&sums[self.primary], theta, &mut ws.alpha);
        let alpha = &ws.alpha;
        let codes0 = &groupings[self.primary].codes;
        match self.others.as_slice() {
            [k] => {
                let c1 = &groupings[*k].codes;
                for ((v, &a), &b) in x.iter_mut().zip(codes0).zip(c1) {
                    *v -= alpha[a as usize] + theta[b as usize];
                }
            }
            _ => {
                for (i, v) in x.iter_mut().enumerate() {
                    let mut fit = alpha[codes0[i] as usize];
                    for (&k, &off) in self.others.iter().zip(&self.offsets) {
                        fit += theta[off + groupings[k].codes[i] as usize];
                    }
                    *v -= fit;
                }
            }
        }
        ColumnResult {
            sweeps,
            converged,
            change,
        }
    }

    /// `α_0 = D_0⁻¹(D_0'x − D_0'Σ_{j≥1}D_jθ_j)`.
    fn primary_step(&self, sum0: &[f64], theta: &[f64], alpha: &mut [f64]) {
        let inv0 = &self.inv[self.primary];
        match self.sorted.as_slice() {
            [s1] => {
                for g in 0..alpha.len() {
                    let run = &s1[self.starts[g]..self.starts[g + 1]];
                    let fitted: f64 = run.iter().map(|&c| theta[c as usize]).sum();
                    alpha[g] = (sum0[g] - fitted) * inv0[g];
                }
            }
            _ => {
                for g in 0..alpha.len() {
                    let mut fitted = 0.0;
                    for p in self.starts[g]..self.starts[g + 1] {
                        for (s, &off) in self.sorted.iter().zip(&self.offsets) {
                            fitted += theta[off + s[p] as usize];
                        }
                    }
                    alpha[g] = (sum0[g] - fitted) * inv0[g];
                }
            }
        }
    }

    /// One plain sweep: θ_out = F(θ_in), with the primary effects in `alpha`.
    fn sweep(
        &self,
        sums: &[Vec<f64>],
        theta_in: &[f64],
        theta_out: &mut [f64],
        alpha: &mut [f64],
        acc: &mut [f64],
    ) {
        self.primary_step(&sums[self.primary], theta_in, alpha);
        theta_out.copy_from_slice(theta_in);
        for (j, &k) in self.others.iter().enumerate() {
            let gk = sums[k].len();
            let acc = &mut acc[..gk];
            acc.copy_from_slice(&sums[k]);
            let sj = &self.sorted[j];
            if self.others.len() == 1 {
                for (g, &a) in alpha.iter().enumerate() {
                    for &c in &sj[self.starts[g]..self.starts[g + 1]] {
                        acc[c as usize] -= a;
                    }
                }
            } else {
                for (g, &a) in alpha.iter().enumerate() {
                    for p in self.starts[g]..self.starts[g + 1] {
                        let mut fit = a;
                        for (l, (s, &off)) in self.sorted.iter().zip(&self.offsets).enumerate() {
                            if l != j {
                                fit += theta_out[off + s[p] as usize];
                            }
                        }
                        acc[sj[p] as usize] -= fit;
                    }
                }
            }
            let off = self.offsets[j];
            for ((t, &s), &i) in theta_out[off..off + gk]
                .iter_mut()
                .zip(acc.iter())
                .zip(&self.inv[k])
            {
                *t = s * i;
            }
        }
    }

    /// The change bound of one sweep (unscaled).
    fn change(&self, before: &[f64], after: &[f64], alpha: &[f64], alpha_prev: &[f64]) -> f64 {
        let mut total = max_abs_diff(alpha, alpha_prev);
        for (j, &off) in self.offsets.iter().enumerate() {
            let end = self.offsets.get(j + 1).copied().unwrap_or(self.state_len);
            total += max_abs_diff(&before[off..end], &after[off..end]);
        }
        total
    }
}

struct Work {
    theta0: Vec<f64>,
    theta1: Vec<f64>,
    theta2: Vec<f64>,
    alpha_prev: Vec<f64>,
    alpha: Vec<f64>,
    acc: Vec<f64>,
}

fn max_abs_diff(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).fold(0.0f64, |m, (x, y)| {
        let d = (x - y).abs();
        if d.is_nan() || m.is_nan() {
            f64::NAN
        } else {
            m.max(d)
        }
    })
}
