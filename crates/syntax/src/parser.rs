//! The parser: tokens to [`ast::File`], with recovery.
//!
//! Recovery works at two levels. At the top level a broken statement is skipped
//! up to the next statement keyword that begins a line (a keyword in the middle
//! of a line is more likely a column name than a new statement). Inside model
//! braces a broken statement is skipped up to the next model keyword that begins
//! a line, the closing `}`, or a top-level keyword that begins a line, which is
//! taken to mean that the user forgot the `}`. Parenthesised groups are skipped
//! as a whole, so an error inside `log(...)` does not swallow the rest.
//!
//! Only parentheses and braces make the parser recurse; [`cap_nesting`] removes
//! groups nested deeper than [`MAX_NESTING`] before parsing, and expression trees
//! deeper than [`MAX_DEPTH`] are cut, so no input can exhaust the stack.

use std::collections::HashSet;
use std::rc::Rc;

use chumsky::input::MappedInput;
use chumsky::prelude::*;

use crate::ast::*;
use crate::lexer::{Punct, Token};
use crate::values::{MODEL_KEYWORDS, STATEMENT_KEYWORDS};
use crate::{Span, SyntaxError};

/// Deepest nesting of parentheses and braces the parser accepts.
pub(crate) const MAX_NESTING: usize = 128;
/// Deepest expression tree kept; a longer chain of operators is cut here.
pub(crate) const MAX_DEPTH: u32 = 1000;

type In<'t> = MappedInput<'t, Token, SimpleSpan, &'t [(Token, SimpleSpan)]>;
type Err<'t> = extra::Err<Rich<'t, Token>>;
type P<'t, O> = Boxed<'t, 't, In<'t>, O, Err<'t>>;
/// An expression with the depth of its tree, so that depth can be capped while
/// folding without walking the tree.
type DExpr = (Expr, u32);

const OPERATOR_WORDS: &[&str] = &["and", "or", "not"];

fn sp(s: SimpleSpan) -> Span {
    Span::new(s.start, s.end)
}

/// Start offsets of tokens that begin a line which does not continue the line
/// before (that line did not end in an operator, a comma or a word that needs
/// a value). Inside model braces such a line is taken to start a statement.
#[derive(Clone)]
struct LineStarts(Rc<HashSet<usize>>);

fn is_kw_in(t: &Token, list: &[&str]) -> bool {
    matches!(t, Token::Kw(w) if list.contains(&w.as_str()))
}

/// A statement keyword that begins a line; see [`mark_keywords`].
fn top_start(t: &Token) -> bool {
    is_kw_in(t, STATEMENT_KEYWORDS)
}

/// A top-level keyword that begins a line and cannot also begin a model
/// statement: inside braces it means the model was left open.
fn top_only_start(t: &Token) -> bool {
    top_start(t) && !is_kw_in(t, MODEL_KEYWORDS)
}

impl LineStarts {
    fn model_resync(&self, t: &Token, s: SimpleSpan) -> bool {
        is_kw_in(t, MODEL_KEYWORDS)
            || top_only_start(t)
            || *t == Token::P(Punct::RBrace)
            || self.0.contains(&s.start)
    }
}

fn tok_span<'t>() -> P<'t, (Token, SimpleSpan)> {
    any().map_with(|t, e| (t, e.span())).boxed()
}

fn kw<'t>(w: &'static str) -> P<'t, Span> {
    any()
        .filter(move |t: &Token| t.is_word(w) || matches!(t, Token::Kw(k) if k == w))
        .map_with(|_, e| sp(e.span()))
        .labelled(format!("`{w}`"))
        .boxed()
}

fn punct<'t>(p: Punct) -> P<'t, Span> {
    just(Token::P(p))
        .map_with(|_, e| sp(e.span()))
        .labelled(format!("`{}`", p.text()))
        .boxed()
}

fn name<'t>(what: &'static str) -> P<'t, Ident> {
    select! {
        Token::Word(w) if !OPERATOR_WORDS.contains(&w.as_str()) => (w, false),
        Token::Quoted(q) => (q, true),
    }
    .map_with(|(name, backtick), e| Ident {
        name,
        span: sp(e.span()),
        backtick,
    })
    .labelled(what)
    .boxed()
}

fn word<'t>(what: &'static str) -> P<'t, Ident> {
    select! { Token::Word(w) if !OPERATOR_WORDS.contains(&w.as_str()) => w }
        .map_with(|name, e| Ident {
            name,
            span: sp(e.span()),
            backtick: false,
        })
        .labelled(what)
        .boxed()
}

