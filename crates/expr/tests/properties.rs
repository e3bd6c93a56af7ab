//! Property tests of the formula language: derivatives against finite
//! differences and forward-mode dual numbers, print/parse round trips, tape
//! against tree evaluation, simplification preserving values.

mod common;

use common::dual::Dual;
use common::{env, point, smooth_formula, NAMES};
use incertus_expr::{derivative, parse, print, simplify, Expr, Tape};
use proptest::prelude::*;

fn value(e: &Expr, p: &[f64; 3]) -> Option<f64> {
    e.eval::<f64, _>(&env(p)).ok()
}

/// Derivative of `e` along coordinate `k` by central differences with one
/// Richardson step: D(h) = (f(x+h) - f(x-h)) / 2h has error c2 h^2 + c4 h^4,
/// so R(h) = (4 D(h/2) - D(h)) / 3 has error O(h^4). With h = 1e-3 the
/// truncation error is ~1e-12 times the fifth derivative, and rounding adds
/// ~eps |f| / h ~ 1e-13 |f|. Where the fifth derivative is huge (a random
/// formula such as sin(z^16)) no step works, so R(h) and R(h/2) are compared
/// first and the point is skipped unless they agree to 1e-8 relative: the
/// estimate is then good to far better than the tolerance of the check,
/// 1e-6 relative, which in turn is far below the error of any wrong rule
/// (common practice of numerical analysis, no published source).
fn finite_difference(e: &Expr, p: &[f64; 3], k: usize) -> Option<(f64, f64)> {
    let at = |d: f64| {
        let mut q = *p;
        q[k] += d;
        value(e, &q)
    };
    let richardson = |h: f64| -> Option<f64> {
        let d1 = (at(h)? - at(-h)?) / (2.0 * h);
        let d2 = (at(h / 2.0)? - at(-h / 2.0)?) / h;
        Some((4.0 * d2 - d1) / 3.0)
    };
    let r1 = richardson(1e-3)?;
    let r2 = richardson(5e-4)?;
    Some((r2, (r1 - r2).abs()))
}

/// The finite-difference estimate when it has converged (see above).
fn converged(fd: Option<(f64, f64)>, scale: f64) -> Option<f64> {
    let (v, spread) = fd?;
    (spread <= 1e-8 * (v.abs() + scale)).then_some(v)
}

fn near(a: f64, b: f64, scale: f64) -> bool {
    (a - b).abs() <= 1e-6 * (a.abs().max(b.abs()) + scale)
}

