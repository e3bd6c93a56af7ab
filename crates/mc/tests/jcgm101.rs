//! Propagation of distributions against JCGM 101:2008 and exact results.

use incertus_gum::{load_str, propagate, Model, Options, Report};
use incertus_mc::{run, McReport, Settings, Trials};

fn model(text: &str) -> (Model, Report) {
    let m = load_str(text, "test.toml").unwrap_or_else(|e| panic!("{e}"));
    let r = propagate(&m, &Options::default()).unwrap();
    (m, r)
}

fn mc(text: &str, settings: Settings) -> (Report, McReport) {
    let (m, r) = model(text);
    let out = run(&m, &r, &settings).unwrap_or_else(|e| panic!("{e}"));
    (r, out)
}

const FOUR_GAUSSIAN: &str = r#"
[inputs.x1]
value = 0
standard_uncertainty = 1
[inputs.x2]
value = 0
standard_uncertainty = 1
[inputs.x3]
value = 0
standard_uncertainty = 1
[inputs.x4]
value = 0
standard_uncertainty = 1
[[measurands]]
name = "y"
formula = "x1 + x2 + x3 + x4"
"#;

#[test]
fn jcgm101_9_2_2_four_gaussian_inputs() {
    // JCGM 101:2008, 9.2.2 (from memory): Y = X1 + X2 + X3 + X4 with
    // X_i ~ N(0, 1): u(y) = 2 and the 95 % interval [-3.92, 3.92], by the
    // GUM and by 10^6 Monte Carlo trials; the GUM result is validated.
    let (gum, out) = mc(FOUR_GAUSSIAN, Settings::default());
    let y = &out.results[0];
    assert_eq!(y.trials, 1_000_000);
    assert!(y.value.abs() < 0.01, "{}", y.value);
    assert!(
        (y.standard_uncertainty - 2.0).abs() < 0.01,
        "{}",
        y.standard_uncertainty
    );
    for (got, want) in y.symmetric_interval.iter().zip([-3.92, 3.92]) {
        assert!((got - want).abs() < 0.02, "{got} vs {want}");
    }
    // The shortest interval of a symmetric distribution is the symmetric
    // one; its ends are noisier (the width is flat near its minimum), its
    // width is not.
    let w = y.shortest_interval[1] - y.shortest_interval[0];
    assert!((w - 7.84).abs() < 0.02, "{w}");
    assert!(w <= y.symmetric_interval[1] - y.symmetric_interval[0]);
    for (got, want) in y.shortest_interval.iter().zip([-3.92, 3.92]) {
        assert!((got - want).abs() < 0.06, "{got} vs {want}");
    }
    assert!((gum.results[0].expanded_uncertainty - 3.92).abs() < 0.001);
    assert!(y.validation.passed, "{:?}", y.validation);
    assert_eq!(y.validation.numerical_tolerance, 0.05);
}

#[test]
fn jcgm101_9_2_3_four_rectangular_inputs() {
    // JCGM 101:2008, 9.2.3 (from memory): the same model with
    // X_i ~ R(-√3, √3) (u = 1): MCM gives the 95 % interval [-3.88, 3.88].
    // Exact: Y = 2√3(S - 2) with S Irwin-Hall of order 4, whose upper tail
    // is (4 - s)⁴/24, so y_high = 2√3(2 - 0.6^¼) = 3.8794.
    let text = FOUR_GAUSSIAN.replace(
        "value = 0\nstandard_uncertainty = 1",
        "value = 0\ndistribution = \"rectangular\"\nhalf_width = 1.7320508075688772",
    );
    let (_, out) = mc(&text, Settings::default());
    let y = &out.results[0];
    let exact = 2.0 * 3f64.sqrt() * (2.0 - 0.6f64.powf(0.25));
    assert!((exact - 3.8794).abs() < 1e-4);
    assert!(
        (y.symmetric_interval[1] - exact).abs() < 0.01,
        "{:?}",
        y.symmetric_interval
    );
    assert!(
        (y.symmetric_interval[0] + exact).abs() < 0.01,
        "{:?}",
        y.symmetric_interval
    );
    assert!((y.standard_uncertainty - 2.0).abs() < 0.01);
    // d = |3.9199 - 3.8794| = 0.04 < δ = 0.05: validated at ndig = 2.
    assert!(y.validation.passed, "{:?}", y.validation);
    assert!((y.validation.d_high - (1.959_964 * 2.0 - exact)).abs() < 0.01);
}

