//! The SVG figures, rendered to pixels: each parses, is not blank, is one
//! journal column wide with text of at least 8 pt, and draws its lines and
//! shaded regions where the numbers put them. The expected positions come
//! from the closed-form lines the test feeds in, mapped through the figure's
//! own axis transform (`report::figure::layout`); the pixel colours come from
//! the renderer.

use std::path::PathBuf;

use engine::probe::{
    BandPoint, EndSlope, FiellerShape, PlotKind, PlotResult, RegionsResult, Series, Shape,
    Significant, TurningAt, UTest,
};
use report::figure::{self, palette, Layout};
use resvg::tiny_skia::{Pixmap, Transform};
use resvg::usvg;

/// Rendered pixels per canvas point beyond the file's own size.
const ZOOM: f32 = 3.0;

/// A line sampled at `n` points with a band of ± `half`.
fn series(label: &str, lo: f64, hi: f64, n: usize, f: impl Fn(f64) -> f64, half: f64) -> Series {
    let points = (0..n)
        .map(|i| {
            let x = lo + (hi - lo) * i as f64 / (n - 1) as f64;
            let y = f(x);
            BandPoint {
                x,
                y,
                low: y - half,
                high: y + half,
            }
        })
        .collect();
    Series {
        label: label.into(),
        points,
    }
}

fn plot(kind: PlotKind, rug: Vec<f64>, moderator: Option<&str>) -> PlotResult {
    PlotResult {
        model: "m".into(),
        focal: "x".into(),
        moderator: moderator.map(String::from),
        x_title: "x".into(),
        y_title: "y".into(),
        kind,
        rug,
        level: 0.95,
        path: PathBuf::from("figure.svg"),
        notes: vec![],
    }
}

struct Rendered {
    pixmap: Pixmap,
    /// Pixels per canvas point.
    k: f64,
}

impl Rendered {
    fn new(svg: &str) -> Rendered {
        let look = std::env::var_os("SLOPEWISE_FIGURE_PNG");
        let mut options = usvg::Options::default();
        if let Some(dir) = &look {
            // Text only when looking: the pixel checks below must not depend on fonts.
            options.fontdb_mut().load_system_fonts();
            let name = format!("figure-{}.svg", svg.len());
            std::fs::write(PathBuf::from(dir).join(name), svg).unwrap();
        }
        let tree = usvg::Tree::from_str(svg, &options).expect("the SVG parses");
        let size = tree.size();
        let w = (size.width() * ZOOM).ceil() as u32;
        let h = (size.height() * ZOOM).ceil() as u32;
        let mut pixmap = Pixmap::new(w, h).unwrap();
        pixmap.fill(resvg::tiny_skia::Color::from_rgba8(255, 0, 255, 255));
        resvg::render(
            &tree,
            Transform::from_scale(ZOOM, ZOOM),
            &mut pixmap.as_mut(),
        );
        if let Some(dir) = look {
            // For looking at the figures: SLOPEWISE_FIGURE_PNG=/tmp cargo test -p report --test figures
            let name = format!("figure-{}.png", svg.len());
            pixmap.save_png(PathBuf::from(dir).join(name)).unwrap();
        }
        let k = (size.width() * ZOOM) as f64 / figure::WIDTH;
        Rendered { pixmap, k }
    }

    /// The colour at a canvas point, as (r, g, b).
    fn at(&self, x: f64, y: f64) -> (u8, u8, u8) {
        let px = (x * self.k).floor() as u32;
        let py = (y * self.k).floor() as u32;
        let c = self.pixmap.pixel(px, py).expect("inside the image");
        (c.red(), c.green(), c.blue())
    }

    /// The colour at a data point.
    fn at_data(&self, l: &Layout, x: f64, y: f64) -> (u8, u8, u8) {
        self.at(l.x.map(x), l.y.map(y))
    }

    fn non_white(&self) -> usize {
        self.pixmap
            .pixels()
            .iter()
            .filter(|c| c.red() < 250 || c.green() < 250 || c.blue() < 250)
            .count()
    }
}

fn hex(s: &str) -> (u8, u8, u8) {
    let v = u32::from_str_radix(s.trim_start_matches('#'), 16).unwrap();
    ((v >> 16) as u8, (v >> 8) as u8, v as u8)
}

