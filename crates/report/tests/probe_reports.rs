//! The probing blocks of the three reports on hand-built results, including
//! the cases that only words can carry: no Johnson–Neyman roots, an unbounded
//! Fieller set, a failed U-shape condition, moderator statistics over groups.

use std::path::PathBuf;

use engine::probe::{
    EffectResult, EndSlope, Estimate, FiellerShape, Output, ProbeAt, ProbeResult, RegionsResult,
    Shape, Significant, StatsOver, TurningAt, TurningResult, UTest,
};
use expect_test::expect;
use report::Results;

fn estimate(e: f64, se: f64, boot: Option<(f64, f64)>) -> Estimate {
    Estimate {
        estimate: e,
        std_error: se,
        df: 149.0,
        t: e / se,
        p: 0.0123,
        ci_low: e - 1.976 * se,
        ci_high: e + 1.976 * se,
        boot_ci: boot,
    }
}

fn outputs() -> Vec<Output> {
    let probe = ProbeResult {
        model: "full".into(),
        focal: "remote_w".into(),
        moderator: "meetings".into(),
        at: vec![
            ProbeAt {
                label: "-1sd".into(),
                value: 2.5,
                effect: estimate(0.42, 0.11, Some((0.2, 0.65))),
            },
            ProbeAt {
                label: "+1sd".into(),
                value: 7.5,
                effect: estimate(-0.05, 0.12, Some((-0.3, 0.2))),
            },
        ],
        stats_over: (StatsOver::Groups, Some("team".into())),
        held_at: vec![("tenure".into(), 5.25)],
        level: 0.95,
        bootstrap: Some((2000, 7)),
        notes: vec![
            "`meetings` is constant within `team`, so its mean, SD and percentiles are over the 150 groups".into(),
            "cluster bootstrap: 2000 draws of the 150 groups of `team` (seed 7), percentile intervals".into(),
        ],
    };
    let regions = RegionsResult {
        model: "full".into(),
        focal: "remote_w".into(),
        moderator: "meetings".into(),
        alpha: 0.05,
        critical: 1.976,
        df: 149.0,
        bounds: vec![],
        significant: Significant::Nowhere,
        data_min: 0.5,
        data_max: 9.25,
        boot_significant: None,
        bootstrap: None,
        notes: vec!["critical t 1.9760 at 149 df".into()],
    };
    let slope = |x: f64, s: f64, t: f64| EndSlope {
        x,
        slope: s,
        std_error: s / t,
        t,
    };
    let turning = TurningResult {
        model: "shape".into(),
        variable: "suppliers".into(),
        moderator: None,
        at: vec![TurningAt {
            label: String::new(),
            value: None,
            point: 36.5,
            std_error: 2.5,
            ci_delta: (31.6, 41.4),
            ci_fieller: None,
            fieller_shape: FiellerShape::Unbounded,
            fieller_roots: vec![],
            // t = 1.2 on 100 df: one-sided p = .116 (scipy.stats.t.sf), not significant.
            slope_low: slope(1.0, 0.3, 1.2),
            // t = −5 on 100 df: one-sided p = 1.2e-6 (scipy.stats.t.sf).
            slope_high: slope(39.0, -0.2, -5.0),
            u_test: UTest {
                shape: Shape::InvertedU,
                t: 1.2,
                p: 0.1165,
                df: 100.0,
            },
            inside_data: true,
            ci_inside_data: false,
            boot_ci: None,
        }],
        data_min: 1.0,
        data_max: 39.0,
        level: 0.95,
        bootstrap: None,
        notes: vec![],
    };
    let effect = EffectResult {
        model: "shape".into(),
        variable: "suppliers".into(),
        effect: estimate(0.0345, 0.0052, None),
        level: 0.95,
        notes: vec![],
    };
    vec![
        Output::Probe(probe),
        Output::Regions(regions),
        Output::Turning(turning),
        Output::Effect(effect),
        Output::Plot(engine::probe::PlotResult {
            model: "full".into(),
            focal: "remote_w".into(),
            moderator: Some("meetings".into()),
            x_title: "meetings".into(),
            y_title: "effect".into(),
            kind: engine::probe::PlotKind::Lines { series: vec![] },
            rug: vec![],
            level: 0.95,
            path: PathBuf::from("remote_by_meetings.svg"),
            notes: vec![],
        }),
    ]
}

fn results(outputs: &[Output]) -> Results<'_> {
    Results {
        fits: &[],
        comparisons: &[],
        probing: outputs,
        diagnostics: &[],
    }
}

