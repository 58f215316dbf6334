//! Drawing the three kinds of figure on a [`Layout`]: lines at moderator
//! values, the effect across the moderator with its region of significance,
//! and a curve with its turning point.

use engine::probe::{PlotKind, PlotResult, RegionsResult, Series, Shape, Significant, TurningAt};

use super::palette::{self, BAND_OPACITY, GUIDE, INK, REGION};
use super::scale::tick_label;
use super::svg::Svg;
use super::{Layout, LEGEND_ROW, TEXT_PT, TITLE_PT, WIDTH_MM};

pub fn all_series(kind: &PlotKind) -> Vec<&Series> {
    match kind {
        PlotKind::Lines { series } => series.iter().collect(),
        PlotKind::EffectBand { series, .. } | PlotKind::Curve { series, .. } => vec![series],
    }
}

pub fn figure(plot: &PlotResult, l: &Layout) -> String {
    let mut s = Svg::new(l.width, l.height, WIDTH_MM);
    s.rect(0.0, 0.0, l.width, l.height, "#FFFFFF", "");
    s.raw(&format!(
        "<defs><clipPath id=\"plot-area\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath></defs>",
        l.left,
        l.top,
        l.right - l.left,
        l.bottom - l.top
    ));
    s.raw("<g clip-path=\"url(#plot-area)\">");
    match &plot.kind {
        PlotKind::Lines { series } => {
            for (i, se) in series.iter().enumerate() {
                band(&mut s, l, se, palette::line(i));
            }
            for (i, se) in series.iter().enumerate() {
                line(&mut s, l, se, i);
            }
        }
        PlotKind::EffectBand { series, regions } => {
            for (a, b) in significant_spans(regions, l) {
                span(&mut s, l, a, b);
            }
            band(&mut s, l, series, palette::line(0));
            let y0 = l.y.map(0.0);
            s.line(
                (l.left, y0),
                (l.right, y0),
                GUIDE,
                0.6,
                " stroke-dasharray=\"3 2\"",
            );
            line(&mut s, l, series, 0);
            for &b in &regions.bounds {
                if b >= l.x.d0 && b <= l.x.d1 {
                    let x = l.x.map(b);
                    s.line(
                        (x, l.top),
                        (x, l.bottom),
                        GUIDE,
                        0.8,
                        " stroke-dasharray=\"1.5 1.5\"",
                    );
                }
            }
        }
        PlotKind::Curve { series, turning } => {
            if let Some(t) = turning {
                span(&mut s, l, t.ci_delta.0, t.ci_delta.1);
            }
            band(&mut s, l, series, palette::line(0));
            line(&mut s, l, series, 0);
            if let Some(t) = turning {
                turning_mark(&mut s, l, series, t);
            }
        }
    }
    rug(&mut s, l, &plot.rug);
    s.raw("</g>");
    axes(&mut s, l, plot);
    if let PlotKind::EffectBand { regions, .. } = &plot.kind {
        bound_labels(&mut s, l, regions);
    }
    if let PlotKind::Lines { series } = &plot.kind {
        if l.legend_rows > 0 {
            legend(&mut s, l, series);
        }
    }
    s.finish()
}

fn pts(l: &Layout, se: &Series, f: impl Fn(&engine::probe::BandPoint) -> f64) -> Vec<(f64, f64)> {
    se.points
        .iter()
        .filter(|p| p.x.is_finite() && f(p).is_finite())
        .map(|p| (l.x.map(p.x), l.y.map(f(p))))
        .collect()
}

/// The band: the upper edge left to right, the lower edge back.
fn band(s: &mut Svg, l: &Layout, se: &Series, colour: &str) {
    let mut poly = pts(l, se, |p| p.high);
    let mut lower = pts(l, se, |p| p.low);
    lower.reverse();
    poly.extend(lower);
    s.polygon(&poly, colour, BAND_OPACITY, "");
}

