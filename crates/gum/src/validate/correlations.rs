//! Correlations: between the parameters of one fit (its covariance), between
//! inputs observed together (JCGM 100:2008, 5.2.3), and stated ones; the
//! whole matrix checked.

use super::*;
use crate::load::closest;
use crate::typea;

fn unknown_input(n: &str, index: &HashMap<&str, usize>) -> String {
    let mut msg = format!("`{n}` is not an input");
    if let Some(c) = closest(n, index.keys().copied()) {
        msg.push_str(&format!("; did you mean `{c}`?"));
    }
    msg
}

impl Validator<'_, '_> {
    pub(crate) fn correlations(
        &self,
        d: &ModelDescription,
        inputs: &[Input],
        fits: &[NamedFit],
    ) -> Result<Vec<Correlation>> {
        let index: HashMap<&str, usize> = inputs
            .iter()
            .enumerate()
            .map(|(i, x)| (x.name.as_str(), i))
            .collect();
        let mut out = self.fit_correlations(inputs, fits)?;
        self.observed_together(d, inputs, &index, &mut out)?;
        self.stated_correlations(d, inputs, &index, &mut out)?;
        crate::matrix::check_correlations(inputs, &out)
            .map_err(|m| self.origin.key_error("correlations", m))?;
        Ok(out)
    }

    /// Parameters of one fit are correlated through its covariance.
    fn fit_correlations(&self, inputs: &[Input], fits: &[NamedFit]) -> Result<Vec<Correlation>> {
        let mut out = Vec::new();
        let params: Vec<(usize, &str, &str)> = inputs
            .iter()
            .enumerate()
            .filter_map(|(i, x)| match &x.evaluation {
                Evaluation::Fit { fit, parameter } => Some((i, fit.as_str(), parameter.as_str())),
                _ => None,
            })
            .collect();
        for (x, &(i, fi, pi)) in params.iter().enumerate() {
            for &(j, fj, pj) in &params[x + 1..] {
                if fi != fj {
                    continue;
                }
                if pi == pj {
                    return Err(self.origin.key_error(
                        &format!("inputs.{}", inputs[j].name),
                        format!(
                            "`{}` and `{}` are both parameter `{pi}` of fit `{fi}`; name each parameter once",
                            inputs[i].name, inputs[j].name
                        ),
                    ));
                }
                let f = fits
                    .iter()
                    .find(|f| f.name == fi)
                    .expect("checked with the input");
                let (a, b) = (
                    f.result.parameter(pi).expect("checked"),
                    f.result.parameter(pj).expect("checked"),
                );
                out.push(Correlation {
                    a: i,
                    b: j,
                    coefficient: f.result.correlation[a][b],
                    from_observations: true,
                    from_fit: Some(fi.to_string()),
                });
            }
        }
        Ok(out)
    }

    /// Inputs observed together: their covariance from the data.
    fn observed_together(
        &self,
        d: &ModelDescription,
        inputs: &[Input],
        index: &HashMap<&str, usize>,
        out: &mut Vec<Correlation>,
    ) -> Result<()> {
        let mut grouped: HashMap<usize, usize> = HashMap::new();
        for (g, names) in d.observed_together.iter().enumerate() {
            let path = format!("observed_together[{g}].inputs");
            let at = |k: usize| format!("{path}[{k}]");
            if names.len() < 2 {
                return Err(self.err(&path, "name at least two inputs observed together"));
            }
            let mut idx = Vec::new();
            for (k, n) in names.iter().enumerate() {
                let Some(&i) = index.get(n.as_str()) else {
                    return Err(self
                        .origin
                        .error_shown(&at(k), &path, unknown_input(n, index)));
                };
                if !matches!(
                    inputs[i].evaluation,
                    Evaluation::TypeA { pooled: false, .. }
                ) {
                    return Err(self.origin.error_shown(
                        &at(k),
                        &path,
                        format!(
                            "`{n}` must be given by `observations` (without a pooled \
                             standard deviation) to be observed together with others"
                        ),
                    ));
                }
                if idx.contains(&i) {
                    return Err(self.origin.error_shown(
                        &at(k),
                        &path,
                        format!("`{n}` is named twice"),
                    ));
                }
                if let Some(prev) = grouped.insert(i, g) {
                    return Err(self.origin.error_shown(
                        &at(k),
                        &path,
                        format!("`{n}` is already in observed_together[{prev}]"),
                    ));
                }
                idx.push(i);
            }
            let series = |i: usize| {
                inputs[i]
                    .observations
                    .as_deref()
                    .expect("Type A has observations")
            };
            let n0 = series(idx[0]).len();
            for (k, &i) in idx.iter().enumerate() {
                let len = series(i).len();
                if len != n0 {
                    return Err(self.origin.error_shown(
                        &at(k),
                        &path,
                        format!(
                            "`{}` has {len} observations but `{}` has {n0}; inputs observed \
                             together need the same number, taken pairwise",
                            names[k], names[0]
                        ),
                    ));
                }
            }
            for (x, &i) in idx.iter().enumerate() {
                for &j in &idx[x + 1..] {
                    out.push(Correlation {
                        a: i,
                        b: j,
                        coefficient: typea::correlation(series(i), series(j)),
                        from_observations: true,
                        from_fit: None,
                    });
                }
            }
        }
        Ok(())
    }

    fn stated_correlations(
        &self,
        d: &ModelDescription,
        inputs: &[Input],
        index: &HashMap<&str, usize>,
        out: &mut Vec<Correlation>,
    ) -> Result<()> {
        for (c, cd) in d.correlations.iter().enumerate() {
            let path = format!("correlations[{c}].inputs");
            let mut idx = [0usize; 2];
            for (k, (slot, n)) in idx.iter_mut().zip(&cd.inputs).enumerate() {
                *slot = *index.get(n.as_str()).ok_or_else(|| {
                    self.origin
                        .error_shown(&format!("{path}[{k}]"), &path, unknown_input(n, index))
                })?;
            }
            if idx[0] == idx[1] {
                return Err(self.err(&path, "an input cannot be correlated with itself"));
            }
            let cp = format!("correlations[{c}].coefficient");
            self.finite(&cp, cd.coefficient)?;
            if !(-1.0..=1.0).contains(&cd.coefficient) {
                return Err(self.err(
                    &cp,
                    format!(
                        "a correlation coefficient lies in [-1, 1], found {}",
                        self.origin.text(&cp, cd.coefficient)
                    ),
                ));
            }
            if let Some(prev) = out
                .iter()
                .find(|x| (x.a == idx[0] && x.b == idx[1]) || (x.a == idx[1] && x.b == idx[0]))
            {
                let why = if prev.from_observations {
                    "their correlation already comes from observations taken together"
                } else {
                    "this pair is already correlated above"
                };
                return Err(self.err(
                    &path,
                    format!("`{}` and `{}`: {why}", cd.inputs[0], cd.inputs[1]),
                ));
            }
            for &i in &idx {
                if inputs[i].standard_uncertainty == 0.0 && cd.coefficient != 0.0 {
                    return Err(self.err(
                        &path,
                        format!(
                            "`{}` has no uncertainty, so it cannot be correlated",
                            inputs[i].name
                        ),
                    ));
                }
            }
            out.push(Correlation {
                a: idx[0],
                b: idx[1],
                coefficient: cd.coefficient,
                from_observations: false,
                from_fit: None,
            });
        }
        Ok(())
    }
}
