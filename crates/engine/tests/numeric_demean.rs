//! The within transform, singleton removal, redundant levels and nesting.
//! Invented seeded panels; the checks are identities (orthogonality to every
//! grouping's indicators) and agreement with the dummy-variable least-squares
//! residual computed by `ols` on an explicit indicator matrix.

use engine::numeric::{
    demean, nested_in, ols, redundant_levels, singleton_rows, try_demean, GroupCodes, NumericError,
};
use faer::Mat;

mod common;
use common::Rng;

fn seq() {
    faer::set_global_parallelism(faer::Par::Seq);
}

/// An unbalanced panel: each unit is observed in a random subset of periods
/// (each period kept with probability `keep`), at least two.
fn panel(units: u32, periods: u32, keep: f64, seed: u64) -> (Vec<u32>, Vec<u32>) {
    let mut r = Rng(seed);
    let (mut u, mut t) = (Vec::new(), Vec::new());
    for i in 0..units {
        let mut any = 0;
        for p in 0..periods {
            if r.unif() < keep || (p + 2 >= periods && any < 2) {
                u.push(i);
                t.push(p);
                any += 1;
            }
        }
    }
    (u, t)
}

fn columns(n: usize, k: usize, unit: &[u32], time: &[u32], seed: u64) -> Vec<Vec<f64>> {
    let mut r = Rng(seed);
    (0..k)
        .map(|j| {
            (0..n)
                .map(|i| {
                    r.normal() + 0.3 * unit[i] as f64 + (j as f64 + 1.0) * (time[i] as f64).sin()
                })
                .collect()
        })
        .collect()
}

fn group_sums(col: &[f64], g: &GroupCodes) -> Vec<f64> {
    let mut s = vec![0.0; g.n_groups()];
    for (v, &c) in col.iter().zip(&g.codes) {
        s[c as usize] += v;
    }
    s
}

/// Dummy-variable least squares: the residual of `y` on the indicators of
/// every grouping (the redundant ones aliased by `ols`).
fn lsdv_residual(y: &[f64], groupings: &[&GroupCodes]) -> Vec<f64> {
    let n = y.len();
    let widths: Vec<usize> = groupings.iter().map(|g| g.n_groups()).collect();
    let k: usize = widths.iter().sum();
    let x = Mat::from_fn(n, k, |i, j| {
        let mut j = j;
        for (g, &w) in groupings.iter().zip(&widths) {
            if j < w {
                return (g.codes[i] as usize == j) as u8 as f64;
            }
            j -= w;
        }
        0.0
    });
    ols(x.as_ref(), y).residuals
}

#[test]
fn one_grouping_is_one_exact_sweep() {
    let mut r = Rng(1);
    let ids: Vec<u32> = (0..500).map(|_| r.below(37)).collect();
    let g = GroupCodes::from_ids(&ids);
    let x: Vec<f64> = (0..500).map(|_| 5.0 + r.normal()).collect();
    let mut cols = vec![x.clone()];
    let d = demean(&mut cols, std::slice::from_ref(&g), 1e-10, 100);
    assert_eq!(d.iterations, 1);
    assert!(d.converged);
    let sums = group_sums(&x, &g);
    for i in 0..500 {
        let c = g.codes[i] as usize;
        let want = x[i] - sums[c] / g.counts[c] as f64;
        assert!((cols[0][i] - want).abs() < 1e-13);
    }
}

#[test]
fn two_way_result_is_orthogonal_to_both_groupings() {
    let (u, t) = panel(300, 12, 0.6, 2);
    let n = u.len();
    let gs = vec![GroupCodes::from_ids(&u), GroupCodes::from_ids(&t)];
    let orig = columns(n, 3, &u, &t, 3);
    let mut cols = orig.clone();
    let d = demean(&mut cols, &gs, 1e-12, 1000);
    assert!(d.converged, "{d:?}");
    assert!(d.iterations > 1 && d.last_change <= 1e-12);
    for (c, o) in cols.iter().zip(&orig) {
        let scale = o.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        for g in &gs {
            for s in group_sums(c, g) {
                assert!(s.abs() < 1e-8 * scale, "group sum {s}");
            }
        }
    }
}

