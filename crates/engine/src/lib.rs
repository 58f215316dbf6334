//! Estimation for slopewise: from a checked model to coefficients, standard
//! errors and tests.
//!
//! `numeric` holds the linear algebra and the within transform on plain
//! columns; `design` builds design matrices from `check::ResolvedModel` on the
//! estimation sample; `fit` decides degrees of freedom and standard errors;
//! `compare` tests nested models.

pub mod compare;
pub mod design;
pub mod fit;
pub mod numeric;
pub mod probe;

pub use compare::{compare, Comparison};
pub use design::Design;
pub use fit::{estimate, fit, Coefficient, Dropped, FitOptions, FitStats, ModelFit};

/// Why a model could not be estimated; the message is a full sentence.
#[derive(Clone, Debug, PartialEq)]
pub struct FitError {
    pub model: String,
    pub message: String,
}

impl std::fmt::Display for FitError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "model `{}`: {}", self.model, self.message)
    }
}

impl std::error::Error for FitError {}
