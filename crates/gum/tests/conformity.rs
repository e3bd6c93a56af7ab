//! Conformity assessment (JCGM 106:2012) against closed forms and against
//! scipy 1.17.1 (`tests/fixtures/make_conformity_fixture.py`, which
//! computes the global risks as two-dimensional integrals of the joint
//! density, independently of the one-dimensional reduction used here).

use incertus_gum::conformity::{
    assess, global_risks, probability, Belief, Guard, Process, Rule, Specification,
};
use incertus_gum::{load_str, propagate, Options};

fn fixture() -> serde_json::Value {
    let p = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/fixtures/conformity.json"
    );
    serde_json::from_str(&std::fs::read_to_string(p).expect("fixture")).expect("json")
}

fn opt(v: &serde_json::Value) -> Option<f64> {
    v.as_f64()
}

fn spec(lower: Option<f64>, upper: Option<f64>, rule: Rule, guard: Guard) -> Specification {
    Specification {
        lower,
        upper,
        rule,
        guard,
        process: None,
    }
}

fn belief(value: f64, u: f64, dof: Option<f64>) -> Belief {
    Belief {
        value,
        standard_uncertainty: u,
        dof,
    }
}

#[test]
fn conformance_probabilities_against_scipy() {
    // scipy.stats.norm / scipy.stats.t, fixture `conformance`.
    for c in fixture()["conformance"].as_array().unwrap() {
        let b = belief(
            c["value"].as_f64().unwrap(),
            c["u"].as_f64().unwrap(),
            opt(&c["dof"]),
        );
        let s = spec(
            opt(&c["lower"]),
            opt(&c["upper"]),
            Rule::SimpleAcceptance,
            Guard::None,
        );
        let r = assess(&s, b, 2.0 * b.standard_uncertainty, 2.0, 0.95, None).unwrap();
        let want = c["conformance_probability"].as_f64().unwrap();
        assert!(
            (r.conformance_probability - want).abs() < 1e-12,
            "{c}: {} vs {want}",
            r.conformance_probability
        );
        // The complement is computed directly (accurate when small).
        assert!(
            (r.conformance_probability + b.probability_outside(s.lower, s.upper) - 1.0).abs()
                < 1e-12
        );
    }
}

#[test]
fn guard_bands_for_a_largest_risk_against_scipy() {
    // brentq on scipy's conformance probability (two limits) or the
    // quantile function (one limit), fixture `guard_bands`.
    for c in fixture()["guard_bands"].as_array().unwrap() {
        let u = c["u"].as_f64().unwrap();
        let dof = opt(&c["dof"]);
        let rule = match c["rule"].as_str().unwrap() {
            "guarded acceptance" => Rule::GuardedAcceptance,
            _ => Rule::GuardedRejection,
        };
        let alpha = c["alpha"].as_f64().unwrap();
        let s = spec(
            opt(&c["lower"]),
            opt(&c["upper"]),
            rule,
            Guard::SpecificRisk(alpha),
        );
        let r = assess(&s, belief(10.0, u, dof), 2.0 * u, 2.0, 0.95, Some("g")).unwrap();
        match c["guard_band"].as_f64() {
            None => {
                assert!(r.acceptance_interval.is_none(), "{c}: {r:?}");
                assert_eq!(r.verdict, "rejected");
            }
            Some(w) => {
                assert!(
                    (r.guard_band.unwrap() - w).abs() < 1e-12,
                    "{c}: {} vs {w}",
                    r.guard_band.unwrap()
                );
                // At the acceptance limit the specific risk is the target.
                let [al, ah] = r.acceptance_interval.unwrap();
                let edge = ah.or(al).unwrap();
                let at = assess(&s, belief(edge, u, dof), 2.0 * u, 2.0, 0.95, None).unwrap();
                let risk = if rule == Rule::GuardedAcceptance {
                    1.0 - at.conformance_probability
                } else {
                    at.conformance_probability
                };
                assert!((risk - alpha).abs() < 1e-9, "{c}: risk {risk}");
            }
        }
    }
}

