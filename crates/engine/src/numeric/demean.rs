//! The within transform for one or more groupings: the residual of projecting
//! on all groupings' indicators, by alternating projections in the space of
//! group effects (Guimarães & Portugal 2010; Gaure 2013, Computational
//! Statistics & Data Analysis 66), accelerated by conjugate gradients on the
//! normal equations.
//!
//! ## Algorithm
//! Demeaning x by groupings 0..K is the least-squares residual
//! `e = x − D_0α_0 − Dθ`, where `D_k` are indicator matrices and
//! `D = [D_1 … D_{K−1}]`, `θ = (α_1, …, α_{K−1})`.
//!
//! - The grouping with the most levels is the *primary* one. Its projection is
//!   done exactly: the rows are sorted by it once (counting sort) and the codes
//!   of the other groupings are stored in that order, so every pass streams
//!   through `u32` codes run by run, with the (usually few) other effects in
//!   cache. Eliminating α_0 leaves the normal equations
//!   `D'M_0D θ = D'M_0x`, `M_0 = I − P_0` the primary group demeaning; the
//!   right side is the group sums of the primary-demeaned x.
//! - One sweep applies `D'M_0D` to a vector: per primary group, the values
//!   `Dθ` on its rows minus their mean, summed into the other groupings'
//!   groups (one pass over the sorted codes for all columns of a block at
//!   once, split over threads by primary groups, partial sums added in a fixed
//!   order so results do not depend on the thread count).
//! - Acceleration: conjugate gradients (Hestenes & Stiefel 1952) on that
//!   system, preconditioned by its diagonal (`count_h − Σ_g n_gh²/n_g`); the
//!   system is singular exactly by the redundant levels but consistent, which
//!   conjugate gradients handle. Levels wholly inside one primary group have a
//!   zero row and stay at zero.
//! - Convergence: the CG residual `D'M_0(x − Dθ)` holds the group sums of the
//!   current result, so `|r_h| / count_h` is the change that projecting once
//!   more on grouping `k ∋ h` would make to that group's values. Converged when
//!   the largest of these, relative to the column's scale (max |x| of the
//!   original column), is at most `tol`. The primary's group sums are zero by
//!   construction. After the last iteration the result is formed and its group
//!   means are measured again from the result itself; `last_change` and
//!   `converged` report that measured value, not the recursion's.
//! - One grouping: one exact sweep (subtract the group means), no iteration.
//!
//! All work arrays are allocated per call, per block of columns or per
//! thread chunk, never per row or per iteration.

use rayon::prelude::*;

use super::{GroupCodes, NumericError};

/// How the within transform ended.
#[derive(Clone, Debug, PartialEq)]
pub struct Demeaned {
    /// Iterations done (the most of any column): conjugate-gradient steps, each
    /// one pass over the codes; 1 for one grouping, 0 when nothing was needed.
    pub iterations: usize,
    pub converged: bool,
    /// The largest change of any value in the last sweep, relative to the column's scale.
    /// Measured on the result: the largest group mean of the demeaned column in
    /// any grouping, i.e. the change one more projection on that grouping would
    /// make, over the column's max |x| (the largest over columns).
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
/// not converged; an all-zero column is converged at once. `max_iter` bounds
/// the iterations; with `max_iter = 0` and two or more groupings only the
/// primary grouping's means are removed (and convergence is measured).
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
    // Columns that can be demeaned: finite, not all zero.
    let mut bad = false;
    let mut todo: Vec<&mut Vec<f64>> = Vec::new();
    for col in columns.iter_mut() {
        if col.iter().any(|v| !v.is_finite()) {
            bad = true;
        } else if col.iter().any(|&v| v != 0.0) {
            todo.push(col);
        }
    }
    let mut iterations = 0;
    let mut worst = 0.0f64;
    if plan.others.is_empty() {
        todo.par_iter_mut()
            .for_each(|col| plan.one_grouping(col, groupings));
        iterations = usize::from(!todo.is_empty());
    } else {
        for block in todo.chunks_mut(MAX_BLOCK) {
            let (it, change) = plan.block(block, groupings, tol, max_iter);
            iterations = iterations.max(it);
            worst = if worst.is_nan() || change.is_nan() {
                f64::NAN
            } else {
                worst.max(change)
            };
        }
    }
    let last_change = if bad { f64::NAN } else { worst };
    Ok(Demeaned {
        iterations,
        converged: !bad && worst <= tol,
        last_change,
    })
}

