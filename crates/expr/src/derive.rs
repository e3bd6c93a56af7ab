//! Symbolic differentiation.
//!
//! The rules are those of any calculus text (common practice, no published
//! source); each derived node keeps the span of the node it came from. The
//! result is simplified ([`crate::simplify()`]). Repeating the operation
//! gives the second and third derivatives that the higher-order terms of
//! JCGM 100:2008, 5.1.2 (note) need.
//!
//! At points where a function is not differentiable (`abs` at 0, `sign`
//! anywhere, `sqrt` at 0) the formula returned is the derivative where it
//! exists; `sign(u)` is taken as having derivative 0.

use crate::ast::{Expr, Factor, Kind, Span, Term};
use crate::func::Func;
use crate::simplify::simplify;

/// The partial derivative ∂e/∂`wrt`, simplified.
///
/// ```
/// use incertus_expr::{derivative, parse, print};
/// let f = parse("x^2*sin(y)").unwrap();
/// assert_eq!(print(&derivative(&f, "x")), "2*x*sin(y)");
/// assert_eq!(print(&derivative(&f, "y")), "x^2*cos(y)");
/// ```
pub fn derivative(e: &Expr, wrt: &str) -> Expr {
    let w = Wrt::new(e, wrt);
    simplify(&raw(e, &w))
}

/// The name a derivative is taken with respect to, and which nodes of the
/// formula depend on it, found in one pass: asking each node anew would
/// walk its subtree again at every level (cubic in a long chain of nested
/// sums).
struct Wrt<'a> {
    name: &'a str,
    depends: std::collections::HashSet<*const Expr>,
}

impl<'a> Wrt<'a> {
    fn new(e: &Expr, name: &'a str) -> Self {
        fn mark(e: &Expr, name: &str, set: &mut std::collections::HashSet<*const Expr>) -> bool {
            let d = match &e.kind {
                Kind::Var(n) => n == name,
                Kind::Num(_) | Kind::Pi => false,
                Kind::Neg(a) => mark(a, name, set),
                Kind::Sum(ts) => ts.iter().fold(false, |d, t| mark(&t.expr, name, set) | d),
                Kind::Product(fs) => fs.iter().fold(false, |d, f| mark(&f.expr, name, set) | d),
                Kind::Pow(a, b) => mark(a, name, set) | mark(b, name, set),
                Kind::Call(_, args) => args.iter().fold(false, |d, a| mark(a, name, set) | d),
            };
            if d {
                set.insert(e as *const Expr);
            }
            d
        }
        let mut depends = std::collections::HashSet::new();
        mark(e, name, &mut depends);
        Wrt { name, depends }
    }

    /// Whether `e`, a node of the formula, depends on the name.
    fn dep(&self, e: &Expr) -> bool {
        self.depends.contains(&(e as *const Expr))
    }
}

/// The mixed partial derivative with respect to each name of `wrt` in turn
/// (`["x", "x"]` is the second derivative in `x`).
pub fn derivative_n(e: &Expr, wrt: &[&str]) -> Expr {
    let mut d = simplify(e);
    for w in wrt {
        d = derivative(&d, w);
    }
    d
}

/// An upper bound on the number of nodes of the unsimplified derivative
/// ∂e/∂`wrt`, computed without building it (one pass over the tree), so
/// that a caller can refuse a derivative that would not fit in memory: the
/// product rule copies a product once per factor that depends on `wrt`, so
/// a product of n such factors has a derivative of about n² nodes.
///
/// ```
/// use incertus_expr::{derivative_size, parse};
/// let f = parse("(x+1)*(x+2)*(x+3)").unwrap();
/// assert!(derivative_size(&f, "x") >= 9.0);
/// assert_eq!(derivative_size(&f, "y"), 1.0);
/// ```
pub fn derivative_size(e: &Expr, wrt: &str) -> f64 {
    sizes(e, wrt).1
}

