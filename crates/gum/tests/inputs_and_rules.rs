//! Input evaluations, rounding, constants and numerical robustness of the
//! law of propagation.

use incertus_gum::constants;
use incertus_gum::coverage::welch_satterthwaite;
use incertus_gum::model::Stated;
use incertus_gum::rounding::{round_to_digits, write};
use incertus_gum::typea;
use incertus_gum::{load_str, propagate, Distribution, Evaluation, Options};
use proptest::prelude::*;

fn model(text: &str) -> incertus_gum::Model {
    load_str(text, "test.toml").unwrap_or_else(|e| panic!("{e}"))
}

#[test]
fn distributions_with_limits() {
    // JCGM 100:2008, 4.3.7 (a/√3), 4.3.9 (a/√6 triangular, a√((1+β²)/6)
    // trapezoidal); JCGM 101:2008, 6.4.6 (arc sine a/√2).
    let m = model(
        r#"
[inputs.r]
value = 10
distribution = "rectangular"
half_width = 0.3
[inputs.t]
distribution = "triangular"
lower = 9
upper = 11
[inputs.s]
value = 0
distribution = "arcsine"
half_width = 2
[inputs.z]
value = 0
distribution = "trapezoidal"
half_width = 1
beta = 0.5
[[measurands]]
name = "y"
formula = "r + t + s + z"
"#,
    );
    let u = |n: &str| m.input(n).unwrap().standard_uncertainty;
    assert_eq!(u("r"), 0.3 / 3f64.sqrt());
    assert_eq!(m.input("t").unwrap().estimate, 10.0);
    assert_eq!(u("t"), 1.0 / 6f64.sqrt());
    assert_eq!(u("s"), 2.0 / 2f64.sqrt());
    assert_eq!(u("z"), (1.25f64 / 6.0).sqrt());
    assert!(
        matches!(m.input("z").unwrap().distribution, Distribution::Trapezoidal { beta, .. } if beta == 0.5)
    );
}

#[test]
fn type_a_pooled_expanded_and_reliability() {
    let m = model(
        r#"
[inputs.q]
observations = [10.1, 10.3, 9.9, 10.0, 10.2]
[inputs.p]
observations = [5.0, 5.2]
pooled_standard_deviation = 0.15
pooled_dof = 24
[inputs.c]
value = 1.0003
expanded_uncertainty = 0.0004
coverage_factor = 2
[inputs.r]
value = 3
standard_uncertainty = 0.2
relative_reliability = 0.25
[inputs.k]
constant = "k_B"
[[measurands]]
name = "y"
formula = "q + p + c + r"
[[measurands]]
name = "energy_per_kelvin"
formula = "k"
"#,
    );
    // JCGM 100:2008, 4.2.1 to 4.2.3: mean, s/√n, n - 1 dof.
    let q = m.input("q").unwrap();
    assert!((q.estimate - 10.1).abs() < 1e-12);
    let s = (0.1f64 / 4.0).sqrt(); // deviations 0, .2, -.2, -.1, .1: Σ = 0.1
    assert!((q.standard_uncertainty - s / 5f64.sqrt()).abs() < 1e-15);
    assert_eq!(q.dof, Some(4.0));
    assert_eq!(
        q.evaluation,
        Evaluation::TypeA {
            n: 5,
            pooled: false
        }
    );
    // 4.2.4: pooled s_p / √n with the pooled dof.
    let p = m.input("p").unwrap();
    assert_eq!(p.standard_uncertainty, 0.15 / 2f64.sqrt());
    assert_eq!(p.dof, Some(24.0));
    // 4.3.3: u = U/k.
    assert_eq!(m.input("c").unwrap().standard_uncertainty, 0.0002);
    // G.4.2: ν = ½ r⁻² = 8 for r = 0.25.
    assert_eq!(m.input("r").unwrap().dof, Some(8.0));
    // SI Brochure, 9th edition: k_B is exact.
    let k = m.input("k").unwrap();
    assert_eq!((k.estimate, k.standard_uncertainty), (1.380649e-23, 0.0));
}

#[test]
fn compensated_statistics_keep_digits_of_offset_series() {
    // A series with a large offset and a small spread: the naive one-pass
    // formula loses every digit; deviations from the mean do not (common
    // practice of numerical analysis, no published source).
    let base = 1e9;
    let q: Vec<f64> = [0.1, 0.3, -0.1, 0.0, 0.2]
        .iter()
        .map(|d| base + d)
        .collect();
    let s = typea::std_dev(&q);
    let exact = typea::std_dev(&[0.1, 0.3, -0.1, 0.0, 0.2]);
    assert!((s - exact).abs() < 1e-6 * exact, "{s} vs {exact}");
    assert_eq!(typea::sum([1e16, 1.0, -1e16]), 1.0);
}

