//! Electric dipole moments of polar solutes from how the relative
//! permittivity and the refractive index of dilute solutions in a non-polar
//! solvent change with the solute's weight fraction w₂: the method of
//! E. A. Guggenheim (Trans. Faraday Soc. 45, 714 (1949)) and J. W. Smith
//! (Trans. Faraday Soc. 46, 394 (1950)); references recalled from memory.
//!
//! # The formula
//!
//! Debye's equation for the molar polarization of a substance of molar mass
//! M and density ρ in SI units is
//! (ε − 1)/(ε + 2) · M/ρ = N_A/(3ε₀) · (α + μ²/(3 k_B T)),
//! and the Lorentz-Lorenz equation gives the distortion part alone from the
//! refractive index: (n² − 1)/(n² + 2) · M/ρ = N_A α/(3ε₀) (at optical
//! frequencies the permanent dipoles cannot follow). Subtracting, the
//! orientation polarization of the solute at infinite dilution is
//! P_or = N_A μ²/(9 ε₀ k_B T). Guggenheim's insight is that for a dilute
//! solution the density changes of the two terms cancel to first order, so
//! only the gradients a_ε = dε₁₂/dw₂ and a_n = d(n₁₂²)/dw₂ are needed:
//! differentiating (ε₁₂ − n₁₂²)/((ε₁₂ + 2)(n₁₂² + 2)) with ε₁ ≈ n₁² for a
//! non-polar solvent gives, per unit mass of solute,
//! P_or/M₂ = 3 (a_ε − a_n)/(ρ₁ (ε₁ + 2)²), and so
//!
//! μ² = 27 ε₀ k_B T M₂ (a_ε − a_n) / (N_A ρ₁ (ε₁ + 2)²).
//!
//! Dimensions: F m⁻¹ · J K⁻¹ · K · kg mol⁻¹ / (mol⁻¹ · kg m⁻³) = F J m² =
//! C² m², so μ is in C m; the model is evaluated with the dimension check of
//! the units crate, and reported in debye (1 D = 10⁻²¹/c C m).
//!
//! The gradients come from least-squares lines of ε₁₂ and of n₁₂² against
//! w₂ (the fits crate: dof, covariance, diagnostics, exclusions); every other
//! input (temperature, solvent permittivity and density, molar mass) carries
//! a Type B uncertainty, the constants theirs from the CODATA table.
//!
//! When the densities of the solutions are measured too, the method of
//! I. F. Halverstadt and W. D. Kumler (J. Am. Chem. Soc. 64, 2988 (1942),
//! recalled from memory) is reported beside: with the specific volume
//! v₁₂ = v₁ + β w₂ (v = 1/ρ),
//! P₂∞ = 3 a_ε v₁ M₂/(ε₁ + 2)² + (v₁ + β)(ε₁ − 1)/(ε₁ + 2) M₂,
//! R₂∞ = 3 a_n v₁ M₂/(n₁² + 2)² + (v₁ + β)(n₁² − 1)/(n₁² + 2) M₂,
//! μ² = 9 ε₀ k_B T (P₂∞ − R₂∞)/N_A. With β = 0 and ε₁ = n₁² it reduces to
//! the Guggenheim-Smith expression, so the two agreeing shows that the
//! density simplification holds.
//!
//! The older approximation a_n ≈ 2·n₁·dn₁₂/dw₂ (a line of n₁₂ rather than
//! n₁₂² against w₂) is available only as an explicit option.

#![warn(missing_docs)]

use std::path::Path;

use incertus_gum::description::{
    FitData, FitDescription, InputDescription, InputEvaluation, MeasurandDescription,
    ModelDescription,
};
use serde::Deserialize;

/// A quantity with its standard uncertainty and unit.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Quantity {
    /// The value.
    pub value: f64,
    /// Its standard uncertainty.
    pub standard_uncertainty: f64,
    /// Its unit (`None`: dimensionless).
    pub unit: Option<String>,
}

