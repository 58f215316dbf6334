//! Column-wise evaluation of resolved values over a frame.
//!
//! Missing values are NaN throughout; a result that is not finite (a division by
//! zero, the log of zero) is missing too. Each operation is one pass over whole
//! columns, with no allocation per row.

use std::borrow::Cow;
use std::sync::Arc;

use frame::{ColumnData, Frame, GroupIndex, MISSING_CODE};
use syntax::ast::BinaryOp;

use crate::value::Value;

#[derive(Clone, Debug, PartialEq)]
pub enum Evaluated {
    Numbers(Vec<f64>),
    Scalar(f64),
    Codes {
        codes: Vec<u32>,
        levels: Vec<String>,
    },
    Text(String),
}

impl Evaluated {
    /// As [`Evaluated::to_numbers`], without copying when the values already are numbers.
    pub fn into_numbers(self, n: usize) -> Vec<f64> {
        match self {
            Evaluated::Numbers(v) => v,
            other => other.to_numbers(n),
        }
    }

    /// As numbers, one per row (categories become 1-based codes so that every
    /// level differs from zero; missing stays NaN).
    pub fn to_numbers(&self, n: usize) -> Vec<f64> {
        match self {
            Evaluated::Numbers(v) => v.clone(),
            Evaluated::Scalar(x) => vec![*x; n],
            Evaluated::Codes { codes, .. } => codes
                .iter()
                .map(|&c| {
                    if c == MISSING_CODE {
                        f64::NAN
                    } else {
                        c as f64 + 1.0
                    }
                })
                .collect(),
            Evaluated::Text(_) => vec![f64::NAN; n],
        }
    }
}

/// Rows sorted by unit and time, for `lag`, `lead` and `diff`.
#[derive(Debug)]
pub struct PanelIndex {
    pub unit: Arc<GroupIndex>,
    pub time: Vec<f64>,
    /// Row numbers sorted by (unit, time); rows with a missing unit or time last.
    order: Vec<u32>,
    /// Start of each unit's run in `order`, plus the end.
    starts: Vec<usize>,
}

impl PanelIndex {
    pub fn new(unit: Arc<GroupIndex>, time: Vec<f64>) -> PanelIndex {
        let n_units = unit.n_groups();
        let mut order: Vec<u32> = (0..time.len() as u32)
            .filter(|&r| unit.codes[r as usize] != MISSING_CODE && !time[r as usize].is_nan())
            .collect();
        order.sort_unstable_by(|&a, &b| {
            let (a, b) = (a as usize, b as usize);
            unit.codes[a]
                .cmp(&unit.codes[b])
                .then(time[a].total_cmp(&time[b]))
        });
        let mut starts = vec![0usize; n_units + 1];
        for &r in &order {
            starts[unit.codes[r as usize] as usize + 1] += 1;
        }
        for u in 0..n_units {
            starts[u + 1] += starts[u];
        }
        PanelIndex {
            unit,
            time,
            order,
            starts,
        }
    }

    /// Pairs of rows with the same unit and time (at most `limit`), and how many in all.
    pub fn duplicates(&self, limit: usize) -> (Vec<(usize, usize)>, usize) {
        let mut found = Vec::new();
        let mut count = 0;
        for w in self.order.windows(2) {
            let (a, b) = (w[0] as usize, w[1] as usize);
            if self.unit.codes[a] == self.unit.codes[b] && self.time[a] == self.time[b] {
                count += 1;
                if found.len() < limit {
                    found.push((a, b));
                }
            }
        }
        (found, count)
    }

    /// Units whose observed times skip a step of one, and the first such unit.
    pub fn gaps(&self) -> (usize, Option<usize>) {
        let mut units = 0;
        let mut first = None;
        for u in 0..self.unit.n_groups() {
            let run = &self.order[self.starts[u]..self.starts[u + 1]];
            if run
                .windows(2)
                .any(|w| self.time[w[1] as usize] - self.time[w[0] as usize] > 1.0)
            {
                units += 1;
                first.get_or_insert(u);
            }
        }
        (units, first)
    }