fn line(s: &mut Svg, l: &Layout, se: &Series, i: usize) {
    s.polyline(
        &pts(l, se, |p| p.y),
        palette::line(i),
        1.4,
        palette::dash(i),
        "",
    );
}

/// A shaded vertical span between two data values of x, clipped to the axis.
fn span(s: &mut Svg, l: &Layout, a: f64, b: f64) {
    let (a, b) = (l.x.clamp(a.min(b)), l.x.clamp(a.max(b)));
    let (xa, xb) = (l.x.map(a), l.x.map(b));
    s.rect(xa, l.top, xb - xa, l.bottom - l.top, REGION, "");
}

/// The stretches of the x axis (the moderator) where the effect is
/// significant, in data units, from the Johnson–Neyman result.
fn significant_spans(r: &RegionsResult, l: &Layout) -> Vec<(f64, f64)> {
    let (lo, hi) = (l.x.d0, l.x.d1);
    let b = &r.bounds;
    match (r.significant, b.len()) {
        (Significant::Everywhere, _) => vec![(lo, hi)],
        (Significant::Nowhere, _) => vec![],
        (Significant::Inside, 2) => vec![(b[0], b[1])],
        (Significant::Outside, 2) => vec![(lo, b[0]), (b[1], hi)],
        (Significant::Above, 1) => vec![(b[0], hi)],
        (Significant::Below, 1) => vec![(lo, b[0])],
        // Inside/outside always come with two bounds, above/below with one.
        _ => vec![],
    }
    .into_iter()
    .filter(|(a, b)| b > a && *b >= lo && *a <= hi)
    .collect()
}

/// The value of the series' line at x, by linear interpolation.
fn line_at(se: &Series, x: f64) -> Option<f64> {
    se.points.windows(2).find_map(|w| {
        let (a, b) = (&w[0], &w[1]);
        if (a.x <= x && x <= b.x) && b.x > a.x {
            Some(a.y + (b.y - a.y) * (x - a.x) / (b.x - a.x))
        } else {
            None
        }
    })
}

fn turning_mark(s: &mut Svg, l: &Layout, se: &Series, t: &TurningAt) {
    if t.point < l.x.d0 || t.point > l.x.d1 {
        return;
    }
    let x = l.x.map(t.point);
    s.line(
        (x, l.top),
        (x, l.bottom),
        GUIDE,
        0.8,
        " stroke-dasharray=\"3 2\"",
    );
    if let Some(y) = line_at(se, t.point) {
        s.circle(x, l.y.map(y), 2.4, "#FFFFFF", palette::line(0));
    }
    // The label goes where the curve is not: below a peak, above a trough.
    let y = match t.u_test.shape {
        Shape::InvertedU => l.bottom - 9.0,
        Shape::U => l.top + 9.0,
    };
    let anchor = if x > (l.left + l.right) / 2.0 {
        "end"
    } else {
        "start"
    };
    let dx = if anchor == "end" { -3.0 } else { 3.0 };
    s.text(
        x + dx,
        y,
        TEXT_PT,
        anchor,
        0.0,
        &format!("turning point {}", short(t.point)),
    );
}

/// Rug ticks along the bottom of the plot area; values that fall on the same
/// fifth of a point are drawn once, so a large sample stays a small file.
fn rug(s: &mut Svg, l: &Layout, values: &[f64]) {
    let mut xs: Vec<i64> = values
        .iter()
        .filter(|v| v.is_finite() && **v >= l.x.d0 && **v <= l.x.d1)
        .map(|v| (l.x.map(*v) * 5.0).round() as i64)
        .collect();
    xs.sort_unstable();
    xs.dedup();
    if xs.is_empty() {
        return;
    }
    let mut d = String::new();
    for x in xs {
        let x = x as f64 / 5.0;
        d.push_str(&format!("M{x:.1} {:.1} v-4 ", l.bottom));
    }
    s.raw(&format!(
        "<path d=\"{}\" stroke=\"{INK}\" stroke-width=\"0.35\" stroke-opacity=\"0.6\" fill=\"none\"/>",
        d.trim_end()
    ));
}

