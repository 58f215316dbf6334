//! Checking one `model { ... }` block and resolving it for the engine.

use std::collections::BTreeMap;
use std::sync::Arc;

use frame::Mask;

use syntax::ast::{Atom, Expr, ExprKind, Factor, Ident, Model, ModelStmtKind, Term, VaryEffect};
use syntax::Span;

use crate::context::{count, Ctx};
use crate::diagnostic::{codes, Diagnostic, Edit};
use crate::facts::Sample;
use crate::resolve::{plural, quote_name};
use crate::suggest::nearest;
use crate::value::{Ty, Value};

/// How the model is estimated, decided by its statements.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    /// No `fixed`, no `vary`.
    Ols,
    /// `fixed`: the within transform sweeps out the groupings.
    Within,
    /// `vary`: random intercepts and slopes.
    Mixed,
}

impl Kind {
    pub fn as_str(self) -> &'static str {
        match self {
            Kind::Ols => "ols",
            Kind::Within => "within",
            Kind::Mixed => "mixed",
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ErrorsKind {
    Classical,
    Hc1,
    Hc3,
    Cluster,
}

impl ErrorsKind {
    pub fn as_str(self) -> &'static str {
        match self {
            ErrorsKind::Classical => "classical",
            ErrorsKind::Hc1 => "hc1",
            ErrorsKind::Hc3 => "hc3",
            ErrorsKind::Cluster => "cluster",
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Method {
    Reml,
    Ml,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum DfMethod {
    Residual,
    Satterthwaite,
}

/// A grouping column named in the model.
#[derive(Clone, Debug, PartialEq)]
pub struct Grouping {
    pub name: String,
    pub column: usize,
    pub span: Span,
}

/// One `vary ... by G` line.
#[derive(Clone, Debug, PartialEq)]
pub struct RandomEffects {
    pub group: Grouping,
    pub intercept: bool,
    pub slopes: Vec<ResolvedTerm>,
}

/// A model with every name resolved, ready for the engine.
#[derive(Clone, Debug, PartialEq)]
pub struct ResolvedModel {
    pub name: String,
    pub name_span: Span,
    pub span: Span,
    pub kind: Kind,
    pub outcome: Option<ResolvedFactor>,
    pub terms: Vec<ResolvedTerm>,
    pub fixed: Vec<Grouping>,
    pub random: Vec<RandomEffects>,
    pub errors: ErrorsKind,
    /// The grouping(s) of `errors cluster G[, H]`.
    pub cluster: Vec<Grouping>,
    pub estimate: Method,
    pub df: DfMethod,
    /// Conditions of the top-level and the model's own `where`; all must hold.
    pub filters: Vec<Value>,
    /// Rows used and lost; `None` until the data's values are loaded.
    pub rows: Option<RowAccount>,
    /// False when an error was reported inside the model: the engine must not fit it.
    pub valid: bool,
}

/// One term of the right-hand side.
#[derive(Clone, Debug, PartialEq)]
pub struct ResolvedTerm {
    /// The term's source text without whitespace: `remote_w*meetings`.
    pub label: String,
    pub span: Span,
    pub factors: Vec<ResolvedFactor>,
    /// Whether a factor is categorical (indicator coded).
    pub categorical: bool,
    /// The groupings (declared, panel, fixed, vary, cluster) within which the term varies.
    pub varies_within: Vec<String>,
    /// The `fixed` groupings that absorb it (it does not vary within them).
    pub absorbed_by: Vec<String>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct ResolvedFactor {
    /// Label of the base without the power: `suppliers`, `log(staff)`.
    pub label: String,
    pub value: Value,
    pub ty: Ty,
    pub power: u32,
    /// Names a probe can refer to: the name itself, or the name inside a
    /// smooth transform (`log(staff)` offers `staff`).
    pub names: Vec<String>,
    pub span: Span,
}

/// What happened to the rows of the data in one model.
#[derive(Clone, Debug, PartialEq)]
pub struct RowAccount {
    pub total: usize,
    pub excluded_by_where: usize,
    /// Rows kept by `where` but dropped for a missing value in some variable.
    pub dropped_missing: usize,
    /// For each variable (term factor, outcome or grouping label) the rows it is missing in.
    pub missing_by: Vec<(String, usize)>,
    pub used: usize,
    /// The rows of the data in the estimation sample (set = used). Shared by
    /// the models that use the same rows.
    pub sample: Arc<Mask>,
}

#[derive(Default)]
struct Body<'m> {
    formula: Option<(&'m Expr, &'m [Term], Span)>,
    fixed: Option<(&'m [Ident], Span)>,
    vary: Vec<(&'m [VaryEffect], &'m Ident, Span)>,
    errors: Option<(&'m Ident, &'m [Ident], Span)>,
    estimate: Option<(&'m Ident, Span)>,
    df: Option<(&'m Ident, Span)>,
    wheres: Vec<&'m Expr>,
}

impl Ctx<'_> {
    pub fn check_model(
        &mut self,
        model: &Model,
        top_filters: &[Value],
        structure: &[usize],
    ) -> ResolvedModel {
        let errors_before = self.error_count();
        let body = self.collect_body(model);
        let kind = match (body.fixed.is_some(), !body.vary.is_empty()) {
            (true, true) => {
                let span = body.fixed.map(|f| f.1).unwrap_or(model.name.span);
                self.push(Diagnostic::error(
                    codes::FIXED_AND_VARY,
                    span,
                    "a model either sweeps groupings out with `fixed` or gives them random effects with `vary`, not both",
                ));
                Kind::Within
            }
            (true, false) => Kind::Within,
            (false, true) => Kind::Mixed,
            (false, false) => Kind::Ols,
        };

        let mut outcome = None;
        let mut terms = Vec::new();
        match body.formula {
            None => {
                let msg = format!(
                    "model `{}` has no outcome: add a line such as `focus = remote_days + meetings`",
                    model.name.name
                );
                self.push(Diagnostic::error(codes::NO_OUTCOME, model.name.span, msg));
            }
            Some((out, rhs, _)) => {
                outcome = self.resolve_outcome(out);
                for t in rhs {
                    if let Some(rt) = self.resolve_term(t) {
                        terms.push(rt);
                    }
                }
            }
        }
        self.duplicate_terms(&terms);

        let fixed = body
            .fixed
            .map(|(ids, _)| self.groupings(ids))
            .unwrap_or_default();
        let mut random = Vec::new();
        for (effects, by, _) in &body.vary {
            let Some(col) = self.resolve_grouping(by) else {
                continue;
            };
            let mut intercept = false;
            let mut slopes = Vec::new();
            for e in effects.iter() {
                match e {
                    VaryEffect::Intercept(_) => intercept = true,
                    VaryEffect::Term(t) => {
                        if let Some(rt) = self.resolve_term(t) {
                            slopes.push(rt);
                        }
                    }
                }
            }
            random.push(RandomEffects {
                group: Grouping {
                    name: by.name.clone(),
                    column: col,
                    span: by.span,
                },
                intercept,
                slopes,
            });
        }
        let (errors, cluster) = self.errors_option(body.errors, kind);
        let estimate = self.estimate_option(body.estimate, kind);
        let df = self.df_option(body.df, kind);

        let mut filters = top_filters.to_vec();
        for w in &body.wheres {
            if let Some(v) = self.check_where(w) {
                filters.push(v);
            }
        }

        let mut resolved = ResolvedModel {
            name: model.name.name.clone(),
            name_span: model.name.span,
            span: model.span,
            kind,
            outcome,
            terms,
            fixed,
            random,
            errors,
            cluster,
            estimate,
            df,
            filters,
            rows: None,
            valid: true,
        };
        if self.values().is_some() && self.error_count() == errors_before {
            if let Some(sample) = self.check_rows(&mut resolved) {
                if sample.rows.count() > 0 {
                    self.check_variation(
                        &mut resolved,
                        &sample,
                        structure,
                        body.formula.map(|f| f.1),
                    );
                }
            }
        }
        resolved.valid = self.error_count() == errors_before;
        resolved
    }

    pub fn error_count(&self) -> usize {
        self.diags
            .iter()
            .filter(|d| d.severity == crate::Severity::Error)
            .count()
    }

    fn collect_body<'m>(&mut self, model: &'m Model) -> Body<'m> {
        let mut body = Body::default();
        for stmt in &model.body {
            let span = stmt.span;
            let repeated = |ctx: &mut Self, what: &str| {
                let msg = format!(
                    "`{what}` is given twice in model `{}`; keep one",
                    model.name.name
                );
                ctx.push(Diagnostic::error(codes::REPEATED_OPTION, span, msg));
            };
            match &stmt.kind {
                ModelStmtKind::Formula { outcome, terms } => {
                    if body.formula.is_some() {
                        let msg = format!(
                            "model `{}` already has an outcome; a model has exactly one `OUTCOME = TERMS` line (put a second outcome in its own model)",
                            model.name.name
                        );
                        self.push(Diagnostic::error(codes::SECOND_OUTCOME, span, msg));
                    } else {
                        body.formula = Some((outcome, terms, span));
                    }
                }
                ModelStmtKind::Fixed { groups } => {
                    if body.fixed.is_some() {
                        repeated(self, "fixed");
                    } else {
                        body.fixed = Some((groups, span));
                    }
                }
                ModelStmtKind::Vary { effects, by } => body.vary.push((effects, by, span)),
                ModelStmtKind::Errors { kind, groups } => {
                    if body.errors.is_some() {
                        repeated(self, "errors");
                    } else {
                        body.errors = Some((kind, groups, span));
                    }
                }
                ModelStmtKind::Estimate { method } => {
                    if body.estimate.is_some() {
                        repeated(self, "estimate");
                    } else {
                        body.estimate = Some((method, span));
                    }
                }
                ModelStmtKind::Df { method } => {
                    if body.df.is_some() {
                        repeated(self, "df");
                    } else {
                        body.df = Some((method, span));
                    }
                }
                ModelStmtKind::Where { cond } => body.wheres.push(cond),
                ModelStmtKind::Error => {}
            }
        }
        // Two `vary` lines for one grouping would estimate one variance twice.
        for i in 0..body.vary.len() {
            for j in 0..i {
                if body.vary[i].1.name == body.vary[j].1.name {
                    let msg = format!(
                        "random effects across `{}` are already declared; list all of them on one `vary ... by {}` line",
                        body.vary[i].1.name, body.vary[i].1.name
                    );
                    self.push(Diagnostic::error(
                        codes::REPEATED_OPTION,
                        body.vary[i].2,
                        msg,
                    ));
                }
            }
        }
        body
    }

    fn groupings(&mut self, ids: &[Ident]) -> Vec<Grouping> {
        ids.iter()
            .filter_map(|id| {
                self.resolve_grouping(id).map(|column| Grouping {
                    name: id.name.clone(),
                    column,
                    span: id.span,
                })
            })
            .collect()
    }

    fn resolve_outcome(&mut self, out: &Expr) -> Option<ResolvedFactor> {
        let r = self.resolve_expr(out);
        if r.ty == Ty::Categorical {
            // A stray text value deserves its own message; a text column as outcome another.
            let d = self.text_as_number(r.value.as_ref(), out.span);
            let plain_text = !d.message.contains("holds text at line");
            let d = if plain_text {
                Diagnostic::error(
                    codes::TEXT_AS_NUMBER,
                    out.span,
                    format!(
                        "the outcome `{}` holds text, but the models here need a numeric outcome",
                        self.slice(out.span)
                    ),
                )
            } else {
                d
            };
            self.push(d);
            return None;
        }
        let value = self.require_number(&r, out.span)?;
        Some(ResolvedFactor {
            label: self.label(out.span),
            value,
            ty: Ty::Number,
            power: 1,
            names: expr_names(out),
            span: out.span,
        })
    }

    pub fn resolve_term(&mut self, term: &Term) -> Option<ResolvedTerm> {
        let mut factors = Vec::new();
        let mut ok = true;
        for f in &term.factors {
            match self.resolve_factor(f) {
                Some(rf) => factors.push(rf),
                None => ok = false,
            }
        }
        if !ok {
            return None;
        }
        let categorical = factors.iter().any(|f| f.ty == Ty::Categorical);
        Some(ResolvedTerm {
            label: self.label(term.span),
            span: term.span,
            factors,
            categorical,
            varies_within: Vec::new(),
            absorbed_by: Vec::new(),
        })
    }

    fn resolve_factor(&mut self, f: &Factor) -> Option<ResolvedFactor> {
        let (r, base_span, names) = match &f.base {
            Atom::Name(id) => (self.resolve_name(id), id.span, vec![id.name.clone()]),
            Atom::Call(call) => {
                let names = match (call.func.name.as_str(), call.args.first().map(|a| &a.kind)) {
                    ("log" | "sqrt" | "center" | "z", Some(ExprKind::Name(id))) => {
                        vec![id.name.clone()]
                    }
                    _ => Vec::new(),
                };
                (self.resolve_call(call), call.span, names)
            }
        };
        let value = r.value.clone()?;
        let power = f.power.map_or(1, |p| p.0);
        let ty = match r.ty {
            Ty::Logical => Ty::Number,
            Ty::Text => {
                self.push(Diagnostic::error(
                    codes::TEXT_AS_NUMBER,
                    base_span,
                    "a string cannot be a term; name a column or a `let` instead",
                ));
                return None;
            }
            other => other,
        };
        if ty == Ty::Categorical && power > 1 {
            let d = self.text_as_number(Some(&value), base_span);
            self.push(d);
            return None;
        }
        Some(ResolvedFactor {
            label: self.label(base_span),
            value,
            ty,
            power,
            names,
            span: f.span,
        })
    }

    fn duplicate_terms(&mut self, terms: &[ResolvedTerm]) {
        for (i, t) in terms.iter().enumerate() {
            if terms[..i].iter().any(|u| term_key(u) == term_key(t)) {
                let msg = format!(
                    "the term `{}` appears twice; a term can enter a model once",
                    t.label
                );
                self.push(Diagnostic::warning(codes::DUPLICATE_TERM, t.span, msg));
            }
        }
    }

    fn errors_option(
        &mut self,
        opt: Option<(&Ident, &[Ident], Span)>,
        kind: Kind,
    ) -> (ErrorsKind, Vec<Grouping>) {
        let Some((word, groups, span)) = opt else {
            return (ErrorsKind::Classical, Vec::new());
        };
        if kind == Kind::Mixed {
            self.push(Diagnostic::warning(
                codes::OPTION_NOT_APPLICABLE,
                span,
                "`errors` applies to ols and within models; a mixed model's standard errors come from its variance components, so this line is ignored",
            ));
        }
        let e = match word.name.as_str() {
            "classical" => ErrorsKind::Classical,
            "hc1" => ErrorsKind::Hc1,
            "hc3" => ErrorsKind::Hc3,
            "cluster" => ErrorsKind::Cluster,
            other => {
                self.unknown_option(
                    word,
                    other,
                    "standard errors",
                    &["classical", "hc1", "hc3", "cluster"],
                );
                return (ErrorsKind::Classical, Vec::new());
            }
        };
        if e == ErrorsKind::Cluster {
            if groups.is_empty() || groups.len() > 2 {
                let msg = "`errors cluster` names one or two grouping columns: `errors cluster firm` or `errors cluster firm, year`";
                self.push(Diagnostic::error(codes::BAD_ARGUMENT, span, msg));
                return (e, Vec::new());
            }
            return (e, self.groupings(groups));
        }
        if let Some(g) = groups.first() {
            let msg = format!(
                "`errors {}` takes no grouping; to cluster write `errors cluster {}`",
                word.name, g.name
            );
            self.push(Diagnostic::error(codes::BAD_ARGUMENT, g.span, msg));
        }
        (e, Vec::new())
    }

    fn estimate_option(&mut self, opt: Option<(&Ident, Span)>, kind: Kind) -> Method {
        let Some((word, span)) = opt else {
            return Method::Reml;
        };
        if kind != Kind::Mixed {
            self.push(Diagnostic::warning(
                codes::OPTION_NOT_APPLICABLE,
                span,
                "`estimate` chooses between REML and ML for mixed models (with `vary`); this model is fitted by least squares, so the line is ignored",
            ));
        }
        match word.name.as_str() {
            "reml" => Method::Reml,
            "ml" => Method::Ml,
            other => {
                self.unknown_option(word, other, "estimation method", &["reml", "ml"]);
                Method::Reml
            }
        }
    }

    fn df_option(&mut self, opt: Option<(&Ident, Span)>, kind: Kind) -> DfMethod {
        let default = if kind == Kind::Mixed {
            DfMethod::Satterthwaite
        } else {
            DfMethod::Residual
        };
        let Some((word, span)) = opt else {
            return default;
        };
        let m = match word.name.as_str() {
            "satterthwaite" => DfMethod::Satterthwaite,
            "residual" => DfMethod::Residual,
            other => {
                self.unknown_option(word, other, "df method", &["satterthwaite", "residual"]);
                return default;
            }
        };
        if m == DfMethod::Satterthwaite && kind != Kind::Mixed {
            self.push(Diagnostic::warning(
                codes::OPTION_NOT_APPLICABLE,
                span,
                "Satterthwaite df apply to mixed models (with `vary`); this model uses residual df (or clusters − 1 when clustered)",
            ));
            return DfMethod::Residual;
        }
        m
    }

    fn unknown_option(&mut self, word: &Ident, given: &str, what: &str, allowed: &[&str]) {
        let mut msg = format!(
            "unknown {what} `{given}`; choose one of {}",
            allowed.join(", ")
        );
        let s = nearest(given, allowed.iter().copied());
        if let Some(s) = s {
            msg = format!(
                "unknown {what} `{given}`; did you mean `{s}`? (choices: {})",
                allowed.join(", ")
            );
        }
        let mut d = Diagnostic::error(codes::UNKNOWN_OPTION, word.span, msg);
        if let Some(s) = s {
            d = d.with_replacement(format!("Replace with `{s}`"), word.span, s);
        }
        self.push(d);
    }

    /// Apply `where` and listwise deletion; record what was lost and why.
    /// Returns the estimation sample (`None` without the data's values).
    fn check_rows(&mut self, m: &mut ResolvedModel) -> Option<Sample> {
        let (ev, facts, panel) = self.facts()?;
        let n = ev.n();
        let mut keep = Mask::full(n);
        for f in &m.filters {
            if let Some(k) = facts.kept(&ev, panel, f) {
                keep.and_assign(&k);
            }
        }
        let after_where = keep.count();
        let mut vars: Vec<(String, Value, Span)> = Vec::new();
        if let Some(o) = &m.outcome {
            vars.push((o.label.clone(), o.value.clone(), o.span));
        }
        let all_terms = m
            .terms
            .iter()
            .chain(m.random.iter().flat_map(|r| r.slopes.iter()));
        for t in all_terms {
            for f in &t.factors {
                if !vars.iter().any(|(l, _, _)| l == &f.label) {
                    vars.push((f.label.clone(), f.value.clone(), f.span));
                }
            }
        }
        let groupings = m
            .fixed
            .iter()
            .chain(m.cluster.iter())
            .chain(m.random.iter().map(|r| &r.group));
        for g in groupings {
            if !vars.iter().any(|(l, _, _)| l == &g.name) {
                vars.push((g.name.clone(), Value::Column(g.column), g.span));
            }
        }
        let mut sample = keep.clone();
        let mut missing_by = Vec::new();
        let mut empty = Vec::new();
        for (label, value, span) in &vars {
            let Some(missing) = facts.missing(&ev, panel, value) else {
                continue;
            };
            let c = keep.count_and(&missing);
            sample.and_not_assign(&missing);
            if c > 0 {
                missing_by.push((label.clone(), c));
            }
            if c > 0 && c == after_where {
                empty.push((label.clone(), *span));
            }
        }
        for (label, span) in &empty {
            let msg = format!(
                "`{label}` is missing in every row{} of the data, so model `{}` cannot use it",
                if after_where < n {
                    " kept by `where`"
                } else {
                    ""
                },
                m.name
            );
            self.push(Diagnostic::error(codes::ALL_MISSING, *span, msg));
        }
        let used = sample.count();
        let sample = facts.sample(sample);
        let rows = RowAccount {
            total: n,
            excluded_by_where: n - after_where,
            dropped_missing: after_where - used,
            missing_by,
            used,
            sample: sample.rows.clone(),
        };
        if n > 0 && after_where == 0 {
            let msg = format!(
                "`where` keeps none of the {} rows, so model `{}` has no data",
                count(n),
                m.name
            );
            self.push(Diagnostic::error(codes::NO_ROWS, m.name_span, msg));
        } else if n > 0 && used == 0 && empty.is_empty() {
            let msg = format!(
                "model `{}` has no complete rows: every row misses a value in {}",
                m.name,
                rows.missing_by
                    .iter()
                    .map(|(l, c)| format!("`{l}` ({})", count(*c)))
                    .collect::<Vec<_>>()
                    .join(", ")
            );
            self.push(Diagnostic::error(codes::NO_ROWS, m.name_span, msg));
        } else if used > 0 && (rows.dropped_missing > 0 || rows.excluded_by_where > 0) {
            let mut parts = Vec::new();
            if rows.excluded_by_where > 0 {
                parts.push(format!(
                    "{} excluded by `where`",
                    count(rows.excluded_by_where)
                ));
            }
            if rows.dropped_missing > 0 {
                let by: Vec<String> = rows
                    .missing_by
                    .iter()
                    .map(|(l, c)| format!("{l} {}", count(*c)))
                    .collect();
                parts.push(format!(
                    "{} dropped for missing values ({})",
                    count(rows.dropped_missing),
                    by.join(", ")
                ));
            }
            let msg = format!(
                "model `{}` uses {} of {} rows: {}",
                m.name,
                count(used),
                count(n),
                parts.join("; ")
            );
            // Losing many rows to missing values deserves more than a hint: the
            // complete cases may no longer describe the population. `where` is intended.
            let d = if rows.dropped_missing * 5 > after_where {
                Diagnostic::warning(codes::ROWS_DROPPED, m.name_span, msg)
            } else {
                Diagnostic::hint(codes::ROWS_DROPPED, m.name_span, msg)
            };
            self.push(d);
        }
        m.rows = Some(rows);
        Some(sample)
    }

    /// Variation of every term within the groupings that matter, on the sample.
    fn check_variation(
        &mut self,
        m: &mut ResolvedModel,
        sample: &Sample,
        structure: &[usize],
        formula: Option<&[Term]>,
    ) {
        let Some((ev, facts, panel)) = self.facts() else {
            return;
        };
        let frame = ev.frame;
        let mut groupings: Vec<(String, usize)> = Vec::new();
        let mut add = |name: &str, col: usize| {
            if !groupings.iter().any(|(_, c)| *c == col) {
                groupings.push((name.to_string(), col));
            }
        };
        for &c in structure {
            add(&frame.columns()[c].name, c);
        }
        for g in m
            .fixed
            .iter()
            .chain(&m.cluster)
            .chain(m.random.iter().map(|r| &r.group))
        {
            add(&g.name, g.column);
        }
        let grouping_cols: Vec<usize> = groupings.iter().map(|(_, c)| *c).collect();
        let variation = |factors: &[(&Value, u32)], within: &[usize]| {
            facts.variation(&ev, panel, factors, sample, within)
        };
        let mut diags = Vec::new();

        // The outcome must vary, or there is nothing to explain.
        if let Some(o) = &m.outcome {
            if !variation(&[(&o.value, 1)], &[]).varies {
                let msg = format!(
                    "the outcome `{}` has the same value in every row the model uses",
                    o.label
                );
                diags.push(Diagnostic::error(codes::CONSTANT, o.span, msg));
            }
        }
        let fixed_cols: Vec<usize> = m.fixed.iter().map(|g| g.column).collect();
        for t in m.terms.iter_mut() {
            let v = variation(&term_factors(t), &grouping_cols);
            if !v.varies {
                let msg = format!(
                    "the term `{}` takes one value in every row the model uses, so it cannot be told apart from the intercept",
                    t.label
                );
                diags.push(Diagnostic::warning(codes::CONSTANT, t.span, msg));
                continue;
            }
            for ((name, col), varies_within) in groupings.iter().zip(&v.within) {
                if *varies_within {
                    t.varies_within.push(name.clone());
                } else if fixed_cols.contains(col) {
                    t.absorbed_by.push(name.clone());
                }
            }
            if let Some(g) = t.absorbed_by.first() {
                let msg = format!(
                    "`{}` does not vary within `{g}`, so `fixed {g}` absorbs it: its effect cannot be estimated and it will be dropped",
                    t.label
                );
                let mut d = Diagnostic::warning(codes::ABSORBED_TERM, t.span, msg);
                if let Some(edit) = formula.and_then(|f| remove_term_edit(f, t.span)) {
                    d = d.with_fix(format!("Remove `{}`", t.label), vec![edit]);
                }
                diags.push(d);
            }
        }
        // Random slopes need within-group variation.
        for re in &m.random {
            let g = ev.group(re.group.column);
            for s in &re.slopes {
                if !variation(&term_factors(s), &[re.group.column]).within[0] {
                    let msg = format!(
                        "`{}` does not vary within `{}` (each {} has one value), so its slope cannot vary across {} groups; remove it from `vary`",
                        s.label, re.group.name, re.group.name, re.group.name
                    );
                    diags.push(Diagnostic::error(codes::SLOPE_NOT_VARYING, s.span, msg));
                }
                if !m.terms.iter().any(|t| term_key(t) == term_key(s)) {
                    let msg = format!(
                        "`{}` has a random slope but no fixed effect; add it to the terms so its average slope is estimated",
                        s.label
                    );
                    diags.push(Diagnostic::warning(codes::SLOPE_WITHOUT_FIXED, s.span, msg));
                }
            }
            if g.n_groups() < 5 {
                let msg = format!(
                    "only {} `{}` group{}: a variance across so few groups is poorly estimated (common practice asks for many more)",
                    g.n_groups(),
                    re.group.name,
                    plural(g.n_groups())
                );
                diags.push(Diagnostic::warning(codes::FEW_GROUPS, re.group.span, msg));
            }
        }
        for c in &m.cluster {
            let n_groups = facts.clusters(&ev, c.column, sample);
            if n_groups < 2 {
                let msg = format!(
                    "clustering by `{}` needs at least two clusters, but the sample has {n_groups}",
                    c.name
                );
                diags.push(Diagnostic::error(codes::FEW_GROUPS, c.span, msg));
            } else if n_groups < 30 {
                let msg = format!(
                    "only {n_groups} `{}` clusters: cluster-robust standard errors are unreliable with fewer than about 30-50 clusters (common practice)",
                    c.name
                );
                diags.push(Diagnostic::warning(codes::FEW_GROUPS, c.span, msg));
            }
        }
        let absorbed = |mono: &BTreeMap<String, u32>| -> bool {
            // Would the missing lower-order term be swept out by a fixed grouping?
            let factors: Vec<(&Value, u32)> = mono
                .iter()
                .filter_map(|(label, p)| {
                    m.terms
                        .iter()
                        .flat_map(|t| t.factors.iter())
                        .find(|f| &canonical_label(f, &fixed_cols) == label)
                        .map(|f| (&f.value, *p))
                })
                .collect();
            let v = variation(&factors, &fixed_cols);
            !v.varies || v.within.iter().any(|w| !w)
        };
        self.lower_order(m, formula, &fixed_cols, &absorbed, &mut diags);
        if let Some(g) = m.fixed.first() {
            for t in &m.terms {
                let plain = t.factors.len() >= 2
                    && t.factors.iter().all(|f| {
                        f.power == 1 && f.ty == Ty::Number && !matches!(f.value, Value::Within(..))
                    });
                if !plain {
                    continue;
                }
                let all_vary = t
                    .factors
                    .iter()
                    .all(|f| variation(&[(&f.value, 1)], &[g.column]).within[0]);
                if all_vary {
                    let within: Vec<String> = t
                        .factors
                        .iter()
                        .map(|f| format!("within({}, {})", f.label, quote_name(&g.name)))
                        .collect();
                    let text = within.join(" * ");
                    let msg = format!(
                        "`{}` multiplies variables that change within `{}`, so under `fixed {}` it still mixes differences between {} units with changes inside them; `{text}` is the purely within-unit interaction",
                        t.label, g.name, g.name, g.name
                    );
                    let d = Diagnostic::hint(codes::WITHIN_PRODUCT, t.span, msg).with_replacement(
                        "Use the within-unit product",
                        t.span,
                        text,
                    );
                    diags.push(d);
                }
            }
        }
        for d in diags {
            self.push(d);
        }
    }

    /// Products and powers need their lower-order terms, unless fixed effects absorb them.
    fn lower_order(
        &self,
        m: &ResolvedModel,
        formula: Option<&[Term]>,
        fixed_cols: &[usize],
        absorbed: &dyn Fn(&BTreeMap<String, u32>) -> bool,
        diags: &mut Vec<Diagnostic>,
    ) {
        let present: Vec<BTreeMap<String, u32>> =
            m.terms.iter().map(|t| monomial(t, fixed_cols)).collect();
        let mut reported: Vec<BTreeMap<String, u32>> = Vec::new();
        for (t, mono) in m.terms.iter().zip(&present) {
            let mut missing = Vec::new();
            for sub in sub_monomials(mono) {
                if !present.contains(&sub) && !reported.contains(&sub) && !absorbed(&sub) {
                    missing.push(sub);
                }
            }
            if missing.is_empty() {
                continue;
            }
            missing.sort_by_key(|s| s.values().sum::<u32>());
            let labels: Vec<String> = missing.iter().map(monomial_label).collect();
            reported.extend(missing);
            let msg = format!(
                "`{}` is in the model without its lower-order term{} {}; without {} its coefficient depends on where the variables' zero lies",
                t.label,
                plural(labels.len()),
                labels.iter().map(|l| format!("`{l}`")).collect::<Vec<_>>().join(", "),
                if labels.len() == 1 { "it" } else { "them" }
            );
            let mut d = Diagnostic::warning(codes::MISSING_LOWER_ORDER, t.span, msg);
            if let Some(last) = formula.and_then(|f| f.last()) {
                let text: String = labels.iter().map(|l| format!(" + {l}")).collect();
                d = d.with_fix(
                    format!("Add {}", labels.join(", ")),
                    vec![Edit {
                        span: Span::new(last.span.end, last.span.end),
                        text,
                    }],
                );
            }
            diags.push(d);
        }
    }
}

/// A term's factors with their powers, as the cache of facts takes them.
fn term_factors(t: &ResolvedTerm) -> Vec<(&Value, u32)> {
    t.factors.iter().map(|f| (&f.value, f.power)).collect()
}

/// A factor's identity for lower-order checks: under `fixed G`, `within(x, G)` and
/// `x` span the same within-unit variation, so both count as `x`.
fn canonical_label(f: &ResolvedFactor, fixed_cols: &[usize]) -> String {
    if let Value::Within(_, g) = &f.value {
        if fixed_cols.contains(g) {
            if let Some(inner) = f
                .label
                .strip_prefix("within(")
                .and_then(|s| s.rsplit_once(','))
            {
                return inner.0.to_string();
            }
        }
    }
    f.label.clone()
}

fn monomial(t: &ResolvedTerm, fixed_cols: &[usize]) -> BTreeMap<String, u32> {
    let mut m = BTreeMap::new();
    for f in &t.factors {
        *m.entry(canonical_label(f, fixed_cols)).or_insert(0) += f.power;
    }
    m
}

/// A term's identity regardless of factor order: `a*b` equals `b*a`.
pub fn term_key(t: &ResolvedTerm) -> BTreeMap<String, u32> {
    monomial(t, &[])
}

/// Every proper, non-empty sub-product: for x²·d these are x, x², d, x·d.
fn sub_monomials(m: &BTreeMap<String, u32>) -> Vec<BTreeMap<String, u32>> {
    let keys: Vec<(&String, u32)> = m.iter().map(|(k, v)| (k, *v)).collect();
    let mut out = Vec::new();
    let mut exps = vec![0u32; keys.len()];
    loop {
        let mut i = 0;
        loop {
            if i == keys.len() {
                return out;
            }
            if exps[i] < keys[i].1 {
                exps[i] += 1;
                break;
            }
            exps[i] = 0;
            i += 1;
        }
        let full = exps.iter().zip(&keys).all(|(e, k)| *e == k.1);
        if !full {
            let sub: BTreeMap<String, u32> = keys
                .iter()
                .zip(&exps)
                .filter(|(_, e)| **e > 0)
                .map(|((k, _), e)| ((*k).clone(), *e))
                .collect();
            out.push(sub);
        }
    }
}

fn monomial_label(m: &BTreeMap<String, u32>) -> String {
    m.iter()
        .map(|(k, p)| {
            if *p == 1 {
                k.clone()
            } else {
                format!("{k}^{p}")
            }
        })
        .collect::<Vec<_>>()
        .join("*")
}

/// The edit that removes a term and the `+` that joins it to its neighbour.
fn remove_term_edit(terms: &[Term], span: Span) -> Option<Edit> {
    let i = terms.iter().position(|t| t.span == span)?;
    if terms.len() == 1 {
        return None;
    }
    let span = if i > 0 {
        Span::new(terms[i - 1].span.end, span.end)
    } else {
        Span::new(span.start, terms[1].span.start)
    };
    Some(Edit {
        span,
        text: String::new(),
    })
}

/// Names an expression offers to probes: a bare name, or the name in a smooth transform.
fn expr_names(e: &Expr) -> Vec<String> {
    match &e.kind {
        ExprKind::Name(id) => vec![id.name.clone()],
        ExprKind::Call(c) => match (c.func.name.as_str(), c.args.first().map(|a| &a.kind)) {
            ("log" | "sqrt" | "center" | "z", Some(ExprKind::Name(id))) => vec![id.name.clone()],
            _ => Vec::new(),
        },
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn mono(items: &[(&str, u32)]) -> BTreeMap<String, u32> {
        items.iter().map(|(k, v)| (k.to_string(), *v)).collect()
    }

    #[test]
    fn sub_products_of_a_moderated_square() {
        let subs = sub_monomials(&mono(&[("s", 2), ("d", 1)]));
        assert_eq!(subs.len(), 4);
        for want in [
            mono(&[("s", 1)]),
            mono(&[("s", 2)]),
            mono(&[("d", 1)]),
            mono(&[("s", 1), ("d", 1)]),
        ] {
            assert!(subs.contains(&want), "{want:?} missing from {subs:?}");
        }
        assert!(sub_monomials(&mono(&[("x", 1)])).is_empty());
        assert_eq!(monomial_label(&mono(&[("s", 2), ("d", 1)])), "d*s^2");
    }
}
