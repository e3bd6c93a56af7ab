//! Tracked estimates for embedding: a value with a sparse gradient over the
//! named base inputs of a [`Session`], so that arithmetic keeps track of
//! which inputs a result depends on and how strongly (first-order
//! propagation, JCGM 100:2008, 5.1 and 5.2). Two results computed from the
//! same input are correlated, and `y - x*x` with `y = x*x` is exactly zero
//! with zero uncertainty.
//!
//! ```
//! use incertus_gum::estimate::Session;
//! let mut s = Session::new();
//! let x = s.input("x", 2.0, 0.1);
//! let y = s.input("y", 3.0, 0.2);
//! s.correlate(&x, &y, 0.5).unwrap();
//! let z = &x * &y + x.sin();
//! assert_eq!(z.value(), 6.0 + 2f64.sin());
//! let y2 = &x * &x;
//! let zero = &y2 - &(&x * &x);
//! assert_eq!(s.standard_uncertainty(&zero).unwrap(), 0.0);
//! assert!(s.standard_uncertainty(&z).unwrap() > 0.0);
//! ```
//!
//! The budget of a result ([`Session::budget`]) is the one the symbolic
//! engine gives for the same formula (a property test holds this).

use std::ops::{Add, Div, Mul, Neg, Sub};

use std::sync::atomic::{AtomicU64, Ordering};

use crate::coverage::effective_dof_correlated;
use crate::model::Dof;

/// Sessions are numbered from 1; 0 marks a number that depends on no input.
static NEXT_SESSION: AtomicU64 = AtomicU64::new(1);
/// A number computed from the inputs of more than one session.
const MIXED: u64 = u64::MAX;

/// Sensitivity coefficients to the base inputs of one session (sorted by
/// input index, zeros dropped).
#[derive(Clone, Debug, Default, PartialEq)]
struct Grad {
    session: u64,
    terms: Vec<(usize, f64)>,
}

/// A value and its sensitivity coefficients to the base inputs.
#[derive(Clone, Debug, PartialEq)]
pub struct Estimate {
    value: f64,
    grad: Grad,
}

/// A number that does not belong to the session asked about it.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum SessionError {
    /// The number was made from the inputs of another session.
    #[error("this tracked estimate was made from the inputs of another session; ask that session")]
    OtherSession,
    /// The number combines inputs of two or more sessions.
    #[error(
        "this tracked estimate combines inputs of different sessions, so its uncertainty is not defined; \
         make every input of a calculation in one session"
    )]
    MixedSessions,
}

/// One base input of a session.
#[derive(Clone, Debug, PartialEq)]
pub struct BaseInput {
    /// The name.
    pub name: String,
    /// The value.
    pub value: f64,
    /// Its standard uncertainty.
    pub standard_uncertainty: f64,
    /// Degrees of freedom (`None`: infinite).
    pub dof: Dof,
}

/// The base inputs and their correlations.
#[derive(Clone, Debug)]
pub struct Session {
    id: u64,
    inputs: Vec<BaseInput>,
    correlations: Vec<(usize, usize, f64)>,
}

impl Default for Session {
    fn default() -> Session {
        Session {
            id: NEXT_SESSION.fetch_add(1, Ordering::Relaxed),
            inputs: Vec::new(),
            correlations: Vec::new(),
        }
    }
}

/// One line of the budget of a tracked estimate.
#[derive(Clone, Debug, PartialEq)]
pub struct Line {
    /// The base input.
    pub input: String,
    /// Its value.
    pub value: f64,
    /// Its standard uncertainty.
    pub standard_uncertainty: f64,
    /// ∂y/∂x at the values.
    pub sensitivity: f64,
    /// |c_i| u(x_i).
    pub contribution: f64,
}

impl Session {
    /// An empty session.
    pub fn new() -> Session {
        Session::default()
    }

    /// A new base input with infinite dof.
    pub fn input(&mut self, name: &str, value: f64, u: f64) -> Estimate {
        self.input_with_dof(name, value, u, None)
    }