#[test]
fn constants_agree_with_each_other() {
    // Relations between CODATA 2018 values (SI Brochure, 9th edition, and
    // the CODATA adjustment): μ0 = 2αh/(e²c), ε0 = 1/(μ0 c²), R = N_A k_B,
    // F = N_A e, a0 = ħ/(m_e c α), R∞ = α² m_e c/(2h). The values were
    // recalled from memory; these relations catch a mistyped digit.
    let g = |n: &str| constants::find(n).unwrap().value;
    let mu0 = 2.0 * g("alpha") * g("h") / (g("e") * g("e") * g("c"));
    assert!((mu0 / g("mu_0") - 1.0).abs() < 2e-10, "{mu0}");
    let eps0 = 1.0 / (g("mu_0") * g("c") * g("c"));
    assert!((eps0 / g("epsilon_0") - 1.0).abs() < 2e-10, "{eps0}");
    assert_eq!(g("R"), 6.02214076e23 * 1.380649e-23);
    assert!((g("R") - 8.314462618).abs() < 1e-9);
    assert!((g("F") - 96485.33212).abs() < 1e-5);
    let a0 = g("hbar") / (g("m_e") * g("c") * g("alpha"));
    assert!((a0 / g("a_0") - 1.0).abs() < 1e-9, "{a0}");
    let rinf = g("alpha") * g("alpha") * g("m_e") * g("c") / (2.0 * g("h"));
    assert!((rinf / g("R_inf") - 1.0).abs() < 1e-9, "{rinf}");
    // σ = 5.670374419e-8 W m^-2 K^-4 (CODATA 2018, from memory).
    assert!((g("sigma") / 5.670374419e-8 - 1.0).abs() < 1e-9);
    for c in constants::TABLE {
        assert!(
            c.value.is_finite() && c.standard_uncertainty >= 0.0,
            "{}",
            c.name
        );
    }
}

#[test]
fn rounding_rules() {
    // JCGM 100:2008, 7.2.6: two significant digits; 9.96 to two digits is 10.
    assert_eq!(round_to_digits(0.0346, 2), (0.035, -3));
    assert_eq!(round_to_digits(9.96, 2), (10.0, 0));
    assert_eq!(write(12.3456, 0.0346, 2).concise, "12.346(35)");
    assert_eq!(write(12.3456, 0.0346, 1).concise, "12.35(3)");
    assert_eq!(
        write(2830628.8, 1372.6, 2).plus_minus,
        "(2.8306 ± 0.0014) × 10⁶"
    );
    assert_eq!(
        write(-0.004_567, 0.000_12, 2).plus_minus,
        "-0.00457 ± 0.00012"
    );
    assert_eq!(write(-4.567e-7, 1.2e-8, 2).plus_minus, "(-457 ± 12) × 10⁻⁹");
    // The rounding a stated figure implies.
    let st = |t: &str| Stated {
        value: t.parse().unwrap(),
        text: t.into(),
        line: 1,
    };
    assert_eq!(st("0.0123").rounding(), 0.5e-4);
    assert!((st("1.5e-3").rounding() - 0.05e-3).abs() < 1e-18);
    assert_eq!(st("12").rounding(), 0.5);
}

#[test]
fn extreme_magnitudes_neither_underflow_nor_overflow() {
    // u ~ 1e-40 and 1e40: u⁴ would underflow or overflow without scaling.
    for scale in [1e-40, 1e-30, 1.0, 1e30, 1e40] {
        let nu = welch_satterthwaite(
            2.0 * scale,
            &[(scale * 3f64.sqrt(), Some(5.0)), (scale, Some(10.0))],
        );
        // 2⁴ / (9/5 + 1/10) = 16 / 1.9
        assert!((nu.unwrap() - 16.0 / 1.9).abs() < 1e-12, "{scale}: {nu:?}");
        let text = format!(
            "[inputs.a]\nvalue = {a:e}\nstandard_uncertainty = {u:e}\ndof = 4\n[inputs.b]\nvalue = {a:e}\nstandard_uncertainty = {u:e}\ndof = 4\n[[measurands]]\nname = \"y\"\nformula = \"2*b - a\"\n",
            a = 3.0 * scale,
            u = 0.1 * scale
        );
        let r = propagate(&model(&text), &Options::default()).unwrap();
        let y = &r.results[0];
        // c = (-1, 2): u² = 5 (0.1 s)², ν_eff = 25/(1/4 + 16/4) = 25/4.25.
        assert!(
            (y.standard_uncertainty / (5f64.sqrt() * 0.1 * scale) - 1.0).abs() < 1e-12,
            "{scale}"
        );
        assert!(
            (y.effective_dof.unwrap() - 25.0 / 4.25).abs() < 1e-9,
            "{scale}"
        );
    }
}

