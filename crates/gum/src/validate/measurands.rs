//! Measurands: names, formulas, units, stated values, specifications; then
//! the checks across the model (names used, order, sizes, dimensions) and
//! the stated sensitivity coefficients, which need every name.

use incertus_expr::parse;

use super::*;
use crate::conformity::{Guard, Specification};

impl Validator<'_, '_> {
    pub(super) fn measurands(
        &self,
        d: &ModelDescription,
        inputs: &mut [Input],
    ) -> Result<Vec<Measurand>> {
        if d.measurands.is_empty() && self.draft {
            return Ok(Vec::new());
        }
        if d.measurands.is_empty() {
            let msg = if self.origin.places.contains_key("measurands") {
                "the list of measurands is empty"
            } else {
                "the model has no measurands; add [[measurands]] with name and formula"
            };
            return Err(self.err("measurands", msg));
        }
        if d.measurands.len() > self.limits.max_measurands {
            return Err(self
                .err(
                    "measurands",
                    format!(
                        "{} measurands; the limit is {} (INCERTUS_MAX_MEASURANDS)",
                        d.measurands.len(),
                        self.limits.max_measurands
                    ),
                )
                .with_kind(ModelErrorKind::Limit));
        }
        let mut names: HashMap<&str, ()> = inputs.iter().map(|i| (i.name.as_str(), ())).collect();
        let mut out: Vec<Measurand> = Vec::with_capacity(d.measurands.len());
        for (m, md) in d.measurands.iter().enumerate() {
            let path = format!("measurands[{m}]");
            let name_path = join(&path, "name");
            if let Some(msg) = name_problem(&md.name) {
                return Err(self.err(&name_path, msg).with_kind(ModelErrorKind::Name));
            }
            if names.insert(md.name.as_str(), ()).is_some() {
                return Err(self
                    .err(&name_path, format!("`{}` is defined twice", md.name))
                    .with_kind(ModelErrorKind::Name));
            }
            out.push(self.measurand(md, &path)?);
        }
        let index: HashMap<String, usize> = d
            .measurands
            .iter()
            .enumerate()
            .map(|(i, m)| (m.name.clone(), i))
            .collect();
        self.check_formula_names(inputs, &out)?;
        let mut out = self.order_measurands(out)?;
        self.check_expanded_size(&out, &index)?;
        if inputs.iter().any(|i| i.unit_si.is_some()) || out.iter().any(|m| m.unit_si.is_some()) {
            self.check_dimensions(inputs, &mut out, &index)?;
        }
        for (i, input) in d.inputs.iter().enumerate() {
            for s in &input.sensitivity {
                let stated = self.sensitivity(&input.name, s, inputs, &out)?;
                inputs[i].stated_sensitivities.push(stated);
            }
        }
        Ok(out)
    }

    fn measurand(&self, md: &MeasurandDescription, path: &str) -> Result<Measurand> {
        let fpath = join(path, "formula");
        let formula =
            parse(&md.formula).map_err(|e| self.origin.formula_error(&fpath, &md.formula, &e))?;
        let unit_si = match &md.unit {
            Some(t) => {
                let p = join(path, "unit");
                Some(self.unit(&p, &p, t)?)
            }
            None => None,
        };
        let stated = |key: &str, v: Option<f64>| -> Result<Option<Stated>> {
            let Some(value) = v else { return Ok(None) };
            let p = join(path, key);
            self.finite(&p, value)?;
            Ok(Some(Stated {
                value,
                line: self.origin.line(&p),
                text: self.origin.text(&p, value),
            }))
        };
        let specification = match &md.specification {
            Some(s) => Some(self.specification(s, &join(path, "specification"))?),
            None => None,
        };
        Ok(Measurand {
            name: md.name.clone(),
            formula_text: md.formula.clone(),
            formula,
            description: md.description.clone(),
            unit: md.unit.clone(),
            unit_si,
            expected_value: stated("expected_value", md.expected_value)?,
            expected_standard_uncertainty: stated(
                "expected_standard_uncertainty",
                md.expected_standard_uncertainty,
            )?,
            specification,
            interval: false,
            line: self.origin.line(path),
        })
    }

