//! The model file's form of a description: flat tables with the file's key
//! names (serde), and the rules that turn the keys of an input or a
//! specification into their typed form. The loader applies the same rules
//! to the keys it reads from text, so a file and a serde round trip agree.

use serde::{Deserialize, Serialize};

use super::*;
use crate::conformity::{Guard, Process, Rule};

/// A problem with the keys of one table: the key (empty for the table
/// itself), the message, and more lines if any.
#[derive(Clone, Debug, PartialEq)]
pub struct KeyProblem {
    /// The key within the table, `""` for the table as a whole.
    pub key: &'static str,
    /// What is wrong.
    pub message: String,
    /// More lines (the allowed values).
    pub detail: Option<String>,
    /// The key whose place in a file to point at, when it is not `key`
    /// itself (a missing key: the key it should go with).
    pub place: Option<&'static str>,
}

fn problem(key: &'static str, message: impl Into<String>) -> KeyProblem {
    KeyProblem {
        key,
        message: message.into(),
        detail: None,
        place: None,
    }
}

/// Ordered maps (`[inputs.NAME]`, `[fits.NAME]`) as vectors of pairs.
mod ordered {
    use serde::de::{MapAccess, Visitor};
    use serde::ser::SerializeMap;
    use serde::{Deserialize, Deserializer, Serialize, Serializer};

    pub fn serialize<S: Serializer, T: Serialize>(
        v: &[(String, T)],
        s: S,
    ) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(v.len()))?;
        for (k, x) in v {
            m.serialize_entry(k, x)?;
        }
        m.end()
    }

    pub fn deserialize<'de, D: Deserializer<'de>, T: Deserialize<'de>>(
        d: D,
    ) -> Result<Vec<(String, T)>, D::Error> {
        struct V<T>(std::marker::PhantomData<T>);
        impl<'de, T: Deserialize<'de>> Visitor<'de> for V<T> {
            type Value = Vec<(String, T)>;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a table")
            }
            fn visit_map<A: MapAccess<'de>>(self, mut a: A) -> Result<Self::Value, A::Error> {
                let mut out = Vec::new();
                while let Some((k, v)) = a.next_entry()? {
                    out.push((k, v));
                }
                Ok(out)
            }
        }
        d.deserialize_map(V(std::marker::PhantomData))
    }
}

#[derive(Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub(crate) struct FileModel {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    title: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    description: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    coverage_probability: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    effective_dof_rounding: Option<DofRounding>,
    #[serde(default, skip_serializing_if = "Vec::is_empty", with = "ordered")]
    fits: Vec<(String, FitKeys)>,
    #[serde(default, skip_serializing_if = "Vec::is_empty", with = "ordered")]
    inputs: Vec<(String, InputKeys)>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    observed_together: Vec<GroupKeys>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    correlations: Vec<CorrelationKeys>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    measurands: Vec<MeasurandKeys>,
}

#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct GroupKeys {
    inputs: Vec<String>,
}

#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct CorrelationKeys {
    inputs: [String; 2],
    coefficient: f64,
}

#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct MeasurandKeys {
    name: String,
    formula: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    description: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    unit: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    expected_value: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    expected_standard_uncertainty: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    specification: Option<SpecificationKeys>,
}

#[derive(Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct FitKeys {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    description: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    data: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    x: Option<Column>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    y: Option<Column>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    y_uncertainty: Option<Column>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    x_uncertainty: Option<Column>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    degree: Option<usize>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    exclude: Vec<usize>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    exclude_reason: Option<String>,
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    scale_by_chi_squared: bool,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    x_unit: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    y_unit: Option<String>,
}

/// A fit's column: a name in the data file, or the numbers.
#[derive(Serialize, Deserialize)]
#[serde(untagged)]
enum Column {
    Name(String),
    Numbers(Vec<f64>),
}

/// The keys of `[inputs.NAME]`, each optional, as a file holds them.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct InputKeys {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub value: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub standard_uncertainty: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub expanded_uncertainty: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub coverage_factor: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub distribution: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub half_width: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lower: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub upper: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub beta: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limit_half_width: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shape: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scale: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dof: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub relative_reliability: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub observations: Option<Vec<f64>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pooled_standard_deviation: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pooled_dof: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub constant: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fit: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub parameter: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unit: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub description: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensitivity: Option<SensitivityKeys>,
}