/// Columns processed together in one pass over the codes.
const MAX_BLOCK: usize = 8;

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
    /// Codes of the other groupings in the sorted order, each already offset
    /// into the flat state θ (so one index per row and grouping).
    sorted: Vec<Vec<u32>>,
    /// Offset of each other grouping's effects in θ, and θ's length last.
    offsets: Vec<usize>,
    /// Preconditioner: 1 / diagonal of `D'M_0D`, 0 where the diagonal vanishes.
    precond: Vec<f64>,
    /// 1 / count of each θ level (0 for empty groups).
    inv_state: Vec<f64>,
    /// Primary-group ranges of the thread chunks.
    chunks: Vec<(usize, usize)>,
}

impl Plan {
    fn new(groupings: &[GroupCodes]) -> Plan {
        let n = groupings[0].codes.len();
        let primary = (0..groupings.len())
            .max_by_key(|&k| (groupings[k].n_groups(), std::cmp::Reverse(k)))
            .unwrap_or(0);
        let others: Vec<usize> = (0..groupings.len()).filter(|&k| k != primary).collect();
        let counts: Vec<Vec<u32>> = groupings
            .iter()
            .map(|g| {
                let mut c = vec![0u32; g.n_groups()];
                for &code in &g.codes {
                    c[code as usize] += 1;
                }
                c
            })
            .collect();
        let inv: Vec<Vec<f64>> = counts
            .iter()
            .map(|c| {
                c.iter()
                    .map(|&m| if m > 0 { 1.0 / m as f64 } else { 0.0 })
                    .collect()
            })
            .collect();
        let mut offsets = vec![0usize];
        for &k in &others {
            offsets.push(offsets.last().copied().unwrap_or(0) + groupings[k].n_groups());
        }
        let state_len = *offsets.last().unwrap_or(&0);
        let g0 = groupings[primary].n_groups();
        let mut starts = vec![0usize; g0 + 1];
        for &c in &groupings[primary].codes {
            starts[c as usize + 1] += 1;
        }
        for g in 0..g0 {
            starts[g + 1] += starts[g];
        }
        let mut sorted: Vec<Vec<u32>> = others.iter().map(|_| vec![0u32; n]).collect();
        if !others.is_empty() {
            let mut next = starts[..g0].to_vec();
            for (i, &c) in groupings[primary].codes.iter().enumerate() {
                let pos = next[c as usize];
                next[c as usize] += 1;
                for ((s, &k), &off) in sorted.iter_mut().zip(&others).zip(&offsets) {
                    s[pos] = off as u32 + groupings[k].codes[i];
                }
            }
        }
        let mut inv_state = vec![0.0; state_len];
        for ((&k, &off), _) in others.iter().zip(&offsets).zip(0..) {
            inv_state[off..off + inv[k].len()].copy_from_slice(&inv[k]);
        }
        // Diagonal of D'M_0D: count_h − Σ_g n_gh² / n_g.
        let mut diag = vec![0.0; state_len];
        for ((&k, &off), _) in others.iter().zip(&offsets).zip(0..) {
            for (h, &c) in counts[k].iter().enumerate() {
                diag[off + h] = c as f64;
            }
        }
        let mut tally = vec![0u32; state_len];
        for g in 0..g0 {
            let (s, e) = (starts[g], starts[g + 1]);
            for codes in &sorted {
                for &h in &codes[s..e] {
                    tally[h as usize] += 1;
                }
                for &h in &codes[s..e] {
                    let t = tally[h as usize];
                    if t > 0 {
                        diag[h as usize] -= (t as f64) * (t as f64) * inv[primary][g];
                        tally[h as usize] = 0;
                    }
                }
            }
        }
        // A level whose diagonal is (to rounding) zero lies inside one primary
        // group: fully absorbed, kept at zero.
        let precond = diag
            .iter()
            .zip(&inv_state)
            .map(|(&d, &ic)| if d * ic > 1e-9 { 1.0 / d } else { 0.0 })
            .collect();
        // About 16 chunks of similar row counts (fixed, not per thread, so the
        // summation order is the same on every machine).
        let n_chunks = (n / (1 << 16)).clamp(1, 16);
        let mut chunks = Vec::with_capacity(n_chunks);
        let mut lo = 0;
        for c in 1..=n_chunks {
            let target = n * c / n_chunks;
            let mut hi = lo;
            while hi < g0 && (starts[hi] < target || c == n_chunks) {
                hi += 1;
            }
            if hi > lo {
                chunks.push((lo, hi));
            }
            lo = hi;
        }
        Plan {
            primary,
            others,
            inv,
            starts,
            sorted,
            offsets,
            precond,
            inv_state,
            chunks,
        }
    }

