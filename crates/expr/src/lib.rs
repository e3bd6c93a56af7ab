//! The formula language of incertus: text to syntax tree
//! ([`parse`]), symbolic derivatives of any order ([`derivative`],
//! [`derivative_n`]), simplification ([`simplify()`]), printing ([`print()`]),
//! direct evaluation generic over [`num_traits::Float`] ([`Expr::eval`]) and a
//! compiled [`Tape`] for fast evaluation of a formula and its gradient at one
//! point or over batches of columns.
//!
//! This crate knows nothing of statistics or units: it is the first step of
//! `text -> expr::parse -> gum::Model -> propagate -> report`. The
//! derivatives it provides are the sensitivity coefficients of JCGM 100:2008,
//! 5.1.3, and the second and third derivatives needed by the higher-order
//! terms of 5.1.2.
//!
//! ```
//! use incertus_expr::{derivative, parse, print};
//! let f = parse("V / (pi * r^2 * h)").unwrap();
//! assert_eq!(print(&derivative(&f, "r")), "-2*V/(pi*r^3*h)");
//! ```

#![warn(missing_docs)]

mod ast;
mod derive;
mod error;
mod eval;
pub mod func;
mod parse;
mod print;
mod simplify;
pub mod smooth;
mod tape;

pub use ast::{Expr, Factor, Kind, Span, Term};
pub use derive::{derivative, derivative_n, derivative_size};
pub use error::{caret, ErrorKind, FormulaError};
pub use eval::Env;
pub use func::Func;
pub use parse::{parse, parse_with, Limits};
pub use print::{format_number, print, print_tree};
pub use simplify::{negate, simplify};
pub use smooth::{kinks, non_smooth_points, underflow_points, Kink, NonSmooth};
pub use tape::{BatchReport, ShapeError, Tape, LANES};
