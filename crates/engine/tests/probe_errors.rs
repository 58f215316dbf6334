//! Bad input to the probing statements gets a clear error, never a number or
//! a panic: from the checker where the statement itself is wrong, from the
//! probing layer where only the fitted model shows it.

use std::path::{Path, PathBuf};

use check::{check, codes, Checked, FileLoader, RequestKind};
use engine::probe::{run, Output, ProbeOptions};
use engine::{fit, FitOptions, ModelFit};

fn reference_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference")
}

fn checked(text: &str) -> Checked {
    let parsed = syntax::parse(text);
    check(text, &parsed, &reference_dir(), &FileLoader)
}

fn fit_first(c: &Checked) -> ModelFit {
    let frame = &c.data.as_ref().unwrap().frame;
    fit(
        &c.models[0],
        frame,
        c.panel_index.as_deref(),
        &FitOptions::default(),
    )
    .unwrap()
}

/// Run request `i` of a file the checker accepts.
fn probe(text: &str, edit: impl Fn(&mut check::Request)) -> Result<Output, String> {
    let c = checked(text);
    assert!(!c.has_errors(), "{text}\n{:?}", c.diagnostics);
    let f = fit_first(&c);
    let mut r = c.requests[0].clone();
    edit(&mut r);
    let frame = &c.data.as_ref().unwrap().frame;
    run(
        &r,
        &c.models[r.model],
        &f,
        frame,
        c.panel_index.as_deref(),
        &ProbeOptions::default(),
    )
    .map_err(|e| e.message)
}

fn error_codes(text: &str) -> Vec<&'static str> {
    let c = checked(text);
    let mut out = Vec::new();
    for d in &c.diagnostics {
        for code in [
            codes::NOT_IN_MODEL,
            codes::NO_SQUARE,
            codes::CATEGORICAL_MODERATOR,
            codes::BAD_VALUE,
        ] {
            if d.code == code {
                out.push(code);
            }
        }
    }
    out
}

const OLS: &str = "source \"probe_ols.csv\"\nmodel m {\n  y = x + w + x * w + z\n}\n";
const CURVE: &str =
    "source \"probe_curve.csv\"\nmodel m {\n  yq = x + x^2\n  errors cluster g\n}\n";

#[test]
fn a_focal_variable_not_in_the_model_is_refused() {
    let text = format!("{OLS}probe m: q across w at mean\n");
    assert_eq!(error_codes(&text), vec![codes::NOT_IN_MODEL]);
    // Past the checker (a request edited by hand), the probing layer refuses too.
    let e = probe(&format!("{OLS}probe m: x across w at mean\n"), |r| {
        r.focal = "q".into()
    })
    .unwrap_err();
    assert_eq!(e, "`q` is not in a numeric term of the model");
}

#[test]
fn a_categorical_moderator_is_refused_by_the_checker() {
    let text = "source \"probe_ols.csv\"\nmodel m {\n  y = x + g + x * g\n}\nprobe m: x across g at mean\n";
    assert_eq!(error_codes(text), vec![codes::CATEGORICAL_MODERATOR]);
}

#[test]
fn a_focal_variable_inside_a_categorical_term_is_refused() {
    let text = "source \"probe_ols.csv\"\nmodel m {\n  y = x + g + x * g\n}\neffect m: x\n";
    let e = probe(text, |_| {}).unwrap_err();
    assert_eq!(
        e,
        "`x` enters the term `x*g` together with a categorical factor, so its effect differs by level; probe it within each level instead"
    );
}

#[test]
fn turning_without_a_square_is_refused() {
    let text = format!("{OLS}turning m: x\n");
    assert_eq!(error_codes(&text), vec![codes::NO_SQUARE]);
    // Past the checker: the slope of x does not change with x, so no turning point.
    let e = probe(&format!("{OLS}effect m: x\n"), |r| {
        r.kind = RequestKind::Turning
    })
    .unwrap_err();
    assert!(
        e.starts_with("the squared term of `x` is zero within rounding"),
        "{e}"
    );
}