/// (nodes of e, bound on the nodes of its raw derivative, depends on w).
fn sizes(e: &Expr, w: &str) -> (f64, f64, bool) {
    match &e.kind {
        Kind::Num(_) | Kind::Pi => (1.0, 1.0, false),
        Kind::Var(n) => (1.0, 1.0, n == w),
        _ => {
            let kids: Vec<(f64, f64, bool)> = e.children().iter().map(|c| sizes(c, w)).collect();
            let n = 1.0 + kids.iter().map(|k| k.0).sum::<f64>();
            if !kids.iter().any(|k| k.2) {
                return (n, 1.0, false);
            }
            let d = match &e.kind {
                Kind::Neg(_) => 1.0 + kids[0].1,
                Kind::Sum(_) => 1.0 + kids.iter().filter(|k| k.2).map(|k| k.1).sum::<f64>(),
                Kind::Product(_) => {
                    1.0 + kids
                        .iter()
                        .filter(|k| k.2)
                        .map(|k| n - k.0 + k.1 + k.0 + 4.0)
                        .sum::<f64>()
                }
                // Power and function rules: a few copies of the node and
                // its arguments, plus the arguments' derivatives.
                _ => 3.0 * n + 16.0 + kids.iter().map(|k| k.1).sum::<f64>(),
            };
            (n, d, true)
        }
    }
}

fn num(v: f64, s: Span) -> Expr {
    Expr::num(v, s)
}

fn mul(fs: Vec<Expr>, s: Span) -> Expr {
    Expr::new(
        Kind::Product(
            fs.into_iter()
                .map(|expr| Factor {
                    divide: false,
                    expr,
                })
                .collect(),
        ),
        s,
    )
}

fn div(a: Expr, b: Expr, s: Span) -> Expr {
    Expr::new(
        Kind::Product(vec![
            Factor {
                divide: false,
                expr: a,
            },
            Factor {
                divide: true,
                expr: b,
            },
        ]),
        s,
    )
}

fn add(terms: Vec<(bool, Expr)>, s: Span) -> Expr {
    Expr::new(
        Kind::Sum(
            terms
                .into_iter()
                .map(|(negative, expr)| Term { negative, expr })
                .collect(),
        ),
        s,
    )
}

fn neg(a: Expr, s: Span) -> Expr {
    Expr::new(Kind::Neg(Box::new(a)), s)
}

fn pow(b: Expr, x: Expr, s: Span) -> Expr {
    Expr::new(Kind::Pow(Box::new(b), Box::new(x)), s)
}

fn call(f: Func, a: Expr, s: Span) -> Expr {
    Expr::new(Kind::Call(f, vec![a]), s)
}

fn sq(a: Expr, s: Span) -> Expr {
    pow(a, num(2.0, s), s)
}

/// The unsimplified derivative.
fn raw(e: &Expr, w: &Wrt) -> Expr {
    let s = e.span;
    if !w.dep(e) {
        return num(0.0, s);
    }
    match &e.kind {
        Kind::Num(_) | Kind::Pi => num(0.0, s),
        Kind::Var(n) => num(if n == w.name { 1.0 } else { 0.0 }, s),
        Kind::Neg(a) => neg(raw(a, w), s),
        Kind::Sum(ts) => add(
            ts.iter()
                .filter(|t| w.dep(&t.expr))
                .map(|t| (t.negative, raw(&t.expr, w)))
                .collect(),
            s,
        ),
        Kind::Product(fs) => {
            // Σ_i (Π_{j≠i} f_j) · d(f_i), with d(1/g) = -g'/g².
            let mut terms = Vec::new();
            for (i, fi) in fs.iter().enumerate() {
                if !w.dep(&fi.expr) {
                    continue;
                }
                // The derivative takes the place of the factor, so that the
                // result reads in the order the formula was written.
                let mut factors: Vec<Factor> = fs.to_vec();
                factors[i] = Factor {
                    divide: false,
                    expr: raw(&fi.expr, w),
                };
                if fi.divide {
                    factors.push(Factor {
                        divide: true,
                        expr: sq(fi.expr.clone(), s),
                    });
                }
                if factors[0].divide {
                    factors.insert(
                        0,
                        Factor {
                            divide: false,
                            expr: num(1.0, s),
                        },
                    );
                }
                terms.push((fi.divide, Expr::new(Kind::Product(factors), s)));
            }
            add(terms, s)
        }
        Kind::Pow(b, x) => d_pow(e, b, x, w),
        Kind::Call(Func::Pow, args) => d_pow(e, &args[0], &args[1], w),
        Kind::Call(f, args) => d_call(e, *f, args, w),
    }
}

