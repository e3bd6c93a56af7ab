//! Building a model in Rust. The builder writes the model file text and
//! loads it with the same loader as `incertus eval`, so a model built here
//! is checked exactly as a file would be, and [`ModelBuilder::to_toml`]
//! gives the file that reproduces it.
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

use crate::load::{load_str, ModelError};
use crate::model::Model;

/// One input being described.
#[derive(Clone, Debug, Default)]
pub struct InputBuilder {
    keys: Vec<(String, String)>,
}

fn num(v: f64) -> String {
    let s = format!("{v:?}");
    if s.contains(['.', 'e', 'E', 'i', 'N']) {
        s
    } else {
        format!("{s}.0")
    }
}

/// A TOML basic string (quoted and escaped).
pub fn text(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if (c as u32) < 0x20 || c == '\u{7f}' => {
                out.push_str(&format!("\\u{:04X}", c as u32))
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

impl InputBuilder {
    fn set(mut self, k: &str, v: String) -> Self {
        self.keys.retain(|(key, _)| key != k);
        self.keys.push((k.to_string(), v));
        self
    }
    pub fn value(self, v: f64) -> Self {
        self.set("value", num(v))
    }
    pub fn standard_uncertainty(self, u: f64) -> Self {
        self.set("standard_uncertainty", num(u))
    }
    pub fn dof(self, d: f64) -> Self {
        self.set("dof", num(d))
    }
    pub fn expanded(self, big_u: f64, k: f64) -> Self {
        self.set("expanded_uncertainty", num(big_u))
            .set("coverage_factor", num(k))
    }
    pub fn rectangular(self, half_width: f64) -> Self {
        self.set("distribution", text("rectangular"))
            .set("half_width", num(half_width))
    }
    pub fn triangular(self, half_width: f64) -> Self {
        self.set("distribution", text("triangular"))
            .set("half_width", num(half_width))
    }
    pub fn arcsine(self, half_width: f64) -> Self {
        self.set("distribution", text("arcsine"))
            .set("half_width", num(half_width))
    }
    pub fn observations(self, obs: &[f64]) -> Self {
        let list: Vec<String> = obs.iter().map(|v| num(*v)).collect();
        self.set("observations", format!("[{}]", list.join(", ")))
    }
    pub fn constant(self, name: &str) -> Self {
        self.set("constant", text(name))
    }
    pub fn unit(self, u: &str) -> Self {
        self.set("unit", text(u))
    }
    pub fn description(self, d: &str) -> Self {
        self.set("description", text(d))
    }
}

/// A model being built.
#[derive(Clone, Debug, Default)]
pub struct ModelBuilder {
    title: Option<String>,
    coverage: Option<f64>,
    inputs: Vec<(String, InputBuilder)>,
    correlations: Vec<(String, String, f64)>,
    measurands: Vec<(String, String, Option<String>)>,
    specifications: Vec<(String, crate::conformity::Specification)>,
}

impl ModelBuilder {
    pub fn new() -> Self {
        ModelBuilder::default()
    }
    pub fn title(mut self, t: &str) -> Self {
        self.title = Some(t.to_string());
        self
    }
    pub fn coverage_probability(mut self, p: f64) -> Self {
        self.coverage = Some(p);
        self
    }
    pub fn input(mut self, name: &str, f: impl FnOnce(InputBuilder) -> InputBuilder) -> Self {
        self.inputs
            .push((name.to_string(), f(InputBuilder::default())));
        self
    }
    pub fn correlation(mut self, a: &str, b: &str, r: f64) -> Self {
        self.correlations.push((a.to_string(), b.to_string(), r));
        self
    }
    pub fn measurand(mut self, name: &str, formula: &str, unit: Option<&str>) -> Self {
        self.measurands.push((
            name.to_string(),
            formula.to_string(),
            unit.map(str::to_string),
        ));
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
        self.specifications
            .push((measurand.to_string(), spec.clone()));
        self
    }

    /// The model file this builder describes.
    pub fn to_toml(&self) -> String {
        let mut t = String::new();
        if let Some(x) = &self.title {
            t.push_str(&format!("title = {}\n", text(x)));
        }
        if let Some(p) = self.coverage {
            t.push_str(&format!("coverage_probability = {}\n", num(p)));
        }
        for (name, i) in &self.inputs {
            t.push_str(&format!("\n[inputs.{name}]\n"));
            for (k, v) in &i.keys {
                t.push_str(&format!("{k} = {v}\n"));
            }
        }
        for (a, b, r) in &self.correlations {
            t.push_str(&format!(
                "\n[[correlations]]\ninputs = [{}, {}]\ncoefficient = {}\n",
                text(a),
                text(b),
                num(*r)
            ));
        }
        for (name, f, unit) in &self.measurands {
            t.push_str(&format!(
                "\n[[measurands]]\nname = {}\nformula = {}\n",
                text(name),
                text(f)
            ));
            if let Some(u) = unit {
                t.push_str(&format!("unit = {}\n", text(u)));
            }
            for (_, spec) in self.specifications.iter().filter(|(m, _)| m == name) {
                use crate::conformity::Guard;
                t.push_str("\n[measurands.specification]\n");
                if let Some(l) = spec.lower {
                    t.push_str(&format!("lower = {}\n", num(l)));
                }
                if let Some(u) = spec.upper {
                    t.push_str(&format!("upper = {}\n", num(u)));
                }
                t.push_str(&format!("rule = {}\n", text(spec.rule.name())));
                match spec.guard {
                    Guard::None => {}
                    Guard::MultipleOfU(r) => t.push_str(&format!("guard_multiple = {}\n", num(r))),
                    Guard::SpecificRisk(a) => {
                        t.push_str(&format!("max_specific_risk = {}\n", num(a)))
                    }
                }
                if let Some(p) = spec.process {
                    t.push_str(&format!(
                        "process_mean = {}\nprocess_standard_deviation = {}\n",
                        num(p.mean),
                        num(p.standard_deviation)
                    ));
                }
            }
        }
        t
    }

    /// Check and load the model, with the loader's errors.
    pub fn build(&self) -> Result<Model, ModelError> {
        load_str(&self.to_toml(), "<built model>")
    }
}