/// `sensitivity = 2.5`, `sensitivity = "formula"` or a table per measurand.
#[derive(Clone, Debug, Serialize, Deserialize)]
#[serde(untagged)]
pub(crate) enum SensitivityKeys {
    One(CoefficientKey),
    PerMeasurand(#[serde(with = "ordered")] Vec<(String, CoefficientKey)>),
}

#[derive(Clone, Debug, Serialize, Deserialize)]
#[serde(untagged)]
pub(crate) enum CoefficientKey {
    Number(f64),
    Formula(String),
}

/// The keys of a specification as a file holds them.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct SpecificationKeys {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lower: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub upper: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rule: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub guard_multiple: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_specific_risk: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub process_mean: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub process_standard_deviation: Option<f64>,
}

// ---------------------------------------------------------------------
// Typed -> keys.

fn dof_keys(k: &mut InputKeys, dof: Option<DofGiven>) {
    match dof {
        Some(DofGiven::Dof(d)) => k.dof = Some(d),
        Some(DofGiven::RelativeReliability(r)) => k.relative_reliability = Some(r),
        None => {}
    }
}

fn shape_key(s: CentredShape) -> Option<String> {
    match s {
        CentredShape::Normal => None,
        CentredShape::StudentT => Some("t".into()),
    }
}

impl From<&InputDescription> for InputKeys {
    fn from(d: &InputDescription) -> Self {
        let mut k = InputKeys {
            description: d.description.clone(),
            source: d.source.clone(),
            unit: d.unit.clone(),
            ..InputKeys::default()
        };
        match &d.evaluation {
            InputEvaluation::Exact { value } => k.value = Some(*value),
            InputEvaluation::Standard {
                value,
                standard_uncertainty,
                dof,
                shape,
            } => {
                k.value = Some(*value);
                k.standard_uncertainty = Some(*standard_uncertainty);
                k.distribution = shape_key(*shape);
                dof_keys(&mut k, *dof);
            }
            InputEvaluation::Expanded {
                value,
                expanded_uncertainty,
                coverage_factor,
                dof,
                shape,
            } => {
                k.value = Some(*value);
                k.expanded_uncertainty = Some(*expanded_uncertainty);
                k.coverage_factor = Some(*coverage_factor);
                k.distribution = shape_key(*shape);
                dof_keys(&mut k, *dof);
            }
            InputEvaluation::Limits { limits, shape, dof } => {
                match *limits {
                    LimitsGiven::HalfWidth { value, half_width } => {
                        k.value = Some(value);
                        k.half_width = Some(half_width);
                    }
                    LimitsGiven::Bounds {
                        lower,
                        upper,
                        value,
                    } => {
                        k.lower = Some(lower);
                        k.upper = Some(upper);
                        k.value = value;
                    }
                }
                k.distribution = Some(shape.name().into());
                match *shape {
                    LimitShape::Trapezoidal { beta } => k.beta = Some(beta),
                    LimitShape::CurvilinearTrapezoidal { limit_half_width } => {
                        k.limit_half_width = Some(limit_half_width)
                    }
                    _ => {}
                }
                dof_keys(&mut k, *dof);
            }
            InputEvaluation::Observations { values, pooled } => {
                k.observations = Some(values.clone());
                if let Some(p) = pooled {
                    k.pooled_standard_deviation = Some(p.standard_deviation);
                    k.pooled_dof = Some(p.dof);
                }
            }
            InputEvaluation::Gamma { shape, scale, dof } => {
                k.distribution = Some("gamma".into());
                k.shape = Some(*shape);
                k.scale = Some(*scale);
                dof_keys(&mut k, *dof);
            }
            InputEvaluation::Exponential { value, dof } => {
                k.distribution = Some("exponential".into());
                k.value = Some(*value);
                dof_keys(&mut k, *dof);
            }
            InputEvaluation::Constant { name } => k.constant = Some(name.clone()),
            InputEvaluation::FitParameter { fit, parameter } => {
                k.fit = Some(fit.clone());
                k.parameter = Some(parameter.clone());
            }
        }
        k.sensitivity = sensitivity_keys(&d.sensitivity);
        k
    }
}

