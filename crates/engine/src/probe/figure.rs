//! `plot`: the data of the three figures; the report draws them.
//!
//! - With `at`: the fitted outcome against X over its observed range (50
//!   points), one line per moderator value.
//! - With a moderator and no `at`: the effect of X across the observed range
//!   of W (100 points) with the Johnson–Neyman region at alpha 0.05 (or the
//!   statement's alpha).
//! - Without a moderator: the fitted outcome against X (100 points), with the
//!   turning point when X has a square.
//!
//! Bands are pointwise at the requested level. Fitted outcomes are
//! ȳ + Σ b_k (term_k − mean term_k) (see [`Focal::level`]). The rug holds the
//! observed values of the axis variable over the sample rows, at most 2,000:
//! beyond that, evenly spaced order statistics.

use check::Request;

use super::contrast::{critical, dot, estimate, form};
use super::moderator::ModeratorStats;
use super::point::{range, Focal};
use super::{BandPoint, Inference, PlotKind, PlotResult, ProbeOptions, Series};
use crate::ModelFit;

const RUG_MAX: usize = 2000;

pub(crate) fn plot(
    request: &Request,
    ctx: &Focal,
    fit: &ModelFit,
    model: &check::ResolvedModel,
    frame: &frame::Frame,
    options: &ProbeOptions,
) -> Result<PlotResult, String> {
    let path = request
        .path
        .clone()
        .ok_or("`plot` needs a file to write: `plot M: X to \"figure.svg\"`")?;
    let b = fit.coefficients();
    let (xlo, xhi) = ctx.x_range();
    let grid = |lo: f64, hi: f64, n: usize| -> Vec<f64> {
        (0..n)
            .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
            .collect()
    };
    let fitted_line = |w: f64, n: usize| -> Vec<BandPoint> {
        grid(xlo, xhi, n)
            .into_iter()
            .map(|x| {
                let (offset, g) = ctx.level(x, w);
                let y = offset + dot(&g, &b);
                let se = form(fit, &g, &g).max(0.0).sqrt();
                let q = critical(fit.df_for(&g), options.level);
                BandPoint {
                    x,
                    y,
                    low: y - q * se,
                    high: y + q * se,
                }
            })
            .collect()
    };
    let mut notes = Vec::new();
    let (kind, rug_of, x_title, y_title) = match (&ctx.w_rows, request.at.is_empty()) {
        (Some(w_rows), false) => {
            let stats = ModeratorStats::new(model, frame, &ctx.rows, w_rows, options.groups);
            let w_name = ctx.moderator.clone().unwrap_or_default();
            notes.push(stats.words(&w_name));
            let series = request
                .at
                .iter()
                .map(|a| {
                    let w = stats.value(a.spec);
                    Series {
                        label: format!("{w_name} = {} ({})", a.label, short(w)),
                        points: fitted_line(w, 50),
                    }
                })
                .collect();
            (
                PlotKind::Lines { series },
                &ctx.x_rows,
                ctx.focal.clone(),
                ctx.outcome.clone(),
            )
        }
        (Some(w_rows), true) => {
            let regions = super::regions::compute(ctx, fit, request.alpha)?;
            let (wlo, whi) = range(w_rows);
            let points = grid(wlo, whi, 100)
                .into_iter()
                .map(|w| {
                    let e = estimate(fit, &b, &ctx.slope(ctx.x_mean, w), options.level);
                    BandPoint {
                        x: w,
                        y: e.estimate,
                        low: e.ci_low,
                        high: e.ci_high,
                    }
                })
                .collect();
            (
                PlotKind::EffectBand {
                    series: Series {
                        label: format!("effect of {}", ctx.focal),
                        points,
                    },
                    regions,
                },
                w_rows,
                ctx.moderator.clone().unwrap_or_default(),
                format!("effect of {} on {}", ctx.focal, ctx.outcome),
            )
        }
        (None, _) => {
            let curved = super::simple::curved_in_x(ctx, f64::NAN);
            let turning = if curved {
                super::turning::at(ctx, fit, "", None, options.level)
                    .ok()
                    .map(|t| t.0)
            } else {
                None
            };
            (
                PlotKind::Curve {
                    series: Series {
                        label: ctx.outcome.clone(),
                        points: fitted_line(f64::NAN, 100),
                    },
                    turning,
                },
                &ctx.x_rows,
                ctx.focal.clone(),
                ctx.outcome.clone(),
            )
        }
    };
    if !ctx.held_at.is_empty() {
        let held: Vec<String> = ctx
            .held_at
            .iter()
            .map(|(n, v)| format!("`{n}` = {}", short(*v)))
            .collect();
        notes.push(format!("held at their means: {}", held.join(", ")));
    }
    Ok(PlotResult {
        model: fit.name.clone(),
        focal: ctx.focal.clone(),
        moderator: ctx.moderator.clone(),
        x_title,
        y_title,
        kind,
        rug: rug(rug_of),
        level: options.level,
        path,
        notes,
    })
}

/// Sorted observed values, thinned to evenly spaced order statistics beyond `RUG_MAX`.
fn rug(values: &[f64]) -> Vec<f64> {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    if v.len() <= RUG_MAX {
        return v;
    }
    let n = v.len() - 1;
    (0..RUG_MAX)
        .map(|i| v[(i * n + (RUG_MAX - 1) / 2) / (RUG_MAX - 1)])
        .collect()
}

/// Four significant digits for labels.
/// A value for a note: four significant digits, plain notation.
pub(crate) fn short(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let digits = (3 - v.abs().log10().floor() as i32).max(0) as usize;
    format!("{v:.digits$}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_long_rug_keeps_evenly_spaced_order_statistics_and_both_ends() {
        let v: Vec<f64> = (0..5000).rev().map(f64::from).collect();
        let r = rug(&v);
        assert_eq!(r.len(), RUG_MAX);
        assert_eq!((r[0], r[RUG_MAX - 1]), (0.0, 4999.0));
        // Spacing 4999/1999 ≈ 2.5 between kept order statistics.
        assert!(r.windows(2).all(|w| (2.0..=3.0).contains(&(w[1] - w[0]))));
        let short_rug = rug(&[3.0, 1.0, 2.0]);
        assert_eq!(short_rug, vec![1.0, 2.0, 3.0]);
    }
}
