//! A small writer of SVG elements: the figures need rectangles, paths, lines
//! and text, nothing more, so no library is pulled in for them.

use std::fmt::Write;

pub struct Svg {
    out: String,
}

/// Coordinates to two decimals: a hundredth of a point is far below what print shows.
fn c(v: f64) -> String {
    let s = format!("{v:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}

pub fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

impl Svg {
    /// A document `width` × `height` points, shown at `width_mm` millimetres wide.
    pub fn new(width: f64, height: f64, width_mm: f64) -> Svg {
        let height_mm = width_mm * height / width;
        let mut out = String::new();
        let _ = writeln!(
            out,
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{}mm\" height=\"{}mm\" viewBox=\"0 0 {} {}\" font-family=\"Helvetica, Arial, DejaVu Sans, sans-serif\">",
            c(width_mm),
            c(height_mm),
            c(width),
            c(height)
        );
        Svg { out }
    }

    pub fn raw(&mut self, s: &str) {
        self.out.push_str(s);
        self.out.push('\n');
    }

    pub fn rect(&mut self, x: f64, y: f64, w: f64, h: f64, fill: &str, extra: &str) {
        let _ = writeln!(
            self.out,
            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{fill}\"{extra}/>",
            c(x),
            c(y),
            c(w.max(0.0)),
            c(h.max(0.0))
        );
    }

    pub fn line(
        &mut self,
        (x1, y1): (f64, f64),
        (x2, y2): (f64, f64),
        stroke: &str,
        width: f64,
        extra: &str,
    ) {
        let _ = writeln!(
            self.out,
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{stroke}\" stroke-width=\"{}\"{extra}/>",
            c(x1),
            c(y1),
            c(x2),
            c(y2),
            c(width)
        );
    }

    /// An open polyline through the points.
    pub fn polyline(
        &mut self,
        pts: &[(f64, f64)],
        stroke: &str,
        width: f64,
        dash: &str,
        extra: &str,
    ) {
        if pts.is_empty() {
            return;
        }
        let d = path_data(pts, false);
        let dash = if dash.is_empty() {
            String::new()
        } else {
            format!(" stroke-dasharray=\"{dash}\"")
        };
        let _ = writeln!(
            self.out,
            "<path d=\"{d}\" fill=\"none\" stroke=\"{stroke}\" stroke-width=\"{}\" stroke-linejoin=\"round\"{dash}{extra}/>",
            c(width)
        );
    }

    /// A closed filled polygon.
    pub fn polygon(&mut self, pts: &[(f64, f64)], fill: &str, opacity: f64, extra: &str) {
        if pts.is_empty() {
            return;
        }
        let d = path_data(pts, true);
        let _ = writeln!(
            self.out,
            "<path d=\"{d}\" fill=\"{fill}\" fill-opacity=\"{}\" stroke=\"none\"{extra}/>",
            c(opacity)
        );
    }

    pub fn circle(&mut self, x: f64, y: f64, r: f64, fill: &str, stroke: &str) {
        let _ = writeln!(
            self.out,
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{fill}\" stroke=\"{stroke}\" stroke-width=\"0.8\"/>",
            c(x),
            c(y),
            c(r)
        );
    }

    /// Text at (x, y); `anchor` is start, middle or end; `rotate` in degrees about (x, y).
    pub fn text(&mut self, x: f64, y: f64, size: f64, anchor: &str, rotate: f64, s: &str) {
        let rot = if rotate == 0.0 {
            String::new()
        } else {
            format!(" transform=\"rotate({} {} {})\"", c(rotate), c(x), c(y))
        };
        let _ = writeln!(
            self.out,
            "<text x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{anchor}\" fill=\"{}\"{rot}>{}</text>",
            c(x),
            c(y),
            c(size),
            super::palette::INK,
            escape(s)
        );
    }

    pub fn finish(mut self) -> String {
        self.out.push_str("</svg>\n");
        self.out
    }
}

fn path_data(pts: &[(f64, f64)], close: bool) -> String {
    let mut d = String::new();
    for (i, (x, y)) in pts.iter().enumerate() {
        let _ = write!(d, "{}{} {}", if i == 0 { "M" } else { " L" }, c(*x), c(*y));
    }
    if close {
        d.push_str(" Z");
    }
    d
}
