//! Estimation failures are reported as errors with a reason, never as numbers.

use std::path::Path;

use check::{check, FileLoader};
use engine::{fit, FitOptions};

fn fit_text(text: &str, options: &FitOptions) -> Result<engine::ModelFit, engine::FitError> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference");
    let parsed = syntax::parse(text);
    let checked = check(text, &parsed, &dir, &FileLoader);
    assert!(!checked.has_errors(), "{:?}", checked.diagnostics);
    let frame = checked.data.as_ref().unwrap().frame.clone();
    fit(
        &checked.models[0],
        &frame,
        checked.panel_index.as_deref(),
        options,
    )
}

const TWO_WAY: &str =
    "source \"grunfeld.csv\"\nmodel m {\n  invest = value + capital\n  fixed firm, year\n}\n";

#[test]
fn a_within_transform_that_does_not_converge_is_an_error() {
    let options = FitOptions {
        max_iterations: 1,
        tolerance: 1e-14,
        ..FitOptions::default()
    };
    // An unbalanced two-way panel needs more than one sweep.
    let unbalanced =
        "source \"ols_fe_panel.csv\"\nmodel m {\n  y = x + z\n  fixed unit, period\n}\n";
    let e = fit_text(unbalanced, &options).unwrap_err();
    assert!(
        e.message
            .starts_with("the within transform did not converge"),
        "{e}"
    );
    assert!(e.message.contains("no estimates are reported"), "{e}");
}

#[test]
fn the_default_tolerance_converges_and_says_so() {
    let f = fit_text(TWO_WAY, &FitOptions::default()).unwrap();
    assert!(f.stats.converged);
    assert!(f.stats.iterations >= 1);
    // Two groupings, one connected component: 11 + 20 - 1 absorbed levels.
    assert_eq!(f.absorbed_levels, 30);
    assert_eq!(f.df_resid, 220.0 - 2.0 - 30.0);
}

#[test]
fn collinear_terms_are_named() {
    let text = "source \"grunfeld.csv\"\nlet v2 = value * 2 + capital\nmodel m { invest = value + capital + v2 }\n";
    let e = fit_text(text, &FitOptions::default()).unwrap_err();
    assert_eq!(
        e.message,
        "the terms are collinear: `v2` is a linear combination of `value`, `capital`; remove one of them"
    );
}

#[test]
fn hc3_with_two_fixed_groupings_is_refused_with_a_reason() {
    let text = "source \"grunfeld.csv\"\nmodel m {\n  invest = value + capital\n  fixed firm, year\n  errors hc3\n}\n";
    let e = fit_text(text, &FitOptions::default()).unwrap_err();
    assert!(
        e.message
            .contains("hc3 errors need the leverage of every row"),
        "{e}"
    );
}

#[test]
fn categorical_terms_become_indicators_against_the_first_sorted_level() {
    // Grunfeld firm ids F01..F11 as a categorical term in least squares.
    let text = "source \"grunfeld.csv\"\nmodel m { invest = value + capital + firm }\n";
    let f = fit_text(text, &FitOptions::default()).unwrap();
    let terms: Vec<&str> = f.coefficients.iter().map(|c| c.term.as_str()).collect();
    assert_eq!(terms[0], "(intercept)");
    assert_eq!(terms[3], "firm=F02");
    assert_eq!(terms.len(), 3 + 10);
    // Indicator coding gives the same slopes as the within transform (LSDV = within).
    let within = fit_text(
        "source \"grunfeld.csv\"\nmodel m {\n  invest = value + capital\n  fixed firm\n}\n",
        &FitOptions::default(),
    )
    .unwrap();
    for (a, b) in f.coefficients[1..3].iter().zip(&within.coefficients) {
        assert!(
            (a.estimate - b.estimate).abs() < 1e-9 * b.estimate.abs(),
            "{} {}",
            a.estimate,
            b.estimate
        );
        assert!(
            (a.std_error - b.std_error).abs() < 1e-8 * b.std_error,
            "{} {}",
            a.std_error,
            b.std_error
        );
    }
    let with_ref = fit_text(
        "source \"grunfeld.csv\"\nmodel m { invest = value + capital + ref(firm, \"F05\") }\n",
        &FitOptions::default(),
    )
    .unwrap();
    assert!(with_ref
        .coefficients
        .iter()
        .any(|c| c.term == "ref(firm,\"F05\")=F01"));
    assert!(!with_ref
        .coefficients
        .iter()
        .any(|c| c.term.ends_with("=F05")));
}

#[test]
fn both_forms_of_a_product_under_fixed_effects_estimate() {
    // The plain product mixes between- and within-unit variation; the product of
    // unit-demeaned variables is purely within (the value below is from
    // tests/reference/ols_fe.json, statsmodels LSDV with a hand-built product).
    let base = "source \"ols_fe_panel.csv\"\nmodel m {\n  y = x + z + PRODUCT\n  fixed unit\n}\n";
    let plain = fit_text(&base.replace("PRODUCT", "x * z"), &FitOptions::default()).unwrap();
    let within = fit_text(
        &base.replace("PRODUCT", "within(x, unit) * within(z, unit)"),
        &FitOptions::default(),
    )
    .unwrap();
    let b = |f: &engine::ModelFit, t: &str| {
        f.coefficients
            .iter()
            .find(|c| c.term == t)
            .unwrap()
            .estimate
    };
    let doc: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference/ols_fe.json"),
        )
        .unwrap(),
    )
    .unwrap();
    let case = doc["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == "panel_fe_unit_double_demeaned_classical")
        .unwrap();
    let want = case["expected"]["coef"]["within(x,unit)*within(z,unit)"]
        .as_f64()
        .unwrap();
    let got = b(&within, "within(x,unit)*within(z,unit)");
    assert!((got - want).abs() < 1e-8 * want.abs(), "{got} {want}");
    let mixed = b(&plain, "x*z");
    assert!(
        mixed.is_finite() && (mixed - got).abs() > 1e-6,
        "the two forms differ: {mixed} vs {got}"
    );
}