fn coefficient_key(c: &Coefficient) -> CoefficientKey {
    match c {
        Coefficient::Number(x) => CoefficientKey::Number(*x),
        Coefficient::Formula(f) => CoefficientKey::Formula(f.clone()),
    }
}

fn sensitivity_keys(s: &[StatedCoefficient]) -> Option<SensitivityKeys> {
    match s {
        [] => None,
        [one] if one.measurand.is_none() => Some(SensitivityKeys::One(coefficient_key(&one.value))),
        many => Some(SensitivityKeys::PerMeasurand(
            many.iter()
                .map(|c| {
                    (
                        c.measurand.clone().unwrap_or_default(),
                        coefficient_key(&c.value),
                    )
                })
                .collect(),
        )),
    }
}

impl From<&Specification> for SpecificationKeys {
    fn from(s: &Specification) -> Self {
        let mut k = SpecificationKeys {
            lower: s.lower,
            upper: s.upper,
            rule: Some(s.rule.name().to_string()),
            ..SpecificationKeys::default()
        };
        match s.guard {
            Guard::None => {}
            Guard::MultipleOfU(r) => k.guard_multiple = Some(r),
            Guard::SpecificRisk(a) => k.max_specific_risk = Some(a),
        }
        if let Some(p) = s.process {
            k.process_mean = Some(p.mean);
            k.process_standard_deviation = Some(p.standard_deviation);
        }
        k
    }
}

impl From<ModelDescription> for FileModel {
    fn from(d: ModelDescription) -> Self {
        FileModel {
            title: d.title,
            description: d.description,
            coverage_probability: d.settings.coverage_probability,
            effective_dof_rounding: d.settings.effective_dof_rounding,
            fits: d
                .fits
                .iter()
                .map(|f| (f.name.clone(), fit_keys(f)))
                .collect(),
            inputs: d
                .inputs
                .iter()
                .map(|i| (i.name.clone(), InputKeys::from(i)))
                .collect(),
            observed_together: d
                .observed_together
                .into_iter()
                .map(|inputs| GroupKeys { inputs })
                .collect(),
            correlations: d
                .correlations
                .into_iter()
                .map(|c| CorrelationKeys {
                    inputs: c.inputs,
                    coefficient: c.coefficient,
                })
                .collect(),
            measurands: d
                .measurands
                .into_iter()
                .map(|m| MeasurandKeys {
                    specification: m.specification.as_ref().map(SpecificationKeys::from),
                    name: m.name,
                    formula: m.formula,
                    description: m.description,
                    unit: m.unit,
                    expected_value: m.expected_value,
                    expected_standard_uncertainty: m.expected_standard_uncertainty,
                })
                .collect(),
        }
    }
}

fn fit_keys(f: &FitDescription) -> FitKeys {
    let mut k = FitKeys {
        description: f.description.clone(),
        degree: (f.degree != 1).then_some(f.degree),
        exclude: f.exclude.clone(),
        exclude_reason: f.exclude_reason.clone(),
        scale_by_chi_squared: f.scale_by_chi_squared,
        x_unit: f.x_unit.clone(),
        y_unit: f.y_unit.clone(),
        ..FitKeys::default()
    };
    match &f.data {
        FitData::File {
            path,
            x,
            y,
            y_uncertainty,
            x_uncertainty,
        } => {
            k.data = Some(path.clone());
            k.x = Some(Column::Name(x.clone()));
            k.y = Some(Column::Name(y.clone()));
            k.y_uncertainty = y_uncertainty.clone().map(Column::Name);
            k.x_uncertainty = x_uncertainty.clone().map(Column::Name);
        }
        FitData::Inline {
            x,
            y,
            y_uncertainty,
            x_uncertainty,
        } => {
            k.x = Some(Column::Numbers(x.clone()));
            k.y = Some(Column::Numbers(y.clone()));
            k.y_uncertainty = y_uncertainty.clone().map(Column::Numbers);
            k.x_uncertainty = x_uncertainty.clone().map(Column::Numbers);
        }
    }
    k
}

// ---------------------------------------------------------------------
// Keys -> typed: the rules of which keys go together.

