//! Random formulas for the property tests.
#![allow(dead_code)]

pub mod dual;

use proptest::prelude::*;

/// The names random formulas use.
pub const NAMES: [&str; 3] = ["x", "y", "z"];

/// Random formula text over x, y, z, built from operations that are smooth
/// on the whole real line (denominators kept away from zero, logarithms and
/// roots of positive arguments), so that derivatives exist at every point.
pub fn smooth_formula() -> impl Strategy<Value = String> {
    let leaf = prop_oneof![
        Just("x".to_string()),
        Just("y".to_string()),
        Just("z".to_string()),
        (1u32..40).prop_map(|n| format!("{}", n as f64 / 8.0)),
        Just("pi".to_string()),
    ];
    leaf.prop_recursive(4, 40, 3, |inner| {
        prop_oneof![
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("({a}) + ({b})")),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("{a} - {b}")),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("({a})*({b})")),
            (inner.clone(), inner.clone(), inner.clone())
                .prop_map(|(a, b, c)| format!("{a} + {b}*{c} - ({a})")),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| format!("({a})/(1 + ({b})^2)")),
            (inner.clone(), inner.clone(), inner.clone())
                .prop_map(|(a, b, c)| format!("({a})/(2 + cos({b}))*({c})")),
            inner.clone().prop_map(|a| format!("-({a})")),
            inner.clone().prop_map(|a| format!("-({a})^2")),
            (inner.clone(), 2i32..4).prop_map(|(a, n)| format!("({a})^{n}")),
            inner.clone().prop_map(|a| format!("sin({a})")),
            inner.clone().prop_map(|a| format!("cos({a})")),
            inner.clone().prop_map(|a| format!("atan({a})")),
            inner.clone().prop_map(|a| format!("tanh({a})")),
            inner.clone().prop_map(|a| format!("exp(sin({a}))")),
            inner.clone().prop_map(|a| format!("sqrt(1 + ({a})^2)")),
            inner.clone().prop_map(|a| format!("ln(2 + sin({a}))")),
            inner.clone().prop_map(|a| format!("(1 + ({a})^2)^-0.5")),
            inner
                .clone()
                .prop_map(|a| format!("(3 + cos({a}))^(sin({a}))")),
            (inner.clone(), inner).prop_map(|(a, b)| format!("hypot(1, {a})*{b}")),
        ]
    })
}

/// A random point with coordinates in [-2, 2].
pub fn point() -> impl Strategy<Value = [f64; 3]> {
    [-2.0f64..2.0, -2.0f64..2.0, -2.0f64..2.0]
}

pub fn env(p: &[f64; 3]) -> [(&'static str, f64); 3] {
    [("x", p[0]), ("y", p[1]), ("z", p[2])]
}
