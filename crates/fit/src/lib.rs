//! Least-squares fits as sources of correlated input quantities: ordinary
//! and weighted least squares for polynomials of any degree and general
//! linear models, solved by Householder QR of the column-scaled design
//! matrix (nalgebra), and York's method for a straight line with
//! uncertainties in both x and y (D. York, N. M. Evensen, M. López Martínez,
//! J. De Basabe Delgado, Am. J. Phys. 72, 367 (2004), recalled from memory).
//!
//! Results: parameters with their covariance and correlation matrix, the
//! residual standard deviation, dof and R², and per point the residual,
//! standardised and studentised residual, leverage and Cook's distance.
//! Points beyond the conventional thresholds are flagged, never dropped;
//! exclusions are explicit row numbers with a reason, and the result without
//! them is kept beside (JCGM 100:2008, H.3 is the worked example of a
//! calibration line whose slope and intercept are correlated inputs).
//!
//! Left out: non-linear least squares, robust regression.

#![warn(missing_docs)]

mod csvdata;
mod linear;
mod york;

pub use csvdata::{
    columns_from_reader, open_regular, read_columns, read_columns_limited, read_regular, Columns,
    DataError, DataErrorKind, MAX_DATA_BYTES, MAX_DATA_ROWS,
};
pub use linear::{fit_basis, fit_polynomial};
pub use york::fit_york;

use serde::Serialize;

/// A fitted parameter.
#[derive(Clone, Debug, Serialize)]
pub struct Parameter {
    /// `intercept`, `slope`, or `c0`, `c1`, ...
    pub name: String,
    /// The estimate.
    pub value: f64,
    /// Its standard uncertainty.
    pub standard_uncertainty: f64,
}

/// Diagnostics of one data point.
#[derive(Clone, Debug, Serialize)]
pub struct Point {
    /// 1-based data row (the first row after the header is 1).
    pub row: usize,
    /// x of the point.
    pub x: f64,
    /// y of the point.
    pub y: f64,
    /// y − ŷ.
    pub residual: f64,
    /// The residual divided by the residual standard deviation.
    pub standardized_residual: f64,
    /// The residual divided by its own standard deviation with the point left out (externally studentized).
    pub studentized_residual: f64,
    /// The diagonal of the hat matrix.
    pub leverage: f64,
    /// Cook's distance.
    pub cooks_distance: f64,
    /// Whether a diagnostic marks the point for a look.
    pub flagged: bool,
    /// Why a point is flagged, in words.
    pub flags: Vec<String>,
    /// Whether the point was left out of the fit.
    pub excluded: bool,
}

/// How a fit was made (serialised "ordinary least squares", "weighted
/// least squares", "York").
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum FitMethod {
    #[serde(rename = "ordinary least squares")]
    /// Unweighted least squares.
    OrdinaryLeastSquares,
    #[serde(rename = "weighted least squares")]
    /// Least squares weighted by 1/u²(y).
    WeightedLeastSquares,
    /// York's straight line with uncertainties in x and y.
    #[serde(rename = "York")]
    York,
}

impl FitMethod {
    /// The name used in reports.
    pub fn name(&self) -> &'static str {
        match self {
            FitMethod::OrdinaryLeastSquares => "ordinary least squares",
            FitMethod::WeightedLeastSquares => "weighted least squares",
            FitMethod::York => "York",
        }
    }
}

impl std::fmt::Display for FitMethod {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

impl PartialEq<&str> for FitMethod {
    fn eq(&self, other: &&str) -> bool {
        self.name() == *other
    }
}

/// The result of a fit.
#[derive(Clone, Debug, Serialize)]
pub struct FitResult {
    /// How the fit was made.
    pub method: FitMethod,
    /// The parameters, lowest power first.
    pub parameters: Vec<Parameter>,
    /// Their covariance matrix.
    pub covariance: Vec<Vec<f64>>,
    /// Their correlation matrix.
    pub correlation: Vec<Vec<f64>>,
    /// The standard deviation of the residuals (√(Σr²/ν)).
    pub residual_standard_deviation: f64,
    /// The residual degrees of freedom ν = n − p.
    pub dof: usize,
    /// The coefficient of determination.
    pub r_squared: f64,
    /// Weighted fits: Σ ((y − ŷ)/u)², χ²/ν and P(χ²_ν ≥ χ²).
    pub chi_squared: Option<f64>,
    /// χ²/ν of a weighted fit.
    pub chi_squared_per_dof: Option<f64>,
    /// The probability of a χ² at least as large, for a weighted fit.
    pub p_value: Option<f64>,
    /// Whether the covariance of a weighted fit was multiplied by χ²/ν.
    pub scaled_by_chi_squared: bool,
    /// Each point with its diagnostics (empty without diagnostics).
    pub points: Vec<Point>,
    /// The 1-based data rows left out.
    pub excluded_rows: Vec<usize>,
    /// Why they were left out.
    pub exclude_reason: Option<String>,
    /// The same fit on every point, when some were excluded.
    pub without_exclusions: Option<Box<FitResult>>,
}

impl FitResult {
    /// The index of the parameter called `name`.
    pub fn parameter(&self, name: &str) -> Option<usize> {
        self.parameters.iter().position(|p| p.name == name)
    }

