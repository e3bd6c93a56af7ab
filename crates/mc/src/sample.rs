//! Sampling from the distributions of JCGM 101:2008, 6.4, and the joint
//! distributions of correlated inputs.
//!
//! Every sampler draws from one `Xoshiro256PlusPlus` stream per block of
//! trials, in a fixed order (input by input, trial by trial), so a seed fixes
//! every value whatever the number of threads.
//!
//! - Gaussian (6.4.7): x + u·z, z standard normal (ziggurat of `rand_distr`).
//! - Scaled and shifted t (6.4.9): x + u·t_ν; for a Type A input
//!   u = s/√n and ν = n − 1, which is JCGM 101's t_ν(x̄, s²/n). For ν ≥ 2,
//!   t = z·√(ν/W) with W = 2G and G gamma by Marsaglia and Tsang's method,
//!   inline; below, `rand_distr::StudentT`.
//! - Rectangular (6.4.2): x + a(2r − 1).
//! - Curvilinear trapezoid (6.4.3.4): limits a_s = x − a + d(2r₁ − 1) and its
//!   mirror, then a rectangular draw between them.
//! - Trapezoidal (6.4.4.4): the sum of two rectangular draws of half-widths
//!   a(1 + β)/2 and a(1 − β)/2.
//! - Triangular (6.4.5.4): x + a(r₁ + r₂ − 1).
//! - Arc sine (6.4.6): x + a·sin(π(r − ½)), the inverse distribution
//!   function, with a polynomial sine (no branch, no library call).
//! - Exponential (6.4.10): mean x; gamma (6.4.11): shape and scale.
//! - Multivariate Gaussian (6.4.8): x + L z with L Lᵀ the covariance matrix
//!   (Cholesky; a semi-definite matrix gives zero columns, which is exact).
//! - Multivariate t for inputs observed together (6.4.9.7 and 5.2.3): all
//!   members share ν = n − 1: x + L z·√(ν/w), w ~ χ²_ν one per trial, with
//!   L Lᵀ = S/n the covariance of the means.
//! - Any other correlated group (non-Gaussian or mixed marginals): a Gaussian
//!   copula. Correlated standard normals z = L_R g (L_R from the correlation
//!   matrix) are mapped to uniforms Φ(z) and through each marginal's inverse
//!   distribution function. The copula's parameters are chosen so that the
//!   sampled inputs have the stated product-moment correlations
//!   (`crate::copula`).

use incertus_gum::matrix::cholesky_semidefinite;
use incertus_gum::{Distribution, Evaluation, Model};
use rand::RngExt;
use rand_distr::{ChiSquared, Distribution as _, Exp1, Gamma, StandardNormal, StudentT};
use rand_xoshiro::Xoshiro256PlusPlus;
use statrs::distribution::{ContinuousCDF, Normal as StatNormal};

/// The random stream of one block.
pub type Stream = Xoshiro256PlusPlus;

/// The marginal distribution of one input as sampled.
#[derive(Clone, Debug)]
pub enum Marginal {
    /// A fixed value.
    Fixed(f64),
    /// Normal.
    Normal {
        /// Mean.
        x: f64,
        /// Standard deviation.
        u: f64,
    },
    /// Scaled and shifted t.
    T {
        /// Location.
        x: f64,
        /// Scale (the standard uncertainty).
        u: f64,
        /// Degrees of freedom.
        nu: f64,
        /// The standard t sampler.
        t: StudentT<f64>,
    },
    /// Rectangular.
    Rectangular {
        /// Centre.
        x: f64,
        /// Half-width.
        a: f64,
    },
    /// Curvilinear trapezoid.
    CurvilinearTrapezoidal {
        /// Centre.
        x: f64,
        /// Half-width.
        a: f64,
        /// Half-width of the interval each limit lies in.
        d: f64,
    },
    /// Trapezoid.
    Trapezoidal {
        /// Centre.
        x: f64,
        /// Half-width of the base.
        a: f64,
        /// Top half-width over base half-width.
        beta: f64,
    },
    /// Triangular.
    Triangular {
        /// Centre.
        x: f64,
        /// Half-width.
        a: f64,
    },
    /// Arc sine.
    Arcsine {
        /// Centre.
        x: f64,
        /// Half-width.
        a: f64,
    },
    /// Exponential.
    Exponential {
        /// Mean.
        mean: f64,
    },
    /// Gamma.
    Gamma {
        /// The gamma sampler.
        g: Gamma<f64>,
    },
}