#[test]
fn global_risks_against_scipy_double_integrals() {
    // scipy.integrate.dblquad of the joint density, fixture `global_risks`.
    for c in fixture()["global_risks"].as_array().unwrap() {
        let g = global_risks(
            Process {
                mean: c["process_mean"].as_f64().unwrap(),
                standard_deviation: c["process_sd"].as_f64().unwrap(),
            },
            c["u"].as_f64().unwrap(),
            opt(&c["lower"]),
            opt(&c["upper"]),
            Some([opt(&c["acceptance_lower"]), opt(&c["acceptance_upper"])]),
        );
        for (got, key) in [
            (g.consumer_risk, "consumer_risk"),
            (g.producer_risk, "producer_risk"),
        ] {
            let want = c[key].as_f64().unwrap();
            assert!(
                (got - want).abs() <= 1e-9 * want.max(1e-6),
                "{c}: {key} {got} vs {want}"
            );
        }
    }
}

#[test]
fn closed_forms_of_a_normal_result() {
    // A normal result at the upper limit conforms with probability 1/2
    // (symmetry of the normal distribution); 2u inside a single upper limit
    // gives Φ(2) = 0.97725 (standard normal table, value recalled from
    // memory); symmetric limits at ±1.959964u give 95 % (the coverage
    // factor of JCGM 100:2008, Table G.1).
    let up = spec(None, Some(10.0), Rule::SimpleAcceptance, Guard::None);
    let at = assess(&up, belief(10.0, 0.1, None), 0.2, 2.0, 0.95, None).unwrap();
    assert_eq!(at.conformance_probability, 0.5);
    let inside = assess(&up, belief(9.8, 0.1, None), 0.2, 2.0, 0.95, None).unwrap();
    assert!((inside.conformance_probability - 0.97725).abs() < 5e-6);
    assert_eq!(inside.verdict, "accepted");
    assert!((inside.specific_risk - 0.02275).abs() < 5e-6);
    let both = spec(
        Some(-1.959964),
        Some(1.959964),
        Rule::SimpleAcceptance,
        Guard::None,
    );
    let c = assess(&both, belief(0.0, 1.0, None), 2.0, 2.0, 0.95, None).unwrap();
    assert!((c.conformance_probability - 0.95).abs() < 1e-6);
    // C_m = (T_U - T_L)/(4u) (JCGM 106:2012, 7.5, recalled from memory).
    assert!((c.measurement_capability_index.unwrap() - 0.979982).abs() < 1e-6);
    // A rejected item carries the specific producer's risk p_c.
    let out = assess(&up, belief(10.1, 0.1, None), 0.2, 2.0, 0.95, None).unwrap();
    assert_eq!(out.verdict, "rejected");
    assert_eq!(out.specific_risk_kind, "producer's");
    assert!((out.specific_risk - (1.0 - 0.841_344_746)).abs() < 1e-9);
}

#[test]
fn guard_band_of_one_expanded_uncertainty() {
    // Guarded acceptance with w = U (k = 2) against one limit: an item
    // measured at the acceptance limit has a specific consumer's risk of
    // 1 − Φ(2) = 2.3 % (common practice, no published source).
    let s = spec(
        None,
        Some(10.0),
        Rule::GuardedAcceptance,
        Guard::MultipleOfU(1.0),
    );
    let c = assess(&s, belief(9.8, 0.1, None), 0.2, 2.0, 0.95, Some("g")).unwrap();
    assert_eq!(c.acceptance_interval, Some([None, Some(9.8)]));
    assert_eq!(c.verdict, "accepted");
    assert!((c.specific_risk - 0.02275).abs() < 5e-6);
    assert!(
        c.statement.contains("guarded acceptance"),
        "{}",
        c.statement
    );
    assert!(c.statement.contains("accepted"));
    let just_over = assess(&s, belief(9.81, 0.1, None), 0.2, 2.0, 0.95, None).unwrap();
    assert_eq!(just_over.verdict, "rejected");
    // Guarded rejection widens the interval: the same item is accepted.
    let r = spec(
        None,
        Some(10.0),
        Rule::GuardedRejection,
        Guard::MultipleOfU(1.0),
    );
    let c = assess(&r, belief(10.1, 0.1, None), 0.2, 2.0, 0.95, None).unwrap();
    assert_eq!(c.acceptance_interval, Some([None, Some(10.2)]));
    assert_eq!(c.verdict, "accepted");
    // A guard band wider than half the tolerance leaves nothing to accept.
    let narrow = spec(
        Some(9.9),
        Some(10.1),
        Rule::GuardedAcceptance,
        Guard::MultipleOfU(1.0),
    );
    let c = assess(&narrow, belief(10.0, 0.1, None), 0.2, 2.0, 0.95, None).unwrap();
    assert_eq!(c.acceptance_interval, None);
    assert_eq!(c.verdict, "rejected");
    assert!(!c.notes.is_empty());
}