fn same_bits(
    a: Result<f64, incertus_expr::FormulaError>,
    b: Result<f64, incertus_expr::FormulaError>,
) -> bool {
    match (a, b) {
        (Ok(x), Ok(y)) => x.to_bits() == y.to_bits(),
        (Err(_), Err(_)) => true,
        _ => false,
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn first_derivatives_match_finite_differences(src in smooth_formula(), p in point()) {
        let f = parse(&src).unwrap();
        let size = value(&f, &p).unwrap().abs();
        prop_assume!(size < 1e6);
        for (k, name) in NAMES.iter().enumerate() {
            let d = derivative(&f, name);
            let got = value(&d, &p).unwrap();
            let fd = converged(finite_difference(&f, &p, k), 1.0 + size);
            prop_assume!(fd.is_some());
            let fd = fd.unwrap();
            prop_assert!(near(got, fd, 1.0 + size), "{src}\n d/d{name} = {d}\n {got} vs {fd}");
        }
    }

    #[test]
    fn second_derivatives_match_finite_differences(src in smooth_formula(), p in point()) {
        let f = parse(&src).unwrap();
        for (k, name) in NAMES.iter().enumerate() {
            let d1 = derivative(&f, name);
            let size = value(&d1, &p).unwrap().abs();
            prop_assume!(size < 1e6);
            for other in NAMES {
                let d2 = derivative(&d1, other);
                let fd = converged(finite_difference(&derivative(&f, other), &p, k), 1.0 + size);
                prop_assume!(fd.is_some());
                let fd = fd.unwrap();
                let got = value(&d2, &p).unwrap();
                prop_assert!(near(got, fd, 1.0 + size), "{src}: d2/d{other}d{name} {got} vs {fd}");
            }
        }
    }

    #[test]
    fn symbolic_derivatives_match_dual_numbers(src in smooth_formula(), p in point()) {
        let f = parse(&src).unwrap();
        for (k, name) in NAMES.iter().enumerate() {
            let mut x = [Dual::cst(p[0]), Dual::cst(p[1]), Dual::cst(p[2])];
            x[k] = Dual::var(p[k]);
            let env = [("x", x[0]), ("y", x[1]), ("z", x[2])];
            let fwd = f.eval::<Dual, _>(&env).unwrap();
            let sym = value(&derivative(&f, name), &p).unwrap();
            prop_assert!(
                (fwd.eps - sym).abs() <= 1e-9 * (1.0 + sym.abs()),
                "{src}: d/d{name} dual {} vs symbolic {sym}", fwd.eps
            );
        }
    }

    #[test]
    fn print_then_parse_evaluates_identically(src in smooth_formula(), p in point()) {
        let f = parse(&src).unwrap();
        let simplified = simplify(&f);
        let d = derivative(&f, "x");
        for e in [&f, &simplified, &d] {
            let text = print(e);
            let back = parse(&text).unwrap_or_else(|err| panic!("{text}: {}", err.render(&text)));
            prop_assert!(
                same_bits(e.eval::<f64, _>(&env(&p)), back.eval::<f64, _>(&env(&p))),
                "{text}"
            );
            // Printing is stable: the reparsed tree prints the same.
            prop_assert_eq!(print(&back), text);
        }
    }

    #[test]
    fn simplification_keeps_the_value(src in smooth_formula(), p in point()) {
        let f = parse(&src).unwrap();
        let a = value(&f, &p).unwrap();
        let b = value(&simplify(&f), &p).unwrap();
        prop_assert!((a - b).abs() <= 1e-9 * (1.0 + a.abs()), "{src}: {a} vs {b}");
    }

    #[test]
    fn tape_agrees_with_tree_bit_for_bit(src in smooth_formula(), pts in prop::collection::vec(point(), 1..600)) {
        let f = parse(&src).unwrap();
        let tape = Tape::gradient(&f, &NAMES).unwrap();
        let exprs = tape.formulas().to_vec();
        let cols: Vec<Vec<f64>> = (0..3).map(|k| pts.iter().map(|p| p[k]).collect()).collect();
        let col_refs: Vec<&[f64]> = cols.iter().map(Vec::as_slice).collect();
        let mut out = vec![vec![0.0; pts.len()]; 4];
        let mut out_refs: Vec<&mut [f64]> = out.iter_mut().map(Vec::as_mut_slice).collect();
        let report = tape.eval_batch(&col_refs, &mut out_refs).unwrap();
        prop_assert!(report.all_finite());
        let mut single = [0.0; 4];
        for (i, p) in pts.iter().enumerate() {
            tape.eval_point(p, &mut single);
            for j in 0..4 {
                let tree = value(&exprs[j], p).unwrap();
                prop_assert_eq!(single[j].to_bits(), tree.to_bits(), "{} output {}", src, j);
                prop_assert_eq!(out[j][i].to_bits(), tree.to_bits(), "{} batch output {} point {}", src, j, i);
            }
        }
    }

    #[test]
    fn parser_never_panics(s in "\\PC{0,60}") {
        let _ = parse(&s);
    }

    #[test]
    fn parser_never_panics_on_formula_like_text(s in "[-+*/^(), .0-9a-z_eπ]{0,80}") {
        if let Err(e) = parse(&s) {
            // The caret rendering works for every span the parser reports.
            let r = e.render(&s);
            prop_assert!(r.contains('^'));
        }
    }
}
