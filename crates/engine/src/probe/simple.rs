//! `probe M: X across W at ...`: the effect of X at chosen values of W.
//!
//! The effect is ∂ŷ/∂X at (X at its mean, W at the value, other names at
//! their means), a linear contrast g · b of the coefficients; its SE is
//! √(gᵀVg) with the model's covariance (classical, robust or clustered) and
//! its df the model's rule for g.

use check::Request;

use super::bootstrap::Resampler;
use super::contrast::{dot, estimate};
use super::moderator::ModeratorStats;
use super::point::Focal;
use super::{Inference, ProbeAt, ProbeOptions, ProbeResult};
use crate::ModelFit;

pub(crate) type Boot<'b, 'o> = &'b dyn Fn((u32, u64)) -> Result<Resampler<'o>, String>;

pub(crate) fn probe(
    request: &Request,
    ctx: &Focal,
    fit: &ModelFit,
    model: &check::ResolvedModel,
    frame: &frame::Frame,
    options: &ProbeOptions,
    boot: Boot,
) -> Result<ProbeResult, String> {
    let w_name = ctx.moderator.clone().unwrap_or_default();
    let w_rows = ctx
        .w_rows
        .as_ref()
        .ok_or("`probe` needs a moderator: `probe M: X across W at ...`")?;
    if request.at.is_empty() {
        return Err("`probe` needs moderator values after `at`".into());
    }
    let stats = ModeratorStats::new(model, frame, &ctx.rows, w_rows, options.groups);
    let b = fit.coefficients();
    let mut notes = vec![stats.words(&w_name)];
    let mut held_at = ctx.held_at.clone();
    let x = ctx.x_mean;
    if curved_in_x(ctx, stats.mean) {
        held_at.insert(0, (ctx.focal.clone(), x));
        notes.push(format!(
            "the effect of `{}` depends on `{}` itself; it is taken at its mean",
            ctx.focal, ctx.focal
        ));
    }
    let mut at = Vec::new();
    let mut gradients = Vec::new();
    for a in &request.at {
        let w = stats.value(a.spec);
        let g = ctx.slope(x, w);
        at.push(ProbeAt {
            label: a.label.clone(),
            value: w,
            effect: estimate(fit, &b, &g, options.level),
        });
        gradients.push(g);
    }
    if let Some(ns) = request.bootstrap {
        let r = boot(ns)?;
        let out = r.run(
            |bd| gradients.iter().map(|g| dot(g, bd)).collect(),
            options.level,
        )?;
        for (p, ci) in at.iter_mut().zip(out.intervals) {
            p.effect.boot_ci = Some(ci);
        }
        notes.extend(out.notes);
    }
    Ok(ProbeResult {
        model: fit.name.clone(),
        focal: ctx.focal.clone(),
        moderator: w_name,
        at,
        stats_over: stats.over.clone(),
        held_at,
        level: options.level,
        bootstrap: request.bootstrap,
        notes,
    })
}

/// Whether the slope in X changes with X (a power or a log of X): then the
/// point at which X is held matters and is reported.
pub(crate) fn curved_in_x(ctx: &Focal, w: f64) -> bool {
    let (lo, hi) = ctx.x_range();
    let (g0, g1) = (ctx.slope(lo, w), ctx.slope(hi, w));
    g0.iter()
        .zip(&g1)
        .any(|(a, b)| (a - b).abs() > 1e-12 * (a.abs() + b.abs()))
}
