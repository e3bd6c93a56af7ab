//! Where the first-order law of propagation fails and must say so:
//! vanishing first-order terms (JCGM 100:2008, 5.1.2, note) and points
//! where a built-in function has no derivative.

use incertus_gum::{load_str, propagate, Options};

fn model(text: &str) -> incertus_gum::Model {
    load_str(text, "test.toml").unwrap_or_else(|e| panic!("{e}"))
}

fn two_inputs(x1: f64, u1: f64, x2: f64, u2: f64, formula: &str) -> incertus_gum::Model {
    model(&format!(
        "[inputs.x1]\nvalue = {x1:e}\nstandard_uncertainty = {u1:e}\n\
         [inputs.x2]\nvalue = {x2:e}\nstandard_uncertainty = {u2:e}\n\
         [[measurands]]\nname = \"y\"\nformula = \"{formula}\"\n"
    ))
}

fn second_order() -> Options {
    Options {
        second_order: true,
        ..Options::default()
    }
}

#[test]
fn product_of_zero_estimates_with_higher_order_terms() {
    // JCGM 100:2008, 5.1.2, note: for Y = X1 X2 with independent normal inputs
    // the higher-order terms give u² = x2²u1² + x1²u2² + u1²u2², which is the
    // exact variance of a product of independent normal variables
    // (Var(X1X2) = μ1²σ2² + μ2²σ1² + σ1²σ2², derived from E[X²] = μ² + σ²).
    for scale in [1e-30, 1e-3, 1.0, 1e3, 1e30] {
        for (x1, x2) in [(0.0, 0.0), (2.0, 0.0), (0.0, -3.0), (1.5, 0.5)] {
            let (u1, u2) = (0.3, 0.5);
            let m = two_inputs(x1 * scale, u1 * scale, x2, u2, "x1*x2");
            let r = propagate(&m, &second_order()).unwrap();
            let y = &r.results[0];
            let exact = scale * (x2 * x2 * u1 * u1 + x1 * x1 * u2 * u2 + u1 * u1 * u2 * u2).sqrt();
            let got = y.second_order_standard_uncertainty.unwrap();
            assert!(
                (got / exact - 1.0).abs() < 1e-12,
                "x1 {x1} x2 {x2} scale {scale}: {got} vs {exact}"
            );
            assert!((y.expanded_uncertainty / (y.coverage_factor * exact) - 1.0).abs() < 1e-12);
            assert!(y.warnings.is_empty(), "{:?}", y.warnings);
        }
    }
}

#[test]
fn sum_of_squares_at_zero_with_higher_order_terms() {
    // JCGM 101:2008, 9.4 (the model X1² + X2² with zero estimates): the exact
    // u is 2u² for two inputs N(0, u²) (Var(X²) = 4x²u² + 2u⁴ for X ~ N(x, u²)).
    for (x1, x2) in [(0.0, 0.0), (0.0, 0.01), (0.02, 0.0)] {
        let u = 0.005;
        let m = two_inputs(x1, u, x2, u, "x1^2 + x2^2");
        let r = propagate(&m, &second_order()).unwrap();
        let got = r.results[0].second_order_standard_uncertainty.unwrap();
        let exact = (4.0 * x1 * x1 * u * u + 4.0 * x2 * x2 * u * u + 4.0 * u.powi(4)).sqrt();
        assert!((got / exact - 1.0).abs() < 1e-12, "{got} vs {exact}");
        if x1 == 0.0 && x2 == 0.0 {
            assert!((got - 2.0 * u * u).abs() < 1e-18);
        }
    }
}

#[test]
fn vanishing_first_order_terms_are_never_silent() {
    // JCGM 100:2008, 5.1.2, note: a zero first-order u with uncertain inputs is flatness, not certainty.
    for formula in ["x1*x2", "x1^2 + x2^2", "x1^2*x2^2", "cos(x1) - x2^2"] {
        let m = two_inputs(0.0, 0.1, 0.0, 0.2, formula);
        let r = propagate(&m, &Options::default()).unwrap();
        let y = &r.results[0];
        assert_eq!(y.standard_uncertainty, 0.0, "{formula}");
        assert!(
            y.warnings
                .iter()
                .any(|w| w.contains("is 0 although uncertain inputs")
                    && w.contains("higher-order terms")),
            "{formula}: {:?}",
            y.warnings
        );
    }
    // An exact model with a zero u says nothing.
    let m = model("[inputs.x]\nvalue = 2\n[[measurands]]\nname = \"y\"\nformula = \"x^2\"\n");
    assert!(propagate(&m, &Options::default()).unwrap().results[0]
        .warnings
        .is_empty());
}