    /// The fitted polynomial at `x`, ŷ = Σ_k b_k x^k (Horner), for the
    /// polynomial and straight-line fits.
    ///
    /// ```
    /// use incertus_fit::{fit, FitRequest};
    /// let x = [0.0, 1.0, 2.0, 3.0];
    /// let y = [1.0, 3.1, 4.9, 7.0];
    /// let f = fit(&FitRequest {
    ///     x: &x, y: &y, u_y: None, u_x: None, rows: vec![1, 2, 3, 4], degree: 1,
    ///     exclude: vec![], exclude_reason: None, scale_by_chi_squared: false, diagnostics: false,
    /// })
    /// .unwrap();
    /// assert!((f.predict(1.5) - (f.parameters[0].value + 1.5 * f.parameters[1].value)).abs() < 1e-12);
    /// ```
    pub fn predict(&self, x: f64) -> f64 {
        self.parameters
            .iter()
            .rev()
            .fold(0.0, |acc, p| acc * x + p.value)
    }

    /// The standard uncertainty of ŷ(x) from the parameters' covariance,
    /// √(gᵀ V g) with g = (1, x, x², …) (JCGM 100:2008, H.3.5).
    pub fn predict_standard_uncertainty(&self, x: f64) -> f64 {
        let p = self.parameters.len();
        let g: Vec<f64> = (0..p).map(|k| x.powi(k as i32)).collect();
        let mut s = 0.0;
        for i in 0..p {
            for j in 0..p {
                s += g[i] * self.covariance[i][j] * g[j];
            }
        }
        s.max(0.0).sqrt()
    }
}

/// Any error of this crate, for `?` in an embedder's code.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// A fit.
    #[error(transparent)]
    Fit(#[from] FitError),
    /// A data file.
    #[error(transparent)]
    Data(#[from] DataError),
}

/// Why a fit cannot be made.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct FitError {
    /// What kind of problem.
    pub kind: FitErrorKind,
    /// What is wrong, for a person.
    pub message: String,
}

/// The kinds of [`FitError`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum FitErrorKind {
    /// The request does not describe a fit: lengths differ, too few points,
    /// an exclusion names no row, an uncertainty is not positive.
    Request,
    /// The data determine no unique fit (a singular system, all x equal).
    Singular,
}

impl FitError {
    pub(crate) fn request(message: impl Into<String>) -> Self {
        FitError {
            kind: FitErrorKind::Request,
            message: message.into(),
        }
    }

    pub(crate) fn singular(message: impl Into<String>) -> Self {
        FitError {
            kind: FitErrorKind::Singular,
            message: message.into(),
        }
    }
}

/// What to fit.
#[derive(Clone, Debug)]
pub struct FitRequest<'a> {
    /// x values.
    pub x: &'a [f64],
    /// y values.
    pub y: &'a [f64],
    /// Standard uncertainties of y (weighted fit).
    pub u_y: Option<&'a [f64]>,
    /// Standard uncertainties of x (York's method; needs `u_y`).
    pub u_x: Option<&'a [f64]>,
    /// 1-based row numbers of the points (for reports and exclusions).
    pub rows: Vec<usize>,
    /// Degree of the polynomial (1: a straight line).
    pub degree: usize,
    /// 1-based data rows to leave out.
    pub exclude: Vec<usize>,
    /// Why (required with exclusions).
    pub exclude_reason: Option<String>,
    /// For weighted fits: multiply the covariance by χ²/ν.
    pub scale_by_chi_squared: bool,
    /// Compute the per-point diagnostics (leverage, residuals, Cook's
    /// distance, flags). Without them a fit of 10⁶ points skips forming Q
    /// and a million point records; `points` is then empty.
    pub diagnostics: bool,
}

/// Names of polynomial coefficients: intercept and slope for a straight
/// line, c0, c1, ... otherwise.
pub fn coefficient_names(degree: usize) -> Vec<String> {
    if degree == 1 {
        vec!["intercept".into(), "slope".into()]
    } else {
        (0..=degree).map(|k| format!("c{k}")).collect()
    }
}

