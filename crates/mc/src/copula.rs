//! The parameters of a Gaussian copula that give its marginals a stated
//! product-moment (Pearson) correlation.
//!
//! JCGM 101:2008, 6.4.8 samples correlated Gaussian inputs jointly; for
//! other marginals a Gaussian copula is used here: z = L_ρ g, x_i =
//! F_i⁻¹(Φ(z_i)). A stated correlation coefficient r (JCGM 100:2008, 5.2.2)
//! is the correlation of the inputs themselves, and the copula parameter ρ
//! that gives it is not r: for two rectangular marginals the correlation is
//! (6/π)·asin(ρ/2) (Pearson, 1907; recalled from memory and checked by
//! simulation in `crates/mc/tests/copula.rs`), so ρ = 2 sin(πr/6).
//!
//! In general (derivation): write the standardised transform of each
//! marginal, h(z) = (F⁻¹(Φ(z)) − μ)/σ, in the orthonormal Hermite
//! polynomials ψ_k = He_k/√k!, h = Σ_{k≥1} a_k ψ_k with Σ a_k² = 1. For
//! standard normals with correlation ρ, E[ψ_j(z₁) ψ_k(z₂)] = δ_jk ρ^k
//! (Mehler's formula), so the correlation of the two inputs is
//! g(ρ) = Σ_k a_k b_k ρ^k, a polynomial in ρ, increasing on [−1, 1] when
//! both transforms are increasing. The coefficients come from the
//! trapezoidal rule on z ∈ [−12, 12] (spectrally accurate for these smooth,
//! rapidly decaying integrands) and ρ from g(ρ) = r by bisection. Closed
//! forms are used where they exist: ρ = r for two normals, ρ = r/a₁ when
//! one marginal is normal (only the k = 1 term remains), and
//! ρ = 2 sin(πr/6) for two rectangular marginals. An r outside
//! [g(−1), g(1)] cannot be reached by these marginals and is refused.
//!
//! Left out: marginals without a finite variance (t with ν ≤ 2) have no
//! product-moment correlation; their stated coefficient is used as the
//! copula parameter and the report says so.

use crate::sample::Marginal;

/// Number of Hermite coefficients kept (degree 1 to `DEGREE`).
const DEGREE: usize = 48;
/// Half-width of the z range of the quadrature.
const Z_MAX: f64 = 12.0;
/// Points of the trapezoidal rule on [−Z_MAX, Z_MAX].
const POINTS: usize = 4801;

/// The standardised Hermite coefficients a_1..a_DEGREE of one marginal's
/// transform h(z) = (F⁻¹(Φ(z)) − μ)/σ, or `None` when the marginal has no
/// finite positive variance (a fixed value, t with ν ≤ 2).
#[derive(Clone, Debug)]
pub struct Transform {
    kind: Kind,
    coefficients: Vec<f64>,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    Normal,
    Rectangular,
    Other,
}

impl Transform {
    /// The transform of `m`; `None` without a finite positive variance.
    pub fn of(m: &Marginal) -> Option<Transform> {
        let kind = match m {
            Marginal::Fixed(_) => return None,
            Marginal::T { nu, .. } if *nu <= 2.0 => return None,
            Marginal::Normal { .. } => Kind::Normal,
            Marginal::Rectangular { .. } => Kind::Rectangular,
            _ => Kind::Other,
        };
        if kind == Kind::Normal {
            let mut c = vec![0.0; DEGREE];
            c[0] = 1.0;
            return Some(Transform {
                kind,
                coefficients: c,
            });
        }
        let step = 2.0 * Z_MAX / (POINTS - 1) as f64;
        let phi = |z: f64| (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI).sqrt();
        let zs: Vec<f64> = (0..POINTS).map(|i| -Z_MAX + step * i as f64).collect();
        let values: Vec<f64> = zs
            .iter()
            .map(|&z| m.quantile(crate::sample::normal_cdf(z)))
            .collect();
        let weights: Vec<f64> = zs.iter().map(|&z| phi(z) * step).collect();
        let mean: f64 = values.iter().zip(&weights).map(|(v, w)| v * w).sum();
        let var: f64 = values
            .iter()
            .zip(&weights)
            .map(|(v, w)| (v - mean) * (v - mean) * w)
            .sum();
        if !(var > 0.0 && var.is_finite()) {
            return None;
        }
        let sd = var.sqrt();
        let mut coefficients = vec![0.0; DEGREE];
        for ((&z, &v), &w) in zs.iter().zip(&values).zip(&weights) {
            let h = (v - mean) / sd * w;
            // ψ_0 = 1, ψ_1 = z, ψ_{k+1} = (z ψ_k − √k ψ_{k−1})/√(k+1).
            let (mut prev, mut cur) = (1.0, z);
            for (k, c) in coefficients.iter_mut().enumerate() {
                *c += h * cur;
                let kk = (k + 1) as f64;
                let next = (z * cur - kk.sqrt() * prev) / (kk + 1.0).sqrt();
                prev = cur;
                cur = next;
            }
        }
        Some(Transform { kind, coefficients })
    }

    /// g(ρ) = Σ a_k b_k ρ^k: the correlation of the two marginals for the
    /// copula parameter ρ.
    pub fn correlation(&self, other: &Transform, rho: f64) -> f64 {
        let mut s = 0.0;
        let mut p = 1.0;
        for (a, b) in self.coefficients.iter().zip(&other.coefficients) {
            p *= rho;
            s += a * b * p;
        }
        s
    }
}

/// The copula parameter ρ that gives the pair the Pearson correlation `r`,
/// or the range of correlations the pair can have when `r` lies outside.
///
/// ```
/// use incertus_mc::copula::{parameter, Transform};
/// use incertus_mc::Marginal;
/// let u = Transform::of(&Marginal::Rectangular { x: 0.0, a: 1.0 }).unwrap();
/// let rho = parameter(&u, &u, 0.9).unwrap();
/// assert!((rho - 2.0 * (std::f64::consts::PI * 0.9 / 6.0).sin()).abs() < 1e-15);
/// ```
pub fn parameter(a: &Transform, b: &Transform, r: f64) -> Result<f64, (f64, f64)> {
    if r == 0.0 {
        return Ok(0.0);
    }
    match (a.kind, b.kind) {
        (Kind::Normal, Kind::Normal) => return Ok(r),
        (Kind::Rectangular, Kind::Rectangular) => {
            return Ok(2.0 * (std::f64::consts::PI * r / 6.0).sin());
        }
        (Kind::Normal, _) | (_, Kind::Normal) => {
            let a1 = if a.kind == Kind::Normal {
                b.coefficients[0]
            } else {
                a.coefficients[0]
            };
            let rho = r / a1;
            return if rho.abs() <= 1.0 {
                Ok(rho)
            } else {
                Err((-a1, a1))
            };
        }
        _ => {}
    }
    let (lo, hi) = (a.correlation(b, -1.0), a.correlation(b, 1.0));
    if r < lo || r > hi {
        return Err((lo, hi));
    }
    // g is increasing on [−1, 1] for increasing transforms: bisection.
    let (mut x0, mut x1) = (-1.0f64, 1.0f64);
    for _ in 0..200 {
        let mid = 0.5 * (x0 + x1);
        if a.correlation(b, mid) < r {
            x0 = mid;
        } else {
            x1 = mid;
        }
        if x1 - x0 <= 1e-15 {
            break;
        }
    }
    Ok(0.5 * (x0 + x1))
}
