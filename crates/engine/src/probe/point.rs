//! The model seen from the focal variable X: every term's value and its
//! derivative with respect to X at a chosen point, as linear functions of the
//! coefficients.
//!
//! A term is a product of factors `f(v)^p`. A factor whose probe names contain X
//! is `f(X)^p` with `f` the identity, `log`, `sqrt`, or the affine `center`/`z`
//! (mean and SD over the estimation sample, as the design used); it is
//! differentiated exactly by forward-mode dual numbers (value, d/dX). A factor
//! naming the moderator W takes the requested value of W; any other factor is
//! held at the estimation-sample mean of its name (then transformed), or at the
//! mean of its own value when it names nothing (a compound expression).
//!
//! Terms that involve neither X nor W, and categorical terms without X, do not
//! change with the point: their derivative is zero and their value is their
//! column mean. A categorical term that contains X is refused: the effect of X
//! then differs by level and has to be probed level by level.

use check::{mean_sd, Evaluator, PanelIndex, ResolvedFactor, ResolvedModel, Ty, Value};
use frame::Frame;

use crate::ModelFit;

/// The inner function of a factor of X or W.
#[derive(Clone, Copy, Debug)]
enum Transform {
    Identity,
    Log,
    Sqrt,
    /// `(v − shift) / scale`: `center` (scale 1) and `z`.
    Affine {
        shift: f64,
        scale: f64,
    },
}

