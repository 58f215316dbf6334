//! What `describe` shows per column.

use std::sync::Arc;

use crate::{ColumnData, ColumnSummary, Frame, GroupIndex, GroupSummary};

/// Summaries of every column, with ICC(1) and within-variation per grouping column.
///
/// SD divides by n − 1 (the sample SD researchers report); mean, SD, min and
/// max are `None` for categorical columns and for numeric columns without
/// values (SD also with a single value). For each grouping, rows whose group
/// id is missing are left out; a categorical column gets no ICC(1) but does
/// say whether its level changes within a group. Grouping names that are not
/// columns of the frame are skipped: the caller reports unknown names, with
/// the nearest existing one, before it asks for summaries.
pub fn summarize(frame: &Frame, groupings: &[&str]) -> Vec<ColumnSummary> {
    let columns: Vec<usize> = groupings
        .iter()
        .filter_map(|&g| frame.column_index(g))
        .collect();
    (0..frame.columns().len())
        .map(|c| summarize_column(frame, c, &columns))
        .collect()
}

/// The summary of one column, with ICC(1) and within-variation for each
/// grouping column (by index). Group indexes come from the frame's cache,
/// and nothing is copied: the language server asks this on every hover.
pub fn summarize_column(frame: &Frame, column: usize, groupings: &[usize]) -> ColumnSummary {
    let col = &frame.columns()[column];
    let indexes: Vec<(&str, Arc<GroupIndex>)> = groupings
        .iter()
        .map(|&g| (frame.columns()[g].name.as_str(), frame.group_index(g)))
        .collect();
    let missing = col.n_missing();
    let n = col.len() - missing;
    match &col.data {
        ColumnData::Numeric(num) => {
            let (mean, sd, min, max) = moments(&num.values);
            ColumnSummary {
                name: col.name.clone(),
                levels: None,
                n,
                missing,
                mean,
                sd,
                min,
                max,
                by_group: indexes
                    .iter()
                    .map(|(g, ix)| GroupSummary {
                        grouping: g.to_string(),
                        icc1: crate::icc1(&num.values, ix),
                        varies_within: ix.varies_within(&num.values),
                    })
                    .collect(),
            }
        }
        ColumnData::Categorical(cat) => ColumnSummary {
            name: col.name.clone(),
            levels: Some(cat.levels.len()),
            n,
            missing,
            mean: None,
            sd: None,
            min: None,
            max: None,
            by_group: indexes
                .iter()
                .map(|(g, ix)| GroupSummary {
                    grouping: g.to_string(),
                    icc1: None,
                    varies_within: ix.codes_vary_within(&cat.codes),
                })
                .collect(),
        },
    }
}

/// Mean, SD (n − 1), min and max of the non-NaN values. Two passes: the sum
/// of squares around the mean stays accurate for values far from zero.
fn moments(values: &[f64]) -> (Option<f64>, Option<f64>, Option<f64>, Option<f64>) {
    let mut n = 0usize;
    let mut sum = 0.0;
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for &v in values.iter().filter(|v| !v.is_nan()) {
        n += 1;
        sum += v;
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if n == 0 {
        return (None, None, None, None);
    }
    let mean = sum / n as f64;
    let sd = (n > 1).then(|| {
        let ss: f64 = values
            .iter()
            .filter(|v| !v.is_nan())
            .map(|&v| (v - mean) * (v - mean))
            .sum();
        (ss / (n - 1) as f64).sqrt()
    });
    (Some(mean), sd, Some(lo), Some(hi))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::Column;

    #[test]
    fn numeric_and_categorical() {
        let f = Frame::from_columns(vec![
            Column::numeric("x", vec![1.0, 2.0, f64::NAN, 5.0]),
            Column::categorical("g", &[Some("a"), Some("a"), Some("b"), None]),
        ]);
        let s = summarize(&f, &["g", "nope"]);
        assert_eq!(s.len(), 2);
        assert_eq!((s[0].n, s[0].missing), (3, 1));
        assert_eq!(s[0].mean, Some(8.0 / 3.0));
        let sd = ((1.0f64 - 8.0 / 3.0).powi(2)
            + (2.0f64 - 8.0 / 3.0).powi(2)
            + (5.0f64 - 8.0 / 3.0).powi(2))
            / 2.0;
        assert!((s[0].sd.unwrap() - sd.sqrt()).abs() < 1e-15);
        assert_eq!((s[0].min, s[0].max), (Some(1.0), Some(5.0)));
        assert_eq!(s[0].by_group.len(), 1);
        // Group a holds 1 and 2; group b only a missing x; so one group left.
        assert_eq!(s[0].by_group[0].icc1, None);
        assert!(s[0].by_group[0].varies_within);
        assert_eq!(s[1].levels, Some(2));
        assert_eq!(s[1].mean, None);
        assert!(!s[1].by_group[0].varies_within);
    }
}