fn string<'t>(what: &'static str) -> P<'t, StrLit> {
    select! { Token::Str(s) => s }
        .map_with(|value, e| StrLit {
            value,
            span: sp(e.span()),
        })
        .labelled(what)
        .boxed()
}

fn num_lit(text: String, span: Span) -> NumLit {
    NumLit {
        value: text.parse().unwrap_or(f64::NAN),
        text,
        span,
    }
}

fn number<'t>(what: &'static str) -> P<'t, NumLit> {
    select! { Token::Num(n) => n }
        .map_with(|n, e| num_lit(n, sp(e.span())))
        .labelled(what)
        .boxed()
}

/// Builds a node one level above its children, cutting the tree at [`MAX_DEPTH`].
fn node(kind: ExprKind, span: Span, depth: u32) -> DExpr {
    if depth > MAX_DEPTH {
        (
            Expr {
                kind: ExprKind::Error,
                span,
            },
            MAX_DEPTH + 1,
        )
    } else {
        (Expr { kind, span }, depth)
    }
}

fn binary(op: BinaryOp, (l, dl): DExpr, (r, dr): DExpr) -> DExpr {
    let span = l.span.cover(r.span);
    node(
        ExprKind::Binary {
            op,
            lhs: Box::new(l),
            rhs: Box::new(r),
        },
        span,
        dl.max(dr) + 1,
    )
}

fn unary((op, op_span): (UnaryOp, Span), (e, d): DExpr) -> DExpr {
    let span = op_span.cover(e.span);
    node(
        ExprKind::Unary {
            op,
            expr: Box::new(e),
        },
        span,
        d + 1,
    )
}

fn error_expr(span: SimpleSpan) -> DExpr {
    (
        Expr {
            kind: ExprKind::Error,
            span: sp(span),
        },
        1,
    )
}

/// `func(arg, ...)` given the argument parser; shared by expressions and terms.
fn call_args<'t>(expr: P<'t, DExpr>) -> P<'t, (Vec<DExpr>, Span)> {
    expr.separated_by(punct(Punct::Comma))
        .collect::<Vec<_>>()
        .delimited_by(
            punct(Punct::LParen),
            punct(Punct::RParen).labelled("`)` to close the argument list"),
        )
        .recover_with(via_parser(paren_recovery(|s| vec![error_expr(s)])))
        .map_with(|args, e| (args, sp(e.span())))
        .boxed()
}

fn make_call(func: Ident, args: Vec<DExpr>, args_span: Span) -> (Call, u32) {
    let depth = args.iter().map(|a| a.1).max().unwrap_or(0) + 1;
    let span = func.span.cover(args_span);
    (
        Call {
            func,
            args: args.into_iter().map(|a| a.0).collect(),
            span,
        },
        depth,
    )
}

