//! Formula to text.
//!
//! The printer keeps the tree's structure: a nested sum or product is put in
//! parentheses rather than merged into its parent, so `parse(print(f))`
//! evaluates exactly as `f` does, bit for bit (checked by a property test).
//! Numbers are written in the shortest form that reads back to the same
//! `f64`.

use std::fmt::Write;

use crate::ast::{Expr, Kind};

/// Binding strength, loosest first.
#[derive(Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Prec {
    Sum,
    Product,
    Unary,
    Power,
    Atom,
}

/// Write a formula as text that [`crate::parse()`] reads back.
///
/// ```
/// use incertus_expr::{parse, print, simplify};
/// let f = parse("-(x^2) + (a*b)/(c - 1)").unwrap();
/// // Redundant parentheses go; grouping that changes the order of
/// // evaluation stays, unless simplification flattens it.
/// assert_eq!(print(&f), "-x^2 + (a*b)/(c - 1)");
/// assert_eq!(print(&simplify(&f)), "a*b/(c - 1) - x^2");
/// ```
pub fn print(e: &Expr) -> String {
    let mut out = String::new();
    write(e, &mut out);
    out
}

impl std::fmt::Display for Expr {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&print(self))
    }
}

/// Shortest text that reads back to the same `f64`.
pub fn format_number(v: f64) -> String {
    if v.fract() == 0.0 && v.abs() < 1e15 {
        // Whole numbers without a decimal point; keep the sign of -0.
        if v == 0.0 && v.is_sign_negative() {
            return "-0".to_string();
        }
        return format!("{}", v as i64);
    }
    let s = format!("{v:?}");
    s.strip_suffix(".0").map(str::to_string).unwrap_or(s)
}

fn prec(e: &Expr) -> Prec {
    match &e.kind {
        Kind::Num(v) if *v < 0.0 || (*v == 0.0 && v.is_sign_negative()) => Prec::Unary,
        Kind::Num(_) | Kind::Pi | Kind::Var(_) | Kind::Call(..) => Prec::Atom,
        Kind::Neg(a) => after_minus(a),
        Kind::Sum(ts) if ts.len() == 1 && !ts[0].negative => prec(&ts[0].expr),
        Kind::Sum(_) => Prec::Sum,
        Kind::Product(fs) if fs.len() == 1 && !fs[0].divide => prec(&fs[0].expr),
        Kind::Product(_) => Prec::Product,
        Kind::Pow(..) => Prec::Power,
    }
}

/// What may follow a unary minus without parentheses, which is also the
/// binding of the negation as a whole. `-a*b` reads back as `(-a)*b`, the
/// same value bit for bit (negation is exact), so a negated product whose
/// first factor needs no parentheses prints bare and binds like a product;
/// any other operand is parenthesised unless it binds at least as tightly as
/// a unary minus; a first factor that is a sum prints in parentheses
/// anyway (`-(a - b)/c`). Keeping to this makes printing stable:
/// `print(parse(print(e))) == print(e)`.
fn after_minus(a: &Expr) -> Prec {
    match &a.kind {
        Kind::Product(fs)
            if fs[0].divide
                || prec(&fs[0].expr) >= Prec::Unary
                || matches!(fs[0].expr.kind, Kind::Sum(_)) =>
        {
            Prec::Product
        }
        Kind::Neg(_) if prec(a) == Prec::Product => Prec::Product,
        _ => Prec::Unary,
    }
}

fn child(e: &Expr, min: Prec, out: &mut String) {
    if prec(e) < min {
        out.push('(');
        write(e, out);
        out.push(')');
    } else {
        write(e, out);
    }
}

fn write(e: &Expr, out: &mut String) {
    match &e.kind {
        Kind::Num(v) => out.push_str(&format_number(*v)),
        Kind::Pi => out.push_str("pi"),
        Kind::Var(n) => out.push_str(n),
        Kind::Neg(a) => {
            out.push('-');
            child(a, after_minus(a), out);
        }
        Kind::Sum(ts) => {
            for (i, t) in ts.iter().enumerate() {
                match (i, t.negative) {
                    (0, false) => child(&t.expr, Prec::Product, out),
                    (0, true) => {
                        out.push('-');
                        child(&t.expr, after_minus(&t.expr), out);
                    }
                    (_, neg) => {
                        out.push_str(if neg { " - " } else { " + " });
                        child(&t.expr, Prec::Product, out);
                    }
                }
                // A nested sum as a term is parenthesised by `child`
                // (`Prec::Sum < Prec::Product`), which keeps the grouping.
            }
        }
        Kind::Product(fs) => {
            for (i, f) in fs.iter().enumerate() {
                if i == 0 {
                    if f.divide {
                        out.push_str("1/");
                        child(&f.expr, Prec::Power, out);
                    } else {
                        child(&f.expr, Prec::Unary, out);
                    }
                    continue;
                }
                out.push(if f.divide { '/' } else { '*' });
                child(&f.expr, Prec::Power, out);
            }
        }
        Kind::Pow(b, x) => {
            child(b, Prec::Atom, out);
            out.push('^');
            child(x, Prec::Unary, out);
        }
        Kind::Call(f, args) => {
            out.push_str(f.name());
            out.push('(');
            for (i, a) in args.iter().enumerate() {
                if i > 0 {
                    out.push_str(", ");
                }
                write(a, out);
            }
            out.push(')');
        }
    }
}

/// Write a formula with every operator parenthesised; used in tests and
/// debugging to see the tree's shape.
pub fn print_tree(e: &Expr) -> String {
    let mut out = String::new();
    tree(e, &mut out);
    out
}

fn tree(e: &Expr, out: &mut String) {
    match &e.kind {
        Kind::Num(v) => out.push_str(&format_number(*v)),
        Kind::Pi => out.push_str("pi"),
        Kind::Var(n) => out.push_str(n),
        Kind::Neg(a) => {
            out.push_str("(-");
            tree(a, out);
            out.push(')');
        }
        Kind::Sum(ts) => {
            out.push('(');
            for (i, t) in ts.iter().enumerate() {
                if i > 0 || t.negative {
                    out.push_str(if t.negative { " - " } else { " + " });
                }
                tree(&t.expr, out);
            }
            out.push(')');
        }
        Kind::Product(fs) => {
            out.push('(');
            for (i, f) in fs.iter().enumerate() {
                if i > 0 || f.divide {
                    out.push_str(if f.divide { " / " } else { " * " });
                }
                tree(&f.expr, out);
            }
            out.push(')');
        }
        Kind::Pow(b, x) => {
            out.push('(');
            tree(b, out);
            out.push_str(" ^ ");
            tree(x, out);
            out.push(')');
        }
        Kind::Call(f, args) => {
            let _ = write!(out, "{}(", f.name());
            for (i, a) in args.iter().enumerate() {
                if i > 0 {
                    out.push_str(", ");
                }
                tree(a, out);
            }
            out.push(')');
        }
    }
}
