//! incertus: evaluation of measurement uncertainty.
//!
//! This facade re-exports the crates of the workspace under short names:
//! [`expr`] (the formula language), [`fit`] (least-squares fits), [`gum`] (the law of propagation), [`mc`] (propagation of distributions).
pub use incertus_expr as expr;
pub use incertus_fit as fit;
pub use incertus_gum as gum;
pub use incertus_mc as mc;