fn close(a: (u8, u8, u8), b: (u8, u8, u8), tol: i32) -> bool {
    (a.0 as i32 - b.0 as i32).abs() <= tol
        && (a.1 as i32 - b.1 as i32).abs() <= tol
        && (a.2 as i32 - b.2 as i32).abs() <= tol
}

const WHITE: (u8, u8, u8) = (255, 255, 255);

/// Every font size in the file, in canvas points (= printed points).
fn font_sizes(svg: &str) -> Vec<f64> {
    svg.split("font-size=\"")
        .skip(1)
        .map(|s| s[..s.find('"').unwrap()].parse().unwrap())
        .collect()
}

fn assert_column_sized(svg: &str) {
    assert!(svg.contains("width=\"84mm\""), "one journal column wide");
    let sizes = font_sizes(svg);
    assert!(!sizes.is_empty());
    assert!(sizes.iter().all(|s| *s >= 8.0), "{sizes:?}");
}

#[test]
fn lines_at_moderator_values_pass_through_their_values() {
    let up = |x: f64| 1.0 + 2.0 * x;
    let down = |x: f64| 5.0 - x;
    let p = plot(
        PlotKind::Lines {
            series: vec![
                series("w = -1sd (2.0)", 0.0, 10.0, 50, up, 0.5),
                series("w = +1sd (6.0)", 0.0, 10.0, 50, down, 0.5),
            ],
        },
        vec![0.5, 3.0, 9.5],
        Some("w"),
    );
    let svg = figure::svg(&p);
    assert_column_sized(&svg);
    let l = figure::layout(&p);
    assert_eq!(l.legend_rows, 2);
    let r = Rendered::new(&svg);
    assert!(r.non_white() > 5_000, "the figure is not blank");
    // The solid first line: at x = 8 it is at 1 + 2·8 = 17.
    let first = hex(palette::LINES[0]);
    assert!(
        close(r.at_data(&l, 8.0, up(8.0)), first, 12),
        "{:?}",
        r.at_data(&l, 8.0, up(8.0))
    );
    assert!(close(r.at_data(&l, 2.5, up(2.5)), first, 12));
    // Four y units away from the line there is no line colour (the band is ±0.5).
    assert!(close(r.at_data(&l, 8.0, up(8.0) - 4.0), WHITE, 2));
    // The second line is dashed: along a stretch of 6 points some pixel on it has its colour.
    let second = hex(palette::LINES[1]);
    let hits = (0..40)
        .map(|i| 7.0 + i as f64 * 0.05)
        .filter(|x| close(r.at_data(&l, *x, down(*x)), second, 12))
        .count();
    assert!(hits >= 10, "dashed line found at {hits} of 40 points");
    // Inside the band but off the line: the line colour at 20% over white.
    let band = r.at_data(&l, 8.0, up(8.0) + 0.4);
    let expect = |c: u8| (255.0 - palette::BAND_OPACITY * (255.0 - c as f64)).round() as i32;
    assert!(
        (band.0 as i32 - expect(first.0)).abs() <= 3
            && (band.2 as i32 - expect(first.2)).abs() <= 3,
        "{band:?}"
    );
}

#[test]
fn effect_band_shades_the_region_of_significance_between_its_bounds() {
    // Effect −1 + 0.5 w with a band of ±0.8: it excludes zero for w < 0.4 and w > 3.6.
    let f = |w: f64| -1.0 + 0.5 * w;
    let regions = RegionsResult {
        model: "m".into(),
        focal: "x".into(),
        moderator: "w".into(),
        alpha: 0.05,
        critical: 2.0,
        df: 100.0,
        bounds: vec![0.4, 3.6],
        significant: Significant::Outside,
        data_min: 0.0,
        data_max: 10.0,
        boot_significant: None,
        bootstrap: None,
        notes: vec![],
    };
    let p = plot(
        PlotKind::EffectBand {
            series: series("effect of x", 0.0, 10.0, 101, f, 0.8),
            regions,
        },
        vec![1.0, 2.0, 7.5],
        Some("w"),
    );
    let svg = figure::svg(&p);
    assert_column_sized(&svg);
    let l = figure::layout(&p);
    let r = Rendered::new(&svg);
    assert!(r.non_white() > 5_000);
    let region = hex(palette::REGION);
    // Away from the band: shaded just outside each bound, white just inside.
    assert!(
        close(r.at_data(&l, 0.3, 3.0), region, 3),
        "{:?}",
        r.at_data(&l, 0.3, 3.0)
    );
    assert!(
        close(r.at_data(&l, 0.5, 3.0), WHITE, 2),
        "{:?}",
        r.at_data(&l, 0.5, 3.0)
    );
    assert!(close(r.at_data(&l, 3.5, -1.5), WHITE, 2));
    assert!(close(r.at_data(&l, 3.7, -1.5), region, 3));
    assert!(close(r.at_data(&l, 9.0, -1.0), region, 3));
    // The effect line itself.
    assert!(close(
        r.at_data(&l, 6.0, f(6.0)),
        hex(palette::LINES[0]),
        12
    ));
    // A rug tick under w = 7.5 and none under w = 5.
    let (x, y) = (l.x.map(7.5), l.bottom - 1.5);
    assert!(r.at(x, y).0 < 200, "{:?}", r.at(x, y));
    assert!(close(r.at(l.x.map(5.0), y), region, 3));
}

