//! Inputs: every evaluation's numbers checked, Type A statistics, fitted
//! parameters and tabulated constants looked up, conversion to coherent SI.

use super::*;
use crate::constants;
use crate::load::closest;
use crate::typea;

impl Validator<'_, '_> {
    pub(super) fn inputs(&self, ds: &[InputDescription], fits: &[NamedFit]) -> Result<Vec<Input>> {
        if ds.len() > self.limits.max_inputs {
            return Err(self
                .origin
                .key_error(
                    "inputs",
                    format!(
                        "{} inputs; the limit is {} (INCERTUS_MAX_INPUTS)",
                        ds.len(),
                        self.limits.max_inputs
                    ),
                )
                .with_kind(ModelErrorKind::Limit));
        }
        let mut seen: HashMap<&str, ()> = HashMap::with_capacity(ds.len());
        let mut out = Vec::with_capacity(ds.len());
        for d in ds {
            let path = format!("inputs.{}", d.name);
            if let Some(m) = name_problem(&d.name) {
                return Err(self
                    .origin
                    .key_error(&path, m)
                    .with_kind(ModelErrorKind::Name));
            }
            if seen.insert(d.name.as_str(), ()).is_some() {
                return Err(self
                    .err(&path, format!("`{}` is defined twice", d.name))
                    .with_kind(ModelErrorKind::Name));
            }
            let input = self.input(d, &path, fits)?;
            out.push(self.to_si(input, &path)?);
        }
        Ok(out)
    }

    /// A number that must be positive (or zero, with `allow_zero`).
    fn positive(&self, path: &str, key: &str, v: f64, allow_zero: bool) -> Result<()> {
        if v.is_finite() && (v > 0.0 || (allow_zero && v == 0.0)) {
            return Ok(()); // (the key path is made only for an error)
        }
        let p = join(path, key);
        self.finite(&p, v)?;
        if v < 0.0 || (!allow_zero && v == 0.0) {
            let what = if allow_zero {
                "zero or positive"
            } else {
                "positive"
            };
            return Err(self.err(
                &p,
                format!("must be {what}, found {}", self.origin.text(&p, v)),
            ));
        }
        Ok(())
    }

    /// ν from a stated dof or relative reliability (JCGM 100:2008, G.4.2).
    fn stated_dof(&self, path: &str, dof: Option<DofGiven>) -> Result<Dof> {
        Ok(match dof {
            None => None,
            Some(DofGiven::Dof(d)) => {
                self.positive(path, "dof", d, false)?;
                Some(d)
            }
            Some(DofGiven::RelativeReliability(r)) => {
                self.positive(path, "relative_reliability", r, false)?;
                // 1/(2R²): 0.25 gives 8; 0.1 gives 49.99999999999999 in
                // floating point, which is 50.
                Some(crate::coverage::snap_to_integer(0.5 / (r * r)))
            }
        })
    }

