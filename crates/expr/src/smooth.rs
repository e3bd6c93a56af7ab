//! Points where a formula has no derivative: the places of the built-in
//! functions where the law of propagation of uncertainty (JCGM 100:2008,
//! 5.1.2), which needs the first-order Taylor series, does not hold.
//!
//! At such a point the symbolic derivative still evaluates to a number
//! (`d abs(x)/dx = sign(x)` gives 0 at x = 0), so the first-order result
//! looks normal while it is wrong; the caller turns every finding into a
//! warning that names the function and points to propagation of
//! distributions (JCGM 101:2008), which needs no derivative.
//!
//! The points found: `abs` and `sign` at 0 (a kink, a jump), `hypot` at
//! (0, 0) (a cone), `atan2(y, x)` on its branch cut (y = 0, x < 0, a jump),
//! `sqrt` and `cbrt` at 0, `asin` and `acos` at ±1, `acosh` at 1, and a
//! power with base 0 and a non-integer exponent (an infinite slope or the
//! edge of the domain). Points of `Expr::eval`'s domain errors are left to
//! those errors.

use crate::ast::{Expr, Kind};
use crate::eval::Env;
use crate::func::Func;
use crate::print::print;
use crate::Span;

/// One place where a formula is not differentiable at the given point.
#[derive(Clone, Debug, PartialEq)]
pub struct NonSmooth {
    /// The function, as written (`abs`, `^` for a power).
    pub function: String,
    /// The call or power, printed.
    pub text: String,
    /// Where it is in the formula's text.
    pub span: Span,
    /// What happens there, in words.
    pub what: String,
}

/// Every call of a built-in function (and every power) in `e` whose
/// arguments, evaluated at `env`, lie on a point where the function has no
/// derivative. Sub-formulas that cannot be evaluated are skipped (their
/// error shows elsewhere).
///
/// ```
/// use incertus_expr::{parse, non_smooth_points};
/// let f = parse("abs(a - b) + c").unwrap();
/// let found = non_smooth_points(&f, &[("a", 2.0), ("b", 2.0), ("c", 1.0)]);
/// assert_eq!(found[0].function, "abs");
/// assert!(non_smooth_points(&f, &[("a", 2.0), ("b", 1.0), ("c", 1.0)]).is_empty());
/// ```
pub fn non_smooth_points<E: Env<f64> + ?Sized>(e: &Expr, env: &E) -> Vec<NonSmooth> {
    let mut out = Vec::new();
    walk(e, env, &mut out);
    out
}

