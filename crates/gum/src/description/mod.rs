//! The model description: a measurement model as plain, typed data.
//!
//! A [`ModelDescription`] says what a model file says — settings, inputs
//! with the evaluation of their uncertainty, correlations, inputs observed
//! together, fits and measurands with their specifications — but nothing
//! is computed or checked yet. It is what every way of making a model
//! shares:
//!
//! - the loader reads model-file text into a description (keeping where each
//!   key stood) and validates it;
//! - [`crate::builder::ModelBuilder`], the shell and the dipole module build a
//!   description in memory;
//! - [`ModelDescription::validate`] turns any description into a
//!   [`Model`](crate::Model), with errors that name the key path
//!   (`inputs.d.dof`) — and, for a file, the line and column;
//! - [`ModelDescription::to_toml`] writes the model file that loads back into
//!   the same description (serde, with the model file's key names).
//!
//! ```
//! use incertus_gum::description::{InputDescription, MeasurandDescription, ModelDescription};
//! let mut d = ModelDescription::default();
//! d.inputs.push(InputDescription::standard("ρ_w", 998.2, 0.05).with_unit("kg/m^3"));
//! d.inputs.push(InputDescription::standard("V", 10.0, 0.01).with_unit("mL"));
//! d.measurands.push(MeasurandDescription::new("m", "ρ_w*V").with_unit("g"));
//! let model = d.validate().unwrap();
//! let text = d.to_toml();
//! assert_eq!(incertus_gum::load_str(&text, "m.toml").unwrap().inputs.len(), model.inputs.len());
//! ```

use crate::conformity::Specification;
use crate::coverage::DofRounding;

mod file;
mod items;
pub use file::KeyProblem;
pub(crate) use file::{InputKeys, KeyContext, SpecificationKeys};
pub use items::{item_key_kind, KeyValue};

/// A whole model as data: what a model file holds.
#[derive(Clone, Debug, Default, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(into = "file::FileModel", try_from = "file::FileModel")]
pub struct ModelDescription {
    /// A title for reports.
    pub title: Option<String>,
    /// Free text about the model (kept, not used).
    pub description: Option<String>,
    /// Settings of the evaluation.
    pub settings: Settings,
    /// Least-squares fits whose parameters are inputs.
    pub fits: Vec<FitDescription>,
    /// Input quantities, in the order given.
    pub inputs: Vec<InputDescription>,
    /// Groups of inputs observed together (JCGM 100:2008, 5.2.3): their
    /// correlations come from the paired observations.
    pub observed_together: Vec<Vec<String>>,
    /// Stated correlation coefficients.
    pub correlations: Vec<CorrelationDescription>,
    /// Measurands (output quantities) with their formulas.
    pub measurands: Vec<MeasurandDescription>,
}

/// Settings of an evaluation; `None` keeps the default.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Settings {
    /// Coverage probability p of the coverage intervals (default 0.95).
    pub coverage_probability: Option<f64>,
    /// How ν_eff is rounded before the t quantile (default truncate,
    /// JCGM 100:2008, G.4.1 note 1).
    pub effective_dof_rounding: Option<DofRounding>,
}

/// One input quantity: its name, unit and the evaluation of its
/// uncertainty.
#[derive(Clone, Debug, PartialEq)]
pub struct InputDescription {
    /// The name used in formulas.
    pub name: String,
    /// Free text for reports.
    pub description: Option<String>,
    /// Where its value or uncertainty comes from (a certificate, a
    /// handbook, a data sheet), for the record.
    pub source: Option<String>,
    /// The unit its numbers are given in (`None`: no unit).
    pub unit: Option<String>,
    /// What is known about the input.
    pub evaluation: InputEvaluation,
    /// Sensitivity coefficients the author derived, to be checked.
    pub sensitivity: Vec<StatedCoefficient>,
}

/// How the degrees of freedom of a Type B evaluation are stated.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum DofGiven {
    /// ν stated directly.
    Dof(f64),
    /// The relative reliability r of u: ν = 1/(2 r²) (JCGM 100:2008, G.4.2).
    RelativeReliability(f64),
}

/// The shape assumed around a stated standard or expanded uncertainty.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum CentredShape {
    /// Normal (the default).
    #[default]
    Normal,
    /// Scaled and shifted Student's t with the stated degrees of freedom.
    StudentT,
}

/// How the limits of a distribution with limits are given.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum LimitsGiven {
    /// An estimate and the half-width a around it.
    HalfWidth {
        /// The estimate (centre).
        value: f64,
        /// The half-width a.
        half_width: f64,
    },
    /// The lower and upper limit; the estimate is their midpoint (a value,
    /// when given, must equal it).
    Bounds {
        /// Lower limit.
        lower: f64,
        /// Upper limit.
        upper: f64,
        /// The estimate, if stated.
        value: Option<f64>,
    },
}

