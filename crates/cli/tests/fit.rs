//! `slopewise fit` end to end: the JSON document's shape, the reports, exit
//! codes, and every bad-input file run through estimation without a crash.
//! (Numerical accuracy is tested against outside references in
//! crates/engine/tests/fit_reference.rs.)

mod common;

use common::{root, slopewise, text};

#[test]
fn the_panel_demo_fits_and_the_json_follows_the_design() {
    let out = slopewise(&["fit", "demo-data/suppliers.slope", "--format", "json"]);
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
    let out = slopewise(&["fit", "demo-data/suppliers.slope"]);
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
    let out = slopewise(&["fit", "demo-data/suppliers.slope", "--format", "markdown"]);
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
    for entry in std::fs::read_dir(root().join("tests/bad-input")).unwrap() {
        let p = entry.unwrap().path();
        if p.extension().is_none_or(|e| e != "slope") {
            continue;
        }
        let rel = p
            .strip_prefix(root())
            .unwrap()
            .to_str()
            .unwrap()
            .to_string();
        for format in ["text", "json", "markdown"] {
            let out = slopewise(&["fit", &rel, "--format", format]);
            let code = out.status.code();
            assert!(
                matches!(code, Some(0) | Some(1)),
                "{rel} {format}: exit {code:?}\n{}",
                text(&out.stderr)
            );
            assert!(
                !text(&out.stderr).contains("panicked"),
                "{rel}: {}",
                text(&out.stderr)
            );
        }
    }
}
