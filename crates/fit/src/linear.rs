//! Linear least squares by Householder QR of the column-scaled design
//! matrix. For a polynomial the abscissa is first centred and scaled
//! (t = (x − x̄)/s), which keeps the design well conditioned; the coefficients
//! and their covariance are then mapped back to powers of x exactly (a
//! linear map M: a = M β, V_a = M V_β Mᵀ).

use nalgebra::{DMatrix, DVector};
use statrs::distribution::{ChiSquared, ContinuousCDF};

use crate::{coefficient_names, correlation, flags, FitError, FitResult, Parameter, Point};

/// Solution of a (weighted) linear least-squares problem.
struct Solution {
    beta: Vec<f64>,
    /// (XᵀWX)⁻¹.
    unscaled_cov: Vec<Vec<f64>>,
    leverage: Vec<f64>,
    /// Σ w_i (y_i − ŷ_i)², from the part of Qᵀb beyond the first p entries.
    rss: f64,
}

/// Least squares for the design `a` (consumed: scaled in place).
fn solve(
    mut a: DMatrix<f64>,
    y: &[f64],
    w: Option<&[f64]>,
    want_leverage: bool,
) -> Result<Solution, FitError> {
    let (n, p) = a.shape();
    let mut b = DVector::from_column_slice(y);
    if let Some(w) = w {
        for i in 0..n {
            let sw = w[i].sqrt();
            b[i] *= sw;
            for j in 0..p {
                a[(i, j)] *= sw;
            }
        }
    }
    let scale: Vec<f64> = (0..p).map(|j| a.column(j).norm()).collect();
    if let Some(j) = scale.iter().position(|s| *s == 0.0 || !s.is_finite()) {
        return Err(FitError::request(format!(
            "column {} of the design is zero or not finite",
            j + 1
        )));
    }
    for (j, s) in scale.iter().enumerate() {
        a.column_mut(j).scale_mut(1.0 / s);
    }
    let qr = a.qr();
    let r = qr.r();
    // A rank-deficient design has a (near) zero on R's diagonal.
    let rmax = (0..p).map(|j| r[(j, j)].abs()).fold(0.0, f64::max);
    if let Some(j) = (0..p).find(|&j| r[(j, j)].abs() <= 1e-13 * rmax) {
        return Err(FitError::request(format!(
            "the design is rank deficient (column {} depends on the others); fewer distinct x values than parameters?",
            j + 1
        )));
    }
    qr.q_tr_mul(&mut b);
    let rss = b.rows(p, n - p).norm_squared();
    let qtb = b.rows(0, p).into_owned();
    let beta_s = r
        .solve_upper_triangular(&qtb)
        .ok_or_else(|| FitError::singular("the least-squares system is singular"))?;
    let rinv = r
        .solve_upper_triangular(&DMatrix::identity(p, p))
        .ok_or_else(|| FitError::singular("the least-squares system is singular"))?;
    let cs = &rinv * rinv.transpose();
    let beta = (0..p).map(|j| beta_s[j] / scale[j]).collect();
    let unscaled_cov = (0..p)
        .map(|i| (0..p).map(|j| cs[(i, j)] / (scale[i] * scale[j])).collect())
        .collect();
    // Leverage h_i = ‖row i of the thin Q‖² (only when diagnostics are wanted).
    let leverage = if want_leverage {
        let q = qr.q();
        (0..n).map(|i| q.row(i).norm_squared()).collect()
    } else {
        Vec::new()
    };
    Ok(Solution {
        beta,
        unscaled_cov,
        leverage,
        rss,
    })
}

