//! Every name in a file with what it refers to: the one table behind hover,
//! go to definition, references, rename and semantic tokens.

use std::collections::HashSet;

use syntax::ast::{
    AtKind, Atom, Call, Expr, ExprKind, Factor, Ident, ModelStmtKind, StmtKind, Target, Term,
    VaryEffect,
};
use syntax::{Parsed, Span};

/// What a name stands for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SymKind {
    Let,
    Model,
    Column,
    Function,
    /// An option word: `reml`, `hc3`, `satterthwaite`, a named value after `at`,
    /// `intercept`.
    Option,
    /// A name that is neither a `let`, a model nor a column of the data.
    Unknown,
}

/// One occurrence of a name.
#[derive(Clone, Debug, PartialEq)]
pub struct Occurrence {
    pub kind: SymKind,
    pub name: String,
    pub span: Span,
    /// The `let` or `model` statement that defines the name.
    pub is_def: bool,
}

/// The occurrences of a file, in source order.
#[derive(Clone, Debug, Default)]
pub struct SymbolIndex {
    pub occurrences: Vec<Occurrence>,
}

impl SymbolIndex {
    /// Build from the tree; `columns` are the data's column names (possibly
    /// only the header), used to tell a column from an unknown name.
    pub fn build(parsed: &Parsed, columns: &HashSet<&str>) -> Self {
        let lets: HashSet<&str> = parsed
            .file
            .stmts
            .iter()
            .filter_map(|s| match &s.kind {
                StmtKind::Let { name, .. } => Some(name.name.as_str()),
                _ => None,
            })
            .collect();
        let mut w = Walker {
            lets: &lets,
            columns,
            out: Vec::new(),
        };
        for s in &parsed.file.stmts {
            w.stmt(&s.kind);
        }
        let mut occurrences = w.out;
        occurrences.sort_by_key(|o| (o.span.start, o.span.end));
        SymbolIndex { occurrences }
    }

    /// The occurrence whose span contains the offset (or ends at it, so a
    /// cursor just after a name still finds it).
    pub fn at(&self, offset: usize) -> Option<&Occurrence> {
        self.occurrences
            .iter()
            .find(|o| o.span.start <= offset && offset < o.span.end)
            .or_else(|| self.occurrences.iter().find(|o| o.span.end == offset))
    }

    pub fn definition(&self, kind: SymKind, name: &str) -> Option<&Occurrence> {
        self.occurrences
            .iter()
            .find(|o| o.is_def && o.kind == kind && o.name == name)
    }

    pub fn all(&self, kind: SymKind, name: &str) -> impl Iterator<Item = &Occurrence> {
        let name = name.to_string();
        self.occurrences
            .iter()
            .filter(move |o| o.kind == kind && o.name == name)
    }
}

struct Walker<'a> {
    lets: &'a HashSet<&'a str>,
    columns: &'a HashSet<&'a str>,
    out: Vec<Occurrence>,
}

