//! The uncertain-number type against the symbolic engine: same value, same
//! sensitivity coefficients, same combined standard uncertainty (with a
//! correlation), on random formulas.

use incertus_expr::parse;
use incertus_gum::estimate::{eval_expr, Estimate, Session};
use incertus_gum::{load_str, propagate, Options};
use proptest::prelude::*;

fn formula() -> impl Strategy<Value = String> {
    let leaf = prop_oneof![
        Just("x".to_string()),
        Just("y".to_string()),
        Just("z".to_string()),
        (1u32..20).prop_map(|n| format!("{}", n as f64 / 4.0)),
    ];
    leaf.prop_recursive(4, 32, 3, |inner| {
        prop_oneof![
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("({a}) + ({b})")),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("({a}) - ({b})")),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("({a})*({b})")),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("({a})/(1 + ({b})^2)")),
            inner.clone().prop_map(|a| format!("sin({a})")),
            inner.clone().prop_map(|a| format!("exp(cos({a}))")),
            inner.clone().prop_map(|a| format!("sqrt(2 + sin({a}))")),
            inner.clone().prop_map(|a| format!("({a})^3")),
            inner.clone().prop_map(|a| format!("atan({a})")),
            (inner.clone(), inner).prop_map(|(a, b)| format!("hypot({a}, 1 + ({b})^2)")),
        ]
    })
}

fn rel(a: f64, b: f64) -> f64 {
    if a == b {
        0.0
    } else {
        (a - b).abs() / a.abs().max(b.abs())
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn same_budget_as_the_symbolic_engine(f in formula(), r in -0.9f64..0.9) {
        let text = format!(
            "[inputs.x]\nvalue = 0.7\nstandard_uncertainty = 0.05\n[inputs.y]\nvalue = -1.3\nstandard_uncertainty = 0.1\n\
             [inputs.z]\nvalue = 2.1\nstandard_uncertainty = 0.02\n[[correlations]]\ninputs = [\"x\", \"y\"]\ncoefficient = {r}\n\
             [[measurands]]\nname = \"q\"\nformula = \"{f}\"\n"
        );
        let model = load_str(&text, "p.toml").unwrap();
        let report = match propagate(&model, &Options::default()) {
            Ok(r) => r,
            Err(_) => return Ok(()), // a formula outside its domain at the estimates
        };
        let mut s = Session::new();
        let x = s.input("x", 0.7, 0.05);
        let y = s.input("y", -1.3, 0.1);
        let z = s.input("z", 2.1, 0.02);
        s.correlate(&x, &y, r).unwrap();
        let env = |n: &str| -> Option<Estimate> {
            match n { "x" => Some(x.clone()), "y" => Some(y.clone()), "z" => Some(z.clone()), _ => None }
        };
        let q = eval_expr(&parse(&f).unwrap(), &env).unwrap();
        let g = &report.results[0];
        prop_assert!(rel(q.value(), g.value) < 1e-12, "{f}: {} vs {}", q.value(), g.value);
        for (i, name) in ["x", "y", "z"].iter().enumerate() {
            let sym = g.budget.iter().find(|b| b.input == *name).map_or(0.0, |b| b.sensitivity);
            let ad = q.sensitivity(i);
            prop_assert!((ad - sym).abs() <= 1e-10 * (1.0 + sym.abs()), "{f}: c_{name} {ad} vs {sym}");
        }
        let u = s.standard_uncertainty(&q).expect("one session");
        prop_assert!((u - g.standard_uncertainty).abs() <= 1e-10 * (1e-300 + g.standard_uncertainty), "{f}: u {u} vs {}", g.standard_uncertainty);
    }
}

#[test]
fn shared_inputs_correlate_results_and_cancel_exactly() {
    let mut s = Session::new();
    let x = s.input("x", 3.0, 0.2);
    let y = &x * &x;
    let d = &y - &(&x * &x);
    assert_eq!(d.value(), 0.0);
    assert_eq!(s.standard_uncertainty(&d).expect("one session"), 0.0);
    // y = x² and w = 2x are fully correlated (both increase with x).
    let w = 2.0 * &x;
    assert!((s.correlation(&y, &w).expect("one session") - 1.0).abs() < 1e-15);
    let budget = s.budget(&y).expect("one session");
    assert_eq!(budget.len(), 1);
    assert_eq!(budget[0].sensitivity, 6.0);
    assert!((budget[0].contribution - 1.2).abs() < 1e-15);
}

#[test]
fn numbers_of_another_session_are_refused() {
    // common practice, no published source: an uncertainty is a property of a session's inputs.
    use incertus_gum::estimate::SessionError;
    let mut a = Session::new();
    let mut b = Session::new();
    let x = a.input("x", 2.0, 0.1);
    let y = b.input("y", 3.0, 0.2);
    assert_eq!(b.standard_uncertainty(&x), Err(SessionError::OtherSession));
    let mixed = &x + &y;
    assert_eq!(
        a.standard_uncertainty(&mixed),
        Err(SessionError::MixedSessions)
    );
    assert_eq!(b.effective_dof(&mixed), Err(SessionError::MixedSessions));
    assert!(a.correlate(&x, &y, 0.5).is_err());
    // Exact numbers belong to every session.
    let z = &x * 3.0;
    assert!((a.standard_uncertainty(&z).unwrap() - 0.3).abs() < 1e-15);
}

#[test]
fn session_dof_follows_the_correlations_as_propagate_does() {
    // The same rule as the symbolic engine (coverage::effective_dof_correlated).
    let mut s = Session::new();
    let a = s.input_with_dof("a", 1.0, 0.2, Some(4.0));
    let b = s.input_with_dof("b", 2.0, 0.3, Some(6.0));
    s.correlate(&a, &b, 0.6).unwrap();
    let y = &a - &b;
    let model = incertus_gum::load_str(
        "[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.2\ndof = 4\n[inputs.b]\nvalue = 2\nstandard_uncertainty = 0.3\ndof = 6\n[[correlations]]\ninputs = [\"a\", \"b\"]\ncoefficient = 0.6\n[[measurands]]\nname = \"y\"\nformula = \"a - b\"\n",
        "t.toml",
    )
    .unwrap();
    let r = incertus_gum::propagate(&model, &Default::default()).unwrap();
    let nu = s.effective_dof(&y).unwrap().unwrap();
    assert!(
        (nu / r.results[0].effective_dof.unwrap() - 1.0).abs() < 1e-12,
        "{nu}"
    );
}
