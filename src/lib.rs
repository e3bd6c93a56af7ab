//! incertus: evaluation of measurement uncertainty.
//!
//! This facade re-exports the crates of the workspace under short names:
//! [`expr`] (the formula language).
pub use incertus_expr as expr;