#[test]
fn points_without_a_derivative_are_named() {
    // common practice, no published source: the law of propagation needs the
    // first-order Taylor series (JCGM 100:2008, 5.1.2), which does not exist here.
    let cases: &[(&str, f64, f64, &str)] = &[
        ("abs(x1 - x2)", 3.0, 3.0, "abs"),
        ("sign(x1 - x2)*x1", 3.0, 3.0, "sign"),
        ("hypot(x1 - 3, x2 - 3)", 3.0, 3.0, "hypot"),
        ("atan2(x1 - 3, -x2)", 3.0, 3.0, "atan2"),
        ("sqrt(x1 - x2) + x1", 3.0, 3.0, "sqrt"),
        ("cbrt(x1 - x2)", 3.0, 3.0, "cbrt"),
        ("asin(x1 - x2 + 1)", 3.0, 3.0, "asin"),
        ("acos(x1/x2)", 3.0, 3.0, "acos"),
        ("acosh(x1/x2)", 3.0, 3.0, "acosh"),
        ("(x1 - x2)^1.5 + x1", 3.0, 3.0, "^"),
        ("pow(x1 - x2, 0.5) + x1", 3.0, 3.0, "pow"),
    ];
    for &(formula, x1, x2, function) in cases {
        let m = two_inputs(x1, 0.1, x2, 0.1, formula);
        match propagate(&m, &Options::default()) {
            Ok(r) => {
                let w = &r.results[0].warnings;
                assert!(
                    w.iter()
                        .any(|w| w.contains("propagation of distributions")
                            && w.contains("derivative")),
                    "{formula}: {w:?}"
                );
                assert!(
                    w.iter()
                        .any(|w| w.contains(&format!("`{function}")) || w.contains(function)),
                    "{formula}: {w:?}"
                );
            }
            // A refusal is fine too, if it names the function.
            Err(e) => assert!(
                e.to_string().contains(function)
                    && e.to_string().contains("propagation of distributions"),
                "{formula}: {e}"
            ),
        }
        // Away from the point: no warning.
        let m = two_inputs(x1 + 0.5, 0.1, x2, 0.1, formula);
        if let Ok(r) = propagate(&m, &Options::default()) {
            assert!(
                r.results[0].warnings.is_empty(),
                "{formula}: {:?}",
                r.results[0].warnings
            );
        }
    }
}

#[test]
fn no_conformity_verdict_without_the_warning() {
    // JCGM 106:2012 assesses on the measurement result; a first-order result that does not hold here must say so.
    let m = model(
        "[inputs.a]\nvalue = 2\nstandard_uncertainty = 0.1\n[inputs.b]\nvalue = 2\nstandard_uncertainty = 0.1\n\
         [[measurands]]\nname = \"d\"\nformula = \"abs(a - b)\"\n[measurands.specification]\nupper = 0.05\n",
    );
    let r = propagate(&m, &Options::default()).unwrap();
    let c = r.results[0].conformity.as_ref().unwrap();
    assert!(
        c.statement.starts_with("NOT VALID WITHOUT REVIEW"),
        "{}",
        c.statement
    );
    assert!(c.notes.iter().any(|n| n.contains("abs")));
}

