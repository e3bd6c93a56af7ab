//! The law of propagation against published worked examples.
//!
//! Sources (figures recalled from memory where marked; each check states
//! the digits published and allows one unit in the last of them):
//! - JCGM 100:2008, Annex H.2 (simultaneous resistance and reactance),
//!   Tables H.2 and H.3;
//! - JCGM 100:2008, Annex H.1 (end gauge calibration), Table H.1 and H.1.7;
//! - EA-4/02 M:2013, Supplement 1, example S2 (10 kg weight);
//! - JCGM 100:2008, Table G.2 (Student's t);
//! - JCGM 100:2008, 7.2.2 and 7.2.4 (ways of reporting a result).

use std::path::Path;

use incertus::gum::coverage::coverage_factor;
use incertus::gum::rounding::write;
use incertus::gum::{load_file, propagate, Options, Report};

fn eval(file: &str, opts: Options) -> Report {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/models")
        .join(file);
    let model = load_file(&path).unwrap_or_else(|e| panic!("{e}"));
    propagate(&model, &opts).unwrap_or_else(|e| panic!("{e}"))
}

fn within(got: f64, published: f64, last_digit: f64, what: &str) {
    assert!(
        (got - published).abs() <= last_digit,
        "{what}: computed {got}, published {published} (± {last_digit})"
    );
}

#[test]
fn jcgm100_h2_resistance_reactance_impedance() {
    // Table H.2 (from memory): means and their standard deviations, and the
    // correlation coefficients of the means.
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/models/jcgm100_h2_impedance.toml");
    let model = load_file(&path).unwrap();
    let v = model.input("V").unwrap();
    let i = model.input("I").unwrap();
    let phi = model.input("phi").unwrap();
    within(v.estimate, 4.9990, 0.0001, "mean of V");
    // Inputs are held in coherent SI: I in A.
    within(i.estimate * 1e3, 19.6610, 0.0001, "mean of I / mA");
    within(phi.estimate, 1.04446, 0.00001, "mean of phi");
    within(v.standard_uncertainty, 0.0032, 0.0001, "s(V)");
    within(i.standard_uncertainty * 1e3, 0.0095, 0.0001, "s(I) / mA");
    within(phi.standard_uncertainty, 0.00075, 0.00001, "s(phi)");
    within(model.correlation(0, 1), -0.36, 0.01, "r(V, I)");
    within(model.correlation(0, 2), 0.86, 0.01, "r(V, phi)");
    within(model.correlation(1, 2), -0.65, 0.01, "r(I, phi)");

    // Table H.3 (from memory): results and their correlation coefficients.
    let r = eval("jcgm100_h2_impedance.toml", Options::default());
    let by = |n: &str| r.results.iter().find(|x| x.name == n).unwrap();
    within(by("R").value, 127.732, 0.001, "R");
    within(by("R").standard_uncertainty, 0.071, 0.001, "u(R)");
    within(by("X").value, 219.847, 0.001, "X");
    within(by("X").standard_uncertainty, 0.295, 0.001, "u(X)");
    within(by("Z").value, 254.260, 0.001, "Z");
    within(by("Z").standard_uncertainty, 0.236, 0.001, "u(Z)");
    let idx = |n: &str| {
        r.correlation_matrix
            .names
            .iter()
            .position(|x| x == n)
            .unwrap()
    };
    let c = &r.correlation_matrix.matrix;
    within(c[idx("R")][idx("X")], -0.588, 0.001, "r(R, X)");
    within(c[idx("R")][idx("Z")], -0.485, 0.001, "r(R, Z)");
    within(c[idx("X")][idx("Z")], 0.993, 0.001, "r(X, Z)");
}

#[test]
fn jcgm100_h1_end_gauge() {
    // H.1.6 (from memory): l = 50.000838 mm, u_c(l) = 32 nm, nu_eff = 16,
    // k99 = t99(16) = 2.92, U99 = 93 nm.
    let r = eval("jcgm100_h1_gauge_block.toml", Options::default());
    let l = &r.results[0];
    within(l.value, 50.000838, 0.000001, "l / mm");
    within(l.standard_uncertainty * 1e6, 32.0, 1.0, "u_c(l) / nm");
    assert_eq!(l.effective_dof_used, Some(16.0), "nu_eff truncated");
    within(l.effective_dof.unwrap(), 16.0, 1.0, "nu_eff");
    within(l.coverage_factor, 2.92, 0.01, "k99");
    within(l.expanded_uncertainty * 1e6, 93.0, 1.0, "U99 / nm");
    // Contributions of Table H.1: 25 nm, 9.7 nm, 0, 0, 2.9 nm, 16.6 nm.
    let contribution = |n: &str| l.budget.iter().find(|b| b.input == n).unwrap().contribution * 1e6;
    within(contribution("l_s"), 25.0, 0.1, "u(l_s) contribution / nm");
    within(contribution("d"), 9.7, 0.1, "u(d) contribution / nm");
    within(contribution("alpha_s"), 0.0, 1e-9, "alpha_s contribution");
    within(contribution("theta"), 0.0, 1e-9, "theta contribution");
    within(
        contribution("delta_alpha"),
        2.9,
        0.1,
        "delta_alpha contribution / nm",
    );
    within(
        contribution("delta_theta"),
        16.6,
        0.2,
        "delta_theta contribution / nm",
    );

    // H.1.7 (from memory): with the second-order terms u_c(l) = 34 nm.
    let r = eval(
        "jcgm100_h1_gauge_block.toml",
        Options {
            second_order: true,
            ..Options::default()
        },
    );
    within(
        r.results[0].second_order_standard_uncertainty.unwrap() * 1e6,
        34.0,
        1.0,
        "u_c(l) with second-order terms / nm",
    );
}

