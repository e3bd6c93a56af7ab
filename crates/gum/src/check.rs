//! Checking a budget derived by hand: the sensitivity coefficients an author
//! stated (numbers or formulas) and the value and standard uncertainty they
//! expect, against what the law of propagation gives.
//!
//! A stated number agrees when it differs from the computed one by no more
//! than the rounding its written digits imply (half a unit in the last
//! digit) plus 1e-9 relative. A stated formula must agree (to 1e-9 relative)
//! at the input estimates and also at three points moved by the standard
//! uncertainties, so that a wrong formula that happens to give the right
//! number at the estimates is caught (common practice, no published source).

use incertus_expr::{derivative, Expr};
use serde::Serialize;

use crate::model::{Model, Stated, StatedSensitivity};
use crate::propagate::{expanded_formulas, Report};

/// One comparison.
#[derive(Clone, Debug, Serialize)]
pub struct CheckItem {
    /// What is compared, e.g. "sensitivity of d in V".
    pub what: String,
    /// 1-based line of the stated figure in the model file.
    pub line: usize,
    /// The figure as stated.
    pub stated: String,
    /// The figure as computed.
    pub computed: f64,
    /// (stated − computed) / |computed|, when computed is not 0.
    pub relative_difference: Option<f64>,
    /// Whether they agree within the rounding of the stated figure.
    pub agrees: bool,
    /// Why it disagrees, in words.
    pub note: Option<String>,
}

/// All comparisons of a model.
#[derive(Clone, Debug, Serialize)]
pub struct CheckReport {
    /// One item per stated figure.
    pub items: Vec<CheckItem>,
}

impl CheckReport {
    /// Whether every stated figure agrees.
    pub fn all_agree(&self) -> bool {
        self.items.iter().all(|i| i.agrees)
    }
}

/// A stated number agrees when it lies within the rounding its digits
/// imply; a stated 0 (no significant digit) agrees only with 0, and a
/// figure that is not finite never agrees.
fn number_agrees(s: &Stated, computed: f64) -> bool {
    if !s.value.is_finite() || !computed.is_finite() {
        return false;
    }
    if s.value == 0.0 && computed != 0.0 {
        return false;
    }
    (s.value - computed).abs() <= s.rounding() + 1e-9 * computed.abs()
}

fn rel(stated: f64, computed: f64) -> Option<f64> {
    let r = (stated - computed) / computed.abs();
    (computed != 0.0 && r.is_finite()).then_some(r)
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs()) || a == b
}

/// Compare every stated figure of the model with the report.
pub fn check(model: &Model, report: &Report) -> CheckReport {
    let mut items = Vec::new();
    let expanded = expanded_formulas(model);
    for (mi, m) in model.measurands.iter().enumerate() {
        let r = &report.results[mi];
        if let Some(s) = &m.expected_value {
            items.push(CheckItem {
                what: format!("value of {}", m.name),
                line: s.line,
                stated: s.text.clone(),
                computed: r.value,
                relative_difference: rel(s.value, r.value),
                agrees: number_agrees(s, r.value),
                note: None,
            });
        }
        if let Some(s) = &m.expected_standard_uncertainty {
            items.push(CheckItem {
                what: format!("standard uncertainty of {}", m.name),
                line: s.line,
                stated: s.text.clone(),
                computed: r.standard_uncertainty,
                relative_difference: rel(s.value, r.standard_uncertainty),
                agrees: number_agrees(s, r.standard_uncertainty),
                note: None,
            });
        }
        let f = &expanded[mi].1;
        for inp in &model.inputs {
            for (target, stated) in &inp.stated_sensitivities {
                if target != &m.name {
                    continue;
                }
                let computed = r
                    .budget
                    .iter()
                    .find(|b| b.input == inp.name)
                    .map_or(0.0, |b| b.sensitivity);
                let what = format!("sensitivity coefficient of {} in {}", inp.name, m.name);
                match stated {
                    StatedSensitivity::Number(s) => items.push(CheckItem {
                        what,
                        line: s.line,
                        stated: s.text.clone(),
                        computed,
                        relative_difference: rel(s.value, computed),
                        agrees: number_agrees(s, computed),
                        note: None,
                    }),
                    StatedSensitivity::Formula { text, expr, line } => {
                        // Both the stated formula and the derivative are
                        // evaluated in coherent SI (the inputs' values are
                        // held so); the figures shown are converted to the
                        // budget's units by f_in/f_out, and the relative
                        // difference is the one the verdict was made on.
                        let d = derivative(f, &inp.name);
                        let to_shown = inp.unit_factor() / m.unit_factor();
                        let cmp = compare_formula(model, &expanded, expr, &d, to_shown);
                        items.push(CheckItem {
                            what,
                            line: *line,
                            stated: match cmp.stated_at_estimates {
                                Some(v) => format!(
                                    "{text} = {}",
                                    crate::rounding::significant_si(v * to_shown, 8)
                                ),
                                None => text.clone(),
                            },
                            computed,
                            relative_difference: cmp.relative_difference,
                            agrees: cmp.agrees,
                            note: cmp.note,
                        });
                    }
                }
            }
        }
    }
    CheckReport { items }
}