#[test]
fn same_seed_same_numbers_on_any_number_of_threads() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../examples/models/mc_five_inputs.toml"
    ))
    .unwrap();
    let (m, r) = model(&text);
    let runs: Vec<McReport> = [1, 2, 3]
        .iter()
        .map(|&t| {
            run(
                &m,
                &r,
                &Settings {
                    trials: Trials::Fixed(200_000),
                    threads: Some(t),
                    ..Settings::default()
                },
            )
            .unwrap()
        })
        .collect();
    for other in &runs[1..] {
        let (a, b) = (&runs[0].results[0], &other.results[0]);
        assert_eq!(a.value.to_bits(), b.value.to_bits());
        assert_eq!(
            a.standard_uncertainty.to_bits(),
            b.standard_uncertainty.to_bits()
        );
        assert_eq!(a.symmetric_interval, b.symmetric_interval);
        assert_eq!(a.shortest_interval, b.shortest_interval);
        assert_eq!(a.histogram.counts, b.histogram.counts);
    }
    let different = run(
        &m,
        &r,
        &Settings {
            trials: Trials::Fixed(200_000),
            seed: 7,
            ..Settings::default()
        },
    )
    .unwrap();
    assert_ne!(different.results[0].value, runs[0].results[0].value);
}

#[test]
fn adaptive_procedure_stops_within_the_tolerance() {
    // JCGM 101:2008, 7.9: sequences of 10^4 (here 16384) trials until twice
    // the standard deviation of the sequence results is within δ.
    let (_, out) = mc(
        FOUR_GAUSSIAN,
        Settings {
            trials: Trials::Adaptive { max: 10_000_000 },
            ..Settings::default()
        },
    );
    let a = out.adaptive.as_ref().unwrap();
    assert!(a.converged);
    assert!(a.sequences >= 2);
    assert_eq!(out.trials, a.sequences * a.trials_per_sequence);
    let y = &out.results[0];
    // δ = 0.05 for u = 2.0 at ndig = 2.
    assert!((y.standard_uncertainty - 2.0).abs() < 0.05);
    assert!((y.symmetric_interval[1] - 3.92).abs() < 0.1);
}

#[test]
fn correlated_gaussian_inputs_by_cholesky() {
    // y = a - b with r(a, b) = 0.8, u = 1 each: u(y)² = 2 - 1.6 = 0.4
    // exactly (JCGM 100:2008, 5.2.2; linear model).
    let (_, out) = mc(
        r#"
[inputs.a]
value = 1
standard_uncertainty = 1
[inputs.b]
value = 2
standard_uncertainty = 1
[[correlations]]
inputs = ["a", "b"]
coefficient = 0.8
[[measurands]]
name = "y"
formula = "a - b"
[[measurands]]
name = "s"
formula = "a + b"
"#,
        Settings::default(),
    );
    let y = &out.results[0];
    assert!(
        (y.standard_uncertainty - 0.4f64.sqrt()).abs() < 0.003,
        "{}",
        y.standard_uncertainty
    );
    assert!((y.value + 1.0).abs() < 0.003);
    // cov(a - b, a + b) = u_a² - u_b² = 0.
    assert!(out.correlation_matrix.matrix[0][1].abs() < 0.005);
    assert!(out.correlated_sampling[0].contains("multivariate Gaussian"));
}

#[test]
fn non_finite_trials_are_an_error_or_dropped_and_counted() {
    let text = "[inputs.x]\nvalue = 0.2\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"y\"\nformula = \"ln(x)\"\n";
    let (m, r) = model(text);
    let err = run(
        &m,
        &r,
        &Settings {
            trials: Trials::Fixed(100_000),
            ..Settings::default()
        },
    )
    .unwrap_err();
    // P(x ≤ 0) = Φ(-2) = 0.02275: about 2275 of 10^5 trials.
    assert!(
        err.message
            .contains("of 100000 trials gave a value of `y` that is not a finite number"),
        "{}",
        err.message
    );
    assert!(err.message.contains("logarithm"), "{}", err.message);
    assert!(err.message.contains("discarding such trials"));
    assert_eq!(err.kind, incertus_mc::McErrorKind::NonFinite);
    let out = run(
        &m,
        &r,
        &Settings {
            trials: Trials::Fixed(100_000),
            drop_non_finite: true,
            ..Settings::default()
        },
    )
    .unwrap();
    let dropped = out.results[0].non_finite_dropped;
    assert!((2000..2600).contains(&dropped), "{dropped}");
    assert_eq!(out.results[0].trials, 100_000 - dropped);
}

#[test]
fn memory_is_checked_before_anything_is_allocated() {
    let (m, r) = model(FOUR_GAUSSIAN);
    let err = run(
        &m,
        &r,
        &Settings {
            trials: Trials::Fixed(1_000_000_000_000),
            memory_limit: Some(1 << 30),
            ..Settings::default()
        },
    )
    .unwrap_err();
    assert!(err.message.contains("would need about"), "{}", err.message);
    assert_eq!(err.kind, incertus_mc::McErrorKind::Memory);
    // 10^8 trials of a one-measurand model fit comfortably in 24 GiB.
    let need = incertus_mc::memory_needed(&m, 100_000_000, 2);
    assert!(need < 3_000_000_000, "{need}");
    let err = run(
        &m,
        &r,
        &Settings {
            trials: Trials::Fixed(100),
            ..Settings::default()
        },
    )
    .unwrap_err();
    assert!(err.message.contains("too few"), "{}", err.message);
}
