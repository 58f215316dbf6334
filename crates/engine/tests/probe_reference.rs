//! Probing statements (model text → check → fit → probe) against values
//! computed outside the project.
//!
//! expected: tests/reference/probe.json, written by tests/reference/probe.py:
//! statsmodels OLS coefficients and covariances (classical, HC1, cluster; the
//! within model as LSDV), then numpy/scipy for the effects, Johnson–Neyman
//! roots, turning points with delta and Fieller intervals, the U test and
//! average marginal effects; see the generator's docstring for each formula.
//! Tolerance: 1e-8 relative (closed forms on the same coefficients).

use std::path::{Path, PathBuf};

use check::{check, FileLoader};
use engine::probe::{run, FiellerShape, Output, ProbeOptions, Shape, Significant, StatsOver};
use engine::{fit, FitOptions};
use serde_json::Value;

const TOL: f64 = 1e-8;

fn reference_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference")
}

/// Check, fit the first model, and run the first probing statement.
fn run_text(text: &str) -> Result<Output, String> {
    let parsed = syntax::parse(text);
    let checked = check(text, &parsed, &reference_dir(), &FileLoader);
    assert!(!checked.has_errors(), "{text}\n{:?}", checked.diagnostics);
    let frame = checked.data.as_ref().unwrap().frame.clone();
    let model = &checked.models[checked.requests[0].model];
    let panel = checked.panel_index.as_deref();
    let f = fit(model, &frame, panel, &FitOptions::default()).map_err(|e| e.to_string())?;
    run(
        &checked.requests[0],
        model,
        &f,
        &frame,
        panel,
        &ProbeOptions::default(),
    )
    .map_err(|e| e.to_string())
}

fn cases() -> Vec<Value> {
    let text = std::fs::read_to_string(reference_dir().join("probe.json")).unwrap();
    let doc: Value = serde_json::from_str(&text).unwrap();
    doc["cases"].as_array().unwrap().clone()
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

struct Cmp<'a> {
    case: &'a str,
    failures: Vec<String>,
}

impl Cmp<'_> {
    fn close(&mut self, what: &str, got: f64, want: f64) {
        let ok = (got - want).abs() <= TOL * want.abs().max(1e-300)
            || (want == 0.0 && got.abs() < 1e-14);
        if !ok {
            self.failures
                .push(format!("{}: {what}: got {got:e}, want {want:e}", self.case));
        }
    }

    fn estimate(&mut self, what: &str, got: &engine::probe::Estimate, want: &Value) {
        self.close(
            &format!("{what} estimate"),
            got.estimate,
            num(&want["estimate"]),
        );
        self.close(
            &format!("{what} se"),
            got.std_error,
            num(&want["std_error"]),
        );
        self.close(&format!("{what} df"), got.df, num(&want["df"]));
        self.close(&format!("{what} t"), got.t, num(&want["t"]));
        self.close(&format!("{what} p"), got.p, num(&want["p"]));
        self.close(&format!("{what} ci_low"), got.ci_low, num(&want["ci_low"]));
        self.close(
            &format!("{what} ci_high"),
            got.ci_high,
            num(&want["ci_high"]),
        );
    }
}

