//! Estimation for slopewise: from a checked model to coefficients, standard
//! errors and tests.
//!
//! `numeric` holds the linear algebra and the within transform on plain
//! columns; the model layer builds design matrices from `check::ResolvedModel`
//! on the estimation sample and decides degrees of freedom.

pub mod numeric;
