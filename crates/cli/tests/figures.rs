//! The figures `slopewise fit` writes for the panel demo's curve model: each
//! of the three kinds parses as SVG, renders to a picture that is not blank,
//! is one journal column wide, and carries what the statement asked for.

mod common;

use common::{curve_model, slopewise, text};
use resvg::tiny_skia::{Pixmap, Transform};
use resvg::usvg;

fn render(svg: &str, name: &str) -> Pixmap {
    let look = std::env::var_os("SLOPEWISE_FIGURE_PNG");
    let mut options = usvg::Options::default();
    if look.is_some() {
        // For looking at the figures: SLOPEWISE_FIGURE_PNG=/tmp cargo test -p slopewise --test figures
        options.fontdb_mut().load_system_fonts();
    }
    let tree = usvg::Tree::from_str(svg, &options).expect("the SVG parses");
    let size = tree.size();
    let mut pixmap = Pixmap::new(size.width().ceil() as u32, size.height().ceil() as u32).unwrap();
    resvg::render(&tree, Transform::identity(), &mut pixmap.as_mut());
    if let Some(dir) = look {
        let big = Pixmap::new(pixmap.width() * 3, pixmap.height() * 3).map(|mut p| {
            resvg::render(&tree, Transform::from_scale(3.0, 3.0), &mut p.as_mut());
            p
        });
        if let Some(p) = big {
            p.save_png(std::path::Path::new(&dir).join(name.replace(".svg", ".png")))
                .unwrap();
        }
    }
    pixmap
}

#[test]
fn the_three_figure_kinds_are_written_and_render() {
    let dir = std::env::temp_dir().join(format!("slopewise-figures-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("figures.slope");
    std::fs::write(
        &file,
        curve_model()
            + r#"plot shape: suppliers across digital at p10, p50, p90 to "lines.svg"
plot shape: suppliers across digital to "band.svg"
plot shape: suppliers to "curve.svg"
"#,
    )
    .unwrap();
    let out = slopewise(&["fit", file.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    for name in ["lines.svg", "band.svg", "curve.svg"] {
        let svg = std::fs::read_to_string(dir.join(name)).unwrap();
        assert!(svg.contains("width=\"84mm\""), "{name}: one column wide");
        let pixmap = render(&svg, name);
        let inked = pixmap
            .pixels()
            .iter()
            .filter(|c| c.red() < 200 || c.green() < 200 || c.blue() < 200)
            .count();
        assert!(inked > 2_000, "{name}: {inked} inked pixels");
    }
    let lines = std::fs::read_to_string(dir.join("lines.svg")).unwrap();
    assert!(
        lines.contains(">suppliers</text>"),
        "the focal on the x axis"
    );
    assert!(
        lines.contains(">uptime</text>"),
        "the outcome on the y axis"
    );
    for p in ["p10", "p50", "p90"] {
        assert!(
            lines.contains(&format!("digital = {p} (")),
            "legend entry {p}"
        );
    }
    let band = std::fs::read_to_string(dir.join("band.svg")).unwrap();
    assert!(
        band.contains(">digital</text>"),
        "the moderator on the x axis"
    );
    assert!(band.contains(">effect of suppliers on uptime</text>"));
    let curve = std::fs::read_to_string(dir.join("curve.svg")).unwrap();
    assert!(
        curve.contains(">turning point 15.6</text>"),
        "the turning point marked"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
