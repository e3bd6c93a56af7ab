//! A measurement model: input quantities with what is known about them,
//! correlations, and one or more measurands given by formulas.
//!
//! Each input quantity ends up with an estimate, a standard uncertainty and
//! degrees of freedom by one of the evaluations of JCGM 100:2008, clause 4:
//! Type A from observations (4.2), Type B from a stated uncertainty, an
//! expanded uncertainty and coverage factor (4.3.3), or limits with an assumed
//! distribution (4.3.7 to 4.3.9), plus exact values and tabulated constants.

use incertus_expr::Expr;

pub use crate::coverage::{Dof, DofRounding};

/// How the standard uncertainty of an input was obtained.
#[derive(Clone, Debug, PartialEq)]
pub enum Evaluation {
    /// Type A from `n` observations (JCGM 100:2008, 4.2); `pooled` when the
    /// standard deviation came from earlier work (4.2.4).
    TypeA {
        /// The number of observations.
        n: usize,
        /// Whether s is a pooled standard deviation.
        pooled: bool,
    },
    /// Type B (JCGM 100:2008, 4.3).
    TypeB,
    /// No uncertainty: an exact value or an exact constant.
    Exact,
    /// A tabulated physical constant.
    Constant {
        /// The table it comes from.
        table: &'static str,
    },
    /// A parameter of a least-squares fit (its dof are the fit's residual
    /// dof; parameters of one fit are correlated).
    Fit {
        /// The fit.
        fit: String,
        /// The parameter.
        parameter: String,
    },
}

/// The probability distribution assigned to an input (used by the budget's
/// labels and by propagation of distributions).
#[derive(Clone, Debug, PartialEq)]
pub enum Distribution {
    /// Normal (Gaussian).
    Normal,
    /// Scaled and shifted t with the input's degrees of freedom.
    StudentT,
    /// Rectangular (uniform) between the estimate ± a.
    Rectangular {
        /// The half-width a.
        half_width: f64,
    },
    /// Triangular between the estimate ± a.
    Triangular {
        /// The half-width a.
        half_width: f64,
    },
    /// Arc sine (U-shaped) between the estimate ± a.
    Arcsine {
        /// The half-width a.
        half_width: f64,
    },
    /// Symmetric trapezoid: half-width of the base `half_width`, of the top
    /// `beta * half_width` (JCGM 100:2008, 4.3.9).
    Trapezoidal {
        /// The half-width a of the base.
        half_width: f64,
        /// β: the top's half-width over the base's.
        beta: f64,
    },
    /// Rectangular with inexactly prescribed limits: each limit is known
    /// only to within ±`limit_half_width` (JCGM 101:2008, 6.4.3).
    CurvilinearTrapezoidal {
        /// The half-width a.
        half_width: f64,
        /// d: each limit lies within ± d.
        limit_half_width: f64,
    },
    /// Exponential with the estimate as its mean, for a non-negative
    /// quantity of which only the estimate is known (JCGM 101:2008, 6.4.10).
    Exponential,
    /// Gamma with shape and scale (JCGM 101:2008, 6.4.11).
    Gamma {
        /// Shape k.
        shape: f64,
        /// Scale θ.
        scale: f64,
    },
    /// A fixed value.
    Exact,
}

/// Written by its name (`normal`, `t`, `rectangular`, ...), as in model
/// files and reports.
impl std::fmt::Display for Distribution {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Serialised by its name, as reports have always shown it.
impl serde::Serialize for Distribution {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.name())
    }
}

impl PartialEq<&str> for Distribution {
    fn eq(&self, other: &&str) -> bool {
        self.name() == *other
    }
}

impl Distribution {
    /// The name used in files and reports.
    pub fn name(&self) -> &'static str {
        match self {
            Distribution::Normal => "normal",
            Distribution::StudentT => "t",
            Distribution::Rectangular { .. } => "rectangular",
            Distribution::Triangular { .. } => "triangular",
            Distribution::Arcsine { .. } => "arcsine",
            Distribution::Trapezoidal { .. } => "trapezoidal",
            Distribution::CurvilinearTrapezoidal { .. } => "curvilinear_trapezoidal",
            Distribution::Exponential => "exponential",
            Distribution::Gamma { .. } => "gamma",
            Distribution::Exact => "exact",
        }
    }

    /// Standard uncertainty of a distribution with limits, from its
    /// half-width a: a/√3 (rectangular, JCGM 100:2008, 4.3.7), a/√6
    /// (triangular, 4.3.9), a/√2 (arc sine, JCGM 101:2008, 6.4.6),
    /// a·√((1 + β²)/6) (trapezoidal, JCGM 100:2008, 4.3.9),
    /// √(a²/3 + d²/9) (curvilinear trapezoid, JCGM 101:2008, 6.4.3.3).
    pub fn standard_uncertainty_from_limits(&self) -> Option<f64> {
        Some(match *self {
            Distribution::Rectangular { half_width } => half_width / 3f64.sqrt(),
            Distribution::Triangular { half_width } => half_width / 6f64.sqrt(),
            Distribution::Arcsine { half_width } => half_width / 2f64.sqrt(),
            Distribution::Trapezoidal { half_width, beta } => {
                half_width * ((1.0 + beta * beta) / 6.0).sqrt()
            }
            Distribution::CurvilinearTrapezoidal {
                half_width,
                limit_half_width,
            } => (half_width * half_width / 3.0 + limit_half_width * limit_half_width / 9.0).sqrt(),
            _ => return None,
        })
    }
}

