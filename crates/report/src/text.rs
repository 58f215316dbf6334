//! The terminal report: one block per model, comparisons at the end.

use engine::ModelFit;

use crate::numbers::{apa_p, fixed, number, row_decimals, share, stat};
use crate::{errors_note, groups_words, kind_words, rows_note, Results};

pub fn text(results: &Results<'_>) -> String {
    let mut out = String::new();
    for fit in results.fits {
        out.push_str(&model_block(fit));
        out.push('\n');
    }
    for o in results.probing {
        out.push_str(&crate::text_probe::block(results, o));
        out.push('\n');
    }
    for c in results.comparisons {
        out.push_str(&format!(
            "compare {}: F({}, {}) = {}, p {} (Wald test of {}, with the covariance of `{}`)\n",
            c.models.join(", "),
            number(c.df.0),
            number(c.df.1),
            stat(c.statistic),
            p_phrase(c.p),
            c.tested
                .iter()
                .map(|t| format!("`{t}`"))
                .collect::<Vec<_>>()
                .join(", "),
            c.models.last().map_or("", |s| s.as_str())
        ));
    }
    out
}

/// "< .001" reads as "p < .001"; other values as "p = .031".
pub(crate) fn p_phrase(p: f64) -> String {
    let s = apa_p(p);
    if s.starts_with('<') {
        s
    } else {
        format!("= {s}")
    }
}

fn model_block(fit: &ModelFit) -> String {
    let mut out = format!(
        "{}: {} of {}, N = {}",
        fit.name,
        kind_words(fit),
        fit.outcome,
        check::count(fit.n_obs)
    );
    let groups = groups_words(fit);
    if !groups.is_empty() {
        out.push_str(&format!(" ({groups})"));
    }
    out.push_str("\n\n");
    let head = ["term", "estimate", "SE", "df", "t", "p", "95% CI"];
    let rows: Vec<[String; 7]> = fit
        .coefficients
        .iter()
        .map(|c| {
            let d = row_decimals(c.std_error);
            [
                c.term.clone(),
                fixed(c.estimate, d),
                fixed(c.std_error, d),
                number(c.df),
                stat(c.t),
                apa_p(c.p),
                format!("[{}, {}]", fixed(c.ci_low, d), fixed(c.ci_high, d)),
            ]
        })
        .collect();
    let mut widths = head.map(|h| h.chars().count());
    for r in &rows {
        for (w, c) in widths.iter_mut().zip(r) {
            *w = (*w).max(c.chars().count());
        }
    }
    let line = |cells: [&str; 7]| {
        let mut s = String::from("  ");
        for (i, c) in cells.iter().enumerate() {
            let w = widths[i];
            match i {
                0 => s.push_str(&format!("{c:<w$}")),
                6 => s.push_str(c),
                _ => s.push_str(&format!("{c:>w$}")),
            }
            s.push_str("  ");
        }
        s.trim_end().to_string() + "\n"
    };
    out.push_str(&line(head));
    for r in &rows {
        out.push_str(&line([&r[0], &r[1], &r[2], &r[3], &r[4], &r[5], &r[6]]));
    }
    out.push('\n');
    let s = &fit.stats;
    let mut fit_line = format!("  R² {}, adjusted R² {}", share(s.r2), share(s.r2_adj));
    if let Some(w) = s.r2_within {
        fit_line.push_str(&format!(", within R² {}", share(w)));
    }
    fit_line.push_str(&format!(
        "; log-likelihood {:.2}, AIC {:.2}, BIC {:.2}",
        s.loglik, s.aic, s.bic
    ));
    if fit.kind == check::Kind::Within {
        fit_line.push_str(&format!(
            "; within transform converged in {} sweep{} (tolerance {:.0e})",
            s.iterations,
            if s.iterations == 1 { "" } else { "s" },
            s.tolerance
        ));
    }
    out.push_str(&fit_line);
    out.push('\n');
    out.push_str(&format!("  Standard errors: {}.\n", errors_note(fit)));
    out.push_str(&format!("  Rows: {}.\n", rows_note(fit)));
    if fit.absorbed_levels > 0 {
        out.push_str(&format!(
            "  Fixed effects: {} levels absorbed, counted against the residual df ({}).\n",
            check::count(fit.absorbed_levels),
            number(fit.df_resid)
        ));
    }
    for n in &fit.notes {
        out.push_str(&format!("  Note: {n}.\n"));
    }
    out
}
