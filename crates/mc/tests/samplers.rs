//! Each sampler of JCGM 101:2008, 6.4 against its distribution function
//! (from `statrs`, or in closed form) by a Kolmogorov-Smirnov test at a
//! fixed seed, and its mean and variance against the closed forms.

use incertus_gum::{load_str, Model};
use incertus_mc::{groups, Group, Marginal, Stream};
use rand::SeedableRng;
use statrs::distribution::{ContinuousCDF, Exp, Gamma, Normal, StudentsT, Triangular, Uniform};

const N: usize = 200_000;

fn input_model(body: &str) -> Model {
    load_str(
        &format!("[inputs.x]\n{body}\n[[measurands]]\nname = \"y\"\nformula = \"x\"\n"),
        "t.toml",
    )
    .unwrap()
}

fn marginal(body: &str) -> Marginal {
    match groups(&input_model(body)).unwrap().remove(0) {
        Group::Single { marginal, .. } => marginal,
        other => panic!("{other:?}"),
    }
}

fn draws(m: &Marginal, seed: u64) -> Vec<f64> {
    let mut rng = Stream::seed_from_u64(seed);
    let mut v = vec![0.0; N];
    m.fill(&mut rng, &mut v);
    v
}

/// Kolmogorov-Smirnov statistic D = sup |F_n - F|.
fn ks(v: &mut [f64], cdf: impl Fn(f64) -> f64) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len() as f64;
    let mut d: f64 = 0.0;
    for (i, &x) in v.iter().enumerate() {
        let f = cdf(x);
        d = d
            .max((f - i as f64 / n).abs())
            .max(((i + 1) as f64 / n - f).abs());
    }
    d
}

/// The KS critical value at α = 0.001 for large n: 1.949/√n (common
/// statistical tables, e.g. Massey 1951; value recalled from memory).
fn critical() -> f64 {
    1.949 / (N as f64).sqrt()
}

fn moments(v: &[f64]) -> (f64, f64) {
    let n = v.len() as f64;
    let m = v.iter().sum::<f64>() / n;
    (
        m,
        v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (n - 1.0),
    )
}

/// Mean and variance agree with the closed forms within 5 standard errors
/// (the variance's standard error from the fourth moment, bounded by 3σ⁴
/// for these light-tailed distributions, and 30σ⁴ for the t and gamma).
fn check_moments(v: &[f64], mean: f64, var: f64, kurt_bound: f64) {
    let (m, s2) = moments(v);
    let n = v.len() as f64;
    assert!(
        (m - mean).abs() < 5.0 * (var / n).sqrt(),
        "mean {m} vs {mean}"
    );
    assert!(
        (s2 - var).abs() < 5.0 * (kurt_bound * var * var / n).sqrt(),
        "variance {s2} vs {var}"
    );
}

#[test]
fn gaussian() {
    // JCGM 101:2008, 6.4.7.
    let mut v = draws(&marginal("value = 3\nstandard_uncertainty = 0.5"), 1);
    check_moments(&v, 3.0, 0.25, 3.0);
    let f = Normal::new(3.0, 0.5).unwrap();
    assert!(ks(&mut v, |x| f.cdf(x)) < critical());
}

#[test]
fn scaled_and_shifted_t_of_a_type_a_series() {
    // JCGM 101:2008, 6.4.9: t_{n-1}(x̄, s²/n), variance (s²/n)(n-1)/(n-3).
    let obs = [10.1, 10.3, 9.9, 10.0, 10.2, 10.05];
    let m = marginal(&format!("observations = {obs:?}"));
    let n = obs.len() as f64;
    let mean = obs.iter().sum::<f64>() / n;
    let s2 = obs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
    let scale = (s2 / n).sqrt();
    let mut v = draws(&m, 2);
    check_moments(&v, mean, scale * scale * (n - 1.0) / (n - 3.0), 60.0);
    let f = StudentsT::new(mean, scale, n - 1.0).unwrap();
    assert!(ks(&mut v, |x| f.cdf(x)) < critical());
}

#[test]
fn rectangular() {
    // JCGM 101:2008, 6.4.2: R(a, b), variance (b - a)²/12.
    let mut v = draws(
        &marginal("value = 1\ndistribution = \"rectangular\"\nhalf_width = 0.2"),
        3,
    );
    check_moments(&v, 1.0, 0.4 * 0.4 / 12.0, 1.8);
    let f = Uniform::new(0.8, 1.2).unwrap();
    assert!(ks(&mut v, |x| f.cdf(x)) < critical());
}

#[test]
fn triangular() {
    // JCGM 101:2008, 6.4.5: variance a²/6 for half-width a.
    let mut v = draws(
        &marginal("value = 0\ndistribution = \"triangular\"\nhalf_width = 2"),
        4,
    );
    check_moments(&v, 0.0, 4.0 / 6.0, 2.4);
    let f = Triangular::new(-2.0, 2.0, 0.0).unwrap();
    assert!(ks(&mut v, |x| f.cdf(x)) < critical());
}