/// What the rules need to know beyond the keys: the line of a key (for
/// messages that name two keys) and the parameter names of a fit.
pub(crate) struct KeyContext<'a> {
    pub line_of: &'a dyn Fn(&str) -> Option<usize>,
    pub fit_parameters: &'a dyn Fn(&str) -> Option<Vec<String>>,
}

impl KeyContext<'_> {
    fn at(&self, key: &str) -> String {
        (self.line_of)(key).map_or(String::new(), |l| format!(" (line {l})"))
    }
}

fn forbid(given: bool, key: &'static str, why: &str) -> Result<(), KeyProblem> {
    if given {
        Err(problem(key, why))
    } else {
        Ok(())
    }
}

impl InputKeys {
    /// The evaluation these keys describe, or what is wrong with them.
    pub(crate) fn evaluation(
        &self,
        name: &str,
        cx: &KeyContext,
    ) -> Result<InputEvaluation, KeyProblem> {
        self.one_description(name, cx)?;
        self.keys_that_go_together()?;
        let dof = match (self.dof, self.relative_reliability) {
            (Some(_), Some(_)) => {
                return Err(problem(
                    "dof",
                    "give dof or relative_reliability, not both (relative_reliability sets dof = 1/(2 r²))",
                ))
            }
            (Some(d), None) => Some(DofGiven::Dof(d)),
            (None, Some(r)) => Some(DofGiven::RelativeReliability(r)),
            (None, None) => None,
        };
        if let Some(fit) = &self.fit {
            return self.fit_parameter(fit, cx);
        }
        if let Some(c) = &self.constant {
            self.forbid_stated(
                "a tabulated constant takes its value and uncertainty from the table",
            )?;
            if self.distribution.is_some() {
                return Err(self.bad_distribution(
                    "a constant takes its distribution from the table (normal, or exact)",
                ));
            }
            return Ok(InputEvaluation::Constant { name: c.clone() });
        }
        if let Some(values) = &self.observations {
            return self.observed(values);
        }
        if let Some(eu) = self.expanded_uncertainty {
            let Some(k) = self.coverage_factor else {
                return Err(problem(
                    "expanded_uncertainty",
                    "give coverage_factor with expanded_uncertainty (u = U/k, JCGM 100:2008, 4.3.3)",
                ));
            };
            let value = self.needs_value(name)?;
            let shape = match self.distribution.as_deref() {
                None | Some("normal") => CentredShape::Normal,
                Some("t") if dof.is_some() => CentredShape::StudentT,
                _ => {
                    return Err(self.bad_distribution(
                        "an expanded uncertainty goes with \"normal\" or, with dof, \"t\"",
                    ))
                }
            };
            return Ok(InputEvaluation::Expanded {
                value,
                expanded_uncertainty: eu,
                coverage_factor: k,
                dof,
                shape,
            });
        }
        if let Some(su) = self.standard_uncertainty {
            let value = self.needs_value(name)?;
            let shape = match self.distribution.as_deref() {
                None | Some("normal") => CentredShape::Normal,
                Some("t") if dof.is_some() => CentredShape::StudentT,
                Some("t") => return Err(self.bad_distribution("a t distribution needs dof")),
                Some(other) => {
                    return Err(self.bad_distribution(&format!(
                        "for a {other} distribution give half_width or lower and upper instead of \
                         standard_uncertainty"
                    )))
                }
            };
            return Ok(InputEvaluation::Standard {
                value,
                standard_uncertainty: su,
                dof,
                shape,
            });
        }
        if self.half_width.is_some() || self.lower.is_some() || self.upper.is_some() {
            return self.limits(name, dof);
        }
        match self.distribution.as_deref() {
            Some("gamma") => {
                let (Some(shape), Some(scale)) = (self.shape, self.scale) else {
                    return Err(self.bad_distribution("a gamma distribution needs shape and scale"));
                };
                forbid(
                    self.value.is_some(),
                    "value",
                    "the estimate of a gamma distribution is shape × scale",
                )?;
                return Ok(InputEvaluation::Gamma { shape, scale, dof });
            }
            Some("exponential") => {
                let Some(value) = self.value else {
                    return Err(
                        self.bad_distribution("an exponential distribution needs value, its mean")
                    );
                };
                return Ok(InputEvaluation::Exponential { value, dof });
            }
            _ => {}
        }
        let Some(value) = self.value else {
            return Err(problem(
                "",
                format!(
                    "`{name}` has no value: give value (and an uncertainty), observations, limits \
                     or constant"
                ),
            ));
        };
        forbid(
            self.dof.is_some(),
            "dof",
            "an exact value has no degrees of freedom",
        )?;
        forbid(
            self.relative_reliability.is_some(),
            "relative_reliability",
            "an exact value has no uncertainty to be reliable",
        )?;
        if self.distribution.as_deref().is_some_and(|d| d != "exact") {
            return Err(self.bad_distribution("a value without an uncertainty is exact"));
        }
        Ok(InputEvaluation::Exact { value })
    }

