//! The syntax tree of a `.slope` file.
//!
//! Every node carries the byte span of its source text so that the checker, the
//! formatter and the language server can point at it. The tree is what the parser
//! could make of the text: statements it could not parse are kept as
//! [`StmtKind::Error`] so a file with mistakes still yields everything around them.
//!
//! Option values (`estimate reml`, `errors hc3`, `df satterthwaite`) and the named
//! values after `at` (`mean`, `p90`) are kept as plain identifiers: deciding whether
//! a word is a known option is the checker's job, so that a misspelling gets a
//! suggestion instead of a bare syntax error.

use crate::Span;

/// A whole file: the top-level statements in source order.
#[derive(Clone, Debug, PartialEq)]
pub struct File {
    pub stmts: Vec<Stmt>,
}

/// A name as written: a bare identifier or a backtick-quoted column name.
#[derive(Clone, Debug, PartialEq)]
pub struct Ident {
    /// The name without backticks.
    pub name: String,
    pub span: Span,
    /// Written as `` `team size` ``; the formatter keeps the backticks.
    pub backtick: bool,
}

/// A double-quoted string with escapes resolved.
#[derive(Clone, Debug, PartialEq)]
pub struct StrLit {
    pub value: String,
    pub span: Span,
}

/// A number literal; `text` is kept so the formatter reprints it unchanged.
#[derive(Clone, Debug, PartialEq)]
pub struct NumLit {
    pub value: f64,
    pub text: String,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Stmt {
    pub kind: StmtKind,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub enum StmtKind {
    /// `source "PATH" [missing "TOK", ...]`
    Source { path: StrLit, missing: Vec<StrLit> },
    /// `groups A in B in C`, innermost first.
    Groups { levels: Vec<Ident> },
    /// `panel UNIT over TIME`
    Panel { unit: Ident, time: Ident },
    /// `let NAME = EXPR`
    Let { name: Ident, value: Expr },
    /// `where EXPR`, at top level (applies to every model) or in a model.
    Where { cond: Expr },
    /// `model NAME { ... }`
    Model(Model),
    /// `probe M: X across W at V, ... [bootstrap N [seed S]]`
    Probe {
        target: Target,
        moderator: Ident,
        at: Vec<AtValue>,
        bootstrap: Option<Bootstrap>,
    },
    /// `regions M: X across W [alpha A] [bootstrap N [seed S]]`
    Regions {
        target: Target,
        moderator: Ident,
        alpha: Option<NumLit>,
        bootstrap: Option<Bootstrap>,
    },
    /// `turning M: X [across W at V, ...] [bootstrap N [seed S]]`
    Turning {
        target: Target,
        moderator: Option<Ident>,
        at: Vec<AtValue>,
        bootstrap: Option<Bootstrap>,
    },
    /// `effect M: X`
    Effect { target: Target },
    /// `plot M: X [across W [at V, ...]] to "FILE.svg"`
    Plot {
        target: Target,
        moderator: Option<Ident>,
        at: Vec<AtValue>,
        path: StrLit,
    },
    /// `compare M1, M2, ...`
    Compare { models: Vec<Ident> },
    /// Text the parser could not make a statement of; the error is in `Parsed::errors`.
    Error,
}

/// The `M: X` head shared by the probing statements.
#[derive(Clone, Debug, PartialEq)]
pub struct Target {
    pub model: Ident,
    pub focal: Ident,
}

/// `bootstrap N [seed S]` after a probing statement.
#[derive(Clone, Debug, PartialEq)]
pub struct Bootstrap {
    pub draws: NumLit,
    pub seed: Option<NumLit>,
    pub span: Span,
}

/// One value after `at`.
#[derive(Clone, Debug, PartialEq)]
pub struct AtValue {
    pub kind: AtKind,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub enum AtKind {
    /// A plain number, possibly signed: `2.5`, `-1`.
    Number(f64),
    /// A signed multiple of the SD around the mean: `-1sd`, `+2sd`, `0.5sd`.
    Sd(f64),
    /// A word: `mean`, `min`, `max`, `p90`, or an unknown word the checker reports.
    /// [`crate::named_value`] classifies it.
    Named(Ident),
}

#[derive(Clone, Debug, PartialEq)]
pub struct Model {
    pub name: Ident,
    pub body: Vec<ModelStmt>,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub struct ModelStmt {
    pub kind: ModelStmtKind,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub enum ModelStmtKind {
    /// `OUTCOME = TERM + TERM + ...`
    Formula { outcome: Expr, terms: Vec<Term> },
    /// `fixed A, B`
    Fixed { groups: Vec<Ident> },
    /// `vary intercept, TERM, ... by G`
    Vary { effects: Vec<VaryEffect>, by: Ident },
    /// `errors KIND [G [, H]]`, e.g. `errors hc3`, `errors cluster firm, year`.
    Errors { kind: Ident, groups: Vec<Ident> },
    /// `estimate reml|ml`
    Estimate { method: Ident },
    /// `df satterthwaite|residual`
    Df { method: Ident },
    /// `where EXPR` inside a model.
    Where { cond: Expr },
    /// Text inside the braces the parser could not make a statement of.
    Error,
}

#[derive(Clone, Debug, PartialEq)]
pub enum VaryEffect {
    /// The word `intercept`.
    Intercept(Span),
    Term(Term),
}

/// A product of factors: `remote_w * meetings`, `suppliers^2 * digital`.
#[derive(Clone, Debug, PartialEq)]
pub struct Term {
    pub factors: Vec<Factor>,
    pub span: Span,
}

/// A name or call, optionally raised to a positive integer power.
#[derive(Clone, Debug, PartialEq)]
pub struct Factor {
    pub base: Atom,
    /// The exponent of `x^2`, with the span of the number.
    pub power: Option<(u32, Span)>,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub enum Atom {
    Name(Ident),
    Call(Call),
}

/// `func(arg, ...)`
#[derive(Clone, Debug, PartialEq)]
pub struct Call {
    pub func: Ident,
    pub args: Vec<Expr>,
    pub span: Span,
}

/// An expression of `let`, `where`, function arguments and the outcome.
#[derive(Clone, Debug, PartialEq)]
pub struct Expr {
    pub kind: ExprKind,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq)]
pub enum ExprKind {
    Number(NumLit),
    Str(StrLit),
    Name(Ident),
    Call(Call),
    Unary {
        op: UnaryOp,
        expr: Box<Expr>,
    },
    Binary {
        op: BinaryOp,
        lhs: Box<Expr>,
        rhs: Box<Expr>,
    },
    /// Parentheses are kept so the formatter reprints what the user wrote.
    Paren(Box<Expr>),
    /// A part the parser could not read (only inside a recovered statement).
    Error,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum UnaryOp {
    Neg,
    Not,
}

/// Binary operators, loosest first: `or`; `and`; comparisons; `+ -`; `* /`; `^`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BinaryOp {
    Or,
    And,
    Eq,
    Ne,
    Lt,
    Le,
    Gt,
    Ge,
    Add,
    Sub,
    Mul,
    Div,
    Pow,
}

impl BinaryOp {
    pub fn symbol(self) -> &'static str {
        match self {
            BinaryOp::Or => "or",
            BinaryOp::And => "and",
            BinaryOp::Eq => "==",
            BinaryOp::Ne => "!=",
            BinaryOp::Lt => "<",
            BinaryOp::Le => "<=",
            BinaryOp::Gt => ">",
            BinaryOp::Ge => ">=",
            BinaryOp::Add => "+",
            BinaryOp::Sub => "-",
            BinaryOp::Mul => "*",
            BinaryOp::Div => "/",
            BinaryOp::Pow => "^",
        }
    }

    /// Binding strength; larger binds tighter.
    pub fn precedence(self) -> u8 {
        match self {
            BinaryOp::Or => 1,
            BinaryOp::And => 2,
            BinaryOp::Eq
            | BinaryOp::Ne
            | BinaryOp::Lt
            | BinaryOp::Le
            | BinaryOp::Gt
            | BinaryOp::Ge => 3,
            BinaryOp::Add | BinaryOp::Sub => 4,
            BinaryOp::Mul | BinaryOp::Div => 5,
            BinaryOp::Pow => 7,
        }
    }
}

/// A `#` comment, kept beside the tree so the formatter can put it back.
#[derive(Clone, Debug, PartialEq)]
pub struct Comment {
    /// The text after `#`, without the line break.
    pub text: String,
    pub span: Span,
}