#[test]
fn arc_sine() {
    // JCGM 101:2008, 6.4.6: F(x) = ½ + arcsin((x - c)/a)/π, variance a²/2.
    let mut v = draws(
        &marginal("value = 5\ndistribution = \"arcsine\"\nhalf_width = 0.5"),
        5,
    );
    check_moments(&v, 5.0, 0.125, 1.5);
    assert!(
        ks(&mut v, |x| 0.5
            + ((x - 5.0) / 0.5).clamp(-1.0, 1.0).asin()
                / std::f64::consts::PI)
            < critical()
    );
}

#[test]
fn trapezoidal() {
    // JCGM 101:2008, 6.4.4: base half-width a, top half-width βa; variance
    // a²(1 + β²)/6. CDF in closed form (common practice, no published source).
    let (a, beta) = (1.0f64, 0.4f64);
    let mut v = draws(
        &marginal("value = 0\ndistribution = \"trapezoidal\"\nhalf_width = 1\nbeta = 0.4"),
        6,
    );
    check_moments(&v, 0.0, a * a * (1.0 + beta * beta) / 6.0, 2.4);
    let h = 1.0 / (a * (1.0 + beta));
    let ramp = a * (1.0 - beta);
    let cdf = |x: f64| -> f64 {
        let lower = |t: f64| {
            // probability below t for t <= 0
            if t <= -a {
                0.0
            } else if t <= -a * beta {
                0.5 * h * (t + a).powi(2) / ramp
            } else {
                0.5 * h * ramp + h * (t + a * beta)
            }
        };
        if x <= 0.0 {
            lower(x)
        } else {
            1.0 - lower(-x)
        }
    };
    assert!(ks(&mut v, cdf) < critical());
}

#[test]
fn curvilinear_trapezoid() {
    // JCGM 101:2008, 6.4.3.3: mean (a + b)/2, variance (b - a)²/12 + d²/9.
    let v = draws(
        &marginal("value = 2\ndistribution = \"curvilinear_trapezoidal\"\nhalf_width = 1\nlimit_half_width = 0.3"),
        7,
    );
    check_moments(&v, 2.0, 4.0 / 12.0 + 0.09 / 9.0, 1.8);
    assert!(v.iter().all(|x| (0.7..=3.3).contains(x)));
}

#[test]
fn exponential_and_gamma() {
    // JCGM 101:2008, 6.4.10 and 6.4.11.
    let mut v = draws(&marginal("value = 2.5\ndistribution = \"exponential\""), 8);
    check_moments(&v, 2.5, 6.25, 9.0);
    let f = Exp::new(1.0 / 2.5).unwrap();
    assert!(ks(&mut v, |x| f.cdf(x)) < critical());
    let mut v = draws(
        &marginal("distribution = \"gamma\"\nshape = 3\nscale = 0.5"),
        9,
    );
    check_moments(&v, 1.5, 0.75, 5.0);
    let f = Gamma::new(3.0, 2.0).unwrap(); // shape, rate
    assert!(ks(&mut v, |x| f.cdf(x)) < critical());
}

#[test]
fn gaussian_copula_gives_rectangular_inputs_the_stated_correlation() {
    // Two rectangular inputs stated with r = 0.5: the copula parameter is
    // ρ = 2 sin(πr/6) = 0.5176, since a Gaussian copula with ρ gives them
    // the product-moment correlation (6/π) arcsin(ρ/2) (Pearson 1907,
    // recalled from memory; crates/mc/tests/copula.rs checks every pair).
    let m = load_str(
        r#"
[inputs.a]
value = 0
distribution = "rectangular"
half_width = 1
[inputs.b]
value = 0
distribution = "rectangular"
half_width = 1
[[correlations]]
inputs = ["a", "b"]
coefficient = 0.5
[[measurands]]
name = "y"
formula = "a + b"
"#,
        "c.toml",
    )
    .unwrap();
    let g = groups(&m).unwrap();
    assert!(matches!(g[0], Group::Copula { .. }));
    let mut cols = vec![vec![0.0; N], vec![0.0; N]];
    let mut scratch = Vec::new();
    let mut rng = Stream::seed_from_u64(10);
    g[0].fill(&mut rng, &mut cols, N, &mut scratch);
    let (ma, va) = moments(&cols[0]);
    let (mb, vb) = moments(&cols[1]);
    let cov = cols[0]
        .iter()
        .zip(&cols[1])
        .map(|(x, y)| (x - ma) * (y - mb))
        .sum::<f64>()
        / (N as f64 - 1.0);
    let r = cov / (va * vb).sqrt();
    let want = 0.5;
    assert!((r - want).abs() < 0.01, "{r} vs {want}");
    // Marginals stay rectangular.
    let f = Uniform::new(-1.0, 1.0).unwrap();
    assert!(ks(&mut cols[0], |x| f.cdf(x)) < critical());
}

