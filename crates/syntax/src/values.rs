//! The fixed vocabulary of the language, shared by the checker, the formatter's
//! tests and the language server's completion so that they cannot drift apart.

/// Words that begin a top-level statement.
pub const STATEMENT_KEYWORDS: &[&str] = &[
    "source", "groups", "panel", "let", "where", "model", "probe", "regions", "turning", "effect",
    "plot", "compare",
];

/// Words that begin a statement inside `model NAME { ... }`.
pub const MODEL_KEYWORDS: &[&str] = &["fixed", "vary", "errors", "estimate", "df", "where"];

/// The functions of the language: name, argument counts accepted, signature and a
/// one-line description for help, hover and completion.
pub const FUNCTIONS: &[FunctionInfo] = &[
    FunctionInfo {
        name: "within",
        min_args: 2,
        max_args: 2,
        signature: "within(x, G)",
        doc: "deviation of x from its mean in each group of G",
    },
    FunctionInfo {
        name: "between",
        min_args: 2,
        max_args: 2,
        signature: "between(x, G)",
        doc: "the mean of x in each group of G",
    },
    FunctionInfo {
        name: "center",
        min_args: 1,
        max_args: 1,
        signature: "center(x)",
        doc: "x minus its sample mean",
    },
    FunctionInfo {
        name: "z",
        min_args: 1,
        max_args: 1,
        signature: "z(x)",
        doc: "x standardized: minus its mean, divided by its SD",
    },
    FunctionInfo {
        name: "log",
        min_args: 1,
        max_args: 1,
        signature: "log(x)",
        doc: "natural logarithm; needs x > 0",
    },
    FunctionInfo {
        name: "sqrt",
        min_args: 1,
        max_args: 1,
        signature: "sqrt(x)",
        doc: "square root; needs x >= 0",
    },
    FunctionInfo {
        name: "lag",
        min_args: 1,
        max_args: 2,
        signature: "lag(x, k = 1)",
        doc: "x k periods earlier in the same unit (needs `panel`); a gap gives a missing value",
    },
    FunctionInfo {
        name: "lead",
        min_args: 1,
        max_args: 2,
        signature: "lead(x, k = 1)",
        doc: "x k periods later in the same unit (needs `panel`)",
    },
    FunctionInfo {
        name: "diff",
        min_args: 1,
        max_args: 2,
        signature: "diff(x, k = 1)",
        doc: "x minus x k periods earlier in the same unit (needs `panel`)",
    },
    FunctionInfo {
        name: "ref",
        min_args: 2,
        max_args: 2,
        signature: "ref(x, \"level\")",
        doc: "categorical x with the named level as reference",
    },
    FunctionInfo {
        name: "categorical",
        min_args: 1,
        max_args: 1,
        signature: "categorical(x)",
        doc: "treat the codes of x as categories",
    },
];

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct FunctionInfo {
    pub name: &'static str,
    pub min_args: usize,
    pub max_args: usize,
    pub signature: &'static str,
    pub doc: &'static str,
}

/// A named value after `at`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum NamedValue {
    Mean,
    Min,
    Max,
    /// `p0` … `p100`.
    Percentile(u8),
}

/// Classify a word used after `at`; `None` for a word that is not a value.
pub fn named_value(word: &str) -> Option<NamedValue> {
    match word {
        "mean" => Some(NamedValue::Mean),
        "min" => Some(NamedValue::Min),
        "max" => Some(NamedValue::Max),
        _ => {
            let digits = word.strip_prefix('p')?;
            if digits.is_empty() || digits.len() > 3 || !digits.bytes().all(|b| b.is_ascii_digit())
            {
                return None;
            }
            let p: u32 = digits.parse().ok()?;
            (p <= 100).then_some(NamedValue::Percentile(p as u8))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentiles_are_zero_to_hundred() {
        assert_eq!(named_value("p0"), Some(NamedValue::Percentile(0)));
        assert_eq!(named_value("p100"), Some(NamedValue::Percentile(100)));
        assert_eq!(named_value("p101"), None);
        assert_eq!(named_value("p"), None);
        assert_eq!(named_value("median"), None);
    }
}
