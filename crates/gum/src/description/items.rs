//! Keys from a table of items (`eval --items`): the cells of one row
//! applied to an input of the model.

use super::file::{InputKeys, KeyContext, KeyProblem};
use super::{InputDescription, InputEvaluation};

/// The value of one cell of a table of items for a key of an input.
#[derive(Clone, Debug, PartialEq)]
pub enum KeyValue {
    /// A number (`value`, `standard_uncertainty`, `half_width`, ...).
    Number(f64),
    /// A word (`distribution`).
    Text(String),
    /// A series (`observations`).
    Numbers(Vec<f64>),
}

/// What a key of an item table holds, `None` for a key a table of items
/// cannot set (the unit, the description, and what ties an input to a fit
/// or a constant stay as the model file gives them).
pub fn item_key_kind(key: &str) -> Option<&'static str> {
    Some(match key {
        "value"
        | "standard_uncertainty"
        | "expanded_uncertainty"
        | "coverage_factor"
        | "half_width"
        | "lower"
        | "upper"
        | "beta"
        | "limit_half_width"
        | "shape"
        | "scale"
        | "dof"
        | "relative_reliability"
        | "pooled_standard_deviation"
        | "pooled_dof" => "number",
        "distribution" => "word",
        "observations" => "series",
        _ => return None,
    })
}

/// Keys that by themselves say nothing about the uncertainty.
const ESTIMATE_ONLY: &[&str] = &["value"];

fn set_key(k: &mut InputKeys, key: &str, v: &KeyValue) -> Result<(), String> {
    let num = |v: &KeyValue| match v {
        KeyValue::Number(x) => Ok(*x),
        _ => Err(format!("`{key}` takes a number")),
    };
    match key {
        "value" => k.value = Some(num(v)?),
        "standard_uncertainty" => k.standard_uncertainty = Some(num(v)?),
        "expanded_uncertainty" => k.expanded_uncertainty = Some(num(v)?),
        "coverage_factor" => k.coverage_factor = Some(num(v)?),
        "half_width" => k.half_width = Some(num(v)?),
        "lower" => k.lower = Some(num(v)?),
        "upper" => k.upper = Some(num(v)?),
        "beta" => k.beta = Some(num(v)?),
        "limit_half_width" => k.limit_half_width = Some(num(v)?),
        "shape" => k.shape = Some(num(v)?),
        "scale" => k.scale = Some(num(v)?),
        "dof" => k.dof = Some(num(v)?),
        "relative_reliability" => k.relative_reliability = Some(num(v)?),
        "pooled_standard_deviation" => k.pooled_standard_deviation = Some(num(v)?),
        "pooled_dof" => k.pooled_dof = Some(num(v)?),
        "distribution" => match v {
            KeyValue::Text(t) => k.distribution = Some(t.clone()),
            _ => return Err("`distribution` takes a word".into()),
        },
        "observations" => match v {
            KeyValue::Numbers(xs) => k.observations = Some(xs.clone()),
            _ => return Err("`observations` takes a series of numbers".into()),
        },
        other => return Err(format!("`{other}` cannot be set by a table of items")),
    }
    Ok(())
}

impl InputDescription {
    /// This input with the keys of one row of a table of items applied.
    /// Keys that by themselves define an evaluation (a series; a value
    /// with its standard uncertainty; a value with a half-width and a
    /// distribution; ...) replace the evaluation the model gives; keys that
    /// do not (the estimate alone, a half-width alone) replace only
    /// themselves in it; uncertainty keys that describe the uncertainty
    /// another way than the model (an expanded uncertainty with its k for a
    /// stated u) replace the model's description of it and keep its
    /// estimate. The unit, description and source stay. An error names the
    /// key at fault and what is wrong.
    pub fn with_keys(
        &self,
        keys: &[(String, KeyValue)],
    ) -> Result<InputDescription, (String, String)> {
        let mut row = InputKeys::default();
        for (key, v) in keys {
            set_key(&mut row, key, v).map_err(|m| (key.clone(), m))?;
        }
        let no_lines = |_: &str| None;
        let no_fits = |_: &str| None;
        let cx = KeyContext {
            line_of: &no_lines,
            fit_parameters: &no_fits,
        };
        let problem = |p: KeyProblem| {
            let mut m = p.message;
            if let Some(d) = p.detail {
                m.push_str("; ");
                m.push_str(&d);
            }
            (p.key.to_string(), m)
        };
        let defines = keys
            .iter()
            .any(|(k, _)| !ESTIMATE_ONLY.contains(&k.as_str()));
        if defines {
            if let Ok(evaluation) = row.evaluation(&self.name, &cx) {
                return Ok(InputDescription {
                    evaluation,
                    ..self.clone()
                });
            }
        }
        if matches!(
            self.evaluation,
            InputEvaluation::Constant { .. } | InputEvaluation::FitParameter { .. }
        ) {
            return Err((
                keys.first().map(|k| k.0.clone()).unwrap_or_default(),
                format!(
                    "`{}` is {} in the model; a table of items cannot change it",
                    self.name,
                    if matches!(self.evaluation, InputEvaluation::Constant { .. }) {
                        "a tabulated constant"
                    } else {
                        "a parameter of a fit"
                    }
                ),
            ));
        }
        if !defines && matches!(self.evaluation, InputEvaluation::Observations { .. }) {
            return Err((
                keys[0].0.clone(),
                format!(
                    "`{}` is a series of observations in the model, so its estimate is their mean; \
                     give the item's series in a column `{}.observations`",
                    self.name, self.name
                ),
            ));
        }
        let base = InputKeys::from(self);
        let mut all = base.clone();
        for (key, v) in keys {
            set_key(&mut all, key, v).map_err(|m| (key.clone(), m))?;
        }
        let evaluation = match all.evaluation(&self.name, &cx) {
            Ok(e) => e,
            // The row describes the uncertainty another way than the model
            // (an expanded uncertainty for a standard one, limits for a
            // series): its keys with the model's estimate.
            Err(first) if defines => {
                let mut with_value = InputKeys {
                    value: base.value,
                    ..InputKeys::default()
                };
                for (key, v) in keys {
                    set_key(&mut with_value, key, v).map_err(|m| (key.clone(), m))?;
                }
                with_value
                    .evaluation(&self.name, &cx)
                    .map_err(|_| problem(first))?
            }
            Err(p) => return Err(problem(p)),
        };
        Ok(InputDescription {
            evaluation,
            ..self.clone()
        })
    }
}
