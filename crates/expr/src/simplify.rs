//! Algebraic simplification, so that derivatives print the way a person
//! would write them.
//!
//! Rules (common practice of computer algebra, no published source): constant
//! folding of arithmetic (function values only when they are whole numbers,
//! so `ln(10)` stays readable), neutral and absorbing elements (`x + 0`,
//! `1*x`, `0*x`, `x^1`, `x^0`), flattening of nested sums and products,
//! merging of numeric factors into one rational coefficient (`2*x/3`),
//! collecting equal terms (`x + x = 2*x`) and equal bases (`x*x = x^2`),
//! integer powers of products and powers (`(x*y)^2 = x^2*y^2`,
//! `(x^a)^n = x^(a*n)` for integer `n`), `ln(exp(u)) = u`.
//!
//! Left out on purpose: expansion of products of sums, factorisation,
//! trigonometric identities, and any rule that holds only on part of the
//! domain beyond cancelling `x/x` (the usual convention of computer algebra).
//! Simplification may change the last bits of a floating-point value (it
//! reorders and merges constants); it never changes the function.

use crate::ast::{Expr, Factor, Kind, Span, Term};
use crate::func::Func;

/// Simplify a formula.
///
/// ```
/// use incertus_expr::{parse, print, simplify};
/// let e = simplify(&parse("0*y + x*x*3/6 + 1*x^1").unwrap());
/// assert_eq!(print(&e), "x^2/2 + x");
/// ```
pub fn simplify(e: &Expr) -> Expr {
    let s = e.span;
    match &e.kind {
        Kind::Num(_) | Kind::Pi | Kind::Var(_) => e.clone(),
        Kind::Neg(a) => negate(simplify(a)),
        Kind::Sum(ts) => build_sum(
            ts.iter().map(|t| (t.negative, simplify(&t.expr))).collect(),
            s,
        ),
        Kind::Product(fs) => build_product(
            fs.iter().map(|f| (f.divide, simplify(&f.expr))).collect(),
            s,
        ),
        Kind::Pow(b, x) => build_pow(simplify(b), simplify(x), s),
        Kind::Call(f, args) => build_call(*f, args.iter().map(simplify).collect(), s),
    }
}

/// A rational coefficient `n/d` (`d > 0`), kept exact while numerator and
/// denominator are whole numbers below 2^53, and a plain float otherwise.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Coef {
    n: f64,
    d: f64,
}

const EXACT: f64 = 9_007_199_254_740_992.0; // 2^53

impl Coef {
    pub(crate) fn new(n: f64, d: f64) -> Coef {
        if d == 0.0 || !n.is_finite() || !d.is_finite() {
            return Coef { n: n / d, d: 1.0 };
        }
        let (n, d) = if d < 0.0 { (-n, -d) } else { (n, d) };
        let whole = |v: f64| v.fract() == 0.0 && v.abs() < EXACT;
        if whole(n) && whole(d) {
            let g = gcd(n.abs(), d);
            if g > 1.0 {
                return Coef { n: n / g, d: d / g };
            }
            Coef { n, d }
        } else {
            Coef { n: n / d, d: 1.0 }
        }
    }

    fn int(v: f64) -> Coef {
        Coef::new(v, 1.0)
    }

    pub(crate) fn value(self) -> f64 {
        self.n / self.d
    }

    fn mul(self, o: Coef) -> Coef {
        Coef::new(self.n * o.n, self.d * o.d)
    }

    fn div(self, o: Coef) -> Coef {
        Coef::new(self.n * o.d, self.d * o.n)
    }

    fn add(self, o: Coef) -> Coef {
        Coef::new(self.n * o.d + o.n * self.d, self.d * o.d)
    }

    fn neg(self) -> Coef {
        Coef {
            n: -self.n,
            d: self.d,
        }
    }

    fn is_zero(self) -> bool {
        self.n == 0.0
    }

    fn is_one(self) -> bool {
        self.n == self.d
    }

    fn is_integer(self) -> bool {
        self.d == 1.0 && self.n.fract() == 0.0
    }

    /// As a formula: `n`, or `n/d`.
    fn to_expr(self, s: Span) -> Expr {
        if self.d == 1.0 {
            Expr::num(self.n, s)
        } else {
            let n = Expr::num(self.n.abs(), s);
            let q = Expr::new(
                Kind::Product(vec![
                    Factor {
                        divide: false,
                        expr: n,
                    },
                    Factor {
                        divide: true,
                        expr: Expr::num(self.d, s),
                    },
                ]),
                s,
            );
            if self.n < 0.0 {
                Expr::new(Kind::Neg(Box::new(q)), s)
            } else {
                q
            }
        }
    }
}