impl Marginal {
    fn of(model: &Model, i: usize) -> Result<Marginal, String> {
        let inp = &model.inputs[i];
        let x = inp.estimate;
        let u = inp.standard_uncertainty;
        if u == 0.0 {
            return Ok(Marginal::Fixed(x));
        }
        Ok(match inp.distribution {
            Distribution::Exact => Marginal::Fixed(x),
            Distribution::Normal => Marginal::Normal { x, u },
            Distribution::StudentT => {
                let nu = inp
                    .dof
                    .ok_or_else(|| format!("`{}` has a t distribution but no dof", inp.name))?;
                Marginal::T {
                    x,
                    u,
                    nu,
                    t: StudentT::new(nu).map_err(|e| format!("`{}`: {e}", inp.name))?,
                }
            }
            Distribution::Rectangular { half_width } => Marginal::Rectangular { x, a: half_width },
            Distribution::CurvilinearTrapezoidal {
                half_width,
                limit_half_width,
            } => Marginal::CurvilinearTrapezoidal {
                x,
                a: half_width,
                d: limit_half_width,
            },
            Distribution::Trapezoidal { half_width, beta } => Marginal::Trapezoidal {
                x,
                a: half_width,
                beta,
            },
            Distribution::Triangular { half_width } => Marginal::Triangular { x, a: half_width },
            Distribution::Arcsine { half_width } => Marginal::Arcsine { x, a: half_width },
            Distribution::Exponential => Marginal::Exponential { mean: x },
            Distribution::Gamma { shape, scale } => Marginal::Gamma {
                g: Gamma::new(shape, scale).map_err(|e| format!("`{}`: {e}", inp.name))?,
            },
        })
    }

    /// Fill `out` with independent draws.
    pub fn fill(&self, rng: &mut Stream, out: &mut [f64]) {
        match self {
            Marginal::Fixed(x) => out.fill(*x),
            Marginal::Normal { x, u } => {
                for o in out {
                    let z: f64 = rng.sample(StandardNormal);
                    *o = x + u * z;
                }
            }
            Marginal::T { x, u, nu, t } => {
                if *nu < 2.0 {
                    for o in out {
                        *o = x + u * t.sample(rng);
                    }
                } else {
                    // t = z·√(ν/W), W = 2G, G ~ Gamma(ν/2, 1) by Marsaglia and
                    // Tsang's method (ACM TOMS 26, 363 (2000), from memory):
                    // d = ν/2 − 1/3, c = 1/√(9d), G = d·v³ with v = 1 + c·z'
                    // accepted by the squeeze or the log test.
                    let d = 0.5 * nu - 1.0 / 3.0;
                    let c = 1.0 / (9.0 * d).sqrt();
                    for o in out {
                        let g = loop {
                            let zg: f64 = rng.sample(StandardNormal);
                            let v = 1.0 + c * zg;
                            if v <= 0.0 {
                                continue;
                            }
                            let v = v * v * v;
                            let r: f64 = rng.random();
                            let z2 = zg * zg;
                            if r < 1.0 - 0.0331 * z2 * z2
                                || r.ln() < 0.5 * z2 + d * (1.0 - v + v.ln())
                            {
                                break d * v;
                            }
                        };
                        let z: f64 = rng.sample(StandardNormal);
                        *o = x + u * z * (nu / (2.0 * g)).sqrt();
                    }
                }
            }
            Marginal::Rectangular { x, a } => {
                for o in out {
                    let r: f64 = rng.random();
                    *o = x + a * (2.0 * r - 1.0);
                }
            }
            Marginal::CurvilinearTrapezoidal { x, a, d } => {
                for o in out {
                    let r1: f64 = rng.random();
                    let r2: f64 = rng.random();
                    let w = a + d * (2.0 * r1 - 1.0);
                    *o = x + w * (2.0 * r2 - 1.0);
                }
            }
            Marginal::Trapezoidal { x, a, beta } => {
                let (w1, w2) = (a * (1.0 + beta), a * (1.0 - beta));
                for o in out {
                    let r1: f64 = rng.random();
                    let r2: f64 = rng.random();
                    *o = x + w1 * (r1 - 0.5) + w2 * (r2 - 0.5);
                }
            }
            Marginal::Triangular { x, a } => {
                for o in out {
                    let r1: f64 = rng.random();
                    let r2: f64 = rng.random();
                    *o = x + a * (r1 + r2 - 1.0);
                }
            }
            Marginal::Arcsine { x, a } => {
                // Inverse distribution function x + a·sin(π(r − ½)) with a
                // branch-free polynomial for sin on [−π/2, π/2].
                for o in out {
                    let r: f64 = rng.random();
                    *o = x + a * sin_half_pi_range(std::f64::consts::PI * (r - 0.5));
                }
            }
            Marginal::Exponential { mean } => {
                for o in out {
                    let e: f64 = rng.sample(Exp1);
                    *o = mean * e;
                }
            }
            Marginal::Gamma { g } => {
                for o in out {
                    *o = g.sample(rng);
                }
            }
        }
    }