fn expr_parser<'t>() -> P<'t, DExpr> {
    recursive(|expr| {
        let expr: P<'t, DExpr> = expr.boxed();
        let atom = choice((
            select! { Token::Num(n) => n }
                .map_with(|n, e| (num_lit(n, sp(e.span())), sp(e.span())))
                .map(|(n, s)| node(ExprKind::Number(n), s, 1)),
            select! { Token::Str(s) => s }.map_with(|value, e| {
                let span = sp(e.span());
                node(ExprKind::Str(StrLit { value, span }), span, 1)
            }),
            name("a name")
                .then(call_args(expr.clone()).or_not())
                .map(|(func, args)| match args {
                    Some((args, args_span)) => {
                        let (call, depth) = make_call(func, args, args_span);
                        let span = call.span;
                        node(ExprKind::Call(call), span, depth)
                    }
                    None => {
                        let span = func.span;
                        node(ExprKind::Name(func), span, 1)
                    }
                }),
            expr.clone()
                .delimited_by(
                    punct(Punct::LParen),
                    punct(Punct::RParen).labelled("`)` to close the parenthesis"),
                )
                .map_with(|(inner, d), e| {
                    node(ExprKind::Paren(Box::new(inner)), sp(e.span()), d + 1)
                })
                .recover_with(via_parser(paren_recovery(error_expr))),
            just(Token::Deep).map_with(|_, e| error_expr(e.span())),
        ))
        .labelled("an expression")
        .boxed();

        let minus = punct(Punct::Minus).map(|s| (UnaryOp::Neg, s));
        let signed_atom = minus.clone().repeated().foldr(atom.clone(), unary).boxed();
        // `^` is right-associative; collecting the exponents and folding from the
        // right keeps the parser iterative.
        let power = atom
            .then(
                punct(Punct::Caret)
                    .labelled("an operator")
                    .ignore_then(signed_atom)
                    .repeated()
                    .collect::<Vec<_>>(),
            )
            .map(|(base, exps)| {
                let mut all = Vec::with_capacity(exps.len() + 1);
                all.push(base);
                all.extend(exps);
                let mut acc = all
                    .pop()
                    .unwrap_or_else(|| error_expr(SimpleSpan::new((), 0..0)));
                while let Some(lhs) = all.pop() {
                    acc = binary(BinaryOp::Pow, lhs, acc);
                }
                acc
            })
            .boxed();
        let neg = minus.repeated().foldr(power, unary).boxed();

        let op = |p: Punct, op: BinaryOp| just(Token::P(p)).to(op);
        let product = neg
            .clone()
            .foldl(
                choice((
                    op(Punct::Star, BinaryOp::Mul),
                    op(Punct::Slash, BinaryOp::Div),
                ))
                .labelled("an operator")
                .then(neg)
                .repeated(),
                |l, (o, r)| binary(o, l, r),
            )
            .boxed();
        let sum = product
            .clone()
            .foldl(
                choice((
                    op(Punct::Plus, BinaryOp::Add),
                    op(Punct::Minus, BinaryOp::Sub),
                ))
                .labelled("an operator")
                .then(product)
                .repeated(),
                |l, (o, r)| binary(o, l, r),
            )
            .boxed();
        let cmp = sum
            .clone()
            .foldl(
                choice((
                    op(Punct::EqEq, BinaryOp::Eq),
                    op(Punct::Ne, BinaryOp::Ne),
                    op(Punct::Le, BinaryOp::Le),
                    op(Punct::Ge, BinaryOp::Ge),
                    op(Punct::Lt, BinaryOp::Lt),
                    op(Punct::Gt, BinaryOp::Gt),
                ))
                .labelled("an operator")
                .then(sum)
                .repeated(),
                |l, (o, r)| binary(o, l, r),
            )
            .boxed();
        let not = kw("not").map(|s| (UnaryOp::Not, s));
        let negation = not.repeated().foldr(cmp, unary).boxed();
        let and = negation
            .clone()
            .foldl(
                kw("and")
                    .labelled("an operator")
                    .to(BinaryOp::And)
                    .then(negation)
                    .repeated(),
                |l, (o, r)| binary(o, l, r),
            )
            .boxed();
        and.clone()
            .foldl(
                kw("or")
                    .labelled("an operator")
                    .to(BinaryOp::Or)
                    .then(and)
                    .repeated(),
                |l, (o, r)| binary(o, l, r),
            )
            .boxed()
    })
    .boxed()
}

/// A statement-level expression: reports a tree cut at [`MAX_DEPTH`] once.
fn expr<'t>() -> P<'t, Expr> {
    expr_parser()
        .validate(|(e, d), _, emitter| {
            if d > MAX_DEPTH {
                emitter.emit(Rich::custom(
                    SimpleSpan::new((), e.span.start..e.span.end),
                    format!(
                        "this expression is nested more than {MAX_DEPTH} levels deep; split it into several `let` statements"
                    ),
                ));
            }
            e
        })
        .boxed()
}

/// Terms of a formula or a `vary` list: products of names and calls with powers.
fn term<'t>() -> P<'t, Term> {
    let atom =
        name("a term")
            .then(call_args(expr_parser()).or_not())
            .map(|(func, args)| match args {
                Some((args, args_span)) => Atom::Call(make_call(func, args, args_span).0),
                None => Atom::Name(func),
            });
    let power = punct(Punct::Caret)
        .ignore_then(
            tok_span().validate(|(t, s), _, emitter| {
                let p = match &t {
                    Token::Num(n) => n.parse::<u32>().ok().filter(|p| *p >= 1),
                    _ => None,
                };
                if p.is_none() {
                    emitter.emit(Rich::custom(
                        s,
                        format!(
                            "the power of a term must be a whole number of at least 1, as in `x^2`; found {}",
                            t.describe()
                        ),
                    ));
                }
                p.map(|p| (p, sp(s)))
            }),
        )
        .or_not()
        .map(Option::flatten);
    let factor = atom.then(power).map(|(base, power)| {
        let base_span = match &base {
            Atom::Name(i) => i.span,
            Atom::Call(c) => c.span,
        };
        let span = match power {
            Some((_, s)) => base_span.cover(s),
            None => base_span,
        };
        Factor { base, power, span }
    });
    factor
        .separated_by(punct(Punct::Star).labelled("an operator"))
        .at_least(1)
        .collect::<Vec<_>>()
        .map(|factors| {
            let span = factors
                .first()
                .map(|f| f.span)
                .unwrap_or_default()
                .cover(factors.last().map(|f| f.span).unwrap_or_default());
            Term { factors, span }
        })
        .boxed()
}