fn gcd(mut a: f64, mut b: f64) -> f64 {
    while b != 0.0 {
        let t = a % b;
        a = b;
        b = t;
    }
    a
}

/// The value of a formula made only of literals and arithmetic (`3`, `-2`,
/// `1/3`), as a coefficient.
pub(crate) fn numeric(e: &Expr) -> Option<Coef> {
    match &e.kind {
        Kind::Num(v) => Some(Coef::int(*v)),
        Kind::Neg(a) => numeric(a).map(Coef::neg),
        Kind::Product(fs) => {
            let mut c = Coef::int(1.0);
            for f in fs {
                let v = numeric(&f.expr)?;
                if f.divide {
                    if v.is_zero() {
                        return None;
                    }
                    c = c.div(v);
                } else {
                    c = c.mul(v);
                }
            }
            Some(c)
        }
        _ => None,
    }
}

/// Split `c * rest` into its numeric coefficient and the rest.
fn split_coef(e: Expr) -> (Coef, Option<Expr>) {
    if let Some(c) = numeric(&e) {
        return (c, None);
    }
    match e.kind {
        Kind::Neg(a) => {
            let (c, r) = split_coef(*a);
            (c.neg(), r)
        }
        Kind::Product(fs) if fs.iter().any(|f| numeric(&f.expr).is_some()) => {
            let mut c = Coef::int(1.0);
            let mut rest = Vec::new();
            for f in fs {
                match numeric(&f.expr) {
                    Some(v) if !(f.divide && v.is_zero()) => {
                        c = if f.divide { c.div(v) } else { c.mul(v) }
                    }
                    _ => rest.push(f),
                }
            }
            (c, Some(product_of(rest, e.span)))
        }
        kind => (Coef::int(1.0), Some(Expr::new(kind, e.span))),
    }
}

/// A product of the given factors without further simplification.
fn product_of(mut fs: Vec<Factor>, s: Span) -> Expr {
    if fs.len() == 1 && !fs[0].divide {
        return fs.pop().expect("one factor").expr;
    }
    if fs.first().is_some_and(|f| f.divide) {
        fs.insert(
            0,
            Factor {
                divide: false,
                expr: Expr::num(1.0, s),
            },
        );
    }
    Expr::new(Kind::Product(fs), s)
}

/// `-e`, simplified.
pub fn negate(e: Expr) -> Expr {
    let s = e.span;
    match e.kind {
        Kind::Num(v) => Expr::num(-v, s),
        Kind::Neg(a) => *a,
        Kind::Sum(ts) => build_sum(ts.into_iter().map(|t| (!t.negative, t.expr)).collect(), s),
        Kind::Product(_) => build_product(vec![(false, Expr::num(-1.0, s)), (false, e)], s),
        kind => Expr::new(Kind::Neg(Box::new(Expr::new(kind, s))), s),
    }
}

/// `c * rest` as a formula.
fn scaled(c: Coef, rest: Expr, s: Span) -> Expr {
    if c.is_one() {
        return rest;
    }
    build_product(vec![(false, c.to_expr(s)), (false, rest)], s)
}

