//! incertus: evaluation of measurement uncertainty, as a library to embed.
//!
//! This facade re-exports the crates of the workspace under short names:
//! [`expr`] (the formula language: parsing, symbolic derivatives, the
//! compiled tape), [`units`] (dimensions and unit conversion), [`fit`]
//! (least-squares fits as sources of correlated inputs), [`gum`] (input
//! quantities, the law of propagation of uncertainty, budgets, effective
//! degrees of freedom, conformity; JCGM 100:2008 and JCGM 106:2012),
//! [`mc`] (propagation of distributions, JCGM 101:2008) and [`dipole`]
//! (the dipole-moment worked instance). It carries no command-line,
//! terminal or plotting crates; the `incertus` program is the
//! `incertus-bin` package of the workspace.
//!
//! ```
//! let model = incertus::gum::load_str(
//!     "[inputs.x]\nvalue = 2.0\nstandard_uncertainty = 0.1\n\
//!      [[measurands]]\nname = \"y\"\nformula = \"x^2\"\n",
//!     "example.toml",
//! )
//! .unwrap();
//! let report = incertus::gum::propagate(&model, &Default::default()).unwrap();
//! assert!((report.results[0].standard_uncertainty - 0.4).abs() < 1e-12);
//! ```
//!
//! A model can also be built in Rust, without model-file text: a
//! [`gum::description::ModelDescription`] (or the
//! [`gum::builder::ModelBuilder`] over it) validated into a model. Errors
//! of every part convert into [`Error`], so `?` works across them:
//!
//! ```
//! use incertus::gum::builder::ModelBuilder;
//! fn area() -> Result<f64, incertus::Error> {
//!     let model = ModelBuilder::new()
//!         .input("a", |i| i.value(0.25).standard_uncertainty(0.001).unit("m"))
//!         .input("ρ_w", |i| i.value(998.2).standard_uncertainty(0.05).unit("kg/m^3"))
//!         .measurand("m", "a^3*ρ_w", Some("kg"))
//!         .build()?;
//!     let report = incertus::gum::propagate(&model, &Default::default())?;
//!     Ok(report.results[0].standard_uncertainty)
//! }
//! assert!(area().unwrap() > 0.0);
//! let bad = ModelBuilder::new()
//!     .input("x", |i| i.value(1.0).standard_uncertainty(f64::NAN))
//!     .measurand("y", "x", None)
//!     .build()
//!     .unwrap_err();
//! assert_eq!(bad.kind, incertus::gum::ModelErrorKind::Value);
//! assert_eq!(bad.path, "inputs.x.standard_uncertainty");
//! ```
#![warn(missing_docs)]

pub use incertus_dipole as dipole;
pub use incertus_expr as expr;
pub use incertus_fit as fit;
pub use incertus_gum as gum;
pub use incertus_mc as mc;
pub use incertus_units as units;

/// Any error of the library, for `?` across its parts. Each variant holds
/// the part's own error, which carries its kind.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// A formula.
    #[error(transparent)]
    Formula(#[from] expr::FormulaError),
    /// A unit.
    #[error(transparent)]
    Unit(#[from] units::UnitError),
    /// A fit or its data.
    #[error(transparent)]
    Fit(#[from] fit::Error),
    /// A model, the law of propagation, a conformity assessment.
    #[error(transparent)]
    Gum(#[from] gum::Error),
    /// Propagation of distributions.
    #[error(transparent)]
    MonteCarlo(#[from] mc::McError),
    /// The dipole-moment worked instance.
    #[error(transparent)]
    Dipole(#[from] dipole::DipoleError),
}

macro_rules! through {
    ($($from:ty => $via:ty),* $(,)?) => {
        $(impl From<$from> for Error {
            fn from(e: $from) -> Self {
                Error::from(<$via>::from(e))
            }
        })*
    };
}

through!(
    fit::FitError => fit::Error,
    fit::DataError => fit::Error,
    gum::ModelError => gum::Error,
    gum::PropagationError => gum::Error,
    gum::conformity::ConformityError => gum::Error,
);

/// The README's Rust examples, compiled and run as doc tests
/// (`cargo test --doc -p incertus`), so the README cannot drift from the
/// library.
#[cfg(doctest)]
#[doc = include_str!("../../../README.md")]
pub struct ReadmeExamples;
