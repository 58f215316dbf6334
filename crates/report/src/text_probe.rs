//! The terminal blocks of probing results: effects at moderator values,
//! regions of significance, turning points with the U-shape checklist, and
//! average marginal effects, each with its notes.

use engine::probe::{EffectResult, PlotResult, ProbeResult, RegionsResult, TurningResult};

use crate::numbers::{apa_p, fixed, number, row_decimals, stat};
use crate::probe_words::{
    at_words, bounds_vs_data, fieller_words, model_note, other_notes, percent, probe_notes,
    region_sentence, shape_words, u_conditions,
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

/// Column alignment of a terminal table.
#[derive(Clone, Copy, PartialEq)]
pub enum Align {
    Left,
    Right,
}

/// A table in the layout of the coefficient tables: two spaces in, columns
/// two spaces apart, numbers right-aligned, the last column left as it is.
pub fn table(head: &[&str], align: &[Align], rows: &[Vec<String>]) -> String {
    let mut widths: Vec<usize> = head.iter().map(|h| h.chars().count()).collect();
    for r in rows {
        for (w, c) in widths.iter_mut().zip(r) {
            *w = (*w).max(c.chars().count());
        }
    }
    let last = head.len() - 1;
    let line = |cells: &[String]| {
        let mut s = String::from("  ");
        for (i, c) in cells.iter().enumerate() {
            let w = widths[i];
            if i == last {
                s.push_str(c);
            } else if align[i] == Align::Left {
                s.push_str(&format!("{c:<w$}"));
            } else {
                s.push_str(&format!("{c:>w$}"));
            }
            s.push_str("  ");
        }
        s.trim_end().to_string() + "\n"
    };
    let mut out = line(&head.iter().map(|h| h.to_string()).collect::<Vec<_>>());
    for r in rows {
        out.push_str(&line(r));
    }
    out
}

/// Notes under a block, after a blank line when there are any.
fn notes(out: &mut String, lines: impl IntoIterator<Item = String>) {
    let mut first = true;
    for n in lines {
        if first {
            out.push('\n');
            first = false;
        }
        out.push_str(&format!("  Note: {n}.\n"));
    }
}

fn probe(results: &Results<'_>, p: &ProbeResult) -> String {
    let level = percent(p.level);
    let mut out = format!(
        "probe {}: effect of {} at values of {}\n\n",
        p.model, p.focal, p.moderator
    );
    let boot = p.at.iter().any(|a| a.effect.boot_ci.is_some());
    let ci_head = format!("{level} CI");
    let boot_head = format!("bootstrap {level} CI");
    let mut head = vec![
        p.moderator.as_str(),
        "value",
        "effect",
        "SE",
        "df",
        "t",
        "p",
        ci_head.as_str(),
    ];
    let mut align = vec![Align::Left];
    align.extend([Align::Right; 6]);
    align.push(Align::Left);
    if boot {
        head.push(boot_head.as_str());
        align.push(Align::Left);
    }
    let rows: Vec<Vec<String>> =
        p.at.iter()
            .map(|a| {
                let e = &a.effect;
                let d = row_decimals(e.std_error);
                let mut r = vec![
                    a.label.clone(),
                    number(a.value),
                    fixed(e.estimate, d),
                    fixed(e.std_error, d),
                    number(e.df),
                    stat(e.t),
                    apa_p(e.p),
                    format!("[{}, {}]", fixed(e.ci_low, d), fixed(e.ci_high, d)),
                ];
                if boot {
                    r.push(match e.boot_ci {
                        Some((lo, hi)) => format!("[{}, {}]", fixed(lo, d), fixed(hi, d)),
                        None => "–".into(),
                    });
                }
                r
            })
            .collect();
    out.push_str(&table(&head, &align, &rows));
    notes(&mut out, probe_notes(results.fit_named(&p.model), p));
    out
}

fn regions(results: &Results<'_>, r: &RegionsResult) -> String {
    let mut out = format!(
        "regions {}: where the effect of {} is significant across {} (alpha {})\n\n",
        r.model, r.focal, r.moderator, r.alpha
    );
    let bounds = if r.bounds.is_empty() {
        "none (the quadratic has no real roots)".to_string()
    } else {
        r.bounds
            .iter()
            .map(|b| number(*b))
            .collect::<Vec<_>>()
            .join(" and ")
    };
    out.push_str(&format!(
        "  Johnson–Neyman bounds: {} = {bounds}\n",
        r.moderator
    ));
    out.push_str(&format!("  {}\n", region_sentence(r)));
    out.push_str(&format!(
        "  Critical t = {} on {} df.\n",
        fixed(r.critical, 4),
        number(r.df)
    ));
    out.push_str(&format!("  Data: {}.\n", bounds_vs_data(r)));
    let mut n: Vec<String> = Vec::new();
    n.extend(model_note(results.fit_named(&r.model)));
    n.extend(crate::probe_words::boot_region_words(r));
    n.extend(other_notes(&r.notes));
    notes(&mut out, n);
    out
}

fn turning(results: &Results<'_>, r: &TurningResult) -> String {
    let level = percent(r.level);
    let mut out = format!("turning {}: turning point of {}", r.model, r.variable);
    if let Some(m) = &r.moderator {
        out.push_str(&format!(" at values of {m}"));
    }
    out.push_str("\n\n");
    for (i, t) in r.at.iter().enumerate() {
        if i > 0 {
            out.push('\n');
        }
        let at = at_words(r.moderator.as_deref(), t);
        if !at.is_empty() {
            out.push_str(&format!("  at {at}\n"));
        }
        let d = row_decimals(t.std_error);
        let f = |x: f64| fixed(x, d);
        out.push_str(&format!(
            "  turning point {}, SE {}\n",
            f(t.point),
            f(t.std_error)
        ));
        out.push_str(&format!(
            "  {level} CI, delta method: [{}, {}]\n",
            f(t.ci_delta.0),
            f(t.ci_delta.1)
        ));
        out.push_str(&format!("  {level} CI, Fieller: {}\n", fieller_words(t, f)));
        if let Some((lo, hi)) = t.boot_ci {
            out.push_str(&format!(
                "  {level} CI, bootstrap: [{}, {}]\n",
                f(lo),
                f(hi)
            ));
        }
        for (end, s) in [("low", &t.slope_low), ("high", &t.slope_high)] {
            let sd = row_decimals(s.std_error);
            out.push_str(&format!(
                "  slope at the {end} end ({} = {}): {}, SE {}, t = {}\n",
                r.variable,
                number(s.x),
                fixed(s.slope, sd),
                fixed(s.std_error, sd),
                stat(s.t)
            ));
        }
        out.push_str(&format!(
            "  U test for an {}: t = {}, one-sided p {} ({} df)\n",
            shape_words(t.u_test.shape),
            stat(t.u_test.t),
            p_phrase(t.u_test.p),
            number(t.u_test.df)
        ));
        out.push_str(&format!(
            "  Conditions of an {}:\n",
            shape_words(t.u_test.shape)
        ));
        for c in u_conditions(t, r) {
            out.push_str(&format!(
                "    [{}] {}\n",
                if c.pass { "pass" } else { "fail" },
                c.words
            ));
        }
    }
    let mut n: Vec<String> = Vec::new();
    n.extend(model_note(results.fit_named(&r.model)));
    n.push(format!(
        "observed {} from {} to {}",
        r.variable,
        number(r.data_min),
        number(r.data_max)
    ));
    n.extend(other_notes(&r.notes));
    notes(&mut out, n);
    out
}

fn effect(results: &Results<'_>, e: &EffectResult) -> String {
    let x = &e.effect;
    let d = row_decimals(x.std_error);
    let mut out = format!(
        "effect {}: average marginal effect of {}\n\n",
        e.model, e.variable
    );
    let level = percent(e.level);
    out.push_str(&format!(
        "  estimate {}, SE {}, t = {} on {} df, p {}, {level} CI [{}, {}]\n",
        fixed(x.estimate, d),
        fixed(x.std_error, d),
        stat(x.t),
        number(x.df),
        p_phrase(x.p),
        fixed(x.ci_low, d),
        fixed(x.ci_high, d)
    ));
    if let Some((lo, hi)) = x.boot_ci {
        out.push_str(&format!(
            "  bootstrap {level} CI [{}, {}]\n",
            fixed(lo, d),
            fixed(hi, d)
        ));
    }
    let mut n: Vec<String> = Vec::new();
    n.extend(model_note(results.fit_named(&e.model)));
    n.push(format!(
        "the derivative of the fitted outcome with respect to {} averaged over the estimation sample; delta-method SE",
        e.variable
    ));
    n.extend(e.notes.iter().cloned());
    notes(&mut out, n);
    out
}

fn plot(p: &PlotResult) -> String {
    format!(
        "plot {}: figure of {}{} written to {}\n",
        p.model,
        p.focal,
        p.moderator
            .as_ref()
            .map_or(String::new(), |m| format!(" across {m}")),
        p.path.display()
    )
}
