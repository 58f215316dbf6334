//! The canonical layout of a file.
//!
//! The formatter prints the tree, not the tokens, so spacing is decided in one
//! place; what the tree does not hold is taken from the source: number text and
//! the sign of `at` values as written, comments, and where the user left blank
//! lines. Parentheses are in the tree, so printing never needs to add any and
//! the printed text parses back to the same tree.

use crate::ast::*;
use crate::{LineIndex, Parsed};

pub(crate) fn ident_text(i: &Ident) -> String {
    if i.backtick {
        format!("`{}`", i.name)
    } else {
        i.name.clone()
    }
}

pub(crate) fn str_text(s: &StrLit) -> String {
    let mut out = String::with_capacity(s.value.len() + 2);
    out.push('"');
    for c in s.value.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

fn call_text(c: &Call) -> String {
    let args: Vec<String> = c.args.iter().map(expr_text).collect();
    format!("{}({})", ident_text(&c.func), args.join(", "))
}

pub(crate) fn expr_text(e: &Expr) -> String {
    match &e.kind {
        ExprKind::Number(n) => n.text.clone(),
        ExprKind::Str(s) => str_text(s),
        ExprKind::Name(i) => ident_text(i),
        ExprKind::Call(c) => call_text(c),
        ExprKind::Unary { op, expr } => match op {
            UnaryOp::Neg => format!("-{}", expr_text(expr)),
            UnaryOp::Not => format!("not {}", expr_text(expr)),
        },
        ExprKind::Binary { op, lhs, rhs } => match op {
            BinaryOp::Pow => format!("{}^{}", expr_text(lhs), expr_text(rhs)),
            op => format!("{} {} {}", expr_text(lhs), op.symbol(), expr_text(rhs)),
        },
        ExprKind::Paren(inner) => format!("({})", expr_text(inner)),
        ExprKind::Error => String::new(),
    }
}

pub(crate) fn term_text(t: &Term) -> String {
    let factors: Vec<String> = t
        .factors
        .iter()
        .map(|f| {
            let base = match &f.base {
                Atom::Name(i) => ident_text(i),
                Atom::Call(c) => call_text(c),
            };
            match f.power {
                Some((p, _)) => format!("{base}^{p}"),
                None => base,
            }
        })
        .collect();
    factors.join(" * ")
}

/// An `at` value as written, without the space a user may have left after the sign.
fn at_text(src: &str, v: &AtValue) -> String {
    let raw = src.get(v.span.start..v.span.end).unwrap_or("");
    match &v.kind {
        AtKind::Named(i) => ident_text(i),
        AtKind::Number(_) | AtKind::Sd(_) => {
            let sign = match raw.chars().next() {
                Some(c @ ('-' | '+')) => c.to_string(),
                _ => String::new(),
            };
            let number = raw.split_whitespace().last().unwrap_or("");
            let number = number.trim_start_matches(['-', '+']);
            format!("{sign}{number}")
        }
    }
}

fn at_list(src: &str, at: &[AtValue]) -> String {
    let v: Vec<String> = at.iter().map(|a| at_text(src, a)).collect();
    v.join(", ")
}

fn names(ids: &[Ident]) -> String {
    let v: Vec<String> = ids.iter().map(ident_text).collect();
    v.join(", ")
}

fn target_text(t: &Target) -> String {
    format!("{}: {}", ident_text(&t.model), ident_text(&t.focal))
}

fn bootstrap_text(b: &Option<Bootstrap>) -> String {
    match b {
        Some(b) => match &b.seed {
            Some(s) => format!(" bootstrap {} seed {}", b.draws.text, s.text),
            None => format!(" bootstrap {}", b.draws.text),
        },
        None => String::new(),
    }
}

/// One top-level statement on one line; a model prints only its header here.
fn stmt_text(src: &str, s: &Stmt) -> String {
    match &s.kind {
        StmtKind::Source { path, missing } => {
            if missing.is_empty() {
                format!("source {}", str_text(path))
            } else {
                let m: Vec<String> = missing.iter().map(str_text).collect();
                format!("source {} missing {}", str_text(path), m.join(", "))
            }
        }
        StmtKind::Groups { levels } => {
            let v: Vec<String> = levels.iter().map(ident_text).collect();
            format!("groups {}", v.join(" in "))
        }
        StmtKind::Panel { unit, time } => {
            format!("panel {} over {}", ident_text(unit), ident_text(time))
        }
        StmtKind::Let { name, value } => format!("let {} = {}", ident_text(name), expr_text(value)),
        StmtKind::Where { cond } => format!("where {}", expr_text(cond)),
        StmtKind::Model(m) => format!("model {} {{", ident_text(&m.name)),
        StmtKind::Probe {
            target,
            moderator,
            at,
            bootstrap,
        } => format!(
            "probe {} across {} at {}{}",
            target_text(target),
            ident_text(moderator),
            at_list(src, at),
            bootstrap_text(bootstrap)
        ),
        StmtKind::Regions {
            target,
            moderator,
            alpha,
            bootstrap,
        } => format!(
            "regions {} across {}{}{}",
            target_text(target),
            ident_text(moderator),
            alpha
                .as_ref()
                .map(|a| format!(" alpha {}", a.text))
                .unwrap_or_default(),
            bootstrap_text(bootstrap)
        ),
        StmtKind::Turning {
            target,
            moderator,
            at,
            bootstrap,
        } => {
            let m = match moderator {
                Some(w) => format!(" across {} at {}", ident_text(w), at_list(src, at)),
                None => String::new(),
            };
            format!(
                "turning {}{}{}",
                target_text(target),
                m,
                bootstrap_text(bootstrap)
            )
        }
        StmtKind::Effect { target } => format!("effect {}", target_text(target)),
        StmtKind::Plot {
            target,
            moderator,
            at,
            path,
        } => {
            let m = match moderator {
                Some(w) if at.is_empty() => format!(" across {}", ident_text(w)),
                Some(w) => format!(" across {} at {}", ident_text(w), at_list(src, at)),
                None => String::new(),
            };
            format!("plot {}{} to {}", target_text(target), m, str_text(path))
        }
        StmtKind::Compare { models } => format!("compare {}", names(models)),
        StmtKind::Error => src.get(s.span.start..s.span.end).unwrap_or("").to_string(),
    }
}

fn model_stmt_text(src: &str, s: &ModelStmt) -> String {
    match &s.kind {
        ModelStmtKind::Formula { outcome, terms } => {
            let t: Vec<String> = terms.iter().map(term_text).collect();
            format!("{} = {}", expr_text(outcome), t.join(" + "))
        }
        ModelStmtKind::Fixed { groups } => format!("fixed {}", names(groups)),
        ModelStmtKind::Vary { effects, by } => {
            let e: Vec<String> = effects
                .iter()
                .map(|e| match e {
                    VaryEffect::Intercept(_) => "intercept".to_string(),
                    VaryEffect::Term(t) => term_text(t),
                })
                .collect();
            format!("vary {} by {}", e.join(", "), ident_text(by))
        }
        ModelStmtKind::Errors { kind, groups } => {
            if groups.is_empty() {
                format!("errors {}", ident_text(kind))
            } else {
                format!("errors {} {}", ident_text(kind), names(groups))
            }
        }
        ModelStmtKind::Estimate { method } => format!("estimate {}", ident_text(method)),
        ModelStmtKind::Df { method } => format!("df {}", ident_text(method)),
        ModelStmtKind::Where { cond } => format!("where {}", expr_text(cond)),
        ModelStmtKind::Error => src.get(s.span.start..s.span.end).unwrap_or("").to_string(),
    }
}

struct Layout<'a> {
    src: &'a str,
    index: LineIndex,
    comments: &'a [Comment],
    out: String,
    /// Byte offsets in `out` where the two spaces before a trailing `#` begin.
    trailing_at: Vec<usize>,
}

