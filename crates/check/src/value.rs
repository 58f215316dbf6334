//! Resolved expressions: names replaced by column indexes, `let` names inlined,
//! functions identified. This is what the engine evaluates on the estimation
//! sample; the checker evaluates it on all rows to learn variation and missingness.

use syntax::ast::BinaryOp;

#[derive(Clone, Debug, PartialEq)]
pub enum Value {
    /// A column of the frame, by index.
    Column(usize),
    Number(f64),
    /// A string literal: a level to compare a categorical column with.
    Text(String),
    Neg(Box<Value>),
    Not(Box<Value>),
    Binary(BinaryOp, Box<Value>, Box<Value>),
    /// Deviation from the mean of the group given by the column index.
    Within(Box<Value>, usize),
    /// The mean of the group given by the column index.
    Between(Box<Value>, usize),
    Center(Box<Value>),
    Z(Box<Value>),
    Log(Box<Value>),
    Sqrt(Box<Value>),
    /// `lag(x, k)` is `k > 0`, `lead(x, k)` is `k < 0`; `diff` subtracts the shifted value.
    Shift {
        x: Box<Value>,
        k: i64,
        diff: bool,
    },
    /// Indicator-coded categories, with the reference level when `ref` names one.
    Categorical {
        x: Box<Value>,
        reference: Option<String>,
    },
}

/// What kind of values an expression yields.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Ty {
    Number,
    /// Categories (a text column, `categorical(x)`, `ref(x, ..)`).
    Categorical,
    /// A string literal.
    Text,
    /// A comparison or `and`/`or`/`not`: 1 or 0.
    Logical,
    /// Could not be resolved; an error has been reported already.
    Unknown,
}

impl Value {
    /// Whether the value uses a panel shift anywhere.
    pub fn uses_shift(&self) -> bool {
        match self {
            Value::Shift { .. } => true,
            Value::Column(_) | Value::Number(_) | Value::Text(_) => false,
            Value::Neg(x)
            | Value::Not(x)
            | Value::Within(x, _)
            | Value::Between(x, _)
            | Value::Center(x)
            | Value::Z(x)
            | Value::Log(x)
            | Value::Sqrt(x)
            | Value::Categorical { x, .. } => x.uses_shift(),
            Value::Binary(_, a, b) => a.uses_shift() || b.uses_shift(),
        }
    }

    /// Column indexes the value reads, in first-use order.
    pub fn columns(&self, out: &mut Vec<usize>) {
        match self {
            Value::Column(c) => {
                if !out.contains(c) {
                    out.push(*c)
                }
            }
            Value::Number(_) | Value::Text(_) => {}
            Value::Within(x, g) | Value::Between(x, g) => {
                x.columns(out);
                if !out.contains(g) {
                    out.push(*g)
                }
            }
            Value::Neg(x)
            | Value::Not(x)
            | Value::Center(x)
            | Value::Z(x)
            | Value::Log(x)
            | Value::Sqrt(x)
            | Value::Shift { x, .. }
            | Value::Categorical { x, .. } => x.columns(out),
            Value::Binary(_, a, b) => {
                a.columns(out);
                b.columns(out);
            }
        }
    }
}