/// The chain rule through a built-in function: f'(u)·u' (atan2 and hypot
/// by their two-argument rules).
fn d_call(e: &Expr, f: Func, args: &[Expr], w: &Wrt) -> Expr {
    let s = e.span;
    let u = &args[0];
    let du = raw(u, w);
    let uc = || u.clone();
    let outer = match f {
        Func::Sqrt => div(num(1.0, s), mul(vec![num(2.0, s), e.clone()], s), s),
        Func::Cbrt => div(num(1.0, s), mul(vec![num(3.0, s), sq(e.clone(), s)], s), s),
        Func::Exp => e.clone(),
        Func::Ln => div(num(1.0, s), uc(), s),
        Func::Log10 => div(
            num(1.0, s),
            mul(vec![uc(), call(Func::Ln, num(10.0, s), s)], s),
            s,
        ),
        Func::Log2 => div(
            num(1.0, s),
            mul(vec![uc(), call(Func::Ln, num(2.0, s), s)], s),
            s,
        ),
        Func::Sin => call(Func::Cos, uc(), s),
        Func::Cos => neg(call(Func::Sin, uc(), s), s),
        Func::Tan => div(num(1.0, s), sq(call(Func::Cos, uc(), s), s), s),
        Func::Asin | Func::Acos => {
            let r = div(
                num(1.0, s),
                call(
                    Func::Sqrt,
                    add(vec![(false, num(1.0, s)), (true, sq(uc(), s))], s),
                    s,
                ),
                s,
            );
            if f == Func::Acos {
                neg(r, s)
            } else {
                r
            }
        }
        Func::Atan => div(
            num(1.0, s),
            add(vec![(false, num(1.0, s)), (false, sq(uc(), s))], s),
            s,
        ),
        Func::Sinh => call(Func::Cosh, uc(), s),
        Func::Cosh => call(Func::Sinh, uc(), s),
        Func::Tanh => div(num(1.0, s), sq(call(Func::Cosh, uc(), s), s), s),
        Func::Asinh => div(
            num(1.0, s),
            call(
                Func::Sqrt,
                add(vec![(false, sq(uc(), s)), (false, num(1.0, s))], s),
                s,
            ),
            s,
        ),
        Func::Acosh => div(
            num(1.0, s),
            call(
                Func::Sqrt,
                add(vec![(false, sq(uc(), s)), (true, num(1.0, s))], s),
                s,
            ),
            s,
        ),
        Func::Atanh => div(
            num(1.0, s),
            add(vec![(false, num(1.0, s)), (true, sq(uc(), s))], s),
            s,
        ),
        Func::Abs => call(Func::Sign, uc(), s),
        Func::Sign => num(0.0, s),
        Func::Atan2 => {
            // atan2(y, x): (x·y' − y·x') / (x² + y²)
            let (y, x) = (&args[0], &args[1]);
            let top = add(
                vec![
                    (false, mul(vec![x.clone(), raw(y, w)], s)),
                    (true, mul(vec![y.clone(), raw(x, w)], s)),
                ],
                s,
            );
            let bottom = add(
                vec![(false, sq(x.clone(), s)), (false, sq(y.clone(), s))],
                s,
            );
            return div(top, bottom, s);
        }
        Func::Hypot => {
            // hypot(a, b): (a·a' + b·b') / hypot(a, b)
            let (a, b) = (&args[0], &args[1]);
            let top = add(
                vec![
                    (false, mul(vec![a.clone(), raw(a, w)], s)),
                    (false, mul(vec![b.clone(), raw(b, w)], s)),
                ],
                s,
            );
            return div(top, e.clone(), s);
        }
        Func::Pow => unreachable!("pow is handled with the power rule above"),
    };
    mul(vec![outer, du], s)
}

fn d_pow(e: &Expr, b: &Expr, x: &Expr, w: &Wrt) -> Expr {
    let s = e.span;
    let db = raw(b, w);
    if !w.dep(x) {
        // x · b^(x−1) · b'
        let xm1 = add(vec![(false, x.clone()), (true, num(1.0, s))], s);
        return mul(vec![x.clone(), pow(b.clone(), xm1, s), db], s);
    }
    let dx = raw(x, w);
    let lnb = call(Func::Ln, b.clone(), s);
    if !w.dep(b) {
        // b^x · ln(b) · x'
        return mul(vec![e.clone(), lnb, dx], s);
    }
    // b^x · (x'·ln(b) + x·b'/b)
    let inner = add(
        vec![
            (false, mul(vec![dx, lnb], s)),
            (false, div(mul(vec![x.clone(), db], s), b.clone(), s)),
        ],
        s,
    );
    mul(vec![e.clone(), inner], s)
}
