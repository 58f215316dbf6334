//! The whole pipeline (model text → check → design → fit) against reference
//! values computed outside the project.
//!
//! expected: tests/reference/ols_fe.json, written by tests/reference/ols_fe.py
//! with statsmodels 0.15 OLS on dummy-variable (LSDV) designs, HC1/HC3 from
//! statsmodels, cluster sandwiches from statsmodels without its correction,
//! multiplied by the project's CR1 factor; each case's "method" says exactly how.
//! Tolerance: 1e-8 relative, as the methods are exact.

use std::path::{Path, PathBuf};

use check::{check, FileLoader};
use engine::{fit, FitOptions, ModelFit};
use serde_json::Value;

fn reference_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference")
}

fn cases() -> Vec<Value> {
    let text = std::fs::read_to_string(reference_dir().join("ols_fe.json")).unwrap();
    let doc: Value = serde_json::from_str(&text).unwrap();
    doc["cases"].as_array().unwrap().clone()
}

/// The model file a user would write for the case.
fn model_text(case: &Value) -> String {
    let mut s = format!("source \"{}\"\n", case["data"].as_str().unwrap());
    if let Some(ex) = case["rows"]["exclude"].as_object() {
        for (col, vals) in ex {
            for v in vals.as_array().unwrap() {
                s.push_str(&format!("where {col} != \"{}\"\n", v.as_str().unwrap()));
            }
        }
    }
    let terms: Vec<String> = case["terms"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t.as_str().unwrap().replace('*', " * ").replace(',', ", "))
        .collect();
    s.push_str(&format!(
        "model m {{\n  {} = {}\n",
        case["outcome"].as_str().unwrap(),
        terms.join(" + ")
    ));
    let fixed: Vec<&str> = case["fixed"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    if !fixed.is_empty() {
        s.push_str(&format!("  fixed {}\n", fixed.join(", ")));
    }
    let errors = case["errors"].as_str().unwrap();
    match case["cluster"].as_array() {
        Some(c) => {
            let c: Vec<&str> = c.iter().map(|v| v.as_str().unwrap()).collect();
            s.push_str(&format!("  errors {errors} {}\n", c.join(", ")));
        }
        None => s.push_str(&format!("  errors {errors}\n")),
    }
    s.push_str("}\n");
    s
}

fn run(case: &Value) -> ModelFit {
    let text = model_text(case);
    let parsed = syntax::parse(&text);
    let checked = check(&text, &parsed, &reference_dir(), &FileLoader);
    assert!(!checked.has_errors(), "{text}\n{:?}", checked.diagnostics);
    let frame = checked.data.as_ref().unwrap().frame.clone();
    fit(
        &checked.models[0],
        &frame,
        checked.panel_index.as_deref(),
        &FitOptions::default(),
    )
    .unwrap_or_else(|e| panic!("{}: {e}", case["name"]))
}

fn close(got: f64, want: f64, tol: f64) -> bool {
    (got - want).abs() <= tol * want.abs().max(1e-300)
}

#[test]
fn every_reference_case_matches_to_1e8() {
    let mut failures = Vec::new();
    for case in cases() {
        let name = case["name"].as_str().unwrap().to_string();
        let f = run(&case);
        let e = &case["expected"];
        let mut check_num = |what: &str, got: f64, want: f64| {
            if !close(got, want, 1e-8) {
                failures.push(format!("{name}: {what} = {got:.12e}, want {want:.12e}"));
            }
        };
        for (term, want) in e["coef"].as_object().unwrap() {
            match f.coefficients.iter().find(|c| &c.term == term) {
                Some(c) => {
                    check_num(&format!("coef {term}"), c.estimate, want.as_f64().unwrap());
                    check_num(
                        &format!("se {term}"),
                        c.std_error,
                        e["se"][term].as_f64().unwrap(),
                    );
                    check_num(
                        &format!("df {term}"),
                        c.df,
                        e["df_inference"].as_f64().unwrap(),
                    );
                }
                None => check_num(&format!("missing coefficient {term}"), f64::NAN, 0.0),
            }
        }
        check_num("df_resid", f.df_resid, e["df_resid"].as_f64().unwrap());
        check_num("n_obs", f.n_obs as f64, e["n_obs"].as_f64().unwrap());
        check_num("r2", f.stats.r2, e["r2"].as_f64().unwrap());
        if let Some(w) = e["r2_within"].as_f64() {
            check_num("r2_within", f.stats.r2_within.unwrap_or(f64::NAN), w);
        }
        check_num(
            "singletons",
            f.dropped.singletons as f64,
            e["singletons_dropped"].as_f64().unwrap(),
        );
        match &e["cluster_factor"] {
            Value::Number(c) => {
                check_num("cluster factor", f.cluster_factors[0], c.as_f64().unwrap())
            }
            Value::Array(cs) => {
                // Two-way: [c_A, c_B, c_AB]; the model reports the two groupings' factors.
                for (i, c) in cs.iter().take(2).enumerate() {
                    check_num(
                        &format!("cluster factor {i}"),
                        f.cluster_factors[i],
                        c.as_f64().unwrap(),
                    );
                }
            }
            _ => {}
        }
        if let Some(nc) = e["n_clusters"].as_array() {
            let want: Vec<usize> = nc.iter().map(|v| v.as_u64().unwrap() as usize).collect();
            if f.n_clusters != want {
                failures.push(format!(
                    "{name}: n_clusters {:?}, want {want:?}",
                    f.n_clusters
                ));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn grunfeld_ten_firm_within_estimates_match_the_handbook() {
    // expected, from memory: Baltagi, Econometric Analysis of Panel Data, Grunfeld
    // data (10 firms, 1935–1954), one-way within estimates 0.1101 (value), 0.3101 (capital).
    let case = cases()
        .into_iter()
        .find(|c| c["name"] == "grunfeld10_fe_firm_classical")
        .unwrap();
    let f = run(&case);
    let coef = |t: &str| {
        f.coefficients
            .iter()
            .find(|c| c.term == t)
            .unwrap()
            .estimate
    };
    assert!((coef("value") - 0.1101).abs() < 5e-5, "{}", coef("value"));
    assert!(
        (coef("capital") - 0.3101).abs() < 5e-5,
        "{}",
        coef("capital")
    );
}