/// A simplified sum of signed terms.
pub(crate) fn build_sum(terms: Vec<(bool, Expr)>, s: Span) -> Expr {
    let mut constant = Coef::int(0.0);
    let mut items: Vec<(Coef, Expr)> = Vec::new();
    let mut index = SameIndex::default();
    // Each pending term carries the coefficient it is multiplied by; a sum
    // met as a term (or as `c * sum`) is flattened into its terms.
    let mut stack: Vec<(Coef, Expr)> = terms
        .into_iter()
        .rev()
        .map(|(neg, e)| (Coef::int(if neg { -1.0 } else { 1.0 }), e))
        .collect();
    while let Some((m, t)) = stack.pop() {
        let (c, rest) = split_coef(t);
        let c = c.mul(m);
        match rest {
            None => constant = constant.add(c),
            Some(Expr {
                kind: Kind::Sum(inner),
                ..
            }) => {
                for Term { negative, expr } in inner.into_iter().rev() {
                    stack.push((if negative { c.neg() } else { c }, expr));
                }
            }
            Some(r) => {
                let h = r.shape_hash();
                match index.find(h, &r, |i| &items[i].1) {
                    Some(i) => items[i].0 = items[i].0.add(c),
                    None => {
                        index.insert(h, items.len());
                        items.push((c, r));
                    }
                }
            }
        }
    }
    items.retain(|(c, _)| !c.is_zero());
    if !constant.is_zero() {
        items.push((constant, Expr::num(1.0, s)));
    }
    // A person writes `b - a` rather than `-a + b`.
    if let Some(first_positive) = items.iter().position(|(c, _)| c.n > 0.0) {
        let item = items.remove(first_positive);
        items.insert(0, item);
    }
    let mut out: Vec<Term> = items
        .into_iter()
        .map(|(c, r)| {
            let is_const = matches!(r.kind, Kind::Num(v) if v == 1.0);
            let mag = if c.n < 0.0 { c.neg() } else { c };
            let expr = if is_const {
                mag.to_expr(s)
            } else {
                scaled(mag, r, s)
            };
            Term {
                negative: c.n < 0.0,
                expr,
            }
        })
        .collect();
    match out.len() {
        0 => Expr::num(0.0, s),
        1 => {
            let t = out.pop().expect("one term");
            if t.negative {
                negate(t.expr)
            } else {
                t.expr
            }
        }
        _ => Expr::new(Kind::Sum(out), s),
    }
}

/// A simplified product of factors (`true` = divide by it).
pub(crate) fn build_product(factors: Vec<(bool, Expr)>, s: Span) -> Expr {
    let mut coef = Coef::int(1.0);
    // Bases with numeric exponents, merged when equal.
    let mut bases: Vec<(Expr, Coef)> = Vec::new();
    let mut index = SameIndex::default();
    let mut stack: Vec<(bool, Expr, Coef)> = factors
        .into_iter()
        .rev()
        .map(|(d, e)| (d, e, Coef::int(1.0)))
        .collect();
    while let Some((div, f, power)) = stack.pop() {
        // `power` is the integer (or, for a plain base, any) exponent that
        // applies to `f`; `div` negates it.
        let p = if div { power.neg() } else { power };
        if let Some(v) = numeric(&f) {
            if p.is_integer() && !(v.is_zero() && p.n < 0.0) {
                let n = p.n as i32;
                let mut c = Coef::int(1.0);
                for _ in 0..n.unsigned_abs().min(64) {
                    c = c.mul(v);
                }
                if n.unsigned_abs() <= 64 {
                    coef = if n < 0 { coef.div(c) } else { coef.mul(c) };
                    continue;
                }
            }
        }
        match f.kind {
            Kind::Product(inner) if p.is_integer() => {
                for Factor { divide, expr } in inner.into_iter().rev() {
                    stack.push((divide, expr, p));
                }
            }
            Kind::Neg(a) if p.is_integer() => {
                if p.n.rem_euclid(2.0) == 1.0 {
                    coef = coef.neg();
                }
                stack.push((false, *a, p));
            }
            Kind::Pow(b, x) if numeric(&x).is_some() => {
                let q = numeric(&x).expect("checked above");
                if p.is_integer() || p.is_one() {
                    stack.push((false, *b, q.mul(p)));
                } else {
                    merge_base(
                        &mut bases,
                        &mut index,
                        Expr::new(Kind::Pow(b, x), f.span),
                        p,
                    );
                }
            }
            kind => merge_base(&mut bases, &mut index, Expr::new(kind, f.span), p),
        }
    }
    if coef.is_zero() {
        return Expr::num(0.0, s);
    }
    bases.retain(|(_, p)| !p.is_zero());
    // `-(a - b)` reads better as `b - a`.
    if coef == Coef::int(-1.0) && bases.len() == 1 && bases[0].1.is_one() {
        if let Kind::Sum(_) = bases[0].0.kind {
            let (sum, _) = bases.pop().expect("one base");
            return negate(sum);
        }
    }
    let mut num: Vec<Factor> = Vec::new();
    let mut den: Vec<Expr> = Vec::new();
    let negative = coef.n < 0.0;
    let mag = if negative { coef.neg() } else { coef };
    if mag.n != 1.0 {
        num.push(Factor {
            divide: false,
            expr: Expr::num(mag.n, s),
        });
    }
    for (b, p) in bases {
        if p.n > 0.0 {
            num.push(Factor {
                divide: false,
                expr: raise(b, p, s),
            });
        } else {
            den.push(raise(b, p.neg(), s));
        }
    }
    if mag.d != 1.0 {
        den.insert(0, Expr::num(mag.d, s));
    }
    if num.is_empty() {
        num.push(Factor {
            divide: false,
            expr: Expr::num(1.0, s),
        });
    }
    match den.len() {
        0 => {}
        1 => num.push(Factor {
            divide: true,
            expr: den.pop().expect("one"),
        }),
        _ => num.push(Factor {
            divide: true,
            expr: Expr::new(
                Kind::Product(
                    den.into_iter()
                        .map(|expr| Factor {
                            divide: false,
                            expr,
                        })
                        .collect(),
                ),
                s,
            ),
        }),
    }
    let body = product_of(num, s);
    if negative {
        match body.kind {
            Kind::Num(v) => Expr::num(-v, s),
            kind => Expr::new(Kind::Neg(Box::new(Expr::new(kind, s))), s),
        }
    } else {
        body
    }
}

