//! Manuscript tables of probing results: effects at moderator values, regions
//! of significance, turning points and average marginal effects, each with a
//! note naming N, the groups, the standard errors and the df rule.

use engine::probe::{EffectResult, PlotResult, ProbeResult, RegionsResult, TurningResult};

use crate::markdown::capitalize;
use crate::numbers::{apa_p, fixed, number, plain, row_decimals, stat};
use crate::probe_words::{
    bounds_vs_data, fieller_cell, model_note, other_notes, percent, probe_notes, region_sentence,
    shape_words, u_conditions,
};
use crate::text::p_phrase;
use crate::{Output, Results};

pub fn block(results: &Results<'_>, output: &Output) -> String {
    match output {
        Output::Probe(p) => probe(results, p),
        Output::Regions(r) => regions(results, r),
        Output::Turning(t) => turning(results, t),
        Output::Effect(e) => effect(results, e),
        Output::Plot(p) => plot(p),
    }
}

fn note(parts: Vec<String>) -> String {
    let s: Vec<String> = parts
        .iter()
        .map(|p| format!("{}.", capitalize(p)))
        .collect();
    format!("\n*Note.* {}\n\n", s.join(" "))
}

fn probe(results: &Results<'_>, p: &ProbeResult) -> String {
    let level = percent(p.level);
    let boot = p.at.iter().any(|a| a.effect.boot_ci.is_some());
    let mut out = format!(
        "**Effect of `{}` at values of `{}` (model {}).**\n\n",
        p.focal, p.moderator, p.model
    );
    out.push_str(&format!(
        "| `{}` | Value | Effect | SE | *df* | *t* | *p* | {level} CI |{}\n",
        p.moderator,
        if boot {
            format!(" Bootstrap {level} CI |")
        } else {
            String::new()
        }
    ));
    out.push_str("|:--|--:|--:|--:|--:|--:|--:|:--|");
    out.push_str(if boot { ":--|\n" } else { "\n" });
    for a in &p.at {
        let e = &a.effect;
        let d = row_decimals(e.std_error);
        out.push_str(&format!(
            "| {} | {} | {} | {} | {} | {} | {} | [{}, {}] |",
            a.label,
            number(a.value),
            fixed(e.estimate, d),
            fixed(e.std_error, d),
            number(e.df),
            stat(e.t),
            apa_p(e.p),
            fixed(e.ci_low, d),
            fixed(e.ci_high, d)
        ));
        if boot {
            out.push_str(&match e.boot_ci {
                Some((lo, hi)) => format!(" [{}, {}] |", fixed(lo, d), fixed(hi, d)),
                None => " – |".into(),
            });
        }
        out.push('\n');
    }
    out.push_str(&note(probe_notes(results.fit_named(&p.model), p)));
    out
}

fn regions(results: &Results<'_>, r: &RegionsResult) -> String {
    let mut out = format!(
        "**Region of significance of `{}` across `{}` (model {}, α = {}).**\n\n",
        r.focal, r.moderator, r.model, r.alpha
    );
    out.push_str("| Bound | Critical *t* | *df* | Observed range |\n|--:|--:|--:|:--|\n");
    let range = format!("{} to {}", plain(r.data_min), plain(r.data_max));
    if r.bounds.is_empty() {
        out.push_str(&format!(
            "| none | {} | {} | {range} |\n",
            fixed(r.critical, 4),
            number(r.df)
        ));
    }
    for b in &r.bounds {
        out.push_str(&format!(
            "| {} | {} | {} | {range} |\n",
            number(*b),
            fixed(r.critical, 4),
            number(r.df)
        ));
    }
    let mut n = vec![
        region_sentence(r).trim_end_matches('.').to_string(),
        bounds_vs_data(r),
    ];
    n.extend(model_note(results.fit_named(&r.model)));
    n.extend(crate::probe_words::boot_region_words(r));
    n.extend(other_notes(&r.notes));
    out.push_str(&note(n));
    out
}

