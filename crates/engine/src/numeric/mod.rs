//! The numerical core: least squares, covariance estimators and the within
//! transform, on plain columns and matrices. Knows nothing of the language.
//!
//! PUBLIC API CONTRACT: the model-fitting layer (`crate::fit`) is written
//! against these names.
//!
//! Module map: `groups` (group codes, nesting, redundant levels),
//! `singletons` (iterated singleton removal), `demean` (the within transform),
//! `blocks` (row-block kernels: tall QR, cross-products), `ols` (least squares by QR), `vcov` (classical, HC1, HC3, cluster-robust),
//! `error` (the error type of the checked entry points).

mod blocks;
mod demean;
mod error;
mod groups;
mod ols;
mod singletons;
mod vcov;

pub use demean::{demean, try_demean, Demeaned};
pub use error::NumericError;
pub use groups::{nested_in, redundant_levels, GroupCodes};
pub use ols::{ols, rank_tolerance, try_ols, Ols};
pub use singletons::singleton_rows;
pub use vcov::{
    expand_vcov, leverages, try_vcov_cluster, vcov_classical, vcov_cluster, vcov_hc1, vcov_hc3,
    vcov_hc3_checked, ClusterVcov, LEVERAGE_ONE, PSD_TOLERANCE,
};
