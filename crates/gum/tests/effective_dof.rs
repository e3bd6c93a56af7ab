//! The effective degrees of freedom with correlated inputs
//! (`coverage::effective_dof_correlated`, a delta-method generalisation of
//! JCGM 100:2008, G.4.1) checked the way its claim can be checked: simulate
//! many repeated experiments (draw the observations, evaluate y, u, ν_eff and
//! k = t_p(ν) as the tool does), and count how often y ± k u contains the
//! true value. The old rule (a correlated group counts once with its
//! smallest dof) is run beside it, and how conservative it was is printed.
//!
//! Fixed seeds; 20 000 experiments per model, so the standard uncertainty of
//! a coverage near 0.95 is 0.0015.

#![allow(clippy::needless_range_loop)] // matrices indexed as written in the derivation

use incertus_gum::coverage::{
    coverage_factor, dof_used, effective_dof_correlated, welch_satterthwaite,
};
use incertus_gum::DofRounding;
use rand::{RngExt, SeedableRng};
use rand_distr::{ChiSquared, Distribution, StandardNormal};
use rand_xoshiro::Xoshiro256PlusPlus;

/// How one input of a linear model y = Σ c_i X_i (true values 0) is known.
#[derive(Clone, Copy)]
enum Kind {
    /// Mean of n observations with standard deviation σ (u = s/√n, n − 1 dof).
    TypeA { n: usize, sigma: f64 },
    /// Known standard uncertainty, infinite dof.
    TypeB { u: f64 },
}

/// A model: coefficients, inputs, stated correlations between the errors of
/// the estimates (i, j, r), and an optional block of inputs observed
/// together (indices, n, true correlation matrix of one observation).
struct Case {
    name: &'static str,
    c: Vec<f64>,
    inputs: Vec<Kind>,
    stated: Vec<(usize, usize, f64)>,
    together: Option<(Vec<usize>, usize, Vec<Vec<f64>>)>,
}

struct Outcome {
    coverage_new: f64,
    coverage_old: f64,
    mean_k_new: f64,
    mean_k_old: f64,
}

fn cholesky(a: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let n = a.len();
    let mut l = vec![vec![0.0; n]; n];
    for i in 0..n {
        for j in 0..=i {
            let s: f64 = (0..j).map(|k| l[i][k] * l[j][k]).sum();
            l[i][j] = if i == j {
                (a[i][i] - s).sqrt()
            } else {
                (a[i][j] - s) / l[j][j]
            };
        }
    }
    l
}