fn axes(s: &mut Svg, l: &Layout, plot: &PlotResult) {
    s.line((l.left, l.bottom), (l.right, l.bottom), INK, 0.7, "");
    s.line((l.left, l.top), (l.left, l.bottom), INK, 0.7, "");
    let (xt, xd) = l.x.ticks(6);
    for v in xt {
        let x = l.x.map(v);
        s.line((x, l.bottom), (x, l.bottom + 3.0), INK, 0.6, "");
        s.text(
            x,
            l.bottom + 11.0,
            TEXT_PT,
            "middle",
            0.0,
            &tick_label(v, xd),
        );
    }
    let (yt, yd) = l.y.ticks(6);
    for v in yt {
        let y = l.y.map(v);
        s.line((l.left - 3.0, y), (l.left, y), INK, 0.6, "");
        s.text(
            l.left - 5.0,
            y + 2.8,
            TEXT_PT,
            "end",
            0.0,
            &tick_label(v, yd),
        );
    }
    s.text(
        (l.left + l.right) / 2.0,
        l.bottom + 24.0,
        TITLE_PT,
        "middle",
        0.0,
        &plot.x_title,
    );
    s.text(
        10.0,
        (l.top + l.bottom) / 2.0,
        TITLE_PT,
        "middle",
        -90.0,
        &plot.y_title,
    );
}

/// Each bound's value at the top of its mark, or an arrow note at the edge
/// when it lies outside the data.
fn bound_labels(s: &mut Svg, l: &Layout, r: &RegionsResult) {
    let n = r.bounds.len();
    for (i, &b) in r.bounds.iter().enumerate() {
        if b >= l.x.d0 && b <= l.x.d1 {
            let x = l.x.map(b);
            // The lower of two bounds is labelled to its left and the upper to its
            // right, so close bounds do not overprint; near an edge, inwards.
            let left_of = if n == 2 {
                i == 0
            } else {
                x > (l.left + l.right) / 2.0
            };
            let left_of = if left_of {
                x - l.left > 30.0
            } else {
                l.right - x < 30.0
            };
            let (anchor, dx) = if left_of {
                ("end", -2.0)
            } else {
                ("start", 2.0)
            };
            s.text(x + dx, l.top + 8.0, TEXT_PT, anchor, 0.0, &short(b));
        } else if b < l.x.d0 {
            s.text(
                l.left + 2.0,
                l.top + 8.0,
                TEXT_PT,
                "start",
                0.0,
                &format!("\u{2190} bound {}", short(b)),
            );
        } else {
            s.text(
                l.right - 2.0,
                l.top + 8.0,
                TEXT_PT,
                "end",
                0.0,
                &format!("bound {} \u{2192}", short(b)),
            );
        }
    }
}

fn legend(s: &mut Svg, l: &Layout, series: &[Series]) {
    for (i, se) in series.iter().enumerate() {
        let y = l.legend_top + i as f64 * LEGEND_ROW;
        let x = l.left;
        s.rect(
            x,
            y - 3.5,
            20.0,
            7.0,
            palette::line(i),
            &format!(" fill-opacity=\"{BAND_OPACITY}\""),
        );
        s.line((x, y), (x + 20.0, y), palette::line(i), 1.4, &dash_attr(i));
        s.text(x + 25.0, y + 2.8, TEXT_PT, "start", 0.0, &se.label);
    }
}

fn dash_attr(i: usize) -> String {
    let d = palette::dash(i);
    if d.is_empty() {
        String::new()
    } else {
        format!(" stroke-dasharray=\"{d}\"")
    }
}

/// Three significant digits for labels in the figure.
fn short(v: f64) -> String {
    let a = v.abs();
    let d = if a >= 100.0 {
        0
    } else if a >= 10.0 {
        1
    } else if a >= 1.0 {
        2
    } else {
        3
    };
    format!("{v:.d$}").replacen('-', "\u{2212}", 1)
}
