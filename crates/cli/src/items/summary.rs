//! What a table of items says as a whole, per measurand: how many items,
//! how many accepted and rejected, the expected number of nonconforming
//! items among the accepted ones, and the expanded uncertainty over the
//! range of values in the two forms laboratories state in a scope of
//! accreditation or a certificate.
//!
//! - Expected nonconforming among the accepted: the sum of the accepted
//!   items' specific consumer's risks. Each is the probability that that
//!   item does not conform given its measured value (JCGM 106:2012, 9.5),
//!   so by linearity of expectation their sum is the expected count of
//!   nonconforming items among those accepted (the batch form of the
//!   clause 9 idea; a derivation, no independence needed).
//! - U over the range: U = a + b·|y| fitted by ordinary least squares of U
//!   on |y|, and U = √(a² + (b·y)²) by ordinary least squares of U² on y²
//!   (linear in a² and b²). Both are checked against numpy's `polyfit` of
//!   the same points (tests/fixtures/items_range.py). With each, the
//!   largest relative deviation from the items' U and whether the form
//!   covers every item (U_fit ≥ U), so the user can choose the one to state.

use super::Evaluated;
use incertus_gum::conformity::{RiskKind, Verdict};

/// A form of U as a function of the value, fitted to the items.
#[derive(Clone, Debug, serde::Serialize)]
pub struct RangeFit {
    /// `a + b|y|` or `sqrt(a^2 + (b y)^2)`.
    /// The form.
    pub form: &'static str,
    /// a.
    pub a: f64,
    /// b.
    pub b: f64,
    /// The largest |U_fit − U|/U over the items.
    pub max_relative_deviation: f64,
    /// Whether U_fit ≥ U for every item.
    pub covers_every_item: bool,
    /// A remark (a coefficient fitted negative and taken as 0).
    pub note: Option<String>,
}

/// The summary of one measurand over the items.
#[derive(Clone, Debug, serde::Serialize)]
pub(crate) struct MeasurandSummary {
    pub measurand: String,
    pub unit: Option<String>,
    pub items: usize,
    /// With a specification.
    pub accepted: Option<usize>,
    pub rejected: Option<usize>,
    /// Σ of the specific consumer's risks of the accepted items.
    pub expected_nonconforming_among_accepted: Option<f64>,
    /// Smallest and largest value.
    pub range: [f64; 2],
    /// The two forms of U over the range (empty when the items do not
    /// have two different values).
    pub uncertainty_over_range: Vec<RangeFit>,
    /// Why U over the range was not fitted.
    pub not_fitted: Option<String>,
}

/// The summary over the items.
#[derive(Clone, Debug, serde::Serialize)]
pub(crate) struct Summary {
    pub items: usize,
    pub measurands: Vec<MeasurandSummary>,
}

/// Ordinary least squares of y on x: (intercept, slope), from centred
/// sums (the closed form of the normal equations).
fn line(x: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    let n = x.len() as f64;
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let sxx: f64 = x.iter().map(|v| (v - mx) * (v - mx)).sum();
    if sxx.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) || !sxx.is_finite() {
        return None;
    }
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let b = sxy / sxx;
    Some((my - b * mx, b))
}

/// The two forms fitted to the points (y_i, U_i).
pub fn range_fits(y: &[f64], big_u: &[f64]) -> Result<Vec<RangeFit>, String> {
    let abs: Vec<f64> = y.iter().map(|v| v.abs()).collect();
    let deviation = |f: &dyn Fn(f64) -> f64| {
        let mut worst = 0.0f64;
        let mut covers = true;
        for (v, u) in y.iter().zip(big_u) {
            let fit = f(*v);
            if *u > 0.0 {
                worst = worst.max(((fit - u) / u).abs());
            }
            if fit < u * (1.0 - 1e-12) {
                covers = false;
            }
        }
        (worst, covers)
    };
    let Some((a, b)) = line(&abs, big_u) else {
        return Err("the items do not have two different values".into());
    };
    let lin = |v: f64| a + b * v.abs();
    let (dev, covers) = deviation(&lin);
    let mut out = vec![RangeFit {
        form: "a + b|y|",
        a,
        b,
        max_relative_deviation: dev,
        covers_every_item: covers,
        note: None,
    }];
    let y2: Vec<f64> = y.iter().map(|v| v * v).collect();
    let u2: Vec<f64> = big_u.iter().map(|u| u * u).collect();
    if let Some((a2, b2)) = line(&y2, &u2) {
        let mut note = Vec::new();
        if a2 < 0.0 {
            note.push(format!("a² fitted as {a2:.4e} < 0, taken as 0"));
        }
        if b2 < 0.0 {
            note.push(format!("b² fitted as {b2:.4e} < 0, taken as 0"));
        }
        let (qa, qb) = (a2.max(0.0).sqrt(), b2.max(0.0).sqrt());
        let quad = |v: f64| (qa * qa + (qb * v) * (qb * v)).sqrt();
        let (dev, covers) = deviation(&quad);
        out.push(RangeFit {
            form: "sqrt(a^2 + (b y)^2)",
            a: qa,
            b: qb,
            max_relative_deviation: dev,
            covers_every_item: covers,
            note: (!note.is_empty()).then(|| note.join("; ")),
        });
    }
    Ok(out)
}

/// The summary of the evaluated items.
pub(crate) fn summarise(items: &[Evaluated]) -> Summary {
    let Some(first) = items.first() else {
        return Summary {
            items: 0,
            measurands: Vec::new(),
        };
    };
    let mut measurands = Vec::new();
    for (k, m) in first.results.iter().enumerate() {
        let results: Vec<&super::ItemResult> = items.iter().map(|e| &e.results[k]).collect();
        let values: Vec<f64> = results.iter().map(|r| r.value).collect();
        let big_u: Vec<f64> = results.iter().map(|r| r.expanded_uncertainty).collect();
        let with_spec = results.iter().any(|r| r.conformity.is_some());
        let (mut accepted, mut rejected, mut expected) = (0usize, 0usize, 0.0f64);
        for r in &results {
            if let Some(c) = &r.conformity {
                match c.verdict {
                    Verdict::Accepted => {
                        accepted += 1;
                        if c.risk_kind == RiskKind::Consumer {
                            expected += c.specific_risk;
                        }
                    }
                    _ => rejected += 1,
                }
            }
        }
        let lo = values.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let (fits, not_fitted) = match range_fits(&values, &big_u) {
            Ok(f) => (f, None),
            Err(e) => (Vec::new(), Some(e)),
        };
        measurands.push(MeasurandSummary {
            measurand: m.name.clone(),
            unit: m.unit.clone(),
            items: results.len(),
            accepted: with_spec.then_some(accepted),
            rejected: with_spec.then_some(rejected),
            expected_nonconforming_among_accepted: with_spec.then_some(expected),
            range: [lo, hi],
            uncertainty_over_range: fits,
            not_fitted,
        });
    }
    Summary {
        items: items.len(),
        measurands,
    }
}