    /// The inverse distribution function at probability `p` (for the
    /// Gaussian copula).
    pub(crate) fn quantile(&self, p: f64) -> f64 {
        let p = p.clamp(1e-300, 1.0 - 1e-16);
        match self {
            Marginal::Fixed(x) => *x,
            Marginal::Normal { x, u } => x + u * std_normal().inverse_cdf(p),
            Marginal::T { x, u, nu, .. } => {
                x + u * incertus_gum::coverage::student_t_quantile(p, *nu)
            }
            Marginal::Rectangular { x, a } => x + a * (2.0 * p - 1.0),
            Marginal::Triangular { x, a } => {
                if p < 0.5 {
                    x - a + a * (2.0 * p).sqrt()
                } else {
                    x + a - a * (2.0 * (1.0 - p)).sqrt()
                }
            }
            Marginal::Arcsine { x, a } => {
                x + a * sin_half_pi_range(std::f64::consts::PI * (p - 0.5))
            }
            Marginal::Trapezoidal { x, a, beta } => trapezoid_quantile(*x, *a, *beta, p),
            Marginal::CurvilinearTrapezoidal { x, a, d } => {
                // Numerical inversion of the mixture CDF by bisection.
                let cdf = |v: f64| curvilinear_cdf(v - x, *a, *d);
                bisect(cdf, p, x - a - d, x + a + d)
            }
            Marginal::Exponential { mean } => -mean * (1.0 - p).ln(),
            Marginal::Gamma { g } => {
                let _ = g;
                f64::NAN // refused when the copula is built
            }
        }
    }
}

/// sin θ for |θ| ≤ π/2 by its Taylor series to θ¹⁹ in Horner form: the
/// first omitted term is below (π/2)²¹/21! = 2.5e-16, so the result is
/// within a few units in the last place of `f64::sin`, with no branch (so
/// the sampling loop vectorises).
#[inline(always)]
fn sin_half_pi_range(t: f64) -> f64 {
    const C: [f64; 10] = [
        1.0,
        -1.0 / 6.0,
        1.0 / 120.0,
        -1.0 / 5040.0,
        1.0 / 362_880.0,
        -1.0 / 39_916_800.0,
        1.0 / 6_227_020_800.0,
        -1.0 / 1_307_674_368_000.0,
        1.0 / 355_687_428_096_000.0,
        -1.0 / 121_645_100_408_832_000.0,
    ];
    let t2 = t * t;
    let mut p = C[9];
    for c in C[..9].iter().rev() {
        p = p * t2 + c;
    }
    t * p
}

/// Φ(z), the standard normal distribution function.
pub(crate) fn normal_cdf(z: f64) -> f64 {
    std_normal().cdf(z)
}

fn std_normal() -> StatNormal {
    StatNormal::new(0.0, 1.0).expect("the standard normal exists")
}

