//! Dimension check of a measurement model: every formula is walked with the
//! dimensions of its inputs (SI Brochure, 9th edition, 2.3.3); terms of a
//! sum and the arguments of atan2 and hypot must agree, the arguments of
//! exp, ln, the trigonometric and hyperbolic functions and every exponent
//! must be dimensionless, and a power of a dimensioned quantity must leave
//! whole exponents. The error carries the span of the offending
//! sub-formula, for a caret.

use incertus_expr::{ErrorKind, Expr, FormulaError, Func, Kind};
use incertus_units::Dimension;

fn err(e: &Expr, msg: String) -> FormulaError {
    FormulaError::new(ErrorKind::Domain, msg, e.span)
}

/// A constant exponent as n/d with d ≤ 12, when it is one.
fn rational(v: f64) -> Option<(i32, i32)> {
    (1..=12).find_map(|d| {
        let n = (v * d as f64).round();
        ((v * d as f64 - n).abs() < 1e-9 && n.abs() < 1e6).then_some((n as i32, d))
    })
}

/// The largest exponent of a base unit a dimension may have; beyond it
/// (`(x^65536)^65536`) the exponents would wrap around, and no physical
/// quantity comes near it.
pub const MAX_EXPONENT: i32 = 1000;

/// The dimension of `e`, given the dimensions of its names.
pub fn dimension(e: &Expr, of: &dyn Fn(&str) -> Dimension) -> Result<Dimension, FormulaError> {
    let d = dimension_inner(e, of)?;
    if d.0.iter().any(|x| x.abs() > MAX_EXPONENT) {
        return Err(err(
            e,
            format!(
                "this part has a dimension with an exponent beyond ±{MAX_EXPONENT} ({d}); no \
                 quantity has such a dimension"
            ),
        ));
    }
    Ok(d)
}

fn dimension_inner(e: &Expr, of: &dyn Fn(&str) -> Dimension) -> Result<Dimension, FormulaError> {
    Ok(match &e.kind {
        Kind::Num(_) | Kind::Pi => Dimension::ONE,
        Kind::Var(n) => of(n),
        Kind::Neg(a) => dimension(a, of)?,
        Kind::Sum(ts) => {
            let first = dimension(&ts[0].expr, of)?;
            for t in &ts[1..] {
                let d = dimension(&t.expr, of)?;
                if d != first {
                    return Err(err(
                        &t.expr,
                        format!(
                            "this term has dimension {d} but the first term of the sum has {first}; \
                             only quantities of one dimension can be added or subtracted"
                        ),
                    ));
                }
            }
            first
        }
        Kind::Product(fs) => {
            let mut d = Dimension::ONE;
            for f in fs {
                let x = dimension(&f.expr, of)?;
                d = if f.divide { d / x } else { d * x };
            }
            d
        }
        Kind::Pow(b, x) => power(e, b, x, of)?,
        Kind::Call(Func::Pow, args) => power(e, &args[0], &args[1], of)?,
        Kind::Call(f, args) => {
            let a = dimension(&args[0], of)?;
            match f {
                Func::Sqrt => a.pow(1, 2).ok_or_else(|| {
                    err(
                        e,
                        format!(
                            "the square root of a quantity of dimension {a} has no whole dimension"
                        ),
                    )
                })?,
                Func::Cbrt => a.pow(1, 3).ok_or_else(|| {
                    err(
                        e,
                        format!(
                            "the cube root of a quantity of dimension {a} has no whole dimension"
                        ),
                    )
                })?,
                Func::Abs => a,
                Func::Sign => Dimension::ONE,
                Func::Hypot | Func::Atan2 => {
                    let b = dimension(&args[1], of)?;
                    if a != b {
                        return Err(err(
                            &args[1],
                            format!(
                                "both arguments of {} need one dimension; they have {a} and {b}",
                                f.name()
                            ),
                        ));
                    }
                    if *f == Func::Hypot {
                        a
                    } else {
                        Dimension::ONE
                    }
                }
                _ => {
                    if !a.is_one() {
                        return Err(err(
                            &args[0],
                            format!("the argument of {} must be dimensionless, but it has dimension {a}", f.name()),
                        ));
                    }
                    Dimension::ONE
                }
            }
        }
    })
}

fn power(
    node: &Expr,
    b: &Expr,
    x: &Expr,
    of: &dyn Fn(&str) -> Dimension,
) -> Result<Dimension, FormulaError> {
    let db = dimension(b, of)?;
    let dx = dimension(x, of)?;
    if !dx.is_one() {
        return Err(err(
            x,
            format!("an exponent must be dimensionless, but this one has dimension {dx}"),
        ));
    }
    if db.is_one() {
        return Ok(Dimension::ONE);
    }
    let value = x.eval::<f64, _>(&|_: &str| None).map_err(|_| {
        err(
            x,
            format!("a quantity of dimension {db} can only be raised to a constant power"),
        )
    })?;
    let (n, d) = rational(value).ok_or_else(|| {
        err(
            x,
            format!("the power {value} of a quantity of dimension {db} has no whole dimension"),
        )
    })?;
    db.pow(n, d).ok_or_else(|| {
        err(
            node,
            format!("{db} raised to {n}/{d} has no whole dimension"),
        )
    })
}

/// The coherent SI unit of a dimension in base units, the factors with
/// positive exponents first (`kg m^-3`, `m s^-2`, `kg m^2 s^-2`), as a
/// text the unit parser reads back.
///
/// ```
/// use incertus_units::Dimension;
/// use incertus_gum::dimensions::coherent_si_unit;
/// // m, kg, s, A, K, mol, cd
/// assert_eq!(coherent_si_unit(Dimension([-3, 1, 0, 0, 0, 0, 0])), "kg m^-3");
/// assert_eq!(coherent_si_unit(Dimension([1, 0, 0, 0, 0, 0, 0])), "m");
/// ```
pub fn coherent_si_unit(d: incertus_units::Dimension) -> String {
    if d.is_one() {
        return "1".into();
    }
    // Order of writing: kg, m, s, A, K, mol, cd (index into the m-first array).
    const ORDER: [(usize, &str); 7] = [
        (1, "kg"),
        (0, "m"),
        (2, "s"),
        (3, "A"),
        (4, "K"),
        (5, "mol"),
        (6, "cd"),
    ];
    let part = |i: usize, s: &str| {
        let e = d.0[i];
        if e == 1 {
            s.to_string()
        } else {
            format!("{s}^{e}")
        }
    };
    let positive = ORDER.iter().filter(|(i, _)| d.0[*i] > 0);
    let negative = ORDER.iter().filter(|(i, _)| d.0[*i] < 0);
    positive
        .chain(negative)
        .map(|&(i, s)| part(i, s))
        .collect::<Vec<_>>()
        .join(" ")
}