    /// The numbers of a specification (JCGM 106:2012), in the measurand's
    /// unit.
    fn specification(&self, s: &Specification, path: &str) -> Result<Specification> {
        let (lp, up) = (join(path, "lower"), join(path, "upper"));
        if s.lower.is_none() && s.upper.is_none() {
            return Err(self.err(
                path,
                "a specification needs `lower`, `upper` or both (the tolerance limits, in the measurand's unit)",
            ));
        }
        if let Some(l) = s.lower {
            self.finite(&lp, l)?;
        }
        if let Some(u) = s.upper {
            self.finite(&up, u)?;
        }
        if let (Some(l), Some(u)) = (s.lower, s.upper) {
            if l >= u {
                return Err(self.err(
                    &up,
                    format!(
                        "the upper limit {} must be greater than the lower limit {}",
                        self.origin.text(&up, u),
                        self.origin.text(&lp, l)
                    ),
                ));
            }
        }
        match s.guard {
            Guard::None => {}
            Guard::MultipleOfU(r) => {
                let p = join(path, "guard_multiple");
                self.finite(&p, r)?;
                if r < 0.0 {
                    return Err(self.err(
                        &p,
                        format!(
                            "the guard band multiple must not be negative, found {}",
                            self.origin.text(&p, r)
                        ),
                    ));
                }
            }
            Guard::SpecificRisk(a) => {
                let p = join(path, "max_specific_risk");
                if !(a > 0.0 && a < 0.5) {
                    return Err(self.err(
                        &p,
                        format!(
                            "the largest specific risk is a probability between 0 and 0.5 (e.g. 0.05), found {}",
                            self.origin.text(&p, a)
                        ),
                    ));
                }
            }
        }
        if let Some(pr) = s.process {
            self.finite_at(path, "process_mean", pr.mean)?;
            let p = join(path, "process_standard_deviation");
            if !(pr.standard_deviation > 0.0 && pr.standard_deviation.is_finite()) {
                return Err(self.err(
                    &p,
                    format!(
                        "the process standard deviation must be positive, found {}",
                        self.origin.text(&p, pr.standard_deviation)
                    ),
                ));
            }
        }
        Ok(s.clone())
    }

    /// A stated sensitivity coefficient, resolved against the measurands.
    fn sensitivity(
        &self,
        input: &str,
        s: &StatedCoefficient,
        inputs: &[Input],
        measurands: &[Measurand],
    ) -> Result<(String, StatedSensitivity)> {
        let base = format!("inputs.{input}.sensitivity");
        let path = match &s.measurand {
            Some(m) => join(&base, m),
            None => base.clone(),
        };
        let measurand = match &s.measurand {
            Some(m) => {
                if !measurands.iter().any(|x| &x.name == m) {
                    return Err(self
                        .origin
                        .key_error(&path, format!("no measurand named `{m}`")));
                }
                m.clone()
            }
            None => {
                if measurands.len() != 1 {
                    return Err(self.err(
                        &path,
                        "the model has several measurands: give sensitivity = { measurand = ... }",
                    ));
                }
                measurands[0].name.clone()
            }
        };
        let line = self.origin.line(&path);
        let stated = match &s.value {
            Coefficient::Number(v) if !v.is_finite() => {
                return Err(self.err(
                    &path,
                    format!(
                        "`{}` is not a finite number; a stated sensitivity coefficient must be one",
                        self.origin.text(&path, *v)
                    ),
                ));
            }
            Coefficient::Number(v) => StatedSensitivity::Number(Stated {
                value: *v,
                text: self.origin.text(&path, *v),
                line,
            }),
            Coefficient::Formula(text) => {
                let expr = parse(text).map_err(|e| {
                    let mut err = self.err(&path, e.message.clone());
                    err.detail = Some(incertus_expr::caret(text, e.span));
                    err
                })?;
                for (name, span) in checks::var_spans(&expr) {
                    if !inputs.iter().any(|i| i.name == name)
                        && !measurands.iter().any(|m| m.name == name)
                    {
                        let mut err = self.err(
                            &path,
                            format!("`{name}` is neither an input nor a measurand"),
                        );
                        err.detail = Some(incertus_expr::caret(text, span));
                        return Err(err);
                    }
                }
                StatedSensitivity::Formula {
                    text: text.clone(),
                    expr,
                    line,
                }
            }
        };
        Ok((measurand, stated))
    }
}
