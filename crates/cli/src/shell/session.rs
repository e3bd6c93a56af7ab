//! What a shell session has defined — a model description — and its
//! evaluation piece by piece. A statement is checked on the part of the
//! model it touches (the measurands that use what changed, the inputs those
//! use, and the inputs correlated with them), with the change applied to
//! that part only; the session itself changes only when the part evaluates.
//! Indexes by name keep a statement's cost independent of the session's
//! length.

use std::collections::{HashMap, HashSet};

use incertus_gum::description::{
    InputDescription, InputEvaluation, MeasurandDescription, ModelDescription,
};
use incertus_gum::{propagate, Model, ModelError, Options, Report};

/// The definitions of a session.
#[derive(Clone, Debug, Default)]
pub(super) struct Session {
    pub d: ModelDescription,
    /// The names each measurand's formula uses (parsed once).
    uses: HashMap<String, Vec<String>>,
    /// The measurands whose formulas use a name.
    used_by: HashMap<String, HashSet<String>>,
    /// Positions in `d.inputs` and `d.measurands`.
    input_at: HashMap<String, usize>,
    measurand_at: HashMap<String, usize>,
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

pub(super) fn names_in(formula: &str) -> Vec<String> {
    incertus_expr::parse(formula)
        .map(|e| e.names())
        .unwrap_or_default()
}

impl Session {
    /// A session holding `d`.
    pub fn from_description(d: ModelDescription) -> Self {
        let mut s = Session {
            d,
            ..Session::default()
        };
        for m in &s.d.measurands {
            let names = names_in(&m.formula);
            for n in &names {
                s.used_by
                    .entry(n.clone())
                    .or_default()
                    .insert(m.name.clone());
            }
            s.uses.insert(m.name.clone(), names);
        }
        s.reindex();
        s
    }

    fn reindex(&mut self) {
        self.input_at = self
            .d
            .inputs
            .iter()
            .enumerate()
            .map(|(i, x)| (x.name.clone(), i))
            .collect();
        self.measurand_at = self
            .d
            .measurands
            .iter()
            .enumerate()
            .map(|(i, x)| (x.name.clone(), i))
            .collect();
    }

    pub fn is_empty(&self) -> bool {
        self.d.inputs.is_empty() && self.d.measurands.is_empty()
    }

    pub fn is_measurand(&self, name: &str) -> bool {
        self.measurand_at.contains_key(name)
    }

    pub fn measurand_mut(&mut self, name: &str) -> Option<&mut MeasurandDescription> {
        let i = *self.measurand_at.get(name)?;
        self.d.measurands.get_mut(i)
    }

    /// Forget the measurand `name` (its uses and its place).
    fn drop_measurand(&mut self, name: &str) -> Option<MeasurandDescription> {
        let i = self.measurand_at.remove(name)?;
        for n in self.uses.remove(name).unwrap_or_default() {
            if let Some(set) = self.used_by.get_mut(&n) {
                set.remove(name);
            }
        }
        let m = self.d.measurands.remove(i);
        for (k, x) in self.d.measurands.iter().enumerate().skip(i) {
            self.measurand_at.insert(x.name.clone(), k);
        }
        Some(m)
    }

    /// Define (or redefine in place) an input; a measurand of that name
    /// stops being one.
    pub fn set_input(&mut self, input: InputDescription) {
        let name = input.name.clone();
        self.drop_measurand(&name);
        match self.input_at.get(&name) {
            Some(&i) => self.d.inputs[i] = input,
            None => {
                self.input_at.insert(name, self.d.inputs.len());
                self.d.inputs.push(input);
            }
        }
    }

    /// Define a measurand (a redefinition moves it to the end, after what it
    /// may now use, and keeps its specification); an input of that name
    /// stops being one, with its stated correlations.
    pub fn set_measurand(&mut self, mut m: MeasurandDescription) {
        let name = m.name.clone();
        if let Some(old) = self.drop_measurand(&name) {
            if m.specification.is_none() {
                m.specification = old.specification;
            }
        }
        if self.input_at.contains_key(&name) {
            self.d.remove(&name);
            self.reindex();
        }
        let names = names_in(&m.formula);
        for n in &names {
            self.used_by
                .entry(n.clone())
                .or_default()
                .insert(name.clone());
        }
        self.uses.insert(name.clone(), names);
        self.measurand_at.insert(name, self.d.measurands.len());
        self.d.measurands.push(m);
    }

    /// The measurands that use `names`, directly or through others.
    pub fn dependents(&self, names: &[&str]) -> Vec<String> {
        let mut found: HashSet<&str> = HashSet::new();
        let mut stack: Vec<&str> = names.to_vec();
        while let Some(n) = stack.pop() {
            for m in self.used_by.get(n).into_iter().flatten() {
                if found.insert(m.as_str()) {
                    stack.push(m.as_str());
                }
            }
        }
        found.into_iter().map(str::to_string).collect()
    }

    /// The part of the session that `measurands` and `inputs` need: those,
    /// the measurands they use, the inputs all of these use, the inputs
    /// correlated with those (to check the correlation matrix), whole groups
    /// observed together, and the fits of fitted inputs; in the session's
    /// order.
    pub fn part(&self, measurands: &[String], inputs: &[&str]) -> ModelDescription {
        self.part_defining(measurands, inputs, None)
    }