/// What comes next, without consuming it: for messages that name the token found.
fn peek<'t>() -> P<'t, (Option<Token>, SimpleSpan)> {
    choice((
        tok_span().map(|(t, s)| (Some(t), s)).rewind(),
        end().map_with(|_, e| (None, e.span())),
    ))
    .boxed()
}

fn describe(t: &Option<Token>) -> String {
    match t {
        Some(t) => t.describe(),
        None => "the end of the file".to_string(),
    }
}

fn target<'t>(stmt: &'static str) -> P<'t, Target> {
    name("the model name")
        .then_ignore(punct(Punct::Colon).labelled(match stmt {
            "probe" => "`:` after the model name, as in `probe full: x across w at mean`",
            "regions" => "`:` after the model name, as in `regions full: x across w`",
            "turning" => "`:` after the model name, as in `turning shape: x`",
            "effect" => "`:` after the model name, as in `effect shape: x`",
            _ => "`:` after the model name, as in `plot full: x to \"x.svg\"`",
        }))
        .then(name("the variable whose effect is probed"))
        .map(|(model, focal)| Target { model, focal })
        .boxed()
}

fn at_values<'t>() -> P<'t, Vec<AtValue>> {
    let sign = choice((punct(Punct::Minus).to(-1.0), punct(Punct::Plus).to(1.0)));
    let numeric = sign
        .or_not()
        .then(tok_span().filter(|(t, _)| matches!(t, Token::Num(_) | Token::NumUnit(..))))
        .validate(|(sign, (t, _)), e, emitter| {
            let s = sign.unwrap_or(1.0);
            let span = sp(e.span());
            let kind = match t {
                Token::Num(n) => AtKind::Number(s * n.parse::<f64>().unwrap_or(f64::NAN)),
                Token::NumUnit(n, u) => {
                    if u != "sd" {
                        emitter.emit(Rich::custom(
                            e.span(),
                            format!(
                                "`{n}{u}` is not a value; a number followed directly by `sd` is a multiple of the SD, as in `+1sd`"
                            ),
                        ));
                    }
                    AtKind::Sd(s * n.parse::<f64>().unwrap_or(f64::NAN))
                }
                _ => AtKind::Number(f64::NAN),
            };
            AtValue { kind, span }
        });
    let named = word("a value").map(|i| AtValue {
        span: i.span,
        kind: AtKind::Named(i),
    });
    choice((numeric, named))
        .labelled("a value such as `-1sd`, `mean`, `p90` or a number")
        .separated_by(punct(Punct::Comma))
        .at_least(1)
        .collect()
        .boxed()
}

fn bootstrap<'t>() -> P<'t, Option<Bootstrap>> {
    kw("bootstrap")
        .then(number("the number of bootstrap draws"))
        .then(
            kw("seed")
                .ignore_then(number("a whole number after `seed`"))
                .or_not(),
        )
        .map_with(|((_, draws), seed), e| Bootstrap {
            draws,
            seed,
            span: sp(e.span()),
        })
        .or_not()
        .boxed()
}

/// The name list of `errors cluster G, H`: a group name must not be the outcome
/// of a following formula, so a name followed by `=` or `(` is left alone.
fn error_groups<'t>() -> P<'t, Vec<Ident>> {
    let first = name("the cluster grouping").then_ignore(
        any()
            .filter(|t: &Token| {
                matches!(
                    t,
                    Token::P(
                        Punct::Eq
                            | Punct::LParen
                            | Punct::Plus
                            | Punct::Minus
                            | Punct::Star
                            | Punct::Slash
                            | Punct::Caret
                    )
                )
            })
            .not()
            .rewind(),
    );
    first
        .then(
            punct(Punct::Comma)
                .ignore_then(name("a grouping"))
                .repeated()
                .collect::<Vec<_>>(),
        )
        .map(|(f, mut rest)| {
            rest.insert(0, f);
            rest
        })
        .or_not()
        .map(Option::unwrap_or_default)
        .boxed()
}

fn comma_names<'t>(what: &'static str) -> P<'t, Vec<Ident>> {
    name(what)
        .separated_by(punct(Punct::Comma))
        .at_least(1)
        .collect()
        .boxed()
}

