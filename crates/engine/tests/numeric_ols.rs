//! Least squares: algebraic identities on seeded random matrices (invented
//! data, checked against identities that hold for any data), aliasing rules,
//! and inputs that must not panic.

use engine::numeric::{ols, rank_tolerance, try_ols, NumericError};
use faer::Mat;

mod common;
use common::Rng;

fn seq() {
    faer::set_global_parallelism(faer::Par::Seq);
}

fn random(n: usize, k: usize, seed: u64) -> (Mat<f64>, Vec<f64>) {
    let mut r = Rng(seed);
    let x = Mat::from_fn(n, k, |_, j| r.normal() * (1.0 + j as f64));
    let y = (0..n)
        .map(|i| x[(i, 0)] - 0.5 * x[(i, k - 1)] + r.normal())
        .collect();
    (x, y)
}

fn xt_e(x: &Mat<f64>, e: &[f64]) -> Vec<f64> {
    (0..x.ncols())
        .map(|j| (0..x.nrows()).map(|i| x[(i, j)] * e[i]).sum())
        .collect()
}

fn col_norm(x: &Mat<f64>, j: usize) -> f64 {
    (0..x.nrows())
        .map(|i| x[(i, j)] * x[(i, j)])
        .sum::<f64>()
        .sqrt()
}

#[test]
fn normal_equations_hold() {
    seq();
    for (seed, n, k) in [(1, 50, 3), (2, 400, 8), (3, 12, 11)] {
        let (x, y) = random(n, k, seed);
        let fit = ols(x.as_ref(), &y);
        assert_eq!(fit.kept, (0..k).collect::<Vec<_>>());
        assert!(fit.aliased.is_empty());
        let ynorm = y.iter().map(|v| v * v).sum::<f64>().sqrt();
        for (j, g) in xt_e(&x, &fit.residuals).iter().enumerate() {
            let bound = 100.0 * n as f64 * f64::EPSILON * col_norm(&x, j) * ynorm;
            assert!(
                g.abs() <= bound,
                "seed {seed}: X'e[{j}] = {g}, bound {bound}"
            );
        }
        let rss: f64 = fit.residuals.iter().map(|e| e * e).sum();
        assert!((rss - fit.rss).abs() <= 1e-12 * rss.max(1.0));
        // y = Xb + e exactly.
        for i in 0..n {
            let f: f64 = (0..k).map(|j| x[(i, j)] * fit.coef[j]).sum();
            assert!((f + fit.residuals[i] - y[i]).abs() < 1e-10 * (1.0 + y[i].abs()));
        }
    }
}

#[test]
fn xtx_inverse_times_xtx_is_identity() {
    seq();
    let (x, y) = random(300, 6, 7);
    let fit = ols(x.as_ref(), &y);
    let xtx = x.transpose() * &x;
    let prod = &xtx * &fit.xtx_inv;
    for i in 0..6 {
        for j in 0..6 {
            let want = if i == j { 1.0 } else { 0.0 };
            assert!(
                (prod[(i, j)] - want).abs() < 1e-11,
                "({i},{j}) = {}",
                prod[(i, j)]
            );
        }
    }
    // Symmetric.
    for i in 0..6 {
        for j in 0..6 {
            assert_eq!(fit.xtx_inv[(i, j)], fit.xtx_inv[(j, i)]);
        }
    }
}

#[test]
fn exact_fit_recovers_coefficients() {
    seq();
    let (x, _) = random(40, 4, 11);
    let beta = [1.5, -2.0, 0.25, 3.0];
    let y: Vec<f64> = (0..40)
        .map(|i| (0..4).map(|j| x[(i, j)] * beta[j]).sum())
        .collect();
    let fit = ols(x.as_ref(), &y);
    for (j, b) in beta.iter().enumerate() {
        assert!((fit.coef[j] - b).abs() < 1e-12, "{j}: {}", fit.coef[j]);
    }
    assert!(fit.rss < 1e-20);
}