    /// A new base input with the given degrees of freedom.
    pub fn input_with_dof(&mut self, name: &str, value: f64, u: f64, dof: Dof) -> Estimate {
        let i = self.inputs.len();
        self.inputs.push(BaseInput {
            name: name.to_string(),
            value,
            standard_uncertainty: u.abs(),
            dof,
        });
        Estimate {
            value,
            grad: Grad {
                session: self.id,
                terms: if u != 0.0 { vec![(i, 1.0)] } else { Vec::new() },
            },
        }
    }

    /// The base inputs, in the order made.
    pub fn inputs(&self) -> &[BaseInput] {
        &self.inputs
    }

    /// Whether `y` may be asked about here: made from this session's inputs
    /// (or from none).
    fn owns(&self, y: &Estimate) -> Result<(), SessionError> {
        match y.grad.session {
            0 => Ok(()),
            MIXED => Err(SessionError::MixedSessions),
            s if s == self.id => Ok(()),
            _ => Err(SessionError::OtherSession),
        }
    }

    /// Set the correlation coefficient of two base inputs (each must be an
    /// input itself, not a result).
    pub fn correlate(&mut self, a: &Estimate, b: &Estimate, r: f64) -> Result<(), String> {
        self.owns(a).map_err(|e| e.to_string())?;
        self.owns(b).map_err(|e| e.to_string())?;
        let one = |x: &Estimate| match x.grad.terms.as_slice() {
            [(i, c)] if *c == 1.0 && x.value == self.inputs[*i].value => Some(*i),
            _ => None,
        };
        let (Some(i), Some(j)) = (one(a), one(b)) else {
            return Err("correlations are between base inputs, not results".into());
        };
        if i == j {
            return Err("an input cannot be correlated with itself".into());
        }
        if !(-1.0..=1.0).contains(&r) {
            return Err(format!(
                "a correlation coefficient lies in [-1, 1], not {r}"
            ));
        }
        self.correlations
            .retain(|(p, q, _)| !((*p == i && *q == j) || (*p == j && *q == i)));
        self.correlations.push((i, j, r));
        Ok(())
    }

    fn corr(&self, i: usize, j: usize) -> f64 {
        if i == j {
            return 1.0;
        }
        self.correlations
            .iter()
            .find(|(p, q, _)| (*p == i && *q == j) || (*p == j && *q == i))
            .map_or(0.0, |t| t.2)
    }

    /// u(y) = √(cᵀ V c) over the base inputs.
    pub fn standard_uncertainty(&self, y: &Estimate) -> Result<f64, SessionError> {
        Ok(self.covariance(y, y)?.max(0.0).sqrt())
    }

    /// u(y, z) = c_yᵀ V c_z: results sharing inputs are correlated.
    pub fn covariance(&self, y: &Estimate, z: &Estimate) -> Result<f64, SessionError> {
        self.owns(y)?;
        self.owns(z)?;
        let mut s = 0.0;
        for &(i, ci) in &y.grad.terms {
            for &(j, cj) in &z.grad.terms {
                let r = self.corr(i, j);
                if r != 0.0 {
                    s += ci
                        * cj
                        * r
                        * self.inputs[i].standard_uncertainty
                        * self.inputs[j].standard_uncertainty;
                }
            }
        }
        Ok(s)
    }

    /// Correlation coefficient of two results.
    pub fn correlation(&self, y: &Estimate, z: &Estimate) -> Result<f64, SessionError> {
        let (a, b) = (self.standard_uncertainty(y)?, self.standard_uncertainty(z)?);
        Ok(if a == 0.0 || b == 0.0 {
            0.0
        } else {
            self.covariance(y, z)? / (a * b)
        })
    }

    /// The budget: one line per base input the result depends on.
    pub fn budget(&self, y: &Estimate) -> Result<Vec<Line>, SessionError> {
        self.owns(y)?;
        Ok(y.grad
            .terms
            .iter()
            .map(|&(i, c)| {
                let b = &self.inputs[i];
                Line {
                    input: b.name.clone(),
                    value: b.value,
                    standard_uncertainty: b.standard_uncertainty,
                    sensitivity: c,
                    contribution: (c * b.standard_uncertainty).abs(),
                }
            })
            .collect())
    }