/// Tokens that cannot follow a finished formula: terms are joined with `+` only.
fn bad_after_formula(t: &Token) -> bool {
    matches!(
        t,
        Token::P(
            Punct::Minus
                | Punct::Slash
                | Punct::LParen
                | Punct::Eq
                | Punct::EqEq
                | Punct::Ne
                | Punct::Lt
                | Punct::Gt
                | Punct::Le
                | Punct::Ge
                | Punct::Caret
                | Punct::Dot
        ) | Token::Num(_)
            | Token::NumUnit(..)
            | Token::Str(_)
    )
}

fn model_stmt<'t>(ls: LineStarts) -> P<'t, ModelStmt> {
    let fixed = kw("fixed")
        .ignore_then(comma_names("a grouping to sweep out"))
        .map(|groups| ModelStmtKind::Fixed { groups });
    let effect = choice((
        kw("intercept").map(VaryEffect::Intercept),
        term().map(VaryEffect::Term),
    ));
    let vary = kw("vary")
        .ignore_then(
            effect
                .labelled("`intercept` or a term")
                .separated_by(punct(Punct::Comma))
                .at_least(1)
                .collect::<Vec<_>>(),
        )
        .then_ignore(kw("by").labelled("`by` and the grouping"))
        .then(name("the grouping after `by`"))
        .map(|(effects, by)| ModelStmtKind::Vary { effects, by });
    let errors = kw("errors")
        .ignore_then(word(
            "the kind of standard errors (`classical`, `hc1`, `hc3` or `cluster`)",
        ))
        .then(error_groups())
        .map(|(kind, groups)| ModelStmtKind::Errors { kind, groups });
    let estimate = kw("estimate")
        .ignore_then(word("the estimation method (`reml` or `ml`)"))
        .map(|method| ModelStmtKind::Estimate { method });
    let df = kw("df")
        .ignore_then(word("the df method (`satterthwaite` or `residual`)"))
        .map(|method| ModelStmtKind::Df { method });
    let where_ = kw("where")
        .ignore_then(expr())
        .map(|cond| ModelStmtKind::Where { cond });

    let terms = term()
        .separated_by(punct(Punct::Plus).labelled("an operator"))
        .at_least(1)
        .collect::<Vec<_>>()
        .then_ignore(peek().try_map(|(t, s), _| match &t {
            Some(tok) if bad_after_formula(tok) => Err(Rich::custom(
                s,
                format!(
                    "expected `+` or the end of the formula, found {}; terms are joined with `+` only",
                    tok.describe()
                ),
            )),
            _ => Ok(()),
        }))
        .boxed();
    let formula = expr()
        .then_with_ctx(equals_after_outcome())
        .then(terms)
        .map(|((outcome, ()), terms)| ModelStmtKind::Formula { outcome, terms });

    let keyword_stmt = choice((fixed, vary, errors, estimate, df, where_)).labelled(
        "a model statement (a formula, `fixed`, `vary`, `errors`, `estimate`, `df` or `where`)",
    );
    let stmt = choice((keyword_stmt, formula)).map_with(|kind, e| ModelStmt {
        kind,
        span: sp(e.span()),
    });

    let stop = tok_span()
        .filter(move |(t, s)| ls.model_resync(t, *s))
        .ignored();
    let skip = tok_span()
        .filter(|(t, _)| *t != Token::P(Punct::RBrace))
        .ignored()
        .then(
            skip_group()
                .or(any().and_is(stop.not()).ignored())
                .repeated(),
        )
        .map_with(|_, e| ModelStmt {
            kind: ModelStmtKind::Error,
            span: sp(e.span()),
        });
    stmt.recover_with(via_parser(skip)).boxed()
}

/// The `=` of a formula. It runs with the outcome as context so that the error
/// names the outcome and sits at the token found instead of the `=`.
fn equals_after_outcome<'t>() -> Boxed<'t, 't, In<'t>, (), extra::Full<Rich<'t, Token>, (), Expr>> {
    custom(|inp| {
        let before = inp.cursor();
        let found = inp.next();
        if found == Some(Token::P(Punct::Eq)) {
            return Ok(());
        }
        let span = inp.span_since(&before);
        let outcome: &Expr = inp.ctx();
        Err(Rich::custom(
            span,
            format!(
                "expected `=` after the outcome `{}`, found {}",
                short_text(&crate::format::expr_text(outcome)),
                describe(&found)
            ),
        ))
    })
    .boxed()
}