fn trapezoid_quantile(x: f64, a: f64, beta: f64, p: f64) -> f64 {
    // Symmetric trapezoid on [-a, a] with top [-βa, βa]; height h = 1/(a(1+β)).
    if beta >= 1.0 {
        return x + a * (2.0 * p - 1.0);
    }
    let h = 1.0 / (a * (1.0 + beta));
    let ramp = a * (1.0 - beta); // width of each sloping side
    let p_ramp = 0.5 * h * ramp; // probability in one side
    let q = if p < 0.5 { p } else { 1.0 - p };
    let off = if q <= p_ramp {
        // q = h t² / (2 ramp), t from -a
        -a + (2.0 * q * ramp / h).sqrt()
    } else {
        -a * beta + (q - p_ramp) / h
    };
    if p < 0.5 {
        x + off
    } else {
        x - off
    }
}

/// CDF of the curvilinear trapezoid centred at 0: a rectangular with
/// half-width w uniform on [a − d, a + d].
fn curvilinear_cdf(v: f64, a: f64, d: f64) -> f64 {
    if d == 0.0 {
        return ((v + a) / (2.0 * a)).clamp(0.0, 1.0);
    }
    // Average of the rectangular CDF over w, by Simpson's rule.
    let n = 64;
    let h = 2.0 * d / n as f64;
    let f = |w: f64| ((v + w) / (2.0 * w)).clamp(0.0, 1.0);
    let mut s = f(a - d) + f(a + d);
    for k in 1..n {
        let w = a - d + k as f64 * h;
        s += if k % 2 == 1 { 4.0 } else { 2.0 } * f(w);
    }
    s * h / 3.0 / (2.0 * d)
}

