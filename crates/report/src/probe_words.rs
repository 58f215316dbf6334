//! Sentences about probing results shared by the terminal and manuscript
//! reports, so both say the same thing in the same words.

use engine::probe::{
    FiellerShape, ProbeResult, RegionsResult, Shape, Significant, StatsOver, TurningAt,
    TurningResult,
};
use engine::ModelFit;
use statrs::distribution::{ContinuousCDF, StudentsT};

use crate::numbers::{number, plain, stat};
use crate::{errors_note, groups_words};

/// "95%" from a level of 0.95.
pub fn percent(level: f64) -> String {
    let p = level * 100.0;
    if (p - p.round()).abs() < 1e-9 {
        format!("{p:.0}%")
    } else {
        format!("{p}%")
    }
}

/// "N = 4,992 (firm 400, year 17); clustered standard errors …; t tests … on 399 df".
/// Without the fit (it failed or is unknown) only what the result itself knows.
pub fn model_note(fit: Option<&ModelFit>) -> Option<String> {
    let fit = fit?;
    let groups = groups_words(fit);
    let mut s = format!("N = {}", check::count(fit.n_obs));
    if !groups.is_empty() {
        s.push_str(&format!(" ({groups})"));
    }
    s.push_str(&format!("; {}", errors_note(fit)));
    Some(s)
}

/// The notes under a table of effects at moderator values, in the order both
/// reports give them: the model, the moderator statistics, the variables held
/// fixed, then the engine's own notes.
pub fn probe_notes(fit: Option<&ModelFit>, p: &ProbeResult) -> Vec<String> {
    let mut n: Vec<String> = Vec::new();
    n.extend(model_note(fit));
    n.extend(stats_over_note(p));
    n.extend(held_note(&p.held_at));
    n.extend(other_notes(&p.notes));
    n
}

/// Over what the moderator values were taken, in words, unless the engine's
/// notes already say it (they also give the count of rows or groups).
pub fn stats_over_note(probe: &ProbeResult) -> Option<String> {
    if probe.notes.iter().any(|n| n.contains("percentiles")) {
        return None;
    }
    Some(match &probe.stats_over {
        (StatsOver::Rows, _) => format!(
            "mean, SD and percentiles of {} taken over the rows of the estimation sample",
            probe.moderator
        ),
        (StatsOver::Groups, g) => format!(
            "mean, SD and percentiles of {} taken over {} (one value per group, since it does not vary within them)",
            probe.moderator,
            g.as_deref()
                .map_or("groups".to_string(), |g| format!("the groups of {g}"))
        ),
    })
}

/// "other variables held at log(staff) = 3.2104, tenure = 5.1" or None.
pub fn held_note(held: &[(String, f64)]) -> Option<String> {
    if held.is_empty() {
        return None;
    }
    let parts: Vec<String> = held
        .iter()
        .map(|(n, v)| format!("{n} = {}", number(*v)))
        .collect();
    Some(format!(
        "other variables held at their sample means: {}",
        parts.join(", ")
    ))
}

/// Where the effect is significant, in plain words.
pub fn region_sentence(r: &RegionsResult) -> String {
    let w = &r.moderator;
    let b = |i: usize| number(r.bounds[i]);
    match (r.significant, r.bounds.len()) {
        (Significant::Everywhere, _) => {
            format!("The effect of {} is significant at every value of {w}.", r.focal)
        }
        (Significant::Nowhere, _) => {
            format!("The effect of {} is not significant at any value of {w}.", r.focal)
        }
        (Significant::Inside, 2) => format!(
            "The effect of {} is significant for {w} between {} and {} (inside the bounds).",
            r.focal,
            b(0),
            b(1)
        ),
        (Significant::Outside, 2) => format!(
            "The effect of {} is significant for {w} below {} and above {} (outside the bounds).",
            r.focal,
            b(0),
            b(1)
        ),
        (Significant::Above, 1) => format!(
            "The effect of {} is significant for {w} above {} (one bound: the quadratic is linear here).",
            r.focal,
            b(0)
        ),
        (Significant::Below, 1) => format!(
            "The effect of {} is significant for {w} below {} (one bound: the quadratic is linear here).",
            r.focal,
            b(0)
        ),
        _ => format!(
            "The effect of {} has {} bound(s) of significance across {w}.",
            r.focal,
            r.bounds.len()
        ),
    }
}

/// Each bound against the observed range: "2.1340 inside the data; 11.0000 above the largest value".
pub fn bounds_vs_data(r: &RegionsResult) -> String {
    if r.bounds.is_empty() {
        return format!(
            "observed {} from {} to {}",
            r.moderator,
            plain(r.data_min),
            plain(r.data_max)
        );
    }
    let parts: Vec<String> = r
        .bounds
        .iter()
        .map(|&b| format!("{} {}", number(b), where_in_data(b, r.data_min, r.data_max)))
        .collect();
    format!(
        "observed {} from {} to {}; bound {}",
        r.moderator,
        plain(r.data_min),
        plain(r.data_max),
        parts.join(", bound ")
    )
}

pub fn where_in_data(x: f64, lo: f64, hi: f64) -> &'static str {
    if x < lo {
        "below the smallest observed value"
    } else if x > hi {
        "above the largest observed value"
    } else {
        "inside the data"
    }
}

/// The Fieller interval, or why there is none.
pub fn fieller_words(t: &TurningAt, fmt: impl Fn(f64) -> String) -> String {
    match (t.fieller_shape, t.ci_fieller) {
        (FiellerShape::Bounded, Some((lo, hi))) => format!("[{}, {}]", fmt(lo), fmt(hi)),
        (FiellerShape::TwoRays, _) if t.fieller_roots.len() == 2 => format!(
            "not bounded: the set is everything below {} together with everything above {}, because the curvature is not clearly different from zero",
            fmt(t.fieller_roots[0]),
            fmt(t.fieller_roots[1])
        ),
        (FiellerShape::TwoRays, _) => {
            "not bounded: the set is everything outside two points, because the curvature is not clearly different from zero".into()
        }
        _ => "not bounded: every value is in the set, because the curvature is not significant at this level".into(),
    }
}