    /// The value `k` periods earlier in the same unit (later for negative `k`).
    fn shift(&self, x: &[f64], k: i64) -> Vec<f64> {
        let mut out = vec![f64::NAN; x.len()];
        for u in 0..self.unit.n_groups() {
            let run = &self.order[self.starts[u]..self.starts[u + 1]];
            for &r in run {
                let target = self.time[r as usize] - k as f64;
                if let Ok(p) = run.binary_search_by(|&s| self.time[s as usize].total_cmp(&target)) {
                    out[r as usize] = x[run[p] as usize];
                }
            }
        }
        out
    }
}

/// Evaluates values over one frame, caching group indexes.
pub struct Evaluator<'a> {
    pub frame: &'a Frame,
    panel: Option<&'a PanelIndex>,
    /// When set, group means (`within`, `between`) and sample statistics
    /// (`center`, `z`) are taken over these rows only: the estimation sample.
    sample: Option<&'a [bool]>,
}

impl<'a> Evaluator<'a> {
    pub fn new(frame: &'a Frame, panel: Option<&'a PanelIndex>) -> Self {
        Evaluator {
            frame,
            panel,
            sample: None,
        }
    }

    /// Statistics over the estimation sample only (the engine's view), while
    /// values are still produced for every row and `lag` still reads rows
    /// outside the sample (an earlier period excluded by `where` is still data).
    pub fn with_sample(
        frame: &'a Frame,
        panel: Option<&'a PanelIndex>,
        sample: &'a [bool],
    ) -> Self {
        Evaluator {
            sample: Some(sample),
            ..Evaluator::new(frame, panel)
        }
    }