impl Walker<'_> {
    fn push(&mut self, kind: SymKind, id: &Ident, is_def: bool) {
        self.out.push(Occurrence {
            kind,
            name: id.name.clone(),
            span: id.span,
            is_def,
        });
    }

    /// A name used as a value: a `let` wins over a column of the same name,
    /// as in the checker.
    fn name(&mut self, id: &Ident) {
        let kind = if self.lets.contains(id.name.as_str()) {
            SymKind::Let
        } else if self.columns.contains(id.name.as_str()) {
            SymKind::Column
        } else {
            SymKind::Unknown
        };
        self.push(kind, id, false);
    }

    /// A grouping is always a column.
    fn grouping(&mut self, id: &Ident) {
        let kind = if self.columns.contains(id.name.as_str()) {
            SymKind::Column
        } else {
            SymKind::Unknown
        };
        self.push(kind, id, false);
    }

    fn option(&mut self, id: &Ident) {
        self.push(SymKind::Option, id, false);
    }

    fn target(&mut self, t: &Target) {
        self.push(SymKind::Model, &t.model, false);
        self.name(&t.focal);
    }

    fn at(&mut self, at: &[syntax::ast::AtValue]) {
        for v in at {
            if let AtKind::Named(id) = &v.kind {
                self.option(id);
            }
        }
    }

    fn stmt(&mut self, kind: &StmtKind) {
        match kind {
            StmtKind::Source { .. } | StmtKind::Error => {}
            StmtKind::Groups { levels } => levels.iter().for_each(|l| self.grouping(l)),
            StmtKind::Panel { unit, time } => {
                self.grouping(unit);
                self.grouping(time);
            }
            StmtKind::Let { name, value } => {
                self.push(SymKind::Let, name, true);
                self.expr(value);
            }
            StmtKind::Where { cond } => self.expr(cond),
            StmtKind::Model(m) => {
                self.push(SymKind::Model, &m.name, true);
                for ms in &m.body {
                    self.model_stmt(&ms.kind);
                }
            }
            StmtKind::Probe {
                target,
                moderator,
                at,
                ..
            } => {
                self.target(target);
                self.name(moderator);
                self.at(at);
            }
            StmtKind::Regions {
                target, moderator, ..
            } => {
                self.target(target);
                self.name(moderator);
            }
            StmtKind::Turning {
                target,
                moderator,
                at,
                ..
            }
            | StmtKind::Plot {
                target,
                moderator,
                at,
                ..
            } => {
                self.target(target);
                if let Some(m) = moderator {
                    self.name(m);
                }
                self.at(at);
            }
            StmtKind::Effect { target } => self.target(target),
            StmtKind::Compare { models } => {
                for m in models {
                    self.push(SymKind::Model, m, false);
                }
            }
        }
    }

    fn model_stmt(&mut self, kind: &ModelStmtKind) {
        match kind {
            ModelStmtKind::Formula { outcome, terms } => {
                self.expr(outcome);
                terms.iter().for_each(|t| self.term(t));
            }
            ModelStmtKind::Fixed { groups } => groups.iter().for_each(|g| self.grouping(g)),
            ModelStmtKind::Vary { effects, by } => {
                for e in effects {
                    match e {
                        VaryEffect::Intercept(span) => self.out.push(Occurrence {
                            kind: SymKind::Option,
                            name: "intercept".into(),
                            span: *span,
                            is_def: false,
                        }),
                        VaryEffect::Term(t) => self.term(t),
                    }
                }
                self.grouping(by);
            }
            ModelStmtKind::Errors { kind, groups } => {
                self.option(kind);
                groups.iter().for_each(|g| self.grouping(g));
            }
            ModelStmtKind::Estimate { method } | ModelStmtKind::Df { method } => {
                self.option(method)
            }
            ModelStmtKind::Where { cond } => self.expr(cond),
            ModelStmtKind::Error => {}
        }
    }

    fn term(&mut self, t: &Term) {
        t.factors.iter().for_each(|f| self.factor(f));
    }

    fn factor(&mut self, f: &Factor) {
        match &f.base {
            Atom::Name(id) => self.name(id),
            Atom::Call(c) => self.call(c),
        }
    }

    fn call(&mut self, c: &Call) {
        self.push(SymKind::Function, &c.func, false);
        c.args.iter().for_each(|a| self.expr(a));
    }

    fn expr(&mut self, e: &Expr) {
        match &e.kind {
            ExprKind::Number(_) | ExprKind::Str(_) | ExprKind::Error => {}
            ExprKind::Name(id) => self.name(id),
            ExprKind::Call(c) => self.call(c),
            ExprKind::Unary { expr, .. } => self.expr(expr),
            ExprKind::Binary { lhs, rhs, .. } => {
                self.expr(lhs);
                self.expr(rhs);
            }
            ExprKind::Paren(inner) => self.expr(inner),
        }
    }
}
