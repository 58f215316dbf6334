//! Design matrices from a checked model, on the estimation sample.
//!
//! The checker decided the sample (`where` and listwise deletion); here every
//! term is evaluated with group means and centering taken over that sample,
//! categorical factors become indicator columns (reference: the `ref` level, or
//! the first level in sorted order among those present), products and powers are
//! multiplied out, and for `fixed` models singleton groups are removed
//! repeatedly before anything is estimated.

use check::{Evaluated, Evaluator, PanelIndex, ResolvedModel, ResolvedTerm, Value};
use frame::{Frame, MISSING_CODE};

use crate::numeric::{singleton_rows, GroupCodes};
use crate::FitError;

/// The regression problem of one model.
#[derive(Clone, Debug)]
pub struct Design {
    /// Rows of the frame in the estimation sample, ascending.
    pub rows: Vec<usize>,
    pub y: Vec<f64>,
    /// One column per coefficient, over `rows`.
    pub columns: Vec<Vec<f64>>,
    pub labels: Vec<String>,
    /// For each column, the index of the model term it comes from (`None` for the intercept).
    pub term_of: Vec<Option<usize>>,
    pub intercept: bool,
    /// The `fixed` groupings, coded over `rows`.
    pub fixed: Vec<(String, GroupCodes)>,
    /// The `errors cluster` groupings, coded over `rows`.
    pub clusters: Vec<(String, GroupCodes)>,
    /// Rows removed because they were alone in a fixed-effect group.
    pub singletons: usize,
}

pub fn build(
    model: &ResolvedModel,
    frame: &Frame,
    panel: Option<&PanelIndex>,
) -> Result<Design, FitError> {
    let err = |message: String| FitError {
        model: model.name.clone(),
        message,
    };
    let rows_account = model
        .rows
        .as_ref()
        .ok_or_else(|| err("the data were not loaded, so there is no estimation sample".into()))?;
    let mut sample = rows_account.sample.to_bools();
    let outcome = model
        .outcome
        .as_ref()
        .ok_or_else(|| err("the model has no outcome".into()))?;

    // Group indexes are built once per frame (shared with the checker).
    let codes_over = |column: usize, rows: &[usize]| codes_over(&frame.group_index(column), rows);

    // Codes of each grouping column over the sample, computed once and reused
    // for a column that is both a fixed and a cluster grouping.
    let mut rows: Vec<usize> = (0..sample.len()).filter(|&r| sample[r]).collect();
    let mut group_columns: Vec<usize> = Vec::new();
    for g in model.fixed.iter().chain(&model.cluster) {
        if !group_columns.contains(&g.column) {
            group_columns.push(g.column);
        }
    }
    let mut codes: Vec<GroupCodes> = group_columns
        .iter()
        .map(|&c| codes_over(c, &rows))
        .collect();
    let position = |column: usize| group_columns.iter().position(|&c| c == column);

    // Singletons first: they change the sample, and with it every group mean.
    let mut singletons = 0;
    if !model.fixed.is_empty() {
        let fixed_codes: Vec<GroupCodes> = model
            .fixed
            .iter()
            .filter_map(|g| position(g.column).map(|i| codes[i].clone()))
            .collect();
        let (keep, dropped) = singleton_rows(&fixed_codes);
        singletons = dropped;
        if dropped > 0 {
            for (r, k) in rows.iter().zip(&keep) {
                if !k {
                    sample[*r] = false;
                }
            }
            rows = rows
                .iter()
                .zip(&keep)
                .filter(|(_, &k)| k)
                .map(|(&r, _)| r)
                .collect();
            codes = codes.iter().map(|c| c.subset(&keep)).collect();
        }
    }
    if rows.is_empty() {
        return Err(err("no rows are left to estimate from".into()));
    }
    let ev = Evaluator::with_sample(frame, panel, &sample);
    let y = over_rows(&ev, frame, &outcome.value, &rows);
    let intercept = model.fixed.is_empty();
    let mut columns = Vec::new();
    let mut labels = Vec::new();
    let mut term_of = Vec::new();
    if intercept {
        columns.push(vec![1.0; rows.len()]);
        labels.push("(intercept)".to_string());
        term_of.push(None);
    }
    for (ti, term) in model.terms.iter().enumerate() {
        for (label, col) in expand_term(&ev, frame, term, &rows) {
            columns.push(col);
            labels.push(label);
            term_of.push(Some(ti));
        }
    }
    if let Some(bad) = columns
        .iter()
        .chain(std::iter::once(&y))
        .position(|c| c.iter().any(|v| !v.is_finite()))
    {
        let what = labels
            .get(bad)
            .cloned()
            .unwrap_or_else(|| outcome.label.clone());
        return Err(err(format!(
            "`{what}` has values that are not finite numbers in the estimation sample"
        )));
    }
    let coded = |g: &check::Grouping| {
        let i = position(g.column).expect("every grouping column was coded");
        (g.name.clone(), codes[i].clone())
    };
    let fixed = model.fixed.iter().map(coded).collect();
    let clusters = model.cluster.iter().map(coded).collect();
    Ok(Design {
        rows,
        y,
        columns,
        labels,
        term_of,
        intercept,
        fixed,
        clusters,
        singletons,
    })
}

