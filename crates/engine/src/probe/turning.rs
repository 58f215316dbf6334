//! `turning M: X [across W at ...]`: the turning point of a quadratic in X.
//!
//! At fixed W the slope in X is s(x) = α·b + (γ·b) x (checked numerically at
//! a third x to 1e-9 of its size: X must enter as X and X², possibly times W).
//! The turning point is x* = −A/Γ with A = α·b, Γ = γ·b; with X·W and X²·W
//! terms this is −(b₁ + b₃w)/(2(b₂ + b₄w)).
//!
//! - Delta-method SE from the gradient ∂x*/∂b = −(α + x*γ)/Γ.
//! - Fieller set: {x : (A + Γx)² ≤ t² Var(A + Γx)}, solved as a quadratic; it is
//!   a bounded interval, the outside of two points, or everything, and is
//!   reported as such (never forced into an interval).
//! - End slopes at the minimum and maximum of X in the estimation sample; the
//!   U test of Lind and Mehlum (2010): for a U (Γ > 0) the slope must be negative
//!   at the low end and positive at the high end; t = min(−t_low, t_high), p one
//!   sided at the model's df; the mirror for an inverted U.
//! - Γ counts as zero when the change of the slope across the observed range,
//!   |Γ|·(max − min), is below 1e-9 of the slope's size there: the square is
//!   then rounding noise and there is no turning point to report.
//!
//! All t values here use one critical value, at the df the model gives the
//! turning point's gradient.

use check::Request;

use super::contrast::{critical, dot, estimate, form, linear_in, upper_tail, Inversion, Roots};
use super::moderator::ModeratorStats;
use super::point::Focal;
use super::simple::Boot;
use super::{
    EndSlope, FiellerShape, Inference, ProbeOptions, Shape, TurningAt, TurningResult, UTest,
};
use crate::ModelFit;

/// The slope's gradient as α + γ·x at moderator value `w`.
fn linear_in_x(ctx: &Focal, w: f64) -> Result<(Vec<f64>, Vec<f64>), String> {
    let (lo, hi) = ctx.x_range();
    if hi.is_nan() || lo.is_nan() || hi <= lo {
        return Err(format!(
            "`{}` does not vary in the estimation sample",
            ctx.focal
        ));
    }
    linear_in(lo, hi, |x| ctx.slope(x, w)).ok_or_else(|| {
        format!(
            "the slope of `{0}` is not a straight line in `{0}` (it enters through `log`, `sqrt` or a power above 2), so the turning point of a quadratic does not apply",
            ctx.focal
        )
    })
}