#[test]
fn inputs_observed_together_get_a_multivariate_t() {
    // JCGM 101:2008, 6.4.8 with JCGM 100:2008, 5.2.3: n = 7 observations of
    // N = 2 quantities give ν = n − N = 5 and a scale matrix (n − 1)/(n − N)
    // times the covariance of the means, so the draws' covariance is
    // (n − 1)/(n − N − 2) = 2 times it (derivation beside the sampler).
    let m = load_str(
        r#"
[inputs.a]
observations = [1.0, 1.2, 0.9, 1.1, 1.05, 0.95, 1.0]
[inputs.b]
observations = [2.0, 2.3, 1.9, 2.1, 2.1, 1.9, 2.05]
[[observed_together]]
inputs = ["a", "b"]
[[measurands]]
name = "y"
formula = "a + b"
"#,
        "t.toml",
    )
    .unwrap();
    let g = groups(&m).unwrap();
    let Group::MultiT { nu, .. } = &g[0] else {
        panic!("{:?}", g[0])
    };
    assert_eq!(*nu, 5.0);
    let mut cols = vec![vec![0.0; N], vec![0.0; N]];
    let mut rng = Stream::seed_from_u64(11);
    g[0].fill(&mut rng, &mut cols, N, &mut Vec::new());
    let (ma, va) = moments(&cols[0]);
    let (mb, vb) = moments(&cols[1]);
    let cov = cols[0]
        .iter()
        .zip(&cols[1])
        .map(|(x, y)| (x - ma) * (y - mb))
        .sum::<f64>()
        / (N as f64 - 1.0);
    let ua = m.inputs[0].standard_uncertainty;
    let ub = m.inputs[1].standard_uncertainty;
    let f = 6.0 / 3.0;
    assert!((va / (ua * ua * f) - 1.0).abs() < 0.05, "{va}");
    assert!((vb / (ub * ub * f) - 1.0).abs() < 0.05, "{vb}");
    assert!((cov / (va * vb).sqrt() - m.correlation(0, 1)).abs() < 0.01);
    let scale = ua * (6.0f64 / 5.0).sqrt();
    let t = StudentsT::new(m.inputs[0].estimate, scale, 5.0).unwrap();
    assert!(ks(&mut cols[0], |x| t.cdf(x)) < critical());
}

#[test]
fn quantities_observed_together_follow_the_posterior_t() {
    // N = 2 quantities observed together n = 8 times: multivariate t with
    // ν = n − N = 6 and scale matrix C/(n(n − N)) (JCGM 101:2008, 6.4.8;
    // Gelman et al., Bayesian Data Analysis, 3.6; recalled from memory). Its
    // covariance is ν/(ν − 2) times the scale matrix, i.e. (n − 1)/(n − N − 2)
    // = 7/4 times the first-order covariance S/n. Derivation: the scale
    // matrix is (n − 1)S/(n(n − N)), times (n − N)/(n − N − 2).
    let m = load_str(
        "[inputs.a]\nobservations = [10.1, 10.4, 9.8, 10.0, 10.3, 9.9, 10.2, 10.5]\n\
         [inputs.b]\nobservations = [5.2, 5.5, 4.9, 5.0, 5.4, 5.1, 5.2, 5.6]\n\
         [[observed_together]]\ninputs = [\"a\", \"b\"]\n\
         [[measurands]]\nname = \"y\"\nformula = \"a + b\"\n",
        "t.toml",
    )
    .unwrap();
    let gs = groups(&m).unwrap();
    let g = gs
        .iter()
        .find(|g| matches!(g, Group::MultiT { .. }))
        .unwrap();
    let len = 400_000;
    let mut cols = vec![vec![0.0; len]; 2];
    let mut scratch = Vec::new();
    let mut rng = Stream::seed_from_u64(11);
    g.fill(&mut rng, &mut cols, len, &mut scratch);
    let var = |v: &[f64]| {
        let mean = v.iter().sum::<f64>() / v.len() as f64;
        v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (v.len() - 1) as f64
    };
    for (i, col) in cols.iter().enumerate() {
        let u = m.inputs[i].standard_uncertainty;
        let ratio = var(col) / (u * u);
        assert!((ratio - 1.75).abs() < 0.04, "input {i}: {ratio}");
    }
    // Too few observations for the posterior: a clear error, no sampling.
    let few = load_str(
        "[inputs.a]\nobservations = [1.0, 1.2]\n[inputs.b]\nobservations = [2.0, 2.1]\n\
         [inputs.c]\nobservations = [3.0, 3.3]\n\
         [[observed_together]]\ninputs = [\"a\", \"b\", \"c\"]\n\
         [[measurands]]\nname = \"y\"\nformula = \"a + b + c\"\n",
        "t.toml",
    );
    if let Ok(few) = few {
        let e = groups(&few).unwrap_err();
        assert!(e.contains("more observations than quantities"), "{e}");
    }
}
