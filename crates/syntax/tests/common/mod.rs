//! Helpers shared by the syntax tests: a compact tree dump for snapshots, error
//! positions as the user sees them, and span-free comparison of trees.
#![allow(dead_code)]

use syntax::ast::*;
use syntax::{parse, LineIndex, Parsed};

/// Every error as `line:column message`, 1-based, columns in characters.
pub fn errors(text: &str) -> Vec<String> {
    let idx = LineIndex::new(text);
    parse(text)
        .errors
        .iter()
        .map(|e| {
            let lc = idx.char_pos(text, e.span.start);
            format!("{}:{} {}", lc.line + 1, lc.col + 1, e.message)
        })
        .collect()
}

/// The tree and comments with every span removed, for comparing two parses
/// of texts laid out differently. Comments compare without trailing spaces,
/// which the formatter drops.
pub fn strip_spans(p: &Parsed) -> String {
    let tree = format!("{:?}", p.file);
    let mut out = String::with_capacity(tree.len());
    let mut rest = tree.as_str();
    while let Some(i) = rest.find("Span { start: ") {
        out.push_str(&rest[..i]);
        let after = &rest[i..];
        let end = after.find('}').map(|e| e + 1).unwrap_or(after.len());
        out.push_str("Span");
        rest = &after[end..];
    }
    out.push_str(rest);
    for c in &p.comments {
        out.push_str("\n#");
        out.push_str(c.text.trim_end());
    }
    out
}

fn ident(i: &Ident) -> String {
    if i.backtick {
        format!("`{}`", i.name)
    } else {
        i.name.clone()
    }
}

fn call(c: &Call) -> String {
    let args: Vec<String> = c.args.iter().map(expr).collect();
    format!("(call {} {})", ident(&c.func), args.join(" "))
}

/// An expression fully parenthesised, so snapshots show how it grouped.
pub fn expr(e: &Expr) -> String {
    match &e.kind {
        ExprKind::Number(n) => n.text.clone(),
        ExprKind::Str(s) => format!("{:?}", s.value),
        ExprKind::Name(i) => ident(i),
        ExprKind::Call(c) => call(c),
        ExprKind::Unary { op, expr: inner } => format!("({op:?} {})", expr(inner)),
        ExprKind::Binary { op, lhs, rhs } => {
            format!("({} {} {})", op.symbol(), expr(lhs), expr(rhs))
        }
        ExprKind::Paren(inner) => format!("[{}]", expr(inner)),
        ExprKind::Error => "<error>".to_string(),
    }
}

fn term(t: &Term) -> String {
    let f: Vec<String> = t
        .factors
        .iter()
        .map(|f| {
            let base = match &f.base {
                Atom::Name(i) => ident(i),
                Atom::Call(c) => call(c),
            };
            match f.power {
                Some((p, _)) => format!("{base}^{p}"),
                None => base,
            }
        })
        .collect();
    f.join("*")
}

fn at(v: &[AtValue]) -> String {
    let v: Vec<String> = v
        .iter()
        .map(|a| match &a.kind {
            AtKind::Number(n) => format!("num {n}"),
            AtKind::Sd(n) => format!("sd {n}"),
            AtKind::Named(i) => format!("named {}", ident(i)),
        })
        .collect();
    v.join(", ")
}

fn names(v: &[Ident]) -> String {
    let v: Vec<String> = v.iter().map(ident).collect();
    v.join(" ")
}

fn boot(b: &Option<Bootstrap>) -> String {
    match b {
        Some(b) => format!(
            " bootstrap={} seed={}",
            b.draws.text,
            b.seed.as_ref().map(|s| s.text.as_str()).unwrap_or("-")
        ),
        None => String::new(),
    }
}

fn target(t: &Target) -> String {
    format!("{} {}", ident(&t.model), ident(&t.focal))
}

/// One line per statement with its span, then one line per error.
pub fn dump(text: &str) -> String {
    let p = parse(text);
    let mut out = String::new();
    for s in &p.file.stmts {
        let line = match &s.kind {
            StmtKind::Source { path, missing } => {
                let m: Vec<String> = missing.iter().map(|m| format!("{:?}", m.value)).collect();
                format!("source {:?} missing=[{}]", path.value, m.join(" "))
            }
            StmtKind::Groups { levels } => format!("groups {}", names(levels)),
            StmtKind::Panel { unit, time } => format!("panel {} {}", ident(unit), ident(time)),
            StmtKind::Let { name, value } => format!("let {} {}", ident(name), expr(value)),
            StmtKind::Where { cond } => format!("where {}", expr(cond)),
            StmtKind::Model(m) => {
                let mut s = format!("model {}", ident(&m.name));
                for b in &m.body {
                    let inner = match &b.kind {
                        ModelStmtKind::Formula { outcome, terms } => {
                            let t: Vec<String> = terms.iter().map(term).collect();
                            format!("formula {} = {}", expr(outcome), t.join(" + "))
                        }
                        ModelStmtKind::Fixed { groups } => format!("fixed {}", names(groups)),
                        ModelStmtKind::Vary { effects, by } => {
                            let e: Vec<String> = effects
                                .iter()
                                .map(|e| match e {
                                    VaryEffect::Intercept(_) => "intercept".to_string(),
                                    VaryEffect::Term(t) => term(t),
                                })
                                .collect();
                            format!("vary {} by {}", e.join(" "), ident(by))
                        }
                        ModelStmtKind::Errors { kind, groups } => {
                            format!("errors {} [{}]", ident(kind), names(groups))
                        }
                        ModelStmtKind::Estimate { method } => format!("estimate {}", ident(method)),
                        ModelStmtKind::Df { method } => format!("df {}", ident(method)),
                        ModelStmtKind::Where { cond } => format!("where {}", expr(cond)),
                        ModelStmtKind::Error => "<error>".to_string(),
                    };
                    s.push_str(&format!("\n  {}..{} {inner}", b.span.start, b.span.end));
                }
                s
            }
            StmtKind::Probe {
                target: t,
                moderator,
                at: a,
                bootstrap,
            } => format!(
                "probe {} across {} at [{}]{}",
                target(t),
                ident(moderator),
                at(a),
                boot(bootstrap)
            ),
            StmtKind::Regions {
                target: t,
                moderator,
                alpha,
                bootstrap,
            } => format!(
                "regions {} across {} alpha={}{}",
                target(t),
                ident(moderator),
                alpha.as_ref().map(|a| a.text.as_str()).unwrap_or("-"),
                boot(bootstrap)
            ),
            StmtKind::Turning {
                target: t,
                moderator,
                at: a,
                bootstrap,
            } => format!(
                "turning {} across {} at [{}]{}",
                target(t),
                moderator.as_ref().map(ident).unwrap_or("-".into()),
                at(a),
                boot(bootstrap)
            ),
            StmtKind::Effect { target: t } => format!("effect {}", target(t)),
            StmtKind::Plot {
                target: t,
                moderator,
                at: a,
                path,
            } => format!(
                "plot {} across {} at [{}] to {:?}",
                target(t),
                moderator.as_ref().map(ident).unwrap_or("-".into()),
                at(a),
                path.value
            ),
            StmtKind::Compare { models } => format!("compare {}", names(models)),
            StmtKind::Error => "<error>".to_string(),
        };
        out.push_str(&format!("{}..{} {line}\n", s.span.start, s.span.end));
    }
    for e in errors(text) {
        out.push_str(&format!("error {e}\n"));
    }
    out
}