/// Assemble the result. `fitted(i)` is ŷ_i, used only for the diagnostics.
#[allow(clippy::too_many_arguments)]
fn finish(
    names: Vec<String>,
    beta: Vec<f64>,
    sol_cov: Vec<Vec<f64>>,
    sol: &Solution,
    fitted: &dyn Fn(usize) -> f64,
    xs: &[f64],
    y: &[f64],
    u_y: Option<&[f64]>,
    rows: &[usize],
    scale_by_chi2: bool,
    diagnostics: bool,
) -> FitResult {
    let n = y.len();
    let p = beta.len();
    let nu = n - p;
    let w = |i: usize| u_y.map_or(1.0, |u| 1.0 / (u[i] * u[i]));
    let rss = sol.rss;
    let s2 = rss / nu as f64;
    let weighted = u_y.is_some();
    let factor = if !weighted || scale_by_chi2 { s2 } else { 1.0 };
    let cov: Vec<Vec<f64>> = sol_cov
        .iter()
        .map(|row| row.iter().map(|v| v * factor).collect())
        .collect();
    let wsum: f64 = (0..n).map(w).sum();
    let ybar = (0..n).map(|i| w(i) * y[i]).sum::<f64>() / wsum;
    let tss: f64 = (0..n).map(|i| w(i) * (y[i] - ybar).powi(2)).sum();
    // Residual scale of the diagnostics: s for unweighted or scaled fits,
    // 1 for weighted fits whose u(y) are taken as known.
    let sd = factor.sqrt();
    let leverage = &sol.leverage;
    let points = (0..if diagnostics { n } else { 0 })
        .map(|i| {
            let resid = y[i] - fitted(i);
            let h = leverage[i].min(1.0 - 1e-15);
            let r = w(i).sqrt() * resid;
            let standardized = r / (sd * (1.0 - h).sqrt());
            let s_i2 = if nu > 1 {
                ((nu as f64) * factor - r * r / (1.0 - h)) / (nu as f64 - 1.0)
            } else {
                f64::NAN
            };
            let studentized = if !weighted || scale_by_chi2 {
                r / (s_i2.max(0.0).sqrt() * (1.0 - h).sqrt())
            } else {
                standardized
            };
            let cooks = standardized * standardized * h / ((1.0 - h) * p as f64);
            let mut pt = Point {
                row: rows[i],
                x: xs[i],
                y: y[i],
                residual: resid,
                standardized_residual: standardized,
                studentized_residual: studentized,
                leverage: leverage[i],
                cooks_distance: cooks,
                flagged: false,
                flags: Vec::new(),
                excluded: false,
            };
            pt.flags = flags(&pt, n, p);
            pt.flagged = !pt.flags.is_empty();
            pt
        })
        .collect();
    let (chi2, chi2_nu, pval) = if weighted {
        let pv = ChiSquared::new(nu as f64)
            .map(|d| d.sf(rss))
            .unwrap_or(f64::NAN);
        (Some(rss), Some(s2), Some(pv))
    } else {
        (None, None, None)
    };
    FitResult {
        method: if weighted {
            crate::FitMethod::WeightedLeastSquares
        } else {
            crate::FitMethod::OrdinaryLeastSquares
        },
        parameters: names
            .into_iter()
            .zip(beta.iter())
            .zip(cov.iter().enumerate())
            .map(|((name, &value), (j, row))| Parameter {
                name,
                value,
                standard_uncertainty: row[j].sqrt(),
            })
            .collect(),
        correlation: correlation(&cov),
        covariance: cov,
        residual_standard_deviation: s2.sqrt(),
        dof: nu,
        r_squared: if tss > 0.0 { 1.0 - rss / tss } else { 1.0 },
        chi_squared: chi2,
        chi_squared_per_dof: chi2_nu,
        p_value: pval,
        scaled_by_chi_squared: weighted && scale_by_chi2,
        points,
        excluded_rows: Vec::new(),
        exclude_reason: None,
        without_exclusions: None,
    }
}

fn check_size(n: usize, p: usize) -> Result<(), FitError> {
    if n < p + 1 {
        return Err(FitError::request(format!(
            "{n} points are too few for {p} parameters: a fit needs at least parameters + 1 = {} points \
             (so that the residuals leave at least one degree of freedom)",
            p + 1
        )));
    }
    Ok(())
}

fn check_u(u_y: Option<&[f64]>) -> Result<(), FitError> {
    if let Some(u) = u_y {
        if let Some(i) = u
            .iter()
            .position(|v| v.is_nan() || *v <= 0.0 || !v.is_finite())
        {
            return Err(FitError::request(format!(
                "the uncertainty of y at point {} is not a positive number",
                i + 1
            )));
        }
    }
    Ok(())
}