/// Dense codes of a grouping column over the given rows (none of them missing:
/// the checker left rows with a missing grouping out of the sample).
fn codes_over(index: &frame::GroupIndex, rows: &[usize]) -> GroupCodes {
    let ids: Vec<u32> = rows
        .iter()
        .map(|&r| {
            let c = index.codes[r];
            debug_assert!(c != MISSING_CODE);
            c
        })
        .collect();
    GroupCodes::from_ids(&ids)
}

/// The numeric values of `value` on the sample rows. A plain numeric column is
/// read straight from the frame; anything else is evaluated (with the sample's
/// group means, centering and scaling) and then gathered.
fn over_rows(ev: &Evaluator<'_>, frame: &Frame, value: &Value, rows: &[usize]) -> Vec<f64> {
    if let Value::Column(c) = value {
        if let frame::ColumnData::Numeric(col) = &frame.columns()[*c].data {
            return rows.iter().map(|&r| col.values[r]).collect();
        }
    }
    let all = ev.numbers(value);
    rows.iter().map(|&r| all[r]).collect()
}

/// One part of a term while it is multiplied out: its label pieces and values.
struct Piece {
    labels: Vec<String>,
    values: Vec<f64>,
}

/// The columns of one term: one for a product of numbers, one per
/// non-reference level (or combination of levels) for categorical factors.
fn expand_term(
    ev: &Evaluator<'_>,
    frame: &Frame,
    term: &ResolvedTerm,
    rows: &[usize],
) -> Vec<(String, Vec<f64>)> {
    let mut pieces = vec![Piece {
        labels: Vec::new(),
        values: vec![1.0; rows.len()],
    }];
    for f in &term.factors {
        // Only categorical factors need their codes; numbers are read over the sample rows.
        let coded = (f.ty == check::Ty::Categorical).then(|| ev.eval(&f.value));
        match coded {
            Some(Evaluated::Codes { codes, levels }) => {
                let reference = match &f.value {
                    Value::Categorical {
                        reference: Some(r), ..
                    } => Some(r.as_str()),
                    _ => None,
                };
                let present = levels_present(&codes, &levels, rows);
                let keep: Vec<&(u32, String)> = match reference {
                    Some(r) => present.iter().filter(|(_, l)| l != r).collect(),
                    None => present.iter().skip(1).collect(),
                };
                let mut next = Vec::new();
                for p in &pieces {
                    for (code, level) in &keep {
                        let mut labels = p.labels.clone();
                        labels.push(format!("{}={level}", f.label));
                        let values = p
                            .values
                            .iter()
                            .zip(rows)
                            .map(|(v, &r)| if codes[r] == *code { *v } else { 0.0 })
                            .collect();
                        next.push(Piece { labels, values });
                    }
                }
                pieces = next;
            }
            _ => {
                let x = over_rows(ev, frame, &f.value, rows);
                let label = if f.power > 1 {
                    format!("{}^{}", f.label, f.power)
                } else {
                    f.label.clone()
                };
                let power = f.power as i32;
                for p in pieces.iter_mut() {
                    for (v, xi) in p.values.iter_mut().zip(&x) {
                        *v *= if power == 1 { *xi } else { xi.powi(power) };
                    }
                    p.labels.push(label.clone());
                }
            }
        }
    }
    if !term.categorical {
        // A term of numbers keeps its label exactly as written (DESIGN: term labels).
        return pieces
            .into_iter()
            .map(|p| (term.label.clone(), p.values))
            .collect();
    }
    pieces
        .into_iter()
        .map(|p| (p.labels.join("*"), p.values))
        .collect()
}

/// The levels that occur in the sample, in sorted order: numerically when every
/// level is a number (codes treated as categories), otherwise as text.
fn levels_present(codes: &[u32], levels: &[String], rows: &[usize]) -> Vec<(u32, String)> {
    let mut seen = vec![false; levels.len()];
    for &r in rows {
        let c = codes[r];
        if c != MISSING_CODE {
            seen[c as usize] = true;
        }
    }
    let mut out: Vec<(u32, String)> = levels
        .iter()
        .enumerate()
        .filter(|(i, _)| seen[*i])
        .map(|(i, l)| (i as u32, l.clone()))
        .collect();
    let numeric: Option<Vec<f64>> = out.iter().map(|(_, l)| l.parse::<f64>().ok()).collect();
    match numeric {
        Some(nums) => {
            let mut paired: Vec<(f64, (u32, String))> = nums.into_iter().zip(out).collect();
            paired.sort_by(|a, b| a.0.total_cmp(&b.0));
            out = paired.into_iter().map(|(_, p)| p).collect();
        }
        None => out.sort_by(|a, b| a.1.cmp(&b.1)),
    }
    out
}