#[test]
fn terminal_blocks_say_every_case_in_words() {
    let o = outputs();
    expect![[r#"
        probe full: effect of remote_w at values of meetings

          meetings   value   effect      SE   df      t     p  95% CI             bootstrap 95% CI
          -1sd      2.5000   0.4200  0.1100  149   3.82  .012  [0.2026, 0.6374]   [0.2000, 0.6500]
          +1sd      7.5000  -0.0500  0.1200  149  -0.42  .012  [-0.2871, 0.1871]  [-0.3000, 0.2000]

          Note: other variables held at their sample means: tenure = 5.2500.
          Note: `meetings` is constant within `team`, so its mean, SD and percentiles are over the 150 groups.
          Note: cluster bootstrap: 2000 draws of the 150 groups of `team` (seed 7), percentile intervals.

        regions full: where the effect of remote_w is significant across meetings (alpha 0.05)

          Johnson–Neyman bounds: meetings = none (the quadratic has no real roots)
          The effect of remote_w is not significant at any value of meetings.
          Critical t = 1.9760 on 149 df.
          Data: observed meetings from 0.5 to 9.25.

        turning shape: turning point of suppliers

          turning point 36.5000, SE 2.5000
          95% CI, delta method: [31.6000, 41.4000]
          95% CI, Fieller: not bounded: every value is in the set, because the curvature is not significant at this level
          slope at the low end (suppliers = 1): 0.3000, SE 0.2500, t = 1.20
          slope at the high end (suppliers = 39): -0.2000, SE 0.0400, t = -5.00
          U test for an inverted U shape: t = 1.20, one-sided p = .117 (100 df)
          Conditions of an inverted U shape:
            [fail] slope at the low end (suppliers = 1) is positive and significant: 0.3000, t = 1.20, one-sided p = .116
            [pass] slope at the high end (suppliers = 39) is negative and significant: -0.2000, t = -5.00, one-sided p < .001
            [fail] turning point 36.5000 and its interval [31.6000, 41.4000] lie inside the data (1 to 39)

          Note: observed suppliers from 1 to 39.

        effect shape: average marginal effect of suppliers

          estimate 0.03450, SE 0.00520, t = 6.63 on 149 df, p = .012, 95% CI [0.02422, 0.04478]

          Note: the derivative of the fitted outcome with respect to suppliers averaged over the estimation sample; delta-method SE.

        plot full: figure of remote_w across meetings written to remote_by_meetings.svg

    "#]].assert_eq(&report::text(&results(&o)));
}

#[test]
fn markdown_tables_carry_the_same_numbers() {
    let o = outputs();
    expect![[r#"
        **Effect of `remote_w` at values of `meetings` (model full).**

        | `meetings` | Value | Effect | SE | *df* | *t* | *p* | 95% CI | Bootstrap 95% CI |
        |:--|--:|--:|--:|--:|--:|--:|:--|:--|
        | -1sd | 2.5000 | 0.4200 | 0.1100 | 149 | 3.82 | .012 | [0.2026, 0.6374] | [0.2000, 0.6500] |
        | +1sd | 7.5000 | -0.0500 | 0.1200 | 149 | -0.42 | .012 | [-0.2871, 0.1871] | [-0.3000, 0.2000] |

        *Note.* Other variables held at their sample means: tenure = 5.2500. `meetings` is constant within `team`, so its mean, SD and percentiles are over the 150 groups. Cluster bootstrap: 2000 draws of the 150 groups of `team` (seed 7), percentile intervals.

        **Region of significance of `remote_w` across `meetings` (model full, α = 0.05).**

        | Bound | Critical *t* | *df* | Observed range |
        |--:|--:|--:|:--|
        | none | 1.9760 | 149 | 0.5 to 9.25 |

        *Note.* The effect of remote_w is not significant at any value of meetings. Observed meetings from 0.5 to 9.25.

        **Turning point of `suppliers` (model shape).**

        | Turning point | SE | 95% CI (delta) | 95% CI (Fieller) | Slope at low end (*t*) | Slope at high end (*t*) | U test *t* | *p* (one-sided) | Conditions met |
        |--:|--:|:--|:--|--:|--:|--:|--:|:--|
        | 36.5000 | 2.5000 | [31.6000, 41.4000] | unbounded (all values) | 0.3000 (1.20) | -0.2000 (-5.00) | 1.20 | .117 | 1 of 3 |

        *Note.* U test of an inverted U shape against a monotone or opposite shape: the smaller of the two end-slope t values, one-sided, on 100 df; the conditions are a slope of the required sign significant at each end of the data and the turning point with its interval inside the data. Observed suppliers from 1 to 39; slopes are taken at these ends.

        Average marginal effect of `suppliers` (model shape): 0.03450, SE = 0.00520, *t*(149) = 6.63, *p* = .012, 95% CI [0.02422, 0.04478].

        *Note.* The derivative of the fitted outcome with respect to `suppliers` averaged over the estimation sample, with a delta-method SE.

        ![Effect of remote_w across meetings of model full](remote_by_meetings.svg)

    "#]].assert_eq(&report::markdown(&results(&o)));
}

#[test]
fn json_uses_the_designed_keys_with_nulls_where_nothing_applies() {
    let o = outputs();
    let doc = report::document(&results(&o));
    let p = &doc["probes"][0];
    assert_eq!(p["model"], "full");
    assert_eq!(p["at"][0]["label"], "-1sd");
    assert_eq!(p["at"][0]["effect"], 0.42);
    assert_eq!(p["at"][0]["boot_ci"], serde_json::json!([0.2, 0.65]));
    assert_eq!(p["stats_over"], "groups");
    assert_eq!(p["stats_group"], "team");
    let r = &doc["regions"][0];
    assert_eq!(r["significant"], "nowhere");
    assert_eq!(r["bounds"], serde_json::json!([]));
    assert_eq!(r["critical"], 1.976);
    let t = &doc["turning"][0];
    assert_eq!(t["variable"], "suppliers");
    assert!(t["at"][0]["value"].is_null());
    assert!(t["at"][0]["ci_fieller"].is_null(), "unbounded Fieller set");
    assert_eq!(t["at"][0]["fieller_shape"], "unbounded");
    assert_eq!(t["at"][0]["ci_delta"], serde_json::json!([31.6, 41.4]));
    assert_eq!(t["at"][0]["slope_low"]["t"], 1.2);
    assert_eq!(t["at"][0]["u_test"]["p"], 0.1165);
    assert_eq!(t["at"][0]["inside_data"], true);
    let e = &doc["effects"][0];
    assert_eq!(e["estimate"], 0.0345);
    assert!(e["boot_ci"].is_null());
    assert_eq!(doc["figures"][0]["path"], "remote_by_meetings.svg");
}
