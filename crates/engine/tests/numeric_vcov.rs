//! Covariance estimators against direct dense formulas written out here with
//! naive loops (invented seeded data; the check is the formula itself).

use engine::numeric::{
    expand_vcov, ols, try_vcov_cluster, vcov_classical, vcov_cluster, vcov_hc1, vcov_hc3,
    vcov_hc3_checked, GroupCodes, NumericError, Ols,
};
use faer::Mat;

mod common;
use common::Rng;

type Dense = Vec<Vec<f64>>;

fn seq() {
    faer::set_global_parallelism(faer::Par::Seq);
}

fn data(n: usize, k: usize, seed: u64) -> (Mat<f64>, Vec<f64>) {
    let mut r = Rng(seed);
    let x = Mat::from_fn(n, k, |_, j| if j == 0 { 1.0 } else { r.normal() });
    let y = (0..n)
        .map(|i| x[(i, 1)] + (1.0 + x[(i, 1)].abs()) * r.normal())
        .collect();
    (x, y)
}

/// Gauss–Jordan inverse with partial pivoting.
fn inverse(a: &Dense) -> Dense {
    let p = a.len();
    let mut m: Dense = a.clone();
    let mut inv: Dense = (0..p)
        .map(|i| (0..p).map(|j| (i == j) as u8 as f64).collect())
        .collect();
    for c in 0..p {
        let piv = (c..p)
            .max_by(|&i, &j| m[i][c].abs().total_cmp(&m[j][c].abs()))
            .unwrap();
        m.swap(c, piv);
        inv.swap(c, piv);
        let d = m[c][c];
        for j in 0..p {
            m[c][j] /= d;
            inv[c][j] /= d;
        }
        for i in 0..p {
            if i != c {
                let f = m[i][c];
                for j in 0..p {
                    m[i][j] -= f * m[c][j];
                    inv[i][j] -= f * inv[c][j];
                }
            }
        }
    }
    inv
}

fn mul(a: &Dense, b: &Dense) -> Dense {
    let (n, m, p) = (a.len(), b.len(), b[0].len());
    (0..n)
        .map(|i| {
            (0..p)
                .map(|j| (0..m).map(|l| a[i][l] * b[l][j]).sum())
                .collect()
        })
        .collect()
}

fn xtx(x: &Mat<f64>) -> Dense {
    let k = x.ncols();
    (0..k)
        .map(|a| {
            (0..k)
                .map(|b| (0..x.nrows()).map(|i| x[(i, a)] * x[(i, b)]).sum())
                .collect()
        })
        .collect()
}

/// Direct sandwich: (X'X)⁻¹ [Σ_i w_i x_i x_i'] (X'X)⁻¹.
fn sandwich_rows(x: &Mat<f64>, w: &[f64]) -> Dense {
    let k = x.ncols();
    let bread = inverse(&xtx(x));
    let mut meat = vec![vec![0.0; k]; k];
    for i in 0..x.nrows() {
        for a in 0..k {
            for b in 0..k {
                meat[a][b] += w[i] * x[(i, a)] * x[(i, b)];
            }
        }
    }
    mul(&mul(&bread, &meat), &bread)
}

/// Direct cluster sandwich: per cluster the score vector, summed outer products.
fn sandwich_cluster(x: &Mat<f64>, e: &[f64], g: &[u32]) -> Dense {
    let k = x.ncols();
    let bread = inverse(&xtx(x));
    let ng = *g.iter().max().unwrap() as usize + 1;
    let mut scores = vec![vec![0.0; k]; ng];
    for i in 0..x.nrows() {
        for a in 0..k {
            scores[g[i] as usize][a] += x[(i, a)] * e[i];
        }
    }
    let mut meat = vec![vec![0.0; k]; k];
    for s in &scores {
        for a in 0..k {
            for b in 0..k {
                meat[a][b] += s[a] * s[b];
            }
        }
    }
    mul(&mul(&bread, &meat), &bread)
}

fn close(got: &Mat<f64>, want: &Dense, rel: f64) {
    let scale = want.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs()));
    for (i, row) in want.iter().enumerate() {
        for (j, w) in row.iter().enumerate() {
            let d = (got[(i, j)] - w).abs();
            assert!(d <= rel * scale, "({i},{j}): got {}, want {w}", got[(i, j)]);
        }
    }
}

fn fit(x: &Mat<f64>, y: &[f64]) -> Ols {
    ols(x.as_ref(), y)
}

#[test]
fn classical_is_s2_times_inverse() {
    seq();
    let (x, y) = data(120, 4, 1);
    let f = fit(&x, &y);
    let v = vcov_classical(&f, 116.0);
    let s2 = f.rss / 116.0;
    let want: Dense = inverse(&xtx(&x))
        .iter()
        .map(|r| r.iter().map(|v| v * s2).collect())
        .collect();
    close(&v, &want, 1e-10);
    assert!(vcov_classical(&f, 0.0)[(0, 0)].is_nan());
}

