//! Building a model in Rust. The builder fills a
//! [`crate::description::ModelDescription`] — no model-file
//! text is written — and validates it with the same step as the loader, so a
//! model built here is checked exactly as a file would be, and
//! [`ModelBuilder::to_toml`] gives the file that reproduces it. Errors name
//! the key path (`inputs.α.standard_uncertainty`).
//!
//! ```
//! use incertus_gum::builder::ModelBuilder;
//! use incertus_gum::{propagate, Options};
//! let model = ModelBuilder::new()
//!     .title("Area of a plate")
//!     .input("a", |i| i.value(0.25).standard_uncertainty(0.001).unit("m"))
//!     .input("b", |i| i.value(0.40).rectangular(0.002).unit("m"))
//!     .measurand("A", "a*b", Some("m^2"))
//!     .build()
//!     .unwrap();
//! let r = propagate(&model, &Options::default()).unwrap();
//! assert!((r.results[0].value - 0.1).abs() < 1e-15);
//! ```

use crate::description::*;
use crate::load::ModelError;
use crate::model::Model;

/// One input being described: the last evaluation given wins.
#[derive(Clone, Debug, Default)]
pub struct InputBuilder {
    value: Option<f64>,
    uncertainty: Option<Uncertainty>,
    dof: Option<f64>,
    unit: Option<String>,
    description: Option<String>,
    source: Option<String>,
}

#[derive(Clone, Debug)]
enum Uncertainty {
    Standard(f64),
    Expanded(f64, f64),
    Limits(LimitShape, f64),
    Observations(Vec<f64>),
    Constant(String),
}

impl InputBuilder {
    /// The estimate.
    pub fn value(mut self, v: f64) -> Self {
        self.value = Some(v);
        self
    }
    /// The standard uncertainty (normal unless dof are given).
    pub fn standard_uncertainty(mut self, u: f64) -> Self {
        self.uncertainty = Some(Uncertainty::Standard(u));
        self
    }
    /// Degrees of freedom of a Type B evaluation.
    pub fn dof(mut self, d: f64) -> Self {
        self.dof = Some(d);
        self
    }
    /// An expanded uncertainty U with its coverage factor k (u = U/k).
    pub fn expanded(mut self, big_u: f64, k: f64) -> Self {
        self.uncertainty = Some(Uncertainty::Expanded(big_u, k));
        self
    }
    /// A rectangular distribution of half-width a around the value.
    pub fn rectangular(mut self, half_width: f64) -> Self {
        self.uncertainty = Some(Uncertainty::Limits(LimitShape::Rectangular, half_width));
        self
    }
    /// A triangular distribution of half-width a around the value.
    pub fn triangular(mut self, half_width: f64) -> Self {
        self.uncertainty = Some(Uncertainty::Limits(LimitShape::Triangular, half_width));
        self
    }
    /// An arc-sine distribution of half-width a around the value.
    pub fn arcsine(mut self, half_width: f64) -> Self {
        self.uncertainty = Some(Uncertainty::Limits(LimitShape::Arcsine, half_width));
        self
    }
    /// A series of observations (Type A).
    pub fn observations(mut self, obs: &[f64]) -> Self {
        self.uncertainty = Some(Uncertainty::Observations(obs.to_vec()));
        self
    }
    /// A constant of the built-in CODATA table.
    pub fn constant(mut self, name: &str) -> Self {
        self.uncertainty = Some(Uncertainty::Constant(name.to_string()));
        self
    }
    /// The unit the numbers are given in.
    pub fn unit(mut self, u: &str) -> Self {
        self.unit = Some(u.to_string());
        self
    }
    /// Free text for reports.
    pub fn description(mut self, d: &str) -> Self {
        self.description = Some(d.to_string());
        self
    }
    /// Where the value or its uncertainty comes from (a certificate, a
    /// handbook), for the record a report carries.
    pub fn source(mut self, s: &str) -> Self {
        self.source = Some(s.to_string());
        self
    }