/// Short form for table cells.
pub fn fieller_cell(t: &TurningAt, fmt: impl Fn(f64) -> String) -> String {
    match (t.fieller_shape, t.ci_fieller) {
        (FiellerShape::Bounded, Some((lo, hi))) => format!("[{}, {}]", fmt(lo), fmt(hi)),
        (FiellerShape::TwoRays, _) if t.fieller_roots.len() == 2 => format!(
            "(−∞, {}] ∪ [{}, ∞)",
            fmt(t.fieller_roots[0]),
            fmt(t.fieller_roots[1])
        ),
        (FiellerShape::TwoRays, _) => "unbounded (two rays)".into(),
        _ => "unbounded (all values)".into(),
    }
}

pub fn shape_words(s: Shape) -> &'static str {
    match s {
        Shape::U => "U shape",
        Shape::InvertedU => "inverted U shape",
    }
}

/// One-sided p of a t statistic in the direction the shape requires (upper tail).
/// statrs' Student t; NaN when the df is not positive.
fn upper_p(t: f64, df: f64) -> f64 {
    if df.is_nan() || df <= 0.0 || t.is_nan() {
        return f64::NAN;
    }
    match StudentsT::new(0.0, 1.0, df) {
        Ok(d) => d.sf(t),
        Err(_) => f64::NAN,
    }
}

/// One condition of the checklist: passed, and its sentence.
pub struct Condition {
    pub pass: bool,
    pub words: String,
}

/// The three conditions of a U (or inverted U) shape: the slope at each end of
/// the data has the sign the shape needs and is significant one-sided at
/// 1 − level, and the turning point with its delta interval lies in the data.
pub fn u_conditions(t: &TurningAt, r: &TurningResult) -> [Condition; 3] {
    let alpha = 1.0 - r.level;
    let df = t.u_test.df;
    // For a U the low end falls and the high end rises; for an inverted U the reverse.
    let (low_sign, low_word, high_word) = match t.u_test.shape {
        Shape::U => (-1.0, "negative", "positive"),
        Shape::InvertedU => (1.0, "positive", "negative"),
    };
    let end = |s: &engine::probe::EndSlope, sign: f64, word: &str, end: &str| {
        let p = upper_p(sign * s.t, df);
        let pass = sign * s.slope > 0.0 && p < alpha;
        Condition {
            pass,
            words: format!(
                "slope at the {end} end ({} = {}) is {word} and significant: {}, t = {}, one-sided p {}",
                r.variable,
                plain(s.x),
                number(s.slope),
                stat(s.t),
                crate::text::p_phrase(p)
            ),
        }
    };
    let inside = t.inside_data && t.ci_inside_data;
    [
        end(&t.slope_low, low_sign, low_word, "low"),
        end(&t.slope_high, -low_sign, high_word, "high"),
        Condition {
            pass: inside,
            words: format!(
                "turning point {} and its interval [{}, {}] lie inside the data ({} to {})",
                number(t.point),
                number(t.ci_delta.0),
                number(t.ci_delta.1),
                plain(r.data_min),
                plain(r.data_max)
            ),
        },
    ]
}

/// "digital = p10 (0.1200)" or "" without a moderator.
pub fn at_words(moderator: Option<&str>, t: &TurningAt) -> String {
    match (moderator, t.value) {
        (Some(m), Some(v)) => format!("{m} = {} ({})", t.label, number(v)),
        _ => String::new(),
    }
}

/// The engine's notes without the one the report already states from the
/// structured fields (the critical value of a region).
pub fn other_notes(notes: &[String]) -> impl Iterator<Item = String> + '_ {
    notes
        .iter()
        .filter(|n| !n.starts_with("critical t "))
        .cloned()
}

/// Where the bootstrap percentile interval of the effect excludes zero, when asked for.
pub fn boot_region_words(r: &RegionsResult) -> Option<String> {
    let spans = r.boot_significant.as_ref()?;
    if spans.is_empty() {
        return Some(format!(
            "by the bootstrap percentile intervals the effect is not significant anywhere in the observed range of {}",
            r.moderator
        ));
    }
    let parts: Vec<String> = spans
        .iter()
        .map(|(a, b)| format!("{} to {}", plain(*a), plain(*b)))
        .collect();
    Some(format!(
        "by the bootstrap percentile intervals the effect is significant for {} from {}",
        r.moderator,
        parts.join(" and from ")
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn probe(notes: Vec<String>) -> ProbeResult {
        ProbeResult {
            model: "m".into(),
            focal: "x".into(),
            moderator: "w".into(),
            at: vec![],
            stats_over: (StatsOver::Groups, Some("team".into())),
            held_at: vec![],
            level: 0.95,
            bootstrap: None,
            notes,
        }
    }

    #[test]
    fn the_moderator_statistics_are_named_once() {
        assert_eq!(
            stats_over_note(&probe(vec![])).as_deref(),
            Some("mean, SD and percentiles of w taken over the groups of team (one value per group, since it does not vary within them)")
        );
        let engine_says = "`w` is constant within `team`, so its mean, SD and percentiles are over the 150 groups";
        assert_eq!(stats_over_note(&probe(vec![engine_says.into()])), None);
        assert_eq!(percent(0.95), "95%");
        assert_eq!(percent(0.9), "90%");
    }
}
