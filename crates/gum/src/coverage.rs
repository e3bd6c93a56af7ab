//! Effective degrees of freedom (Welch-Satterthwaite, JCGM 100:2008, G.4.1)
//! and coverage factors from Student's t distribution (G.3, G.4, Table G.2).

use statrs::distribution::{Continuous, ContinuousCDF, Normal, StudentsT};

/// Degrees of freedom: `None` means infinite.
pub type Dof = Option<f64>;

/// How ν_eff becomes the dof used for the coverage factor (serialised
/// "truncate", "exact").
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum DofRounding {
    /// To the next lower integer (JCGM 100:2008, G.4.1 and G.6.4).
    Truncate,
    /// Use ν_eff as computed (Student's t accepts any positive ν).
    Exact,
}

/// ν_eff = u_c⁴ / Σ u_i⁴/ν_i (JCGM 100:2008, G.4.1, eq. G.2b), for
/// independent components `(u_i, ν_i)` with u_i = |c_i| u(x_i).
/// Components with infinite dof add nothing to the sum; `None` (infinite)
/// when all do. The sum is scaled by u_c before raising to the fourth power,
/// so that uncertainties near 1e-40 or 1e40 neither underflow nor overflow.
pub fn welch_satterthwaite(uc: f64, components: &[(f64, Dof)]) -> Dof {
    if uc == 0.0 || !uc.is_finite() {
        return None;
    }
    // In units of the largest finite-dof component's ν: a single component
    // carrying all of u_c then returns its ν exactly.
    let (mut big, mut nu_ref) = (0.0f64, None);
    for &(u, nu) in components {
        if let Some(nu) = nu {
            if u.abs() >= big {
                big = u.abs();
                nu_ref = Some(nu);
            }
        }
    }
    let nu_ref = nu_ref?;
    let mut denom = 0.0;
    for &(u, nu) in components {
        if let Some(nu) = nu {
            let r = u / uc;
            let r2 = r * r;
            denom += if nu == nu_ref {
                r2 * r2
            } else {
                r2 * r2 * (nu_ref / nu)
            };
        }
    }
    if denom == 0.0 {
        None
    } else {
        Some(snap_to_integer(nu_ref / denom))
    }
}