/// The series and the data of solvent, solute and conditions.
#[derive(Clone, Debug)]
pub struct Problem {
    /// A title for reports.
    pub title: String,
    /// The CSV file the series were read from (`None` for built-in data).
    pub data_file: Option<std::path::PathBuf>,
    /// Solute weight fractions, permittivities and squared refractive
    /// indices of the solutions, with their 1-based data rows.
    pub w2: Vec<f64>,
    /// Relative permittivities ε₁₂ of the solutions.
    pub eps12: Vec<f64>,
    /// Squared refractive indices n₁₂² of the solutions.
    pub n12_squared: Vec<f64>,
    /// The 1-based data row of each point.
    pub rows: Vec<usize>,
    /// Relative permittivity ε₁ of the solvent.
    pub solvent_permittivity: Quantity,
    /// Density ρ₁ of the solvent.
    pub solvent_density: Quantity,
    /// Molar mass M₂ of the solute.
    pub molar_mass: Quantity,
    /// Temperature T of the solutions.
    pub temperature: Quantity,
    /// 1-based data rows left out of both fits.
    pub exclude: Vec<usize>,
    /// Why they are left out.
    pub exclude_reason: Option<String>,
    /// For the Halverstadt-Kumler method: densities of the solutions (in the
    /// unit of the solvent density) and the solvent's refractive index.
    pub density12: Option<Vec<f64>>,
    /// Refractive index n₁ of the solvent (Halverstadt-Kumler, or the approximation of a_n).
    pub solvent_refractive_index: Option<Quantity>,
    /// Take a_n = 2·n₁·dn₁₂/dw₂ from a line of n₁₂ (not n₁₂²) against w₂,
    /// an approximation offered only on request (needs the solvent's
    /// refractive index).
    pub approximate_n_gradient: bool,
}

fn input(name: &str, description: &str, q: &Quantity) -> InputDescription {
    let mut i = InputDescription::standard(name, q.value, q.standard_uncertainty);
    i.description = Some(description.to_string());
    i.unit = q.unit.clone();
    i
}

fn fitted(name: &str, description: &str, fit: &str) -> InputDescription {
    let mut i = InputDescription::new(
        name,
        InputEvaluation::FitParameter {
            fit: fit.to_string(),
            parameter: "slope".to_string(),
        },
    );
    i.description = Some(description.to_string());
    i
}

fn constant(name: &str) -> InputDescription {
    InputDescription::new(
        name,
        InputEvaluation::Constant {
            name: name.to_string(),
        },
    )
}

fn measurand(
    name: &str,
    description: &str,
    formula: &str,
    unit: Option<&str>,
) -> MeasurandDescription {
    let mut m = MeasurandDescription::new(name, formula);
    m.description = Some(description.to_string());
    m.unit = unit.map(str::to_string);
    m
}

/// A straight line through the series, with the problem's exclusions.
fn line(p: &Problem, name: &str, y: Vec<f64>) -> FitDescription {
    FitDescription {
        name: name.to_string(),
        description: None,
        data: FitData::Inline {
            x: p.w2.clone(),
            y,
            y_uncertainty: None,
            x_uncertainty: None,
        },
        degree: 1,
        exclude: p.exclude.clone(),
        exclude_reason: (!p.exclude.is_empty()).then(|| {
            p.exclude_reason
                .clone()
                .unwrap_or_else(|| "excluded".into())
        }),
        scale_by_chi_squared: false,
        x_unit: None,
        y_unit: None,
    }
}

