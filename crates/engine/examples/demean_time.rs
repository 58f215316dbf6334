//! Timing of the within transform on a large invented unbalanced panel:
//! 200,000 units observed in 10–40 consecutive periods of 50 (about 5,000,000
//! rows), an outcome and five regressors, two groupings (unit, period), then a
//! third (a region of 50 levels that units mostly, not always, belong to).
//!
//! Run: `cargo run --release -p engine --example demean_time [tol]`.

use std::time::Instant;

use engine::numeric::{demean, GroupCodes};

struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn unif(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn below(&mut self, m: u64) -> u64 {
        self.next() % m
    }
}

fn main() {
    let tol: f64 = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(1e-10);
    let shuffled = std::env::args().any(|a| a == "--shuffle");
    let mut r = Rng(2024);
    let units = 200_000u64;
    let (mut unit, mut period, mut region) = (Vec::new(), Vec::new(), Vec::new());
    for u in 0..units {
        let len = 10 + r.below(31);
        let start = r.below(50 - len + 1);
        let home = u % 50;
        for t in start..start + len {
            unit.push(u as u32);
            period.push(t as u32);
            // 2% of rows in another region (movers): not nested.
            region.push(if r.unif() < 0.02 {
                r.below(50) as u32
            } else {
                home as u32
            });
        }
    }
    let n = unit.len();
    if shuffled {
        for i in (1..n).rev() {
            let j = r.below(i as u64 + 1) as usize;
            unit.swap(i, j);
            period.swap(i, j);
            region.swap(i, j);
        }
    }
    let ue: Vec<f64> = (0..units).map(|_| r.unif() * 4.0).collect();
    let te: Vec<f64> = (0..50).map(|t| (t as f64 * 0.3).sin() * 3.0).collect();
    let make = |r: &mut Rng, j: usize| -> Vec<f64> {
        (0..n)
            .map(|i| {
                ue[unit[i] as usize] * (1.0 + j as f64 * 0.1) + te[period[i] as usize] + r.unif()
            })
            .collect()
    };
    let base: Vec<Vec<f64>> = (0..6).map(|j| make(&mut r, j)).collect();
    let t0 = Instant::now();
    let gu = GroupCodes::from_ids(&unit);
    let gt = GroupCodes::from_ids(&period);
    let gr = GroupCodes::from_ids(&region);
    println!(
        "rows {n}, units {}, periods {}, regions {}, codes built in {:.3} s{}",
        gu.n_groups(),
        gt.n_groups(),
        gr.n_groups(),
        t0.elapsed().as_secs_f64(),
        if shuffled { " (rows shuffled)" } else { "" }
    );
    for (label, gs) in [
        ("unit + period", vec![gu.clone(), gt.clone()]),
        ("unit + period + region", vec![gu, gt, gr]),
    ] {
        let mut cols = base.clone();
        let t = Instant::now();
        let d = demean(&mut cols, &gs, tol, 10_000);
        println!(
            "{label}: 6 columns demeaned in {:.3} s, {} sweeps, converged {}, last change {:.2e} (tol {tol:e})",
            t.elapsed().as_secs_f64(),
            d.iterations,
            d.converged,
            d.last_change
        );
    }
}
