//! `effect M: X`: the average marginal effect.
//!
//! Each row's ∂ŷ/∂X is taken at the row's own values of every variable; the
//! average over the estimation sample is linear in the coefficients with
//! gradient the mean of the per-row gradients, so its SE √(gᵀVg) is exact for
//! the fitted covariance (the sample is held fixed).

use check::Request;

use super::contrast::estimate;
use super::point::Focal;
use super::{EffectResult, Inference, ProbeOptions};
use crate::ModelFit;

pub(crate) fn effect(
    _request: &Request,
    ctx: &Focal,
    fit: &ModelFit,
    options: &ProbeOptions,
) -> Result<EffectResult, String> {
    let g = ctx.average_slope();
    let b = fit.coefficients();
    let e = estimate(fit, &b, &g, options.level);
    if !e.estimate.is_finite() {
        return Err(format!(
            "the effect of `{}` is not finite on some rows (a `log` or `sqrt` of `{}` at zero)",
            ctx.focal, ctx.focal
        ));
    }
    Ok(EffectResult {
        model: fit.name.clone(),
        variable: ctx.focal.clone(),
        effect: e,
        level: options.level,
        notes: vec![format!(
            "average of the row-wise effect of `{}` over the {} rows of the estimation sample",
            ctx.focal,
            check::count(ctx.rows.len())
        )],
    })
}
