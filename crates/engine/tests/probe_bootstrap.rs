//! The cluster bootstrap: reproducible from its seed, independent of the
//! number of threads, and on simulated data close to the delta-method interval
//! and covering the true value.
//!
//! Data: tests/reference/probe_panel.csv (tests/reference/probe.py): 40 units
//! over 8 periods, unit effects, y = a_u + 0.8x − 0.06x² + 0.2w + 0.3xw + e,
//! e ~ N(0, 1); the model sweeps out unit effects and clusters by unit.
//! Failed draws: the same panel with an indicator present in few units, so
//! that a known share of resamples (binomial, from the draw probabilities)
//! cannot estimate it.

mod written;

use std::path::{Path, PathBuf};

use check::{check, Checked, FileLoader};
use engine::probe::{run, time_bootstrap, Output, ProbeOptions, ProbeResult};
use engine::{fit, FitOptions, ModelFit};
use written::fit_written;

const PANEL: &str = "source \"probe_panel.csv\"\nmodel m {\n  y = x + x^2 + w + x * w\n  fixed unit\n  errors cluster unit\n}\n";

fn reference_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/reference")
}

fn setup(statement: &str) -> (Checked, ModelFit) {
    let text = format!("{PANEL}{statement}\n");
    let parsed = syntax::parse(&text);
    let c = check(&text, &parsed, &reference_dir(), &FileLoader);
    assert!(!c.has_errors(), "{:?}", c.diagnostics);
    let frame = &c.data.as_ref().unwrap().frame;
    let f = fit(&c.models[0], frame, None, &FitOptions::default()).unwrap();
    (c, f)
}

fn probe_once(c: &Checked, f: &ModelFit) -> ProbeResult {
    let frame = &c.data.as_ref().unwrap().frame;
    match run(
        &c.requests[0],
        &c.models[0],
        f,
        frame,
        None,
        &ProbeOptions::default(),
    )
    .unwrap()
    {
        Output::Probe(p) => p,
        other => panic!("{other:?}"),
    }
}

#[test]
fn the_same_seed_gives_the_same_intervals_and_another_seed_does_not() {
    let (c, f) = setup("probe m: x across w at mean bootstrap 200 seed 7");
    let a = probe_once(&c, &f);
    let b = probe_once(&c, &f);
    assert!(a.at[0].effect.boot_ci.is_some());
    assert_eq!(a, b);
    let (c2, f2) = setup("probe m: x across w at mean bootstrap 200 seed 8");
    let other = probe_once(&c2, &f2);
    assert_ne!(a.at[0].effect.boot_ci, other.at[0].effect.boot_ci);
    assert_eq!(a.bootstrap, Some((200, 7)));
    assert!(
        a.notes
            .iter()
            .any(|n| n
                .starts_with("cluster bootstrap: 200 draws of the 40 groups of `unit` (seed 7)")),
        "{:?}",
        a.notes
    );
}

#[test]
fn one_and_two_threads_give_the_same_result() {
    let (c, f) = setup("turning m: x bootstrap 200 seed 11");
    let frame = &c.data.as_ref().unwrap().frame;
    let one = time_bootstrap(&c.requests[0], &c.models[0], &f, frame, None, 1).unwrap();
    let two = time_bootstrap(&c.requests[0], &c.models[0], &f, frame, None, 2).unwrap();
    assert_eq!(one.output, two.output);
    let Output::Turning(t) = &one.output else {
        panic!("not a turning point")
    };
    assert!(t.at[0].boot_ci.is_some());
}

#[test]
fn the_percentile_interval_is_near_the_delta_interval_and_covers_the_truth() {
    // 1000 draws. With 40 clusters the bootstrap SE and the CR1 SE differ by
    // sampling error of roughly 1/sqrt(2·40) ≈ 11%, and percentile endpoints by
    // Monte Carlo error of about 5% of an SE at 1000 draws; so each endpoint is
    // asked to lie within 0.4 delta-method SEs of the delta-method endpoint.
    let (c, f) = setup("probe m: x across w at mean, +1sd bootstrap 1000 seed 2026");
    let p = probe_once(&c, &f);
    let (xbar, _) = check::mean_sd(
        &f.design
            .rows
            .iter()
            .map(|&r| {
                c.data.as_ref().unwrap().frame.columns()[2]
                    .as_numeric()
                    .unwrap()
                    .values[r]
            })
            .collect::<Vec<_>>(),
    );
    for a in &p.at {
        let e = &a.effect;
        let (lo, hi) = e.boot_ci.unwrap();
        eprintln!(
            "{}: bootstrap ({lo}, {hi}), delta ({}, {}), SE {}",
            a.label, e.ci_low, e.ci_high, e.std_error
        );
        assert!(
            (lo - e.ci_low).abs() < 0.4 * e.std_error && (hi - e.ci_high).abs() < 0.4 * e.std_error,
            "{}: bootstrap ({lo}, {hi}) vs delta ({}, {}), SE {}",
            a.label,
            e.ci_low,
            e.ci_high,
            e.std_error
        );
        // True effect of x at (mean x, w): 0.8 − 0.12·x̄ + 0.3·w (the generator's parameters).
        let truth = 0.8 - 0.12 * xbar + 0.3 * a.value;
        assert!(
            lo < truth && truth < hi,
            "{}: truth {truth} outside ({lo}, {hi})",
            a.label
        );
    }
}

