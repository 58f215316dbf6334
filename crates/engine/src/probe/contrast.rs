//! A linear contrast `g · b` of the coefficients with its inference, and the
//! quadratic that inverting a t test in one variable leads to (Johnson–Neyman
//! bounds, the Fieller interval).

use statrs::distribution::{ContinuousCDF, StudentsT};

use super::{Estimate, Inference};

pub(crate) fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// `aᵀ V c` with V the coefficient covariance.
pub(crate) fn form(inf: &dyn Inference, a: &[f64], c: &[f64]) -> f64 {
    let mut s = 0.0;
    for (i, ai) in a.iter().enumerate() {
        if *ai == 0.0 {
            continue;
        }
        for (j, cj) in c.iter().enumerate() {
            if *cj != 0.0 {
                s += ai * inf.covariance(i, j) * cj;
            }
        }
    }
    s
}

/// The two-sided critical value of t at `level` (the `(1 + level)/2` quantile).
/// An unusable df (≤ 0 or NaN) gives NaN, which callers report as such.
pub(crate) fn critical(df: f64, level: f64) -> f64 {
    match StudentsT::new(0.0, 1.0, df) {
        Ok(t) => t.inverse_cdf(0.5 + level / 2.0),
        Err(_) => f64::NAN,
    }
}

/// Upper tail probability P(T > t) at `df`.
pub(crate) fn upper_tail(t: f64, df: f64) -> f64 {
    match StudentsT::new(0.0, 1.0, df) {
        Ok(d) => d.sf(t),
        Err(_) => f64::NAN,
    }
}

/// `g · b` with its delta-method (here exact, the contrast being linear) SE
/// √(gᵀVg), df from the model's rule, two-sided p and the interval at `level`.
pub(crate) fn estimate(inf: &dyn Inference, b: &[f64], g: &[f64], level: f64) -> Estimate {
    let est = dot(g, b);
    let se = form(inf, g, g).max(0.0).sqrt();
    let df = inf.df_for(g);
    let t = est / se;
    let q = critical(df, level);
    Estimate {
        estimate: est,
        std_error: se,
        df,
        t,
        p: 2.0 * upper_tail(t.abs(), df),
        ci_low: est - q * se,
        ci_high: est + q * se,
        boot_ci: None,
    }
}

/// A gradient `grad(v)` written as a + c·v, or `None` when it is not linear
/// in v (the variable enters through a power, `log` or `sqrt`).
///
/// Algorithm: a and c from the gradients at `lo` and `hi` (callers check that
/// `lo < hi`); the line is then checked at a third point inside the range,
/// lo + 0.381966·(hi − lo). Tolerance: every entry there must match a + c·v to
/// 1e-9 of the largest entry seen at the three points.
pub(crate) fn linear_in(
    lo: f64,
    hi: f64,
    grad: impl Fn(f64) -> Vec<f64>,
) -> Option<(Vec<f64>, Vec<f64>)> {
    let (d0, d1) = (grad(lo), grad(hi));
    let c: Vec<f64> = d0
        .iter()
        .zip(&d1)
        .map(|(a, b)| (b - a) / (hi - lo))
        .collect();
    let a: Vec<f64> = d0.iter().zip(&c).map(|(d, c)| d - c * lo).collect();
    let vm = lo + 0.381_966 * (hi - lo);
    let dm = grad(vm);
    let size = dm
        .iter()
        .chain(&d0)
        .chain(&d1)
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let linear = dm
        .iter()
        .zip(a.iter().zip(&c))
        .all(|(d, (a, c))| (d - (a + c * vm)).abs() <= 1e-9 * size.max(f64::MIN_POSITIVE));
    linear.then_some((a, c))
}

/// Q(v) = (A + C v)² − t² (Vaa + 2 v Vac + v² Vcc): positive exactly where the
/// t statistic of the linear function A + C v exceeds `t` in size.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Inversion {
    pub q2: f64,
    pub q1: f64,
    pub q0: f64,
    /// Size of the leading coefficient's parts, to judge it zero against.
    scale2: f64,
}

/// Real roots of the quadratic, ascending.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum Roots {
    /// The leading coefficient is zero within rounding: a line (no root when it is flat).
    Linear(Option<f64>),
    None,
    Two(f64, f64),
}