    /// Exactly one description of the uncertainty.
    fn one_description(&self, name: &str, cx: &KeyContext) -> Result<(), KeyProblem> {
        let bounds = if self.lower.is_some() {
            "lower"
        } else {
            "upper"
        };
        let ways: Vec<(&'static str, &'static str)> = [
            (
                "standard_uncertainty",
                "standard_uncertainty",
                self.standard_uncertainty.is_some(),
            ),
            (
                "expanded_uncertainty",
                "expanded_uncertainty",
                self.expanded_uncertainty.is_some(),
            ),
            ("half_width", "half_width", self.half_width.is_some()),
            (
                "lower/upper",
                bounds,
                self.lower.is_some() || self.upper.is_some(),
            ),
            ("observations", "observations", self.observations.is_some()),
            ("constant", "constant", self.constant.is_some()),
            ("fit", "fit", self.fit.is_some()),
        ]
        .into_iter()
        .filter(|w| w.2)
        .map(|(label, key, _)| (label, key))
        .collect();
        if let [(l0, k0), (l1, k1), ..] = ways[..] {
            return Err(problem(
                k1,
                format!(
                    "two descriptions of the uncertainty of `{name}`: {l0}{} and {l1}{}; give one",
                    cx.at(k0),
                    cx.at(k1)
                ),
            ));
        }
        Ok(())
    }

    /// Keys that only mean something beside another key.
    fn keys_that_go_together(&self) -> Result<(), KeyProblem> {
        let dist = self.distribution.as_deref();
        forbid(
            self.coverage_factor.is_some() && self.expanded_uncertainty.is_none(),
            "coverage_factor",
            "coverage_factor goes with expanded_uncertainty",
        )?;
        forbid(
            self.pooled_dof.is_some() && self.pooled_standard_deviation.is_none(),
            "pooled_dof",
            "pooled_dof goes with pooled_standard_deviation",
        )?;
        forbid(
            self.observations.is_none() && self.pooled_standard_deviation.is_some(),
            "pooled_standard_deviation",
            "a pooled standard deviation goes with observations",
        )?;
        forbid(
            self.beta.is_some() && dist != Some("trapezoidal"),
            "beta",
            "beta goes with distribution = \"trapezoidal\"",
        )?;
        forbid(
            self.limit_half_width.is_some() && dist != Some("curvilinear_trapezoidal"),
            "limit_half_width",
            "limit_half_width goes with distribution = \"curvilinear_trapezoidal\"",
        )?;
        forbid(
            self.shape.is_some() && dist != Some("gamma"),
            "shape",
            "shape goes with distribution = \"gamma\"",
        )?;
        forbid(
            self.scale.is_some() && dist != Some("gamma"),
            "scale",
            "scale goes with distribution = \"gamma\"",
        )?;
        forbid(
            self.parameter.is_some() && self.fit.is_none(),
            "parameter",
            "parameter goes with fit = \"NAME\"",
        )
    }

    fn forbid_stated(&self, why: &str) -> Result<(), KeyProblem> {
        forbid(self.value.is_some(), "value", why)?;
        forbid(self.dof.is_some(), "dof", why)?;
        forbid(
            self.relative_reliability.is_some(),
            "relative_reliability",
            why,
        )
    }

    fn bad_distribution(&self, allowed: &str) -> KeyProblem {
        problem(
            "distribution",
            format!(
                "`{}` does not fit this description of the input; {allowed}",
                self.distribution.as_deref().unwrap_or("")
            ),
        )
    }