#[test]
fn ea402_s2_ten_kilogram_weight() {
    // EA-4/02 M:2013 S2 (from memory): m_X = 10 000.025 g, u(m_X) = 29.3 mg,
    // U = 59 mg with k = 2. Contributions 22.5, 8.66, 14.4, 5.77, 5.77 mg.
    let r = eval(
        "ea402_s2_weight.toml",
        Options {
            coverage_probability: Some(0.9545),
            ..Options::default()
        },
    );
    let m = &r.results[0];
    within(m.value, 10000.025, 0.001, "m_X / g");
    within(m.standard_uncertainty * 1000.0, 29.3, 0.1, "u(m_X) / mg");
    within(m.coverage_factor, 2.0, 0.01, "k");
    within(m.expanded_uncertainty * 1000.0, 59.0, 1.0, "U / mg");
    let contribution =
        |n: &str| m.budget.iter().find(|b| b.input == n).unwrap().contribution * 1000.0;
    within(contribution("m_S"), 22.5, 0.05, "m_S / mg");
    within(contribution("dm_D"), 8.66, 0.01, "dm_D / mg");
    within(contribution("dm"), 14.4, 0.05, "dm / mg");
    within(contribution("dm_C"), 5.77, 0.01, "dm_C / mg");
    within(contribution("dB"), 5.77, 0.01, "dB / mg");
}

#[test]
fn student_t_coverage_factors_of_table_g2() {
    // JCGM 100:2008, Table G.2 (from memory): t_p(nu) for p = 68.27 %, 90 %,
    // 95 %, 95.45 %, 99 %, 99.73 %, to the digits printed there.
    // The columns 68.27 %, 95.45 % and 99.73 % are the normal probabilities
    // of ±1, ±2 and ±3 standard deviations, erf(k/√2), given here in full.
    let ps = [
        0.682_689_492_137_086,
        0.90,
        0.95,
        0.954_499_736_103_642,
        0.99,
        0.997_300_203_936_740,
    ];
    let table: &[(Option<f64>, [f64; 6], f64)] = &[
        (Some(1.0), [1.84, 6.31, 12.71, 13.97, 63.66, 235.80], 0.01),
        (Some(2.0), [1.32, 2.92, 4.30, 4.53, 9.92, 19.21], 0.01),
        (Some(3.0), [1.20, 2.35, 3.18, 3.31, 5.84, 9.22], 0.01),
        (Some(4.0), [1.14, 2.13, 2.78, 2.87, 4.60, 6.62], 0.01),
        (Some(5.0), [1.11, 2.02, 2.57, 2.65, 4.03, 5.51], 0.01),
        (Some(10.0), [1.05, 1.81, 2.23, 2.28, 3.17, 3.96], 0.01),
        (Some(20.0), [1.03, 1.72, 2.09, 2.13, 2.85, 3.42], 0.01),
        (Some(50.0), [1.01, 1.68, 2.01, 2.05, 2.68, 3.16], 0.01),
        (
            Some(100.0),
            [1.005, 1.660, 1.984, 2.025, 2.626, 3.077],
            0.001,
        ),
        (None, [1.000, 1.645, 1.960, 2.000, 2.576, 3.000], 0.001),
    ];
    for (nu, row, tol) in table {
        for (p, t) in ps.iter().zip(row) {
            let k = coverage_factor(*p, *nu);
            // One unit in the last printed digit.
            assert!((k - t).abs() <= *tol, "t_{p}({nu:?}) = {k}, table {t}");
        }
    }
    // H.1: t99(16) = 2.92; 7.2.4: t95(9) = 2.26.
    within(coverage_factor(0.99, Some(16.0)), 2.92, 0.005, "t99(16)");
    within(coverage_factor(0.95, Some(9.0)), 2.26, 0.005, "t95(9)");
}

#[test]
fn reporting_forms_of_clause_7_2() {
    // JCGM 100:2008, 7.2.2: m_s = 100.02147 g with u_c = 0.35 mg is written
    // 100.02147(35) g; 7.2.4: with U = 0.79 mg, (100.02147 ± 0.00079) g.
    let w = write(100.021_47, 0.000_35, 2);
    assert_eq!(w.concise, "100.02147(35)");
    let w = write(100.021_47, 0.000_79, 2);
    assert_eq!(w.plus_minus, "100.02147 ± 0.00079");
}
