//! The statements that ask questions of fitted models: `probe`, `regions`,
//! `turning`, `effect`, `plot` and `compare`.

use std::path::{Path, PathBuf};

use syntax::ast::{AtKind, AtValue, Bootstrap, Ident, NumLit, StmtKind, Target};
use syntax::{named_value, NamedValue, Span};

use crate::context::Ctx;
use crate::diagnostic::{codes, Diagnostic};
use crate::model::{term_key, ResolvedModel};
use crate::suggest::nearest;
use crate::value::Ty;

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RequestKind {
    Probe,
    Regions,
    Turning,
    Effect,
    Plot,
}

/// A moderator value after `at`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum AtSpec {
    Number(f64),
    /// Mean plus this many SDs.
    Sd(f64),
    Mean,
    Min,
    Max,
    Percentile(u8),
}

#[derive(Clone, Debug, PartialEq)]
pub struct At {
    pub spec: AtSpec,
    /// As written, for tables: `-1sd`, `p90`, `2.5`.
    pub label: String,
}

/// A checked probing statement.
#[derive(Clone, Debug, PartialEq)]
pub struct Request {
    pub kind: RequestKind,
    /// Index into `Checked::models`.
    pub model: usize,
    pub focal: String,
    pub moderator: Option<String>,
    pub at: Vec<At>,
    pub alpha: f64,
    /// Draws and seed of a cluster bootstrap.
    pub bootstrap: Option<(u32, u64)>,
    /// The figure file of `plot`, resolved against the model file's folder.
    pub path: Option<PathBuf>,
    pub span: Span,
}

/// A checked `compare`: indexes into `Checked::models`, smallest first as written.
#[derive(Clone, Debug, PartialEq)]
pub struct Comparison {
    pub models: Vec<usize>,
    pub span: Span,
}