    fn needs_value(&self, name: &str) -> Result<f64, KeyProblem> {
        self.value
            .ok_or_else(|| problem("value", format!("`{name}` needs a value (its estimate)")))
    }

    fn fit_parameter(&self, fit: &str, cx: &KeyContext) -> Result<InputEvaluation, KeyProblem> {
        let Some(parameter) = &self.parameter else {
            let names = (cx.fit_parameters)(fit)
                .map_or("the name of one of its parameters".into(), |n| {
                    format!("one of {}", n.join(", "))
                });
            let mut p = problem(
                "parameter",
                format!("give parameter = {names} (the parameters of fit `{fit}`)"),
            );
            p.place = Some("fit");
            return Err(p);
        };
        self.forbid_stated("a fitted parameter takes its value, uncertainty and dof from the fit")?;
        if self.distribution.is_some() {
            return Err(
                self.bad_distribution("a fitted parameter takes its distribution from the fit")
            );
        }
        Ok(InputEvaluation::FitParameter {
            fit: fit.to_string(),
            parameter: parameter.clone(),
        })
    }

    fn observed(&self, values: &[f64]) -> Result<InputEvaluation, KeyProblem> {
        forbid(
            self.value.is_some(),
            "value",
            "the estimate of a Type A input is the mean of its observations",
        )?;
        forbid(
            self.dof.is_some(),
            "dof",
            "the dof of a Type A input is n - 1, or pooled_dof with a pooled standard deviation",
        )?;
        forbid(
            self.relative_reliability.is_some(),
            "relative_reliability",
            "relative_reliability goes with a Type B evaluation",
        )?;
        if self.distribution.as_deref().is_some_and(|d| d != "t") {
            return Err(
                self.bad_distribution("observations give a t distribution (JCGM 101:2008, 6.4.9)")
            );
        }
        let pooled = match (self.pooled_standard_deviation, self.pooled_dof) {
            (None, _) => None,
            (Some(_), None) => {
                return Err(problem(
                    "pooled_standard_deviation",
                    "give pooled_dof, the degrees of freedom of the pooled standard deviation \
                     (JCGM 100:2008, 4.2.4)",
                ))
            }
            (Some(s), Some(d)) => Some(Pooled {
                standard_deviation: s,
                dof: d,
            }),
        };
        Ok(InputEvaluation::Observations {
            values: values.to_vec(),
            pooled,
        })
    }

    fn limits(&self, name: &str, dof: Option<DofGiven>) -> Result<InputEvaluation, KeyProblem> {
        let limits = match (self.half_width, self.lower, self.upper) {
            (Some(h), None, None) => {
                let Some(value) = self.value else {
                    return Err(problem(
                        "half_width",
                        format!("`{name}` needs a value to put the half_width around"),
                    ));
                };
                LimitsGiven::HalfWidth {
                    value,
                    half_width: h,
                }
            }
            (None, Some(lower), Some(upper)) => LimitsGiven::Bounds {
                lower,
                upper,
                value: self.value,
            },
            _ => return Err(problem("lower", "give both lower and upper")),
        };
        let shape =
            match self.distribution.as_deref() {
                Some("rectangular") => LimitShape::Rectangular,
                Some("triangular") => LimitShape::Triangular,
                Some("arcsine") => LimitShape::Arcsine,
                Some("trapezoidal") => {
                    let Some(beta) = self.beta else {
                        return Err(self.bad_distribution(
                            "a trapezoidal distribution needs beta, the ratio of the half-widths \
                         of its top and its base (0 to 1)",
                        ));
                    };
                    LimitShape::Trapezoidal { beta }
                }
                Some("curvilinear_trapezoidal") => {
                    let Some(d) = self.limit_half_width else {
                        return Err(self.bad_distribution(
                        "a curvilinear trapezoid needs limit_half_width, the half-width of the \
                         interval in which each limit lies (JCGM 101:2008, 6.4.3)",
                    ));
                    };
                    LimitShape::CurvilinearTrapezoidal {
                        limit_half_width: d,
                    }
                }
                None => return Err(problem(
                    "distribution",
                    "limits need a distribution: \"rectangular\", \"triangular\", \"arcsine\" or \
                     \"trapezoidal\"",
                )),
                Some(_) => {
                    return Err(self.bad_distribution(
                        "limits go with rectangular, triangular, arcsine or trapezoidal",
                    ))
                }
            };
        Ok(InputEvaluation::Limits { limits, shape, dof })
    }
}

