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
pub use incertus_dipole as dipole;
pub use incertus_expr as expr;
pub use incertus_fit as fit;
pub use incertus_gum as gum;
pub use incertus_mc as mc;
pub use incertus_units as units;