fn simulate(case: &Case, experiments: usize, seed: u64) -> Outcome {
    let p = 0.95;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let m = case.inputs.len();
    // True standard uncertainties of the estimates, for the stated correlations.
    let true_u: Vec<f64> = case
        .inputs
        .iter()
        .map(|k| match *k {
            Kind::TypeA { n, sigma } => sigma / (n as f64).sqrt(),
            Kind::TypeB { u } => u,
        })
        .collect();
    // Correlated errors of the estimates outside the block: covariance of the
    // inputs that are not observed together.
    let in_block = |i: usize| {
        case.together
            .as_ref()
            .is_some_and(|(b, _, _)| b.contains(&i))
    };
    let free: Vec<usize> = (0..m).filter(|&i| !in_block(i)).collect();
    let mut cov = vec![vec![0.0; free.len()]; free.len()];
    for (a, &i) in free.iter().enumerate() {
        for (b, &j) in free.iter().enumerate() {
            let r = if i == j {
                1.0
            } else {
                case.stated
                    .iter()
                    .find(|t| (t.0 == i && t.1 == j) || (t.0 == j && t.1 == i))
                    .map_or(0.0, |t| t.2)
            };
            cov[a][b] = r * true_u[i] * true_u[j];
        }
    }
    let l_free = cholesky(&cov);
    let (mut hit_new, mut hit_old, mut k_new, mut k_old) = (0usize, 0usize, 0.0, 0.0);
    for _ in 0..experiments {
        let mut est = vec![0.0; m];
        let mut u = vec![0.0; m];
        let mut dof: Vec<Option<f64>> = vec![None; m];
        let mut r = vec![vec![0.0; m]; m];
        for i in 0..m {
            r[i][i] = 1.0;
        }
        // Errors of the free inputs, jointly normal.
        let z: Vec<f64> = (0..free.len())
            .map(|_| rng.sample(StandardNormal))
            .collect();
        for (a, &i) in free.iter().enumerate() {
            est[i] = (0..=a).map(|b| l_free[a][b] * z[b]).sum();
            match case.inputs[i] {
                Kind::TypeA { n, sigma } => {
                    // s² = σ² χ²_{n−1}/(n − 1), independent of the mean.
                    let chi = ChiSquared::new((n - 1) as f64).unwrap().sample(&mut rng);
                    let s = sigma * (chi / (n - 1) as f64).sqrt();
                    u[i] = s / (n as f64).sqrt();
                    dof[i] = Some((n - 1) as f64);
                }
                Kind::TypeB { u: ub } => u[i] = ub,
            }
        }
        for &(i, j, rij) in &case.stated {
            r[i][j] = rij;
            r[j][i] = rij;
        }
        // The block observed together: n readings of a correlated vector.
        if let Some((block, n, rho)) = &case.together {
            let sig: Vec<f64> = block
                .iter()
                .map(|&i| match case.inputs[i] {
                    Kind::TypeA { sigma, .. } => sigma,
                    Kind::TypeB { .. } => unreachable!("a block holds Type A inputs"),
                })
                .collect();
            let l = cholesky(rho);
            let q = block.len();
            let mut obs = vec![vec![0.0; q]; *n];
            for row in obs.iter_mut() {
                let z: Vec<f64> = (0..q).map(|_| rng.sample(StandardNormal)).collect();
                for a in 0..q {
                    row[a] = sig[a] * (0..=a).map(|b| l[a][b] * z[b]).sum::<f64>();
                }
            }
            let mean: Vec<f64> = (0..q)
                .map(|a| obs.iter().map(|o| o[a]).sum::<f64>() / *n as f64)
                .collect();
            let mut s = vec![vec![0.0; q]; q];
            for o in &obs {
                for a in 0..q {
                    for b in 0..q {
                        s[a][b] += (o[a] - mean[a]) * (o[b] - mean[b]) / (*n - 1) as f64;
                    }
                }
            }
            for (a, &i) in block.iter().enumerate() {
                est[i] = mean[a];
                u[i] = (s[a][a] / *n as f64).sqrt();
                dof[i] = Some((*n - 1) as f64);
                for (b, &j) in block.iter().enumerate() {
                    if a != b {
                        r[i][j] = s[a][b] / (s[a][a] * s[b][b]).sqrt();
                    }
                }
            }
        }
        let y: f64 = (0..m).map(|i| case.c[i] * est[i]).sum();
        let w: Vec<f64> = (0..m).map(|i| case.c[i] * u[i]).collect();
        let mut u2 = 0.0;
        for i in 0..m {
            for j in 0..m {
                u2 += w[i] * w[j] * r[i][j];
            }
        }
        let uc = u2.max(0.0).sqrt();
        // The new rule: blocks are single inputs and the block observed together.
        let block: Vec<usize> = (0..m)
            .map(|i| if in_block(i) { usize::MAX } else { i })
            .collect();
        let mut pairs = Vec::new();
        for i in 0..m {
            for j in i + 1..m {
                if r[i][j] != 0.0 {
                    pairs.push((i, j, r[i][j]));
                }
            }
        }
        let nu = effective_dof_correlated(&w, &pairs, &block, &dof);
        let k = coverage_factor(p, dof_used(nu, DofRounding::Truncate));
        // The old rule: connected components of any correlation, least dof.
        let nu_old = old_rule(&w, &r, &dof, uc);
        let ko = coverage_factor(p, dof_used(nu_old, DofRounding::Truncate));
        hit_new += (y.abs() <= k * uc) as usize;
        hit_old += (y.abs() <= ko * uc) as usize;
        k_new += k;
        k_old += ko;
    }
    let e = experiments as f64;
    Outcome {
        coverage_new: hit_new as f64 / e,
        coverage_old: hit_old as f64 / e,
        mean_k_new: k_new / e,
        mean_k_old: k_old / e,
    }
}

fn old_rule(w: &[f64], r: &[Vec<f64>], dof: &[Option<f64>], uc: f64) -> Option<f64> {
    let m = w.len();
    let mut group: Vec<usize> = (0..m).collect();
    for _ in 0..m {
        for i in 0..m {
            for j in 0..m {
                if i != j && r[i][j] != 0.0 {
                    let g = group[i].min(group[j]);
                    group[i] = g;
                    group[j] = g;
                }
            }
        }
    }
    let mut comps = Vec::new();
    let mut seen = Vec::new();
    for i in 0..m {
        if seen.contains(&group[i]) {
            continue;
        }
        seen.push(group[i]);
        let members: Vec<usize> = (0..m).filter(|&j| group[j] == group[i]).collect();
        let mut q = 0.0;
        for &a in &members {
            for &b in &members {
                q += w[a] * w[b] * r[a][b];
            }
        }
        let d = members
            .iter()
            .filter_map(|&j| dof[j])
            .fold(None, |acc: Option<f64>, d| {
                Some(acc.map_or(d, |a| a.min(d)))
            });
        comps.push((q.max(0.0).sqrt(), d));
    }
    welch_satterthwaite(uc, &comps)
}

