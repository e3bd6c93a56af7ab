//! Checks of the Guggenheim-Smith worked instance.

use incertus_dipole::{build, demo_problem, Problem, Quantity};
use incertus_gum::{propagate, Options};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};

const EPS0: f64 = 8.8541878128e-12;
const KB: f64 = 1.380649e-23;
const NA: f64 = 6.02214076e23;
const DEBYE: f64 = 1e-21 / 299_792_458.0;

fn q(value: f64, u: f64, unit: Option<&str>) -> Quantity {
    Quantity {
        value,
        standard_uncertainty: u,
        unit: unit.map(str::to_string),
    }
}

/// Series made from a known μ with noise, as a laboratory would measure them.
fn synthetic(mu_d: f64, seed: u64, u_solvent: f64) -> Problem {
    let (t, m2, rho1, eps1, a_n) = (298.15, 0.11256, 773.9, 2.015, 0.21);
    let mu = mu_d * DEBYE;
    let a_eps = mu * mu * NA * rho1 * (eps1 + 2.0f64).powi(2) / (27.0 * EPS0 * KB * t * m2) + a_n;
    let mut rng = rand::rngs::StdRng::seed_from_u64(seed);
    let ne = Normal::new(0.0, 0.0005).unwrap();
    let nn = Normal::new(0.0, 0.00015).unwrap();
    let w2: Vec<f64> = (0..10).map(|i| 0.004 * i as f64).collect();
    let eps12 = w2
        .iter()
        .map(|w| eps1 + a_eps * w + ne.sample(&mut rng))
        .collect();
    let n2 = w2
        .iter()
        .map(|w| 1.4235f64.powi(2) + a_n * w + nn.sample(&mut rng))
        .collect();
    Problem {
        data_file: None,
        title: "synthetic".into(),
        rows: (1..=10).collect(),
        w2,
        eps12,
        n12_squared: n2,
        solvent_permittivity: q(eps1, 0.002, None),
        solvent_density: q(rho1, u_solvent * 0.2, Some("kg/m^3")),
        molar_mass: q(m2, u_solvent * 1e-5, Some("kg/mol")),
        temperature: q(t, u_solvent * 0.1, Some("K")),
        exclude: vec![],
        exclude_reason: None,
        density12: None,
        solvent_refractive_index: None,
        approximate_n_gradient: false,
    }
}

#[test]
fn known_moments_are_recovered_with_nominal_coverage() {
    // Round trip over 200 seeds: the 95 % interval y ± U should hold the
    // true μ in about 95 % of runs (binomial 3σ band: 0.92 to 0.98).
    let mut hits = 0;
    let runs = 200;
    for seed in 0..runs {
        let p = synthetic(1.69, seed, 1.0);
        let c = build(&p).unwrap();
        let r = propagate(&c.model, &Options::default()).unwrap();
        let y = &r.results[0];
        if (y.value - 1.69).abs() <= y.expanded_uncertainty {
            hits += 1;
        }
    }
    let coverage = hits as f64 / runs as f64;
    assert!((0.92..=0.985).contains(&coverage), "coverage {coverage}");
}

#[test]
fn relative_uncertainty_is_half_that_of_the_gradient_difference() {
    // Only the gradients uncertain (solvent, temperature, molar mass exact):
    // u(μ)/μ = ½ u(a_ε − a_n)/(a_ε − a_n), with u² = u²(a_ε) + u²(a_n) for
    // independent fits (common practice, no published source).
    let mut p = synthetic(1.69, 7, 0.0);
    p.solvent_permittivity.standard_uncertainty = 0.0;
    let c = build(&p).unwrap();
    let r = propagate(&c.model, &Options::default()).unwrap();
    let y = &r.results[0];
    let (ae, an) = (
        c.model.input("a_eps").unwrap(),
        c.model.input("a_n").unwrap(),
    );
    let d = ae.estimate - an.estimate;
    let ud = (ae.standard_uncertainty.powi(2) + an.standard_uncertainty.powi(2)).sqrt();
    let rel = y.standard_uncertainty / y.value;
    assert!(
        (rel - 0.5 * ud / d).abs() < 1e-10 * rel,
        "{rel} vs {}",
        0.5 * ud / d
    );
}

#[test]
fn the_gradients_carry_most_of_the_variance() {
    // With typical Type B uncertainties of the solvent data and the
    // temperature (the demo's), the two gradients dominate u²(μ) (common
    // practice, no published source).
    let c = build(&demo_problem()).unwrap();
    let r = propagate(&c.model, &Options::default()).unwrap();
    let share: f64 = r.results[0]
        .budget
        .iter()
        .filter(|b| b.input == "a_eps" || b.input == "a_n")
        .map(|b| b.share)
        .sum();
    assert!(share > 0.5, "gradients share {share}");
}

#[test]
fn the_demo_recovers_the_handbook_moment() {
    // Realism: the demo series were made from chlorobenzene's gas-phase
    // dipole moment, 1.69 D (CRC Handbook of Chemistry and Physics, recalled
    // from memory); the method must return it within its expanded
    // uncertainty (times 1.5, for one noisy data set).
    let c = build(&demo_problem()).unwrap();
    let r = propagate(&c.model, &Options::default()).unwrap();
    let y = &r.results[0];
    assert_eq!(y.unit.as_deref(), Some("D"));
    assert!(
        (y.value - 1.69).abs() <= 1.5 * y.expanded_uncertainty,
        "{} ± {}",
        y.value,
        y.expanded_uncertainty
    );
    assert!(c.warnings.is_empty(), "{:?}", c.warnings);
}

