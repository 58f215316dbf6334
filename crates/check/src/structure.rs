//! The statements that describe the data: `source`, `groups`, `panel`, `let`
//! and top-level `where`.

use std::path::{Path, PathBuf};

use frame::{ColumnData, ReadError, ReadOptions};
use syntax::ast::{Expr, Ident, Stmt, StmtKind, StrLit};
use syntax::Span;

use crate::context::{count, Ctx, DataView, LetDef};
use crate::diagnostic::{codes, Diagnostic};
use crate::resolve::{insert_at, plural};
use crate::value::{Ty, Value};
use crate::DataProvider;

impl Ctx<'_> {
    /// Find the `source` statement and load its data.
    pub fn load_source(
        &mut self,
        stmts: &[Stmt],
        base_dir: &Path,
        provider: &dyn DataProvider,
    ) -> Option<PathBuf> {
        let sources: Vec<(&StrLit, &Vec<StrLit>, Span)> = stmts
            .iter()
            .filter_map(|s| match &s.kind {
                StmtKind::Source { path, missing } => Some((path, missing, s.span)),
                _ => None,
            })
            .collect();
        for (_, _, span) in sources.iter().skip(1) {
            self.push(Diagnostic::error(
                codes::SECOND_SOURCE,
                *span,
                "a file reads one data source; remove this second `source` statement",
            ));
        }
        let Some(&(path, missing, _)) = sources.first() else {
            let needs_data = stmts.iter().any(|s| !matches!(s.kind, StmtKind::Error));
            if needs_data {
                let start = stmts
                    .first()
                    .map_or(Span::new(0, 0), |s| Span::new(s.span.start, s.span.start));
                let d = Diagnostic::error(
                    codes::NO_SOURCE,
                    start,
                    "the file has no `source` statement naming its data, e.g. `source \"teams.csv\"`",
                )
                .with_fix("Add a source statement", vec![insert_at(start.start, "source \"data.csv\"\n")]);
                self.push(d);
            }
            return None;
        };
        let full = base_dir.join(&path.value);
        let mut options = ReadOptions::default();
        for tok in missing {
            if !options.missing_tokens.contains(&tok.value) {
                options.missing_tokens.push(tok.value.clone());
            }
        }
        match provider.load(&full, &options) {
            Ok(view) => {
                if view.complete && view.frame.n_rows() == 0 {
                    let msg = format!(
                        "data file `{}` has a header but no rows of data",
                        path.value
                    );
                    self.push(Diagnostic::error(codes::NO_ROWS, path.span, msg));
                }
                self.data = Some(view);
            }
            Err(e) => {
                let msg = match &e {
                    ReadError::Io { message, .. } => format!(
                        "cannot read data file `{}` (looked for {}): {message}",
                        path.value,
                        full.display()
                    ),
                    // The reader names the file by its full path; show it as the user wrote it.
                    other => other.to_string().replace(
                        &full.display().to_string(),
                        &format!("data file `{}`", path.value),
                    ),
                };
                self.push(Diagnostic::error(codes::DATA_FILE, path.span, msg));
            }
        }
        Some(full)
    }

    /// `groups A in B in C`: every level a column, each nested in the next.
    pub fn check_groups(&mut self, levels: &[Ident], span: Span) -> Vec<usize> {
        let cols: Vec<Option<usize>> = levels.iter().map(|l| self.resolve_grouping(l)).collect();
        let Some((ev, facts, _)) = self.facts() else {
            return cols.into_iter().flatten().collect();
        };
        let frame = ev.frame;
        let mut diags = Vec::new();
        for i in 0..levels.len().saturating_sub(1) {
            let (Some(inner), Some(outer)) = (cols[i], cols[i + 1]) else {
                continue;
            };
            let violations = facts.nesting(&ev, inner, outer);
            if let Some(v) = violations.first() {
                let (a, b) = (&levels[i].name, &levels[i + 1].name);
                let places: Vec<String> = v
                    .outer
                    .iter()
                    .zip(&v.rows)
                    .map(|(o, r)| format!("`{o}` (line {})", frame.line_of_row(*r)))
                    .collect();
                let msg = format!(
                    "`{a}` is not nested in `{b}`: {a} `{}` appears in {b} {}; {} {a} value{} {} more than one {b}",
                    v.inner,
                    places.join(" and "),
                    count(violations.len()),
                    plural(violations.len()),
                    if violations.len() == 1 { "spans" } else { "span" }
                );
                let at = levels[i].span.cover(levels[i + 1].span);
                diags.push(Diagnostic::error(codes::NOT_NESTED, at, msg));
            }
        }
        for d in diags {
            self.push(d);
        }
        let _ = span;
        cols.into_iter().flatten().collect()
    }

    /// `panel UNIT over TIME`: a numeric time, one row per unit and time.
    pub fn check_panel(&mut self, unit: &Ident, time: &Ident) {
        let u = self.resolve_grouping(unit);
        let t = self.resolve_grouping(time);
        let (Some(u), Some(t)) = (u, t) else { return };
        self.panel = Some((u, t));
        let Some(data) = self.data.as_ref().filter(|d| d.complete) else {
            return;
        };
        let (frame, facts) = (data.frame.clone(), data.facts.clone());
        let times = match &frame.columns()[t].data {
            ColumnData::Numeric(c) => &c.values,
            ColumnData::Categorical(c) => {
                let msg = match &c.text_in_numbers {
                    Some(x) => format!(
                        "the time column `{}` must hold numbers, but line {} holds \"{}\"",
                        time.name,
                        frame.line_of_row(x.row),
                        x.value
                    ),
                    None => format!(
                        "the time column `{}` must hold numbers (years, months, periods), not text",
                        time.name
                    ),
                };
                self.push(Diagnostic::error(codes::PANEL_TIME, time.span, msg));
                return;
            }
        };
        if let Some(row) = times.iter().position(|v| !v.is_nan() && v.fract() != 0.0) {
            let msg = format!(
                "the time column `{}` should count whole periods, but line {} holds {}; `lag` and `lead` step by 1",
                time.name,
                frame.line_of_row(row),
                times[row]
            );
            self.push(Diagnostic::warning(codes::PANEL_TIME, time.span, msg));
        }
        let ev = crate::eval::Evaluator::new(&frame, None);
        let index = facts.panel_index(&ev, u, t, || times.clone());
        let (dups, n_dups) = index.duplicates(1);
        let span = unit.span.cover(time.span);
        if let Some(&(a, b)) = dups.first() {
            let code = index.unit.codes[a] as usize;
            let msg = format!(
                "{} `{}` has more than one row for {} {} (lines {} and {}); a panel needs one row per {} and {} ({} duplicate{} in all)",
                unit.name,
                index.unit.labels[code],
                time.name,
                crate::eval::format_number(index.time[a]),
                frame.line_of_row(a),
                frame.line_of_row(b),
                unit.name,
                time.name,
                count(n_dups),
                plural(n_dups)
            );
            self.push(Diagnostic::error(codes::PANEL_DUPLICATE, span, msg));
        }
        let (gaps, first) = index.gaps();
        if let Some(first) = first {
            let msg = format!(
                "{} {}{} ha{} gaps in `{}` (the first is {} `{}`); `lag`, `lead` and `diff` are missing across a gap",
                count(gaps),
                unit.name,
                if gaps == 1 { "" } else { "s" },
                if gaps == 1 { "s" } else { "ve" },
                time.name,
                unit.name,
                index.unit.labels[first]
            );
            self.push(Diagnostic::hint(codes::PANEL_GAPS, span, msg));
        }
        self.panel_index = Some(index);
    }

    pub fn check_let(&mut self, name: &Ident, value: &Expr, stmt_span: Span) {
        if let Some(&prev) = self.let_index.get(&name.name) {
            let line_note = self.lets[prev].name_span;
            let _ = line_note;
            let msg = format!(
                "`{}` is already defined by an earlier `let`; choose another name",
                name.name
            );
            self.push(Diagnostic::error(codes::DUPLICATE_NAME, name.span, msg));
            return;
        }
        if self.column_index(&name.name).is_some() {
            let msg = format!(
                "`let {}` hides the data column of the same name: from here on `{}` means this definition",
                name.name, name.name
            );
            self.push(Diagnostic::warning(codes::SHADOWS_COLUMN, name.span, msg));
        }
        // Resolve before registering, so `let x = x + 1` reads the column.
        let r = self.resolve_expr(value);
        let ty = if r.ty == Ty::Logical {
            Ty::Number
        } else {
            r.ty
        };
        self.let_index.insert(name.name.clone(), self.lets.len());
        self.lets.push(LetDef {
            name: name.name.clone(),
            name_span: name.span,
            position: stmt_span.end,
            value: r.value,
            ty,
            text: self.slice(value.span).to_string(),
        });
    }

    /// A `where` condition: a comparison or a number (non-zero keeps the row).
    pub fn check_where(&mut self, cond: &Expr) -> Option<Value> {
        let r = self.resolve_expr(cond);
        match r.ty {
            Ty::Logical | Ty::Number | Ty::Unknown => r.value,
            Ty::Categorical | Ty::Text => {
                let msg =
                    "`where` needs a condition such as `year >= 2015` or `region == \"north\"`";
                self.push(Diagnostic::error(codes::BAD_ARGUMENT, cond.span, msg));
                None
            }
        }
    }
}

/// Reads CSV files from disk once per check.
pub struct FileLoader;

impl DataProvider for FileLoader {
    fn load(&self, path: &Path, options: &ReadOptions) -> Result<DataView, ReadError> {
        frame::read_csv(path, options).map(|f| DataView::new(std::sync::Arc::new(f), true))
    }
}