#[test]
fn two_way_equals_dummy_variable_residual() {
    seq();
    let (u, t) = panel(40, 7, 0.55, 4);
    let n = u.len();
    let gu = GroupCodes::from_ids(&u);
    let gt = GroupCodes::from_ids(&t);
    let orig = columns(n, 2, &u, &t, 5);
    let mut cols = orig.clone();
    let d = demean(&mut cols, &[gu.clone(), gt.clone()], 1e-14, 10_000);
    assert!(d.converged, "{d:?}");
    for (c, o) in cols.iter().zip(&orig) {
        let want = lsdv_residual(o, &[&gu, &gt]);
        for i in 0..n {
            assert!(
                (c[i] - want[i]).abs() < 1e-8,
                "row {i}: {} vs {}",
                c[i],
                want[i]
            );
        }
    }
}

#[test]
fn three_way_equals_dummy_variable_residual() {
    seq();
    let (u, t) = panel(30, 6, 0.7, 6);
    let n = u.len();
    let mut r = Rng(7);
    // Regions: mostly the unit's, sometimes another (not nested).
    let reg: Vec<u32> = u
        .iter()
        .map(|&x| if r.unif() < 0.1 { r.below(5) } else { x % 5 })
        .collect();
    let gs = vec![
        GroupCodes::from_ids(&u),
        GroupCodes::from_ids(&t),
        GroupCodes::from_ids(&reg),
    ];
    let orig = columns(n, 2, &u, &t, 8);
    let mut cols = orig.clone();
    let d = demean(&mut cols, &gs, 1e-14, 10_000);
    assert!(d.converged, "{d:?}");
    for (c, o) in cols.iter().zip(&orig) {
        let want = lsdv_residual(o, &[&gs[0], &gs[1], &gs[2]]);
        for i in 0..n {
            assert!(
                (c[i] - want[i]).abs() < 1e-8,
                "row {i}: {} vs {}",
                c[i],
                want[i]
            );
        }
    }
}

#[test]
fn grouping_order_does_not_matter() {
    let (u, t) = panel(80, 9, 0.5, 9);
    let gu = GroupCodes::from_ids(&u);
    let gt = GroupCodes::from_ids(&t);
    let orig = columns(u.len(), 1, &u, &t, 10);
    let mut a = orig.clone();
    let mut b = orig.clone();
    demean(&mut a, &[gu.clone(), gt.clone()], 1e-14, 10_000);
    demean(&mut b, &[gt, gu], 1e-14, 10_000);
    for (x, y) in a[0].iter().zip(&b[0]) {
        assert!((x - y).abs() < 1e-9);
    }
}

#[test]
fn tiny_max_iter_reports_no_convergence() {
    let (u, t) = panel(200, 10, 0.5, 11);
    let gs = vec![GroupCodes::from_ids(&u), GroupCodes::from_ids(&t)];
    let mut cols = columns(u.len(), 2, &u, &t, 12);
    let d = demean(&mut cols, &gs, 1e-14, 2);
    assert!(!d.converged);
    assert_eq!(d.iterations, 2);
    assert!(d.last_change > 1e-14);
    let mut cols = columns(u.len(), 1, &u, &t, 12);
    let d = demean(&mut cols, &gs, 1e-10, 0);
    assert!(!d.converged && d.iterations == 0);
}

#[test]
fn bad_inputs_leave_columns_unchanged() {
    let g = GroupCodes::from_ids(&[0, 0, 1, 1]);
    let mut cols = vec![vec![1.0, 2.0, 3.0]];
    let d = demean(&mut cols, std::slice::from_ref(&g), 1e-10, 10);
    assert!(!d.converged && d.last_change.is_nan());
    assert_eq!(cols[0], vec![1.0, 2.0, 3.0]);
    let bad = GroupCodes {
        codes: vec![0, 3, 0, 1],
        counts: vec![2, 1],
    };
    let mut cols = vec![vec![1.0; 4]];
    assert!(matches!(
        try_demean(&mut cols, &[bad], 1e-10, 10),
        Err(NumericError::BadCode { row: 1, .. })
    ));
    // A NaN column is reported, other columns still demeaned.
    let mut cols = vec![vec![1.0, f64::NAN, 3.0, 4.0], vec![1.0, 3.0, 5.0, 9.0]];
    let d = demean(&mut cols, std::slice::from_ref(&g), 1e-10, 10);
    assert!(!d.converged);
    assert_eq!(cols[1], vec![-1.0, 1.0, -2.0, 2.0]);
    // Nothing to do.
    let d = demean(&mut [], std::slice::from_ref(&g), 1e-10, 10);
    assert!(d.converged);
    let mut cols = vec![vec![0.0; 4]];
    assert!(demean(&mut cols, &[g.clone(), g], 1e-10, 10).converged);
}