    pub(crate) fn input(
        &self,
        d: &InputDescription,
        path: &str,
        fits: &[NamedFit],
    ) -> Result<Input> {
        let mut input = Input {
            name: d.name.clone(),
            estimate: 0.0,
            standard_uncertainty: 0.0,
            dof: None,
            evaluation: Evaluation::TypeB,
            distribution: Distribution::Normal,
            observations: None,
            description: d.description.clone(),
            source: d.source.clone(),
            stated: d.evaluation.clone(),
            unit: d.unit.clone(),
            unit_si: None,
            stated_sensitivities: Vec::new(),
            line: self.origin.line(path),
        };
        let value = |v: f64| -> Result<f64> {
            self.finite_at(path, "value", v)?;
            Ok(v)
        };
        match &d.evaluation {
            InputEvaluation::Exact { value: v } => {
                input.estimate = value(*v)?;
                input.evaluation = Evaluation::Exact;
                input.distribution = Distribution::Exact;
            }
            InputEvaluation::Standard {
                value: v,
                standard_uncertainty,
                dof,
                shape,
            } => {
                self.positive(path, "standard_uncertainty", *standard_uncertainty, true)?;
                input.dof = self.stated_dof(path, *dof)?;
                input.estimate = value(*v)?;
                input.standard_uncertainty = *standard_uncertainty;
                input.distribution = self.centred(path, *shape, input.dof)?;
            }
            InputEvaluation::Expanded {
                value: v,
                expanded_uncertainty,
                coverage_factor,
                dof,
                shape,
            } => {
                self.positive(path, "expanded_uncertainty", *expanded_uncertainty, true)?;
                self.positive(path, "coverage_factor", *coverage_factor, false)?;
                input.dof = self.stated_dof(path, *dof)?;
                input.estimate = value(*v)?;
                input.standard_uncertainty = expanded_uncertainty / coverage_factor;
                input.distribution = self.centred(path, *shape, input.dof)?;
            }
            InputEvaluation::Limits { limits, shape, dof } => {
                let (estimate, dist) = self.limits(path, limits, shape)?;
                input.dof = self.stated_dof(path, *dof)?;
                input.estimate = estimate;
                input.standard_uncertainty = dist
                    .standard_uncertainty_from_limits()
                    .expect("a distribution with limits");
                input.distribution = dist;
            }
            InputEvaluation::Observations { values, pooled } => {
                self.observations(&mut input, path, values, pooled.as_ref())?;
            }
            InputEvaluation::Gamma { shape, scale, dof } => {
                self.positive(path, "shape", *shape, false)?;
                self.positive(path, "scale", *scale, false)?;
                input.estimate = shape * scale;
                input.standard_uncertainty = shape.sqrt() * scale;
                input.dof = self.stated_dof(path, *dof)?;
                input.distribution = Distribution::Gamma {
                    shape: *shape,
                    scale: *scale,
                };
            }
            InputEvaluation::Exponential { value: v, dof } => {
                let v = value(*v)?;
                if v <= 0.0 {
                    return Err(self.err(
                        &join(path, "value"),
                        "the estimate of an exponential distribution (its mean) must be positive",
                    ));
                }
                input.estimate = v;
                input.standard_uncertainty = v;
                input.dof = self.stated_dof(path, *dof)?;
                input.distribution = Distribution::Exponential;
            }
            InputEvaluation::Constant { name } => self.constant(&mut input, path, name)?,
            InputEvaluation::FitParameter { fit, parameter } => {
                self.fit_parameter(&mut input, path, fits, fit, parameter)?
            }
        }
        Ok(input)
    }

    fn centred(&self, path: &str, shape: CentredShape, dof: Dof) -> Result<Distribution> {
        Ok(match shape {
            CentredShape::Normal => Distribution::Normal,
            CentredShape::StudentT if dof.is_some() => Distribution::StudentT,
            CentredShape::StudentT => {
                return Err(self.err(
                    &join(path, "distribution"),
                    "`t` does not fit this description of the input; a t distribution needs dof",
                ))
            }
        })
    }