#[test]
fn validity_checks() {
    // No orientation polarization: an error, not a NaN.
    let mut p = synthetic(1.69, 1, 1.0);
    p.eps12 = p.w2.iter().map(|w| 2.015 + 0.1 * w).collect();
    let err = build(&p).err().unwrap();
    assert!(err.message.contains("no orientation polarization"), "{err}");
    assert_eq!(err.kind, incertus_dipole::DipoleErrorKind::Method);
    // Beyond the dilute range, and a curved series.
    let mut p = synthetic(1.69, 2, 1.0);
    p.w2 = p.w2.iter().map(|w| w * 4.0).collect();
    p.eps12 = p.w2.iter().map(|w| 2.015 + 2.4 * w - 6.0 * w * w).collect();
    let c = build(&p).unwrap();
    assert!(
        c.warnings.iter().any(|w| w.contains("no longer dilute")),
        "{:?}",
        c.warnings
    );
    assert!(
        c.warnings.iter().any(|w| w.contains("curved")),
        "{:?}",
        c.warnings
    );
    // An intercept far from the stated solvent permittivity.
    let mut p = synthetic(1.69, 3, 1.0);
    p.solvent_permittivity.value = 2.05;
    let c = build(&p).unwrap();
    assert!(
        c.warnings.iter().any(|w| w.contains("intercept")),
        "{:?}",
        c.warnings
    );
}

#[test]
fn halverstadt_kumler_agrees_where_the_density_term_is_negligible() {
    // Constant solution density (β = 0) and ε1 = n1²: the Halverstadt-Kumler
    // expression reduces to Guggenheim-Smith's (see the crate docs), so the
    // two results must agree closely.
    let mut p = synthetic(1.69, 11, 1.0);
    let n1 = 2.015f64.sqrt();
    p.n12_squared = p.w2.iter().map(|w| n1 * n1 + 0.21 * w).collect();
    p.density12 = Some(vec![773.9; p.w2.len()]);
    p.solvent_refractive_index = Some(q(n1, 0.0001, None));
    let c = build(&p).unwrap();
    let r = propagate(&c.model, &Options::default()).unwrap();
    let gs = r.results.iter().find(|x| x.name == "mu").unwrap();
    let hk = r.results.iter().find(|x| x.name == "mu_hk").unwrap();
    assert!(
        (gs.value - hk.value).abs() < 0.2 * gs.standard_uncertainty,
        "GS {} HK {}",
        gs.value,
        hk.value
    );
    // With ε1 ≠ n1² the density gradient enters Halverstadt-Kumler (through
    // (v1 + β)[(ε1 − 1)/(ε1 + 2) − (n1² − 1)/(n1² + 2)]) but not
    // Guggenheim-Smith.
    p.solvent_refractive_index = Some(q(1.4235, 0.0001, None));
    p.n12_squared = p.w2.iter().map(|w| 1.4235f64.powi(2) + 0.21 * w).collect();
    let c = build(&p).unwrap();
    let r = propagate(&c.model, &Options::default()).unwrap();
    let gs = r.results.iter().find(|x| x.name == "mu").unwrap().clone();
    let hk = r
        .results
        .iter()
        .find(|x| x.name == "mu_hk")
        .unwrap()
        .clone();
    p.density12 = Some(p.w2.iter().map(|w| 773.9 * (1.0 + 0.3 * w)).collect());
    let c = build(&p).unwrap();
    let r = propagate(&c.model, &Options::default()).unwrap();
    let gs2 = r.results.iter().find(|x| x.name == "mu").unwrap();
    let hk2 = r.results.iter().find(|x| x.name == "mu_hk").unwrap();
    assert!(
        (gs2.value - gs.value).abs() < 1e-12,
        "GS does not use densities"
    );
    assert!(
        (hk2.value - hk.value).abs() > 0.001,
        "HK responds to the density gradient"
    );
}

#[test]
fn the_n_gradient_approximation_is_close_for_small_gradients() {
    // d(n²)/dw = 2 n dn/dw exactly at w = 0; over a dilute series the two
    // gradients agree to the curvature of n², here far below u(μ).
    let p = synthetic(1.69, 5, 1.0);
    let mut q2 = p.clone();
    q2.approximate_n_gradient = true;
    q2.solvent_refractive_index = Some(q(1.4235, 0.0001, None));
    let exact = propagate(&build(&p).unwrap().model, &Options::default()).unwrap();
    let approx = propagate(&build(&q2).unwrap().model, &Options::default()).unwrap();
    let (a, b) = (
        exact.results.iter().find(|r| r.name == "mu").unwrap(),
        approx.results.iter().find(|r| r.name == "mu").unwrap(),
    );
    assert!(
        (a.value - b.value).abs() < 0.5 * a.standard_uncertainty,
        "{} vs {}",
        a.value,
        b.value
    );
    assert!(
        approx.results.iter().any(|r| r.name == "a_n"),
        "a_n is shown as a result of the approximation"
    );
}