impl Inversion {
    pub fn new(a: f64, c: f64, vaa: f64, vac: f64, vcc: f64, t: f64) -> Inversion {
        let t2 = t * t;
        Inversion {
            q2: c * c - t2 * vcc,
            q1: 2.0 * (a * c - t2 * vac),
            q0: a * a - t2 * vaa,
            scale2: c * c + t2 * vcc,
        }
    }

    /// The leading coefficient counts as zero when it is below 1e-12 of the
    /// size of its two parts (they cancel to rounding).
    pub fn degenerate(&self) -> bool {
        self.q2.abs() <= 1e-12 * self.scale2
    }

    /// Roots by the cancellation-free form of the quadratic formula; a double
    /// root counts as none (the sign of Q does not change there).
    pub fn roots(&self) -> Roots {
        if self.degenerate() {
            return Roots::Linear((self.q1 != 0.0).then(|| -self.q0 / self.q1));
        }
        let disc = self.q1 * self.q1 - 4.0 * self.q2 * self.q0;
        if disc <= 0.0 {
            return Roots::None;
        }
        let r = -0.5 * (self.q1 + self.q1.signum() * disc.sqrt());
        let (x1, x2) = if r == 0.0 {
            let h = (-self.q0 / self.q2).sqrt();
            (-h, h)
        } else {
            (r / self.q2, self.q0 / r)
        };
        Roots::Two(x1.min(x2), x1.max(x2))
    }
}

/// Percentile of sorted values by linear interpolation between order
/// statistics (position (n − 1)·p/100, the common default of numerical libraries).
pub(crate) fn percentile_sorted(sorted: &[f64], p: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = (sorted.len() - 1) as f64 * p / 100.0;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn roots_of_a_known_quadratic() {
        // (v − 1)(v − 3) = v² − 4v + 3, built from A = −2, C = 1, t = 1, Vaa = 1, Vac = 0, Vcc = 0.
        let q = Inversion::new(-2.0, 1.0, 1.0, 0.0, 0.0, 1.0);
        assert_eq!(q.roots(), Roots::Two(1.0, 3.0));
    }

    #[test]
    fn no_roots_when_significant_everywhere_or_nowhere() {
        let everywhere = Inversion {
            q2: 1.0,
            q1: 0.0,
            q0: 1.0,
            scale2: 1.0,
        };
        assert_eq!(everywhere.roots(), Roots::None);
        let nowhere = Inversion {
            q2: -1.0,
            q1: 0.0,
            q0: -1.0,
            scale2: 1.0,
        };
        assert_eq!(nowhere.roots(), Roots::None);
    }

    #[test]
    fn a_cancelling_leading_coefficient_is_linear() {
        // C² = t² Vcc exactly: Q = 2(AC − t²Vac) v + A² − t²Vaa.
        let q = Inversion::new(1.0, 2.0, 0.25, 0.0, 1.0, 2.0);
        assert_eq!(q.roots(), Roots::Linear(Some(0.0)));
    }

    #[test]
    fn a_straight_gradient_is_recovered_and_a_curved_one_refused() {
        // (1 + 2v, 3) is a + c·v with a = (1, 3), c = (2, 0) by hand; v² is not linear.
        let (a, c) = linear_in(0.0, 4.0, |v| vec![1.0 + 2.0 * v, 3.0]).unwrap();
        for (g, w) in a.iter().chain(&c).zip([1.0, 3.0, 2.0, 0.0]) {
            assert!((g - w).abs() < 1e-12, "{a:?} {c:?}");
        }
        assert!(linear_in(0.0, 1.0, |v| vec![v * v]).is_none());
        // A tiny curvature below 1e-9 of the gradient's size still counts as straight.
        assert!(linear_in(0.0, 1.0, |v| vec![1.0 + v + 1e-12 * v * v]).is_some());
    }

    #[test]
    fn percentiles_interpolate_between_order_statistics() {
        // numpy.percentile([1, 2, 3, 4], [0, 25, 50, 90, 100]) = 1, 1.75, 2.5, 3.7, 4 (from memory).
        let v = [1.0, 2.0, 3.0, 4.0];
        let got: Vec<f64> = [0.0, 25.0, 50.0, 90.0, 100.0]
            .iter()
            .map(|&p| percentile_sorted(&v, p))
            .collect();
        let want = [1.0, 1.75, 2.5, 3.7, 4.0];
        for (g, w) in got.iter().zip(want) {
            assert!((g - w).abs() < 1e-12, "{got:?}");
        }
    }
}
