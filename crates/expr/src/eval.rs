//! Direct evaluation of a syntax tree at one point, generic over
//! [`num_traits::Float`] so the same formula runs on `f64`, `f32` or dual
//! numbers.
//!
//! Sums and products are evaluated left to right; a literal integer exponent
//! uses `powi` (`x*x` for 2), any other exponent `powf`. The compiled tape
//! follows the same rules, so both give the same `f64` bit for bit.
//! A value outside a function's domain, a division by zero, or a result that
//! overflows is an error naming the sub-formula by its span.

use num_traits::Float;

use crate::ast::{Expr, Kind};
use crate::error::{ErrorKind, FormulaError};
use crate::func::{literal_integer, power, power_int, Func};

/// Something that gives the value of a name.
pub trait Env<T> {
    /// The value of `name`, if known.
    fn value(&self, name: &str) -> Option<T>;
}

impl<T: Copy, F: Fn(&str) -> Option<T>> Env<T> for F {
    fn value(&self, name: &str) -> Option<T> {
        self(name)
    }
}

impl<T: Copy> Env<T> for [(&str, T)] {
    fn value(&self, name: &str) -> Option<T> {
        self.iter().find(|(n, _)| *n == name).map(|(_, v)| *v)
    }
}

impl<T: Copy, const N: usize> Env<T> for [(&str, T); N] {
    fn value(&self, name: &str) -> Option<T> {
        self.as_slice().value(name)
    }
}

impl<T: Copy> Env<T> for std::collections::HashMap<String, T> {
    fn value(&self, name: &str) -> Option<T> {
        self.get(name).copied()
    }
}

impl Expr {
    /// Value at a point.
    ///
    /// ```
    /// let f = incertus_expr::parse("x^2*sin(y)").unwrap();
    /// let v = f.eval(&[("x", 2.0), ("y", 0.5)]).unwrap();
    /// assert_eq!(v, 4.0 * 0.5f64.sin());
    /// ```
    pub fn eval<T: Float, E: Env<T> + ?Sized>(&self, env: &E) -> Result<T, FormulaError> {
        let v = self.eval_inner(env)?;
        if !v.is_finite() {
            return Err(self.domain("the result is not a finite number (overflow)"));
        }
        Ok(v)
    }

    fn domain(&self, what: &str) -> FormulaError {
        FormulaError::new(ErrorKind::Domain, what.to_string(), self.span)
    }

    fn eval_inner<T: Float, E: Env<T> + ?Sized>(&self, env: &E) -> Result<T, FormulaError> {
        let lit = |v: f64| T::from(v).unwrap_or_else(T::nan);
        let v = match &self.kind {
            Kind::Num(v) => lit(*v),
            Kind::Pi => lit(std::f64::consts::PI),
            Kind::Var(n) => env.value(n).ok_or_else(|| {
                FormulaError::new(
                    ErrorKind::Name,
                    format!("no value is given for `{n}`"),
                    self.span,
                )
            })?,
            Kind::Neg(a) => -a.eval_inner(env)?,
            Kind::Sum(ts) => {
                let mut acc = T::zero();
                for (i, t) in ts.iter().enumerate() {
                    let v = t.expr.eval_inner(env)?;
                    acc = match (i, t.negative) {
                        (0, false) => v,
                        (0, true) => -v,
                        (_, false) => acc + v,
                        (_, true) => acc - v,
                    };
                }
                acc
            }
            Kind::Product(fs) => {
                let mut acc = T::one();
                for (i, f) in fs.iter().enumerate() {
                    let v = f.expr.eval_inner(env)?;
                    acc = if f.divide {
                        if v == T::zero() {
                            return Err(f.expr.domain("division by zero"));
                        }
                        if i == 0 {
                            T::one() / v
                        } else {
                            acc / v
                        }
                    } else if i == 0 {
                        v
                    } else {
                        acc * v
                    };
                }
                acc
            }
            Kind::Pow(b, e) => pow_node(self, b, e, env)?,
            Kind::Call(Func::Pow, args) => pow_node(self, &args[0], &args[1], env)?,
            Kind::Call(f, args) => {
                let mut vals = [T::zero(); 2];
                for (slot, a) in vals.iter_mut().zip(args) {
                    *slot = a.eval_inner(env)?;
                }
                f.apply(&vals[..args.len()])
                    .map_err(|what| self.domain(what))?
            }
        };
        if v.is_nan() {
            return Err(self.domain("the value is not a number"));
        }
        Ok(v)
    }
}

fn pow_node<T: Float, E: Env<T> + ?Sized>(
    node: &Expr,
    b: &Expr,
    e: &Expr,
    env: &E,
) -> Result<T, FormulaError> {
    let base = b.eval_inner(env)?;
    let r = match literal_integer(e) {
        Some(n) => power_int(base, n),
        None => power(base, e.eval_inner(env)?),
    };
    r.map_err(|what| node.domain(what))
}