    /// The values that enter a statistic: outside the sample they count as missing.
    fn for_stats<'x>(&self, x: &'x [f64]) -> Cow<'x, [f64]> {
        match self.sample {
            None => Cow::Borrowed(x),
            Some(s) => Cow::Owned(
                x.iter()
                    .zip(s)
                    .map(|(&v, &k)| if k { v } else { f64::NAN })
                    .collect(),
            ),
        }
    }

    pub fn n(&self) -> usize {
        self.frame.n_rows()
    }

    /// The group index of a column, built once.
    pub fn group(&self, column: usize) -> Arc<GroupIndex> {
        self.frame.group_index(column)
    }

    pub fn eval(&self, value: &Value) -> Evaluated {
        let n = self.n();
        match value {
            Value::Column(c) => match &self.frame.columns()[*c].data {
                ColumnData::Numeric(col) => Evaluated::Numbers(col.values.clone()),
                ColumnData::Categorical(col) => Evaluated::Codes {
                    codes: col.codes.clone(),
                    levels: col.levels.clone(),
                },
            },
            Value::Number(x) => Evaluated::Scalar(*x),
            Value::Text(s) => Evaluated::Text(s.clone()),
            Value::Neg(x) => map(self.numbers_cow(x), |v| -v),
            Value::Not(x) => map(self.numbers_cow(x), |v| {
                if v.is_nan() {
                    v
                } else {
                    f64::from(v == 0.0)
                }
            }),
            Value::Binary(op, a, b) => self.binary(*op, a, b),
            Value::Within(x, g) => self.by_group(x, *g, |v, mean| v - mean),
            Value::Between(x, g) => {
                self.by_group(x, *g, |v, mean| if v.is_nan() { v } else { mean })
            }
            Value::Center(x) => {
                let x = self.numbers_cow(x);
                let (mean, _) = mean_sd(&self.for_stats(&x));
                Evaluated::Numbers(x.iter().map(|v| v - mean).collect())
            }
            Value::Z(x) => {
                let x = self.numbers_cow(x);
                let (mean, sd) = mean_sd(&self.for_stats(&x));
                Evaluated::Numbers(x.iter().map(|v| finite((v - mean) / sd)).collect())
            }
            Value::Log(x) => map(
                self.numbers_cow(x),
                |v| if v > 0.0 { v.ln() } else { f64::NAN },
            ),
            Value::Sqrt(x) => map(self.numbers_cow(x), |v| {
                if v >= 0.0 {
                    v.sqrt()
                } else {
                    f64::NAN
                }
            }),
            Value::Shift { x, k, diff } => {
                let x = self.numbers_cow(x);
                let Some(panel) = self.panel else {
                    return Evaluated::Numbers(vec![f64::NAN; n]);
                };
                let shifted = panel.shift(&x, *k);
                if *diff {
                    Evaluated::Numbers(x.iter().zip(&shifted).map(|(a, b)| a - b).collect())
                } else {
                    Evaluated::Numbers(shifted)
                }
            }
            Value::Categorical { x, .. } => match self.eval(x) {
                codes @ Evaluated::Codes { .. } => codes,
                other => numbers_to_codes(&other.to_numbers(n)),
            },
        }
    }

    /// Combine each row's value with its group's mean; missing where the id is.
    fn by_group(&self, x: &Value, group: usize, f: impl Fn(f64, f64) -> f64) -> Evaluated {
        let x = self.numbers_cow(x);
        let g = self.group(group);
        let means = g.means(&self.for_stats(&x));
        Evaluated::Numbers(
            x.iter()
                .zip(&g.codes)
                .map(|(&v, &c)| {
                    if c == MISSING_CODE {
                        f64::NAN
                    } else {
                        f(v, means[c as usize])
                    }
                })
                .collect(),
        )
    }

    /// Evaluate as one number per row.
    pub fn numbers(&self, value: &Value) -> Vec<f64> {
        self.eval(value).into_numbers(self.n())
    }

    /// As [`Evaluator::numbers`], borrowing a numeric column instead of
    /// copying it: most values are a column or a function of one, and a copy
    /// of a million-row column is most of the cost of checking a term.
    pub fn numbers_cow(&self, value: &Value) -> Cow<'a, [f64]> {
        if let Value::Column(c) = value {
            if let ColumnData::Numeric(col) = &self.frame.columns()[*c].data {
                return Cow::Borrowed(&col.values);
            }
        }
        Cow::Owned(self.numbers(value))
    }

    fn binary(&self, op: BinaryOp, a: &Value, b: &Value) -> Evaluated {
        let n = self.n();
        // A numeric column is read in place (`None`) rather than evaluated into a copy.
        let operand = |v: &Value| match v {
            Value::Column(c) if self.frame.columns()[*c].as_numeric().is_some() => None,
            other => Some(self.eval(other)),
        };
        let (ea, eb) = (operand(a), operand(b));
        if let (BinaryOp::Eq | BinaryOp::Ne, Some(ea), Some(eb)) = (op, &ea, &eb) {
            if let Some(r) = compare_levels(op, ea, eb).or_else(|| compare_levels(op, eb, ea)) {
                return r;
            }
        }
        let side = |e: Option<Evaluated>, v: &Value| match e {
            None => Side::Values(self.numbers_cow(v)),
            Some(Evaluated::Scalar(x)) => Side::Scalar(x),
            Some(other) => Side::Values(Cow::Owned(other.into_numbers(n))),
        };
        let g = arithmetic(op);
        match (side(ea, a), side(eb, b)) {
            (Side::Scalar(x), Side::Scalar(y)) => Evaluated::Scalar(g(x, y)),
            (Side::Scalar(x), Side::Values(v)) => map(v, |y| g(x, y)),
            (Side::Values(v), Side::Scalar(y)) => map(v, |x| g(x, y)),
            (Side::Values(xa), Side::Values(xb)) => {
                Evaluated::Numbers(xa.iter().zip(xb.iter()).map(|(&x, &y)| g(x, y)).collect())
            }
        }
    }
}

/// One operand of a binary operator: a single number, or one per row.
enum Side<'a> {
    Scalar(f64),
    Values(Cow<'a, [f64]>),
}

/// A binary operator on two numbers: missing when either is, and when the
/// result is not finite.
fn arithmetic(op: BinaryOp) -> impl Fn(f64, f64) -> f64 {
    let f: fn(f64, f64) -> f64 = match op {
        BinaryOp::Add => |x, y| x + y,
        BinaryOp::Sub => |x, y| x - y,
        BinaryOp::Mul => |x, y| x * y,
        BinaryOp::Div => |x, y| x / y,
        BinaryOp::Pow => f64::powf,
        BinaryOp::Eq => |x, y| f64::from(x == y),
        BinaryOp::Ne => |x, y| f64::from(x != y),
        BinaryOp::Lt => |x, y| f64::from(x < y),
        BinaryOp::Le => |x, y| f64::from(x <= y),
        BinaryOp::Gt => |x, y| f64::from(x > y),
        BinaryOp::Ge => |x, y| f64::from(x >= y),
        BinaryOp::And => |x, y| f64::from(x != 0.0 && y != 0.0),
        BinaryOp::Or => |x, y| f64::from(x != 0.0 || y != 0.0),
    };
    move |x: f64, y: f64| {
        if x.is_nan() || y.is_nan() {
            f64::NAN
        } else {
            finite(f(x, y))
        }
    }
}