#[test]
fn curve_marks_the_turning_point_and_shades_its_interval() {
    // Inverted U 10x − x²: turning point at 5; its interval is given as [4, 6].
    let f = |x: f64| 10.0 * x - x * x;
    let slope = |x: f64| EndSlope {
        x,
        slope: 10.0 - 2.0 * x,
        std_error: 1.0,
        t: 10.0 - 2.0 * x,
    };
    let turning = TurningAt {
        label: String::new(),
        value: None,
        point: 5.0,
        std_error: 0.5,
        ci_delta: (4.0, 6.0),
        ci_fieller: Some((4.1, 6.1)),
        fieller_shape: FiellerShape::Bounded,
        fieller_roots: vec![4.1, 6.1],
        slope_low: slope(0.0),
        slope_high: slope(10.0),
        u_test: UTest {
            shape: Shape::InvertedU,
            t: 10.0,
            p: 1e-10,
            df: 100.0,
        },
        inside_data: true,
        ci_inside_data: true,
        boot_ci: None,
    };
    let p = plot(
        PlotKind::Curve {
            series: series("y", 0.0, 10.0, 101, f, 1.0),
            turning: Some(turning),
        },
        vec![0.2, 5.0, 9.8],
        None,
    );
    let svg = figure::svg(&p);
    assert_column_sized(&svg);
    let l = figure::layout(&p);
    let r = Rendered::new(&svg);
    assert!(r.non_white() > 5_000);
    let line = hex(palette::LINES[0]);
    assert!(close(r.at_data(&l, 2.0, f(2.0)), line, 12));
    assert!(close(r.at_data(&l, 8.5, f(8.5)), line, 12));
    let region = hex(palette::REGION);
    assert!(
        close(r.at_data(&l, 4.2, 5.0), region, 3),
        "{:?}",
        r.at_data(&l, 4.2, 5.0)
    );
    assert!(close(r.at_data(&l, 5.8, 5.0), region, 3));
    assert!(close(r.at_data(&l, 3.8, 5.0), WHITE, 2));
    assert!(close(r.at_data(&l, 6.2, 5.0), WHITE, 2));
    // The dashed mark at the turning point: some pixel on x = 5 below the curve is guide grey.
    let grey = hex(palette::GUIDE);
    let hits = (0..60)
        .map(|i| 3.0 + i as f64 * 0.2)
        .filter(|y| close(r.at_data(&l, 5.0, *y), grey, 30))
        .count();
    assert!(
        hits >= 10,
        "turning-point mark found at {hits} of 60 points"
    );
}

#[test]
fn axis_ticks_sit_at_round_numbers() {
    let p = plot(
        PlotKind::Curve {
            series: series("y", 0.13, 9.7, 20, |x| x, 0.1),
            turning: None,
        },
        vec![],
        None,
    );
    let svg = figure::svg(&p);
    // x from 0.13 to 9.7 (plus 2%): ticks 2, 4, 6, 8 with labels without decimals.
    for t in ["2", "4", "6", "8"] {
        assert!(
            svg.contains(&format!(
                "text-anchor=\"middle\" fill=\"#222222\">{t}</text>"
            )),
            "tick {t}"
        );
    }
}