/// The shape of a distribution with limits.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum LimitShape {
    /// Rectangular: u = a/√3 (JCGM 100:2008, 4.3.7).
    Rectangular,
    /// Triangular: u = a/√6 (JCGM 100:2008, 4.3.9).
    Triangular,
    /// Arc sine (U-shaped): u = a/√2 (JCGM 101:2008, 6.4.6).
    Arcsine,
    /// Symmetric trapezoid with top half-width β·a (JCGM 100:2008, 4.3.9).
    Trapezoidal {
        /// Ratio of the half-widths of top and base, 0 to 1.
        beta: f64,
    },
    /// Rectangular with limits known to ± d (JCGM 101:2008, 6.4.3).
    CurvilinearTrapezoidal {
        /// d, the half-width of the interval in which each limit lies.
        limit_half_width: f64,
    },
}

impl LimitShape {
    /// The name in model files.
    pub fn name(&self) -> &'static str {
        match self {
            LimitShape::Rectangular => "rectangular",
            LimitShape::Triangular => "triangular",
            LimitShape::Arcsine => "arcsine",
            LimitShape::Trapezoidal { .. } => "trapezoidal",
            LimitShape::CurvilinearTrapezoidal { .. } => "curvilinear_trapezoidal",
        }
    }
}

/// A standard deviation pooled from earlier work (JCGM 100:2008, 4.2.4).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Pooled {
    /// The pooled standard deviation of one observation.
    pub standard_deviation: f64,
    /// Its degrees of freedom.
    pub dof: f64,
}

/// What is known about an input: one evaluation of its uncertainty.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum InputEvaluation {
    /// A value without uncertainty.
    Exact {
        /// The value.
        value: f64,
    },
    /// An estimate with its standard uncertainty (Type B, JCGM 100:2008, 4.3).
    Standard {
        /// The estimate.
        value: f64,
        /// Its standard uncertainty u.
        standard_uncertainty: f64,
        /// Degrees of freedom, if stated (infinite otherwise).
        dof: Option<DofGiven>,
        /// Normal or t.
        shape: CentredShape,
    },
    /// An estimate with an expanded uncertainty U and its coverage factor k:
    /// u = U/k (JCGM 100:2008, 4.3.3).
    Expanded {
        /// The estimate.
        value: f64,
        /// The expanded uncertainty U.
        expanded_uncertainty: f64,
        /// The coverage factor k.
        coverage_factor: f64,
        /// Degrees of freedom, if stated.
        dof: Option<DofGiven>,
        /// Normal or t.
        shape: CentredShape,
    },
    /// Limits with an assumed distribution (JCGM 100:2008, 4.3.7 to 4.3.9).
    Limits {
        /// Where the limits are.
        limits: LimitsGiven,
        /// The distribution between them.
        shape: LimitShape,
        /// Degrees of freedom, if stated.
        dof: Option<DofGiven>,
    },
    /// Type A: a series of observations (JCGM 100:2008, 4.2).
    Observations {
        /// The observations, in the order taken.
        values: Vec<f64>,
        /// A pooled standard deviation from earlier work, if any.
        pooled: Option<Pooled>,
    },
    /// Gamma with shape k and scale θ (JCGM 101:2008, 6.4.11).
    Gamma {
        /// Shape k.
        shape: f64,
        /// Scale θ.
        scale: f64,
        /// Degrees of freedom, if stated.
        dof: Option<DofGiven>,
    },
    /// Exponential with the estimate as its mean (JCGM 101:2008, 6.4.10).
    Exponential {
        /// The estimate (mean), positive.
        value: f64,
        /// Degrees of freedom, if stated.
        dof: Option<DofGiven>,
    },
    /// A physical constant from the built-in CODATA table.
    Constant {
        /// The constant's name in the table.
        name: String,
    },
    /// A parameter of a fit of the model.
    FitParameter {
        /// The fit's name.
        fit: String,
        /// The parameter (`intercept`, `slope`, `c0`, `c1`, ...).
        parameter: String,
    },
}

/// A stated sensitivity coefficient: a number or a formula.
#[derive(Clone, Debug, PartialEq)]
pub enum Coefficient {
    /// A number.
    Number(f64),
    /// A formula of the inputs and measurands.
    Formula(String),
}

/// A sensitivity coefficient the author derived, for one measurand (the
/// only one when `measurand` is `None`).
#[derive(Clone, Debug, PartialEq)]
pub struct StatedCoefficient {
    /// The measurand it is the derivative of.
    pub measurand: Option<String>,
    /// Its value.
    pub value: Coefficient,
}

/// A stated correlation coefficient between two inputs.
#[derive(Clone, Debug, PartialEq)]
pub struct CorrelationDescription {
    /// The two inputs.
    pub inputs: [String; 2],
    /// r, from −1 to 1.
    pub coefficient: f64,
}

