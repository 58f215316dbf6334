//! What the checker tells the user, in editor terms (byte spans, plain strings).
//! The CLI renders these with source excerpts; the language server converts them
//! to protocol types in one place. Neither needs to know how they were found.

use syntax::Span;

#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Severity {
    Error,
    Warning,
    Hint,
}

impl Severity {
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Error => "error",
            Severity::Warning => "warning",
            Severity::Hint => "hint",
        }
    }
}

/// One finding about the model file, pointing at the text it concerns.
#[derive(Clone, Debug, PartialEq)]
pub struct Diagnostic {
    pub severity: Severity,
    /// Stable, machine-readable name of the kind of finding (see [`codes`]).
    pub code: &'static str,
    /// A complete sentence naming the column, rows or statement at fault.
    pub message: String,
    pub span: Span,
    /// Edits that resolve the finding, when there is an obvious one.
    pub fix: Option<Fix>,
}

/// A machine-readable quick fix: replace each span by its text.
#[derive(Clone, Debug, PartialEq)]
pub struct Fix {
    pub title: String,
    pub edits: Vec<Edit>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Edit {
    pub span: Span,
    pub text: String,
}

impl Diagnostic {
    pub fn error(code: &'static str, span: Span, message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Error,
            code,
            message: message.into(),
            span,
            fix: None,
        }
    }

    pub fn warning(code: &'static str, span: Span, message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Warning,
            ..Diagnostic::error(code, span, message)
        }
    }

    pub fn hint(code: &'static str, span: Span, message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Hint,
            ..Diagnostic::error(code, span, message)
        }
    }

    pub fn with_fix(mut self, title: impl Into<String>, edits: Vec<Edit>) -> Self {
        self.fix = Some(Fix {
            title: title.into(),
            edits,
        });
        self
    }

    /// Replace one span: the common shape of a fix.
    pub fn with_replacement(
        self,
        title: impl Into<String>,
        span: Span,
        text: impl Into<String>,
    ) -> Self {
        self.with_fix(
            title,
            vec![Edit {
                span,
                text: text.into(),
            }],
        )
    }
}

/// The codes of every diagnostic, so tests, editors and scripts can match on them.
pub mod codes {
    pub const SYNTAX: &str = "syntax";
    pub const NO_SOURCE: &str = "no-source";
    pub const SECOND_SOURCE: &str = "second-source";
    pub const DATA_FILE: &str = "data-file";
    pub const NO_ROWS: &str = "no-rows";
    pub const UNKNOWN_COLUMN: &str = "unknown-column";
    pub const UNKNOWN_FUNCTION: &str = "unknown-function";
    pub const ARGUMENT_COUNT: &str = "argument-count";
    pub const BAD_ARGUMENT: &str = "bad-argument";
    pub const TEXT_AS_NUMBER: &str = "text-as-number";
    pub const ALL_MISSING: &str = "all-missing";
    pub const CONSTANT: &str = "constant";
    pub const NOT_NESTED: &str = "not-nested";
    pub const SECOND_STRUCTURE: &str = "second-structure";
    pub const PANEL_DUPLICATE: &str = "panel-duplicate";
    pub const PANEL_TIME: &str = "panel-time";
    pub const PANEL_GAPS: &str = "panel-gaps";
    pub const NEEDS_PANEL: &str = "needs-panel";
    pub const DUPLICATE_NAME: &str = "duplicate-name";
    pub const SHADOWS_COLUMN: &str = "shadows-column";
    pub const USED_BEFORE_DEFINITION: &str = "used-before-definition";
    pub const NO_OUTCOME: &str = "no-outcome";
    pub const SECOND_OUTCOME: &str = "second-outcome";
    pub const DUPLICATE_TERM: &str = "duplicate-term";
    pub const MISSING_LOWER_ORDER: &str = "missing-lower-order";
    pub const ABSORBED_TERM: &str = "absorbed-term";
    pub const WITHIN_PRODUCT: &str = "within-product";
    pub const SLOPE_NOT_VARYING: &str = "slope-not-varying";
    pub const SLOPE_WITHOUT_FIXED: &str = "slope-without-fixed";
    pub const FIXED_AND_VARY: &str = "fixed-and-vary";
    pub const UNKNOWN_OPTION: &str = "unknown-option";
    pub const OPTION_NOT_APPLICABLE: &str = "option-not-applicable";
    pub const REPEATED_OPTION: &str = "repeated-option";
    pub const ROWS_DROPPED: &str = "rows-dropped";
    pub const DOMAIN: &str = "domain";
    pub const UNKNOWN_LEVEL: &str = "unknown-level";
    pub const UNKNOWN_MODEL: &str = "unknown-model";
    pub const NOT_IN_MODEL: &str = "not-in-model";
    pub const NO_INTERACTION: &str = "no-interaction";
    pub const NO_SQUARE: &str = "no-square";
    pub const CATEGORICAL_MODERATOR: &str = "categorical-moderator";
    pub const BAD_VALUE: &str = "bad-value";
    pub const COMPARE: &str = "compare";
    pub const FEW_GROUPS: &str = "few-groups";
}
