//! SVG figures of probing results, sized for one journal column.
//!
//! The figure is laid out in points (1/72 in) on a canvas 238 pt wide, shown
//! at 84 mm, so a font size of 8 in the file is 8 pt in print. [`layout`]
//! exposes the axis transforms so tests can find a data point's pixel.

mod draw;
pub mod palette;
mod scale;
mod svg;

pub use scale::{tick_label, Scale};

use engine::probe::{PlotKind, PlotResult};

/// Canvas width in points.
pub const WIDTH: f64 = 238.0;
/// Printed width: one journal column.
pub const WIDTH_MM: f64 = 84.0;
/// Tick labels and legend text, in points.
pub const TEXT_PT: f64 = 8.0;
/// Axis titles, in points.
pub const TITLE_PT: f64 = 9.0;

const LEFT: f64 = 46.0;
const RIGHT: f64 = 8.0;
const TOP: f64 = 10.0;
const PLOT_HEIGHT: f64 = 150.0;
const BELOW_AXIS: f64 = 32.0;
const LEGEND_ROW: f64 = 11.0;

/// Where everything goes, in canvas points (y grows downwards).
#[derive(Clone, Debug, PartialEq)]
pub struct Layout {
    pub width: f64,
    pub height: f64,
    /// The plot area.
    pub left: f64,
    pub right: f64,
    pub top: f64,
    pub bottom: f64,
    pub x: Scale,
    pub y: Scale,
    /// Top of the legend (below the x-axis title); no legend when there is one line.
    pub legend_top: f64,
    pub legend_rows: usize,
}

/// The layout of a plot: the x scale spans the drawn series (2% padding), the
/// y scale spans the bands (6% padding, and zero for an effect figure).
pub fn layout(plot: &PlotResult) -> Layout {
    let series = draw::all_series(&plot.kind);
    let left = LEFT;
    let right = WIDTH - RIGHT;
    let top = TOP;
    let bottom = TOP + PLOT_HEIGHT;
    let x = Scale::over(
        series.iter().flat_map(|s| s.points.iter().map(|p| p.x)),
        0.02,
        left,
        right,
    );
    let mut ys: Vec<f64> = series
        .iter()
        .flat_map(|s| s.points.iter().flat_map(|p| [p.y, p.low, p.high]))
        .collect();
    if matches!(plot.kind, PlotKind::EffectBand { .. }) {
        ys.push(0.0);
    }
    let y = Scale::over(ys, 0.06, bottom, top);
    let legend_rows = if series.len() > 1 { series.len() } else { 0 };
    let legend_top = bottom + BELOW_AXIS;
    let height = legend_top + legend_rows as f64 * LEGEND_ROW + 4.0;
    Layout {
        width: WIDTH,
        height,
        left,
        right,
        top,
        bottom,
        x,
        y,
        legend_top,
        legend_rows,
    }
}

/// The SVG document of a plot.
pub fn svg(plot: &PlotResult) -> String {
    draw::figure(plot, &layout(plot))
}