fn merge_base(bases: &mut Vec<(Expr, Coef)>, index: &mut SameIndex, b: Expr, p: Coef) {
    let h = b.shape_hash();
    match index.find(h, &b, |i| &bases[i].0) {
        Some(i) => bases[i].1 = bases[i].1.add(p),
        None => {
            index.insert(h, bases.len());
            bases.push((b, p));
        }
    }
}

/// Positions of earlier items by the hash of their structure, so that
/// equal terms and bases are found without comparing every pair (a sum of
/// n products of n factors would otherwise take n³ comparisons).
#[derive(Default)]
struct SameIndex {
    by_hash: std::collections::HashMap<u64, Vec<usize>>,
}

impl SameIndex {
    fn find<'a>(&self, h: u64, e: &Expr, item: impl Fn(usize) -> &'a Expr) -> Option<usize> {
        self.by_hash
            .get(&h)?
            .iter()
            .copied()
            .find(|&i| item(i).same(e))
    }

    fn insert(&mut self, h: u64, i: usize) {
        self.by_hash.entry(h).or_default().push(i);
    }
}

/// `b ^ p` for a positive exponent, without further simplification.
fn raise(b: Expr, p: Coef, s: Span) -> Expr {
    if p.is_one() {
        return b;
    }
    Expr::new(Kind::Pow(Box::new(b), Box::new(p.to_expr(s))), s)
}

/// A simplified power.
pub(crate) fn build_pow(b: Expr, x: Expr, s: Span) -> Expr {
    if let Some(p) = numeric(&x) {
        if p.is_zero() {
            return Expr::num(1.0, s);
        }
        if p.is_one() {
            return b;
        }
        if let Some(v) = numeric(&b) {
            if v.is_zero() && p.n > 0.0 {
                return Expr::num(0.0, s);
            }
            if v.is_one() {
                return Expr::num(1.0, s);
            }
            if !p.is_integer() {
                return Expr::new(Kind::Pow(Box::new(b), Box::new(x)), s);
            }
        }
        // Route through the product builder: it merges bases, distributes
        // integer powers and writes negative exponents as a denominator.
        let pow = Expr::new(Kind::Pow(Box::new(b), Box::new(p.to_expr(s))), s);
        return build_product(vec![(false, pow)], s);
    }
    if let Some(v) = numeric(&b) {
        if v.is_one() {
            return Expr::num(1.0, s);
        }
    }
    Expr::new(Kind::Pow(Box::new(b), Box::new(x)), s)
}

/// A simplified call.
pub(crate) fn build_call(f: Func, args: Vec<Expr>, s: Span) -> Expr {
    if f == Func::Pow {
        let mut it = args.into_iter();
        let b = it.next().expect("pow has two arguments");
        let x = it.next().expect("pow has two arguments");
        return build_pow(b, x, s);
    }
    let values: Option<Vec<f64>> = args.iter().map(|a| numeric(a).map(Coef::value)).collect();
    if let Some(v) = values {
        if let Ok(r) = f.apply(&v) {
            if r.is_finite() && r.fract() == 0.0 && r.abs() < EXACT {
                return Expr::num(r, s);
            }
        }
    }
    match (f, &args[0].kind) {
        (Func::Ln, Kind::Call(Func::Exp, inner)) => return inner[0].clone(),
        (Func::Abs, Kind::Call(Func::Abs, _)) => return args[0].clone(),
        _ => {}
    }
    Expr::new(Kind::Call(f, args), s)
}
