//! Student's t quantiles (coverage factors, JCGM 100:2008, G.3) and
//! distribution function (conformance probabilities, JCGM 106:2012) against
//! scipy 1.17.1 (`tests/fixtures/make_student_t_fixture.py`), from 1 to
//! 10^15 degrees of freedom.

use incertus_gum::coverage::{coverage_factor, student_t_cdf, student_t_quantile};

fn fixture() -> serde_json::Value {
    let p = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/fixtures/student_t.json"
    );
    serde_json::from_str(&std::fs::read_to_string(p).expect("fixture")).expect("json")
}

#[test]
fn quantiles_against_scipy() {
    let mut worst: f64 = 0.0;
    for c in fixture()["quantiles"].as_array().unwrap() {
        let (nu, p, want) = (
            c["dof"].as_f64().unwrap(),
            c["p"].as_f64().unwrap(),
            c["t"].as_f64().unwrap(),
        );
        let got = student_t_quantile(p, nu);
        let rel = ((got - want) / want).abs();
        worst = worst.max(rel);
        assert!(
            rel < 1e-12,
            "ν = {nu}, p = {p}: {got} vs scipy {want} (relative {rel:e})"
        );
    }
    eprintln!("worst relative difference of the quantiles: {worst:e}");
}

#[test]
fn distribution_function_against_scipy() {
    let mut bad = Vec::new();
    for c in fixture()["cdf"].as_array().unwrap() {
        let (nu, z, want) = (
            c["dof"].as_f64().unwrap(),
            c["z"].as_f64().unwrap(),
            c["cdf"].as_f64().unwrap(),
        );
        let got = student_t_cdf(z, nu);
        let rel = ((got - want) / want).abs();
        // 1e-11 relative wherever a probability can matter; at z = −30
        // (probabilities below 1e-140) the expansion used above 3·10⁴ dof
        // holds to 2e-9.
        let tol = if z.abs() > 10.0 { 2e-9 } else { 1e-11 };
        if rel > tol {
            bad.push(format!(
                "ν = {nu}, z = {z}: {got:e} vs scipy {want:e} (relative {rel:.1e})"
            ));
        }
    }
    assert!(bad.is_empty(), "{}", bad.join("\n"));
}

#[test]
fn coverage_factors_of_table_g2() {
    // JCGM 100:2008, Table G.2: t_95.45(ν) for ν = 1, 10, 100 and infinite
    // (13.97, 2.28, 2.03, 2.000).
    for (nu, k) in [
        (Some(1.0), 13.97),
        (Some(10.0), 2.28),
        (Some(100.0), 2.03),
        (None, 2.000),
    ] {
        assert!((coverage_factor(0.9545, nu) - k).abs() < 0.005, "{nu:?}");
    }
    // A huge ν_eff returns at once with the normal value.
    assert!((coverage_factor(0.95, Some(1e300)) - 1.959963984540054).abs() < 1e-12);
}