#[test]
fn tiny_magnitudes_and_zero_uncertainty() {
    // Dipole moments in C m are near 1e-30: nothing under- or overflows.
    let s = spec(
        Some(1.0e-30),
        Some(1.3e-30),
        Rule::GuardedAcceptance,
        Guard::SpecificRisk(0.05),
    );
    let c = assess(
        &s,
        belief(1.2e-30, 0.05e-30, None),
        0.1e-30,
        2.0,
        0.95,
        None,
    )
    .unwrap();
    let w = c.guard_band.unwrap();
    assert!(w > 0.0 && w < 1e-31);
    assert!(c.conformance_probability.is_finite());
    let z = spec(
        Some(1.0),
        Some(2.0),
        Rule::GuardedAcceptance,
        Guard::SpecificRisk(0.05),
    );
    let c = assess(&z, belief(1.5, 0.0, None), 0.0, 2.0, 0.95, None).unwrap();
    assert_eq!(c.conformance_probability, 1.0);
    assert_eq!(c.guard_band, Some(0.0));
    assert_eq!(probability(0.5), "50 %");
    assert_eq!(probability(0.999_996_2), "99.99962 %");
}

const MODEL: &str = r#"
[inputs.m]
value = 100.02
standard_uncertainty = 0.01
unit = "g"

[[measurands]]
name = "M"
formula = "m"
unit = "g"

[measurands.specification]
lower = 99.95
upper = 100.05
rule = "guarded acceptance"
max_specific_risk = 0.05
process_mean = 100.0
process_standard_deviation = 0.02
"#;

#[test]
fn a_model_file_with_a_specification() {
    let m = load_str(MODEL, "spec.toml").unwrap();
    let r = propagate(&m, &Options::default()).unwrap();
    let c = r.results[0].conformity.as_ref().unwrap();
    // Same numbers as the fixture's first guard band case (u = 0.01, 5 %).
    assert!((c.guard_band.unwrap() - 0.016448536269516367).abs() < 1e-12);
    assert_eq!(c.verdict, "accepted");
    assert!(c.global_risks.is_some());
    let json = serde_json::to_value(&r).unwrap();
    assert_eq!(
        json["results"][0]["conformity"]["rule"],
        "guarded acceptance"
    );
}

#[test]
fn specification_errors_name_the_key() {
    let cases = [
        (
            "lower = 99.95\nupper = 100.05\nrule = \"guarded acceptance\"\n",
            "needs a guard band",
        ),
        (
            "upper = 99.0\nlower = 100.0\n",
            "must be greater than the lower limit",
        ),
        (
            "rule = \"simple acceptance\"\n",
            "needs `lower`, `upper` or both",
        ),
        (
            "upper = 1\nrule = \"guarded acceptence\"\n",
            "did you mean `guarded acceptance`",
        ),
        ("upper = 1\nguard_multiple = 1\n", "no `rule`"),
        (
            "upper = 1\nrule = \"guarded rejection\"\nmax_specific_risk = 0.7\n",
            "between 0 and 0.5",
        ),
        (
            "upper = 1\nprocess_mean = 1\n",
            "both `process_mean` and `process_standard_deviation`",
        ),
        ("upper = 1\nuppper = 2\n", "unknown key `uppper`"),
    ];
    for (body, fragment) in cases {
        let text = format!(
            "[inputs.m]\nvalue = 1\nstandard_uncertainty = 0.1\n[[measurands]]\nname = \"M\"\nformula = \"m\"\n[measurands.specification]\n{body}"
        );
        let e = load_str(&text, "bad.toml").unwrap_err().to_string();
        assert!(e.contains(fragment), "{body}: {e}");
        assert!(e.contains("measurands[0].specification"), "{e}");
    }
}

