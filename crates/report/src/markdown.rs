//! Manuscript tables in markdown: one table per model with its notes.

use crate::numbers::{apa_p, fixed, number, row_decimals, share, stat};
use crate::text::p_phrase;
use crate::{errors_note, groups_words, kind_words, rows_note, Results};

pub fn markdown(results: &Results<'_>) -> String {
    let mut out = String::new();
    for fit in results.fits {
        let groups = groups_words(fit);
        out.push_str(&format!(
            "**Model {}.** {} of {}, *N* = {}{}\n\n",
            fit.name,
            capitalize(kind_words(fit)),
            fit.outcome,
            check::count(fit.n_obs),
            if groups.is_empty() {
                String::new()
            } else {
                format!(" ({groups})")
            }
        ));
        out.push_str("| Term | Estimate | SE | *df* | *t* | *p* | 95% CI |\n");
        out.push_str("|:--|--:|--:|--:|--:|--:|:--|\n");
        for c in &fit.coefficients {
            let d = row_decimals(c.std_error);
            out.push_str(&format!(
                "| `{}` | {} | {} | {} | {} | {} | [{}, {}] |\n",
                c.term,
                fixed(c.estimate, d),
                fixed(c.std_error, d),
                number(c.df),
                stat(c.t),
                apa_p(c.p),
                fixed(c.ci_low, d),
                fixed(c.ci_high, d)
            ));
        }
        let s = &fit.stats;
        let mut fit_words = format!(
            "*R*² = {}, adjusted *R*² = {}",
            share(s.r2),
            share(s.r2_adj)
        );
        if let Some(w) = s.r2_within {
            fit_words.push_str(&format!(", within *R*² = {}", share(w)));
        }
        out.push_str(&format!(
            "\n*Note.* {}. {}. {}.",
            fit_words,
            capitalize(&errors_note(fit)),
            capitalize(&rows_note(fit))
        ));
        for n in &fit.notes {
            out.push_str(&format!(" {}.", capitalize(n)));
        }
        out.push_str("\n\n");
    }
    for o in results.probing {
        out.push_str(&crate::markdown_probe::block(results, o));
    }
    for c in results.comparisons {
        out.push_str(&format!(
            "Comparison of {}: *F*({}, {}) = {}, *p* {}.\n\n",
            c.models.join(" and "),
            number(c.df.0),
            number(c.df.1),
            stat(c.statistic),
            p_phrase(c.p)
        ));
    }
    out
}

pub(crate) fn capitalize(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}
