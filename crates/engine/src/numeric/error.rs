//! The error type of the numerical core's checked entry points.

use std::fmt;

/// Why a numerical routine could not produce a result from its inputs.
#[derive(Clone, Debug, PartialEq)]
pub enum NumericError {
    /// Lengths or shapes that must agree do not (the message names them).
    Dimension(String),
    /// An input holds NaN or an infinite value (the message says which).
    NonFinite(String),
    /// A group code is not below the number of groups.
    BadCode {
        row: usize,
        code: u32,
        n_groups: usize,
    },
    /// A row's leverage is one (to 1e-12): HC3 divides by 1 − h and is undefined.
    LeverageOne { row: usize, leverage: f64 },
    /// Degrees of freedom that must be positive are not.
    NoDegreesOfFreedom(String),
    /// Clustered covariance was asked for with no grouping or more than two.
    ClusterCount(usize),
    /// The eigen decomposition used for the positive semi-definite fix failed.
    Eigen,
}

impl fmt::Display for NumericError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            NumericError::Dimension(m) => write!(f, "dimensions do not agree: {m}"),
            NumericError::NonFinite(m) => write!(f, "{m} holds a missing or infinite value"),
            NumericError::BadCode { row, code, n_groups } => {
                write!(f, "row {row} has group code {code}, but there are only {n_groups} groups")
            }
            NumericError::LeverageOne { row, leverage } => write!(
                f,
                "row {row} has leverage {leverage} (one, to 1e-12): HC3 standard errors are undefined"
            ),
            NumericError::NoDegreesOfFreedom(m) => write!(f, "no residual degrees of freedom: {m}"),
            NumericError::ClusterCount(k) => {
                write!(f, "clustered errors take one or two groupings, not {k}")
            }
            NumericError::Eigen => write!(f, "the eigen decomposition of the covariance failed"),
        }
    }
}

impl std::error::Error for NumericError {}