fn coefficient(c: &CoefficientKey) -> Coefficient {
    match c {
        CoefficientKey::Number(x) => Coefficient::Number(*x),
        CoefficientKey::Formula(f) => Coefficient::Formula(f.clone()),
    }
}

impl SensitivityKeys {
    pub(crate) fn stated(&self) -> Vec<StatedCoefficient> {
        match self {
            SensitivityKeys::One(c) => vec![StatedCoefficient {
                measurand: None,
                value: coefficient(c),
            }],
            SensitivityKeys::PerMeasurand(v) => v
                .iter()
                .map(|(m, c)| StatedCoefficient {
                    measurand: Some(m.clone()),
                    value: coefficient(c),
                })
                .collect(),
        }
    }
}

/// The decision rules by their names in model files.
pub(crate) const RULES: [&str; 3] = [
    "simple acceptance",
    "guarded acceptance",
    "guarded rejection",
];

impl SpecificationKeys {
    /// The specification these keys describe, or what is wrong with them.
    pub(crate) fn specification(&self) -> Result<Specification, KeyProblem> {
        if self.lower.is_none() && self.upper.is_none() {
            return Err(problem(
                "",
                "a specification needs `lower`, `upper` or both (the tolerance limits, in the measurand's unit)",
            ));
        }
        let (multiple, risk) = (self.guard_multiple, self.max_specific_risk);
        let rule = match self.rule.as_deref() {
            None => {
                if multiple.is_some() || risk.is_some() {
                    return Err(problem(
                        "",
                        "a guard band is given but no `rule`: say \"guarded acceptance\" or \"guarded rejection\"",
                    ));
                }
                Rule::SimpleAcceptance
            }
            Some("simple acceptance") => Rule::SimpleAcceptance,
            Some("guarded acceptance") => Rule::GuardedAcceptance,
            Some("guarded rejection") => Rule::GuardedRejection,
            Some(other) => {
                let mut msg = format!("unknown decision rule `{other}`");
                if let Some(c) = crate::load::closest(other, RULES.iter().copied()) {
                    msg.push_str(&format!("; did you mean `{c}`?"));
                }
                let mut p = problem("rule", msg);
                p.detail = Some(format!("rules: {}", RULES.join(", ")));
                return Err(p);
            }
        };
        let guard = match (rule, multiple, risk) {
            (Rule::SimpleAcceptance, None, None) => Guard::None,
            (Rule::SimpleAcceptance, m, _) => {
                return Err(problem(
                    if m.is_some() {
                        "guard_multiple"
                    } else {
                        "max_specific_risk"
                    },
                    "simple acceptance has no guard band; use rule = \"guarded acceptance\" or \"guarded rejection\"",
                ));
            }
            (_, Some(_), Some(_)) => {
                return Err(problem(
                    "max_specific_risk",
                    "give either `guard_multiple` or `max_specific_risk`, not both",
                ));
            }
            (_, None, None) => {
                return Err(problem(
                    "",
                    format!(
                        "{} needs a guard band: `guard_multiple` (w = r U) or `max_specific_risk` (the largest \
                         specific risk, e.g. 0.05)",
                        rule.name()
                    ),
                ));
            }
            (_, Some(r), None) => Guard::MultipleOfU(r),
            (_, None, Some(a)) => Guard::SpecificRisk(a),
        };
        let process = match (self.process_mean, self.process_standard_deviation) {
            (None, None) => None,
            (Some(mean), Some(standard_deviation)) => Some(Process {
                mean,
                standard_deviation,
            }),
            _ => {
                return Err(problem(
                    "",
                    "the process distribution needs both `process_mean` and `process_standard_deviation`",
                ))
            }
        };
        Ok(Specification {
            lower: self.lower,
            upper: self.upper,
            rule,
            guard,
            process,
        })
    }
}

// ---------------------------------------------------------------------
// serde: the file form back to a description (no places in a file here;
// problems name the key path).

impl TryFrom<FileModel> for ModelDescription {
    type Error = String;