#[test]
fn singletons_are_removed_over_several_rounds() {
    // A chain where each removal exposes the next singleton, plus a block of
    // four rows in which every group has two rows.
    let a = [0, 0, 1, 1, 2, 2, 5, 5, 6, 6];
    let b = [0, 1, 1, 2, 2, 3, 5, 6, 5, 6];
    let gs = vec![GroupCodes::from_ids(&a), GroupCodes::from_ids(&b)];
    let (keep, removed) = singleton_rows(&gs);
    assert_eq!(removed, 6);
    assert_eq!(
        keep,
        vec![false, false, false, false, false, false, true, true, true, true]
    );
    // The same rows in reverse order: the same set.
    let ra: Vec<u32> = a.iter().rev().copied().collect();
    let rb: Vec<u32> = b.iter().rev().copied().collect();
    let (keep_r, removed_r) =
        singleton_rows(&[GroupCodes::from_ids(&ra), GroupCodes::from_ids(&rb)]);
    assert_eq!(removed_r, 6);
    assert_eq!(keep_r.iter().rev().copied().collect::<Vec<_>>(), keep);
    // One grouping: only true singletons.
    let (keep, removed) = singleton_rows(&[GroupCodes::from_ids(&[4, 4, 7, 9, 9])]);
    assert_eq!((keep, removed), (vec![true, true, false, true, true], 1));
    assert_eq!(singleton_rows(&[]), (vec![], 0));
    // Subsetting re-densifies.
    let g = GroupCodes::from_ids(&[4, 4, 7, 9, 9]).subset(&[true, true, false, true, true]);
    assert_eq!(
        g,
        GroupCodes {
            codes: vec![0, 0, 1, 1],
            counts: vec![2, 2]
        }
    );
}

#[test]
fn redundant_levels_count_components() {
    // Two blocks: units 0–2 × periods 0–1 and units 3–4 × periods 2–3.
    let u = [0, 0, 1, 1, 2, 2, 3, 3, 4, 4];
    let t = [0, 1, 0, 1, 1, 0, 2, 3, 3, 2];
    let gu = GroupCodes::from_ids(&u);
    let gt = GroupCodes::from_ids(&t);
    assert_eq!(redundant_levels(&[gu.clone(), gt.clone()]), 2);
    assert_eq!(redundant_levels(std::slice::from_ref(&gu)), 1);
    assert_eq!(redundant_levels(&[]), 0);
    // Linking the blocks by one row makes one component.
    let u2 = [0, 0, 1, 1, 2, 2, 3, 3, 4, 4, 0];
    let t2 = [0, 1, 0, 1, 1, 0, 2, 3, 3, 2, 2];
    assert_eq!(
        redundant_levels(&[GroupCodes::from_ids(&u2), GroupCodes::from_ids(&t2)]),
        1
    );
    // A third grouping that units are nested in: all its levels are redundant.
    let region = GroupCodes::from_ids(&[0, 0, 0, 0, 1, 1, 1, 1, 1, 1]);
    assert!(nested_in(&gu, &region));
    assert_eq!(redundant_levels(&[gu.clone(), gt.clone(), region]), 2 + 2);
    // One that is not nested: one more.
    let other = GroupCodes::from_ids(&[0, 1, 0, 1, 0, 1, 0, 1, 0, 1]);
    assert_eq!(redundant_levels(&[gu, gt, other]), 2 + 1);
}

#[test]
fn nesting_and_codes() {
    let inner = GroupCodes::from_ids(&[10, 10, 11, 12, 12]);
    let outer = GroupCodes::from_ids(&[1, 1, 1, 2, 2]);
    assert!(nested_in(&inner, &outer));
    assert!(!nested_in(&outer, &inner));
    let broken = GroupCodes::from_ids(&[1, 2, 1, 2, 2]);
    assert!(!nested_in(&inner, &broken));
    assert!(!nested_in(&inner, &GroupCodes::from_ids(&[1, 1])));
    assert_eq!(
        inner,
        GroupCodes {
            codes: vec![0, 0, 1, 2, 2],
            counts: vec![2, 1, 2]
        }
    );
    // Large ids take the hashed path and give the same codes.
    let big = GroupCodes::from_ids(&[u32::MAX, 7, u32::MAX, 3_000_000_000]);
    assert_eq!(
        big,
        GroupCodes {
            codes: vec![0, 1, 0, 2],
            counts: vec![2, 1, 1]
        }
    );
    let ab = GroupCodes::intersect(&inner, &broken).unwrap();
    assert_eq!(ab.codes, vec![0, 1, 2, 3, 3]);
    assert!(GroupCodes::from_codes(vec![0, 2], 2).is_err());
    assert_eq!(
        GroupCodes::from_codes(vec![0, 2], 3).unwrap().counts,
        vec![1, 0, 1]
    );
}