#[test]
fn every_probe_case_matches_to_1e8() {
    let cases = cases();
    assert!(cases.len() >= 15, "{} cases", cases.len());
    let mut all = Vec::new();
    for case in &cases {
        let name = case["name"].as_str().unwrap();
        let want = &case["expected"];
        let out =
            run_text(case["text"].as_str().unwrap()).unwrap_or_else(|e| panic!("{name}: {e}"));
        let mut c = Cmp {
            case: name,
            failures: Vec::new(),
        };
        match (&out, case["kind"].as_str().unwrap()) {
            (Output::Probe(p), "probe") => {
                let at = want["at"].as_array().unwrap();
                assert_eq!(p.at.len(), at.len(), "{name}");
                for (g, w) in p.at.iter().zip(at) {
                    assert_eq!(g.label, w["label"].as_str().unwrap(), "{name}");
                    c.close(&format!("{} value", g.label), g.value, num(&w["value"]));
                    c.estimate(&g.label, &g.effect, w);
                }
                let over = match want["stats_over"].as_str().unwrap() {
                    "groups" => StatsOver::Groups,
                    _ => StatsOver::Rows,
                };
                assert_eq!(p.stats_over.0, over, "{name}");
                if let Some(held) = want["held_at"].as_array() {
                    for h in held {
                        let n = h[0].as_str().unwrap();
                        let got = p
                            .held_at
                            .iter()
                            .find(|(m, _)| m == n)
                            .unwrap_or_else(|| panic!("{name}: {n} not held: {:?}", p.held_at));
                        c.close(&format!("held {n}"), got.1, num(&h[1]));
                    }
                }
            }
            (Output::Regions(r), "regions") => {
                let bounds = want["bounds"].as_array().unwrap();
                assert_eq!(r.bounds.len(), bounds.len(), "{name}: {:?}", r.bounds);
                for (g, w) in r.bounds.iter().zip(bounds) {
                    c.close("bound", *g, num(w));
                }
                let sig = match want["significant"].as_str().unwrap() {
                    "inside" => Significant::Inside,
                    "outside" => Significant::Outside,
                    "everywhere" => Significant::Everywhere,
                    _ => Significant::Nowhere,
                };
                assert_eq!(r.significant, sig, "{name}");
                c.close("critical", r.critical, num(&want["critical"]));
                c.close("df", r.df, num(&want["df"]));
                c.close("data_min", r.data_min, num(&want["data_min"]));
                c.close("data_max", r.data_max, num(&want["data_max"]));
            }
            (Output::Turning(t), "turning") => {
                let at = want["at"].as_array().unwrap();
                assert_eq!(t.at.len(), at.len(), "{name}");
                c.close("data_min", t.data_min, num(&want["data_min"]));
                c.close("data_max", t.data_max, num(&want["data_max"]));
                for (g, w) in t.at.iter().zip(at) {
                    let l = w["label"].as_str().unwrap();
                    assert_eq!(g.label, l, "{name}");
                    if let Some(v) = w.get("value") {
                        c.close(&format!("{l} value"), g.value.unwrap(), num(v));
                    }
                    c.close(&format!("{l} point"), g.point, num(&w["point"]));
                    c.close(&format!("{l} se"), g.std_error, num(&w["std_error"]));
                    c.close(
                        &format!("{l} delta low"),
                        g.ci_delta.0,
                        num(&w["ci_delta"][0]),
                    );
                    c.close(
                        &format!("{l} delta high"),
                        g.ci_delta.1,
                        num(&w["ci_delta"][1]),
                    );
                    let shape = match w["fieller_shape"].as_str().unwrap() {
                        "bounded" => FiellerShape::Bounded,
                        "two_rays" => FiellerShape::TwoRays,
                        _ => FiellerShape::Unbounded,
                    };
                    assert_eq!(g.fieller_shape, shape, "{name} {l}");
                    let roots = w["fieller_roots"].as_array().unwrap();
                    assert_eq!(g.fieller_roots.len(), roots.len(), "{name} {l}");
                    for (r, wr) in g.fieller_roots.iter().zip(roots) {
                        c.close(&format!("{l} fieller root"), *r, num(wr));
                    }
                    assert_eq!(g.ci_fieller.is_some(), shape == FiellerShape::Bounded);
                    for (end, we) in [
                        (&g.slope_low, &w["slope_low"]),
                        (&g.slope_high, &w["slope_high"]),
                    ] {
                        c.close(&format!("{l} end x"), end.x, num(&we["x"]));
                        c.close(&format!("{l} end slope"), end.slope, num(&we["slope"]));
                        c.close(&format!("{l} end se"), end.std_error, num(&we["std_error"]));
                        c.close(&format!("{l} end t"), end.t, num(&we["t"]));
                    }
                    let wu = &w["u_test"];
                    let shape = match wu["shape"].as_str().unwrap() {
                        "U" => Shape::U,
                        _ => Shape::InvertedU,
                    };
                    assert_eq!(g.u_test.shape, shape, "{name} {l}");
                    c.close(&format!("{l} u t"), g.u_test.t, num(&wu["t"]));
                    c.close(&format!("{l} u p"), g.u_test.p, num(&wu["p"]));
                    c.close(&format!("{l} u df"), g.u_test.df, num(&wu["df"]));
                    let inside = g.point >= t.data_min && g.point <= t.data_max;
                    assert_eq!(g.inside_data, inside, "{name} {l}");
                }
            }
            (Output::Plot(p), "plot") => {
                let engine::probe::PlotKind::Lines { series } = &p.kind else {
                    panic!("{name}: not lines: {:?}", p.kind)
                };
                let want_series = want["series"].as_array().unwrap();
                assert_eq!(series.len(), want_series.len(), "{name}");
                for (s, ws) in series.iter().zip(want_series) {
                    assert_eq!(s.points.len(), 50, "{name}");
                    let ends = [s.points[0], s.points[49]];
                    for (g, w) in ends.iter().zip(ws["ends"].as_array().unwrap()) {
                        c.close("x", g.x, num(&w["x"]));
                        c.close("fitted", g.y, num(&w["y"]));
                        c.close("band low", g.low, num(&w["low"]));
                        c.close("band high", g.high, num(&w["high"]));
                    }
                }
                assert_eq!(p.rug.len(), 300, "{name}: one rug mark per row");
            }
            (Output::Effect(e), "effect") => c.estimate("effect", &e.effect, &want["effect"]),
            (other, kind) => panic!("{name}: asked for {kind}, got {other:?}"),
        }
        all.extend(c.failures);
    }
    assert!(
        all.is_empty(),
        "{} mismatches:\n{}",
        all.len(),
        all.join("\n")
    );
}

#[test]
fn a_bound_beyond_the_data_is_flagged_in_the_notes() {
    // Same case as regions_bounds_beyond_data in probe.json: both roots below the data.
    let case = cases()
        .into_iter()
        .find(|c| c["name"] == "regions_bounds_beyond_data")
        .unwrap();
    let Output::Regions(r) = run_text(case["text"].as_str().unwrap()).unwrap() else {
        panic!("not regions")
    };
    assert!(r.bounds.iter().all(|b| *b < r.data_min));
    assert!(
        r.notes
            .iter()
            .any(|n| n.contains("outside the observed range")),
        "{:?}",
        r.notes
    );
}