/// A parenthesised or braced group skipped whole during recovery. Unlike a
/// plain delimiter search it gives up at a top-level keyword that begins a
/// line, so an unclosed `(` cannot drag the search to the end of the file.
fn skip_group<'t>() -> P<'t, ()> {
    recursive(|group| {
        let inner = choice((
            group,
            any()
                .filter(|t: &Token| {
                    !matches!(
                        t,
                        Token::P(Punct::LParen | Punct::RParen | Punct::LBrace | Punct::RBrace)
                    ) && !top_only_start(t)
                })
                .ignored(),
        ))
        .repeated();
        choice((
            inner
                .clone()
                .delimited_by(just(Token::P(Punct::LParen)), just(Token::P(Punct::RParen))),
            inner.delimited_by(just(Token::P(Punct::LBrace)), just(Token::P(Punct::RBrace))),
        ))
    })
    .boxed()
}

/// Recovery for a broken parenthesised part of an expression.
fn paren_recovery<'t, O: 't>(fallback: impl Fn(SimpleSpan) -> O + Clone + 't) -> P<'t, O> {
    just(Token::P(Punct::LParen))
        .rewind()
        .ignore_then(skip_group())
        .map_with(move |_, e| fallback(e.span()))
        .boxed()
}

fn short_text(s: &str) -> String {
    if s.chars().count() > 40 {
        let head: String = s.chars().take(37).collect();
        format!("{head}...")
    } else {
        s.to_string()
    }
}

fn model<'t>(ls: LineStarts) -> P<'t, StmtKind> {
    let body_end = any()
        .filter(|t: &Token| *t == Token::P(Punct::RBrace) || top_only_start(t))
        .ignored()
        .or(end());
    kw("model")
        .ignore_then(name("the model name"))
        .then(punct(Punct::LBrace).labelled("`{` after the model name"))
        .then(
            body_end
                .not()
                .ignore_then(model_stmt(ls))
                .repeated()
                .collect::<Vec<_>>(),
        )
        .then(
            punct(Punct::RBrace)
                .map(Some)
                .or(body_end.rewind().to(None)),
        )
        .validate(|(((name, open), body), close), e, emitter| {
            if close.is_none() {
                emitter.emit(Rich::custom(
                    SimpleSpan::new((), open.start..open.end),
                    format!(
                        "unclosed `{{` of model `{}`; add `}}` after its last statement",
                        name.name
                    ),
                ));
            }
            StmtKind::Model(Model {
                name,
                body,
                span: sp(e.span()),
            })
        })
        .boxed()
}

fn statement<'t>(ls: LineStarts) -> P<'t, Stmt> {
    let source = kw("source")
        .ignore_then(string("the path of the data file in double quotes"))
        .then(
            kw("missing")
                .ignore_then(
                    string("a missing-value token in double quotes")
                        .separated_by(punct(Punct::Comma))
                        .at_least(1)
                        .collect::<Vec<_>>(),
                )
                .or_not(),
        )
        .map(|(path, missing)| StmtKind::Source {
            path,
            missing: missing.unwrap_or_default(),
        });
    let groups = kw("groups")
        .ignore_then(
            name("a grouping column")
                .separated_by(kw("in"))
                .at_least(1)
                .collect::<Vec<_>>(),
        )
        .map(|levels| StmtKind::Groups { levels });
    let panel = kw("panel")
        .ignore_then(name("the unit id column"))
        .then_ignore(
            kw("over").labelled("`over` and the time column, as in `panel firm over year`"),
        )
        .then(name("the time column"))
        .map(|(unit, time)| StmtKind::Panel { unit, time });
    let let_ = kw("let")
        .ignore_then(name("the name of the new variable"))
        .then_ignore(punct(Punct::Eq).labelled("`=` after the new variable's name"))
        .then(expr())
        .map(|(name, value)| StmtKind::Let { name, value });
    let where_ = kw("where")
        .ignore_then(expr())
        .map(|cond| StmtKind::Where { cond });
    let across = || {
        kw("across")
            .labelled("`across` and the moderator")
            .ignore_then(name("the moderator"))
    };
    let at = || {
        kw("at")
            .labelled("`at` and the moderator values")
            .ignore_then(at_values())
    };
    let probe = kw("probe")
        .ignore_then(target("probe"))
        .then(across())
        .then(at())
        .then(bootstrap())
        .map(|(((target, moderator), at), bootstrap)| StmtKind::Probe {
            target,
            moderator,
            at,
            bootstrap,
        });
    let regions = kw("regions")
        .ignore_then(target("regions"))
        .then(across())
        .then(
            kw("alpha")
                .ignore_then(number("the significance level, such as 0.05"))
                .or_not(),
        )
        .then(bootstrap())
        .map(
            |(((target, moderator), alpha), bootstrap)| StmtKind::Regions {
                target,
                moderator,
                alpha,
                bootstrap,
            },
        );
    let turning = kw("turning")
        .ignore_then(target("turning"))
        .then(across().then(at()).or_not())
        .then(bootstrap())
        .map(|((target, m), bootstrap)| {
            let (moderator, at) = match m {
                Some((w, at)) => (Some(w), at),
                None => (None, Vec::new()),
            };
            StmtKind::Turning {
                target,
                moderator,
                at,
                bootstrap,
            }
        });
    let effect = kw("effect")
        .ignore_then(target("effect"))
        .map(|target| StmtKind::Effect { target });
    let plot = kw("plot")
        .ignore_then(target("plot"))
        .then(across().then(at().or_not()).or_not())
        .then_ignore(kw("to").labelled("`to` and the figure's file name"))
        .then(string("the figure's file name in double quotes"))
        .map(|((target, m), path)| {
            let (moderator, at) = match m {
                Some((w, at)) => (Some(w), at.unwrap_or_default()),
                None => (None, Vec::new()),
            };
            StmtKind::Plot {
                target,
                moderator,
                at,
                path,
            }
        });
    let compare = kw("compare")
        .ignore_then(comma_names("a model name"))
        .map(|models| StmtKind::Compare { models });

    let stmt = choice((
        source,
        groups,
        panel,
        let_,
        where_,
        model(ls.clone()),
        probe,
        regions,
        turning,
        effect,
        plot,
        compare,
    ))
    .labelled("a statement")
    .map_with(|kind, e| Stmt {
        kind,
        span: sp(e.span()),
    });

    let stop = any().filter(top_start).ignored();
    let skip = any()
        .ignored()
        .then(
            skip_group()
                .or(any().and_is(stop.not()).ignored())
                .repeated(),
        )
        .map_with(|_, e| Stmt {
            kind: StmtKind::Error,
            span: sp(e.span()),
        });
    stmt.recover_with(via_parser(skip)).boxed()
}

/// Replaces parenthesis and brace groups nested deeper than [`MAX_NESTING`] by
/// one [`Token::Deep`], so the recursive parser stays within the stack.
fn cap_nesting(tokens: Vec<(Token, Span)>, errors: &mut Vec<SyntaxError>) -> Vec<(Token, Span)> {
    let mut out = Vec::with_capacity(tokens.len());
    let mut depth = 0usize;
    let mut iter = tokens.into_iter();
    while let Some((t, s)) = iter.next() {
        match t {
            Token::P(Punct::LParen | Punct::LBrace) if depth >= MAX_NESTING => {
                let mut inner = 1usize;
                let mut end = s.end;
                for (t2, s2) in iter.by_ref() {
                    end = s2.end;
                    match t2 {
                        Token::P(Punct::LParen | Punct::LBrace) => inner += 1,
                        Token::P(Punct::RParen | Punct::RBrace) => inner -= 1,
                        _ => {}
                    }
                    if inner == 0 {
                        break;
                    }
                }
                errors.push(SyntaxError {
                    span: s,
                    message: format!(
                        "parentheses and braces are nested more than {MAX_NESTING} levels deep here; simplify the expression"
                    ),
                });
                out.push((Token::Deep, Span::new(s.start, end)));
            }
            Token::P(Punct::LParen | Punct::LBrace) => {
                depth += 1;
                out.push((t, s));
            }
            Token::P(Punct::RParen | Punct::RBrace) => {
                depth = depth.saturating_sub(1);
                out.push((t, s));
            }
            _ => out.push((t, s)),
        }
    }
    out
}

/// Whether a line ending in this token goes on in the next line.
fn continues(t: &Token) -> bool {
    match t {
        Token::P(p) => !matches!(p, Punct::RParen | Punct::RBrace),
        Token::Word(w) | Token::Kw(w) => matches!(
            w.as_str(),
            "and"
                | "or"
                | "not"
                | "in"
                | "over"
                | "across"
                | "at"
                | "by"
                | "to"
                | "alpha"
                | "bootstrap"
                | "seed"
                | "missing"
        ),
        _ => false,
    }
}

/// Turns statement and model keywords that begin a line into [`Token::Kw`]:
/// such a word always starts a statement, so a forgotten value before it cannot
/// swallow the next statement. Elsewhere a keyword is an ordinary name. Also
/// returns the start offsets of the lines that do not continue the previous one.
fn mark_keywords(text: &str, tokens: Vec<(Token, Span)>) -> (Vec<(Token, Span)>, HashSet<usize>) {
    let mut fresh = HashSet::new();
    let mut out: Vec<(Token, Span)> = Vec::with_capacity(tokens.len());
    let index = crate::LineIndex::new(text);
    let mut prev_line = None;
    for (t, s) in tokens {
        let line = index.line_of(s.start);
        let bol = prev_line != Some(line);
        prev_line = Some(line);
        let t = match t {
            Token::Word(w)
                if bol
                    && (STATEMENT_KEYWORDS.contains(&w.as_str())
                        || MODEL_KEYWORDS.contains(&w.as_str())) =>
            {
                Token::Kw(w)
            }
            t => t,
        };
        if bol && !out.last().is_some_and(|(p, _)| continues(p)) {
            fresh.insert(s.start);
        }
        out.push((t, s));
    }
    (out, fresh)
}

fn pattern_text(p: &chumsky::error::RichPattern<'_, Token>) -> Option<String> {
    use chumsky::error::RichPattern;
    match p {
        RichPattern::Token(t) => Some(t.describe()),
        RichPattern::Label(l) => Some(l.to_string()),
        RichPattern::Identifier(i) => Some(format!("`{i}`")),
        RichPattern::EndOfInput => Some("the end of the file".to_string()),
        _ => None,
    }
}

fn join_or(items: &[String]) -> String {
    match items {
        [] => "something else".to_string(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} or {}", init.join(", "), last),
    }
}

/// A sentence for the user from chumsky's error.
fn message(e: &Rich<'_, Token>) -> String {
    use chumsky::error::RichReason;
    match e.reason() {
        RichReason::Custom(m) => m.clone(),
        RichReason::ExpectedFound { expected, found } => {
            let mut items: Vec<String> = Vec::new();
            for p in expected {
                if let Some(s) = pattern_text(p) {
                    if !items.contains(&s) {
                        items.push(s);
                    }
                }
            }
            // Tokens that could always come next (a call's `(`, an operator,
            // a sign) only bury the expectation that matters.
            if items.len() > 1 {
                let expression = items.iter().any(|i| i == "an expression");
                items.retain(|i| {
                    let noise = matches!(i.as_str(), "`(`" | "`{`" | "an operator")
                        || (expression && matches!(i.as_str(), "`-`" | "`not`"));
                    !noise
                });
            }
            let found = describe(&found.as_ref().map(|t| (**t).clone()));
            let stmt = items.iter().any(|i| i == "a statement");
            let model_stmt = items.iter().any(|i| i.starts_with("a model statement"));
            if stmt || model_stmt {
                // After a complete statement anything may continue it; naming
                // every operator would drown the point.
                items.retain(|i| {
                    i != "an operator" && i != "a statement" && !i.starts_with("a model statement")
                });
                let what = if stmt {
                    "a new statement"
                } else {
                    "a new model statement"
                };
                items.push(what.to_string());
                let hint = if stmt {
                    "; each statement begins with a keyword such as `model`, `let` or `probe`"
                } else {
                    "; inside a model each statement is a formula or begins with `fixed`, `vary`, `errors`, `estimate`, `df` or `where`"
                };
                format!("expected {}, found {found}{hint}", join_or(&items))
            } else {
                format!("expected {}, found {found}", join_or(&items))
            }
        }
    }
}

pub(crate) fn parse_tokens(
    text: &str,
    tokens: Vec<(Token, Span)>,
    errors: &mut Vec<SyntaxError>,
) -> File {
    let tokens = cap_nesting(tokens, errors);
    let (tokens, fresh) = mark_keywords(text, tokens);
    let ls = LineStarts(Rc::new(fresh));
    let bad: HashSet<usize> = tokens
        .iter()
        .filter(|(t, _)| matches!(t, Token::Bad(_) | Token::Deep))
        .map(|(_, s)| s.start)
        .collect();
    let toks: Vec<(Token, SimpleSpan)> = tokens
        .into_iter()
        .map(|(t, s)| (t, SimpleSpan::new((), s.start..s.end)))
        .collect();
    let eoi = SimpleSpan::new((), text.len()..text.len());
    let parser = statement(ls)
        .repeated()
        .collect::<Vec<_>>()
        .then_ignore(end())
        .map(|stmts| File { stmts });
    let (file, errs) = parser
        .parse(toks.as_slice().split_token_span(eoi))
        .into_output_errors();
    for e in errs {
        let span = Span::new(e.span().start, e.span().end);
        // The lexer has already explained bad characters; a second message at
        // the same place would only repeat it less clearly.
        if bad.contains(&span.start) {
            continue;
        }
        let message = message(&e);
        if !errors
            .iter()
            .any(|x| x.span == span && x.message == message)
        {
            errors.push(SyntaxError { span, message });
        }
    }
    file.unwrap_or(File { stmts: Vec::new() })
}