    /// Effective degrees of freedom: Welch-Satterthwaite (JCGM 100:2008,
    /// G.4.1), generalised to the correlations of the session by the same
    /// rule as `propagate` (`coverage::effective_dof_correlated`; each base
    /// input is its own block).
    pub fn effective_dof(&self, y: &Estimate) -> Result<Dof, SessionError> {
        self.owns(y)?;
        let idx: Vec<usize> = y.grad.terms.iter().map(|t| t.0).collect();
        let w: Vec<f64> = y
            .grad
            .terms
            .iter()
            .map(|&(i, c)| c * self.inputs[i].standard_uncertainty)
            .collect();
        let dof: Vec<Dof> = idx.iter().map(|&i| self.inputs[i].dof).collect();
        let block: Vec<usize> = (0..idx.len()).collect();
        let position: std::collections::HashMap<usize, usize> =
            idx.iter().enumerate().map(|(k, &i)| (i, k)).collect();
        let pairs: Vec<(usize, usize, f64)> = self
            .correlations
            .iter()
            .filter_map(|&(i, j, r)| Some((*position.get(&i)?, *position.get(&j)?, r)))
            .collect();
        Ok(effective_dof_correlated(&w, &pairs, &block, &dof))
    }
}

fn merge(ga: &Grad, ka: f64, gb: &Grad, kb: f64) -> Grad {
    let session = match (ga.session, gb.session) {
        (0, s) | (s, 0) => s,
        (x, y) if x == y => x,
        _ => MIXED,
    };
    let (a, b) = (ga.terms.as_slice(), gb.terms.as_slice());
    let mut out = Vec::with_capacity(a.len() + b.len());
    let (mut i, mut j) = (0, 0);
    while i < a.len() || j < b.len() {
        let (idx, v) = match (a.get(i), b.get(j)) {
            (Some(&(ia, va)), Some(&(ib, vb))) if ia == ib => {
                i += 1;
                j += 1;
                (ia, ka * va + kb * vb)
            }
            (Some(&(ia, va)), Some(&(ib, _))) if ia < ib => {
                i += 1;
                (ia, ka * va)
            }
            (Some(&(ia, va)), None) => {
                i += 1;
                (ia, ka * va)
            }
            (_, Some(&(ib, vb))) => {
                j += 1;
                (ib, kb * vb)
            }
            (None, None) => unreachable!("the loop condition holds"),
        };
        if v != 0.0 {
            out.push((idx, v));
        }
    }
    Grad {
        session,
        terms: out,
    }
}

impl Estimate {
    /// An exact number.
    pub fn exact(value: f64) -> Estimate {
        Estimate {
            value,
            grad: Grad::default(),
        }
    }

    /// The value.
    pub fn value(&self) -> f64 {
        self.value
    }

    /// The sensitivity coefficient to base input `i` of the session.
    pub fn sensitivity(&self, i: usize) -> f64 {
        self.grad
            .terms
            .iter()
            .find(|(k, _)| *k == i)
            .map_or(0.0, |t| t.1)
    }

    /// Apply a function of one argument with derivative `d` at the value.
    fn chain(&self, value: f64, d: f64) -> Estimate {
        Estimate {
            value,
            grad: Grad {
                session: self.grad.session,
                terms: self
                    .grad
                    .terms
                    .iter()
                    .filter_map(|&(i, c)| {
                        let v = c * d;
                        (v != 0.0).then_some((i, v))
                    })
                    .collect(),
            },
        }
    }

