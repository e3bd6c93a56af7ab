//! The law of propagation of uncertainty of JCGM 100:2008 (GUM): input
//! quantities by Type A and Type B evaluation (clause 4), correlations
//! (5.2), sensitivity coefficients from symbolic derivatives (5.1.3),
//! uncertainty budgets, higher-order terms (5.1.2 note), effective degrees
//! of freedom by Welch-Satterthwaite and coverage factors from Student's t
//! (Annex G), reporting rules (7.2), several measurands with their
//! covariance (JCGM 102:2011), model files in TOML, and the check of a
//! budget derived by hand.
//!
//! Left out here: propagation of distributions (crate `incertus-mc`), units
//! (crate `incertus-units`), fits (crate `incertus-fit`).
//!
//! ```
//! use incertus_gum::{load_str, propagate, Options};
//! let model = load_str(r#"
//!     [inputs.a]
//!     value = 2.0
//!     standard_uncertainty = 0.1
//!     [inputs.b]
//!     value = 3.0
//!     standard_uncertainty = 0.2
//!     [[measurands]]
//!     name = "y"
//!     formula = "a*b"
//! "#, "example.toml").unwrap();
//! let report = propagate(&model, &Options::default()).unwrap();
//! let y = &report.results[0];
//! assert_eq!(y.value, 6.0);
//! // u² = (b u_a)² + (a u_b)² = 0.09 + 0.16
//! assert!((y.standard_uncertainty - 0.5).abs() < 1e-15);
//! ```

#![warn(missing_docs)]

pub mod batch;
pub mod builder;
pub mod check;
pub mod conformity;
pub mod constants;
pub mod coverage;
pub mod description;
pub mod dimensions;
pub mod distributions;
pub mod estimate;
pub mod limits;
mod load;
pub mod matrix;
pub mod model;
pub mod offsets;
pub mod propagate;
pub mod rounding;
pub mod typea;
mod validate;

pub use check::{check, CheckItem, CheckReport};

/// Any error of this crate, for `?` in an embedder's code; each variant
/// holds the error with its own kind (`ModelError::kind`, ...).
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// A model file or description.
    #[error(transparent)]
    Model(#[from] ModelError),
    /// The law of propagation.
    #[error(transparent)]
    Propagation(#[from] PropagationError),
    /// A tracked quantity asked of the wrong session.
    #[error(transparent)]
    Session(#[from] estimate::SessionError),
    /// A conformity assessment.
    #[error(transparent)]
    Conformity(#[from] conformity::ConformityError),
}

/// The factor of a unit to coherent SI, if the unit text is valid.
pub fn units_factor(unit: &str) -> Option<f64> {
    incertus_units::parse(unit).ok().map(|u| u.factor)
}
pub use limits::Limits;
pub use load::{
    load_file, load_file_described, load_file_with, load_str, load_str_described, load_str_with,
    ModelError, ModelErrorKind, MAX_FILE_BYTES,
};
pub use model::{Correlation, Distribution, DofRounding, Evaluation, Input, Measurand, Model};
pub use propagate::{
    propagate, BudgetLine, MeasurandResult, Method, Options, PropagationError,
    PropagationErrorKind, Report, ReportedResult,
};