/// Evaluate a stated formula (which may use inputs and measurands) and the
/// symbolic derivative at the estimates and at moved points.
struct FormulaComparison {
    agrees: bool,
    /// The stated formula's value at the estimates, in coherent SI.
    stated_at_estimates: Option<f64>,
    /// (stated − derivative)/|derivative| where the verdict was made: at the
    /// first point where they differ, else at the estimates.
    relative_difference: Option<f64>,
    note: Option<String>,
}

fn compare_formula(
    model: &Model,
    expanded: &[(String, Expr)],
    stated: &Expr,
    symbolic: &Expr,
    to_shown: f64,
) -> FormulaComparison {
    let result = |agrees, at: Option<f64>, rd, note| FormulaComparison {
        agrees,
        stated_at_estimates: at,
        relative_difference: rd,
        note,
    };
    let mut relative_at_estimates = None;
    let n = model.inputs.len();
    type Shift = fn(usize) -> f64;
    let patterns: [(&str, Shift); 4] = [
        ("at the estimates", |_| 0.0),
        (
            "with every input raised by its standard uncertainty",
            |_| 1.0,
        ),
        (
            "with every input lowered by its standard uncertainty",
            |_| -1.0,
        ),
        (
            "with the inputs moved alternately up and down by their standard uncertainties",
            |i| if i % 2 == 0 { 1.0 } else { -1.0 },
        ),
    ];
    let mut at_estimate = None;
    for (k, (where_, shift)) in patterns.iter().enumerate() {
        let xs: Vec<f64> = (0..n)
            .map(|i| model.inputs[i].estimate + shift(i) * model.inputs[i].standard_uncertainty)
            .collect();
        let mut env: Vec<(&str, f64)> = model
            .inputs
            .iter()
            .zip(&xs)
            .map(|(i, v)| (i.name.as_str(), *v))
            .collect();
        let mut ok = true;
        for (name, e) in expanded {
            match e.eval::<f64, _>(env.as_slice()) {
                Ok(v) => env.push((name.as_str(), v)),
                Err(_) => ok = false,
            }
        }
        if !ok {
            continue; // the model is not defined there; skip this point
        }
        let a = stated.eval::<f64, _>(env.as_slice());
        let b = symbolic.eval::<f64, _>(env.as_slice());
        match (a, b) {
            (Ok(a), Ok(b)) => {
                if k == 0 {
                    at_estimate = Some(a);
                    relative_at_estimates = rel(a, b);
                }
                if !close(a, b) {
                    let (a_shown, b_shown) = (a * to_shown, b * to_shown);
                    let note = if k == 0 {
                        format!(
                            "the stated formula gives {a_shown} {where_}, the derivative {b_shown}"
                        )
                    } else {
                        format!(
                            "the stated formula agrees at the estimates but not {where_} \
                             ({a_shown} against {b_shown}): it is not the derivative of the model"
                        )
                    };
                    return result(false, at_estimate, rel(a, b), Some(note));
                }
            }
            (Err(e), _) if k == 0 => {
                return result(
                    false,
                    None,
                    None,
                    Some(format!(
                        "the stated formula cannot be evaluated at the estimates: {}",
                        e.message
                    )),
                )
            }
            _ => {}
        }
    }
    result(true, at_estimate, relative_at_estimates, None)
}