fn compare_levels(op: BinaryOp, cat: &Evaluated, text: &Evaluated) -> Option<Evaluated> {
    let (Evaluated::Codes { codes, levels }, Evaluated::Text(t)) = (cat, text) else {
        return None;
    };
    let want = levels.iter().position(|l| l == t).map(|p| p as u32);
    let eq = op == BinaryOp::Eq;
    Some(Evaluated::Numbers(
        codes
            .iter()
            .map(|&c| {
                if c == MISSING_CODE {
                    f64::NAN
                } else {
                    f64::from((Some(c) == want) == eq)
                }
            })
            .collect(),
    ))
}

/// Apply `f` to every value, in place when the values are owned.
fn map(v: Cow<'_, [f64]>, f: impl Fn(f64) -> f64) -> Evaluated {
    Evaluated::Numbers(match v {
        Cow::Owned(mut v) => {
            for x in v.iter_mut() {
                *x = finite(f(*x));
            }
            v
        }
        Cow::Borrowed(v) => v.iter().map(|&x| finite(f(x))).collect(),
    })
}

fn finite(x: f64) -> f64 {
    if x.is_finite() {
        x
    } else {
        f64::NAN
    }
}

/// Mean and SD (n − 1) of the non-missing values; NaN when undefined.
pub fn mean_sd(x: &[f64]) -> (f64, f64) {
    let (mut n, mut sum) = (0usize, 0.0);
    for &v in x.iter().filter(|v| !v.is_nan()) {
        n += 1;
        sum += v;
    }
    if n == 0 {
        return (f64::NAN, f64::NAN);
    }
    let mean = sum / n as f64;
    let ss: f64 = x
        .iter()
        .filter(|v| !v.is_nan())
        .map(|v| (v - mean).powi(2))
        .sum();
    let sd = if n > 1 {
        (ss / (n - 1) as f64).sqrt()
    } else {
        f64::NAN
    };
    (mean, sd)
}

/// Categories from numeric codes, levels in ascending numeric order.
fn numbers_to_codes(x: &[f64]) -> Evaluated {
    let mut distinct: Vec<f64> = x.iter().copied().filter(|v| !v.is_nan()).collect();
    distinct.sort_unstable_by(f64::total_cmp);
    distinct.dedup();
    let codes = x
        .iter()
        .map(|v| {
            if v.is_nan() {
                MISSING_CODE
            } else {
                distinct
                    .binary_search_by(|d| d.total_cmp(v))
                    .map_or(MISSING_CODE, |p| p as u32)
            }
        })
        .collect();
    let levels = distinct.iter().map(|d| format_number(*d)).collect();
    Evaluated::Codes { codes, levels }
}