/// Effective degrees of freedom of u_c² = Σ_ij w_i w_j r_ij (w_i = c_i
/// u(x_i)) when inputs are correlated.
///
/// Derivation (Satterthwaite's matching of two moments, the argument behind
/// JCGM 100:2008, G.4.1, carried through the correlation terms). The inputs
/// fall into *blocks* whose standard uncertainties share one estimated
/// scale: a single input, the inputs observed together (JCGM 100:2008,
/// 5.2.3: one sample covariance matrix, Wishart with n − 1 dof), or the
/// parameters of one fit (covariance s²(XᵀX)⁻¹, one residual variance).
/// Write the estimate of block B's uncertainties as λ_B times their true
/// values, λ_B² ~ χ²_ν/ν, the λ_B of different blocks independent (a block
/// of infinite dof has λ = 1). Then the estimated variance is
/// û² = Σ_AB Q_AB λ_A λ_B with Q_AB = Σ_{i∈A, j∈B} w_i w_j r_ij. Its mean
/// and variance follow exactly from the moments E[λ^k] (`scale_moment`),
/// and a scaled χ² with the same two moments has ν_eff = 2 E(û²)²/var(û²).
/// Without correlations between blocks this is exactly eq. (G.2b); a block
/// alone gives exactly its ν (a quadratic form in a Wishart matrix is a
/// scaled χ²). A published generalisation for correlated components
/// appeared in Metrologia in 2007 (R. Willink; recalled from memory, not
/// checked here). The coverage this rule gives is checked by simulating
/// repeated experiments in `crates/gum/tests/effective_dof.rs`.
///
/// `block[i]` names the block of input i (any labels), `block_dof[i]` its
/// dof (`None` = infinite: that block adds nothing). `correlations` lists
/// each correlated pair (i, j, r_ij) of indices into `w` once. `None` when
/// no block with finite dof contributes. The work grows with the number of
/// inputs and correlations, not with its square.
///
/// ```
/// use incertus_gum::coverage::effective_dof_correlated;
/// // Independent, w = (1, 1), 4 dof each: Welch-Satterthwaite gives 2²/(1/4 + 1/4) = 8.
/// let nu = effective_dof_correlated(&[1.0, 1.0], &[], &[0, 1], &[Some(4.0), Some(4.0)]);
/// assert!((nu.unwrap() - 8.0).abs() < 1e-12);
/// ```
pub fn effective_dof_correlated(
    w: &[f64],
    correlations: &[(usize, usize, f64)],
    block: &[usize],
    block_dof: &[Dof],
) -> Dof {
    let n = w.len();
    let scale = w.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    if scale == 0.0 || !scale.is_finite() {
        return None;
    }
    let v: Vec<f64> = w.iter().map(|x| x / scale).collect();
    // Blocks: labels and dof (the least of the members'; None = infinite).
    let mut labels: Vec<usize> = block.to_vec();
    labels.sort_unstable();
    labels.dedup();
    let nb = labels.len();
    let of: Vec<usize> = block
        .iter()
        .map(|b| labels.binary_search(b).expect("a label of the list"))
        .collect();
    let mut nu: Vec<Option<f64>> = vec![None; nb];
    for i in 0..n {
        if let Some(d) = block_dof[i] {
            nu[of[i]] = Some(nu[of[i]].map_or(d, |m: f64| m.min(d)));
        }
    }
    // Q_AB = Σ_{i∈A, j∈B} v_i v_j r_ij over both orders (sparse: the
    // diagonal and the listed correlations).
    let mut q: std::collections::BTreeMap<(usize, usize), f64> = Default::default();
    for i in 0..n {
        *q.entry((of[i], of[i])).or_insert(0.0) += v[i] * v[i];
    }
    for &(i, j, r) in correlations {
        if i == j || r == 0.0 || v[i] == 0.0 || v[j] == 0.0 {
            continue;
        }
        let (a, b) = (of[i].min(of[j]), of[i].max(of[j]));
        *q.entry((a, b)).or_insert(0.0) += 2.0 * v[i] * v[j] * r;
    }
    // Terms of û² = Σ_B Q_BB λ_B² + Σ_{A<B} Q_AB λ_A λ_B, in units of the
    // largest w² (not divided by their total: a single block, or m equal
    // ones, then give their ν exactly, see below).
    let terms: Vec<(f64, usize, usize)> = q
        .iter()
        .filter(|(_, &c)| c != 0.0)
        .map(|(&(a, b), &c)| (c, a, b))
        .collect();
    let total: f64 = terms.iter().map(|t| t.0).sum();
    if total <= 0.0 {
        return None;
    }
    let random = |b: usize| nu[b].is_some();
    // The reference dof: that of the random block with the largest own
    // term. var(û²) is computed in units of 2/ν_ref, so that the term of a
    // block with itself contributes ν_ref/ν_B (exactly 1 for that block)
    // instead of the difference (ν + 2)/ν − 1, whose rounding made four
    // readings give 2.9999999999999996.
    let nu_ref = terms
        .iter()
        .filter(|t| t.1 == t.2 && random(t.1))
        .max_by(|x, y| x.0.total_cmp(&y.0))
        .and_then(|t| nu[t.1])
        .or_else(|| nu.iter().flatten().copied().next())?;
    // The terms in which each random block appears.
    let mut terms_of: Vec<Vec<usize>> = vec![Vec::new(); nb];
    for (t, &(_, a, b)) in terms.iter().enumerate() {
        if random(a) {
            terms_of[a].push(t);
        }
        if random(b) && b != a {
            terms_of[b].push(t);
        }
    }
    let moment = |b: usize, k: i32| -> f64 { nu[b].map_or(1.0, |d| scale_moment(d, k)) };
    // E[Π λ] over a multiset of blocks.
    let expect = |blocks: &mut [usize]| -> f64 {
        blocks.sort_unstable();
        let mut e = 1.0;
        let mut i = 0;
        while i < blocks.len() {
            let mut k = 1;
            while i + k < blocks.len() && blocks[i + k] == blocks[i] {
                k += 1;
            }
            e *= moment(blocks[i], k as i32);
            i += k;
        }
        e
    };
    let mean: f64 = terms.iter().map(|&(c, a, b)| c * expect(&mut [a, b])).sum();
    // var = Σ_{t1, t2} c1 c2 cov(term1, term2); only terms sharing a random
    // block are dependent. In units of 2/ν_ref: cov(λ_B², λ_B²) = 2/ν_B
    // exactly, which is ν_ref/ν_B in those units.
    let mut var = 0.0;
    let mut partners: Vec<usize> = Vec::new();
    for (t1, &(c1, a1, b1)) in terms.iter().enumerate() {
        partners.clear();
        for blk in [a1, b1] {
            if random(blk) {
                partners.extend_from_slice(&terms_of[blk]);
            }
        }
        partners.sort_unstable();
        partners.dedup();
        let e1 = expect(&mut [a1, b1]);
        for &t2 in &partners {
            let (c2, a2, b2) = terms[t2];
            let cov = if t1 == t2 && a1 == b1 {
                let nu_b = nu[a1].expect("a partner term shares a random block");
                if nu_b == nu_ref {
                    1.0
                } else {
                    nu_ref / nu_b
                }
            } else {
                (expect(&mut [a1, b1, a2, b2]) - e1 * expect(&mut [a2, b2])) * nu_ref / 2.0
            };
            var += c1 * c2 * cov;
        }
    }
    if var <= 0.0 {
        None
    } else {
        Some(snap_to_integer(nu_ref * (mean * mean / var)))
    }
}