#[test]
fn a_square_that_is_rounding_noise_has_no_turning_point() {
    // ylin = 1 + 2x exactly (tests/reference/probe.py), so the fitted b2 is rounding noise.
    let text = "source \"probe_curve.csv\"\nmodel m {\n  ylin = x + x^2\n}\nturning m: x\n";
    let c = checked(text);
    let f = fit_first(&c);
    let b2 = f.coefficients[2].estimate;
    assert!(b2.abs() < 1e-9, "b2 = {b2}");
    let e = probe(text, |_| {}).unwrap_err();
    assert!(
        e.starts_with("the squared term of `x` is zero within rounding"),
        "{e}"
    );
    assert!(e.ends_with("so there is no turning point"), "{e}");
}

#[test]
fn zero_bootstrap_draws_are_refused_by_the_checker_and_the_engine() {
    let text = format!("{CURVE}turning m: x bootstrap 0 seed 3\n");
    assert_eq!(error_codes(&text), vec![codes::BAD_VALUE]);
    let e = probe(&format!("{CURVE}turning m: x\n"), |r| {
        r.bootstrap = Some((0, 3))
    })
    .unwrap_err();
    assert_eq!(
        e,
        "`bootstrap 0` asks for no draws; give at least 1 (2000 is common practice)"
    );
}

#[test]
fn a_model_that_failed_to_fit_has_nothing_to_probe() {
    // The fit itself is the error; `run` needs a fit, so the statement gets
    // that error. A fit of another model is refused by name.
    let text = "source \"probe_ols.csv\"\nlet x2 = 2 * x\nmodel bad {\n  y = x + x2 + w + x * w\n}\nmodel good {\n  y = x + w + x * w\n}\nprobe bad: x across w at mean\n";
    let c = checked(text);
    assert!(!c.has_errors(), "{:?}", c.diagnostics);
    let frame = &c.data.as_ref().unwrap().frame;
    let e = fit(&c.models[0], frame, None, &FitOptions::default()).unwrap_err();
    assert!(e.message.starts_with("the terms are collinear"), "{e}");
    let good = fit(&c.models[1], frame, None, &FitOptions::default()).unwrap();
    let e = run(
        &c.requests[0],
        &c.models[0],
        &good,
        frame,
        None,
        &ProbeOptions::default(),
    )
    .unwrap_err();
    assert_eq!(
        e.message,
        "the estimates given are those of model `good`, not of `bad`; probe a model with its own fit"
    );
}

#[test]
fn regions_on_a_moderator_entering_through_a_log_are_refused() {
    let text = "source \"probe_ols.csv\"\nmodel m {\n  y = x + log(s) + x * log(s)\n}\nregions m: x across s\n";
    let e = probe(text, |_| {}).unwrap_err();
    assert!(
        e.starts_with("the effect of `x` is not a straight line in `s`"),
        "{e}"
    );
}

#[test]
fn turning_on_a_curve_that_is_not_quadratic_is_refused() {
    let text = "source \"probe_curve.csv\"\nmodel m {\n  yq = x + x^2 + x^3\n}\nturning m: x\n";
    let e = probe(text, |_| {}).unwrap_err();
    assert!(
        e.starts_with("the slope of `x` is not a straight line in `x`"),
        "{e}"
    );
}

#[test]
fn a_bootstrap_without_groups_to_resample_is_refused() {
    let text = "source \"probe_curve.csv\"\nmodel m {\n  yq = x + x^2\n}\nturning m: x bootstrap 100 seed 1\n";
    let e = probe(text, |_| {}).unwrap_err();
    assert!(
        e.starts_with("a cluster bootstrap resamples groups, and model `m` has none"),
        "{e}"
    );
}

#[test]
fn a_confidence_level_outside_zero_and_one_is_refused() {
    let c = checked(&format!("{OLS}effect m: x\n"));
    let f = fit_first(&c);
    let frame = &c.data.as_ref().unwrap().frame;
    let options = ProbeOptions {
        level: 1.5,
        ..ProbeOptions::default()
    };
    let e = run(&c.requests[0], &c.models[0], &f, frame, None, &options).unwrap_err();
    assert_eq!(e.message, "the confidence level 1.5 is not between 0 and 1");
}