#[test]
fn hc1_matches_direct_formula() {
    seq();
    let (x, y) = data(150, 4, 2);
    let f = fit(&x, &y);
    let w: Vec<f64> = f.residuals.iter().map(|e| e * e).collect();
    let c = 150.0 / (150.0 - 9.0);
    let want: Dense = sandwich_rows(&x, &w)
        .iter()
        .map(|r| r.iter().map(|v| v * c).collect())
        .collect();
    close(&vcov_hc1(x.as_ref(), &f, 9.0), &want, 1e-10);
    assert!(vcov_hc1(x.as_ref(), &f, 150.0)[(0, 0)].is_nan());
}

#[test]
fn hc3_matches_direct_formula_with_and_without_extra_leverage() {
    seq();
    let (x, y) = data(90, 3, 3);
    let f = fit(&x, &y);
    let bread = inverse(&xtx(&x));
    let h: Vec<f64> = (0..90)
        .map(|i| {
            (0..3)
                .map(|a| {
                    (0..3)
                        .map(|b| x[(i, a)] * bread[a][b] * x[(i, b)])
                        .sum::<f64>()
                })
                .sum()
        })
        .collect();
    let w: Vec<f64> = (0..90)
        .map(|i| (f.residuals[i] / (1.0 - h[i])).powi(2))
        .collect();
    close(
        &vcov_hc3(x.as_ref(), &f, None),
        &sandwich_rows(&x, &w),
        1e-10,
    );
    let extra: Vec<f64> = (0..90).map(|i| 0.01 * (i % 5) as f64).collect();
    let w: Vec<f64> = (0..90)
        .map(|i| (f.residuals[i] / (1.0 - h[i] - extra[i])).powi(2))
        .collect();
    close(
        &vcov_hc3(x.as_ref(), &f, Some(&extra)),
        &sandwich_rows(&x, &w),
        1e-10,
    );
}

#[test]
fn hc3_with_leverage_one_is_undefined() {
    seq();
    let (x0, y) = data(30, 2, 4);
    // A column that is one on row 7 only: that row's leverage is one.
    let x = Mat::from_fn(30, 3, |i, j| {
        if j < 2 {
            x0[(i, j)]
        } else {
            (i == 7) as u8 as f64
        }
    });
    let f = fit(&x, &y);
    match vcov_hc3_checked(x.as_ref(), &f, None) {
        Err(NumericError::LeverageOne { row, .. }) => assert_eq!(row, 7),
        other => panic!("expected leverage one, got {other:?}"),
    }
    assert!(vcov_hc3(x.as_ref(), &f, None)[(0, 0)].is_nan());
    assert!(matches!(
        vcov_hc3_checked(x0.as_ref(), &fit(&x0, &y), Some(&[0.0; 3])),
        Err(NumericError::Dimension(_))
    ));
}

#[test]
fn one_way_cluster_matches_direct_formula() {
    seq();
    let (x, y) = data(200, 4, 5);
    let f = fit(&x, &y);
    let mut r = Rng(50);
    let ids: Vec<u32> = (0..200).map(|_| 100 + r.below(23)).collect();
    let g = GroupCodes::from_ids(&ids);
    let factor = |gc: usize| gc as f64 / (gc as f64 - 1.0) * 199.0 / 196.0;
    let v = vcov_cluster(x.as_ref(), &f, &[&g], &factor);
    assert_eq!(v.n_clusters, vec![23]);
    assert!(!v.psd_fixed);
    let c = factor(23);
    let want: Dense = sandwich_cluster(&x, &f.residuals, &g.codes)
        .iter()
        .map(|r| r.iter().map(|v| v * c).collect())
        .collect();
    close(&v.vcov, &want, 1e-10);
}

#[test]
fn two_way_cluster_is_a_plus_b_minus_intersection() {
    seq();
    let (x, y) = data(300, 3, 6);
    let f = fit(&x, &y);
    let mut r = Rng(60);
    let a: Vec<u32> = (0..300).map(|i| (i / 10) as u32).collect();
    let b: Vec<u32> = (0..300).map(|_| r.below(12)).collect();
    let ga = GroupCodes::from_ids(&a);
    let gb = GroupCodes::from_ids(&b);
    let factor = |gc: usize| gc as f64 / (gc as f64 - 1.0);
    let v = vcov_cluster(x.as_ref(), &f, &[&ga, &gb], &factor);
    let ab: Vec<u32> = a.iter().zip(&b).map(|(p, q)| p * 1000 + q).collect();
    let gab = GroupCodes::from_ids(&ab);
    assert_eq!(v.n_clusters, vec![30, 12, gab.n_groups()]);
    let va = sandwich_cluster(&x, &f.residuals, &ga.codes);
    let vb = sandwich_cluster(&x, &f.residuals, &gb.codes);
    let vab = sandwich_cluster(&x, &f.residuals, &gab.codes);
    let (fa, fb, fab) = (factor(30), factor(12), factor(gab.n_groups()));
    let want: Dense = (0..3)
        .map(|i| {
            (0..3)
                .map(|j| fa * va[i][j] + fb * vb[i][j] - fab * vab[i][j])
                .collect()
        })
        .collect();
    // Positive definite here, so unchanged by the fix.
    assert!(!v.psd_fixed);
    close(&v.vcov, &want, 1e-10);
}

