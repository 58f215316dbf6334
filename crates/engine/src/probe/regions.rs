//! `regions M: X across W`: Johnson–Neyman bounds.
//!
//! When W enters linearly (X·W products, or an affine `center`/`z` of W), the
//! gradient of the effect of X is a + c·w, so the effect is A + C w with
//! variance Vaa + 2w Vac + w² Vcc. It is significant at `alpha` where
//! (A + C w)² > t² Var(w), t the two-sided critical value at one df for the
//! whole curve: the model's df for the X·W product's coefficient. The roots of
//! that quadratic are the bounds; the sign of its leading coefficient decides
//! whether the region lies inside or outside them (see [`Inversion`]).
//! Linearity is checked numerically: the gradient at a third value of W must
//! match a + c·w to 1e-9 of its size.

use check::Request;

use super::contrast::{dot, form, linear_in, Inversion, Roots};
use super::point::{range, Focal};
use super::simple::{curved_in_x, Boot};
use super::{Inference, RegionsResult, Significant};
use crate::ModelFit;

/// The effect's gradient as a + c·w, or an error when W enters non-linearly.
pub(crate) fn linear_in_w(
    ctx: &Focal,
    x: f64,
    lo: f64,
    hi: f64,
) -> Result<(Vec<f64>, Vec<f64>), String> {
    let w_name = ctx.moderator.clone().unwrap_or_default();
    if hi.is_nan() || lo.is_nan() || hi <= lo {
        return Err(format!("`{w_name}` does not vary in the estimation sample"));
    }
    linear_in(lo, hi, |w| ctx.slope(x, w)).ok_or_else(|| {
        format!(
            "the effect of `{}` is not a straight line in `{w_name}` (it enters through a power, `log` or `sqrt`), so Johnson–Neyman bounds do not apply; probe it at chosen values instead",
            ctx.focal
        )
    })
}

/// The bounds and the case, without the bootstrap.
pub(crate) fn compute(ctx: &Focal, fit: &ModelFit, alpha: f64) -> Result<RegionsResult, String> {
    let w_name = ctx
        .moderator
        .clone()
        .ok_or("`regions` needs a moderator: `regions M: X across W`")?;
    let w_rows = ctx.w_rows.as_ref().ok_or("no moderator values")?;
    let (lo, hi) = range(w_rows);
    let x = ctx.x_mean;
    let (a, c) = linear_in_w(ctx, x, lo, hi)?;
    let b = fit.coefficients();
    // One df for the whole curve: that of the product coefficient (the largest
    // entry of c); with a constant-df model every contrast has the same df.
    let j = (0..c.len())
        .max_by(|&i, &k| c[i].abs().total_cmp(&c[k].abs()))
        .unwrap_or(0);
    let mut unit = vec![0.0; c.len()];
    unit[j] = 1.0;
    let df = fit.df_for(&unit);
    let t = super::contrast::critical(df, 1.0 - alpha);
    let q = Inversion::new(
        dot(&a, &b),
        dot(&c, &b),
        form(fit, &a, &a),
        form(fit, &a, &c),
        form(fit, &c, &c),
        t,
    );
    let (bounds, significant) = classify(&q);
    let mut notes = vec![format!(
        "critical t {t:.4} at {df} df ({}), alpha {alpha}",
        fit.df_words()
    )];
    if curved_in_x(ctx, (lo + hi) / 2.0) {
        notes.push(format!(
            "the effect of `{}` depends on `{}` itself; it is taken at its mean ({x:.4})",
            ctx.focal, ctx.focal
        ));
    }
    let outside: Vec<String> = bounds
        .iter()
        .filter(|v| **v < lo || **v > hi)
        .map(|v| format!("{v:.4}"))
        .collect();
    if !outside.is_empty() {
        notes.push(format!(
            "bound(s) {} lie outside the observed range of `{w_name}` [{lo}, {hi}]",
            outside.join(", ")
        ));
    }
    Ok(RegionsResult {
        model: fit.name.clone(),
        focal: ctx.focal.clone(),
        moderator: w_name,
        alpha,
        critical: t,
        df,
        bounds,
        significant,
        data_min: lo,
        data_max: hi,
        boot_significant: None,
        bootstrap: None,
        notes,
    })
}