/// A number as written in the model file: its value and its text, so that
/// checks can allow for the rounding of a stated figure.
#[derive(Clone, Debug, PartialEq)]
pub struct Stated {
    /// The value.
    pub value: f64,
    /// The text as written.
    pub text: String,
    /// 1-based line in the model file.
    pub line: usize,
}

impl Stated {
    /// Half a unit in the last digit written (`0.0123` → 0.00005,
    /// `1.5e-3` → 0.05e-3, `12` → 0.5): the rounding a stated figure implies
    /// (JCGM 100:2008, 7.2.6, common practice of reading rounded figures).
    pub fn rounding(&self) -> f64 {
        let t = self.text.replace('_', "");
        let (mantissa, exponent) = match t.find(['e', 'E']) {
            Some(i) => (&t[..i], t[i + 1..].parse::<i32>().unwrap_or(0)),
            None => (&t[..], 0),
        };
        let decimals = mantissa.find('.').map_or(0, |i| mantissa.len() - i - 1) as i32;
        0.5 * 10f64.powi(exponent - decimals)
    }
}

/// A sensitivity coefficient stated by the model's author, for checking.
#[derive(Clone, Debug)]
pub enum StatedSensitivity {
    /// A number.
    Number(Stated),
    /// A formula of the inputs and measurands.
    Formula {
        /// The formula as written.
        text: String,
        /// The formula.
        expr: Expr,
        /// 1-based line in the model file (0 when built in memory).
        line: usize,
    },
}

/// One input quantity.
#[derive(Clone, Debug)]
pub struct Input {
    /// The name used in formulas.
    pub name: String,
    /// The estimate (coherent SI when a unit is given).
    pub estimate: f64,
    /// Its standard uncertainty.
    pub standard_uncertainty: f64,
    /// Degrees of freedom (`None`: infinite).
    pub dof: Dof,
    /// How the uncertainty was obtained.
    pub evaluation: Evaluation,
    /// The distribution assigned.
    pub distribution: Distribution,
    /// Observations of a Type A input, in the order given.
    pub observations: Option<Vec<f64>>,
    /// Free text for reports.
    pub description: Option<String>,
    /// Where its value or uncertainty comes from, for the record.
    pub source: Option<String>,
    /// The evaluation as stated (in the input's own unit, observations as
    /// given), for the record a report carries.
    pub stated: crate::description::InputEvaluation,
    /// The unit as written; estimate and uncertainty above are in coherent SI
    /// when it is given.
    pub unit: Option<String>,
    /// The unit parsed (`None` without a unit).
    pub unit_si: Option<incertus_units::Unit>,
    /// Sensitivity coefficients the author derived, per measurand name.
    pub stated_sensitivities: Vec<(String, StatedSensitivity)>,
    /// 1-based line where the input is defined.
    pub line: usize,
}

/// `v` rounded to the place of the 15th significant digit of `held` (the
/// magnitude whose digits `v` was computed from); finite values only.
fn to_digits_of(v: f64, held: f64) -> f64 {
    if !v.is_finite() || !held.is_finite() || held == 0.0 || v == 0.0 {
        return v;
    }
    let decimals = 14 - held.log10().floor() as i32;
    if decimals >= 0 {
        format!("{v:.*}", decimals.min(340) as usize)
            .parse()
            .unwrap_or(v)
    } else {
        let step = 10f64.powi(-decimals);
        (v / step).round() * step
    }
}

/// Conversion from coherent SI back to a quantity's own unit (identity when
/// it has none): values with the offset, uncertainties by the factor.
fn shown_value(unit: Option<&incertus_units::Unit>, v: f64) -> f64 {
    unit.map_or(v, |u| u.value_from_si(v))
}

fn unit_factor(unit: Option<&incertus_units::Unit>) -> f64 {
    unit.map_or(1.0, |u| u.factor)
}

impl Input {
    /// Factor of the input's unit to coherent SI (1 without a unit).
    pub fn unit_factor(&self) -> f64 {
        unit_factor(self.unit_si.as_ref())
    }

    /// The estimate and standard uncertainty in the input's own unit.
    pub fn shown(&self) -> (f64, f64) {
        let (v, u) = (
            shown_value(self.unit_si.as_ref(), self.estimate),
            self.standard_uncertainty / self.unit_factor(),
        );
        match &self.unit_si {
            // Converted to SI and back: rounded to the 15 significant digits
            // (DBL_DIG) that the SI value holds, which every f64 keeps, so
            // `20.075 °C` reads back as 20.075, not 20.074999999999989 (for
            // an offset the digits are those of the SI value: 0.1 °C is
            // 273.25 K, good to 12 decimals).
            Some(unit) if unit.factor != 1.0 || unit.offset != 0.0 => {
                let held = (self.estimate / unit.factor).abs().max(v.abs());
                (to_digits_of(v, held), to_digits_of(u, u.abs()))
            }
            _ => (v, u),
        }
    }
}

