//! Formulas shared by the criterion benchmarks and the side-by-side script
//! (which reads them from the example program, so both time the same work).
#![allow(dead_code)]

/// An arithmetic-only formula of 20 nodes (10 leaves, 9 binary operations,
/// 1 negation) over 6 names.
pub const ARITH_20: &str = "-a*b + c*d - e/f + (a - c)*(b + d)";
pub const ARITH_NAMES: [&str; 6] = ["a", "b", "c", "d", "e", "f"];

/// A formula of about 200 nodes over 20 names, in the style of a long
/// measurement model: products, quotients, powers and a few functions.
pub fn long_formula() -> (String, Vec<String>) {
    let names: Vec<String> = (0..20).map(|i| format!("x{i}")).collect();
    let terms: Vec<String> = (0..20)
        .map(|i| {
            let a = &names[i];
            let b = &names[(i + 1) % 20];
            let c = &names[(i + 7) % 20];
            match i % 4 {
                0 => format!("{a}*sin({b})/(1 + {c}^2)"),
                1 => format!("{a}^2*exp(-{b}/{c})"),
                2 => format!("sqrt({a}^2 + {b}^2)*{c}"),
                _ => format!("ln(1 + {a}^2)*({b} - {c})"),
            }
        })
        .collect();
    (terms.join(" + "), names)
}
