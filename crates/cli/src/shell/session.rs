//! What a shell session has defined — a model description — and its
//! evaluation piece by piece: a statement validates and propagates only the
//! part of the model it touches (the measurands that use what changed, the
//! inputs those use, and the inputs correlated with them), so a statement
//! costs the same at the thousandth line as at the first.

use std::collections::{HashMap, HashSet};

use incertus_gum::description::{ModelDescription, StatedCoefficient};
use incertus_gum::{propagate, Model, ModelError, Options, Report};

/// The definitions of a session.
#[derive(Clone, Debug, Default)]
pub(super) struct Session {
    pub d: ModelDescription,
    /// The names each measurand's formula uses (parsed once).
    uses: HashMap<String, Vec<String>>,
}

/// A model of part of the session, evaluated.
pub(super) struct Part {
    pub model: Model,
    pub report: Report,
}

/// The error of a statement as the shell shows it: the message and the
/// lines below it (a formula with a caret).
pub(super) fn message(e: &ModelError) -> String {
    let mut m = e.message.clone();
    if let Some(d) = &e.detail {
        m.push('\n');
        m.push_str(d);
    }
    m
}

fn names_in(formula: &str) -> Vec<String> {
    incertus_expr::parse(formula)
        .map(|e| e.names().into_iter().collect())
        .unwrap_or_default()
}

impl Session {
    /// A session holding `d`.
    pub fn from_description(d: ModelDescription) -> Self {
        let uses = d
            .measurands
            .iter()
            .map(|m| (m.name.clone(), names_in(&m.formula)))
            .collect();
        Session { d, uses }
    }

    pub fn is_empty(&self) -> bool {
        self.d.inputs.is_empty() && self.d.measurands.is_empty()
    }

    pub fn is_measurand(&self, name: &str) -> bool {
        self.uses.contains_key(name)
    }

    /// Define (or redefine in place) an input.
    pub fn set_input(&mut self, input: incertus_gum::description::InputDescription) {
        let name = input.name.clone();
        self.drop_measurand(&name);
        match self.d.inputs.iter_mut().find(|i| i.name == name) {
            Some(slot) => *slot = input,
            None => self.d.inputs.push(input),
        }
    }

    /// Define a measurand (a redefinition moves it to the end, after what it
    /// may now use); a name that was an input stops being one.
    pub fn set_measurand(&mut self, m: incertus_gum::description::MeasurandDescription) {
        let name = m.name.clone();
        let spec = self
            .d
            .measurand(&name)
            .and_then(|x| x.specification.clone());
        self.d.remove(&name);
        self.uses.insert(name, names_in(&m.formula));
        let mut m = m;
        if m.specification.is_none() {
            m.specification = spec;
        }
        self.d.measurands.push(m);
    }

    fn drop_measurand(&mut self, name: &str) {
        if self.uses.remove(name).is_some() {
            self.d.measurands.retain(|m| m.name != name);
        }
    }

    /// The measurands that use `names`, directly or through others.
    pub fn dependents(&self, names: &[&str]) -> Vec<String> {
        let mut found: HashSet<String> = HashSet::new();
        let mut frontier: Vec<String> = names.iter().map(|s| s.to_string()).collect();
        while !frontier.is_empty() {
            let set: HashSet<&str> = frontier.iter().map(String::as_str).collect();
            let mut next = Vec::new();
            for m in &self.d.measurands {
                if found.contains(&m.name) {
                    continue;
                }
                if self.uses[&m.name].iter().any(|n| set.contains(n.as_str())) {
                    found.insert(m.name.clone());
                    next.push(m.name.clone());
                }
            }
            frontier = next;
        }
        self.d
            .measurands
            .iter()
            .filter(|m| found.contains(&m.name))
            .map(|m| m.name.clone())
            .collect()
    }

    /// The part of the session that `measurands` and `inputs` need: those,
    /// the measurands they use, the inputs all of these use, the inputs
    /// correlated with those (to check the correlation matrix), whole groups
    /// observed together, and the fits of fitted inputs.
    pub fn part(&self, measurands: &[String], inputs: &[&str]) -> ModelDescription {
        let mut ms: HashSet<String> = HashSet::new();
        let mut names: HashSet<String> = inputs.iter().map(|s| s.to_string()).collect();
        let mut stack: Vec<String> = measurands.to_vec();
        while let Some(m) = stack.pop() {
            if !ms.insert(m.clone()) {
                continue;
            }
            for n in self.uses.get(&m).into_iter().flatten() {
                if self.uses.contains_key(n) {
                    stack.push(n.clone());
                } else {
                    names.insert(n.clone());
                }
            }
        }
        // Inputs correlated with included ones, to a fixed point.
        loop {
            let before = names.len();
            for c in &self.d.correlations {
                if names.contains(&c.inputs[0]) || names.contains(&c.inputs[1]) {
                    names.insert(c.inputs[0].clone());
                    names.insert(c.inputs[1].clone());
                }
            }
            for g in &self.d.observed_together {
                if g.iter().any(|n| names.contains(n)) {
                    names.extend(g.iter().cloned());
                }
            }
            if names.len() == before {
                break;
            }
        }
        let mut part = ModelDescription {
            title: self.d.title.clone(),
            description: None,
            settings: self.d.settings,
            ..ModelDescription::default()
        };
        part.inputs = self
            .d
            .inputs
            .iter()
            .filter(|i| names.contains(&i.name))
            .map(|i| {
                let mut i = i.clone();
                i.sensitivity.retain(|s: &StatedCoefficient| {
                    s.measurand.as_ref().is_some_and(|m| ms.contains(m))
                });
                i
            })
            .collect();
        let fits: HashSet<&str> = part
            .inputs
            .iter()
            .filter_map(|i| match &i.evaluation {
                incertus_gum::description::InputEvaluation::FitParameter { fit, .. } => {
                    Some(fit.as_str())
                }
                _ => None,
            })
            .collect();
        part.fits = self
            .d
            .fits
            .iter()
            .filter(|f| fits.contains(f.name.as_str()))
            .cloned()
            .collect();
        part.correlations = self
            .d
            .correlations
            .iter()
            .filter(|c| names.contains(&c.inputs[0]))
            .cloned()
            .collect();
        part.observed_together = self
            .d
            .observed_together
            .iter()
            .filter(|g| g.iter().any(|n| names.contains(n)))
            .cloned()
            .collect();
        part.measurands = self
            .d
            .measurands
            .iter()
            .filter(|m| ms.contains(&m.name))
            .cloned()
            .collect();
        part
    }

    /// Validate and propagate a part.
    pub fn evaluate(part: &ModelDescription) -> Result<Part, String> {
        let model = part.validate_draft().map_err(|e| message(&e))?;
        let report = propagate(&model, &Options::default()).map_err(|e| e.to_string())?;
        Ok(Part { model, report })
    }

    /// Evaluate what `measurands` and `inputs` need.
    pub fn evaluate_part(&self, measurands: &[String], inputs: &[&str]) -> Result<Part, String> {
        Self::evaluate(&self.part(measurands, inputs))
    }

    /// Evaluate everything.
    pub fn evaluate_all(&self) -> Result<Part, String> {
        Self::evaluate(&self.d)
    }
}
