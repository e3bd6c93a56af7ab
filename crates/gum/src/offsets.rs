//! Points and intervals on a scale with an offset (the Celsius scale):
//! whether a measurand reported in °C is a temperature on the scale or a
//! temperature difference.
//!
//! SI Brochure (9th ed.), 2.3.1 and table 4: t/°C = T/K − 273.15, and a
//! difference of Celsius temperatures is the same number in kelvins. So a
//! difference of two readings in °C must be reported without the offset,
//! and a reading corrected by a difference keeps it.
//!
//! The rule. Shift every input given on the offset scale (the points) by
//! the same δ: a formula y changes by W·δ with W = Σ_points ∂y/∂x_i. W = 1
//! everywhere means y is a point (a reading, a point plus intervals, a
//! weighted mean whose weights sum to 1); W = 0 means an interval (a
//! difference of points, a slope times a difference); anything else (2t,
//! t₁·t₂, weights that do not sum to 1) is neither, and reporting it on the
//! scale would be meaningless, so it is refused. W is computed symbolically
//! and checked at the estimates and at three moved points. With no input
//! on the scale (temperatures in K), a result in °C is a point.

use incertus_expr::{derivative, Expr};

use crate::model::Input;

/// What a formula of the inputs is on an offset scale.
#[derive(Clone, Debug, PartialEq)]
pub enum OnScale {
    /// A point: converted with the offset.
    Point,
    /// A difference of points: converted by the factor alone.
    Interval,
    /// Neither; the message says why.
    Neither(String),
}

/// Classify `f` (a formula of the inputs alone, measurands substituted).
pub fn classify(f: &Expr, inputs: &[Input]) -> OnScale {
    let points: Vec<&Input> = inputs
        .iter()
        .filter(|i| i.unit_si.as_ref().is_some_and(|u| u.offset != 0.0))
        .filter(|i| f.depends_on(&i.name))
        .collect();
    if points.is_empty() {
        return OnScale::Point;
    }
    let weight: Vec<Expr> = points.iter().map(|p| derivative(f, &p.name)).collect();
    let moves: [fn(usize) -> f64; 4] = [
        |_| 0.0,
        |_| 1.0,
        |_| -1.0,
        |i| if i % 2 == 0 { 1.0 } else { -1.0 },
    ];
    let mut seen: Vec<f64> = Vec::new();
    for shift in moves {
        let env: Vec<(&str, f64)> = inputs
            .iter()
            .enumerate()
            .map(|(k, i)| {
                let step = if i.standard_uncertainty > 0.0 {
                    i.standard_uncertainty
                } else {
                    1e-3 * i.estimate.abs().max(1.0)
                };
                (i.name.as_str(), i.estimate + shift(k) * step)
            })
            .collect();
        let w: Result<f64, _> = weight
            .iter()
            .map(|d| d.eval::<f64, _>(env.as_slice()))
            .sum();
        if let Ok(w) = w {
            seen.push(w);
        }
    }
    let names: Vec<&str> = points.iter().map(|p| p.name.as_str()).collect();
    if seen.is_empty() {
        return OnScale::Neither(format!(
            "cannot tell whether this is a temperature on the scale or a difference: the weights of \
             {} cannot be evaluated",
            names.join(", ")
        ));
    }
    if seen.iter().all(|w| (w - 1.0).abs() <= 1e-9) {
        OnScale::Point
    } else if seen.iter().all(|w| w.abs() <= 1e-9) {
        OnScale::Interval
    } else {
        OnScale::Neither(format!(
            "reported on a scale with an offset (°C), the result must be a temperature on the scale \
             (the weights of the inputs given in °C sum to 1, as in a reading, a reading plus a \
             correction or a weighted mean) or a difference (they sum to 0); here the weights of {} \
             sum to {} at the estimates. Report it in K (SI Brochure, 9th ed., 2.3.1)",
            names.join(", "),
            crate::rounding::significant_si(seen[0], 6)
        ))
    }
}