    /// √x, with the sensitivity to every base input carried through (the chain rule).
    pub fn sqrt(&self) -> Estimate {
        let s = self.value.sqrt();
        self.chain(s, 0.5 / s)
    }
    /// ∛x, with the sensitivity to every base input carried through (the chain rule).
    pub fn cbrt(&self) -> Estimate {
        let s = self.value.cbrt();
        self.chain(s, 1.0 / (3.0 * s * s))
    }
    /// eˣ, with the sensitivity to every base input carried through (the chain rule).
    pub fn exp(&self) -> Estimate {
        let e = self.value.exp();
        self.chain(e, e)
    }
    /// ln x, with the sensitivity to every base input carried through (the chain rule).
    pub fn ln(&self) -> Estimate {
        self.chain(self.value.ln(), 1.0 / self.value)
    }
    /// log₁₀ x, with the sensitivity to every base input carried through (the chain rule).
    pub fn log10(&self) -> Estimate {
        self.chain(
            self.value.log10(),
            1.0 / (self.value * std::f64::consts::LN_10),
        )
    }
    /// log₂ x, with the sensitivity to every base input carried through (the chain rule).
    pub fn log2(&self) -> Estimate {
        self.chain(
            self.value.log2(),
            1.0 / (self.value * std::f64::consts::LN_2),
        )
    }
    /// sin x, with the sensitivity to every base input carried through (the chain rule).
    pub fn sin(&self) -> Estimate {
        self.chain(self.value.sin(), self.value.cos())
    }
    /// cos x, with the sensitivity to every base input carried through (the chain rule).
    pub fn cos(&self) -> Estimate {
        self.chain(self.value.cos(), -self.value.sin())
    }
    /// tan x, with the sensitivity to every base input carried through (the chain rule).
    pub fn tan(&self) -> Estimate {
        let c = self.value.cos();
        self.chain(self.value.tan(), 1.0 / (c * c))
    }
    /// asin x, with the sensitivity to every base input carried through (the chain rule).
    pub fn asin(&self) -> Estimate {
        self.chain(
            self.value.asin(),
            1.0 / (1.0 - self.value * self.value).sqrt(),
        )
    }
    /// acos x, with the sensitivity to every base input carried through (the chain rule).
    pub fn acos(&self) -> Estimate {
        self.chain(
            self.value.acos(),
            -1.0 / (1.0 - self.value * self.value).sqrt(),
        )
    }
    /// atan x, with the sensitivity to every base input carried through (the chain rule).
    pub fn atan(&self) -> Estimate {
        self.chain(self.value.atan(), 1.0 / (1.0 + self.value * self.value))
    }
    /// sinh x, with the sensitivity to every base input carried through (the chain rule).
    pub fn sinh(&self) -> Estimate {
        self.chain(self.value.sinh(), self.value.cosh())
    }
    /// cosh x, with the sensitivity to every base input carried through (the chain rule).
    pub fn cosh(&self) -> Estimate {
        self.chain(self.value.cosh(), self.value.sinh())
    }
    /// tanh x, with the sensitivity to every base input carried through (the chain rule).
    pub fn tanh(&self) -> Estimate {
        let c = self.value.cosh();
        self.chain(self.value.tanh(), 1.0 / (c * c))
    }
    /// asinh x, with the sensitivity to every base input carried through (the chain rule).
    pub fn asinh(&self) -> Estimate {
        self.chain(
            self.value.asinh(),
            1.0 / (self.value * self.value + 1.0).sqrt(),
        )
    }
    /// acosh x, with the sensitivity to every base input carried through (the chain rule).
    pub fn acosh(&self) -> Estimate {
        self.chain(
            self.value.acosh(),
            1.0 / (self.value * self.value - 1.0).sqrt(),
        )
    }
    /// atanh x, with the sensitivity to every base input carried through (the chain rule).
    pub fn atanh(&self) -> Estimate {
        self.chain(self.value.atanh(), 1.0 / (1.0 - self.value * self.value))
    }
    /// |x|, with the sensitivity to every base input carried through (the chain rule).
    pub fn abs(&self) -> Estimate {
        self.chain(
            self.value.abs(),
            if self.value > 0.0 {
                1.0
            } else if self.value < 0.0 {
                -1.0
            } else {
                0.0
            },
        )
    }
    /// sign x (zero derivative), with the sensitivity to every base input carried through (the chain rule).
    pub fn sign(&self) -> Estimate {
        Estimate::exact(if self.value > 0.0 {
            1.0
        } else if self.value < 0.0 {
            -1.0
        } else {
            0.0
        })
    }
    /// Integer power (x·x for 2, as the formula engine does).
    pub fn powi(&self, n: i32) -> Estimate {
        let v = if n == 2 {
            self.value * self.value
        } else {
            self.value.powi(n)
        };
        self.chain(v, n as f64 * self.value.powi(n - 1))
    }
    /// A power with an uncertain exponent: d(a^b) = b a^(b−1) da + a^b ln(a) db.
    pub fn pow(&self, e: &Estimate) -> Estimate {
        let v = self.value.powf(e.value);
        let da = e.value * self.value.powf(e.value - 1.0);
        let db = if e.grad.terms.is_empty() {
            0.0
        } else {
            v * self.value.ln()
        };
        Estimate {
            value: v,
            grad: merge(&self.grad, da, &e.grad, db),
        }
    }
    /// atan2(self, x), the angle of the point (x, self), with sensitivities.
    pub fn atan2(&self, x: &Estimate) -> Estimate {
        let r2 = self.value * self.value + x.value * x.value;
        Estimate {
            value: self.value.atan2(x.value),
            grad: merge(&self.grad, x.value / r2, &x.grad, -self.value / r2),
        }
    }
    /// hypot(self, b) = √(self² + b²), with sensitivities.
    pub fn hypot(&self, b: &Estimate) -> Estimate {
        let h = self.value.hypot(b.value);
        Estimate {
            value: h,
            grad: merge(&self.grad, self.value / h, &b.grad, b.value / h),
        }
    }
}