/// The measurement model of the problem as a description (two fits of the
/// series, the inputs, the constants, μ in debye), built without text.
pub fn model_description(p: &Problem) -> ModelDescription {
    let mut d = ModelDescription {
        title: Some(p.title.clone()),
        ..ModelDescription::default()
    };
    let n_series: Vec<f64> = if p.approximate_n_gradient {
        p.n12_squared.iter().map(|v| v.sqrt()).collect()
    } else {
        p.n12_squared.clone()
    };
    d.fits.push(line(p, "permittivity", p.eps12.clone()));
    d.fits.push(line(p, "refraction", n_series));
    d.inputs.push(fitted(
        "a_eps",
        "gradient of the solution permittivity against w2",
        "permittivity",
    ));
    let n1 = |d: &mut ModelDescription| {
        if d.input("n1").is_none() {
            if let Some(q) = &p.solvent_refractive_index {
                d.inputs
                    .push(input("n1", "refractive index of the solvent", q));
            }
        }
    };
    if p.approximate_n_gradient {
        d.inputs.push(fitted(
            "dn",
            "gradient of the refractive index against w2",
            "refraction",
        ));
        n1(&mut d);
        d.measurands.push(measurand(
            "a_n",
            "a_n approximated by 2 n1 dn/dw2 (on request)",
            "2*n1*dn",
            None,
        ));
    } else {
        d.inputs.push(fitted(
            "a_n",
            "gradient of the squared refractive index against w2",
            "refraction",
        ));
    }
    d.inputs.push(input(
        "eps1",
        "relative permittivity of the solvent",
        &p.solvent_permittivity,
    ));
    d.inputs
        .push(input("rho1", "density of the solvent", &p.solvent_density));
    d.inputs
        .push(input("M2", "molar mass of the solute", &p.molar_mass));
    d.inputs
        .push(input("T", "temperature of the solutions", &p.temperature));
    for c in ["epsilon_0", "k_B", "N_A"] {
        d.inputs.push(constant(c));
    }
    d.measurands.push(measurand(
        "mu",
        "electric dipole moment of the solute (Guggenheim-Smith)",
        "sqrt(27*epsilon_0*k_B*T*M2*(a_eps - a_n)/(N_A*rho1*(eps1 + 2)^2))",
        Some("D"),
    ));
    if let (Some(rho), Some(_)) = (&p.density12, &p.solvent_refractive_index) {
        // Specific volumes in m³/kg from densities in the solvent's unit.
        let f = p
            .solvent_density
            .unit
            .as_deref()
            .and_then(incertus_gum::units_factor)
            .unwrap_or(1.0);
        let mut volume = line(p, "volume", rho.iter().map(|r| 1.0 / (r * f)).collect());
        volume.x_unit = Some("1".into());
        volume.y_unit = Some("m^3/kg".into());
        d.fits.push(volume);
        d.inputs.push(fitted(
            "beta",
            "gradient of the specific volume of the solutions against w2",
            "volume",
        ));
        n1(&mut d);
        d.measurands.push(measurand(
            "mu_hk",
            "electric dipole moment of the solute (Halverstadt-Kumler)",
            "sqrt(9*epsilon_0*k_B*T/N_A*(3*a_eps*M2/(rho1*(eps1 + 2)^2) + (1/rho1 + beta)*(eps1 - 1)/(eps1 + 2)*M2 - 3*a_n*M2/(rho1*(n1^2 + 2)^2) - (1/rho1 + beta)*(n1^2 - 1)/(n1^2 + 2)*M2))",
            Some("D"),
        ));
    }
    d
}

/// The model as a model file (the description serialised).
pub fn model_text(p: &Problem) -> String {
    model_description(p).to_toml()
}

/// The model, checked: errors for what makes the method meaningless,
/// warnings for what a reader should look at.
pub struct Checked {
    /// The validated model.
    pub model: incertus_gum::Model,
    /// What a reader should look at (not errors).
    pub warnings: Vec<String>,
}

/// Why a problem cannot be read or evaluated.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct DipoleError {
    /// What kind of problem.
    pub kind: DipoleErrorKind,
    /// What is wrong, for a person.
    pub message: String,
}

/// The kinds of [`DipoleError`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum DipoleErrorKind {
    /// The problem file or its data file cannot be read or understood.
    File,
    /// The series or the quantities do not make a valid model.
    Model,
    /// The data show no orientation polarization: the method gives no
    /// dipole moment.
    Method,
}

impl DipoleError {
    fn new(kind: DipoleErrorKind, message: impl Into<String>) -> Self {
        DipoleError {
            kind,
            message: message.into(),
        }
    }
}

