//! Effective degrees of freedom (Welch-Satterthwaite, JCGM 100:2008, G.4.1)
//! and coverage factors from Student's t distribution (G.3, G.4, Table G.2).

use statrs::distribution::{ContinuousCDF, Normal, StudentsT};

use crate::model::{Dof, DofRounding};

/// ν_eff = u_c⁴ / Σ u_i⁴/ν_i (JCGM 100:2008, G.4.1, eq. G.2b), for
/// independent components `(u_i, ν_i)` with u_i = |c_i| u(x_i).
/// Components with infinite dof add nothing to the sum; `None` (infinite)
/// when all do. The sum is scaled by u_c before raising to the fourth power,
/// so that uncertainties near 1e-40 or 1e40 neither underflow nor overflow.
pub fn welch_satterthwaite(uc: f64, components: &[(f64, Dof)]) -> Dof {
    if uc == 0.0 || !uc.is_finite() {
        return None;
    }
    let mut denom = 0.0;
    for &(u, nu) in components {
        if let Some(nu) = nu {
            let r = u / uc;
            denom += r * r * r * r / nu;
        }
    }
    if denom == 0.0 {
        None
    } else {
        Some(1.0 / denom)
    }
}

/// The degrees of freedom used for the coverage factor: ν_eff truncated to
/// the next lower integer (G.4.1) or as computed, but never below 1.
pub fn dof_used(nu_eff: Dof, rounding: DofRounding) -> Dof {
    nu_eff.map(|v| match rounding {
        DofRounding::Truncate => v.floor().max(1.0),
        DofRounding::Exact => v.max(1.0),
    })
}

/// Coverage factor k_p = t_p(ν) for coverage probability p: the
/// (1 + p)/2 quantile of Student's t with ν dof, or of the standard normal
/// for infinite dof (JCGM 100:2008, G.3.2 and G.3.4).
pub fn coverage_factor(p: f64, dof: Dof) -> f64 {
    let q = 0.5 * (1.0 + p);
    match dof {
        None => Normal::new(0.0, 1.0)
            .expect("the standard normal exists")
            .inverse_cdf(q),
        Some(nu) => StudentsT::new(0.0, 1.0, nu)
            .expect("dof is positive")
            .inverse_cdf(q),
    }
}