#[test]
fn duplicate_column_aliases_the_later_one() {
    seq();
    let (x0, y) = random(60, 4, 5);
    // Columns 0..4, then a copy of column 1 at position 4.
    let x = Mat::from_fn(60, 5, |i, j| if j == 4 { x0[(i, 1)] } else { x0[(i, j)] });
    let fit = ols(x.as_ref(), &y);
    assert_eq!(fit.aliased, vec![4]);
    assert_eq!(fit.kept, vec![0, 1, 2, 3]);
    assert!(fit.coef[4].is_nan());
    assert_eq!(fit.xtx_inv.nrows(), 4);
    let full = ols(x0.as_ref(), &y);
    for j in 0..4 {
        assert!((fit.coef[j] - full.coef[j]).abs() < 1e-10);
    }
}

#[test]
fn linear_combination_aliases_the_last_of_the_set_whatever_the_norms() {
    seq();
    let (x0, y) = random(80, 3, 9);
    // Column 0 = 1000·(a + b), large norm so a pivoted QR would pick it first;
    // columns 1 and 2 are a and b. The set {0, 1, 2} is collinear: 2 is aliased.
    let x = Mat::from_fn(80, 4, |i, j| match j {
        0 => 1000.0 * (x0[(i, 0)] + x0[(i, 1)]),
        1 => x0[(i, 0)],
        2 => x0[(i, 1)],
        _ => x0[(i, 2)],
    });
    let fit = ols(x.as_ref(), &y);
    assert_eq!(fit.aliased, vec![2]);
    assert_eq!(fit.kept, vec![0, 1, 3]);
    // The same set with the combination last.
    let x = Mat::from_fn(80, 4, |i, j| match j {
        0 => x0[(i, 0)],
        1 => x0[(i, 2)],
        2 => x0[(i, 1)],
        _ => 2.0 * x0[(i, 0)] - 3.0 * x0[(i, 1)],
    });
    let fit = ols(x.as_ref(), &y);
    assert_eq!(fit.aliased, vec![3]);
    let ynorm = y.iter().map(|v| v * v).sum::<f64>().sqrt();
    for (j, g) in xt_e(&x, &fit.residuals).iter().enumerate() {
        assert!(g.abs() < 1e-10 * col_norm(&x, j) * ynorm, "X'e[{j}] = {g}");
    }
}

#[test]
fn two_collinear_sets_and_a_zero_column() {
    seq();
    let (x0, y) = random(50, 3, 21);
    let x = Mat::from_fn(50, 6, |i, j| match j {
        0 => x0[(i, 0)],
        1 => 0.0,
        2 => x0[(i, 1)],
        3 => -x0[(i, 0)],
        4 => x0[(i, 2)],
        _ => x0[(i, 1)] + x0[(i, 2)],
    });
    let fit = ols(x.as_ref(), &y);
    assert_eq!(fit.aliased, vec![1, 3, 5]);
    assert_eq!(fit.kept, vec![0, 2, 4]);
}

#[test]
fn badly_scaled_columns_are_not_aliased() {
    seq();
    let (x0, y) = random(100, 3, 4);
    let x = Mat::from_fn(100, 3, |i, j| x0[(i, j)] * [1e-9, 1.0, 1e9][j]);
    let fit = ols(x.as_ref(), &y);
    assert!(fit.aliased.is_empty());
    let plain = ols(x0.as_ref(), &y);
    for j in 0..3 {
        let rel = (fit.coef[j] * [1e-9, 1.0, 1e9][j] - plain.coef[j]).abs() / plain.coef[j].abs();
        assert!(rel < 1e-8, "{j}: {rel}");
    }
}

#[test]
fn fewer_rows_than_columns_keeps_at_most_n() {
    seq();
    let (x, y) = random(3, 5, 13);
    let fit = ols(x.as_ref(), &y);
    assert_eq!(fit.kept, vec![0, 1, 2]);
    assert_eq!(fit.aliased, vec![3, 4]);
    assert!(fit.rss < 1e-20);
}