    fn state_len(&self) -> usize {
        *self.offsets.last().unwrap_or(&0)
    }

    fn one_grouping(&self, x: &mut [f64], groupings: &[GroupCodes]) {
        let g = &groupings[self.primary];
        let mut means = vec![0.0; g.n_groups()];
        for (&c, &v) in g.codes.iter().zip(x.iter()) {
            means[c as usize] += v;
        }
        for (m, i) in means.iter_mut().zip(&self.inv[self.primary]) {
            *m *= i;
        }
        for (v, &c) in x.iter_mut().zip(&g.codes) {
            *v -= means[c as usize];
        }
    }

    /// Demeans a block of up to `MAX_BLOCK` columns; returns the iterations and
    /// the measured convergence value (largest over the block).
    fn block(
        &self,
        cols: &mut [&mut Vec<f64>],
        groupings: &[GroupCodes],
        tol: f64,
        max_iter: usize,
    ) -> (usize, f64) {
        macro_rules! dispatch {
            ($($b:literal)*) => {
                match cols.len() {
                    $($b => self.block_b::<$b>(cols, groupings, tol, max_iter),)*
                    _ => (0, 0.0),
                }
            };
        }
        dispatch!(1 2 3 4 5 6 7 8)
    }

    fn block_b<const B: usize>(
        &self,
        cols: &mut [&mut Vec<f64>],
        groupings: &[GroupCodes],
        tol: f64,
        max_iter: usize,
    ) -> (usize, f64) {
        let l = self.state_len();
        let g0 = groupings[self.primary].n_groups();
        let scale: Vec<f64> = cols
            .iter()
            .map(|c| c.iter().fold(0.0f64, |m, v| m.max(v.abs())))
            .collect();
        // Group sums of every column in every grouping (original order).
        let sums: Vec<Vec<Vec<f64>>> = cols
            .par_iter()
            .map(|x| {
                groupings
                    .iter()
                    .map(|g| {
                        let mut s = vec![0.0; g.n_groups()];
                        for (&c, &v) in g.codes.iter().zip(x.iter()) {
                            s[c as usize] += v;
                        }
                        s
                    })
                    .collect()
            })
            .collect();
        // Right side b = D'x − D'P_0x.
        let mut mean0 = vec![[0.0; B]; g0];
        for (c, s) in sums.iter().enumerate() {
            for (g, m) in mean0.iter_mut().enumerate() {
                m[c] = s[self.primary][g] * self.inv[self.primary][g];
            }
        }
        let mut r = self.spread(&mean0);
        for (c, s) in sums.iter().enumerate() {
            for (&k, &off) in self.others.iter().zip(&self.offsets) {
                for (h, &v) in s[k].iter().enumerate() {
                    r[off + h][c] = v - r[off + h][c];
                }
            }
        }
        // Preconditioned conjugate gradients, one per column.
        let mut theta = vec![[0.0; B]; l];
        let mut active = [true; B];
        let crit = |r: &[[f64; B]], c: usize| -> f64 {
            r.iter()
                .zip(&self.inv_state)
                .fold(0.0f64, |m, (v, i)| m.max((v[c] * i).abs()))
                / scale[c]
        };
        for (c, a) in active.iter_mut().enumerate() {
            *a = crit(&r, c) > tol;
        }
        let mut z: Vec<[f64; B]> = r
            .iter()
            .zip(&self.precond)
            .map(|(v, &m)| std::array::from_fn(|c| v[c] * m))
            .collect();
        let mut p = z.clone();
        let mut rz: [f64; B] = std::array::from_fn(|c| dot(&r, &z, c));
        let mut iterations = 0;
        while iterations < max_iter && active.iter().any(|&a| a) {
            for (pv, _) in p.iter_mut().zip(0..) {
                for c in 0..B {
                    if !active[c] {
                        pv[c] = 0.0;
                    }
                }
            }
            let q = self.apply(&p);
            iterations += 1;
            for c in 0..B {
                if !active[c] {
                    continue;
                }
                let pq = dot(&p, &q, c);
                if !(pq.is_finite() && pq > 0.0) {
                    active[c] = false;
                    continue;
                }
                let alpha = rz[c] / pq;
                for ((t, pv), (rv, qv)) in theta.iter_mut().zip(&p).zip(r.iter_mut().zip(&q)) {
                    t[c] += alpha * pv[c];
                    rv[c] -= alpha * qv[c];
                }
                if crit(&r, c) <= tol {
                    active[c] = false;
                    continue;
                }
                for ((zv, rv), &m) in z.iter_mut().zip(&r).zip(&self.precond) {
                    zv[c] = rv[c] * m;
                }
                let rz_new = dot(&r, &z, c);
                let beta = rz_new / rz[c];
                rz[c] = rz_new;
                for (pv, zv) in p.iter_mut().zip(&z) {
                    pv[c] = zv[c] + beta * pv[c];
                }
            }
        }
        // α_0 = D_0⁻¹(D_0'x − D_0'Dθ), then the result in the original order,
        // with its group sums measured in every non-primary grouping.
        let fitted0 = self.gather(&theta);
        let codes0 = &groupings[self.primary].codes;
        let inv0 = &self.inv[self.primary];
        let measured: Vec<f64> = cols
            .par_iter_mut()
            .zip(sums.par_iter())
            .enumerate()
            .map(|(c, (x, s))| {
                let alpha0: Vec<f64> = (0..g0)
                    .map(|g| (s[self.primary][g] - fitted0[g][c]) * inv0[g])
                    .collect();
                let th: Vec<f64> = theta.iter().map(|t| t[c]).collect();
                let mut check = vec![0.0; l];
                match self.others.as_slice() {
                    [k] => {
                        let c1 = &groupings[*k].codes;
                        for ((v, &a), &b) in x.iter_mut().zip(codes0).zip(c1) {
                            *v -= alpha0[a as usize] + th[b as usize];
                            check[b as usize] += *v;
                        }
                    }
                    _ => {
                        for (i, v) in x.iter_mut().enumerate() {
                            let mut fit = alpha0[codes0[i] as usize];
                            for (&k, &off) in self.others.iter().zip(&self.offsets) {
                                fit += th[off + groupings[k].codes[i] as usize];
                            }
                            *v -= fit;
                            for (&k, &off) in self.others.iter().zip(&self.offsets) {
                                check[off + groupings[k].codes[i] as usize] += *v;
                            }
                        }
                    }
                }
                check
                    .iter()
                    .zip(&self.inv_state)
                    .fold(0.0f64, |m, (v, i)| m.max((v * i).abs()))
                    / scale[c]
            })
            .collect();
        let worst = measured
            .iter()
            .fold(0.0f64, |m, &v| if v.is_nan() { f64::NAN } else { m.max(v) });
        (iterations, worst)
    }