impl From<f64> for Estimate {
    fn from(v: f64) -> Self {
        Estimate::exact(v)
    }
}

macro_rules! binop {
    ($tr:ident, $m:ident, $f:expr) => {
        impl $tr<&Estimate> for &Estimate {
            type Output = Estimate;
            fn $m(self, o: &Estimate) -> Estimate {
                $f(self, o)
            }
        }
        impl $tr<Estimate> for Estimate {
            type Output = Estimate;
            fn $m(self, o: Estimate) -> Estimate {
                $f(&self, &o)
            }
        }
        impl $tr<&Estimate> for Estimate {
            type Output = Estimate;
            fn $m(self, o: &Estimate) -> Estimate {
                $f(&self, o)
            }
        }
        impl $tr<Estimate> for &Estimate {
            type Output = Estimate;
            fn $m(self, o: Estimate) -> Estimate {
                $f(self, &o)
            }
        }
        impl $tr<f64> for Estimate {
            type Output = Estimate;
            fn $m(self, o: f64) -> Estimate {
                $f(&self, &Estimate::exact(o))
            }
        }
        impl $tr<f64> for &Estimate {
            type Output = Estimate;
            fn $m(self, o: f64) -> Estimate {
                $f(self, &Estimate::exact(o))
            }
        }
        impl $tr<Estimate> for f64 {
            type Output = Estimate;
            fn $m(self, o: Estimate) -> Estimate {
                $f(&Estimate::exact(self), &o)
            }
        }
        impl $tr<&Estimate> for f64 {
            type Output = Estimate;
            fn $m(self, o: &Estimate) -> Estimate {
                $f(&Estimate::exact(self), o)
            }
        }
    };
}

binop!(Add, add, |a: &Estimate, b: &Estimate| Estimate {
    value: a.value + b.value,
    grad: merge(&a.grad, 1.0, &b.grad, 1.0)
});
binop!(Sub, sub, |a: &Estimate, b: &Estimate| Estimate {
    value: a.value - b.value,
    grad: merge(&a.grad, 1.0, &b.grad, -1.0)
});
binop!(Mul, mul, |a: &Estimate, b: &Estimate| Estimate {
    value: a.value * b.value,
    grad: merge(&a.grad, b.value, &b.grad, a.value)
});
binop!(Div, div, |a: &Estimate, b: &Estimate| Estimate {
    value: a.value / b.value,
    grad: merge(
        &a.grad,
        1.0 / b.value,
        &b.grad,
        -a.value / (b.value * b.value)
    )
});

impl Neg for Estimate {
    type Output = Estimate;
    fn neg(self) -> Estimate {
        self.chain(-self.value, -1.0)
    }
}

impl Neg for &Estimate {
    type Output = Estimate;
    fn neg(self) -> Estimate {
        self.chain(-self.value, -1.0)
    }
}