/// The turning point and its inference at one moderator value (`w` is NaN
/// without a moderator; no factor then reads it).
pub(crate) fn at(
    ctx: &Focal,
    fit: &ModelFit,
    label: &str,
    w: Option<f64>,
    level: f64,
) -> Result<(TurningAt, Vec<f64>, Vec<f64>), String> {
    let wv = w.unwrap_or(f64::NAN);
    let (alpha, gamma) = linear_in_x(ctx, wv)?;
    let b = fit.coefficients();
    let (a, g) = (dot(&alpha, &b), dot(&gamma, &b));
    let (lo, hi) = ctx.x_range();
    let at_w = w.map_or(String::new(), |w| {
        format!(" at `{}` = {w}", ctx.moderator.clone().unwrap_or_default())
    });
    if g.abs() * (hi - lo) <= 1e-9 * ((a + g * ctx.x_mean).abs() + g.abs() * (hi - lo)) || g == 0.0
    {
        return Err(format!(
            "the squared term of `{}`{at_w} is zero within rounding (the slope changes by {:.2e} across the data), so there is no turning point",
            ctx.focal,
            g * (hi - lo)
        ));
    }
    let point = -a / g;
    let h: Vec<f64> = alpha
        .iter()
        .zip(&gamma)
        .map(|(al, ga)| -(al + point * ga) / g)
        .collect();
    let se = form(fit, &h, &h).max(0.0).sqrt();
    let df = fit.df_for(&h);
    let t = critical(df, level);
    let ci_delta = (point - t * se, point + t * se);
    let q = Inversion::new(
        a,
        g,
        form(fit, &alpha, &alpha),
        form(fit, &alpha, &gamma),
        form(fit, &gamma, &gamma),
        t,
    );
    let (ci_fieller, fieller_shape, fieller_roots) = match q.roots() {
        Roots::Two(r1, r2) if q.q2 > 0.0 => (Some((r1, r2)), FiellerShape::Bounded, vec![r1, r2]),
        Roots::Two(r1, r2) => (None, FiellerShape::TwoRays, vec![r1, r2]),
        _ => (None, FiellerShape::Unbounded, Vec::new()),
    };
    let end = |x: f64| {
        let gx: Vec<f64> = alpha
            .iter()
            .zip(&gamma)
            .map(|(al, ga)| al + ga * x)
            .collect();
        let e = estimate(fit, &b, &gx, level);
        EndSlope {
            x,
            slope: e.estimate,
            std_error: e.std_error,
            t: e.t,
        }
    };
    let (low, high) = (end(lo), end(hi));
    let (shape, ut) = if g > 0.0 {
        (Shape::U, (-low.t).min(high.t))
    } else {
        (Shape::InvertedU, low.t.min(-high.t))
    };
    let u_df = df;
    let u_test = UTest {
        shape,
        t: ut,
        p: upper_tail(ut, u_df),
        df: u_df,
    };
    Ok((
        TurningAt {
            label: label.to_string(),
            value: w,
            point,
            std_error: se,
            ci_delta,
            ci_fieller,
            fieller_shape,
            fieller_roots,
            slope_low: low,
            slope_high: high,
            u_test,
            inside_data: point >= lo && point <= hi,
            ci_inside_data: ci_delta.0 >= lo && ci_delta.1 <= hi,
            boot_ci: None,
        },
        alpha,
        gamma,
    ))
}

pub(crate) fn turning(
    request: &Request,
    ctx: &Focal,
    fit: &ModelFit,
    model: &check::ResolvedModel,
    frame: &frame::Frame,
    options: &ProbeOptions,
    boot: Boot,
) -> Result<TurningResult, String> {
    let mut notes = Vec::new();
    let mut points = Vec::new();
    let mut parts = Vec::new();
    match (&ctx.w_rows, request.at.is_empty()) {
        (Some(w_rows), false) => {
            let stats = ModeratorStats::new(model, frame, &ctx.rows, w_rows, options.groups);
            notes.push(stats.words(&ctx.moderator.clone().unwrap_or_default()));
            for a in &request.at {
                let w = stats.value(a.spec);
                let (t, al, ga) = at(ctx, fit, &a.label, Some(w), options.level)?;
                points.push(t);
                parts.push((al, ga));
            }
        }
        (Some(_), true) => {
            return Err("`turning ... across W` needs moderator values after `at`".into());
        }
        (None, _) => {
            let (t, al, ga) = at(ctx, fit, "", None, options.level)?;
            points.push(t);
            parts.push((al, ga));
        }
    }
    if !ctx.held_at.is_empty() {
        let held: Vec<String> = ctx
            .held_at
            .iter()
            .map(|(n, v)| format!("`{n}` = {}", super::figure::short(*v)))
            .collect();
        notes.push(format!("held at their means: {}", held.join(", ")));
    }
    if let Some(ns) = request.bootstrap {
        let out = boot(ns)?.run(
            |bd| {
                parts
                    .iter()
                    .map(|(al, ga)| -dot(al, bd) / dot(ga, bd))
                    .collect()
            },
            options.level,
        )?;
        for (p, ci) in points.iter_mut().zip(out.intervals) {
            p.boot_ci = Some(ci);
        }
        notes.extend(out.notes);
    }
    let (lo, hi) = ctx.x_range();
    Ok(TurningResult {
        model: fit.name.clone(),
        variable: ctx.focal.clone(),
        moderator: ctx.moderator.clone(),
        at: points,
        data_min: lo,
        data_max: hi,
        level: options.level,
        bootstrap: request.bootstrap,
        notes,
    })
}