    /// Runs `f` on each chunk of primary groups in parallel, each with a zeroed
    /// output of `len` entries, and adds the partial outputs in chunk order.
    fn chunked<const B: usize, F>(&self, len: usize, f: F) -> Vec<[f64; B]>
    where
        F: Fn(usize, usize, &mut [[f64; B]]) + Sync,
    {
        let parts: Vec<Vec<[f64; B]>> = self
            .chunks
            .par_iter()
            .map(|&(lo, hi)| {
                let mut out = vec![[0.0; B]; len];
                f(lo, hi, &mut out);
                out
            })
            .collect();
        let mut parts = parts.into_iter();
        let mut total = parts.next().unwrap_or_else(|| vec![[0.0; B]; len]);
        for part in parts {
            for (t, v) in total.iter_mut().zip(&part) {
                for c in 0..B {
                    t[c] += v[c];
                }
            }
        }
        total
    }

    /// `q = D'M_0D p`: per primary group, the values `Dp` on its rows minus
    /// their mean, summed into the other groupings' levels.
    fn apply<const B: usize>(&self, p: &[[f64; B]]) -> Vec<[f64; B]> {
        let inv0 = &self.inv[self.primary];
        self.chunked(p.len(), |lo, hi, out| match self.sorted.as_slice() {
            [s1] => {
                for g in lo..hi {
                    let run = &s1[self.starts[g]..self.starts[g + 1]];
                    let mut m = [0.0; B];
                    for &h in run {
                        let v = &p[h as usize];
                        for c in 0..B {
                            m[c] += v[c];
                        }
                    }
                    for mc in m.iter_mut() {
                        *mc *= inv0[g];
                    }
                    for &h in run {
                        let v = p[h as usize];
                        let o = &mut out[h as usize];
                        for c in 0..B {
                            o[c] += v[c] - m[c];
                        }
                    }
                }
            }
            sorted => {
                for (g, &ig) in inv0.iter().enumerate().take(hi).skip(lo) {
                    let (s, e) = (self.starts[g], self.starts[g + 1]);
                    let mut m = [0.0; B];
                    for codes in sorted {
                        for &h in &codes[s..e] {
                            let v = &p[h as usize];
                            for c in 0..B {
                                m[c] += v[c];
                            }
                        }
                    }
                    for mc in m.iter_mut() {
                        *mc *= ig;
                    }
                    for i in s..e {
                        let mut v = [0.0; B];
                        for codes in sorted {
                            let t = &p[codes[i] as usize];
                            for c in 0..B {
                                v[c] += t[c];
                            }
                        }
                        for codes in sorted {
                            let o = &mut out[codes[i] as usize];
                            for c in 0..B {
                                o[c] += v[c] - m[c];
                            }
                        }
                    }
                }
            }
        })
    }