/// Relative distance from an integer within which a computed number of
/// degrees of freedom is taken as that integer: 10⁻¹².
///
/// Why this bound (a derivation, no published source): ν_eff is a rational
/// function of the contributions w_i; each w_i carries the rounding of its
/// own computation (s/√n, c·u: a few units of 2⁻⁵³ ≈ 1.1 × 10⁻¹⁶), which
/// ν_eff ∝ w⁴ multiplies by about 4, and the sums over m inputs add about m
/// such units. For m up to 10⁴ inputs that stays below 10⁻¹² relative,
/// while the statistical uncertainty of ν_eff itself is of the order of
/// √(2/ν) relative, so nothing that matters is ever moved. Without it a
/// value that is exactly 3 in real arithmetic, computed as
/// 2.9999999999999996, would be truncated to 2 (G.4.1), and k for 95 %
/// would be 4.30 instead of 3.18.
pub const INTEGER_SNAP: f64 = 1e-12;

/// `nu` itself, or the integer it lies within [`INTEGER_SNAP`] (relative)
/// of.
///
/// ```
/// use incertus_gum::coverage::snap_to_integer;
/// assert_eq!(snap_to_integer(2.9999999999999996), 3.0);
/// assert_eq!(snap_to_integer(41.49), 41.49);
/// ```
pub fn snap_to_integer(nu: f64) -> f64 {
    if !nu.is_finite() {
        return nu;
    }
    let n = nu.round();
    if n != 0.0 && (nu - n).abs() <= INTEGER_SNAP * n.abs() {
        n
    } else {
        nu
    }
}

/// E[λ^k] for λ² ~ χ²_ν/ν (the ratio of an estimated to the true standard
/// uncertainty with ν dof): 1 for k = 2, (ν + 2)/ν for k = 4,
/// c(ν) = √(2/ν) Γ((ν+1)/2)/Γ(ν/2) for k = 1 and c(ν)(ν + 1)/ν for k = 3
/// (from Γ(x + 1) = xΓ(x)). c(ν) by log-gamma up to 10⁴ dof, above by its
/// asymptotic series 1 − 1/(4ν) + 1/(32ν²) + 5/(128ν³).
fn scale_moment(nu: f64, k: i32) -> f64 {
    let c = || {
        if nu <= 1e4 {
            ((2.0 / nu).ln() * 0.5 + libm::lgamma((nu + 1.0) / 2.0) - libm::lgamma(nu / 2.0)).exp()
        } else {
            1.0 - 1.0 / (4.0 * nu) + 1.0 / (32.0 * nu * nu) + 5.0 / (128.0 * nu * nu * nu)
        }
    };
    match k {
        0 => 1.0,
        1 => c(),
        2 => 1.0,
        3 => c() * (nu + 1.0) / nu,
        4 => (nu + 2.0) / nu,
        _ => unreachable!("products of two terms have at most four factors"),
    }
}