    fn try_from(f: FileModel) -> Result<Self, String> {
        let degrees: Vec<(String, usize)> = f
            .fits
            .iter()
            .map(|(n, k)| (n.clone(), k.degree.unwrap_or(1)))
            .collect();
        let fit_parameters = |fit: &str| {
            degrees
                .iter()
                .find(|(n, _)| n == fit)
                .map(|(_, d)| incertus_fit::coefficient_names(*d))
        };
        let cx = KeyContext {
            line_of: &|_| None,
            fit_parameters: &fit_parameters,
        };
        let at = |path: String, p: KeyProblem| {
            let key = if p.key.is_empty() {
                path
            } else {
                format!("{path}.{}", p.key)
            };
            format!("`{key}`: {}", p.message)
        };
        let mut d = ModelDescription {
            title: f.title,
            description: f.description,
            settings: Settings {
                coverage_probability: f.coverage_probability,
                effective_dof_rounding: f.effective_dof_rounding,
            },
            ..ModelDescription::default()
        };
        for (name, k) in f.fits {
            d.fits.push(fit_from_keys(&name, k)?);
        }
        for (name, k) in f.inputs {
            let evaluation = k
                .evaluation(&name, &cx)
                .map_err(|p| at(format!("inputs.{name}"), p))?;
            d.inputs.push(InputDescription {
                description: k.description.clone(),
                source: k.source.clone(),
                unit: k.unit.clone(),
                evaluation,
                sensitivity: k
                    .sensitivity
                    .as_ref()
                    .map(SensitivityKeys::stated)
                    .unwrap_or_default(),
                name,
            });
        }
        d.observed_together = f.observed_together.into_iter().map(|g| g.inputs).collect();
        d.correlations = f
            .correlations
            .into_iter()
            .map(|c| CorrelationDescription {
                inputs: c.inputs,
                coefficient: c.coefficient,
            })
            .collect();
        for (i, m) in f.measurands.into_iter().enumerate() {
            let specification = match &m.specification {
                None => None,
                Some(s) => Some(
                    s.specification()
                        .map_err(|p| at(format!("measurands[{i}].specification"), p))?,
                ),
            };
            d.measurands.push(MeasurandDescription {
                name: m.name,
                formula: m.formula,
                description: m.description,
                unit: m.unit,
                expected_value: m.expected_value,
                expected_standard_uncertainty: m.expected_standard_uncertainty,
                specification,
            });
        }
        Ok(d)
    }
}

fn fit_from_keys(name: &str, k: FitKeys) -> Result<FitDescription, String> {
    let bad = |m: &str| format!("`fits.{name}`: {m}");
    let data = match (k.data, k.x, k.y) {
        (Some(path), Some(Column::Name(x)), Some(Column::Name(y))) => {
            let name_of = |c: Option<Column>| match c {
                None => Ok(None),
                Some(Column::Name(n)) => Ok(Some(n)),
                Some(Column::Numbers(_)) => Err(bad("with data = FILE, columns are named")),
            };
            FitData::File {
                path,
                x,
                y,
                y_uncertainty: name_of(k.y_uncertainty)?,
                x_uncertainty: name_of(k.x_uncertainty)?,
            }
        }
        (None, Some(Column::Numbers(x)), Some(Column::Numbers(y))) => {
            let numbers = |c: Option<Column>| match c {
                None => Ok(None),
                Some(Column::Numbers(n)) => Ok(Some(n)),
                Some(Column::Name(_)) => Err(bad("without data, columns are numbers")),
            };
            FitData::Inline {
                x,
                y,
                y_uncertainty: numbers(k.y_uncertainty)?,
                x_uncertainty: numbers(k.x_uncertainty)?,
            }
        }
        _ => {
            return Err(bad(
                "give data = \"FILE.csv\" with column names x and y, or x = [numbers] and y = [numbers]",
            ))
        }
    };
    Ok(FitDescription {
        name: name.to_string(),
        description: k.description,
        data,
        degree: k.degree.unwrap_or(1),
        exclude: k.exclude,
        exclude_reason: k.exclude_reason,
        scale_by_chi_squared: k.scale_by_chi_squared,
        x_unit: k.x_unit,
        y_unit: k.y_unit,
    })
}