#[test]
fn bootstrap_regions_agree_with_the_johnson_neyman_bound_in_the_data() {
    let (c, f) = setup("regions m: x across w bootstrap 1000 seed 5");
    let frame = &c.data.as_ref().unwrap().frame;
    let Output::Regions(r) = run(
        &c.requests[0],
        &c.models[0],
        &f,
        frame,
        None,
        &ProbeOptions::default(),
    )
    .unwrap() else {
        panic!("not regions")
    };
    let stretches = r.boot_significant.clone().unwrap();
    assert!(!stretches.is_empty(), "{r:?}");
    // Each bound inside the data has a bootstrap stretch ending or starting near it:
    // within a tenth of the observed range of w (same sampling argument as above,
    // translated through the slope of the effect in w).
    let span = r.data_max - r.data_min;
    eprintln!(
        "bounds {:?}, range [{}, {}], bootstrap {stretches:?}",
        r.bounds, r.data_min, r.data_max
    );
    assert!(
        r.bounds.iter().any(|b| *b > r.data_min && *b < r.data_max),
        "{r:?}"
    );
    for b in r
        .bounds
        .iter()
        .filter(|b| **b > r.data_min && **b < r.data_max)
    {
        let near = stretches
            .iter()
            .any(|(s, e)| (s - b).abs() < 0.1 * span || (e - b).abs() < 0.1 * span);
        assert!(near, "bound {b} vs bootstrap stretches {stretches:?}");
    }
}

#[test]
fn the_progress_callback_is_called_once_per_draw() {
    use std::sync::atomic::{AtomicUsize, Ordering};
    let (c, f) = setup("turning m: x bootstrap 50 seed 1");
    let frame = &c.data.as_ref().unwrap().frame;
    let count = AtomicUsize::new(0);
    let tick = || {
        count.fetch_add(1, Ordering::Relaxed);
    };
    let options = ProbeOptions {
        on_draw: Some(&tick),
        ..ProbeOptions::default()
    };
    run(&c.requests[0], &c.models[0], &f, frame, None, &options).unwrap();
    assert_eq!(count.load(Ordering::Relaxed), 50);
}

/// The panel with an indicator `d` that is 1 in the first period of the named
/// units and 0 elsewhere: a resample that draws none of them has no `d` to
/// estimate, so that draw cannot be fitted.
fn with_rare_indicator(units: &[&str], statement: &str) -> (Checked, ModelFit) {
    let csv = std::fs::read_to_string(reference_dir().join("probe_panel.csv")).unwrap();
    let mut lines = csv.lines();
    let mut out = format!("{},d\n", lines.next().unwrap());
    for line in lines {
        let unit = line.split(',').next().unwrap();
        let first = line.split(',').nth(1) == Some("2000");
        let d = u8::from(first && units.contains(&unit));
        out.push_str(&format!("{line},{d}\n"));
    }
    let text = format!(
        "source \"rare.csv\"\nmodel m {{\n  y = x + x^2 + w + x * w + d\n  fixed unit\n  errors cluster unit\n}}\n{statement}\n"
    );
    fit_written("rare.csv", &out, &text)
}

#[test]
fn more_than_one_draw_in_twenty_failing_gives_no_interval() {
    // `d` lives in one unit of 40: a draw of 40 units misses it with
    // probability (39/40)^40 = 0.36, far above the 5% allowed.
    let (c, f) = with_rare_indicator(&["U01"], "probe m: x across w at mean bootstrap 200 seed 3");
    let frame = &c.data.as_ref().unwrap().frame;
    let e = run(
        &c.requests[0],
        &c.models[0],
        &f,
        frame,
        None,
        &ProbeOptions::default(),
    )
    .unwrap_err();
    assert!(
        e.message
            .contains("of 200 bootstrap draws could not be fitted")
            && e.message.contains("above 5%"),
        "{}",
        e.message
    );
    let failed: usize = e.message.split(' ').next().unwrap().parse().unwrap();
    // 200 draws at p = 0.36: far from both 10 (5%) and 200.
    assert!((40..=110).contains(&failed), "{failed} failed draws");
}

#[test]
fn a_few_failed_draws_are_left_out_and_counted() {
    // `d` in 4 units of 40: a draw misses all four with probability
    // (36/40)^40 = 0.015, so about 6 of 400 draws fail, under the 5% limit.
    let units = ["U01", "U11", "U21", "U31"];
    let (c, f) = with_rare_indicator(&units, "probe m: x across w at mean bootstrap 400 seed 3");
    let p = probe_once(&c, &f);
    assert!(p.at[0].effect.boot_ci.is_some());
    let note = p
        .notes
        .iter()
        .find(|n| n.contains("bootstrap draws could not be fitted and were left out"))
        .unwrap_or_else(|| panic!("no note of failed draws in {:?}", p.notes));
    let failed: usize = note.split(' ').next().unwrap().parse().unwrap();
    assert!((1..=20).contains(&failed), "{note}");
    assert!(note.contains("of 400 bootstrap draws"), "{note}");
}