#[test]
fn global_risks_agree_with_a_simulation_of_the_process() {
    // Draw true values from the process N(10, 0.02) and measured values
    // around them with u = 0.005 (JCGM 106:2012, clause 9 defines the risks
    // as these joint probabilities); count accepted non-conforming and
    // rejected conforming items. 2·10⁶ items: the counts agree with the
    // quadrature within 4 binomial standard deviations.
    let mut state: u64 = 20261202;
    let mut uniform = || {
        state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut normal = || {
        // Box-Muller.
        let (a, b) = (uniform().max(1e-300), uniform());
        (-2.0 * a.ln()).sqrt() * (2.0 * std::f64::consts::PI * b).cos()
    };
    let (lo, hi, al, ah) = (9.95, 10.05, 9.96, 10.04);
    let n = 2_000_000;
    let (mut consumer, mut producer) = (0u64, 0u64);
    for _ in 0..n {
        let eta = 10.0 + 0.02 * normal();
        let y = eta + 0.005 * normal();
        let conforms = (lo..=hi).contains(&eta);
        let accepted = (al..=ah).contains(&y);
        if accepted && !conforms {
            consumer += 1;
        }
        if !accepted && conforms {
            producer += 1;
        }
    }
    let g = global_risks(
        Process {
            mean: 10.0,
            standard_deviation: 0.02,
        },
        0.005,
        Some(lo),
        Some(hi),
        Some([Some(al), Some(ah)]),
    );
    for (count, p) in [(consumer, g.consumer_risk), (producer, g.producer_risk)] {
        let f = count as f64 / n as f64;
        let sd = (p * (1.0 - p) / n as f64).sqrt();
        assert!((f - p).abs() < 4.0 * sd, "{f} vs {p} (sd {sd})");
    }
}

#[test]
fn tiny_largest_risks_are_met_not_saturated() {
    // JCGM 106:2012, 8.3.3 (guard band from a specific risk); the normal
    // tail Φ(−z) = erfc(z/√2)/2 in closed form (libm's erfc). A target of
    // 1e-20 must not stop where 1 − α rounds to 1 (z ≈ 8.29).
    for alpha in [1e-3, 1e-9, 1e-16, 1e-20, 1e-40, 1e-100] {
        // One upper limit, guarded acceptance.
        let s = spec(
            None,
            Some(10.0),
            Rule::GuardedAcceptance,
            Guard::SpecificRisk(alpha),
        );
        let b = belief(5.0, 0.1, None);
        let r = assess(&s, b, 0.2, 2.0, 0.95, None).unwrap();
        let w = r.guard_band.expect("a guard band exists");
        let tail = 0.5 * libm::erfc(w / 0.1 / std::f64::consts::SQRT_2);
        assert!(
            (tail / alpha - 1.0).abs() < 1e-6,
            "α {alpha}: w/u {} gives {tail}",
            w / 0.1
        );
        // Two limits far apart: the same band at each end.
        let s2 = spec(
            Some(0.0),
            Some(10.0),
            Rule::GuardedAcceptance,
            Guard::SpecificRisk(alpha),
        );
        let r2 = assess(&s2, b, 0.2, 2.0, 0.95, None).unwrap();
        let w2 = r2.guard_band.expect("a guard band exists");
        assert!((w2 / w - 1.0).abs() < 1e-6, "α {alpha}: {w2} vs {w}");
    }
    // A target no band can meet (the tolerance interval is narrower than
    // the spread): no guard band, nothing accepted, and no risk claimed.
    let s = spec(
        Some(4.99),
        Some(5.01),
        Rule::GuardedAcceptance,
        Guard::SpecificRisk(1e-30),
    );
    let r = assess(&s, belief(5.0, 0.1, None), 0.2, 2.0, 0.95, None).unwrap();
    assert!(
        r.guard_band.is_none() && r.acceptance_interval.is_none(),
        "{r:?}"
    );
    assert_eq!(r.verdict, "rejected");
}