fn cases() -> Vec<Case> {
    vec![
        Case {
            // A 0.1 % Type A share (5 readings) correlated with a large share of infinite dof.
            name: "small Type A share correlated with a Type B share",
            c: vec![1.0, 1.0],
            inputs: vec![
                Kind::TypeA {
                    n: 5,
                    sigma: 0.0316 * 5f64.sqrt(),
                },
                Kind::TypeB { u: 1.0 },
            ],
            stated: vec![(0, 1, 0.5)],
            together: None,
        },
        Case {
            name: "two Type A inputs of few readings, stated r = 0.6",
            c: vec![1.0, -1.0],
            inputs: vec![
                Kind::TypeA { n: 4, sigma: 2.0 },
                Kind::TypeA {
                    n: 6,
                    sigma: 2.0 * (6f64 / 4.0).sqrt(),
                },
            ],
            stated: vec![(0, 1, 0.6)],
            together: None,
        },
        Case {
            name: "two Type A inputs of few readings, stated r = 0.5, sum",
            c: vec![1.0, 1.0],
            inputs: vec![
                Kind::TypeA { n: 3, sigma: 1.0 },
                Kind::TypeA { n: 8, sigma: 2.0 },
            ],
            stated: vec![(0, 1, 0.5)],
            together: None,
        },
        Case {
            name: "observed together (n = 6, ρ = 0.7) with a Type B share",
            c: vec![1.0, 2.0, 1.0],
            inputs: vec![
                Kind::TypeA { n: 6, sigma: 1.0 },
                Kind::TypeA { n: 6, sigma: 0.5 },
                Kind::TypeB { u: 0.3 },
            ],
            stated: vec![],
            together: Some((vec![0, 1], 6, vec![vec![1.0, 0.7], vec![0.7, 1.0]])),
        },
        Case {
            name:
                "observed together (n = 5) and a Type A input (n = 4) correlated with a Type B one",
            c: vec![1.0, -1.0, 1.0, 1.0],
            inputs: vec![
                Kind::TypeA { n: 5, sigma: 1.0 },
                Kind::TypeA { n: 5, sigma: 1.0 },
                Kind::TypeA { n: 4, sigma: 0.8 },
                Kind::TypeB { u: 0.4 },
            ],
            stated: vec![(2, 3, 0.5)],
            together: Some((vec![0, 1], 5, vec![vec![1.0, -0.4], vec![-0.4, 1.0]])),
        },
    ]
}

#[test]
fn coverage_of_the_rule_by_simulation() {
    // Coverage probability p = 0.95 (JCGM 100:2008, G.3, G.4): the fraction of
    // intervals y ± k u that contain the true value must be close to p.
    for (i, case) in cases().iter().enumerate() {
        let o = simulate(case, 20_000, 20261202 + i as u64);
        println!(
            "{}: coverage {:.4} with mean k {:.3} (old rule: {:.4}, mean k {:.3})",
            case.name, o.coverage_new, o.mean_k_new, o.coverage_old, o.mean_k_old
        );
        // Close to p; where the estimate û² itself is biased (a stated
        // negative cross term with E[s] < σ for few readings: û² is 18 %
        // high on average in the second case), some over-coverage remains
        // that no choice of ν removes. Never below p by more than the
        // simulation's noise, and never further from p than the old rule.
        assert!(
            o.coverage_new > 0.95 - 0.006 && o.coverage_new < 0.95 + 0.03,
            "{}: coverage {}",
            case.name,
            o.coverage_new
        );
        assert!(
            (o.coverage_new - 0.95).abs() <= (o.coverage_old - 0.95).abs() + 0.003,
            "{}: {} against the old rule's {}",
            case.name,
            o.coverage_new,
            o.coverage_old
        );
    }
}

#[test]
fn the_old_rule_was_wildly_conservative_where_the_issue_found_it() {
    // A 0.1 % Type A share must not drag ν_eff from about 10⁶ to 8.
    let case = &cases()[0];
    let o = simulate(case, 4000, 7);
    assert!(o.mean_k_new < 1.97, "mean k {}", o.mean_k_new);
    assert!(
        o.mean_k_old > 2.2,
        "mean k of the old rule {}",
        o.mean_k_old
    );
}

#[test]
fn reduces_to_welch_satterthwaite_and_is_exact_for_a_block() {
    // JCGM 100:2008, G.4.1, eq. (G.2b) without correlations.
    let w = [0.3, 1.2, 0.7];
    let dof = [Some(3.0), Some(9.0), None];
    let nu = effective_dof_correlated(&w, &[], &[0, 1, 2], &dof).unwrap();
    let uc = (0.09f64 + 1.44 + 0.49).sqrt();
    let ws = welch_satterthwaite(uc, &[(0.3, Some(3.0)), (1.2, Some(9.0)), (0.7, None)]).unwrap();
    assert!((nu / ws - 1.0).abs() < 1e-12, "{nu} vs {ws}");
    // One block observed together (any correlation): exactly its n − 1
    // (a quadratic form in a Wishart matrix is a scaled χ²).
    let nu = effective_dof_correlated(
        &[1.0, 2.0],
        &[(0, 1, -0.6)],
        &[5, 5],
        &[Some(7.0), Some(7.0)],
    )
    .unwrap();
    assert!((nu - 7.0).abs() < 1e-12);
}