#[test]
fn degenerate_inputs_do_not_panic() {
    seq();
    // No columns: residuals are y.
    let y = vec![1.0, 2.0, 3.0];
    let fit = ols(Mat::<f64>::zeros(3, 0).as_ref(), &y);
    assert!(fit.coef.is_empty() && fit.kept.is_empty());
    assert_eq!(fit.residuals, y);
    assert_eq!(fit.rss, 14.0);
    // No rows: everything aliased.
    let fit = ols(Mat::<f64>::zeros(0, 2).as_ref(), &[]);
    assert_eq!(fit.aliased, vec![0, 1]);
    assert_eq!(fit.rss, 0.0);
    // All-zero design.
    let fit = ols(Mat::<f64>::zeros(4, 2).as_ref(), &[1.0, 0.0, 1.0, 0.0]);
    assert_eq!(fit.aliased, vec![0, 1]);
    assert_eq!(fit.rss, 2.0);
    // Zero outcome.
    let (x, _) = random(10, 2, 3);
    let fit = ols(x.as_ref(), &[0.0; 10]);
    assert_eq!(fit.coef, vec![0.0, 0.0]);
    // NaN and length mismatch: an error from try_ols, NaN from ols.
    let mut xn = x.clone();
    xn[(2, 1)] = f64::NAN;
    assert!(matches!(
        try_ols(xn.as_ref(), &[1.0; 10]),
        Err(NumericError::NonFinite(_))
    ));
    let fit = ols(xn.as_ref(), &[1.0; 10]);
    assert!(fit.coef.iter().all(|c| c.is_nan()) && fit.rss.is_nan());
    assert!(matches!(
        try_ols(x.as_ref(), &[1.0; 9]),
        Err(NumericError::Dimension(_))
    ));
    assert!(try_ols(x.as_ref(), &[f64::INFINITY; 10]).is_err());
}

#[test]
fn rank_tolerance_is_documented_value() {
    assert_eq!(rank_tolerance(1000, 5), 1000.0 * f64::EPSILON);
    assert_eq!(rank_tolerance(0, 0), f64::EPSILON);
}

/// The blocked QR path (more than 4 × 65,536 rows) gives the same fit as the
/// normal equations solved directly on well-conditioned data.
#[test]
#[allow(clippy::needless_range_loop)] // matrix algebra reads clearer with indexes
fn a_tall_design_is_solved_by_blocks_with_the_same_answer() {
    let n = 300_000;
    let mut state = 12345u64;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    let cols: Vec<Vec<f64>> = (0..3).map(|_| (0..n).map(|_| next()).collect()).collect();
    let y: Vec<f64> = (0..n)
        .map(|i| 1.0 * cols[0][i] - 2.0 * cols[1][i] + 0.5 * cols[2][i] + 0.1 * next())
        .collect();
    let x = faer::Mat::from_fn(n, 3, |i, j| cols[j][i]);
    let fit = engine::numeric::ols(x.as_ref(), &y);
    // Normal equations: X'X b = X'y, solved by Cramer's rule on the 3 × 3 system.
    let dot = |a: &[f64], b: &[f64]| a.iter().zip(b).map(|(p, q)| p * q).sum::<f64>();
    let g: Vec<Vec<f64>> = (0..3)
        .map(|i| (0..3).map(|j| dot(&cols[i], &cols[j])).collect())
        .collect();
    let r: Vec<f64> = (0..3).map(|i| dot(&cols[i], &y)).collect();
    let det = |m: &Vec<Vec<f64>>| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
            - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let d = det(&g);
    for k in 0..3 {
        let mut mk = g.clone();
        for i in 0..3 {
            mk[i][k] = r[i];
        }
        let want = det(&mk) / d;
        assert!(
            (fit.coef[k] - want).abs() < 1e-9 * want.abs(),
            "{k}: {} vs {want}",
            fit.coef[k]
        );
    }
    // (X'X)⁻¹ times X'X is the identity.
    for i in 0..3 {
        for j in 0..3 {
            let v: f64 = (0..3).map(|l| fit.xtx_inv[(i, l)] * g[l][j]).sum();
            assert!(
                (v - f64::from(u8::from(i == j))).abs() < 1e-9,
                "{i},{j}: {v}"
            );
        }
    }
}