impl Ctx<'_> {
    pub fn check_request(
        &mut self,
        kind: &StmtKind,
        span: Span,
        models: &[ResolvedModel],
        base_dir: &Path,
    ) -> Option<Request> {
        let (rk, target, moderator, at, alpha, bootstrap, path) = match kind {
            StmtKind::Probe {
                target,
                moderator,
                at,
                bootstrap,
            } => (
                RequestKind::Probe,
                target,
                Some(moderator),
                at.as_slice(),
                None,
                bootstrap.as_ref(),
                None,
            ),
            StmtKind::Regions {
                target,
                moderator,
                alpha,
                bootstrap,
            } => (
                RequestKind::Regions,
                target,
                Some(moderator),
                &[][..],
                alpha.as_ref(),
                bootstrap.as_ref(),
                None,
            ),
            StmtKind::Turning {
                target,
                moderator,
                at,
                bootstrap,
            } => (
                RequestKind::Turning,
                target,
                moderator.as_ref(),
                at.as_slice(),
                None,
                bootstrap.as_ref(),
                None,
            ),
            StmtKind::Effect { target } => {
                (RequestKind::Effect, target, None, &[][..], None, None, None)
            }
            StmtKind::Plot {
                target,
                moderator,
                at,
                path,
            } => (
                RequestKind::Plot,
                target,
                moderator.as_ref(),
                at.as_slice(),
                None,
                None,
                Some(path),
            ),
            _ => return None,
        };
        let at = self.at_values(at);
        let alpha = self.alpha(alpha);
        let bootstrap = bootstrap.and_then(|b| self.bootstrap(b));
        let path = path.and_then(|p| self.figure_path(&p.value, p.span, base_dir));
        let mi = self.model_ref(&target.model, models)?;
        let m = &models[mi];
        self.focal_in_model(rk, target, moderator, m)?;
        if rk == RequestKind::Probe && at.is_empty() {
            return None;
        }
        Some(Request {
            kind: rk,
            model: mi,
            focal: target.focal.name.clone(),
            moderator: moderator.map(|w| w.name.clone()),
            at: at.into_iter().collect(),
            alpha: alpha.unwrap_or(0.05),
            bootstrap,
            path,
            span,
        })
    }

    pub fn check_compare(
        &mut self,
        names: &[Ident],
        span: Span,
        models: &[ResolvedModel],
    ) -> Option<Comparison> {
        let mut idx = Vec::new();
        for n in names {
            let i = self.model_ref(n, models)?;
            if idx.contains(&i) {
                let msg = format!(
                    "model `{}` is listed twice; compare two different models",
                    n.name
                );
                self.push(Diagnostic::error(codes::COMPARE, n.span, msg));
                return None;
            }
            idx.push(i);
        }
        if idx.len() < 2 {
            self.push(Diagnostic::error(
                codes::COMPARE,
                span,
                "`compare` needs at least two models: `compare base, full`",
            ));
            return None;
        }
        for w in idx.windows(2) {
            let (a, b) = (&models[w[0]], &models[w[1]]);
            let at = names[idx.iter().position(|i| *i == w[1]).unwrap_or(0)].span;
            let (oa, ob) = (
                a.outcome.as_ref().map(|o| &o.label),
                b.outcome.as_ref().map(|o| &o.label),
            );
            if oa != ob {
                let msg = format!(
                    "models `{}` and `{}` explain different outcomes (`{}` and `{}`), so they cannot be compared",
                    a.name,
                    b.name,
                    oa.map_or("?", |s| s.as_str()),
                    ob.map_or("?", |s| s.as_str())
                );
                self.push(Diagnostic::error(codes::COMPARE, at, msg));
                return None;
            }
            if a.kind != b.kind
                || a.fixed
                    .iter()
                    .map(|g| g.column)
                    .ne(b.fixed.iter().map(|g| g.column))
            {
                let msg = format!(
                    "models `{}` and `{}` are estimated differently ({} and {}, or different `fixed` groupings); a test of nested models needs the same kind and the same fixed effects",
                    a.name,
                    b.name,
                    a.kind.as_str(),
                    b.kind.as_str()
                );
                self.push(Diagnostic::error(codes::COMPARE, at, msg));
                return None;
            }
            let ka: Vec<_> = a.terms.iter().map(term_key).collect();
            let kb: Vec<_> = b.terms.iter().map(term_key).collect();
            let a_in_b = ka.iter().all(|k| kb.contains(k));
            let b_in_a = kb.iter().all(|k| ka.contains(k));
            if !a_in_b && !b_in_a {
                let msg = format!(
                    "models `{}` and `{}` are not nested: neither's terms are all in the other, so the test does not apply",
                    a.name, b.name
                );
                self.push(Diagnostic::warning(codes::COMPARE, at, msg));
            }
            if let (Some(ra), Some(rb)) = (&a.rows, &b.rows) {
                if ra.sample != rb.sample {
                    let msg = format!(
                        "models `{}` and `{}` use different rows ({} and {}); a comparison needs both fitted on the same rows, so give them the same `where` and missing values",
                        a.name,
                        b.name,
                        crate::context::count(ra.used),
                        crate::context::count(rb.used)
                    );
                    self.push(Diagnostic::warning(codes::COMPARE, at, msg));
                }
            }
        }
        Some(Comparison { models: idx, span })
    }

    fn model_ref(&mut self, id: &Ident, models: &[ResolvedModel]) -> Option<usize> {
        if let Some(i) = models.iter().position(|m| m.name == id.name) {
            return Some(i);
        }
        let names = models.iter().map(|m| m.name.as_str());
        let mut d;
        match nearest(&id.name, names) {
            Some(s) => {
                let msg = format!(
                    "no model named `{}` above this line; did you mean `{s}`?",
                    id.name
                );
                d = Diagnostic::error(codes::UNKNOWN_MODEL, id.span, msg);
                d = d.with_replacement(format!("Replace with `{s}`"), id.span, s);
            }
            None => {
                let known: Vec<String> = models.iter().map(|m| format!("`{}`", m.name)).collect();
                let msg = if known.is_empty() {
                    format!(
                        "no model named `{}`: define `model {} {{ ... }}` above this line",
                        id.name, id.name
                    )
                } else {
                    format!(
                        "no model named `{}` above this line (models: {})",
                        id.name,
                        known.join(", ")
                    )
                };
                d = Diagnostic::error(codes::UNKNOWN_MODEL, id.span, msg);
            }
        }
        self.push(d);
        None
    }

    /// The focal variable (and moderator) must enter the model in the way the statement needs.
    fn focal_in_model(
        &mut self,
        kind: RequestKind,
        target: &Target,
        moderator: Option<&Ident>,
        m: &ResolvedModel,
    ) -> Option<()> {
        let x = &target.focal.name;
        let powers = |t: &crate::model::ResolvedTerm, name: &str| -> u32 {
            t.factors
                .iter()
                .filter(|f| f.names.iter().any(|n| n == name))
                .map(|f| f.power)
                .sum()
        };
        if !m.terms.iter().any(|t| powers(t, x) > 0) {
            let names: Vec<&str> = m
                .terms
                .iter()
                .flat_map(|t| {
                    t.factors
                        .iter()
                        .flat_map(|f| f.names.iter().map(String::as_str))
                })
                .collect();
            if let Some(inside) = buried_in(m.terms.iter(), x) {
                let d = buried_diagnostic(codes::NOT_IN_MODEL, x, inside, m, target.focal.span);
                self.push(d);
                return None;
            }
            let mut msg = format!("`{x}` is not a term of model `{}`", m.name);
            let s = nearest(x, names.iter().copied());
            if let Some(s) = s {
                msg.push_str(&format!("; did you mean `{s}`?"));
            }
            let mut d = Diagnostic::error(codes::NOT_IN_MODEL, target.focal.span, msg);
            if let Some(s) = s {
                d = d.with_replacement(format!("Replace with `{s}`"), target.focal.span, s);
            }
            self.push(d);
            return None;
        }
        if kind == RequestKind::Turning
            && !m.terms.iter().any(|t| {
                powers(t, x) >= 2 && t.factors.iter().all(|f| f.names.iter().any(|n| n == x))
            })
        {
            let msg = format!(
                "`turning` needs a squared term of `{x}` in model `{}`, e.g. `{x} + {x}^2`; without it the effect has no turning point",
                m.name
            );
            self.push(Diagnostic::error(codes::NO_SQUARE, target.focal.span, msg));
            return None;
        }
        let Some(w) = moderator else { return Some(()) };
        let moderated = m
            .terms
            .iter()
            .any(|t| powers(t, x) > 0 && powers(t, &w.name) > 0);
        if !moderated {
            // `x * log(w + 1)`: w is there, but not in a form probing can move.
            let with_x = m.terms.iter().filter(|t| powers(t, x) > 0);
            if let Some(inside) = buried_in(with_x, &w.name) {
                let d = buried_diagnostic(codes::NO_INTERACTION, &w.name, inside, m, w.span);
                self.push(d);
                return None;
            }
            let what = if kind == RequestKind::Turning {
                format!("`{x}` or `{x}^2`")
            } else {
                format!("`{x}`")
            };
            let msg = format!(
                "`{}` does not moderate {what} in model `{}`: no term multiplies them (add `{x} * {}`)",
                w.name, m.name, w.name
            );
            self.push(Diagnostic::error(codes::NO_INTERACTION, w.span, msg));
            return None;
        }
        let categorical = m
            .terms
            .iter()
            .flat_map(|t| t.factors.iter())
            .any(|f| f.ty == Ty::Categorical && f.names.iter().any(|n| n == &w.name));
        if categorical {
            let msg = format!(
                "`{}` is categorical: its levels are not points on a scale, so probe each level with its own indicator instead of `across`",
                w.name
            );
            self.push(Diagnostic::error(codes::CATEGORICAL_MODERATOR, w.span, msg));
            return None;
        }
        Some(())
    }

    fn at_values(&mut self, at: &[AtValue]) -> Vec<At> {
        let mut out = Vec::new();
        for a in at {
            let label = self.label(a.span);
            let spec = match &a.kind {
                AtKind::Number(x) => Some(AtSpec::Number(*x)),
                AtKind::Sd(k) => Some(AtSpec::Sd(*k)),
                AtKind::Named(id) => match named_value(&id.name) {
                    Some(NamedValue::Mean) => Some(AtSpec::Mean),
                    Some(NamedValue::Min) => Some(AtSpec::Min),
                    Some(NamedValue::Max) => Some(AtSpec::Max),
                    Some(NamedValue::Percentile(p)) => Some(AtSpec::Percentile(p)),
                    None => {
                        let looks_like_percentile = id.name.starts_with('p')
                            && id.name[1..].bytes().all(|b| b.is_ascii_digit())
                            && id.name.len() > 1;
                        let msg = if looks_like_percentile {
                            format!(
                                "`{}` is not a percentile: they run from `p0` to `p100`",
                                id.name
                            )
                        } else {
                            format!(
                                "`{}` is not a moderator value; use a number, `mean`, `min`, `max`, a multiple of the SD such as `-1sd` or `+1sd`, or a percentile such as `p90`",
                                id.name
                            )
                        };
                        let mut d = Diagnostic::error(codes::BAD_VALUE, a.span, msg);
                        if let Some(s) = nearest(&id.name, ["mean", "min", "max"]) {
                            d = d.with_replacement(format!("Replace with `{s}`"), id.span, s);
                        }
                        self.push(d);
                        None
                    }
                },
            };
            if let Some(spec) = spec {
                out.push(At { spec, label });
            }
        }
        out
    }

    fn alpha(&mut self, alpha: Option<&NumLit>) -> Option<f64> {
        let a = alpha?;
        if a.value > 0.0 && a.value < 0.5 {
            return Some(a.value);
        }
        let msg = format!(
            "alpha {} is not a significance level; use a value between 0 and 0.5, such as 0.05",
            a.text
        );
        self.push(Diagnostic::error(codes::BAD_VALUE, a.span, msg));
        None
    }

    fn bootstrap(&mut self, b: &Bootstrap) -> Option<(u32, u64)> {
        let d = b.draws.value;
        let draws = if d >= 1.0 && d.fract() == 0.0 && d <= 1e7 {
            Some(d as u32)
        } else {
            let msg = format!(
                "`bootstrap {}` needs a whole number of draws of at least 1 (2000 is common practice for percentile intervals)",
                b.draws.text
            );
            self.push(Diagnostic::error(codes::BAD_VALUE, b.draws.span, msg));
            None
        };
        let seed = match &b.seed {
            None => Some(1),
            Some(s) if s.value >= 0.0 && s.value.fract() == 0.0 && s.value < 1.8e19 => {
                Some(s.value as u64)
            }
            Some(s) => {
                let msg = format!("`seed {}` needs a whole number of at least 0", s.text);
                self.push(Diagnostic::error(codes::BAD_VALUE, s.span, msg));
                None
            }
        };
        Some((draws?, seed?))
    }

    fn figure_path(&mut self, path: &str, span: Span, base_dir: &Path) -> Option<PathBuf> {
        if !path.to_ascii_lowercase().ends_with(".svg") {
            let msg = format!("figures are written as SVG; name the file `{path}.svg` or similar");
            self.push(Diagnostic::error(codes::BAD_VALUE, span, msg));
            return None;
        }
        let full = base_dir.join(path);
        let parent_ok = full
            .parent()
            .is_none_or(|p| p.as_os_str().is_empty() || p.is_dir());
        if !parent_ok {
            let msg = format!(
                "the folder of `{path}` does not exist (looked for {}); create it or change the path",
                full.parent().map(|p| p.display().to_string()).unwrap_or_default()
            );
            self.push(Diagnostic::error(codes::BAD_VALUE, span, msg));
            return None;
        }
        Some(full)
    }
}