    fn limits(
        &self,
        path: &str,
        limits: &LimitsGiven,
        shape: &LimitShape,
    ) -> Result<(f64, Distribution)> {
        let (estimate, half_width) = match *limits {
            LimitsGiven::HalfWidth { value, half_width } => {
                self.finite_at(path, "value", value)?;
                self.positive(path, "half_width", half_width, true)?;
                (value, half_width)
            }
            LimitsGiven::Bounds {
                lower,
                upper,
                value,
            } => {
                self.finite_at(path, "lower", lower)?;
                self.finite_at(path, "upper", upper)?;
                if upper < lower {
                    let up = join(path, "upper");
                    return Err(self.err(
                        &up,
                        format!(
                            "upper ({}) is below lower ({})",
                            self.origin.text(&up, upper),
                            self.origin.text(&join(path, "lower"), lower)
                        ),
                    ));
                }
                let mid = 0.5 * (lower + upper);
                if let Some(v) = value {
                    self.finite_at(path, "value", v)?;
                    if (v - mid).abs() > 1e-12 * mid.abs().max(upper - lower) {
                        return Err(self.err(
                            &join(path, "value"),
                            format!(
                                "the estimate of a symmetric distribution is the midpoint of its \
                                 limits ({mid}); omit value, or give value with half_width \
                                 (JCGM 100:2008, 4.3.7)"
                            ),
                        ));
                    }
                }
                (mid, 0.5 * (upper - lower))
            }
        };
        let dist = match *shape {
            LimitShape::Rectangular => Distribution::Rectangular { half_width },
            LimitShape::Triangular => Distribution::Triangular { half_width },
            LimitShape::Arcsine => Distribution::Arcsine { half_width },
            LimitShape::Trapezoidal { beta } => {
                let p = join(path, "beta");
                self.finite(&p, beta)?;
                if !(0.0..=1.0).contains(&beta) {
                    return Err(self.err(
                        &p,
                        format!("beta lies in [0, 1], found {}", self.origin.text(&p, beta)),
                    ));
                }
                Distribution::Trapezoidal { half_width, beta }
            }
            LimitShape::CurvilinearTrapezoidal { limit_half_width } => {
                self.positive(path, "limit_half_width", limit_half_width, true)?;
                if limit_half_width > half_width {
                    return Err(self.err(
                        &join(path, "limit_half_width"),
                        "limit_half_width cannot exceed the half-width of the distribution",
                    ));
                }
                Distribution::CurvilinearTrapezoidal {
                    half_width,
                    limit_half_width,
                }
            }
        };
        Ok((estimate, dist))
    }

    fn observations(
        &self,
        input: &mut Input,
        path: &str,
        values: &[f64],
        pooled: Option<&Pooled>,
    ) -> Result<()> {
        let p = join(path, "observations");
        if let Some(i) = values.iter().position(|v| !v.is_finite()) {
            self.finite(&format!("{p}[{i}]"), values[i])?;
        }
        let n = values.len();
        if n < 2 {
            return Err(self.err(
                &p,
                format!("a Type A evaluation needs at least two observations, found {n}"),
            ));
        }
        let (s, nu) = match pooled {
            Some(pl) => {
                self.positive(
                    path,
                    "pooled_standard_deviation",
                    pl.standard_deviation,
                    true,
                )?;
                self.positive(path, "pooled_dof", pl.dof, false)?;
                (pl.standard_deviation, pl.dof)
            }
            None => (typea::std_dev(values), (n - 1) as f64),
        };
        input.estimate = typea::mean(values);
        input.standard_uncertainty = s / (n as f64).sqrt();
        input.dof = Some(nu);
        input.evaluation = Evaluation::TypeA {
            n,
            pooled: pooled.is_some(),
        };
        input.distribution = Distribution::StudentT;
        input.observations = Some(values.to_vec());
        Ok(())
    }

    fn constant(&self, input: &mut Input, path: &str, name: &str) -> Result<()> {
        let Some(c) = constants::find(name) else {
            let names: Vec<&str> = constants::TABLE.iter().map(|c| c.name).collect();
            let mut msg = format!(
                "no constant named `{name}` in the {} table",
                constants::ADJUSTMENT
            );
            if let Some(close) = closest(name, names.iter().copied()) {
                msg.push_str(&format!("; did you mean `{close}`?"));
            }
            let mut e = self
                .err(&join(path, "constant"), msg)
                .with_kind(ModelErrorKind::Name);
            e.detail = Some(format!("constants: {}", names.join(", ")));
            return Err(e);
        };
        input.estimate = c.value;
        input.standard_uncertainty = c.standard_uncertainty;
        input.evaluation = Evaluation::Constant {
            table: constants::ADJUSTMENT,
        };
        input.distribution = if c.is_exact() {
            Distribution::Exact
        } else {
            Distribution::Normal
        };
        if input.unit.is_none() {
            input.unit = Some(c.unit.to_string());
        }
        Ok(())
    }

