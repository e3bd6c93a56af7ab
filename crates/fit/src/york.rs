//! York's straight line for data with uncertainties in both x and y
//! (D. York et al., Am. J. Phys. 72, 367 (2004), section III, recalled from
//! memory; uncorrelated x and y errors). The iteration starts from the
//! ordinary least-squares slope and stops when the slope changes by less
//! than 1e-15 relative (at most 1000 rounds).

use crate::{correlation, flags, FitError, FitResult, Parameter, Point};

/// York's straight line through points with uncertainties in x and y (possibly correlated per point), by iteration; the parameters' covariance as York et al. (2004) give it.
pub fn fit_york(
    x: &[f64],
    y: &[f64],
    u_x: &[f64],
    u_y: &[f64],
    rows: &[usize],
    scale_by_chi2: bool,
) -> Result<FitResult, FitError> {
    let n = x.len();
    if n < 3 {
        return Err(FitError::request(format!(
            "{n} points are too few for a straight line: at least 3 are needed"
        )));
    }
    for (i, (&a, &b)) in u_x.iter().zip(u_y).enumerate() {
        if !(a > 0.0 && b > 0.0 && a.is_finite() && b.is_finite()) {
            return Err(FitError::request(format!(
                "the uncertainties of x and y at point {} must be positive",
                i + 1
            )));
        }
    }
    let wx: Vec<f64> = u_x.iter().map(|u| 1.0 / (u * u)).collect();
    let wy: Vec<f64> = u_y.iter().map(|u| 1.0 / (u * u)).collect();
    // Start: ordinary least-squares slope.
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = y.iter().sum::<f64>() / n as f64;
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let sxx: f64 = x.iter().map(|a| (a - mx).powi(2)).sum();
    if sxx == 0.0 {
        return Err(FitError::singular("all x values are equal"));
    }
    let mut b = sxy / sxx;
    let mut w = vec![0.0; n];
    let mut beta = vec![0.0; n];
    let (mut xbar, mut ybar) = (0.0, 0.0);
    let mut converged = false;
    for _ in 0..1000 {
        for i in 0..n {
            w[i] = wx[i] * wy[i] / (wx[i] + b * b * wy[i]);
        }
        let sw: f64 = w.iter().sum();
        xbar = (0..n).map(|i| w[i] * x[i]).sum::<f64>() / sw;
        ybar = (0..n).map(|i| w[i] * y[i]).sum::<f64>() / sw;
        let mut num = 0.0;
        let mut den = 0.0;
        for i in 0..n {
            let (u, v) = (x[i] - xbar, y[i] - ybar);
            beta[i] = w[i] * (u / wy[i] + b * v / wx[i]);
            num += w[i] * beta[i] * v;
            den += w[i] * beta[i] * u;
        }
        let nb = num / den;
        let done = (nb - b).abs() <= 1e-15 * nb.abs().max(1e-300);
        b = nb;
        if done {
            converged = true;
            break;
        }
    }
    if !converged {
        return Err(FitError::request(
            "York's iteration did not converge in 1000 rounds",
        ));
    }
    let a = ybar - b * xbar;
    // Uncertainties (York 2004, eq. 13 and 14).
    for i in 0..n {
        w[i] = wx[i] * wy[i] / (wx[i] + b * b * wy[i]);
    }
    let sw: f64 = w.iter().sum();
    let xadj: Vec<f64> = (0..n).map(|i| xbar + beta[i]).collect();
    let xm = (0..n).map(|i| w[i] * xadj[i]).sum::<f64>() / sw;
    let sum_wu2: f64 = (0..n).map(|i| w[i] * (xadj[i] - xm).powi(2)).sum();
    let var_b = 1.0 / sum_wu2;
    let var_a = 1.0 / sw + xm * xm * var_b;
    let cov_ab = -xm * var_b;
    let chi2: f64 = (0..n).map(|i| w[i] * (y[i] - b * x[i] - a).powi(2)).sum();
    let nu = n - 2;
    let f = if scale_by_chi2 { chi2 / nu as f64 } else { 1.0 };
    let cov = vec![vec![var_a * f, cov_ab * f], vec![cov_ab * f, var_b * f]];
    let points = (0..n)
        .map(|i| {
            let r = (y[i] - a - b * x[i]) * w[i].sqrt();
            let mut pt = Point {
                row: rows[i],
                x: x[i],
                y: y[i],
                residual: y[i] - a - b * x[i],
                standardized_residual: r,
                studentized_residual: r,
                leverage: f64::NAN,
                cooks_distance: f64::NAN,
                flagged: false,
                flags: Vec::new(),
                excluded: false,
            };
            pt.flags = flags(&pt, n, 2);
            pt.flagged = !pt.flags.is_empty();
            pt
        })
        .collect();
    Ok(FitResult {
        method: crate::FitMethod::York,
        parameters: vec![
            Parameter {
                name: "intercept".into(),
                value: a,
                standard_uncertainty: cov[0][0].sqrt(),
            },
            Parameter {
                name: "slope".into(),
                value: b,
                standard_uncertainty: cov[1][1].sqrt(),
            },
        ],
        correlation: correlation(&cov),
        covariance: cov,
        residual_standard_deviation: (chi2 / nu as f64).sqrt(),
        dof: nu,
        r_squared: f64::NAN,
        chi_squared: Some(chi2),
        chi_squared_per_dof: Some(chi2 / nu as f64),
        p_value: statrs::distribution::ChiSquared::new(nu as f64)
            .ok()
            .map(|d| statrs::distribution::ContinuousCDF::sf(&d, chi2)),
        scaled_by_chi_squared: scale_by_chi2,
        points,
        excluded_rows: Vec::new(),
        exclude_reason: None,
        without_exclusions: None,
    })
}