/// Fit y = c0 + c1 x + ... + c_d x^d (ordinary, or weighted when `u_y`),
/// with the per-point diagnostics.
pub fn fit_polynomial(
    x: &[f64],
    y: &[f64],
    u_y: Option<&[f64]>,
    rows: &[usize],
    degree: usize,
    scale_by_chi2: bool,
) -> Result<FitResult, FitError> {
    polynomial(x, y, u_y, rows, degree, scale_by_chi2, true)
}

pub(crate) fn polynomial(
    x: &[f64],
    y: &[f64],
    u_y: Option<&[f64]>,
    rows: &[usize],
    degree: usize,
    scale_by_chi2: bool,
    diagnostics: bool,
) -> Result<FitResult, FitError> {
    let n = x.len();
    let p = degree + 1;
    check_size(n, p)?;
    check_u(u_y)?;
    let c = x.iter().sum::<f64>() / n as f64;
    let s = x.iter().map(|v| (v - c).abs()).fold(0.0, f64::max);
    let s = if s > 0.0 { s } else { 1.0 };
    let design = DMatrix::from_fn(n, p, |i, j| ((x[i] - c) / s).powi(j as i32));
    let w: Option<Vec<f64>> = u_y.map(|u| u.iter().map(|v| 1.0 / (v * v)).collect());
    let sol = solve(design, y, w.as_deref(), diagnostics)?;
    // Map β (in t) to coefficients of x: a_j = Σ_k C(k, j) (−c)^(k−j) s^(−k) β_k.
    let mut m = vec![vec![0.0; p]; p];
    for k in 0..p {
        for (j, row) in m.iter_mut().enumerate().take(k + 1) {
            row[k] = binomial(k, j) * (-c).powi((k - j) as i32) / s.powi(k as i32);
        }
    }
    let a: Vec<f64> = (0..p)
        .map(|j| (0..p).map(|k| m[j][k] * sol.beta[k]).sum())
        .collect();
    let vb = &sol.unscaled_cov;
    let va: Vec<Vec<f64>> = (0..p)
        .map(|i| {
            (0..p)
                .map(|j| {
                    (0..p)
                        .map(|k| (0..p).map(|l| m[i][k] * vb[k][l] * m[j][l]).sum::<f64>())
                        .sum()
                })
                .collect()
        })
        .collect();
    // Fitted values from the well-conditioned form.
    let beta_t = sol.beta.clone();
    let fitted = move |i: usize| {
        let tv = (x[i] - c) / s;
        beta_t.iter().rev().fold(0.0, |acc, b| acc * tv + b)
    };
    Ok(finish(
        coefficient_names(degree),
        a,
        va,
        &sol,
        &fitted,
        x,
        y,
        u_y,
        rows,
        scale_by_chi2,
        diagnostics,
    ))
}

/// Fit a general linear model y = Σ β_j f_j with the basis columns given
/// (`columns[j][i]` = f_j at point i); `xs` is only reported.
pub fn fit_basis(
    names: Vec<String>,
    columns: &[Vec<f64>],
    xs: &[f64],
    y: &[f64],
    u_y: Option<&[f64]>,
    rows: &[usize],
    scale_by_chi2: bool,
) -> Result<FitResult, FitError> {
    let n = y.len();
    let p = columns.len();
    check_size(n, p)?;
    check_u(u_y)?;
    let design = DMatrix::from_fn(n, p, |i, j| columns[j][i]);
    let w: Option<Vec<f64>> = u_y.map(|u| u.iter().map(|v| 1.0 / (v * v)).collect());
    let sol = solve(design, y, w.as_deref(), true)?;
    let beta = sol.beta.clone();
    let fitted = |i: usize| (0..p).map(|j| columns[j][i] * beta[j]).sum::<f64>();
    let cov = sol.unscaled_cov.clone();
    Ok(finish(
        names,
        sol.beta.clone(),
        cov,
        &sol,
        &fitted,
        xs,
        y,
        u_y,
        rows,
        scale_by_chi2,
        true,
    ))
}

fn binomial(n: usize, k: usize) -> f64 {
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}