/// One element of a statement sequence, with the comments that belong to it.
struct Item<'a> {
    start: usize,
    end: usize,
    kind: ItemKind<'a>,
}

enum ItemKind<'a> {
    Comment(&'a Comment),
    Stmt(&'a Stmt),
    ModelStmt(&'a ModelStmt),
}

impl<'a> Layout<'a> {
    fn line(&self, offset: usize) -> usize {
        self.index.line_of(offset)
    }

    fn last_line(&self, start: usize, end: usize) -> usize {
        self.line(end.max(start + 1) - 1)
    }

    fn comment_line(c: &Comment) -> String {
        format!("#{}", c.text.trim_end())
    }

    /// Statements and the comments between them, in source order. `range` is
    /// the part of the text the sequence covers.
    fn items<T>(
        &self,
        stmts: &'a [T],
        span_of: impl Fn(&T) -> (usize, usize),
        wrap: impl Fn(&'a T) -> ItemKind<'a>,
        range: (usize, usize),
    ) -> Vec<Item<'a>> {
        let mut items: Vec<Item<'a>> = stmts
            .iter()
            .map(|s| {
                let (start, end) = span_of(s);
                Item {
                    start,
                    end,
                    kind: wrap(s),
                }
            })
            .collect();
        for c in self.comments {
            if c.span.start < range.0 || c.span.start >= range.1 {
                continue;
            }
            let inside = items.iter().any(|i| {
                !matches!(i.kind, ItemKind::Comment(_))
                    && c.span.start >= i.start
                    && c.span.start < i.end
            });
            if inside {
                continue;
            }
            let trailing = items.iter().any(|i| {
                !matches!(i.kind, ItemKind::Comment(_))
                    && i.end <= c.span.start
                    && self.last_line(i.start, i.end) == self.line(c.span.start)
            });
            if trailing {
                continue;
            }
            items.push(Item {
                start: c.span.start,
                end: c.span.end,
                kind: ItemKind::Comment(c),
            });
        }
        items.sort_by_key(|i| i.start);
        items
    }

    /// Comments inside a statement's text; they are moved to lines before it.
    fn inner_comments(
        &self,
        start: usize,
        end: usize,
        skip: &[(usize, usize)],
    ) -> Vec<&'a Comment> {
        self.comments
            .iter()
            .filter(|c| c.span.start >= start && c.span.start < end)
            .filter(|c| {
                !skip
                    .iter()
                    .any(|(s, e)| c.span.start >= *s && c.span.start < *e)
            })
            .collect()
    }

    /// The comment after a statement on the line where it ends.
    fn trailing(&self, start: usize, end: usize, limit: usize) -> Option<&'a Comment> {
        let line = self.last_line(start, end);
        self.comments.iter().find(|c| {
            c.span.start >= end && c.span.start < limit && self.line(c.span.start) == line
        })
    }

    fn push_line(&mut self, indent: &str, text: &str, trailing: Option<&Comment>) {
        self.out.push_str(indent);
        self.out.push_str(text);
        if let Some(c) = trailing {
            self.trailing_at.push(self.out.len());
            self.out.push_str("  ");
            self.out.push_str(&Self::comment_line(c));
        }
        self.out.push('\n');
    }

    fn sequence(&mut self, items: &[Item<'a>], indent: &str, limit: usize) {
        let mut prev_end_line: Option<usize> = None;
        for (k, item) in items.iter().enumerate() {
            let first_line = self.line(item.start);
            if let Some(prev) = prev_end_line {
                if first_line > prev + 1 {
                    self.out.push('\n');
                }
            }
            let next_start = items.get(k + 1).map(|i| i.start).unwrap_or(limit);
            match item.kind {
                ItemKind::Comment(c) => {
                    let line = Self::comment_line(c);
                    self.push_line(indent, &line, None);
                    prev_end_line = Some(self.line(c.span.start));
                }
                ItemKind::ModelStmt(s) => {
                    for c in self.inner_comments(s.span.start, s.span.end, &[]) {
                        let line = Self::comment_line(c);
                        self.push_line(indent, &line, None);
                    }
                    let trailing = self.trailing(s.span.start, s.span.end, next_start);
                    let text = model_stmt_text(self.src, s);
                    self.push_line(indent, &text, trailing);
                    prev_end_line = Some(self.last_line(s.span.start, s.span.end));
                }
                ItemKind::Stmt(s) => {
                    self.stmt(s, indent, next_start);
                    prev_end_line = Some(self.last_line(s.span.start, s.span.end));
                }
            }
        }
    }

    fn stmt(&mut self, s: &'a Stmt, indent: &str, next_start: usize) {
        let trailing = self.trailing(s.span.start, s.span.end, next_start);
        let StmtKind::Model(m) = &s.kind else {
            for c in self.inner_comments(s.span.start, s.span.end, &[]) {
                let line = Self::comment_line(c);
                self.push_line(indent, &line, None);
            }
            let text = stmt_text(self.src, s);
            self.push_line(indent, &text, trailing);
            return;
        };
        // The header runs from `model` to `{`; its comments go before it, a
        // comment on the `{` line stays there.
        let open = self.src[m.name.span.end.min(self.src.len())..]
            .find('{')
            .map(|i| m.name.span.end + i + 1)
            .unwrap_or(m.name.span.end);
        for c in self.inner_comments(s.span.start, open, &[]) {
            let line = Self::comment_line(c);
            self.push_line(indent, &line, None);
        }
        let body_start = m.body.first().map(|b| b.span.start).unwrap_or(s.span.end);
        let header_trailing = self
            .trailing(s.span.start, open, body_start)
            .filter(|c| c.span.start < s.span.end);
        let header = stmt_text(self.src, s);
        self.push_line(indent, &header, header_trailing);
        let body_range_start = header_trailing.map(|c| c.span.end).unwrap_or(open);
        let close = if self.src[..s.span.end.min(self.src.len())].ends_with('}') {
            s.span.end - 1
        } else {
            s.span.end
        };
        let items = self.items(
            &m.body,
            |b| (b.span.start, b.span.end),
            ItemKind::ModelStmt,
            (body_range_start, close),
        );
        let inner_indent = format!("{indent}  ");
        self.sequence(&items, &inner_indent, close);
        self.push_line(indent, "}", trailing);
    }
}

pub(crate) fn format_parsed(src: &str, parsed: &Parsed) -> String {
    let mut layout = Layout {
        src,
        index: LineIndex::new(src),
        comments: &parsed.comments,
        out: String::new(),
        trailing_at: Vec::new(),
    };
    let items = layout.items(
        &parsed.file.stmts,
        |s| (s.span.start, s.span.end),
        ItemKind::Stmt,
        (0, src.len() + 1),
    );
    layout.sequence(&items, "", src.len() + 1);
    align_trailing_comments(&layout.out, &layout.trailing_at)
}

/// Trailing comments on consecutive lines start in one column, two spaces
/// after the longest code among them, as users tend to align them by hand.
/// The column depends only on the code, so formatting stays idempotent.
fn align_trailing_comments(out: &str, offsets: &[usize]) -> String {
    if offsets.is_empty() {
        return out.to_string();
    }
    let mut marks = Vec::with_capacity(offsets.len());
    let (mut line, mut scanned) = (0, 0);
    for &pos in offsets {
        line += out[scanned..pos].matches('\n').count();
        scanned = pos;
        marks.push((line, pos));
    }
    let line_start = |pos: usize| out[..pos].rfind('\n').map_or(0, |i| i + 1);
    let width = |&(_, pos): &(usize, usize)| out[line_start(pos)..pos].chars().count();
    let mut pad = vec![0usize; marks.len()];
    let mut i = 0;
    while i < marks.len() {
        let mut j = i + 1;
        while j < marks.len() && marks[j].0 == marks[j - 1].0 + 1 {
            j += 1;
        }
        let col = marks[i..j].iter().map(width).max().unwrap_or(0);
        for k in i..j {
            pad[k] = col - width(&marks[k]);
        }
        i = j;
    }
    let mut result = String::with_capacity(out.len() + pad.iter().sum::<usize>());
    let mut last = 0;
    for (m, p) in marks.iter().zip(&pad) {
        result.push_str(&out[last..m.1]);
        result.extend(std::iter::repeat_n(' ', *p));
        last = m.1;
    }
    result.push_str(&out[last..]);
    result
}