/// The degrees of freedom used for the coverage factor: ν_eff truncated to
/// the next lower integer (G.4.1) or as computed, but never below 1.
pub fn dof_used(nu_eff: Dof, rounding: DofRounding) -> Dof {
    nu_eff.map(|v| match rounding {
        DofRounding::Truncate => snap_to_integer(v).floor().max(1.0),
        DofRounding::Exact => snap_to_integer(v).max(1.0),
    })
}

/// The largest coverage probability accepted: 1 − 10⁻¹². Beyond it the
/// tail probability (1 − p)/2 is no longer resolved by an `f64` near 1
/// (0.9999999999999999 leaves 5.6e-17, and k is not finite for small dof);
/// common practice, no published source, asks for no more than 0.9999.
pub const MAX_COVERAGE_PROBABILITY: f64 = 1.0 - 1e-12;

/// Whether `p` is a coverage probability a coverage factor can be computed
/// for: 0 < p ≤ [`MAX_COVERAGE_PROBABILITY`]. The message names the range.
///
/// ```
/// use incertus_gum::coverage::check_coverage_probability;
/// assert!(check_coverage_probability(0.95).is_ok());
/// assert!(check_coverage_probability(0.9999999999999999).is_err());
/// ```
pub fn check_coverage_probability(p: f64) -> Result<(), String> {
    if p > 0.0 && p <= MAX_COVERAGE_PROBABILITY {
        Ok(())
    } else if p > 0.0 && p < 1.0 {
        Err(format!(
            "is too close to 1 for a finite coverage factor: a coverage probability must lie \
             between 0 and 1 − 10⁻¹² (0.999999999999), found {p}"
        ))
    } else {
        Err(format!(
            "must lie strictly between 0 and 1, found {p} (the largest accepted is 0.999999999999)"
        ))
    }
}

/// Coverage factor k_p = t_p(ν) for coverage probability p: the
/// (1 + p)/2 quantile of Student's t with ν dof, or of the standard normal
/// for infinite dof (JCGM 100:2008, G.3.2 and G.3.4).
pub fn coverage_factor(p: f64, dof: Dof) -> f64 {
    // Evaluations of many items ask for the same few (p, ν) again and
    // again; the quantile is a pure function of them, so each thread keeps
    // the ones it computed (at most a few hundred entries).
    thread_local! {
        static KNOWN: std::cell::RefCell<std::collections::HashMap<(u64, u64), f64>> =
            std::cell::RefCell::new(std::collections::HashMap::new());
    }
    let key = (p.to_bits(), dof.map_or(u64::MAX, f64::to_bits));
    if let Some(k) = KNOWN.with(|m| m.borrow().get(&key).copied()) {
        return k;
    }
    let q = 0.5 * (1.0 + p);
    let k = match dof {
        None => normal_quantile(q),
        Some(nu) => student_t_quantile(q, nu),
    };
    KNOWN.with(|m| {
        let mut m = m.borrow_mut();
        if m.len() < 512 {
            m.insert(key, k);
        }
    });
    k
}

/// Standard normal distribution function, accurate in both tails (libm's
/// erfc, a port of the musl/FreeBSD one, within an ulp or so; statrs'
/// erfc is off by some 1e-11 relative near z = 2).
pub fn normal_cdf(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    0.5 * libm::erfc(-z / std::f64::consts::SQRT_2)
}

/// The standard normal quantile.
pub fn normal_quantile(q: f64) -> f64 {
    Normal::new(0.0, 1.0)
        .expect("the standard normal exists")
        .inverse_cdf(q)
}