#[test]
fn points_within_reach_of_the_uncertainty_are_named_too() {
    // common practice, no published source: a kink within three standard
    // uncertainties of the argument's estimate is reached by its distribution.
    for (formula, x1, x2, near) in [
        ("abs(x1 - x2)", 3.02, 3.0, true),
        ("abs(x1 - x2)", 3.5, 3.0, false),
        ("sign(x1 - x2)*x1", 3.1, 3.0, true),
        ("sqrt(x1 - x2)", 3.2, 3.0, true),
        ("sqrt(x1 - x2)", 4.0, 3.0, false),
        ("asin(x1 - x2)", 3.9, 3.0, true),
        ("atan2(x1 - x2, -1)", 3.1, 3.0, true),
        ("atan2(x1 - x2, 1)", 3.1, 3.0, false),
        ("(x1 - x2)^0.5", 3.2, 3.0, true),
    ] {
        let m = two_inputs(x1, 0.1, x2, 0.1, formula);
        let r = propagate(&m, &Options::default()).unwrap();
        let w = &r.results[0].warnings;
        let found = w.iter().any(|w| {
            w.contains("standard uncertainties") && w.contains("propagation of distributions")
        });
        assert_eq!(found, near, "{formula} at {x1}, {x2}: {w:?}");
    }
}

/// The library names remedies, never command-line options: those are the
/// program's (it adds them to what it prints, tests/cli_first_order.rs).
#[test]
fn library_texts_name_no_command_line_options() {
    for formula in ["x1*x2", "abs(x1 - x2)", "sqrt(x1^2)"] {
        let m = two_inputs(0.0, 0.1, 0.0, 0.2, formula);
        if let Ok(r) = propagate(&m, &Options::default()) {
            for w in r.results.iter().flat_map(|r| &r.warnings).chain(&r.notes) {
                assert!(!w.contains("--"), "{formula}: {w}");
            }
        }
    }
}

/// A chain of 400 measurands y_k = sin(y_(k−1)), y_0 = sin(x): evaluated by
/// the chain rule over each measurand's own formula (the formula written
/// out has a derivative of about 80 000 nodes), its value and u agree with
/// the recursion d_k = cos(y_(k−1))·d_(k−1) (derivation: the chain rule),
/// and a chain of sums keeps every coefficient exact.
#[test]
fn long_chains_of_measurands_follow_the_chain_rule() {
    let mut text = String::from(
        "[inputs.x]\nvalue = 0.5\nstandard_uncertainty = 0.01\n\
         [[measurands]]\nname = \"y0\"\nformula = \"sin(x)\"\n",
    );
    for k in 1..400 {
        text.push_str(&format!(
            "[[measurands]]\nname = \"y{k}\"\nformula = \"sin(y{})\"\n",
            k - 1
        ));
    }
    let r = propagate(&load_str(&text, "chain.toml").unwrap(), &Options::default()).unwrap();
    let (mut y, mut d) = (0.5f64, 1.0f64);
    for k in 0..400 {
        d *= y.cos();
        y = y.sin();
        let got = &r.results[k];
        assert!((got.value - y).abs() <= 1e-15 * y.abs(), "y{k}");
        let u = 0.01 * d.abs();
        assert!(
            (got.standard_uncertainty - u).abs() <= 1e-12 * u,
            "y{k}: {} vs {u}",
            got.standard_uncertainty
        );
    }
    let last = &r.results[399];
    assert_eq!(last.budget[0].sensitivity_formula, "(cos(y398))*∂y398/∂x");
    // Sums: y_k = y_(k−1) + x, y_0 = x + z: ∂y_k/∂x = k + 1 exactly.
    let mut text = String::from(
        "[inputs.x]\nvalue = 0.5\nstandard_uncertainty = 0.01\n\
         [inputs.z]\nvalue = 1.5\nstandard_uncertainty = 0.02\n\
         [[measurands]]\nname = \"y0\"\nformula = \"x + z\"\n",
    );
    for k in 1..1000 {
        text.push_str(&format!(
            "[[measurands]]\nname = \"y{k}\"\nformula = \"y{} + x\"\n",
            k - 1
        ));
    }
    let r = propagate(&load_str(&text, "sums.toml").unwrap(), &Options::default()).unwrap();
    for k in [0usize, 10, 999] {
        let b = &r.results[k].budget;
        assert_eq!(b[0].sensitivity, (k + 1) as f64, "y{k}");
        assert_eq!(b[1].sensitivity, 1.0, "y{k}");
    }
}
