//! Hover text, in markdown: a column's summary against the data, a function's
//! documentation, a model's expanded terms, a `let` definition.

use frame::ColumnData;
use syntax::Parsed;

use crate::analysis::Analysis;
use crate::index::{Occurrence, SymKind};

/// Markdown for the name under the cursor, or `None` when there is nothing to say.
pub fn hover(
    occ: &Occurrence,
    parsed: &Parsed,
    text: &str,
    last: Option<&Analysis>,
) -> Option<String> {
    match occ.kind {
        SymKind::Column => column(&occ.name, last),
        SymKind::Function => {
            let f = syntax::FUNCTIONS.iter().find(|f| f.name == occ.name)?;
            Some(format!("```slope\n{}\n```\n{}", f.signature, f.doc))
        }
        SymKind::Let => let_def(&occ.name, parsed, text, last),
        SymKind::Model => model(&occ.name, last),
        SymKind::Option | SymKind::Unknown => None,
    }
}

fn let_def(name: &str, parsed: &Parsed, text: &str, last: Option<&Analysis>) -> Option<String> {
    let value = parsed.file.stmts.iter().find_map(|s| match &s.kind {
        syntax::ast::StmtKind::Let { name: n, value } if n.name == name => Some(value),
        _ => None,
    })?;
    let def = text.get(value.span.start..value.span.end)?;
    let mut out = format!("```slope\nlet {} = {def}\n```", check::quote_name(name));
    if let Some(l) = last.and_then(|a| a.checked.lets.iter().find(|l| l.name == name)) {
        let ty = match l.ty {
            check::Ty::Number => Some("numeric"),
            check::Ty::Categorical => Some("categorical"),
            check::Ty::Logical => Some("logical (1 or 0)"),
            check::Ty::Text | check::Ty::Unknown => None,
        };
        if let Some(ty) = ty {
            out.push_str(&format!("\n{ty}"));
        }
    }
    Some(out)
}

fn model(name: &str, last: Option<&Analysis>) -> Option<String> {
    let m = last?.models.iter().find(|m| m.name == name)?;
    let kind = match m.kind {
        check::Kind::Ols => "least squares",
        check::Kind::Within => "fixed effects (within)",
        check::Kind::Mixed => "mixed model",
    };
    let outcome = m.outcome.as_ref().map_or("?", |o| o.label.as_str());
    let mut out = format!("**model {name}**: {kind}, outcome `{outcome}`");
    if let Some(r) = &m.rows {
        out.push_str(&format!(
            ", {} of {} rows",
            check::count(r.used),
            check::count(r.total)
        ));
    }
    out.push_str("\n\n");
    for t in &m.terms {
        out.push_str(&format!("- `{}`", t.label));
        if !t.absorbed_by.is_empty() {
            out.push_str(&format!(
                " — absorbed by fixed {}",
                t.absorbed_by.join(", ")
            ));
        } else if !t.varies_within.is_empty() {
            out.push_str(&format!(" — varies within {}", t.varies_within.join(", ")));
        }
        out.push('\n');
    }
    if !m.fixed.is_empty() {
        let f: Vec<&str> = m.fixed.iter().map(|g| g.name.as_str()).collect();
        out.push_str(&format!("\nfixed: {}", f.join(", ")));
    }
    Some(out.trim_end().to_string())
}

/// The summary of one column, with ICC(1) for each declared grouping.
fn column(name: &str, last: Option<&Analysis>) -> Option<String> {
    let a = last?;
    let data = a.checked.data.as_ref()?;
    let frame = &data.frame;
    let col = frame.column(name)?;
    if !data.complete {
        return Some(format!(
            "**{name}**: column (the data file is still loading)"
        ));
    }
    let mut groupings: Vec<usize> = a.checked.groups.clone();
    if let Some((u, t)) = a.checked.panel {
        groupings.push(u);
        groupings.push(t);
    }
    let idx = frame.column_index(name)?;
    groupings.retain(|&g| g != idx);
    groupings.dedup();
    // The same summary as `slopewise describe`, for this column only.
    let s = frame::summarize_column(frame, idx, &groupings);
    let ty = match &col.data {
        ColumnData::Numeric(_) => "numeric".to_string(),
        ColumnData::Categorical(c) => format!("text, {} levels", c.levels.len()),
    };
    let mut out = format!(
        "**{name}**: {ty}\n\nn {}, missing {}",
        check::count(s.n),
        check::count(s.missing)
    );
    if let (Some(mean), Some(sd)) = (s.mean, s.sd) {
        out.push_str(&format!("\n\nmean {}, SD {}", num(mean), num(sd)));
    }
    if let (Some(lo), Some(hi)) = (s.min, s.max) {
        out.push_str(&format!(", range {} to {}", num(lo), num(hi)));
    }
    if let ColumnData::Categorical(c) = &col.data {
        let shown: Vec<&str> = c.levels.iter().take(8).map(String::as_str).collect();
        let more = if c.levels.len() > 8 { ", …" } else { "" };
        out.push_str(&format!("\n\nlevels: {}{more}", shown.join(", ")));
    }
    let mut varies = Vec::new();
    let mut constant = Vec::new();
    for g in &s.by_group {
        if let Some(icc) = g.icc1 {
            out.push_str(&format!("\n\nICC(1) by {}: {:.3}", g.grouping, icc));
        }
        if g.varies_within {
            varies.push(g.grouping.as_str());
        } else {
            constant.push(g.grouping.as_str());
        }
    }
    if !varies.is_empty() {
        out.push_str(&format!("\n\nvaries within {}", varies.join(", ")));
    }
    if !constant.is_empty() {
        out.push_str(&format!("\n\nconstant within {}", constant.join(", ")));
    }
    Some(out)
}

/// Four significant digits: enough to recognise a value, short enough to read.
fn num(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    if x.abs() >= 1e6 || x.abs() < 1e-3 {
        return format!("{x:.3e}");
    }
    let digits = (4 - 1 - x.abs().log10().floor() as i32).clamp(0, 6) as usize;
    let s = format!("{x:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}