    fn describe(self, name: &str) -> InputDescription {
        let dof = self.dof.map(DofGiven::Dof);
        let value = self.value.unwrap_or(f64::NAN);
        let shape = CentredShape::Normal;
        let evaluation = match self.uncertainty {
            None => InputEvaluation::Exact { value },
            Some(Uncertainty::Standard(u)) => InputEvaluation::Standard {
                value,
                standard_uncertainty: u,
                dof,
                shape,
            },
            Some(Uncertainty::Expanded(big_u, k)) => InputEvaluation::Expanded {
                value,
                expanded_uncertainty: big_u,
                coverage_factor: k,
                dof,
                shape,
            },
            Some(Uncertainty::Limits(shape, a)) => InputEvaluation::Limits {
                limits: LimitsGiven::HalfWidth {
                    value,
                    half_width: a,
                },
                shape,
                dof,
            },
            Some(Uncertainty::Observations(values)) => InputEvaluation::Observations {
                values,
                pooled: None,
            },
            Some(Uncertainty::Constant(name)) => InputEvaluation::Constant { name },
        };
        InputDescription {
            name: name.to_string(),
            description: self.description,
            source: self.source,
            unit: self.unit,
            evaluation,
            sensitivity: Vec::new(),
        }
    }
}

/// A model being built.
#[derive(Clone, Debug, Default)]
pub struct ModelBuilder {
    description: ModelDescription,
    /// Inputs given no value where their evaluation needs one.
    without_value: Vec<String>,
}

impl ModelBuilder {
    /// An empty model.
    pub fn new() -> Self {
        ModelBuilder::default()
    }
    /// A title for reports.
    pub fn title(mut self, t: &str) -> Self {
        self.description.title = Some(t.to_string());
        self
    }
    /// The coverage probability (default 0.95).
    pub fn coverage_probability(mut self, p: f64) -> Self {
        self.description.settings.coverage_probability = Some(p);
        self
    }
    /// An input, described by `f`.
    pub fn input(mut self, name: &str, f: impl FnOnce(InputBuilder) -> InputBuilder) -> Self {
        let b = f(InputBuilder::default());
        let needs_value = !matches!(
            b.uncertainty,
            Some(Uncertainty::Observations(_)) | Some(Uncertainty::Constant(_))
        );
        if needs_value && b.value.is_none() {
            self.without_value.push(name.to_string());
        }
        self.description.inputs.push(b.describe(name));
        self
    }
    /// A stated correlation coefficient.
    pub fn correlation(mut self, a: &str, b: &str, r: f64) -> Self {
        self.description.correlations.push(CorrelationDescription {
            inputs: [a.to_string(), b.to_string()],
            coefficient: r,
        });
        self
    }
    /// A measurand with its formula and, optionally, the unit to report in.
    pub fn measurand(mut self, name: &str, formula: &str, unit: Option<&str>) -> Self {
        let mut m = MeasurandDescription::new(name, formula);
        m.unit = unit.map(str::to_string);
        self.description.measurands.push(m);
        self
    }

    /// Tolerance limits and a decision rule for a measurand (JCGM 106:2012),
    /// in the measurand's unit.
    ///
    /// ```
    /// use incertus_gum::builder::ModelBuilder;
    /// use incertus_gum::conformity::{Guard, Rule, Specification};
    /// let m = ModelBuilder::new()
    ///     .input("m", |i| i.value(100.02).standard_uncertainty(0.01))
    ///     .measurand("M", "m", None)
    ///     .specification("M", &Specification {
    ///         lower: Some(99.95), upper: Some(100.05),
    ///         rule: Rule::GuardedAcceptance, guard: Guard::MultipleOfU(1.0), process: None,
    ///     })
    ///     .build()
    ///     .unwrap();
    /// let r = incertus_gum::propagate(&m, &Default::default()).unwrap();
    /// assert_eq!(r.results[0].conformity.as_ref().unwrap().verdict, "accepted");
    /// ```
    pub fn specification(
        mut self,
        measurand: &str,
        spec: &crate::conformity::Specification,
    ) -> Self {
        for m in self
            .description
            .measurands
            .iter_mut()
            .filter(|m| m.name == measurand)
        {
            m.specification = Some(spec.clone());
        }
        self
    }

    /// The description built so far.
    pub fn description(&self) -> &ModelDescription {
        &self.description
    }

    /// The model file this builder describes.
    pub fn to_toml(&self) -> String {
        self.description.to_toml()
    }

    /// Check the model, with the same checks as a model file's.
    pub fn build(&self) -> Result<Model, ModelError> {
        if let Some(name) = self.without_value.first() {
            return Err(ModelError {
                kind: crate::ModelErrorKind::Key,
                file: "<built model>".into(),
                line: 0,
                column: 0,
                path: format!("inputs.{name}.value"),
                message: format!("`{name}` needs a value (its estimate): give .value(...)"),
                detail: None,
            });
        }
        self.description.validate()
    }
}