#[test]
fn two_way_cluster_fixes_an_indefinite_sum() {
    seq();
    let (x, y) = data(60, 3, 8);
    let f = fit(&x, &y);
    // Every row its own cluster in both groupings, and a factor that weighs the
    // intersection three times: A + B − 3·AB = −AB, negative definite.
    let ids: Vec<u32> = (0..60).collect();
    let g = GroupCodes::from_ids(&ids);
    let h = GroupCodes::from_ids(&ids);
    let calls = std::cell::Cell::new(0);
    let factor = |_: usize| {
        calls.set(calls.get() + 1);
        if calls.get() == 3 {
            3.0
        } else {
            1.0
        }
    };
    let v = vcov_cluster(x.as_ref(), &f, &[&g, &h], &factor);
    assert!(v.psd_fixed);
    let evd = v.vcov.self_adjoint_eigen(faer::Side::Lower).unwrap();
    for i in 0..3 {
        assert!(evd.S()[i] >= -1e-14, "eigenvalue {}", evd.S()[i]);
    }
    // −AB is negative definite: every eigenvalue clipped, the result is zero.
    for i in 0..3 {
        for j in 0..3 {
            assert!(v.vcov[(i, j)].abs() < 1e-12);
        }
    }
}

#[test]
fn cluster_input_errors() {
    seq();
    let (x, y) = data(20, 2, 9);
    let f = fit(&x, &y);
    let short = GroupCodes::from_ids(&[0, 1, 2]);
    let one = |_: usize| 1.0;
    assert!(matches!(
        try_vcov_cluster(x.as_ref(), &f, &[&short], &one),
        Err(NumericError::Dimension(_))
    ));
    assert!(matches!(
        try_vcov_cluster(x.as_ref(), &f, &[], &one),
        Err(NumericError::ClusterCount(0))
    ));
    let bad = GroupCodes {
        codes: vec![5; 20],
        counts: vec![20],
    };
    assert!(matches!(
        try_vcov_cluster(x.as_ref(), &f, &[&bad], &one),
        Err(NumericError::BadCode { .. })
    ));
    assert!(vcov_cluster(x.as_ref(), &f, &[&bad], &one).vcov[(0, 0)].is_nan());
}

#[test]
fn aliased_columns_expand_to_nan() {
    seq();
    let (x0, y) = data(40, 3, 10);
    let x = Mat::from_fn(40, 4, |i, j| {
        if j == 2 {
            2.0 * x0[(i, 1)]
        } else {
            x0[(i, j.min(2))]
        }
    });
    let f = fit(&x, &y);
    assert_eq!(f.kept, vec![0, 1, 3]);
    let v = vcov_hc1(x.as_ref(), &f, 3.0);
    assert_eq!(v.nrows(), 3);
    let full = expand_vcov(&f, v.as_ref());
    assert!(full[(2, 2)].is_nan() && full[(0, 2)].is_nan());
    assert_eq!(full[(3, 1)], v[(2, 1)]);
}

/// More rows than one block of the row-block kernels (16,384), so the
/// per-block sums, their addition and the parallel leverages are exercised:
/// HC1, HC3 and the one-way cluster sandwich against the direct formulas.
#[test]
fn sandwiches_over_many_row_blocks_match_direct_formulas() {
    seq();
    let n = 40_000;
    let (x, y) = data(n, 3, 8);
    let f = fit(&x, &y);
    let w: Vec<f64> = f.residuals.iter().map(|e| e * e).collect();
    close(&vcov_hc1(x.as_ref(), &f, 0.0), &sandwich_rows(&x, &w), 1e-9);

    let bread = inverse(&xtx(&x));
    let w3: Vec<f64> = (0..n)
        .map(|i| {
            let h: f64 = (0..3)
                .map(|a| {
                    (0..3)
                        .map(|b| x[(i, a)] * bread[a][b] * x[(i, b)])
                        .sum::<f64>()
                })
                .sum();
            (f.residuals[i] / (1.0 - h)).powi(2)
        })
        .collect();
    close(
        &vcov_hc3(x.as_ref(), &f, None),
        &sandwich_rows(&x, &w3),
        1e-9,
    );

    let mut r = Rng(81);
    let ids: Vec<u32> = (0..n).map(|_| r.below(30_000)).collect();
    let g = GroupCodes::from_ids(&ids);
    let v = vcov_cluster(x.as_ref(), &f, &[&g], &|_| 1.0);
    close(&v.vcov, &sandwich_cluster(&x, &f.residuals, &g.codes), 1e-9);
}