/// Where Q(w) > 0: outside two roots when the leading coefficient is positive
/// (the interaction itself is significant), inside them when it is negative,
/// everywhere or nowhere without real roots, one side of a single root when
/// the quadratic degenerates to a line.
pub(crate) fn classify(q: &Inversion) -> (Vec<f64>, Significant) {
    match q.roots() {
        Roots::Two(r1, r2) if q.q2 > 0.0 => (vec![r1, r2], Significant::Outside),
        Roots::Two(r1, r2) => (vec![r1, r2], Significant::Inside),
        Roots::None if q.q2 > 0.0 => (Vec::new(), Significant::Everywhere),
        Roots::None => (Vec::new(), Significant::Nowhere),
        Roots::Linear(Some(r)) if q.q1 > 0.0 => (vec![r], Significant::Above),
        Roots::Linear(Some(r)) => (vec![r], Significant::Below),
        Roots::Linear(None) if q.q0 > 0.0 => (Vec::new(), Significant::Everywhere),
        Roots::Linear(None) => (Vec::new(), Significant::Nowhere),
    }
}

pub(crate) fn regions(
    request: &Request,
    ctx: &Focal,
    fit: &ModelFit,
    boot: Boot,
) -> Result<RegionsResult, String> {
    let mut r = compute(ctx, fit, request.alpha)?;
    if let Some(ns) = request.bootstrap {
        let (a, c) = linear_in_w(ctx, ctx.x_mean, r.data_min, r.data_max)?;
        let grid: Vec<f64> = (0..=200)
            .map(|i| r.data_min + (r.data_max - r.data_min) * i as f64 / 200.0)
            .collect();
        let out = boot(ns)?.run(
            |bd| {
                let (ea, ec) = (dot(&a, bd), dot(&c, bd));
                grid.iter().map(|w| ea + ec * w).collect()
            },
            1.0 - request.alpha,
        )?;
        let mut stretches: Vec<(f64, f64)> = Vec::new();
        let mut open: Option<f64> = None;
        for (i, (w, (l, h))) in grid.iter().zip(&out.intervals).enumerate() {
            let sig = *l > 0.0 || *h < 0.0;
            match (sig, open) {
                (true, None) => open = Some(*w),
                (false, Some(s)) => {
                    stretches.push((s, grid[i - 1]));
                    open = None;
                }
                _ => {}
            }
        }
        if let Some(s) = open {
            stretches.push((s, r.data_max));
        }
        r.boot_significant = Some(stretches);
        r.bootstrap = Some(ns);
        r.notes.extend(out.notes);
    }
    Ok(r)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn q(a: f64, c: f64, vaa: f64, vac: f64, vcc: f64) -> Inversion {
        Inversion::new(a, c, vaa, vac, vcc, 2.0)
    }

    #[test]
    fn every_case_is_labelled() {
        // Effect 1 − w with Var = 0.01 (1 + w²)·…: worked by hand with t = 2.
        // Significant interaction (C² = 1 > 4·0.01): outside two roots.
        let (b, s) = classify(&q(1.0, -1.0, 0.01, 0.0, 0.01));
        assert_eq!((b.len(), s), (2, Significant::Outside));
        // Q = 0.96 w² − 2w + 0.96 has roots 0.96^(−1)·(1 ∓ √(1 − 0.9216)) = 0.7500, 1.3333.
        assert!(
            (b[0] - 0.75).abs() < 1e-12 && (b[1] - 4.0 / 3.0).abs() < 1e-12,
            "{b:?}"
        );
        // Weak interaction, strong main effect: inside two roots.
        let (b, s) = classify(&q(1.0, 0.01, 0.01, 0.0, 0.01));
        assert_eq!((b.len(), s), (2, Significant::Inside));
        // Weak everything: nowhere.
        let (b, s) = classify(&q(0.01, 0.01, 1.0, 0.0, 1.0));
        assert_eq!((b.len(), s), (0, Significant::Nowhere));
        // C² = t²Vcc exactly: one bound; Q = 2(AC)w + A² − 4Vaa = 2w + 0.96 → above −0.48.
        let (b, s) = classify(&q(1.0, 1.0, 0.01, 0.0, 0.25));
        assert_eq!(s, Significant::Above);
        assert!((b[0] + 0.48).abs() < 1e-12, "{b:?}");
        let (b, s) = classify(&q(1.0, -1.0, 0.01, 0.0, 0.25));
        assert_eq!((b.len(), s), (1, Significant::Below));
        // Without real roots Q > 0 needs Var = 0 where the effect is zero (A + Cw
        // crosses zero otherwise); with C = Vcc = 0 the effect is a constant:
        // significant everywhere when A² > t²Vaa, nowhere otherwise.
        let (_, s) = classify(&Inversion::new(1.0, 0.0, 0.01, 0.0, 0.0, 2.0));
        assert_eq!(s, Significant::Everywhere);
        let (_, s) = classify(&Inversion::new(0.0, 0.0, 1.0, 0.0, 0.0, 2.0));
        assert_eq!(s, Significant::Nowhere);
    }
}