impl Transform {
    /// Value and first derivative at `v`.
    fn dual(self, v: f64) -> (f64, f64) {
        match self {
            Transform::Identity => (v, 1.0),
            Transform::Log => (v.ln(), 1.0 / v),
            Transform::Sqrt => {
                let s = v.sqrt();
                (s, 0.5 / s)
            }
            Transform::Affine { shift, scale } => ((v - shift) / scale, 1.0 / scale),
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Role {
    Focal,
    Moderator,
    Held,
}

struct FactorPoint {
    role: Role,
    transform: Transform,
    power: u32,
    /// The base value (after the transform) at the held point; used for `Held`.
    held: f64,
    /// Per estimation-sample row: the name's value for `Focal` and `Moderator`
    /// (before the transform), the factor's base value for `Held`.
    rows: Vec<f64>,
}

impl FactorPoint {
    /// (value, d/dX) of `base^power` given the point's X and W.
    fn dual(&self, x: f64, w: f64) -> (f64, f64) {
        let (b, db) = match self.role {
            Role::Focal => self.transform.dual(x),
            Role::Moderator => (self.transform.dual(w).0, 0.0),
            Role::Held => (self.held, 0.0),
        };
        power(b, db, self.power)
    }

    /// The same at row `r` of the sample, with every variable at its own value.
    fn dual_row(&self, r: usize) -> (f64, f64) {
        let v = self.rows[r];
        let (b, db) = match self.role {
            Role::Focal => self.transform.dual(v),
            Role::Moderator => (self.transform.dual(v).0, 0.0),
            Role::Held => (v, 0.0),
        };
        power(b, db, self.power)
    }
}

fn power(b: f64, db: f64, p: u32) -> (f64, f64) {
    match p {
        0 => (1.0, 0.0),
        1 => (b, db),
        _ => (b.powi(p as i32), p as f64 * b.powi(p as i32 - 1) * db),
    }
}

/// A numeric term that involves X or W.
struct TermPoint {
    factors: Vec<FactorPoint>,
    /// Mean of the term over the estimation sample.
    mean: f64,
}

impl TermPoint {
    fn dual(&self, x: f64, w: f64) -> (f64, f64) {
        self.factors.iter().fold((1.0, 0.0), |(v, d), f| {
            let (fv, fd) = f.dual(x, w);
            (v * fv, v * fd + d * fv)
        })
    }

    fn dual_row(&self, r: usize) -> (f64, f64) {
        self.factors.iter().fold((1.0, 0.0), |(v, d), f| {
            let (fv, fd) = f.dual_row(r);
            (v * fv, v * fd + d * fv)
        })
    }
}

/// What one coefficient of the fit is, seen from X.
enum Column {
    Intercept,
    Term(usize),
    /// Does not change with the point: held at its column mean.
    Other {
        mean: f64,
    },
}

/// The fitted model seen from one focal variable (and moderator).
pub(crate) struct Focal {
    pub focal: String,
    pub moderator: Option<String>,
    pub outcome: String,
    columns: Vec<Column>,
    terms: Vec<TermPoint>,
    intercept: bool,
    y_mean: f64,
    /// X over the estimation sample rows.
    pub x_rows: Vec<f64>,
    pub x_mean: f64,
    /// W over the estimation sample rows, when there is a moderator.
    pub w_rows: Option<Vec<f64>>,
    /// Frame rows of the estimation sample.
    pub rows: Vec<usize>,
    /// Names held fixed and their values (before any transform).
    pub held_at: Vec<(String, f64)>,
}

impl Focal {
    pub fn new(
        model: &ResolvedModel,
        fit: &ModelFit,
        frame: &Frame,
        panel: Option<&PanelIndex>,
        x: &str,
        w: Option<&str>,
    ) -> Result<Focal, String> {
        if model.kind == check::Kind::Mixed {
            return Err("mixed models cannot be probed by this version yet".into());
        }
        let rows = fit.design.rows.clone();
        let mut mask = vec![false; frame.n_rows()];
        for &r in &rows {
            mask[r] = true;
        }
        let ev = Evaluator::with_sample(frame, panel, &mask);
        let over = |v: Vec<f64>| -> Vec<f64> { rows.iter().map(|&r| v[r]).collect() };
        let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;

        let mut x_rows = None;
        let mut w_rows = None;
        let mut held_at: Vec<(String, f64)> = Vec::new();
        let mut terms = Vec::new();
        let mut term_slot = vec![None; model.terms.len()];
        for (ti, term) in model.terms.iter().enumerate() {
            let has = |name: &str| {
                term.factors
                    .iter()
                    .any(|f| f.names.iter().any(|n| n == name))
            };
            let has_x = has(x);
            let has_w = w.is_some_and(has);
            if term.categorical {
                if has_x {
                    return Err(format!(
                        "`{x}` enters the term `{}` together with a categorical factor, so its effect differs by level; probe it within each level instead",
                        term.label
                    ));
                }
                continue;
            }
            if !has_x && !has_w {
                continue;
            }
            let mut factors = Vec::new();
            for f in &term.factors {
                let role = if f.names.iter().any(|n| n == x) {
                    Role::Focal
                } else if w.is_some_and(|w| f.names.iter().any(|n| n == w)) {
                    Role::Moderator
                } else {
                    Role::Held
                };
                let fp = match role {
                    Role::Focal | Role::Moderator => {
                        let name = if role == Role::Focal {
                            x
                        } else {
                            w.unwrap_or("")
                        };
                        let (inner, transform) = inner_of(f, name, &ev, &rows)?;
                        let values = over(ev.numbers(inner));
                        let slot = if role == Role::Focal {
                            &mut x_rows
                        } else {
                            &mut w_rows
                        };
                        if slot.is_none() {
                            *slot = Some(values.clone());
                        }
                        FactorPoint {
                            role,
                            transform,
                            power: f.power,
                            held: f64::NAN,
                            rows: values,
                        }
                    }
                    Role::Held => {
                        let base = over(ev.numbers(&f.value));
                        let held = match f.names.first() {
                            Some(name) => {
                                let (inner, transform) = inner_of(f, name, &ev, &rows)?;
                                let m = mean(&over(ev.numbers(inner)));
                                push_held(&mut held_at, name, m);
                                transform.dual(m).0
                            }
                            None => {
                                let m = mean(&base);
                                push_held(&mut held_at, &f.label, m);
                                m
                            }
                        };
                        FactorPoint {
                            role,
                            transform: Transform::Identity,
                            power: f.power,
                            held,
                            rows: base,
                        }
                    }
                };
                if f.ty == Ty::Categorical {
                    return Err(format!(
                        "`{}` is categorical and cannot be evaluated at a point",
                        f.label
                    ));
                }
                factors.push(fp);
            }
            let mut tp = TermPoint { factors, mean: 0.0 };
            tp.mean = (0..rows.len()).map(|r| tp.dual_row(r).0).sum::<f64>() / rows.len() as f64;
            term_slot[ti] = Some(terms.len());
            terms.push(tp);
        }
        let x_rows =
            x_rows.ok_or_else(|| format!("`{x}` is not in a numeric term of the model"))?;
        if let Some(w) = w {
            if w_rows.is_none() {
                return Err(format!("`{w}` is not in a numeric term of the model"));
            }
        }

        let columns: Vec<Column> = fit
            .design
            .term_of
            .iter()
            .enumerate()
            .map(|(j, t)| match t {
                None => Column::Intercept,
                Some(ti) => match term_slot.get(*ti).copied().flatten() {
                    Some(slot) => Column::Term(slot),
                    None => Column::Other {
                        // Least-squares fits keep the raw columns; within fits only use
                        // deviations, where a held column contributes nothing.
                        mean: if fit.design.intercept {
                            mean(&fit.design.columns[j])
                        } else {
                            0.0
                        },
                    },
                },
            })
            .collect();
        let focal_left = columns.iter().any(|c| match c {
            Column::Term(s) => terms[*s].factors.iter().any(|f| f.role == Role::Focal),
            _ => false,
        });
        if !focal_left {
            return Err(format!(
                "no coefficient of `{x}` is left in the fit (its terms were absorbed by the fixed effects)"
            ));
        }
        let y_mean = match &model.outcome {
            Some(o) => mean(&over(ev.numbers(&o.value))),
            None => f64::NAN,
        };
        let x_mean = mean_sd(&x_rows).0;
        Ok(Focal {
            focal: x.to_string(),
            moderator: w.map(str::to_string),
            outcome: fit.outcome.clone(),
            columns,
            terms,
            intercept: fit.design.intercept,
            y_mean,
            x_rows,
            x_mean,
            w_rows,
            rows,
            held_at,
        })
    }

    /// Gradient in the coefficients of ∂ŷ/∂X at (x, w).
    pub fn slope(&self, x: f64, w: f64) -> Vec<f64> {
        self.columns
            .iter()
            .map(|c| match c {
                Column::Term(s) => self.terms[*s].dual(x, w).1,
                _ => 0.0,
            })
            .collect()
    }

    /// The fitted outcome at (x, w) as `offset + g · b`.
    ///
    /// ŷ = ȳ + Σ b_k (term_k(point) − mean term_k), which holds under fixed
    /// effects too. With an intercept it equals b₀ + Σ b_k term_k(point) exactly
    /// (least squares passes through the means), and that form is used so the
    /// band includes the intercept's variance: the usual band of the mean.
    pub fn level(&self, x: f64, w: f64) -> (f64, Vec<f64>) {
        let g = self
            .columns
            .iter()
            .map(|c| match (c, self.intercept) {
                (Column::Intercept, _) => 1.0,
                (Column::Term(s), true) => self.terms[*s].dual(x, w).0,
                (Column::Term(s), false) => self.terms[*s].dual(x, w).0 - self.terms[*s].mean,
                (Column::Other { mean }, true) => *mean,
                (Column::Other { .. }, false) => 0.0,
            })
            .collect();
        let offset = if self.intercept { 0.0 } else { self.y_mean };
        (offset, g)
    }

    /// Gradient of the average over the sample rows of each row's ∂ŷ/∂X, every
    /// variable at the row's own value. One pass per term, no allocation per row.
    pub fn average_slope(&self) -> Vec<f64> {
        let n = self.rows.len() as f64;
        let per_term: Vec<f64> = self
            .terms
            .iter()
            .map(|t| (0..self.rows.len()).map(|r| t.dual_row(r).1).sum::<f64>() / n)
            .collect();
        self.columns
            .iter()
            .map(|c| match c {
                Column::Term(s) => per_term[*s],
                _ => 0.0,
            })
            .collect()
    }

    pub fn x_range(&self) -> (f64, f64) {
        range(&self.x_rows)
    }
}

pub(crate) fn range(v: &[f64]) -> (f64, f64) {
    v.iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        })
}

fn push_held(held: &mut Vec<(String, f64)>, name: &str, value: f64) {
    if !held.iter().any(|(n, _)| n == name) {
        held.push((name.to_string(), value));
    }
}

/// The expression of the probe name inside a factor, and the factor's function of it.
fn inner_of<'v>(
    f: &'v ResolvedFactor,
    name: &str,
    ev: &Evaluator<'_>,
    rows: &[usize],
) -> Result<(&'v Value, Transform), String> {
    if f.label == name {
        return Ok((&f.value, Transform::Identity));
    }
    let stats = |inner: &Value| {
        let v = ev.numbers(inner);
        let over: Vec<f64> = rows.iter().map(|&r| v[r]).collect();
        mean_sd(&over)
    };
    match &f.value {
        Value::Log(inner) => Ok((inner, Transform::Log)),
        Value::Sqrt(inner) => Ok((inner, Transform::Sqrt)),
        Value::Center(inner) => Ok((
            inner,
            Transform::Affine {
                shift: stats(inner).0,
                scale: 1.0,
            },
        )),
        Value::Z(inner) => {
            let (m, sd) = stats(inner);
            Ok((inner, Transform::Affine { shift: m, scale: sd }))
        }
        _ => Err(format!(
            "`{}` is not a function of `{name}` that can be differentiated (the identity, `log`, `sqrt`, `center` or `z`)",
            f.label
        )),
    }
}