    /// `D'D_0 a`: each primary group's value added to the other groupings'
    /// levels of its rows.
    fn spread<const B: usize>(&self, a: &[[f64; B]]) -> Vec<[f64; B]> {
        self.chunked(self.state_len(), |lo, hi, out| {
            for g in lo..hi {
                let v = a[g];
                for codes in &self.sorted {
                    for &h in &codes[self.starts[g]..self.starts[g + 1]] {
                        let o = &mut out[h as usize];
                        for c in 0..B {
                            o[c] += v[c];
                        }
                    }
                }
            }
        })
    }

    /// `D_0'Dθ`: per primary group, the sum of θ over its rows and groupings.
    fn gather<const B: usize>(&self, theta: &[[f64; B]]) -> Vec<[f64; B]> {
        let g0 = self.starts.len() - 1;
        let mut out = vec![[0.0; B]; g0];
        out.par_iter_mut()
            .with_min_len(1 << 12)
            .enumerate()
            .for_each(|(g, o)| {
                for codes in &self.sorted {
                    for &h in &codes[self.starts[g]..self.starts[g + 1]] {
                        let t = &theta[h as usize];
                        for c in 0..B {
                            o[c] += t[c];
                        }
                    }
                }
            });
        out
    }
}

fn dot<const B: usize>(a: &[[f64; B]], b: &[[f64; B]], c: usize) -> f64 {
    a.iter().zip(b).map(|(x, y)| x[c] * y[c]).sum()
}