/// Build and check the model of a problem.
pub fn build(p: &Problem) -> Result<Checked, DipoleError> {
    use DipoleErrorKind::{Method, Model};
    let n = p.w2.len();
    if p.eps12.len() != n || p.n12_squared.len() != n {
        return Err(DipoleError::new(Model, "the series have different lengths"));
    }
    let mut warnings = Vec::new();
    if let Some(w) =
        p.w2.iter()
            .cloned()
            .fold(None, |m: Option<f64>, w| Some(m.map_or(w, |m| m.max(w))))
    {
        if w > 0.1 {
            warnings.push(format!(
                "weight fractions reach {w}: beyond about 0.1 the solutions are no longer dilute and the \
                 gradients need not be constant (common practice, no published source)"
            ));
        }
    }
    let model = model_description(p)
        .validate()
        .map_err(|e| DipoleError::new(Model, e.to_string()))?;
    let missing = |m: &str| DipoleError::new(Model, m);
    let slope = |name: &str| {
        model
            .input(name)
            .map(|i| (i.estimate, i.standard_uncertainty))
    };
    let (ae, ue) = slope("a_eps").ok_or_else(|| missing("the permittivity fit is missing"))?;
    let (an, un) = match slope("a_n") {
        Some(x) => x,
        None => {
            let (dn, udn) = slope("dn").ok_or_else(|| missing("the refraction fit is missing"))?;
            let n1 = slope("n1")
                .ok_or_else(|| {
                    missing("the approximation 2·n1·dn/dw2 needs the solvent's refractive index")
                })?
                .0;
            (2.0 * n1 * dn, 2.0 * n1 * udn)
        }
    };
    if ae - an <= 0.0 {
        return Err(DipoleError::new(Method, format!(
            "a_eps − a_n = {:.4} − {:.4} ≤ 0 (u = {:.2e}, {:.2e}): the permittivity rises no faster than the squared \
             refractive index, so the data show no orientation polarization and no dipole moment can be derived",
            ae, an, ue, un
        )));
    }
    // The intercept of ε12 against w2 should be the solvent's permittivity.
    if let Some(f) = model.fits.iter().find(|f| f.name == "permittivity") {
        let c0 = &f.result.parameters[0];
        let e1 = &p.solvent_permittivity;
        let z = (c0.value - e1.value).abs()
            / (c0.standard_uncertainty.powi(2) + e1.standard_uncertainty.powi(2)).sqrt();
        if z > 2.0 {
            warnings.push(format!(
                "the fitted intercept of ε12 at w2 = 0 ({:.5}, u = {:.5}) differs from the stated solvent \
                 permittivity ({}, u = {}) by {:.1} combined standard uncertainties",
                c0.value, c0.standard_uncertainty, e1.value, e1.standard_uncertainty, z
            ));
        }
    }
    // Curvature: the quadratic coefficient of ε12 against w2.
    let excluded: std::collections::HashSet<usize> = p.exclude.iter().copied().collect();
    let keep: Vec<bool> = p.rows.iter().map(|r| !excluded.contains(r)).collect();
    let pick = |v: &[f64]| -> Vec<f64> {
        v.iter()
            .zip(&keep)
            .filter(|(_, k)| **k)
            .map(|(x, _)| *x)
            .collect()
    };
    for (name, ys) in [("ε12", &p.eps12), ("n12²", &p.n12_squared)] {
        let (x, y) = (pick(&p.w2), pick(ys));
        if x.len() >= 4 {
            let rows: Vec<usize> = (1..=x.len()).collect();
            if let Ok(q) = incertus_fit::fit_polynomial(&x, &y, None, &rows, 2, false) {
                let c2 = &q.parameters[2];
                if c2.value.abs() > 3.0 * c2.standard_uncertainty {
                    warnings.push(format!(
                        "the {name} series is curved (quadratic coefficient {:.3}, u = {:.3}): the limiting gradient of a \
                         straight line may be biased; consider lower weight fractions",
                        c2.value, c2.standard_uncertainty
                    ));
                }
            }
        }
    }
    Ok(Checked { model, warnings })
}