/// Above this many dof, Student's t is computed by the Cornish-Fisher
/// expansion about the normal distribution: statrs' quantile is wrong by
/// 1e-5 at 10⁵ dof and does not return at 10⁸ (checked against scipy in
/// `crates/gum/tests/student_t.rs`).
const LARGE_DOF: f64 = 1000.0;

/// Above this many dof the distribution function comes from the expansion
/// too; below it statrs' lower tail agrees with scipy to 1e-11 relative
/// even at z = −30.
const LARGE_DOF_CDF: f64 = 3e4;

/// The expansion of a t quantile in powers of 1/ν about the normal
/// quantile z (Abramowitz and Stegun 26.7.5, recalled from memory and
/// checked against scipy).
fn cornish_fisher(z: f64, nu: f64) -> f64 {
    let z2 = z * z;
    let g1 = (z2 + 1.0) * z / 4.0;
    let g2 = ((5.0 * z2 + 16.0) * z2 + 3.0) * z / 96.0;
    let g3 = (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) * z / 384.0;
    let g4 = ((((79.0 * z2 + 776.0) * z2 + 1482.0) * z2 - 1920.0) * z2 - 945.0) * z / 92160.0;
    z + (g1 + (g2 + (g3 + g4 / nu) / nu) / nu) / nu
}

/// The quantile t with Pr(T ≤ t) = q of Student's t with ν dof, accurate
/// for any ν > 0 (statrs' value refined by Newton steps for small ν, the
/// Cornish-Fisher expansion for large ν).
pub fn student_t_quantile(q: f64, nu: f64) -> f64 {
    if !(q > 0.0 && q < 1.0 && nu > 0.0) {
        return f64::NAN;
    }
    if nu.is_infinite() {
        return normal_quantile(q);
    }
    if nu >= LARGE_DOF {
        return cornish_fisher(normal_quantile(q), nu);
    }
    let dist = StudentsT::new(0.0, 1.0, nu).expect("dof is positive and finite");
    let mut t = dist.inverse_cdf(q);
    // Newton steps on the smaller tail, which statrs computes accurately.
    for _ in 0..3 {
        let (f, target) = if t > 0.0 {
            (dist.cdf(-t), 1.0 - q)
        } else {
            (dist.cdf(t), q)
        };
        let density = dist.pdf(t);
        if density.is_nan() || density <= 0.0 || !t.is_finite() {
            break;
        }
        let step = if t > 0.0 {
            (target - f) / density
        } else {
            (f - target) / density
        };
        // For t > 0: F(t) = 1 − f, so the residual F(t) − q = target − f.
        let next = t - step;
        if next == t || !next.is_finite() {
            break;
        }
        t = next;
    }
    t
}

/// Pr(T ≤ t) for Student's t with ν dof, accurate in both tails and for
/// any ν > 0: statrs' lower tail for small ν; for large ν the expansion
/// above is inverted by Newton's method and the normal distribution taken.
pub fn student_t_cdf(t: f64, nu: f64) -> f64 {
    if t.is_nan() || nu.is_nan() || nu <= 0.0 {
        return f64::NAN;
    }
    if t == f64::INFINITY {
        return 1.0;
    }
    if t == f64::NEG_INFINITY {
        return 0.0;
    }
    if nu.is_infinite() {
        return normal_cdf(t);
    }
    if nu >= LARGE_DOF_CDF {
        // Solve cornish_fisher(z, ν) = t for z (monotone; z ≈ t).
        let mut z = t;
        for _ in 0..50 {
            let f = cornish_fisher(z, nu) - t;
            let h = 1e-6 * z.abs().max(1.0);
            let d = (cornish_fisher(z + h, nu) - cornish_fisher(z - h, nu)) / (2.0 * h);
            let next = z - f / d;
            if (next - z).abs() <= 1e-16 * z.abs().max(1.0) {
                z = next;
                break;
            }
            z = next;
        }
        return normal_cdf(z);
    }
    let dist = StudentsT::new(0.0, 1.0, nu).expect("dof is positive and finite");
    if t <= 0.0 {
        dist.cdf(t)
    } else {
        1.0 - dist.cdf(-t)
    }
}
