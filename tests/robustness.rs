//! Numerical robustness of the whole path (issue: hardening): magnitudes
//! from 1e-40 to 1e40 through the law of propagation, Monte Carlo, the
//! coverage intervals, conformity and every output format; Monte Carlo
//! statistics of values with a large offset; singular (semi-definite)
//! correlation matrices sampled by Monte Carlo; zero estimates.

mod common;
use common::{incertus, scratch, write};

use incertus::gum::{load_str, propagate, Options};
use incertus::mc::{run, Settings, Trials};

fn settings(trials: usize) -> Settings {
    Settings {
        trials: Trials::Fixed(trials),
        threads: Some(2),
        ..Settings::default()
    }
}

#[test]
fn every_magnitude_from_1e_minus_40_to_1e40() {
    // y = a b / c with 1 % inputs: u(y)/y = √3 % for any scale (JCGM
    // 100:2008, 5.1.6, relative rule); the Monte Carlo u agrees within 2 %
    // (10⁵ trials of a nearly linear model, common practice).
    for scale in [1e-40, 1e-30, 1e-10, 1.0, 1e10, 1e30, 1e40] {
        let text = format!(
            "[inputs.a]\nvalue = {a:e}\nstandard_uncertainty = {ua:e}\ndof = 9\n\
             [inputs.b]\nvalue = 2.0\nstandard_uncertainty = 0.02\n\
             [inputs.c]\nvalue = 4.0\nstandard_uncertainty = 0.04\n\
             [[measurands]]\nname = \"y\"\nformula = \"a*b/c\"\n\
             [measurands.specification]\nlower = {lo:e}\nupper = {hi:e}\n",
            a = 3.0 * scale,
            ua = 0.03 * scale,
            lo = 1.45 * scale,
            hi = 1.6 * scale
        );
        let m = load_str(&text, "scale.toml").unwrap();
        let r = propagate(&m, &Options::default()).unwrap();
        let y = &r.results[0];
        let rel = y.standard_uncertainty / y.value;
        assert!((rel - 3f64.sqrt() * 0.01).abs() < 1e-12, "{scale}: {rel}");
        assert!(y.effective_dof.unwrap().is_finite(), "{scale}");
        let c = y.conformity.as_ref().unwrap();
        assert!(
            c.conformance_probability > 0.9 && c.conformance_probability < 1.0,
            "{scale}"
        );
        let mc = run(&m, &r, &settings(100_000)).unwrap();
        let u = mc.results[0].standard_uncertainty;
        assert!(
            (u / y.standard_uncertainty - 1.0).abs() < 0.02,
            "{scale}: {u}"
        );
        let [lo, hi] = mc.results[0].shortest_interval;
        assert!(
            lo < y.value && y.value < hi && lo.is_finite() && hi.is_finite(),
            "{scale}"
        );
        // Every number of the JSON report is finite (JSON has no NaN).
        let json = serde_json::to_string(&r).unwrap();
        assert!(
            !json.contains("NaN") && !json.contains("inf"),
            "{scale}: {json}"
        );
    }
}

#[test]
fn monte_carlo_statistics_of_a_large_offset() {
    // y = 1e8 + x with u(x) = 1e-3: a sum of squares of raw values would
    // lose every digit of u (1e16 against 1e-6); two-pass block moments
    // combined by Chan's formula keep them (common practice, no published
    // source). Exact u(y) = 1e-3.
    let m = load_str(
        "[inputs.x]\nvalue = 0\nstandard_uncertainty = 0.001\n[[measurands]]\nname = \"y\"\nformula = \"1e8 + x\"\n",
        "offset.toml",
    )
    .unwrap();
    let r = propagate(&m, &Options::default()).unwrap();
    let mc = run(&m, &r, &settings(1_000_000)).unwrap();
    let u = mc.results[0].standard_uncertainty;
    // 10⁶ normal draws: the sample standard deviation is within 0.5 % of σ
    // (its relative standard deviation is 1/√(2·10⁶) = 0.07 %).
    assert!((u / 1e-3 - 1.0).abs() < 0.005, "{u}");
    assert!((mc.results[0].value - 1e8).abs() < 1e-5);
}

#[test]
fn monte_carlo_with_singular_correlation_matrices() {
    // r = +1 and y = a − b with u_a = u_b: u(y) = 0 exactly, and every
    // trial gives the same value; r = −1 and y = a + b likewise (JCGM
    // 100:2008, 5.2.2 with r = ±1).
    for (r, formula) in [(1.0, "a - b"), (-1.0, "a + b")] {
        let text = format!(
            "[inputs.a]\nvalue = 1\nstandard_uncertainty = 0.1\n[inputs.b]\nvalue = 1\nstandard_uncertainty = 0.1\n\
             [inputs.c]\nvalue = 3\nstandard_uncertainty = 0.2\n\
             [[correlations]]\ninputs = [\"a\", \"b\"]\ncoefficient = {r}\n\
             [[measurands]]\nname = \"y\"\nformula = \"{formula}\"\n[[measurands]]\nname = \"z\"\nformula = \"c + a\"\n"
        );
        let m = load_str(&text, "singular.toml").unwrap();
        let g = propagate(&m, &Options::default()).unwrap();
        assert!(g.results[0].standard_uncertainty < 1e-15, "{r}");
        let mc = run(&m, &g, &settings(50_000)).unwrap();
        assert!(
            mc.results[0].standard_uncertainty < 1e-12,
            "{r}: {}",
            mc.results[0].standard_uncertainty
        );
        let uz = mc.results[1].standard_uncertainty;
        assert!((uz / 0.05f64.sqrt() - 1.0).abs() < 0.03, "{r}: {uz}");
    }
}

#[test]
fn zero_estimates_through_the_binary() {
    // y = x·z at x = 0 and a measurand of value 0: no relative uncertainty,
    // no NaN anywhere, in every format.
    let dir = scratch("robust-zero");
    let f = write(
        &dir,
        "zero.toml",
        "[inputs.x]\nvalue = 0\nstandard_uncertainty = 0.1\ndof = 5\n[inputs.z]\nvalue = 4\nstandard_uncertainty = 0.5\n[[measurands]]\nname = \"y\"\nformula = \"x*z\"\n",
    );
    for format in ["text", "markdown", "json", "csv", "budget-csv"] {
        let (code, out, err) = incertus(&[
            "eval",
            f.to_str().unwrap(),
            "--format",
            format,
            "--mc",
            "20000",
        ]);
        assert_eq!(code, 0, "{format}: {err}");
        assert!(
            !out.contains("NaN") && !out.contains("nan"),
            "{format}:\n{out}"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}