fn walk<E: Env<f64> + ?Sized>(e: &Expr, env: &E, out: &mut Vec<NonSmooth>) {
    let value = |x: &Expr| x.eval::<f64, E>(env).ok();
    let mut found = |function: &str, what: String| {
        out.push(NonSmooth {
            function: function.to_string(),
            text: print(e),
            span: e.span,
            what,
        })
    };
    match &e.kind {
        Kind::Call(f, args) => {
            // Only the functions with such points need their arguments' values.
            let relevant = !matches!(
                f,
                Func::Exp
                    | Func::Ln
                    | Func::Log10
                    | Func::Log2
                    | Func::Sin
                    | Func::Cos
                    | Func::Tan
                    | Func::Atan
                    | Func::Sinh
                    | Func::Cosh
                    | Func::Tanh
                    | Func::Asinh
                    | Func::Atanh
            );
            let a: Vec<Option<f64>> = if relevant {
                args.iter().map(value).collect()
            } else {
                Vec::new()
            };
            match (f, a.as_slice()) {
                (Func::Abs, [Some(x)]) if *x == 0.0 => found(
                    "abs",
                    "its argument is 0, where abs has a kink and no derivative".into(),
                ),
                (Func::Sign, [Some(x)]) if *x == 0.0 => found(
                    "sign",
                    "its argument is 0, where sign jumps from −1 to 1".into(),
                ),
                (Func::Hypot, [Some(x), Some(y)]) if *x == 0.0 && *y == 0.0 => found(
                    "hypot",
                    "both arguments are 0, where hypot has the tip of a cone and no derivative"
                        .into(),
                ),
                (Func::Atan2, [Some(y), Some(x)]) if *y == 0.0 && *x < 0.0 => found(
                    "atan2",
                    "its first argument is 0 and its second negative: atan2 jumps from −π to π there"
                        .into(),
                ),
                (Func::Sqrt | Func::Cbrt, [Some(x)]) if *x == 0.0 => found(
                    f.name(),
                    format!("its argument is 0, where {} has an infinite slope", f.name()),
                ),
                (Func::Asin | Func::Acos, [Some(x)]) if x.abs() == 1.0 => found(
                    f.name(),
                    format!(
                        "its argument is {x}, where {} has an infinite slope",
                        f.name()
                    ),
                ),
                (Func::Acosh, [Some(x)]) if *x == 1.0 => found(
                    "acosh",
                    "its argument is 1, where acosh has an infinite slope".into(),
                ),
                (Func::Pow, [Some(b), Some(p)]) if zero_base(*b, *p) => found(
                    "pow",
                    format!("the base is 0 and the exponent {p} is not a whole number"),
                ),
                _ => {}
            }
            args.iter().for_each(|x| walk(x, env, out));
        }
        Kind::Pow(b, p) => {
            if let (Some(bv), Some(pv)) = (value(b), value(p)) {
                if zero_base(bv, pv) {
                    found(
                        "^",
                        format!("the base is 0 and the exponent {pv} is not a whole number"),
                    );
                }
            }
            walk(b, env, out);
            walk(p, env, out);
        }
        Kind::Neg(a) => walk(a, env, out),
        Kind::Sum(ts) => ts.iter().for_each(|t| walk(&t.expr, env, out)),
        Kind::Product(fs) => fs.iter().for_each(|f| walk(&f.expr, env, out)),
        Kind::Num(_) | Kind::Pi | Kind::Var(_) => {}
    }
}

/// 0^p with p not a whole number: no derivative (infinite slope for
/// 0 < p < 1, the edge of the domain otherwise).
fn zero_base(base: f64, exponent: f64) -> bool {
    base == 0.0 && exponent.fract() != 0.0
}

/// Sub-formulas whose value at `env` underflows: a product or quotient of
/// factors that are not zero, a power with a base that is not zero, or an
/// `exp`, whose value comes out as zero or subnormal (below 2.2e-308, where
/// digits are lost). Such a value makes a result or a sensitivity
/// coefficient silently 0.
///
/// ```
/// use incertus_expr::{parse, underflow_points};
/// let f = parse("x*1e-200*1e-200").unwrap();
/// assert_eq!(underflow_points(&f, &[("x", 1.0)]).len(), 1);
/// assert!(underflow_points(&f, &[("x", 0.0)]).is_empty());
/// ```
pub fn underflow_points<E: Env<f64> + ?Sized>(e: &Expr, env: &E) -> Vec<NonSmooth> {
    let mut out = Vec::new();
    underflow_walk(e, env, &mut out);
    out
}

fn tiny(v: f64) -> bool {
    v == 0.0 || v.abs() < f64::MIN_POSITIVE
}