/// A number as a user would write it: no trailing `.0` for whole numbers.
pub fn format_number(x: f64) -> String {
    if x.fract() == 0.0 && x.abs() < 1e15 {
        format!("{}", x as i64)
    } else {
        format!("{x}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use frame::Column;
    use syntax::ast::BinaryOp;

    fn close(a: &[f64], b: &[f64]) -> bool {
        a.len() == b.len()
            && a.iter()
                .zip(b)
                .all(|(x, y)| (x.is_nan() && y.is_nan()) || (x - y).abs() < 1e-12)
    }

    /// Rows out of time order, a gap (unit A has no period 3) and a missing id.
    fn panel_frame() -> Frame {
        let nan = f64::NAN;
        Frame::from_columns(vec![
            Column::categorical(
                "unit",
                &[Some("A"), Some("A"), Some("B"), Some("A"), Some("B"), None],
            ),
            Column::numeric("t", vec![2.0, 1.0, 1.0, 4.0, 2.0, 1.0]),
            Column::numeric("x", vec![20.0, 10.0, 5.0, 40.0, 7.0, 1.0]),
            Column::numeric("m", vec![1.0, nan, 3.0, 5.0, 4.0, 2.0]),
        ])
    }

    #[test]
    fn lag_lead_and_diff_follow_time_within_unit_and_stop_at_gaps() {
        let f = panel_frame();
        let ev0 = Evaluator::new(&f, None);
        let panel = PanelIndex::new(
            ev0.group(0),
            f.columns()[1].as_numeric().unwrap().values.clone(),
        );
        let ev = Evaluator::new(&f, Some(&panel));
        let x = || Box::new(Value::Column(2));
        let nan = f64::NAN;
        // A: t1=10, t2=20, t4=40 (no t3); B: t1=5, t2=7.
        assert!(close(
            &ev.numbers(&Value::Shift {
                x: x(),
                k: 1,
                diff: false
            }),
            &[10.0, nan, nan, nan, 5.0, nan]
        ));
        assert!(close(
            &ev.numbers(&Value::Shift {
                x: x(),
                k: -1,
                diff: false
            }),
            &[nan, 20.0, 7.0, nan, nan, nan]
        ));
        assert!(close(
            &ev.numbers(&Value::Shift {
                x: x(),
                k: 2,
                diff: false
            }),
            &[nan, nan, nan, 20.0, nan, nan]
        ));
        assert!(close(
            &ev.numbers(&Value::Shift {
                x: x(),
                k: 1,
                diff: true
            }),
            &[10.0, nan, nan, nan, 2.0, nan]
        ));
        let (dups, n) = panel.duplicates(5);
        assert_eq!((dups.len(), n), (0, 0));
        assert_eq!(panel.gaps(), (1, Some(0)));
    }

    #[test]
    fn within_and_between_use_the_group_means_of_available_values() {
        let f = panel_frame();
        let ev = Evaluator::new(&f, None);
        let nan = f64::NAN;
        // m in A: 1, missing, 5 -> mean 3; in B: 3, 4 -> mean 3.5; the last row has no unit.
        let w = ev.numbers(&Value::Within(Box::new(Value::Column(3)), 0));
        assert!(close(&w, &[-2.0, nan, -0.5, 2.0, 0.5, nan]), "{w:?}");
        let b = ev.numbers(&Value::Between(Box::new(Value::Column(3)), 0));
        assert!(close(&b, &[3.0, nan, 3.5, 3.0, 3.5, nan]), "{b:?}");
    }

    #[test]
    fn the_estimation_sample_decides_group_means_and_centering() {
        let f = panel_frame();
        let sample = [true, true, true, false, true, true];
        let ev = Evaluator::with_sample(&f, None, &sample);
        let nan = f64::NAN;
        // Without row 4, unit A's mean of m is 1 (row 2 is missing), B's stays 3.5.
        let w = ev.numbers(&Value::Within(Box::new(Value::Column(3)), 0));
        assert!(close(&w, &[0.0, nan, -0.5, 4.0, 0.5, nan]), "{w:?}");
        let c = ev.numbers(&Value::Center(Box::new(Value::Column(2))));
        let mean_in_sample = (20.0 + 10.0 + 5.0 + 7.0 + 1.0) / 5.0;
        assert!((c[0] - (20.0 - mean_in_sample)).abs() < 1e-12);
    }

    #[test]
    fn arithmetic_marks_undefined_results_missing() {
        let f = panel_frame();
        let ev = Evaluator::new(&f, None);
        let div = Value::Binary(
            BinaryOp::Div,
            Box::new(Value::Column(2)),
            Box::new(Value::Number(0.0)),
        );
        assert!(ev.numbers(&div).iter().all(|v| v.is_nan()));
        let z = ev.numbers(&Value::Z(Box::new(Value::Column(2))));
        let (mean, sd) = mean_sd(&z);
        assert!(mean.abs() < 1e-12 && (sd - 1.0).abs() < 1e-12);
        let level = Value::Binary(
            BinaryOp::Eq,
            Box::new(Value::Column(0)),
            Box::new(Value::Text("B".into())),
        );
        assert!(close(
            &ev.numbers(&level),
            &[0.0, 0.0, 1.0, 0.0, 1.0, f64::NAN]
        ));
    }
}