fn turning(results: &Results<'_>, r: &TurningResult) -> String {
    let level = percent(r.level);
    let mut out = format!(
        "**Turning point of `{}`{} (model {}).**\n\n",
        r.variable,
        r.moderator
            .as_ref()
            .map_or(String::new(), |m| format!(" at values of `{m}`")),
        r.model
    );
    let first = if r.moderator.is_some() {
        format!("`{}` | ", r.moderator.as_deref().unwrap_or(""))
    } else {
        String::new()
    };
    out.push_str(&format!(
        "| {first}Turning point | SE | {level} CI (delta) | {level} CI (Fieller) | Slope at low end (*t*) | Slope at high end (*t*) | U test *t* | *p* (one-sided) | Conditions met |\n"
    ));
    out.push_str(if r.moderator.is_some() { "|:--" } else { "" });
    out.push_str("|--:|--:|:--|:--|--:|--:|--:|--:|:--|\n");
    for t in &r.at {
        let d = row_decimals(t.std_error);
        let f = |x: f64| fixed(x, d);
        let met = u_conditions(t, r).iter().filter(|c| c.pass).count();
        let cell = if r.moderator.is_some() {
            format!("{} | ", format_at(t))
        } else {
            String::new()
        };
        out.push_str(&format!(
            "| {cell}{} | {} | [{}, {}] | {} | {} ({}) | {} ({}) | {} | {} | {met} of 3 |\n",
            f(t.point),
            f(t.std_error),
            f(t.ci_delta.0),
            f(t.ci_delta.1),
            fieller_cell(t, f),
            number(t.slope_low.slope),
            stat(t.slope_low.t),
            number(t.slope_high.slope),
            stat(t.slope_high.t),
            stat(t.u_test.t),
            apa_p(t.u_test.p),
        ));
    }
    let mut n: Vec<String> = Vec::new();
    if let Some(t) = r.at.first() {
        n.push(format!(
            "U test of an {} against a monotone or opposite shape: the smaller of the two end-slope t values, one-sided, on {} df; the conditions are a slope of the required sign significant at each end of the data and the turning point with its interval inside the data",
            shape_words(t.u_test.shape),
            number(t.u_test.df)
        ));
    }
    n.push(format!(
        "observed {} from {} to {}; slopes are taken at these ends",
        r.variable,
        number(r.data_min),
        number(r.data_max)
    ));
    n.extend(model_note(results.fit_named(&r.model)));
    n.extend(other_notes(&r.notes));
    out.push_str(&note(n));
    out
}

/// "p10 (0.1200)".
fn format_at(t: &engine::probe::TurningAt) -> String {
    match t.value {
        Some(v) => format!("{} ({})", t.label, number(v)),
        None => t.label.clone(),
    }
}

fn effect(results: &Results<'_>, e: &EffectResult) -> String {
    let x = &e.effect;
    let d = row_decimals(x.std_error);
    let level = percent(e.level);
    let mut out = format!(
        "Average marginal effect of `{}` (model {}): {}, SE = {}, *t*({}) = {}, *p* {}, {level} CI [{}, {}].\n",
        e.variable,
        e.model,
        fixed(x.estimate, d),
        fixed(x.std_error, d),
        number(x.df),
        stat(x.t),
        p_phrase(x.p),
        fixed(x.ci_low, d),
        fixed(x.ci_high, d)
    );
    let mut n = vec![format!(
        "the derivative of the fitted outcome with respect to `{}` averaged over the estimation sample, with a delta-method SE",
        e.variable
    )];
    n.extend(model_note(results.fit_named(&e.model)));
    n.extend(e.notes.iter().cloned());
    out.push_str(&note(n));
    out
}

fn plot(p: &PlotResult) -> String {
    format!(
        "![{} of model {}]({})\n\n",
        match &p.moderator {
            Some(m) => format!("Effect of {} across {m}", p.focal),
            None => format!("Fitted curve of {}", p.focal),
        },
        p.model,
        p.path.display()
    )
}
