//! Colours and dash patterns of the figures. The line colours differ in hue
//! and in lightness, so they stay apart for the common colour-vision
//! deficiencies and in greyscale print; lines differ by dash pattern as well.

/// Line colours, in the order series are drawn.
pub const LINES: [&str; 5] = ["#1E5B9C", "#D2691E", "#2C8C73", "#8E3C7E", "#5A5A5A"];

/// Dash patterns matching `LINES` (empty: solid).
pub const DASHES: [&str; 5] = ["", "6 3", "2 2", "8 3 2 3", "4 2 1 2"];

/// Opacity of a confidence band over the white background.
pub const BAND_OPACITY: f64 = 0.2;

/// Fill of a region of significance (and of a turning point's interval).
pub const REGION: &str = "#F1E2C4";

/// Axes, ticks, text.
pub const INK: &str = "#222222";

/// The zero line and marks of bounds.
pub const GUIDE: &str = "#6E6E6E";

pub fn line(i: usize) -> &'static str {
    LINES[i % LINES.len()]
}

pub fn dash(i: usize) -> &'static str {
    DASHES[i % DASHES.len()]
}
