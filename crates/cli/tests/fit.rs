//! `slopewise fit` end to end: the JSON document's shape, the reports, exit
//! codes, the probing statements, and every bad-input file run through
//! estimation without a crash.
//! (Numerical accuracy is tested against outside references in
//! crates/engine/tests/fit_reference.rs.)

mod common;

use common::{curve_model, root, slopewise, text};

#[test]
fn the_panel_demo_fits_and_the_json_follows_the_design() {
    let figures = std::env::temp_dir().join(format!("slopewise-panel-{}", std::process::id()));
    let out = slopewise(&[
        "fit",
        "demo-data/suppliers.slope",
        "--format",
        "json",
        "--out",
        figures.to_str().unwrap(),
    ]);
    let _ = std::fs::remove_dir_all(&figures);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    for key in [
        "models",
        "probes",
        "regions",
        "turning",
        "effects",
        "comparisons",
        "diagnostics",
    ] {
        assert!(doc.get(key).is_some(), "missing key {key}");
    }
    let shape = &doc["models"][1];
    assert_eq!(shape["name"], "shape");
    assert_eq!(shape["kind"], "within");
    assert_eq!(shape["outcome"], "uptime");
    assert_eq!(shape["n_obs"], 4992);
    assert_eq!(shape["n_groups"]["firm"], 400);
    assert_eq!(shape["n_groups"]["year"], 17);
    assert_eq!(shape["errors"], "cluster");
    assert_eq!(shape["df_method"], "residual");
    let terms: Vec<&str> = shape["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["term"].as_str().unwrap())
        .collect();
    assert_eq!(
        terms,
        [
            "suppliers",
            "suppliers^2",
            "digital",
            "suppliers*digital",
            "suppliers^2*digital",
            "log(staff)"
        ]
    );
    let c = &shape["coefficients"][0];
    for key in ["estimate", "std_error", "df", "t", "p", "ci_low", "ci_high"] {
        assert!(c[key].is_number(), "{key} is {:?}", c[key]);
    }
    assert_eq!(c["df"], 399.0, "clustered by 400 firms: df = G - 1");
    // demo-data/README.md: the true b1 is 0.5 and b2 is -0.02; the estimates should be near.
    let b1 = c["estimate"].as_f64().unwrap();
    let b2 = shape["coefficients"][1]["estimate"].as_f64().unwrap();
    assert!(
        (b1 - 0.5).abs() < 0.15 && (b2 + 0.02).abs() < 0.01,
        "{b1} {b2}"
    );
    assert!(shape["fit"]["r2_within"].is_number());
    assert_eq!(shape["fit"]["converged"], true);
    let cmp = &doc["comparisons"][0];
    assert_eq!(cmp["models"], serde_json::json!(["base", "shape"]));
    assert_eq!(cmp["method"], "wald-f");
    assert_eq!(cmp["df"][0], 3.0);
    assert!(
        cmp["p"].as_f64().unwrap() < 0.05,
        "the curve matters in the demo data"
    );
}

#[test]
fn text_and_markdown_reports_name_the_errors_and_rows() {
    // Figures go to a folder of the test's own, not into demo-data/.
    let figures = std::env::temp_dir().join(format!("slopewise-tables-{}", std::process::id()));
    let figures = figures.to_str().unwrap();
    let out = slopewise(&["fit", "demo-data/suppliers.slope", "--out", figures]);
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(
        stdout.contains("shape: fixed effects (within) of uptime, N = 4,992 (firm 400, year 17)"),
        "{stdout}"
    );
    assert!(
        stdout.contains("clustered standard errors (CR1) by firm (400 clusters)"),
        "{stdout}"
    );
    assert!(
        stdout.contains("t tests and intervals on 399 df (clusters − 1)"),
        "{stdout}"
    );
    assert!(
        stdout.contains("compare base, shape: F(3, 399)"),
        "{stdout}"
    );
    let out = slopewise(&[
        "fit",
        "demo-data/suppliers.slope",
        "--format",
        "markdown",
        "--out",
        figures,
    ]);
    let _ = std::fs::remove_dir_all(figures);
    let md = text(&out.stdout);
    assert!(
        md.contains("| Term | Estimate | SE | *df* | *t* | *p* | 95% CI |"),
        "{md}"
    );
    assert!(md.contains("| `suppliers^2` |"), "{md}");
}

#[test]
fn out_writes_the_report_files() {
    let dir = std::env::temp_dir().join(format!("slopewise-out-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let out = slopewise(&[
        "fit",
        "demo-data/suppliers.slope",
        "--out",
        dir.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(std::fs::read_to_string(dir.join("report.md"))
        .unwrap()
        .contains("**Model shape.**"));
    let js: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("report.json")).unwrap()).unwrap();
    assert_eq!(js["models"].as_array().unwrap().len(), 2);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn estimation_errors_name_the_terms_and_exit_1() {
    let out = slopewise(&["fit", "tests/bad-input/singular_design.slope"]);
    assert_eq!(out.status.code(), Some(1));
    let stderr = text(&out.stderr);
    assert!(
        stderr.contains("tests/bad-input/singular_design.slope:4:7: error: model `m`: the terms are collinear: `x2` is a linear combination of `remote`"),
        "{stderr}"
    );
    let out = slopewise(&["fit", "tests/bad-input/absorbed_everything.slope"]);
    assert_eq!(out.status.code(), Some(1));
    assert!(
        text(&out.stderr).contains("every term is absorbed by the fixed effects"),
        "{}",
        text(&out.stderr)
    );
    let out = slopewise(&[
        "fit",
        "tests/bad-input/one_cluster.slope",
        "--format",
        "json",
    ]);
    assert_eq!(out.status.code(), Some(1));
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(doc["models"].as_array().unwrap().len(), 0);
    assert_eq!(doc["diagnostics"][1]["severity"], "error");
}

#[test]
fn every_bad_input_file_runs_through_fit_without_a_crash() {
    common::each_bad_input_exits_cleanly("fit", &["text", "json", "markdown"]);
}

/// A model file in a fresh folder that asks every probing statement of the
/// panel demo's curve model, including all three figures and one figure that
/// cannot be written (its path is a folder).
fn probing_file(tag: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("slopewise-probe-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("blocked.svg")).unwrap();
    let text = curve_model()
        + r#"probe shape: suppliers across digital at p10, mean, +1sd bootstrap 30 seed 7
regions shape: suppliers across digital alpha 0.05
turning shape: suppliers
turning shape: suppliers across digital at p10, p90
effect shape: suppliers
plot shape: suppliers to "blocked.svg"
plot shape: suppliers across digital at p10, p50, p90 to "lines.svg"
plot shape: suppliers across digital to "band.svg"
plot shape: suppliers to "curve.svg"
"#;
    std::fs::write(dir.join("probing.slope"), text).unwrap();
    dir
}

/// The mean of a numeric column, read here without the project's CSV reader.
fn mean_of_column(path: &str, name: &str) -> f64 {
    let text = std::fs::read_to_string(root().join(path)).unwrap();
    let mut lines = text.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let k = head.iter().position(|h| *h == name).unwrap();
    let values: Vec<f64> = lines
        .filter(|l| !l.is_empty())
        .map(|l| l.split(',').nth(k).unwrap().parse().unwrap())
        .collect();
    values.iter().sum::<f64>() / values.len() as f64
}

fn coefficient(model: &serde_json::Value, term: &str) -> f64 {
    model["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["term"] == term)
        .unwrap()["estimate"]
        .as_f64()
        .unwrap()
}

#[test]
fn both_demo_files_run_in_every_format() {
    // Figures go to a folder of the test's own, not into demo-data/.
    let figures = std::env::temp_dir().join(format!("slopewise-demo-{}", std::process::id()));
    let figures_arg = figures.to_str().unwrap();
    for format in ["text", "json", "markdown"] {
        let out = slopewise(&[
            "fit",
            "demo-data/suppliers.slope",
            "--format",
            format,
            "--out",
            figures_arg,
        ]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{format}: {}",
            text(&out.stderr)
        );
        let stdout = text(&out.stdout);
        assert!(
            !text(&out.stderr).contains("not part of this version"),
            "probing statements are computed now"
        );
        match format {
            "text" => {
                assert!(
                    stdout.contains("turning shape: turning point of suppliers\n"),
                    "{stdout}"
                );
                assert!(stdout
                    .contains("turning shape: turning point of suppliers at values of digital"));
                assert!(stdout.contains("effect shape: average marginal effect of suppliers"));
                assert_eq!(
                    stdout.matches("    [pass] ").count() + stdout.matches("    [fail] ").count(),
                    12,
                    "three conditions at each of four turning points"
                );
            }
            "markdown" => {
                assert!(
                    stdout.contains("**Turning point of `suppliers` (model shape).**"),
                    "{stdout}"
                );
                assert!(
                    stdout.contains("| Turning point | SE | 95% CI (delta) | 95% CI (Fieller) |")
                );
                assert!(stdout.contains("Average marginal effect of `suppliers` (model shape)"));
            }
            _ => {
                let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
                // As the file asks: two turning statements, one effect, no probe or
                // region, three figures.
                assert_eq!(doc["turning"].as_array().unwrap().len(), 2);
                assert_eq!(doc["effects"].as_array().unwrap().len(), 1);
                assert_eq!(doc["probes"].as_array().unwrap().len(), 0);
                assert_eq!(doc["regions"].as_array().unwrap().len(), 0);
                for name in [
                    "uptime_curve.svg",
                    "uptime_by_digital.svg",
                    "suppliers_effect_by_digital.svg",
                ] {
                    let svg = std::fs::read_to_string(figures.join(name)).unwrap();
                    assert!(
                        svg.starts_with("<svg") || svg.starts_with("<?xml"),
                        "{name}"
                    );
                }
                let shape = &doc["models"][1];
                let t = &doc["turning"][0]["at"][0];
                // Closed form of the turning point with the moderator held at its mean,
                // −(b1 + b3·w)/(2·(b2 + b4·w)) (Haans, Pieters & He 2016), from the
                // coefficients printed in the same document and the mean of `digital`
                // over every row of the CSV (all rows are in the estimation sample).
                let w = mean_of_column("demo-data/suppliers.csv", "digital");
                let point = -(coefficient(shape, "suppliers")
                    + coefficient(shape, "suppliers*digital") * w)
                    / (2.0
                        * (coefficient(shape, "suppliers^2")
                            + coefficient(shape, "suppliers^2*digital") * w));
                assert!(
                    (t["point"].as_f64().unwrap() - point).abs() < 1e-9 * point.abs(),
                    "{t}"
                );
                for key in ["point", "std_error"] {
                    assert!(t[key].is_number(), "{key}");
                }
                assert!(t["ci_delta"][0].is_number() && t["ci_fieller"][1].is_number());
                assert!(t["u_test"]["t"].is_number() && t["u_test"]["p"].is_number());
                assert_eq!(t["inside_data"], true);
                assert_eq!(
                    doc["turning"][1]["at"].as_array().unwrap().len(),
                    3,
                    "p10, p50, p90"
                );
                assert_eq!(doc["turning"][1]["at"][2]["label"], "p90");
                let e = &doc["effects"][0];
                for key in ["estimate", "std_error", "ci_low", "ci_high"] {
                    assert!(e[key].is_number(), "{key}");
                }
            }
        }
    }
    // The mixed-model demo: this version refuses to estimate `vary`, and says so
    // at the model and at every probing statement that depends on it; the
    // within-team model of the same file is estimated and probed.
    for format in ["text", "json", "markdown"] {
        let out = slopewise(&[
            "fit",
            "demo-data/teams.slope",
            "--format",
            format,
            "--out",
            figures_arg,
        ]);
        assert_eq!(out.status.code(), Some(1), "{format}");
        let stderr = text(&out.stderr);
        assert!(
            stderr.contains("demo-data/teams.slope:11:7: error: model `full`: mixed models (with `vary`) cannot be estimated by this version yet"),
            "{stderr}"
        );
        for (line, kind) in [(19, "probe"), (20, "regions"), (21, "plot")] {
            assert!(
                stderr.contains(&format!("demo-data/teams.slope:{line}:1: warning: `{kind}` was not computed because model `full` was not estimated")),
                "{stderr}"
            );
        }
        if format == "json" {
            let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
            let probes = doc["probes"].as_array().unwrap();
            assert_eq!(probes.len(), 1);
            assert_eq!(probes[0]["model"], "within_team");
            assert_eq!(
                probes[0]["stats_over"], "groups",
                "meetings is a team-level variable"
            );
            assert_eq!(doc["regions"].as_array().unwrap().len(), 1);
            let warned = doc["diagnostics"]
                .as_array()
                .unwrap()
                .iter()
                .filter(|d| d["message"].as_str().unwrap().contains("was not computed"))
                .count();
            assert_eq!(warned, 3);
        }
    }
    assert!(!root().join("demo-data/remote_by_meetings.svg").exists());
    assert!(figures.join("remote_effect_by_meetings.svg").exists());
    let _ = std::fs::remove_dir_all(&figures);
}

#[test]
fn every_probing_statement_is_computed_and_a_failing_one_does_not_stop_the_rest() {
    let dir = probing_file("json");
    let file = dir.join("probing.slope");
    let out = slopewise(&["fit", file.to_str().unwrap(), "--format", "json"]);
    assert_eq!(out.status.code(), Some(1), "the blocked figure is an error");
    let stderr = text(&out.stderr);
    assert!(
        stderr.contains(&format!(
            "{}:13:1: error: cannot write the figure {}",
            file.display(),
            dir.join("blocked.svg").display()
        )),
        "{stderr}"
    );
    assert!(
        !stderr.contains("bootstrap "),
        "no progress bar under --format json: {stderr}"
    );
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let probe = &doc["probes"][0];
    assert_eq!(probe["moderator"], "digital");
    let at = probe["at"].as_array().unwrap();
    assert_eq!(at.len(), 3);
    assert_eq!(at[1]["label"], "mean");
    for a in at {
        for key in [
            "value",
            "effect",
            "std_error",
            "df",
            "t",
            "p",
            "ci_low",
            "ci_high",
        ] {
            assert!(a[key].is_number(), "{key}: {a}");
        }
        let (lo, hi) = (
            a["boot_ci"][0].as_f64().unwrap(),
            a["boot_ci"][1].as_f64().unwrap(),
        );
        assert!(lo < hi, "{a}");
    }
    assert_eq!(probe["stats_over"], "rows");
    let r = &doc["regions"][0];
    assert_eq!(r["bounds"].as_array().unwrap().len(), 2, "{r}");
    assert!(["inside", "outside"].contains(&r["significant"].as_str().unwrap()));
    assert_eq!(r["data_min"], 0.0);
    assert_eq!(r["data_max"], 1.0);
    assert_eq!(doc["turning"].as_array().unwrap().len(), 2);
    assert_eq!(doc["effects"].as_array().unwrap().len(), 1);
    // The three figures that could be written, at the statements' paths.
    let figures: Vec<&str> = doc["figures"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["path"].as_str().unwrap())
        .collect();
    assert_eq!(figures.len(), 3);
    for name in ["lines.svg", "band.svg", "curve.svg"] {
        let svg = std::fs::read_to_string(dir.join(name)).unwrap();
        assert!(svg.starts_with("<svg "), "{name}");
    }
    let out = slopewise(&["fit", file.to_str().unwrap()]);
    let stdout = text(&out.stdout);
    assert!(
        stdout
            .contains("regions shape: where the effect of suppliers is significant across digital"),
        "{stdout}"
    );
    assert!(stdout.contains("Johnson–Neyman bounds: digital = "));
    assert!(stdout.contains("bootstrap 95% CI"));
    assert!(stdout.contains("plot shape: figure of suppliers across digital written to"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn out_puts_relative_figures_beside_the_reports() {
    let dir = probing_file("out");
    let file = dir.join("probing.slope");
    let target = dir.join("report");
    let out = slopewise(&[
        "fit",
        file.to_str().unwrap(),
        "--out",
        target.to_str().unwrap(),
    ]);
    // The folder-named figure is relative too, so it goes into DIR, where nothing blocks it.
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    for name in ["lines.svg", "band.svg", "curve.svg", "blocked.svg"] {
        assert!(target.join(name).is_file(), "{name} in the --out folder");
        assert!(
            name == "blocked.svg" || !dir.join(name).exists(),
            "{name} not beside the model file"
        );
    }
    let md = std::fs::read_to_string(target.join("report.md")).unwrap();
    assert!(
        md.contains("](lines.svg)"),
        "figures linked by their place in the folder: {md}"
    );
    assert!(md.contains("**Effect of `suppliers` at values of `digital` (model shape).**"));
    let js: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(target.join("report.json")).unwrap())
            .unwrap();
    assert_eq!(js["probes"].as_array().unwrap().len(), 1);
    let _ = std::fs::remove_dir_all(&dir);
}