fn bisect(f: impl Fn(f64) -> f64, p: f64, mut lo: f64, mut hi: f64) -> f64 {
    for _ in 0..80 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < p {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// How a set of inputs is drawn.
#[derive(Clone, Debug)]
pub enum Group {
    /// One independent input.
    Single {
        /// The input.
        input: usize,
        /// Its distribution.
        marginal: Marginal,
    },
    /// Correlated Gaussian inputs: x + L z.
    Gaussian {
        /// The inputs of the group.
        inputs: Vec<usize>,
        /// Their estimates.
        x: Vec<f64>,
        /// The Cholesky factor of their covariance.
        l: Vec<Vec<f64>>,
    },
    /// Inputs observed together: multivariate t with shared ν.
    MultiT {
        /// The inputs of the group.
        inputs: Vec<usize>,
        /// Their estimates.
        x: Vec<f64>,
        /// The Cholesky factor of the scale matrix.
        l: Vec<Vec<f64>>,
        /// Degrees of freedom.
        nu: f64,
        /// The χ² sampler of the t mixture.
        chi: ChiSquared<f64>,
        /// Variance of the draws over the first-order u² of each member:
        /// ν/(ν − 2) times the scale factor (infinite for ν ≤ 2).
        variance_factor: f64,
    },
    /// Correlated inputs with other marginals: Gaussian copula.
    Copula {
        /// The inputs of the group.
        inputs: Vec<usize>,
        /// The Cholesky factor of their correlation matrix.
        l: Vec<Vec<f64>>,
        /// The marginal of each input.
        marginals: Vec<Marginal>,
    },
}

/// How the correlated groups are sampled, in words for the report.
pub fn describe(groups: &[Group], model: &Model) -> Vec<String> {
    let names = |ix: &[usize]| {
        ix.iter()
            .map(|&i| model.inputs[i].name.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    };
    groups
        .iter()
        .filter_map(|g| match g {
            Group::Single { .. } => None,
            Group::Gaussian { inputs, .. } => Some(format!(
                "{}: multivariate Gaussian (JCGM 101:2008, 6.4.8), by Cholesky factorisation",
                names(inputs)
            )),
            Group::MultiT { inputs, nu, .. } => Some(format!(
                "{}: multivariate t with {nu} dof (observations taken together: n − N; a fit: its residual \
                 dof; JCGM 101:2008, 6.4.8 and 6.4.9)",
                names(inputs)
            )),
            Group::Copula { inputs, .. } => Some(format!(
                "{}: Gaussian copula whose parameters are chosen so that the sampled inputs have \
                 the stated correlation coefficients (the marginals keep their own distributions; \
                 a t marginal with ν ≤ 2 has no finite variance, and its coefficient is the \
                 copula's own)",
                names(inputs)
            )),
        })
        .collect()
}

/// ν/(ν − 2): the variance of a t distribution with ν dof over the square
/// of its scale (infinite for ν ≤ 2; JCGM 101:2008, 6.4.9.4).
pub fn t_variance_factor(nu: f64) -> f64 {
    if nu > 2.0 {
        nu / (nu - 2.0)
    } else {
        f64::INFINITY
    }
}

impl Group {
    /// Each sampled input's variance over its first-order u², for inputs
    /// drawn from t distributions (Type A inputs, fit parameters, quantities
    /// observed together); other inputs are left out.
    pub fn t_variance_factors(&self) -> Vec<(usize, f64)> {
        match self {
            Group::Single {
                input,
                marginal: Marginal::T { nu, .. },
            } => vec![(*input, t_variance_factor(*nu))],
            Group::MultiT {
                inputs,
                variance_factor,
                ..
            } => inputs.iter().map(|&i| (i, *variance_factor)).collect(),
            _ => Vec::new(),
        }
    }
}

/// The groups of a model: connected components of non-zero correlations.
pub fn groups(model: &Model) -> Result<Vec<Group>, String> {
    let n = model.inputs.len();
    let mut comp: Vec<usize> = (0..n).collect();
    fn find(c: &mut [usize], mut i: usize) -> usize {
        while c[i] != i {
            c[i] = c[c[i]];
            i = c[i];
        }
        i
    }
    for c in &model.correlations {
        if c.coefficient != 0.0 {
            let (a, b) = (find(&mut comp, c.a), find(&mut comp, c.b));
            comp[a] = b;
        }
    }
    let roots: Vec<usize> = (0..n).map(|i| find(&mut comp, i)).collect();
    let mut out = Vec::new();
    let mut done = vec![false; n];
    for i in 0..n {
        if done[i] {
            continue;
        }
        let members: Vec<usize> = (0..n).filter(|&j| roots[j] == roots[i]).collect();
        for &m in &members {
            done[m] = true;
        }
        if members.len() == 1 {
            out.push(Group::Single {
                input: i,
                marginal: Marginal::of(model, i)?,
            });
            continue;
        }
        out.push(correlated_group(model, members)?);
    }
    Ok(out)
}

/// The sampler of a group of correlated inputs: jointly normal, a
/// multivariate t, or a Gaussian copula of the marginals.
fn correlated_group(model: &Model, members: Vec<usize>) -> Result<Group, String> {
    let k = members.len();
    let u: Vec<f64> = members
        .iter()
        .map(|&m| model.inputs[m].standard_uncertainty)
        .collect();
    let x: Vec<f64> = members.iter().map(|&m| model.inputs[m].estimate).collect();
    let mut r = vec![vec![0.0; k]; k];
    for a in 0..k {
        for b in 0..k {
            r[a][b] = model.correlation(members[a], members[b]);
        }
    }
    let group_names: Vec<&str> = members
        .iter()
        .map(|&j| model.inputs[j].name.as_str())
        .collect();
    let member_ix = members.clone();
    let chol = |m: &[Vec<f64>]| {
        cholesky_semidefinite(m).map_err(|row| {
            format!(
                "the correlation matrix of {} is not positive semi-definite (at `{}`), so the \
                 inputs cannot be sampled jointly",
                group_names.join(", "),
                model.inputs[member_ix[row]].name
            )
        })
    };
    let dists: Vec<&Distribution> = members
        .iter()
        .map(|&m| &model.inputs[m].distribution)
        .collect();
    let all_normal = dists.iter().all(|d| matches!(d, Distribution::Normal));
    let observed = model
        .correlations
        .iter()
        .filter(|c| members.contains(&c.a))
        .all(|c| c.from_observations);
    let dofs: Vec<Option<f64>> = members.iter().map(|&m| model.inputs[m].dof).collect();
    let same_t = dists.iter().all(|d| matches!(d, Distribution::StudentT))
        && observed
        && dofs.iter().all(|d| d.is_some() && *d == dofs[0]);
    // Covariance of the group.
    let cov: Vec<Vec<f64>> = (0..k)
        .map(|a| (0..k).map(|b| r[a][b] * u[a] * u[b]).collect())
        .collect();
    if all_normal {
        Ok(Group::Gaussian {
            inputs: members,
            x,
            l: chol(&cov)?,
        })
    } else if same_t {
        // Quantities observed together (no fit among the correlations):
        // N quantities from n joint observations have, under the
        // non-informative prior, a multivariate t posterior with
        // ν = n − N and scale matrix C/(n(n − N)), C = Σ (x_k − x̄)(x_k − x̄)ᵀ
        // = (n − 1)·S (JCGM 101:2008, 6.4.8.1; Gelman et al., Bayesian Data
        // Analysis, 3.6; both recalled from memory, and checked by the
        // variance (n − 1)/(n − N − 2)·S/n in crates/mc/tests/samplers.rs).
        // The parameters of one fit keep their residual dof (the scale
        // matrix is s²(XᵀX)⁻¹ already).
        let together = model
            .correlations
            .iter()
            .filter(|c| members.contains(&c.a))
            .all(|c| c.from_fit.is_none());
        let n_obs = members
            .iter()
            .map(|&m| match model.inputs[m].evaluation {
                Evaluation::TypeA { n, pooled: false } => Some(n),
                _ => None,
            })
            .collect::<Option<Vec<usize>>>()
            .filter(|ns| ns.iter().all(|&n| n == ns[0]))
            .map(|ns| ns[0]);
        let (nu, cov, scale_factor) = match (together, n_obs) {
            (true, Some(n)) => {
                if n <= k {
                    return Err(format!(
                        "{} are observed together {n} times: propagation of distributions needs \
                         more observations than quantities ({k}) to sample them jointly \
                         (multivariate t with n − N = {} dof)",
                        group_names.join(", "),
                        n as i64 - k as i64
                    ));
                }
                let f = (n as f64 - 1.0) / (n - k) as f64;
                let scaled: Vec<Vec<f64>> = cov
                    .iter()
                    .map(|row| row.iter().map(|v| v * f).collect())
                    .collect();
                ((n - k) as f64, scaled, f)
            }
            _ => (dofs[0].expect("checked"), cov, 1.0),
        };
        Ok(Group::MultiT {
            inputs: members,
            x,
            l: chol(&cov)?,
            nu,
            chi: ChiSquared::new(nu).map_err(|e| e.to_string())?,
            variance_factor: t_variance_factor(nu) * scale_factor,
        })
    } else {
        let marginals: Vec<Marginal> = members
            .iter()
            .map(|&m| Marginal::of(model, m))
            .collect::<Result<_, _>>()?;
        if let Some(pos) = marginals
            .iter()
            .position(|m| matches!(m, Marginal::Gamma { .. }))
        {
            return Err(format!(
                "`{}` has a gamma distribution and is correlated; correlated gamma inputs are not \
                 supported",
                model.inputs[members[pos]].name
            ));
        }
        let rho = copula_parameters(model, &members, &marginals, &r)?;
        let l = cholesky_semidefinite(&rho).map_err(|_| {
            format!(
                "the correlation coefficients of {} need Gaussian-copula parameters that form no \
                 valid correlation matrix, so these marginals cannot be sampled with them jointly",
                group_names.join(", ")
            )
        })?;
        Ok(Group::Copula {
            inputs: members,
            l,
            marginals,
        })
    }
}

/// The copula parameter of every pair, so that the sampled inputs have the
/// stated product-moment correlations (`crate::copula`); a coefficient the
/// two marginals cannot have is refused with the range they can.
fn copula_parameters(
    model: &Model,
    members: &[usize],
    marginals: &[Marginal],
    r: &[Vec<f64>],
) -> Result<Vec<Vec<f64>>, String> {
    let k = members.len();
    let transforms: Vec<Option<crate::copula::Transform>> =
        marginals.iter().map(crate::copula::Transform::of).collect();
    let mut rho = r.to_vec();
    for a in 0..k {
        for b in a + 1..k {
            if r[a][b] == 0.0 {
                continue;
            }
            let (Some(ta), Some(tb)) = (&transforms[a], &transforms[b]) else {
                continue;
            };
            let p = crate::copula::parameter(ta, tb, r[a][b]).map_err(|(lo, hi)| {
                format!(
                    "`{}` and `{}` are stated with the correlation coefficient {}, which their \
                     distributions cannot have jointly (with these marginals it lies between \
                     {lo:.4} and {hi:.4})",
                    model.inputs[members[a]].name, model.inputs[members[b]].name, r[a][b]
                )
            })?;
            rho[a][b] = p;
            rho[b][a] = p;
        }
    }
    Ok(rho)
}

impl Group {
    /// Draw `len` trials into the input columns (`columns[input][..len]`),
    /// using `scratch` (at least `k × len` values for a group of k).
    pub fn fill(
        &self,
        rng: &mut Stream,
        columns: &mut [Vec<f64>],
        len: usize,
        scratch: &mut Vec<f64>,
    ) {
        match self {
            Group::Single { input, marginal } => marginal.fill(rng, &mut columns[*input][..len]),
            Group::Gaussian { inputs, x, l } => {
                let z = normals(rng, inputs.len(), len, scratch);
                for (a, &i) in inputs.iter().enumerate() {
                    let col = &mut columns[i][..len];
                    col.fill(x[a]);
                    for (b, &lab) in l[a].iter().enumerate().take(a + 1) {
                        if lab != 0.0 {
                            for (c, zt) in col.iter_mut().zip(&z[b * len..(b + 1) * len]) {
                                *c += lab * zt;
                            }
                        }
                    }
                }
            }
            Group::MultiT {
                inputs,
                x,
                l,
                nu,
                chi,
                ..
            } => {
                let k = inputs.len();
                let z = normals(rng, k + 1, len, scratch);
                // The last row holds √(ν/w), one per trial.
                let (zs, scale) = z.split_at_mut(k * len);
                for s in scale.iter_mut() {
                    let w = chi.sample(rng);
                    *s = (nu / w).sqrt();
                }
                for (a, &i) in inputs.iter().enumerate() {
                    let col = &mut columns[i][..len];
                    col.fill(0.0);
                    for (b, &lab) in l[a].iter().enumerate().take(a + 1) {
                        if lab != 0.0 {
                            for (c, zt) in col.iter_mut().zip(&zs[b * len..(b + 1) * len]) {
                                *c += lab * zt;
                            }
                        }
                    }
                    for (c, s) in col.iter_mut().zip(scale.iter()) {
                        *c = x[a] + *c * s;
                    }
                }
            }
            Group::Copula {
                inputs,
                l,
                marginals,
            } => {
                let k = inputs.len();
                let z = normals(rng, k, len, scratch);
                let phi = std_normal();
                for (a, &i) in inputs.iter().enumerate() {
                    let col = &mut columns[i][..len];
                    col.fill(0.0);
                    for (b, &lab) in l[a].iter().enumerate().take(a + 1) {
                        if lab != 0.0 {
                            for (c, zt) in col.iter_mut().zip(&z[b * len..(b + 1) * len]) {
                                *c += lab * zt;
                            }
                        }
                    }
                    for c in col.iter_mut() {
                        *c = marginals[a].quantile(phi.cdf(*c));
                    }
                }
            }
        }
    }
}

/// `rows × len` standard normals in `scratch`, row by row.
fn normals<'a>(
    rng: &mut Stream,
    rows: usize,
    len: usize,
    scratch: &'a mut Vec<f64>,
) -> &'a mut [f64] {
    scratch.resize(rows * len, 0.0);
    for v in scratch.iter_mut() {
        *v = rng.sample(StandardNormal);
    }
    &mut scratch[..rows * len]
}

#[cfg(test)]
mod tests {
    #[test]
    fn polynomial_sine_matches_the_library_sine() {
        for k in -1000..=1000 {
            let t = std::f64::consts::FRAC_PI_2 * k as f64 / 1000.0;
            let (a, b) = (super::sin_half_pi_range(t), t.sin());
            assert!((a - b).abs() <= 4.0 * f64::EPSILON, "{t}: {a} vs {b}");
        }
    }
}