/// Fit a polynomial (or, with `u_x`, York's straight line), with and without
/// the exclusions.
pub fn fit(req: &FitRequest) -> Result<FitResult, FitError> {
    let n = req.x.len();
    if req.y.len() != n
        || req.u_y.is_some_and(|u| u.len() != n)
        || req.u_x.is_some_and(|u| u.len() != n)
    {
        return Err(FitError::request(
            "the columns of the fit have different lengths",
        ));
    }
    // Sets, not lists: a 10⁵-row fit with exclusions stays linear.
    let all_rows: std::collections::HashSet<usize> = req.rows.iter().copied().collect();
    let excluded: std::collections::HashSet<usize> = req.exclude.iter().copied().collect();
    for &r in &req.exclude {
        if !all_rows.contains(&r) {
            return Err(FitError::request(format!(
                "exclude names row {r}, but the data has rows {} to {}",
                req.rows.first().copied().unwrap_or(0),
                req.rows.last().copied().unwrap_or(0)
            )));
        }
    }
    let keep: Vec<bool> = req.rows.iter().map(|r| !excluded.contains(r)).collect();
    let pick = |v: &[f64]| -> Vec<f64> {
        v.iter()
            .zip(&keep)
            .filter(|(_, k)| **k)
            .map(|(x, _)| *x)
            .collect()
    };
    let run =
        |x: &[f64], y: &[f64], uy: Option<Vec<f64>>, ux: Option<Vec<f64>>, rows: Vec<usize>| {
            if let Some(ux) = ux {
                let uy = uy.ok_or_else(|| {
                    FitError::request("York's method needs the uncertainties of y as well as of x")
                })?;
                if req.degree != 1 {
                    return Err(FitError::request(
                        "York's method fits a straight line (degree 1)",
                    ));
                }
                fit_york(x, y, &ux, &uy, &rows, req.scale_by_chi_squared)
            } else {
                linear::polynomial(
                    x,
                    y,
                    uy.as_deref(),
                    &rows,
                    req.degree,
                    req.scale_by_chi_squared,
                    req.diagnostics,
                )
            }
        };
    let all = run(
        req.x,
        req.y,
        req.u_y.map(<[f64]>::to_vec),
        req.u_x.map(<[f64]>::to_vec),
        req.rows.clone(),
    )?;
    if req.exclude.is_empty() {
        return Ok(all);
    }
    if req
        .exclude_reason
        .as_deref()
        .is_none_or(|r| r.trim().is_empty())
    {
        return Err(FitError::request(
            "an exclusion needs a reason that is not blank: the audit trail records it",
        ));
    }
    let rows: Vec<usize> = req
        .rows
        .iter()
        .zip(&keep)
        .filter(|(_, k)| **k)
        .map(|(r, _)| *r)
        .collect();
    let mut kept = run(
        &pick(req.x),
        &pick(req.y),
        req.u_y.map(pick),
        req.u_x.map(pick),
        rows,
    )?;
    // Report every point, the excluded ones marked, with the diagnostics of
    // the fit that included them.
    let mut points = Vec::with_capacity(n);
    let kept_at: std::collections::HashMap<usize, usize> = kept
        .points
        .iter()
        .enumerate()
        .map(|(i, q)| (q.row, i))
        .collect();
    for p in &all.points {
        match kept_at.get(&p.row).map(|&i| &kept.points[i]) {
            Some(q) => points.push(q.clone()),
            None => {
                let mut e = p.clone();
                e.excluded = true;
                points.push(e);
            }
        }
    }
    kept.points = points;
    kept.excluded_rows = req.exclude.clone();
    kept.exclude_reason = req.exclude_reason.clone();
    kept.without_exclusions = Some(Box::new(all));
    Ok(kept)
}

/// Correlation matrix from a covariance matrix.
pub(crate) fn correlation(cov: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let p = cov.len();
    (0..p)
        .map(|i| {
            (0..p)
                .map(|j| {
                    if i == j {
                        1.0
                    } else {
                        let d = (cov[i][i] * cov[j][j]).sqrt();
                        if d > 0.0 {
                            (cov[i][j] / d).clamp(-1.0, 1.0)
                        } else {
                            0.0
                        }
                    }
                })
                .collect()
        })
        .collect()
}

/// Flags by conventional thresholds (common practice, no single published
/// source; the leverage rule 2p/n and |studentised residual| > 2 follow
/// D. A. Belsley, E. Kuh, R. E. Welsch, Regression Diagnostics (1980), and
/// Cook's distance > 4/n is a common rule of thumb; recalled from memory).
pub(crate) fn flags(p: &Point, n: usize, params: usize) -> Vec<String> {
    let mut f = Vec::new();
    if p.studentized_residual.abs() > 2.0 {
        f.push(format!(
            "|studentised residual| = {:.2} > 2",
            p.studentized_residual.abs()
        ));
    }
    if p.leverage > 2.0 * params as f64 / n as f64 {
        f.push(format!(
            "leverage {:.3} > 2p/n = {:.3}",
            p.leverage,
            2.0 * params as f64 / n as f64
        ));
    }
    if p.cooks_distance > 4.0 / n as f64 {
        f.push(format!(
            "Cook's distance {:.3} > 4/n = {:.3}",
            p.cooks_distance,
            4.0 / n as f64
        ));
    }
    f
}