#[test]
fn singular_correlation_matrices_are_accepted() {
    // Perfect correlation (r = 1) gives a singular but valid (positive
    // semi-definite) matrix; y = a - b then has u = |u_a - u_b|.
    let m = model(
        r#"
[inputs.a]
value = 1
standard_uncertainty = 0.3
[inputs.b]
value = 1
standard_uncertainty = 0.1
[inputs.c]
value = 1
standard_uncertainty = 0.2
[[correlations]]
inputs = ["a", "b"]
coefficient = 1
[[correlations]]
inputs = ["a", "c"]
coefficient = 1
[[correlations]]
inputs = ["b", "c"]
coefficient = 1
[[measurands]]
name = "y"
formula = "a - b"
"#,
    );
    let r = propagate(&m, &Options::default()).unwrap();
    assert!((r.results[0].standard_uncertainty - 0.2).abs() < 1e-12);
}

#[test]
fn sensitivity_at_a_zero_estimate() {
    // y = x·z at x = 0: c_x = z, c_z = 0; u = z u_x exactly (common practice).
    let m = model(
        "[inputs.x]\nvalue = 0\nstandard_uncertainty = 0.1\n[inputs.z]\nvalue = 4\nstandard_uncertainty = 0.5\n[[measurands]]\nname = \"y\"\nformula = \"x*z\"\n",
    );
    let r = propagate(&m, &Options::default()).unwrap();
    assert!((r.results[0].standard_uncertainty - 0.4).abs() < 1e-16);
    assert_eq!(r.results[0].relative_standard_uncertainty, None);
}

proptest! {
    /// For a linear model y = Σ a_i x_i with correlated inputs the law of
    /// propagation is exact: u²(y) = Σ_ij a_i a_j r_ij u_i u_j (JCGM 100:2008,
    /// 5.2.2; exact for linear models).
    #[test]
    fn linear_models_are_exact(
        a in prop::collection::vec(-5.0f64..5.0, 3),
        u in prop::collection::vec(0.01f64..2.0, 3),
        r01 in -0.5f64..0.5,
        r12 in -0.5f64..0.5,
    ) {
        let text = format!(
            "[inputs.x0]\nvalue = 1\nstandard_uncertainty = {}\n[inputs.x1]\nvalue = 2\nstandard_uncertainty = {}\n[inputs.x2]\nvalue = 3\nstandard_uncertainty = {}\n\
             [[correlations]]\ninputs = [\"x0\", \"x1\"]\ncoefficient = {r01}\n[[correlations]]\ninputs = [\"x1\", \"x2\"]\ncoefficient = {r12}\n\
             [[measurands]]\nname = \"y\"\nformula = \"({})*x0 + ({})*x1 + ({})*x2\"\n",
            u[0], u[1], u[2], a[0], a[1], a[2]
        );
        let r = propagate(&model(&text), &Options::default()).unwrap();
        let var = (a[0] * u[0]).powi(2) + (a[1] * u[1]).powi(2) + (a[2] * u[2]).powi(2)
            + 2.0 * a[0] * a[1] * r01 * u[0] * u[1] + 2.0 * a[1] * a[2] * r12 * u[1] * u[2];
        let got = r.results[0].standard_uncertainty;
        prop_assert!((got - var.max(0.0).sqrt()).abs() <= 1e-12 * (1.0 + var.sqrt()), "{got} vs {}", var.sqrt());
        prop_assert!((r.results[0].value - (a[0] + 2.0 * a[1] + 3.0 * a[2])).abs() < 1e-12);
    }
}

#[test]
fn type_a_at_the_ends_of_the_range() {
    // JCGM 100:2008, 4.2.2 and 4.2.3: s and s/√n of observations from 1e-300
    // to 1e300 (scaled by a power of two, so the squares never leave the
    // f64 range); the spread is 10 % of the values at every scale.
    for e in [-300, -200, -160, 0, 160, 200, 300, 307] {
        let scale = 10f64.powi(e);
        let q: Vec<f64> = [1.1, 1.5, 0.9, 1.3].iter().map(|x| x * scale).collect();
        let s = typea::std_dev(&q);
        // the sample standard deviation of (1.1, 1.5, 0.9, 1.3): √(0.2/3)
        let want = (0.2f64 / 3.0).sqrt() * scale;
        assert!((s / want - 1.0).abs() < 1e-12, "1e{e}: {s} vs {want}");
        assert!((typea::mean(&q) / (1.2 * scale) - 1.0).abs() < 1e-14);
        let r = typea::correlation(&q, &q);
        assert!((r - 1.0).abs() < 1e-12, "1e{e}: {r}");
    }
}