    /// [`Session::part`] for a statement that defines `defined`: a new name
    /// being defined is not a slip, so no "did you mean" is looked for it
    /// (that search runs over the whole session: once per new input it made
    /// a long piped session quadratic).
    fn part_defining(
        &self,
        measurands: &[String],
        inputs: &[&str],
        defined: Option<&str>,
    ) -> ModelDescription {
        let mut ms: HashSet<&str> = HashSet::new();
        let mut names: HashSet<String> = inputs.iter().map(|s| s.to_string()).collect();
        let mut stack: Vec<&str> = measurands.iter().map(String::as_str).collect();
        let mut looked_for_slips = false;
        loop {
            while let Some(m) = stack.pop() {
                if !self.is_measurand(m) || !ms.insert(m) {
                    continue;
                }
                for n in self.uses.get(m).into_iter().flatten() {
                    if self.is_measurand(n) {
                        stack.push(n);
                    } else {
                        names.insert(n.clone());
                    }
                }
            }
            if looked_for_slips {
                break;
            }
            looked_for_slips = true;
            stack = self.likely_meant(&mut names, defined);
        }
        self.close_over_correlations(&mut names);
        let mut part = ModelDescription {
            title: self.d.title.clone(),
            settings: self.d.settings,
            ..ModelDescription::default()
        };
        let mut at: Vec<usize> = names
            .iter()
            .filter_map(|n| self.input_at.get(n).copied())
            .collect();
        at.sort_unstable();
        part.inputs = at.iter().map(|&i| self.d.inputs[i].clone()).collect();
        for i in &mut part.inputs {
            i.sensitivity
                .retain(|s| s.measurand.as_deref().is_some_and(|m| ms.contains(m)));
        }
        let mut at: Vec<usize> = ms.iter().map(|m| self.measurand_at[*m]).collect();
        at.sort_unstable();
        part.measurands = at.iter().map(|&i| self.d.measurands[i].clone()).collect();
        let fits: HashSet<&str> = part
            .inputs
            .iter()
            .filter_map(|i| match &i.evaluation {
                InputEvaluation::FitParameter { fit, .. } => Some(fit.as_str()),
                _ => None,
            })
            .collect();
        part.fits = (self.d.fits.iter())
            .filter(|f| fits.contains(f.name.as_str()))
            .cloned()
            .collect();
        part.correlations = (self.d.correlations.iter())
            .filter(|c| names.contains(&c.inputs[0]))
            .cloned()
            .collect();
        part.observed_together = (self.d.observed_together.iter())
            .filter(|g| g.iter().any(|n| names.contains(n)))
            .cloned()
            .collect();
        part
    }

    /// For a name that is defined nowhere (a slip the evaluation will
    /// refuse), the session's closest name, so that the error can say
    /// "did you mean" from the whole session, not only from the part: an
    /// input is added to `names`, a measurand returned to be taken in with
    /// what it uses.
    fn likely_meant(&self, names: &mut HashSet<String>, defined: Option<&str>) -> Vec<&str> {
        let unknown: Vec<String> = names
            .iter()
            .filter(|n| Some(n.as_str()) != defined)
            .filter(|n| !self.input_at.contains_key(*n) && !self.measurand_at.contains_key(*n))
            .cloned()
            .collect();
        let mut more = Vec::new();
        for u in unknown {
            let all = self.input_at.keys().chain(self.measurand_at.keys());
            if let Some(c) = incertus_gum::description::closest_name(&u, all.map(String::as_str)) {
                match self.measurand_at.get_key_value(c) {
                    Some((k, _)) => more.push(k.as_str()),
                    None => {
                        names.insert(c.to_string());
                    }
                }
            }
        }
        more
    }

    /// Add the inputs correlated with those in `names`, to a fixed point.
    fn close_over_correlations(&self, names: &mut HashSet<String>) {
        if self.d.correlations.is_empty() && self.d.observed_together.is_empty() {
            return;
        }
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
    }

    /// The part an input definition touches, with the definition in it.
    pub fn part_with_input(&self, input: &InputDescription) -> ModelDescription {
        let name = input.name.as_str();
        let mut part = self.part_defining(&self.dependents(&[name]), &[name], Some(name));
        part.measurands.retain(|m| m.name != name);
        match part.inputs.iter_mut().find(|i| i.name == name) {
            Some(slot) => *slot = input.clone(),
            None => part.inputs.push(input.clone()),
        }
        part
    }

    /// The part a measurand definition touches, with the definition in it.
    pub fn part_with_measurand(&self, m: &MeasurandDescription) -> ModelDescription {
        let name = m.name.as_str();
        let uses = names_in(&m.formula);
        let mut roots = self.dependents(&[name]);
        roots.extend(uses.iter().filter(|n| self.is_measurand(n)).cloned());
        let inputs: Vec<&str> = uses
            .iter()
            .filter(|n| !self.is_measurand(n) && n.as_str() != name)
            .map(String::as_str)
            .collect();
        let mut part = self.part(&roots, &inputs);
        part.inputs.retain(|i| i.name != name);
        part.correlations
            .retain(|c| c.inputs[0] != name && c.inputs[1] != name);
        let mut m = m.clone();
        if let Some(old) = part.measurands.iter().position(|x| x.name == name) {
            let old = part.measurands.remove(old);
            m.specification = m.specification.or(old.specification);
        } else if let Some(&i) = self.measurand_at.get(name) {
            m.specification = m
                .specification
                .or_else(|| self.d.measurands[i].specification.clone());
        }
        part.measurands.push(m);
        part
    }

    /// Validate and propagate a part.
    pub fn evaluate(part: &ModelDescription) -> Result<Part, String> {
        let model = part.validate_draft().map_err(|e| message(&e))?;
        let mut report = propagate(&model, &Options::default())
            .map_err(|e| crate::with_options(&e.to_string()))?;
        crate::name_options(&mut report);
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