    fn fit_parameter(
        &self,
        input: &mut Input,
        path: &str,
        fits: &[NamedFit],
        fname: &str,
        pname: &str,
    ) -> Result<()> {
        let Some(f) = fits.iter().find(|f| f.name == fname) else {
            let mut msg = format!("no fit named `{fname}` in [fits]");
            if let Some(c) = closest(fname, fits.iter().map(|f| f.name.as_str())) {
                msg.push_str(&format!("; did you mean `{c}`?"));
            }
            return Err(self
                .err(&join(path, "fit"), msg)
                .with_kind(ModelErrorKind::Name));
        };
        let Some(k) = f.result.parameter(pname) else {
            let names: Vec<&str> = f
                .result
                .parameters
                .iter()
                .map(|p| p.name.as_str())
                .collect();
            return Err(self
                .err(
                    &join(path, "parameter"),
                    format!(
                        "fit `{fname}` has no parameter `{pname}`; its parameters are {}",
                        names.join(", ")
                    ),
                )
                .with_kind(ModelErrorKind::Name));
        };
        let res = &f.result;
        let known_u = res.chi_squared.is_some() && !res.scaled_by_chi_squared;
        input.estimate = res.parameters[k].value;
        input.standard_uncertainty = res.parameters[k].standard_uncertainty;
        input.dof = if known_u { None } else { Some(res.dof as f64) };
        input.distribution = if known_u {
            Distribution::Normal
        } else {
            Distribution::StudentT
        };
        // The parameter's unit: y / x^k for c_k (intercept c0, slope c1).
        if let (Some(yu), Some(xu)) = (&f.y_unit, &f.x_unit) {
            let u = incertus_units::quotient(yu, &incertus_units::power(xu, k as i32));
            input.unit = Some(if u.is_empty() { "1".to_string() } else { u });
        }
        input.evaluation = Evaluation::Fit {
            fit: fname.to_string(),
            parameter: pname.to_string(),
        };
        Ok(())
    }

    /// Parse a unit; an error points at the unit, with a caret under it.
    pub(super) fn unit(&self, path: &str, shown: &str, text: &str) -> Result<incertus_units::Unit> {
        incertus_units::parse(text).map_err(|e| {
            let mut err = self
                .origin
                .error_shown(path, shown, e.message.clone())
                .with_kind(ModelErrorKind::Unit);
            err.detail = Some(incertus_expr::caret(
                text,
                incertus_expr::Span::new(e.start, e.end),
            ));
            err
        })
    }

    /// Convert an input given in its unit to coherent SI: values with the
    /// offset (°C to K), uncertainties and half-widths with the factor only.
    pub(crate) fn to_si(&self, mut input: Input, path: &str) -> Result<Input> {
        let Some(text) = input.unit.clone() else {
            return Ok(input);
        };
        // A unit derived for a fit parameter or from the constants table
        // has no text in the file; the error names the input.
        let u = self.unit(&join(path, "unit"), path, &text)?;
        if matches!(input.evaluation, Evaluation::Constant { .. }) {
            input.unit_si = Some(u);
            return Ok(input); // the table is in SI already
        }
        input.estimate = u.value_to_si(input.estimate);
        input.standard_uncertainty = u.difference_to_si(input.standard_uncertainty);
        if let Some(obs) = &mut input.observations {
            for v in obs.iter_mut() {
                *v = u.value_to_si(*v);
            }
        }
        let f = u.factor;
        input.distribution = match input.distribution {
            Distribution::Rectangular { half_width } => Distribution::Rectangular {
                half_width: half_width * f,
            },
            Distribution::Triangular { half_width } => Distribution::Triangular {
                half_width: half_width * f,
            },
            Distribution::Arcsine { half_width } => Distribution::Arcsine {
                half_width: half_width * f,
            },
            Distribution::Trapezoidal { half_width, beta } => Distribution::Trapezoidal {
                half_width: half_width * f,
                beta,
            },
            Distribution::CurvilinearTrapezoidal {
                half_width,
                limit_half_width,
            } => Distribution::CurvilinearTrapezoidal {
                half_width: half_width * f,
                limit_half_width: limit_half_width * f,
            },
            Distribution::Gamma { shape, scale } => Distribution::Gamma {
                shape,
                scale: scale * f,
            },
            other => other,
        };
        input.unit_si = Some(u);
        Ok(input)
    }
}