/// The input file of `incertus dipole`: TOML naming a CSV series.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct File {
    title: Option<String>,
    series: SeriesSpec,
    solvent: Solvent,
    solute: Solute,
    conditions: Conditions,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct SeriesSpec {
    data: String,
    weight_fraction: String,
    permittivity: String,
    refractive_index: Option<String>,
    refractive_index_squared: Option<String>,
    /// Densities of the solutions (for Halverstadt-Kumler), in the unit of
    /// the solvent density.
    density: Option<String>,
    /// Use a_n ≈ 2·n₁·dn/dw₂ (needs [solvent] refractive_index).
    #[serde(default)]
    approximate_n_gradient: bool,
    #[serde(default)]
    exclude: Vec<usize>,
    exclude_reason: Option<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct Solvent {
    permittivity: Quantity,
    density: Quantity,
    refractive_index: Option<Quantity>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct Solute {
    molar_mass: Quantity,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct Conditions {
    temperature: Quantity,
}

/// Read a problem from its TOML file (the CSV path relative to it).
pub fn read_problem(path: &Path) -> Result<Problem, DipoleError> {
    let file = path.display().to_string();
    let bad = |m: String| DipoleError::new(DipoleErrorKind::File, m);
    let bytes =
        incertus_fit::read_regular(path, 16 << 20).map_err(|e| bad(format!("{file}: {e}")))?;
    let text =
        String::from_utf8(bytes).map_err(|_| bad(format!("{file}: the file is not UTF-8 text")))?;
    let f: File = toml::from_str(&text).map_err(|e| bad(format!("{file}: {e}")))?;
    let (ncol, squared) = match (
        &f.series.refractive_index,
        &f.series.refractive_index_squared,
    ) {
        (Some(c), None) => (c.clone(), false),
        (None, Some(c)) => (c.clone(), true),
        _ => {
            return Err(bad(format!(
                "{file}: [series] needs refractive_index or refractive_index_squared (one of them)"
            )))
        }
    };
    let data = path.parent().unwrap_or(Path::new("")).join(&f.series.data);
    // The density column, when named, is read with the others (its index
    // is 3): the columns read are exactly the columns named.
    let mut wanted: Vec<&str> = vec![&f.series.weight_fraction, &f.series.permittivity, &ncol];
    if let Some(d) = f.series.density.as_deref() {
        wanted.push(d);
    }
    let cols = incertus_fit::read_columns(&data, &wanted).map_err(|e| bad(e.message))?;
    let n12_squared = if squared {
        cols.columns[2].clone()
    } else {
        cols.columns[2].iter().map(|n| n * n).collect()
    };
    if !f.series.exclude.is_empty() && f.series.exclude_reason.is_none() {
        return Err(bad(format!(
            "{file}: [series] exclude needs exclude_reason"
        )));
    }
    if f.series
        .exclude_reason
        .as_deref()
        .is_some_and(|r| r.trim().is_empty())
    {
        return Err(bad(format!(
            "{file}: [series] exclude_reason is blank: write why the points are excluded"
        )));
    }
    Ok(Problem {
        title: f.title.unwrap_or_else(|| "Dipole moment".into()),
        data_file: Some(data.clone()),
        w2: cols.columns[0].clone(),
        eps12: cols.columns[1].clone(),
        n12_squared,
        rows: cols.rows,
        solvent_permittivity: f.solvent.permittivity,
        solvent_density: f.solvent.density,
        molar_mass: f.solute.molar_mass,
        temperature: f.conditions.temperature,
        exclude: f.series.exclude,
        exclude_reason: f.series.exclude_reason,
        density12: cols.columns.get(3).cloned(),
        approximate_n_gradient: f.series.approximate_n_gradient,
        solvent_refractive_index: f.solvent.refractive_index,
    })
}

/// The built-in demonstration: INVENTED data for chlorobenzene in
/// cyclohexane at 25 °C (see `tests/fixtures/make_dipole_demo.py`).
pub fn demo_problem() -> Problem {
    let text = include_str!("../data/demo_series.csv");
    let mut w2 = Vec::new();
    let mut eps12 = Vec::new();
    let mut n2 = Vec::new();
    for line in text.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let v: Vec<f64> = line
            .split(',')
            .map(|c| c.trim().parse().expect("the embedded data are numbers"))
            .collect();
        w2.push(v[0]);
        eps12.push(v[1]);
        n2.push(v[2] * v[2]);
    }
    let rows = (1..=w2.len()).collect();
    Problem {
        data_file: None,
        title: "Dipole moment of chlorobenzene in cyclohexane (INVENTED demonstration data)".into(),
        w2,
        eps12,
        n12_squared: n2,
        rows,
        solvent_permittivity: Quantity {
            value: 2.015,
            standard_uncertainty: 0.002,
            unit: None,
        },
        solvent_density: Quantity {
            value: 0.7739,
            standard_uncertainty: 0.0002,
            unit: Some("g/cm^3".into()),
        },
        molar_mass: Quantity {
            value: 112.56,
            standard_uncertainty: 0.01,
            unit: Some("g/mol".into()),
        },
        temperature: Quantity {
            value: 25.0,
            standard_uncertainty: 0.1,
            unit: Some("degC".into()),
        },
        exclude: Vec::new(),
        exclude_reason: None,
        density12: None,
        solvent_refractive_index: None,
        approximate_n_gradient: false,
    }
}
