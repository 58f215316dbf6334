//! `slopewise describe DATA.csv [--groups a,b]`: the columns of a data file at a glance.

use std::path::Path;

use frame::{ColumnSummary, ReadOptions};

use crate::Format;

pub fn run(
    data: &Path,
    groups: &[String],
    missing: &[String],
    format: Format,
) -> Result<bool, String> {
    let mut options = ReadOptions::default();
    options.missing_tokens.extend(missing.iter().cloned());
    let frame = frame::read_csv(data, &options).map_err(|e| e.to_string())?;
    let names: Vec<&str> = frame.columns().iter().map(|c| c.name.as_str()).collect();
    for g in groups {
        if frame.column(g).is_none() {
            let hint = check::nearest(g, names.iter().copied())
                .map(|s| format!("; did you mean `{s}`?"))
                .unwrap_or_default();
            return Err(format!(
                "{}: no column named `{g}` to group by{hint}",
                data.display()
            ));
        }
    }
    let group_refs: Vec<&str> = groups.iter().map(String::as_str).collect();
    let summaries = frame::summarize(&frame, &group_refs);
    match format {
        Format::Json => {
            let doc = serde_json::json!({
                "file": data.display().to_string(),
                "rows": frame.n_rows(),
                "columns": summaries.iter().map(summary_json).collect::<Vec<_>>(),
            });
            println!(
                "{}",
                serde_json::to_string_pretty(&doc).map_err(|e| e.to_string())?
            );
        }
        Format::Text => print!(
            "{}",
            table(data, frame.n_rows(), &frame, groups, &summaries)
        ),
    }
    Ok(true)
}

fn summary_json(s: &ColumnSummary) -> serde_json::Value {
    serde_json::json!({
        "name": s.name,
        "type": if s.levels.is_some() { "categorical" } else { "numeric" },
        "levels": s.levels,
        "n": s.n,
        "missing": s.missing,
        "mean": s.mean,
        "sd": s.sd,
        "min": s.min,
        "max": s.max,
        "groupings": s.by_group.iter().map(|g| serde_json::json!({
            "grouping": g.grouping,
            "icc1": g.icc1,
            "varies_within": g.varies_within,
        })).collect::<Vec<_>>(),
    })
}

/// A plain aligned table; one line per column, grouping statistics at the right.
fn table(
    data: &Path,
    rows: usize,
    frame: &frame::Frame,
    groups: &[String],
    summaries: &[ColumnSummary],
) -> String {
    let mut head = vec![
        "column".to_string(),
        "type".into(),
        "n".into(),
        "missing".into(),
        "mean".into(),
        "SD".into(),
        "min".into(),
        "max".into(),
    ];
    for g in groups {
        head.push(format!("ICC(1) {g}"));
        head.push(format!("within {g}"));
    }
    let mut body: Vec<Vec<String>> = Vec::new();
    for s in summaries {
        let kind = match s.levels {
            Some(k) => format!("text, {} levels", check::count(k)),
            None => "number".into(),
        };
        let mut row = vec![
            s.name.clone(),
            kind,
            check::count(s.n),
            check::count(s.missing),
            num(s.mean),
            num(s.sd),
            num(s.min),
            num(s.max),
        ];
        for g in &s.by_group {
            row.push(g.icc1.map_or("-".into(), |v| format!("{v:.3}")));
            row.push(if g.varies_within {
                "varies".into()
            } else {
                "constant".into()
            });
        }
        body.push(row);
    }
    let widths: Vec<usize> = (0..head.len())
        .map(|i| {
            body.iter()
                .map(|r| r.get(i).map_or(0, |c| c.chars().count()))
                .chain([head[i].chars().count()])
                .max()
                .unwrap_or(0)
        })
        .collect();
    let line = |cells: &[String]| -> String {
        let mut s = String::new();
        for (i, c) in cells.iter().enumerate() {
            let w = widths[i];
            if i < 2 {
                s.push_str(&format!("{c:<w$}  "));
            } else {
                s.push_str(&format!("{c:>w$}  "));
            }
        }
        s.trim_end().to_string() + "\n"
    };
    let mut out = format!(
        "{}: {} rows, {} columns",
        data.display(),
        check::count(rows),
        summaries.len()
    );
    for g in groups {
        if let Some(col) = frame.column(g) {
            let idx = frame::GroupIndex::from_column(col);
            out.push_str(&format!("; {} {g} groups", check::count(idx.n_groups())));
        }
    }
    out.push_str("\n\n");
    out.push_str(&line(&head));
    for r in &body {
        out.push_str(&line(r));
    }
    if !groups.is_empty() {
        out.push_str(
            "\nICC(1): share of the variance that lies between groups (one-way ANOVA estimator, mean group size).\n\
             within: whether the column takes more than one value inside some group.\n",
        );
    }
    out
}

/// Numbers for a table: three decimals for ordinary magnitudes, fewer for large ones.
fn num(x: Option<f64>) -> String {
    match x {
        None => "-".into(),
        Some(v) if v.abs() >= 10_000.0 => format!("{v:.0}"),
        Some(v) if v.abs() >= 100.0 => format!("{v:.1}"),
        Some(v) => format!("{v:.3}"),
    }
}