impl Measurand {
    /// Factor of the measurand's unit to coherent SI (1 without a unit).
    pub fn unit_factor(&self) -> f64 {
        unit_factor(self.unit_si.as_ref())
    }

    /// A value in coherent SI, in the measurand's unit (an interval on an
    /// offset scale by the factor alone).
    pub fn shown_value(&self, v: f64) -> f64 {
        if self.interval {
            v / self.unit_factor()
        } else {
            shown_value(self.unit_si.as_ref(), v)
        }
    }
}

/// A correlation coefficient between two inputs.
#[derive(Clone, Debug, PartialEq)]
pub struct Correlation {
    /// Index of the first input.
    pub a: usize,
    /// Index of the second input.
    pub b: usize,
    /// r, from −1 to 1.
    pub coefficient: f64,
    /// Whether it was computed from data (observations taken together,
    /// JCGM 100:2008, 5.2.3, or a fit) rather than stated.
    pub from_observations: bool,
    /// The fit it comes from, if any.
    pub from_fit: Option<String>,
}

/// One measurand (output quantity).
#[derive(Clone, Debug)]
pub struct Measurand {
    /// The name.
    pub name: String,
    /// The formula as written.
    pub formula_text: String,
    /// The formula parsed.
    pub formula: Expr,
    /// Free text for reports.
    pub description: Option<String>,
    /// The unit to report in.
    pub unit: Option<String>,
    /// The unit parsed (`None` without a unit).
    pub unit_si: Option<incertus_units::Unit>,
    /// A value stated by hand, to be checked.
    pub expected_value: Option<Stated>,
    /// A standard uncertainty stated by hand, to be checked.
    pub expected_standard_uncertainty: Option<Stated>,
    /// Tolerance limits and decision rule (JCGM 106:2012), in `unit`.
    pub specification: Option<crate::conformity::Specification>,
    /// On a scale with an offset (°C): whether the result is a difference
    /// of points (an interval), converted by the unit's factor alone,
    /// rather than a point on the scale (SI Brochure, 9th ed., 2.3.1: a
    /// Celsius temperature difference is the same number in K).
    pub interval: bool,
    /// 1-based line of the measurand in the model file (0 when built in memory).
    pub line: usize,
}

/// A whole measurement model.
#[derive(Clone, Debug)]
pub struct Model {
    /// A title for reports.
    pub title: Option<String>,
    /// Free text about the model (for the record a report carries).
    pub description: Option<String>,
    /// The coverage probability p.
    pub coverage_probability: f64,
    /// How ν_eff is rounded.
    pub dof_rounding: DofRounding,
    /// The input quantities.
    pub inputs: Vec<Input>,
    /// The correlations between inputs.
    pub correlations: Vec<Correlation>,
    /// In dependency order: a measurand comes after those it uses.
    pub measurands: Vec<Measurand>,
    /// Least-squares fits whose parameters are inputs.
    pub fits: Vec<NamedFit>,
    /// Whether the model uses units (then every formula is checked for
    /// dimensions, and values are converted to coherent SI).
    pub units: bool,
}

/// A fit of the model file with its name and data source.
#[derive(Clone, Debug, serde::Serialize)]
pub struct NamedFit {
    /// The fit's name.
    pub name: String,
    /// The CSV file, or "inline" for arrays in the model file.
    pub data: String,
    /// The column of x (or `x` inline).
    pub x: String,
    /// The column of y (or `y` inline).
    pub y: String,
    /// Unit of x.
    pub x_unit: Option<String>,
    /// Unit of y.
    pub y_unit: Option<String>,
    /// The fit.
    pub result: incertus_fit::FitResult,
}

impl Model {
    /// The input called `name`.
    pub fn input(&self, name: &str) -> Option<&Input> {
        self.inputs.iter().find(|i| i.name == name)
    }

    /// Correlation coefficient between inputs `i` and `j`.
    pub fn correlation(&self, i: usize, j: usize) -> f64 {
        if i == j {
            return 1.0;
        }
        self.correlations
            .iter()
            .find(|c| (c.a == i && c.b == j) || (c.a == j && c.b == i))
            .map_or(0.0, |c| c.coefficient)
    }

    /// The covariance matrix of the input estimates (JCGM 100:2008, 5.2.2).
    pub fn covariance(&self) -> Vec<Vec<f64>> {
        let n = self.inputs.len();
        let u: Vec<f64> = self.inputs.iter().map(|i| i.standard_uncertainty).collect();
        let mut v = vec![vec![0.0; n]; n];
        for (i, row) in v.iter_mut().enumerate() {
            row[i] = u[i] * u[i];
        }
        for c in &self.correlations {
            let x = c.coefficient * u[c.a] * u[c.b];
            v[c.a][c.b] = x;
            v[c.b][c.a] = x;
        }
        v
    }
}
