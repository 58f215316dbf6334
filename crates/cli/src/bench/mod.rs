//! `slopewise bench ...`: measurements of the program's own speed, so that a
//! regression in loading shows up as a number rather than as a feeling.

pub mod fe;
pub mod load;
pub mod lsp;

pub use fe::run_fe;
pub use load::run_load;
pub use lsp::run_lsp;