/// Where a fit's data come from.
#[derive(Clone, Debug, PartialEq)]
pub enum FitData {
    /// Columns of a CSV file (relative to the model file's folder).
    File {
        /// The file.
        path: String,
        /// Column of x.
        x: String,
        /// Column of y.
        y: String,
        /// Column of u(y), if any.
        y_uncertainty: Option<String>,
        /// Column of u(x), if any.
        x_uncertainty: Option<String>,
    },
    /// The numbers themselves.
    Inline {
        /// x values.
        x: Vec<f64>,
        /// y values.
        y: Vec<f64>,
        /// u(y), if any.
        y_uncertainty: Option<Vec<f64>>,
        /// u(x), if any.
        x_uncertainty: Option<Vec<f64>>,
    },
}

/// A least-squares fit whose parameters are inputs.
#[derive(Clone, Debug, PartialEq)]
pub struct FitDescription {
    /// The fit's name.
    pub name: String,
    /// Free text.
    pub description: Option<String>,
    /// The data.
    pub data: FitData,
    /// Degree of the polynomial (1: straight line).
    pub degree: usize,
    /// 1-based data rows left out.
    pub exclude: Vec<usize>,
    /// Why they are left out (required with `exclude`).
    pub exclude_reason: Option<String>,
    /// For weighted fits: scale the covariance by χ²/ν.
    pub scale_by_chi_squared: bool,
    /// Unit of x (with `y_unit`).
    pub x_unit: Option<String>,
    /// Unit of y (with `x_unit`).
    pub y_unit: Option<String>,
}

/// A measurand: its name, formula and what is stated about it.
#[derive(Clone, Debug, PartialEq)]
pub struct MeasurandDescription {
    /// The name (used by other formulas).
    pub name: String,
    /// The formula.
    pub formula: String,
    /// Free text.
    pub description: Option<String>,
    /// The unit to report in.
    pub unit: Option<String>,
    /// A value stated by hand, to be checked.
    pub expected_value: Option<f64>,
    /// A standard uncertainty stated by hand, to be checked.
    pub expected_standard_uncertainty: Option<f64>,
    /// Tolerance limits and decision rule (JCGM 106:2012).
    pub specification: Option<Specification>,
}

impl InputDescription {
    /// An input with an evaluation and nothing else.
    pub fn new(name: &str, evaluation: InputEvaluation) -> Self {
        InputDescription {
            name: name.to_string(),
            description: None,
            source: None,
            unit: None,
            evaluation,
            sensitivity: Vec::new(),
        }
    }

    /// An estimate with its standard uncertainty (normal, infinite dof).
    pub fn standard(name: &str, value: f64, standard_uncertainty: f64) -> Self {
        Self::new(
            name,
            InputEvaluation::Standard {
                value,
                standard_uncertainty,
                dof: None,
                shape: CentredShape::Normal,
            },
        )
    }

    /// An exact value.
    pub fn exact(name: &str, value: f64) -> Self {
        Self::new(name, InputEvaluation::Exact { value })
    }

    /// The same input with a unit.
    pub fn with_unit(mut self, unit: &str) -> Self {
        self.unit = Some(unit.to_string());
        self
    }
}

impl MeasurandDescription {
    /// A measurand with its name and formula.
    pub fn new(name: &str, formula: &str) -> Self {
        MeasurandDescription {
            name: name.to_string(),
            formula: formula.to_string(),
            description: None,
            unit: None,
            expected_value: None,
            expected_standard_uncertainty: None,
            specification: None,
        }
    }

    /// The same measurand reported in a unit.
    pub fn with_unit(mut self, unit: &str) -> Self {
        self.unit = Some(unit.to_string());
        self
    }
}

impl ModelDescription {
    /// The model file that loads back into this description.
    pub fn to_toml(&self) -> String {
        let form = file::FileModel::from(self.clone());
        match toml::to_string(&form) {
            Ok(text) => powers_of_ten(&text),
            // Only non-finite numbers inside nested arrays could fail; they
            // are refused by validation, so say so in the file itself.
            Err(e) => format!("# this description cannot be written as a model file: {e}\n"),
        }
    }

    /// Read a model file's text into a description, without validating it
    /// (unknown keys and values of the wrong type are refused, with their
    /// place in the file).
    pub fn from_toml(text: &str, file: &str) -> Result<Self, crate::ModelError> {
        crate::load::describe_str(text, file).map(|(d, _)| d)
    }

    /// Check the description and compute what it implies (Type A
    /// statistics, fits, conversion to coherent SI), with the default
    /// [`crate::Limits`]. Errors name the key path, e.g. `inputs.x.dof`.
    pub fn validate(&self) -> Result<crate::Model, crate::ModelError> {
        self.validate_with(&crate::Limits::default())
    }