/// The first factor of the model that mentions `name` inside an expression
/// a probe cannot follow (`log(digital + 1)`, `a / b`), by its label.
fn buried_in<'m>(
    terms: impl Iterator<Item = &'m crate::model::ResolvedTerm>,
    name: &str,
) -> Option<&'m str> {
    terms
        .flat_map(|t| t.factors.iter())
        .filter(|f| !f.names.iter().any(|n| n == name))
        .map(|f| f.label.as_str())
        .find(|label| {
            label
                .split(|c: char| !(c.is_alphanumeric() || c == '_' || c == '.'))
                .any(|word| word == name)
        })
}

fn buried_diagnostic(
    code: &'static str,
    name: &str,
    inside: &str,
    m: &ResolvedModel,
    span: Span,
) -> Diagnostic {
    let msg = format!(
        "`{name}` enters model `{}` only inside `{inside}`, and probing follows a variable only where it is a term itself or the whole argument of `log`, `sqrt`, `center` or `z`; name the expression with `let` (for example `let {} = {inside}`) and probe that name",
        m.name,
        suggested_name(name)
    );
    Diagnostic::error(code, span, msg)
}

/// A name for the expression in the suggestion: the variable's with a suffix.
fn suggested_name(name: &str) -> String {
    let base = name.trim_matches('`');
    format!("{base}_t")
}