/// Evaluate a formula of the expression language on tracked estimates.
pub fn eval_expr(
    e: &incertus_expr::Expr,
    env: &dyn Fn(&str) -> Option<Estimate>,
) -> Result<Estimate, incertus_expr::FormulaError> {
    use incertus_expr::{ErrorKind, FormulaError, Func, Kind};
    let domain = |what: &str| FormulaError::new(ErrorKind::Domain, what.to_string(), e.span);
    let v = match &e.kind {
        Kind::Num(v) => Estimate::exact(*v),
        Kind::Pi => Estimate::exact(std::f64::consts::PI),
        Kind::Var(n) => env(n).ok_or_else(|| {
            FormulaError::new(ErrorKind::Name, format!("`{n}` is not defined"), e.span)
        })?,
        Kind::Neg(a) => -eval_expr(a, env)?,
        Kind::Sum(ts) => {
            let mut acc: Option<Estimate> = None;
            for t in ts {
                let v = eval_expr(&t.expr, env)?;
                acc = Some(match (acc, t.negative) {
                    (None, false) => v,
                    (None, true) => -v,
                    (Some(a), false) => a + v,
                    (Some(a), true) => a - v,
                });
            }
            acc.expect("a sum has terms")
        }
        Kind::Product(fs) => {
            let mut acc: Option<Estimate> = None;
            for f in fs {
                let v = eval_expr(&f.expr, env)?;
                if f.divide && v.value == 0.0 {
                    return Err(FormulaError::new(
                        ErrorKind::Domain,
                        "division by zero",
                        f.expr.span,
                    ));
                }
                acc = Some(match (acc, f.divide) {
                    (None, false) => v,
                    (None, true) => 1.0 / v,
                    (Some(a), false) => a * v,
                    (Some(a), true) => a / v,
                });
            }
            acc.expect("a product has factors")
        }
        Kind::Pow(b, x) => pow_node(b, x, env)?,
        Kind::Call(Func::Pow, args) => pow_node(&args[0], &args[1], env)?,
        Kind::Call(f, args) => {
            let a = eval_expr(&args[0], env)?;
            let check = |ok: bool, what: &str| if ok { Ok(()) } else { Err(domain(what)) };
            match f {
                Func::Sqrt => {
                    check(a.value >= 0.0, "square root of a negative number")?;
                    a.sqrt()
                }
                Func::Cbrt => a.cbrt(),
                Func::Exp => a.exp(),
                Func::Ln | Func::Log10 | Func::Log2 => {
                    check(a.value > 0.0, "logarithm of a number that is not positive")?;
                    match f {
                        Func::Ln => a.ln(),
                        Func::Log10 => a.log10(),
                        _ => a.log2(),
                    }
                }
                Func::Sin => a.sin(),
                Func::Cos => a.cos(),
                Func::Tan => a.tan(),
                Func::Asin => a.asin(),
                Func::Acos => a.acos(),
                Func::Atan => a.atan(),
                Func::Sinh => a.sinh(),
                Func::Cosh => a.cosh(),
                Func::Tanh => a.tanh(),
                Func::Asinh => a.asinh(),
                Func::Acosh => a.acosh(),
                Func::Atanh => a.atanh(),
                Func::Abs => a.abs(),
                Func::Sign => a.sign(),
                Func::Atan2 => a.atan2(&eval_expr(&args[1], env)?),
                Func::Hypot => a.hypot(&eval_expr(&args[1], env)?),
                Func::Pow => unreachable!("handled above"),
            }
        }
    };
    if !v.value.is_finite() {
        return Err(domain("the value is not a finite number"));
    }
    Ok(v)
}

fn pow_node(
    b: &incertus_expr::Expr,
    x: &incertus_expr::Expr,
    env: &dyn Fn(&str) -> Option<Estimate>,
) -> Result<Estimate, incertus_expr::FormulaError> {
    let base = eval_expr(b, env)?;
    if let Some(n) = incertus_expr::func::literal_integer(x) {
        return Ok(base.powi(n));
    }
    let e = eval_expr(x, env)?;
    Ok(base.pow(&e))
}