fn underflow_walk<E: Env<f64> + ?Sized>(e: &Expr, env: &E, out: &mut Vec<NonSmooth>) {
    let value = |x: &Expr| x.eval::<f64, E>(env).ok();
    let lost = match &e.kind {
        Kind::Product(fs) => {
            let parts: Option<Vec<f64>> = fs.iter().map(|f| value(&f.expr)).collect();
            parts.is_some_and(|p| p.iter().all(|v| *v != 0.0)) && value(e).is_some_and(tiny)
        }
        Kind::Pow(b, _) => value(b).is_some_and(|v| v != 0.0) && value(e).is_some_and(tiny),
        Kind::Call(Func::Exp | Func::Pow, args) => {
            value(&args[0]).is_some_and(|v| v != 0.0) && value(e).is_some_and(tiny)
        }
        _ => false,
    };
    if lost {
        out.push(NonSmooth {
            function: "underflow".into(),
            text: print(e),
            span: e.span,
            what: "its value lies below the normal range of double precision (about 2.2e-308)"
                .into(),
        });
        return;
    }
    match &e.kind {
        Kind::Neg(a) => underflow_walk(a, env, out),
        Kind::Sum(ts) => ts.iter().for_each(|t| underflow_walk(&t.expr, env, out)),
        Kind::Product(fs) => fs.iter().for_each(|f| underflow_walk(&f.expr, env, out)),
        Kind::Pow(b, p) => {
            underflow_walk(b, env, out);
            underflow_walk(p, env, out);
        }
        Kind::Call(_, args) => args.iter().for_each(|a| underflow_walk(a, env, out)),
        Kind::Num(_) | Kind::Pi | Kind::Var(_) => {}
    }
}

/// Where a built-in function loses its derivative, as a condition on one
/// argument: the point lies at `argument = at` (one of them).
#[derive(Clone, Debug)]
pub struct Kink<'a> {
    /// The function, as written.
    pub function: &'static str,
    /// The call, printed.
    pub text: String,
    /// The argument whose value decides.
    pub argument: &'a Expr,
    /// The values of the argument where the derivative is lost.
    pub at: Vec<f64>,
    /// Only when this other argument is negative (atan2's cut).
    pub when_negative: Option<&'a Expr>,
}

/// Every call (and power) in `e` that has a point without a derivative,
/// with the argument values where it lies: `abs`, `sign`, `sqrt`, `cbrt`
/// at 0, `asin` and `acos` at ±1, `acosh` at 1, `atan2(y, x)` at y = 0
/// for x < 0, a power with a non-integer constant exponent at base 0.
/// The caller compares the argument's estimate with its uncertainty to
/// find results whose distribution reaches such a point.
pub fn kinks(e: &Expr) -> Vec<Kink<'_>> {
    let mut out = Vec::new();
    kinks_walk(e, &mut out);
    out
}

fn kinks_walk<'a>(e: &'a Expr, out: &mut Vec<Kink<'a>>) {
    let mut add =
        |function: &'static str, argument: &'a Expr, at: Vec<f64>, neg: Option<&'a Expr>| {
            out.push(Kink {
                function,
                text: print(e),
                argument,
                at,
                when_negative: neg,
            })
        };
    let constant_fraction = |p: &Expr| {
        p.eval::<f64, _>(&|_: &str| None::<f64>)
            .is_ok_and(|v| v.fract() != 0.0)
    };
    match &e.kind {
        Kind::Call(f, args) => {
            match f {
                Func::Abs | Func::Sign | Func::Sqrt | Func::Cbrt => {
                    add(f.name(), &args[0], vec![0.0], None)
                }
                Func::Asin | Func::Acos => add(f.name(), &args[0], vec![-1.0, 1.0], None),
                Func::Acosh => add("acosh", &args[0], vec![1.0], None),
                Func::Atan2 => add("atan2", &args[0], vec![0.0], Some(&args[1])),
                Func::Pow if constant_fraction(&args[1]) => add("pow", &args[0], vec![0.0], None),
                _ => {}
            }
            args.iter().for_each(|a| kinks_walk(a, out));
        }
        Kind::Pow(b, p) => {
            if constant_fraction(p) {
                add("^", b, vec![0.0], None);
            }
            kinks_walk(b, out);
            kinks_walk(p, out);
        }
        Kind::Neg(a) => kinks_walk(a, out),
        Kind::Sum(ts) => ts.iter().for_each(|t| kinks_walk(&t.expr, out)),
        Kind::Product(fs) => fs.iter().for_each(|f| kinks_walk(&f.expr, out)),
        Kind::Num(_) | Kind::Pi | Kind::Var(_) => {}
    }
}
