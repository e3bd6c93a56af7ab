//! Fits against published results.

use incertus_fit::{fit, fit_basis, FitRequest};

fn request<'a>(x: &'a [f64], y: &'a [f64]) -> FitRequest<'a> {
    FitRequest {
        x,
        y,
        u_y: None,
        u_x: None,
        rows: (1..=x.len()).collect(),
        degree: 1,
        exclude: Vec::new(),
        exclude_reason: None,
        scale_by_chi_squared: false,
        diagnostics: true,
    }
}

/// JCGM 100:2008, H.3 (thermometer calibration, Table H.6; from memory):
/// eleven readings t_k and corrections b_k, fitted as b = y1 + y2 (t − t0)
/// with t0 = 20 °C.
const T: [f64; 11] = [
    21.521, 22.012, 22.512, 23.003, 23.507, 23.999, 24.513, 25.002, 25.503, 26.010, 26.511,
];
const B: [f64; 11] = [
    -0.171, -0.169, -0.166, -0.159, -0.164, -0.165, -0.156, -0.157, -0.159, -0.161, -0.160,
];

#[test]
fn jcgm100_h3_thermometer_calibration() {
    let dt: Vec<f64> = T.iter().map(|t| t - 20.0).collect();
    let r = fit(&request(&dt, &B)).unwrap();
    let (y1, y2) = (&r.parameters[0], &r.parameters[1]);
    // H.3.3 (from memory): y1 = −0.1712 °C, s(y1) = 0.0029 °C,
    // y2 = 0.00218, s(y2) = 0.00067, r(y1, y2) = −0.930, s = 0.0035 °C, ν = 9.
    assert!((y1.value + 0.1712).abs() < 0.00005, "{}", y1.value);
    assert!((y1.standard_uncertainty - 0.0029).abs() < 0.00005);
    assert!((y2.value - 0.00218).abs() < 0.000005, "{}", y2.value);
    assert!((y2.standard_uncertainty - 0.00067).abs() < 0.000005);
    assert!(
        (r.correlation[0][1] + 0.930).abs() < 0.0005,
        "{}",
        r.correlation[0][1]
    );
    assert!((r.residual_standard_deviation - 0.0035).abs() < 0.00005);
    assert_eq!(r.dof, 9);
    // H.3.4: the correction at t = 30 °C, b(30) = −0.1494 °C with
    // u = 0.0041 °C, including the covariance of y1 and y2.
    let d = 10.0;
    let b30 = y1.value + y2.value * d;
    let u30 =
        (r.covariance[0][0] + d * d * r.covariance[1][1] + 2.0 * d * r.covariance[0][1]).sqrt();
    assert!((b30 + 0.1494).abs() < 0.00005, "{b30}");
    assert!((u30 - 0.0041).abs() < 0.00005, "{u30}");
}

#[test]
fn nist_longley_general_linear_model() {
    // NIST StRD, Longley (1967): data from the statsmodels 0.15.0 package
    // (PyPI), copied into tests/fixtures/longley.csv by
    // tests/fixtures/make_fit_fixture.py; certified values recalled from
    // memory (NIST StRD, "higher difficulty").
    let text = include_str!("../../../tests/fixtures/longley.csv");
    let mut rows: Vec<Vec<f64>> = Vec::new();
    for line in text.lines().skip(1) {
        rows.push(line.split(',').map(|c| c.trim().parse().unwrap()).collect());
    }
    let n = rows.len();
    assert_eq!(n, 16);
    let y: Vec<f64> = rows.iter().map(|r| r[0]).collect();
    let mut cols = vec![vec![1.0; n]];
    for k in 1..7 {
        cols.push(rows.iter().map(|r| r[k]).collect());
    }
    let names = (0..7).map(|k| format!("b{k}")).collect();
    let fit = fit_basis(
        names,
        &cols,
        &cols[1],
        &y,
        None,
        &(1..=n).collect::<Vec<_>>(),
        false,
    )
    .unwrap();
    let certified = [
        (-3482258.63459582, 890420.383607373),
        (15.0618722713733, 84.9149257747669),
        (-0.358191792925910e-01, 0.334910077722432e-01),
        (-2.02022980381683, 0.488399681651699),
        (-1.03322686717359, 0.214274163161675),
        (-0.511041056535807e-01, 0.226073200069370),
        (1829.15146461355, 455.478499142212),
    ];
    for (p, (v, s)) in fit.parameters.iter().zip(certified) {
        // At least 8 significant digits (NIST asks 6 of a good algorithm on
        // this ill-conditioned problem).
        assert!(
            (p.value - v).abs() <= 1e-8 * v.abs(),
            "{}: {} vs {v}",
            p.name,
            p.value
        );
        assert!(
            (p.standard_uncertainty - s).abs() <= 1e-7 * s,
            "{}: {} vs {s}",
            p.name,
            p.standard_uncertainty
        );
    }
    assert!((fit.residual_standard_deviation - 304.854073561965).abs() < 1e-7 * 304.85);
    assert!((fit.r_squared - 0.995479004577296).abs() < 1e-10);
    assert_eq!(fit.dof, 9);
}