    /// [`ModelDescription::validate`] with explicit limits.
    pub fn validate_with(&self, limits: &crate::Limits) -> Result<crate::Model, crate::ModelError> {
        crate::validate::validate(self, &crate::validate::Origin::built(), limits)
    }

    /// Validate a draft, a model still being written: as
    /// [`ModelDescription::validate`], but no measurand is needed (the model
    /// then has none, and propagating it gives no results).
    pub fn validate_draft(&self) -> Result<crate::Model, crate::ModelError> {
        crate::validate::validate_draft(
            self,
            &crate::validate::Origin::built(),
            &crate::Limits::default(),
        )
    }

    /// The input named `name`.
    pub fn input(&self, name: &str) -> Option<&InputDescription> {
        self.inputs.iter().find(|i| i.name == name)
    }

    /// The measurand named `name`.
    pub fn measurand(&self, name: &str) -> Option<&MeasurandDescription> {
        self.measurands.iter().find(|m| m.name == name)
    }

    /// Remove an input or measurand named `name` (and the stated
    /// correlations and groups that name it); whether one was removed.
    pub fn remove(&mut self, name: &str) -> bool {
        let before = self.inputs.len() + self.measurands.len();
        self.inputs.retain(|i| i.name != name);
        self.measurands.retain(|m| m.name != name);
        self.correlations
            .retain(|c| !c.inputs.iter().any(|n| n == name));
        for g in &mut self.observed_together {
            g.retain(|n| n != name);
        }
        self.observed_together.retain(|g| g.len() > 1);
        before != self.inputs.len() + self.measurands.len()
    }
}

/// Whether `name` reads as a single name of the formula language (the
/// rule for the names of inputs and measurands).
pub fn is_formula_name(name: &str) -> bool {
    matches!(incertus_expr::parse(name),
        Ok(incertus_expr::Expr { kind: incertus_expr::Kind::Var(ref n), .. }) if n == name)
}

/// The one of `names` closest to `word` by edit distance, when close
/// enough to be a likely slip (the "did you mean" of every message).
pub fn closest_name<'a>(word: &str, names: impl Iterator<Item = &'a str>) -> Option<&'a str> {
    crate::load::closest(word, names)
}

/// Long decimal numbers of a TOML text (`0.000000000000000000000000000001`,
/// `602214076000000000000000.0`) in their shortest form with a power of ten
/// (`1e-30`, `6.02214076e23`), the same value to the last bit; strings,
/// keys and integers are left as they are.
fn powers_of_ten(text: &str) -> String {
    let bytes = text.as_bytes();
    let mut out = String::with_capacity(text.len());
    let (mut i, mut after_equals) = (0, false);
    while i < bytes.len() {
        let c = bytes[i];
        if c == b'"' || c == b'\'' {
            // A string (basic, literal, or either multi-line): copied as it
            // is, to its closing quotes.
            let delimiter: &[u8] = if bytes[i..].starts_with(&[c, c, c]) {
                &bytes[i..i + 3]
            } else {
                &bytes[i..i + 1]
            };
            let mut j = i + delimiter.len();
            while j < bytes.len() && !bytes[j..].starts_with(delimiter) {
                j += if c == b'"' && bytes[j] == b'\\' { 2 } else { 1 };
            }
            // A multi-line string may end in one or two quotes of its own
            // before the closing three (`""""` = `"` and the end).
            for _ in 0..2 {
                if delimiter.len() == 3 && bytes.get(j + 3) == Some(&c) {
                    j += 1;
                }
            }
            let end = (j + delimiter.len()).min(bytes.len());
            out.push_str(&text[i..end]);
            i = end;
            continue;
        }
        let starts_number = (c.is_ascii_digit() || c == b'-')
            && after_equals
            && (i == 0 || !(bytes[i - 1].is_ascii_alphanumeric() || bytes[i - 1] == b'_'));
        if starts_number {
            let mut j = i + 1;
            while j < bytes.len()
                && (bytes[j].is_ascii_digit()
                    || matches!(bytes[j], b'.' | b'e' | b'E' | b'-' | b'+'))
            {
                j += 1;
            }
            let token = &text[i..j];
            match token.parse::<f64>() {
                Ok(v) if token.contains('.') && token.len() > 12 && v.is_finite() => {
                    let short = format!("{v:e}");
                    out.push_str(if short.len() < token.len() {
                        &short
                    } else {
                        token
                    });
                }
                _ => out.push_str(token),
            }
            i = j;
            continue;
        }
        match c {
            b'=' => after_equals = true,
            b'\n' => after_equals = false,
            _ => {}
        }
        let ch = text[i..].chars().next().expect("inside the text");
        out.push(ch);
        i += ch.len_utf8();
    }
    out
}