#[test]
fn disconnected_blocks_and_repeated_groupings() {
    seq();
    // Two blocks of units with their own periods: the system is singular by
    // two levels, still consistent; the result must equal the dummy residual.
    let (u1, t1) = panel(15, 5, 0.7, 20);
    let (u2, t2) = panel(12, 4, 0.7, 21);
    let u: Vec<u32> = u1
        .iter()
        .copied()
        .chain(u2.iter().map(|x| x + 100))
        .collect();
    let t: Vec<u32> = t1
        .iter()
        .copied()
        .chain(t2.iter().map(|x| x + 100))
        .collect();
    let gu = GroupCodes::from_ids(&u);
    let gt = GroupCodes::from_ids(&t);
    assert_eq!(redundant_levels(&[gu.clone(), gt.clone()]), 2);
    let orig = columns(u.len(), 1, &u, &t, 22);
    let mut cols = orig.clone();
    let d = demean(&mut cols, &[gu.clone(), gt.clone()], 1e-14, 10_000);
    assert!(d.converged, "{d:?}");
    let want = lsdv_residual(&orig[0], &[&gu, &gt]);
    for (a, b) in cols[0].iter().zip(&want) {
        assert!((a - b).abs() < 1e-8, "{a} vs {b}");
    }
    // The same grouping twice is one grouping.
    let mut twice = orig.clone();
    let d = demean(&mut twice, &[gu.clone(), gu.clone()], 1e-12, 100);
    assert!(d.converged);
    let mut once = orig.clone();
    demean(&mut once, std::slice::from_ref(&gu), 1e-12, 100);
    for (a, b) in twice[0].iter().zip(&once[0]) {
        assert!((a - b).abs() < 1e-12);
    }
}

#[test]
fn a_column_made_of_group_effects_demeans_to_zero() {
    let (u, t) = panel(100, 8, 0.6, 30);
    let x: Vec<f64> = u
        .iter()
        .zip(&t)
        .map(|(&a, &b)| 10.0 + (a as f64).sqrt() - 3.0 * b as f64)
        .collect();
    let gs = vec![GroupCodes::from_ids(&u), GroupCodes::from_ids(&t)];
    let mut cols = vec![x];
    let d = demean(&mut cols, &gs, 1e-13, 1000);
    assert!(d.converged);
    assert!(
        cols[0].iter().all(|v| v.abs() < 1e-10),
        "{:?}",
        &cols[0][..5]
    );
}

#[test]
fn a_balanced_two_way_panel_takes_one_iteration() {
    // Balanced: the exact result is x − unit mean − period mean + grand mean,
    // and one preconditioned conjugate-gradient step reaches it.
    let u: Vec<u32> = (0..60).map(|i| i / 6).collect();
    let t: Vec<u32> = (0..60).map(|i| i % 6).collect();
    let gs = vec![GroupCodes::from_ids(&u), GroupCodes::from_ids(&t)];
    let x = columns(60, 1, &u, &t, 40).remove(0);
    let mut cols = vec![x.clone()];
    let d = demean(&mut cols, &gs, 1e-13, 1);
    assert!(d.converged && d.iterations == 1, "{d:?}");
    let mean = |f: &dyn Fn(usize) -> bool| {
        let v: Vec<f64> = (0..60).filter(|&i| f(i)).map(|i| x[i]).collect();
        v.iter().sum::<f64>() / v.len() as f64
    };
    let grand = mean(&|_| true);
    for i in 0..60 {
        let want = x[i] - mean(&|j| u[j] == u[i]) - mean(&|j| t[j] == t[i]) + grand;
        assert!((cols[0][i] - want).abs() < 1e-12);
    }
    // With no iteration only the unit means are removed: not converged.
    let mut cols = vec![x];
    assert!(!demean(&mut cols, &gs, 1e-13, 0).converged);
}
