//! The familiar propagation rules fall out of the symbolic derivatives.
//!
//! JCGM 100:2008, 5.1.6 (recalled from memory): for Y = c·X1^p1·X2^p2···XN^pN
//! the relative sensitivity coefficient of X_i is p_i, so
//! (u_c(y)/y)² = Σ [p_i·u(x_i)/x_i]²; for a sum or difference the
//! sensitivity coefficients are ±1 and the squares of the standard
//! uncertainties add (JCGM 100:2008, 5.1.2 with c_i = ±1). Exact checks.

use incertus::expr::{derivative, parse, print, Expr};

fn at(e: &Expr, env: &[(&str, f64)]) -> f64 {
    e.eval(env).unwrap()
}

#[test]
fn relative_sensitivity_of_a_power_law_is_its_exponent() {
    let y = parse("c*a^p").unwrap();
    let dy = derivative(&y, "a");
    for (c, a, p) in [
        (2.0, 1.3, -0.75),
        (0.5, 7.0, 2.0),
        (3.0, 0.2, 0.5),
        (1.0, 4.0, 3.0),
    ] {
        let env = [("c", c), ("a", a), ("p", p)];
        let rel = at(&dy, &env) * a / at(&y, &env);
        assert!(
            (rel - p).abs() <= 4.0 * f64::EPSILON * p.abs().max(1.0),
            "{rel} vs {p}"
        );
    }
    // With numeric exponents the simplified derivative shows the rule directly.
    assert_eq!(print(&derivative(&parse("c*a^3").unwrap(), "a")), "3*c*a^2");
    assert_eq!(
        print(&derivative(&parse("c/a^2").unwrap(), "a")),
        "-2*c/a^3"
    );
    assert_eq!(
        print(&derivative(&parse("c*sqrt(a)").unwrap(), "a")),
        "c/(2*sqrt(a))"
    );
}

#[test]
fn products_and_quotients_add_relative_uncertainties_in_quadrature() {
    // y = a·b/c: relative sensitivities +1, +1, -1.
    let y = parse("a*b/c").unwrap();
    let x = [("a", 2.5), ("b", 0.8), ("c", 1.6)];
    let u = [0.01, 0.004, 0.002];
    let yv = at(&y, &x);
    let mut lpu = 0.0; // law of propagation, first order
    let mut quad = 0.0; // the textbook relative rule
    for (i, (name, v)) in x.iter().enumerate() {
        let ci = at(&derivative(&y, name), &x);
        lpu += (ci * u[i]).powi(2);
        quad += (u[i] / v).powi(2);
    }
    let rel = lpu.sqrt() / yv;
    assert!(
        (rel - quad.sqrt()).abs() < 1e-15,
        "{rel} vs {}",
        quad.sqrt()
    );
}

#[test]
fn sums_and_differences_add_uncertainties_in_quadrature() {
    let y = parse("a + b - c - 2*d").unwrap();
    let coefficients: Vec<String> = ["a", "b", "c", "d"]
        .iter()
        .map(|n| print(&derivative(&y, n)))
        .collect();
    assert_eq!(coefficients, ["1", "1", "-1", "-2"]);
}

#[test]
fn nonlinear_model_has_the_second_derivatives_of_the_higher_order_terms() {
    // JCGM 100:2008, 5.1.2 note: for y = x1·x2 the only non-zero second
    // derivative is ∂²f/∂x1∂x2 = 1, which gives the extra term u²(x1)u²(x2).
    let y = parse("x1*x2").unwrap();
    let d11 = derivative(&derivative(&y, "x1"), "x1");
    let d12 = derivative(&derivative(&y, "x1"), "x2");
    let d22 = derivative(&derivative(&y, "x2"), "x2");
    assert_eq!(
        (print(&d11), print(&d12), print(&d22)),
        ("0".into(), "1".into(), "0".into())
    );
}
