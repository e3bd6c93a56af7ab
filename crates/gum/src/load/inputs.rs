//! `[inputs.NAME]`: every way of stating what is known about an input
//! quantity, and its conversion to coherent SI.

use super::*;

impl Loader<'_> {
    pub(super) fn input(
        &self,
        name: &str,
        r: &mut Reader,
        line: usize,
        fits: &[NamedFit],
    ) -> Result<Input> {
        let value = r.number("value")?;
        let su = r.number("standard_uncertainty")?;
        let eu = r.number("expanded_uncertainty")?;
        let k = r.number("coverage_factor")?;
        let dof = r.number("dof")?;
        let rr = r.number("relative_reliability")?;
        let dist = r.string("distribution")?;
        let hw = r.number("half_width")?;
        let lower = r.number("lower")?;
        let upper = r.number("upper")?;
        let beta = r.number("beta")?;
        let limit_hw = r.number("limit_half_width")?;
        let shape = r.number("shape")?;
        let scale = r.number("scale")?;
        let obs = r.numbers("observations")?;
        let pooled = r.number("pooled_standard_deviation")?;
        let pooled_dof = r.number("pooled_dof")?;
        let constant = r.string("constant")?;
        let fit_ref = r.string("fit")?;
        let parameter = r.string("parameter")?;
        let description = r.string("description")?.map(|x| x.0);
        let unit = r.string("unit")?.map(|x| x.0);

        // Exactly one description of the uncertainty.
        let mut ways: Vec<(&str, Range<usize>)> = Vec::new();
        if let Some(n) = &su {
            ways.push(("standard_uncertainty", n.span.clone()));
        }
        if let Some(n) = &eu {
            ways.push(("expanded_uncertainty", n.span.clone()));
        }
        if let Some(n) = &hw {
            ways.push(("half_width", n.span.clone()));
        }
        if lower.is_some() || upper.is_some() {
            let s = lower
                .as_ref()
                .or(upper.as_ref())
                .expect("one is given")
                .span
                .clone();
            ways.push(("lower/upper", s));
        }
        if let Some((_, s)) = &obs {
            ways.push(("observations", s.clone()));
        }
        if let Some((_, s)) = &constant {
            ways.push(("constant", s.clone()));
        }
        if let Some((_, s)) = &fit_ref {
            ways.push(("fit", s.clone()));
        }
        if ways.len() > 1 {
            let (line2, _) = self.doc.line_col(ways[1].1.start);
            let (line1, _) = self.doc.line_col(ways[0].1.start);
            return Err(r.err(
                ways[1].1.clone(),
                ways[1].0,
                format!(
                    "two descriptions of the uncertainty of `{name}`: {} (line {line1}) and {} \
                     (line {line2}); give one",
                    ways[0].0, ways[1].0
                ),
            ));
        }
        let positive = |n: &Option<Num>, key: &str, allow_zero: bool| -> Result<()> {
            if let Some(n) = n {
                if n.value < 0.0 || (!allow_zero && n.value == 0.0) {
                    return Err(r.err(
                        n.span.clone(),
                        key,
                        format!(
                            "must be {}, found {}",
                            if allow_zero {
                                "zero or positive"
                            } else {
                                "positive"
                            },
                            n.text
                        ),
                    ));
                }
            }
            Ok(())
        };
        positive(&su, "standard_uncertainty", true)?;
        positive(&eu, "expanded_uncertainty", true)?;
        positive(&k, "coverage_factor", false)?;
        positive(&dof, "dof", false)?;
        positive(&rr, "relative_reliability", false)?;
        positive(&hw, "half_width", true)?;
        positive(&pooled, "pooled_standard_deviation", true)?;
        positive(&pooled_dof, "pooled_dof", false)?;
        if let (Some(d), Some(_)) = (&dof, &rr) {
            return Err(r.err(
                d.span.clone(),
                "dof",
                "give dof or relative_reliability, not both (relative_reliability sets dof = 1/(2 r²))",
            ));
        }
        // dof from a stated dof or relative reliability (JCGM 100:2008, G.4.2).
        let stated_dof: Dof = dof
            .as_ref()
            .map(|d| d.value)
            .or_else(|| rr.as_ref().map(|r| 0.5 / (r.value * r.value)));
        let forbid = |n: &Option<Num>, key: &str, why: &str| -> Result<()> {
            match n {
                Some(n) => Err(r.err(n.span.clone(), key, why.to_string())),
                None => Ok(()),
            }
        };
        let dist_name = dist.as_ref().map(|(s, _)| s.as_str());
        let dist_span = dist.as_ref().map(|(_, s)| s.clone());
        let bad_dist = |allowed: &str| -> ModelError {
            r.err(
                dist_span.clone().unwrap_or(r.span.clone()),
                "distribution",
                format!(
                    "`{}` does not fit this description of the input; {allowed}",
                    dist_name.unwrap_or("")
                ),
            )
        };
        let needs_value = || {
            r.err(
                r.span.clone(),
                "value",
                format!("`{name}` needs a value (its estimate)"),
            )
        };
        let mut input = Input {
            name: name.to_string(),
            estimate: 0.0,
            standard_uncertainty: 0.0,
            dof: None,
            evaluation: Evaluation::TypeB,
            distribution: Distribution::Normal,
            observations: None,
            description,
            unit,
            unit_si: None,
            stated_sensitivities: Vec::new(),
            line,
        };
        if let (Some(k), None) = (&k, &eu) {
            return Err(r.err(
                k.span.clone(),
                "coverage_factor",
                "coverage_factor goes with expanded_uncertainty",
            ));
        }
        if let (Some(pd), None) = (&pooled_dof, &pooled) {
            return Err(r.err(
                pd.span.clone(),
                "pooled_dof",
                "pooled_dof goes with pooled_standard_deviation",
            ));
        }
        if obs.is_none() {
            forbid(
                &pooled,
                "pooled_standard_deviation",
                "a pooled standard deviation goes with observations",
            )?;
        }
        if beta.is_some() && dist_name != Some("trapezoidal") {
            forbid(
                &beta,
                "beta",
                "beta goes with distribution = \"trapezoidal\"",
            )?;
        }
        if dist_name != Some("curvilinear_trapezoidal") {
            forbid(
                &limit_hw,
                "limit_half_width",
                "limit_half_width goes with distribution = \"curvilinear_trapezoidal\"",
            )?;
        }
        if dist_name != Some("gamma") {
            forbid(&shape, "shape", "shape goes with distribution = \"gamma\"")?;
            forbid(&scale, "scale", "scale goes with distribution = \"gamma\"")?;
        }
        positive(&limit_hw, "limit_half_width", true)?;
        positive(&shape, "shape", false)?;
        positive(&scale, "scale", false)?;

        if let (None, Some((_, ps))) = (&fit_ref, &parameter) {
            return Err(r.err(
                ps.clone(),
                "parameter",
                "parameter goes with fit = \"NAME\"",
            ));
        }
        if let Some((fname, fspan)) = fit_ref {
            let Some(f) = fits.iter().find(|f| f.name == fname) else {
                let mut msg = format!("no fit named `{fname}` in [fits]");
                if let Some(c) = closest(&fname, fits.iter().map(|f| f.name.as_str())) {
                    msg.push_str(&format!("; did you mean `{c}`?"));
                }
                return Err(r.err(fspan, "fit", msg));
            };
            let names: Vec<&str> = f
                .result
                .parameters
                .iter()
                .map(|p| p.name.as_str())
                .collect();
            let Some((pname, pspan)) = parameter else {
                return Err(r.err(
                    fspan,
                    "parameter",
                    format!(
                        "give parameter = one of {} (the parameters of fit `{fname}`)",
                        names.join(", ")
                    ),
                ));
            };
            let Some(k) = f.result.parameter(&pname) else {
                return Err(r.err(
                    pspan,
                    "parameter",
                    format!(
                        "fit `{fname}` has no parameter `{pname}`; its parameters are {}",
                        names.join(", ")
                    ),
                ));
            };
            for (key, n) in [
                ("value", &value),
                ("dof", &dof),
                ("relative_reliability", &rr),
            ] {
                forbid(
                    n,
                    key,
                    "a fitted parameter takes its value, uncertainty and dof from the fit",
                )?;
            }
            if dist.is_some() {
                return Err(bad_dist(
                    "a fitted parameter takes its distribution from the fit",
                ));
            }
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
                let group = |u: &str| {
                    if u.contains(['/', ' ', '*', '^']) {
                        format!("({u})")
                    } else {
                        u.to_string()
                    }
                };
                input.unit = Some(match k {
                    0 => yu.clone(),
                    1 => format!("{}/{}", group(yu), group(xu)),
                    _ => format!("{}/{}^{k}", group(yu), group(xu)),
                });
            }
            input.evaluation = Evaluation::Fit {
                fit: fname,
                parameter: pname,
            };
            return Ok(input);
        }
        if let Some((cname, cspan)) = constant {
            let Some(c) = constants::find(&cname) else {
                let names: Vec<&str> = constants::TABLE.iter().map(|c| c.name).collect();
                let mut msg = format!(
                    "no constant named `{cname}` in the {} table",
                    constants::ADJUSTMENT
                );
                if let Some(close) = closest(&cname, names.iter().copied()) {
                    msg.push_str(&format!("; did you mean `{close}`?"));
                }
                let mut e = r.err(cspan, "constant", msg);
                e.detail = Some(format!("constants: {}", names.join(", ")));
                return Err(e);
            };
            for (key, n) in [
                ("value", &value),
                ("dof", &dof),
                ("relative_reliability", &rr),
            ] {
                forbid(
                    n,
                    key,
                    "a tabulated constant takes its value and uncertainty from the table",
                )?;
            }
            if dist.is_some() {
                return Err(bad_dist(
                    "a constant takes its distribution from the table (normal, or exact)",
                ));
            }
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
            return Ok(input);
        }

        if let Some((values, ospan)) = obs {
            forbid(
                &value,
                "value",
                "the estimate of a Type A input is the mean of its observations",
            )?;
            forbid(&dof, "dof", "the dof of a Type A input is n - 1, or pooled_dof with a pooled standard deviation")?;
            forbid(
                &rr,
                "relative_reliability",
                "relative_reliability goes with a Type B evaluation",
            )?;
            if dist_name.is_some_and(|d| d != "t") {
                return Err(bad_dist(
                    "observations give a t distribution (JCGM 101:2008, 6.4.9)",
                ));
            }
            let n = values.len();
            if n < 2 {
                return Err(r.err(
                    ospan,
                    "observations",
                    format!("a Type A evaluation needs at least two observations, found {n}"),
                ));
            }
            let mean = typea::mean(&values);
            let (s, nu) = match &pooled {
                Some(p) => {
                    let Some(pd) = &pooled_dof else {
                        return Err(r.err(
                            p.span.clone(),
                            "pooled_standard_deviation",
                            "give pooled_dof, the degrees of freedom of the pooled standard \
                             deviation (JCGM 100:2008, 4.2.4)",
                        ));
                    };
                    (p.value, pd.value)
                }
                None => {
                    let s = typea::std_dev(&values);
                    (s, (n - 1) as f64)
                }
            };
            input.estimate = mean;
            input.standard_uncertainty = s / (n as f64).sqrt();
            input.dof = Some(nu);
            input.evaluation = Evaluation::TypeA {
                n,
                pooled: pooled.is_some(),
            };
            input.distribution = Distribution::StudentT;
            input.observations = Some(values);
            return Ok(input);
        }

        if let Some(eu) = eu {
            let Some(k) = k else {
                return Err(r.err(
                    eu.span,
                    "expanded_uncertainty",
                    "give coverage_factor with expanded_uncertainty (u = U/k, JCGM 100:2008, 4.3.3)",
                ));
            };
            let Some(v) = value else {
                return Err(needs_value());
            };
            let dist = match dist_name {
                None | Some("normal") => Distribution::Normal,
                Some("t") if stated_dof.is_some() => Distribution::StudentT,
                _ => {
                    return Err(bad_dist(
                        "an expanded uncertainty goes with \"normal\" or, with dof, \"t\"",
                    ))
                }
            };
            input.estimate = v.value;
            input.standard_uncertainty = eu.value / k.value;
            input.dof = stated_dof;
            input.distribution = dist;
            return Ok(input);
        }

        if let Some(su) = su {
            let Some(v) = value else {
                return Err(needs_value());
            };
            let dist = match dist_name {
                None | Some("normal") => Distribution::Normal,
                Some("t") => {
                    if stated_dof.is_none() {
                        return Err(bad_dist("a t distribution needs dof"));
                    }
                    Distribution::StudentT
                }
                Some(other) => {
                    return Err(bad_dist(&format!(
                        "for a {other} distribution give half_width or lower and upper instead of \
                         standard_uncertainty"
                    )))
                }
            };
            input.estimate = v.value;
            input.standard_uncertainty = su.value;
            input.dof = stated_dof;
            input.distribution = dist;
            return Ok(input);
        }

        if hw.is_some() || lower.is_some() || upper.is_some() {
            let (estimate, half_width) = match (&hw, &lower, &upper) {
                (Some(h), None, None) => {
                    let Some(v) = &value else {
                        return Err(r.err(
                            h.span.clone(),
                            "half_width",
                            format!("`{name}` needs a value to put the half_width around"),
                        ));
                    };
                    (v.value, h.value)
                }
                (None, Some(lo), Some(up)) => {
                    if up.value < lo.value {
                        return Err(r.err(
                            up.span.clone(),
                            "upper",
                            format!("upper ({}) is below lower ({})", up.text, lo.text),
                        ));
                    }
                    let mid = 0.5 * (lo.value + up.value);
                    if let Some(v) = &value {
                        if (v.value - mid).abs() > 1e-12 * mid.abs().max(up.value - lo.value) {
                            return Err(r.err(
                                v.span.clone(),
                                "value",
                                format!(
                                    "the estimate of a symmetric distribution is the midpoint of its \
                                     limits ({mid}); omit value, or give value with half_width \
                                     (JCGM 100:2008, 4.3.7)"
                                ),
                            ));
                        }
                    }
                    (mid, 0.5 * (up.value - lo.value))
                }
                (None, Some(x), None) | (None, None, Some(x)) => {
                    return Err(r.err(x.span.clone(), "lower", "give both lower and upper"));
                }
                _ => unreachable!("two descriptions were refused above"),
            };
            let dist = match dist_name {
                Some("rectangular") => Distribution::Rectangular { half_width },
                Some("triangular") => Distribution::Triangular { half_width },
                Some("arcsine") => Distribution::Arcsine { half_width },
                Some("trapezoidal") => {
                    let Some(b) = &beta else {
                        return Err(bad_dist(
                            "a trapezoidal distribution needs beta, the ratio of the half-widths \
                             of its top and its base (0 to 1)",
                        ));
                    };
                    if !(0.0..=1.0).contains(&b.value) {
                        return Err(r.err(
                            b.span.clone(),
                            "beta",
                            format!("beta lies in [0, 1], found {}", b.text),
                        ));
                    }
                    Distribution::Trapezoidal {
                        half_width,
                        beta: b.value,
                    }
                }
                Some("curvilinear_trapezoidal") => {
                    let Some(d) = &limit_hw else {
                        return Err(bad_dist(
                            "a curvilinear trapezoid needs limit_half_width, the half-width of the \
                             interval in which each limit lies (JCGM 101:2008, 6.4.3)",
                        ));
                    };
                    if d.value > half_width {
                        return Err(r.err(
                            d.span.clone(),
                            "limit_half_width",
                            "limit_half_width cannot exceed the half-width of the distribution",
                        ));
                    }
                    Distribution::CurvilinearTrapezoidal {
                        half_width,
                        limit_half_width: d.value,
                    }
                }
                None => return Err(r.err(
                    r.span.clone(),
                    "distribution",
                    "limits need a distribution: \"rectangular\", \"triangular\", \"arcsine\" or \
                         \"trapezoidal\"",
                )),
                Some(_) => {
                    return Err(bad_dist(
                        "limits go with rectangular, triangular, arcsine or trapezoidal",
                    ))
                }
            };
            input.estimate = estimate;
            input.standard_uncertainty = dist
                .standard_uncertainty_from_limits()
                .expect("a distribution with limits");
            input.dof = stated_dof;
            input.distribution = dist;
            return Ok(input);
        }

        if dist_name == Some("gamma") {
            let (Some(k), Some(th)) = (&shape, &scale) else {
                return Err(bad_dist("a gamma distribution needs shape and scale"));
            };
            forbid(
                &value,
                "value",
                "the estimate of a gamma distribution is shape × scale",
            )?;
            input.estimate = k.value * th.value;
            input.standard_uncertainty = k.value.sqrt() * th.value;
            input.dof = stated_dof;
            input.distribution = Distribution::Gamma {
                shape: k.value,
                scale: th.value,
            };
            return Ok(input);
        }
        if dist_name == Some("exponential") {
            let Some(v) = &value else {
                return Err(bad_dist(
                    "an exponential distribution needs value, its mean",
                ));
            };
            if v.value <= 0.0 {
                return Err(r.err(
                    v.span.clone(),
                    "value",
                    "the estimate of an exponential distribution (its mean) must be positive",
                ));
            }
            input.estimate = v.value;
            input.standard_uncertainty = v.value;
            input.dof = stated_dof;
            input.distribution = Distribution::Exponential;
            return Ok(input);
        }

        // Only a value: exact.
        let Some(v) = value else {
            return Err(r.err(
                r.span.clone(),
                "",
                format!(
                    "`{name}` has no value: give value (and an uncertainty), observations, limits \
                     or constant"
                ),
            ));
        };
        forbid(&dof, "dof", "an exact value has no degrees of freedom")?;
        forbid(
            &rr,
            "relative_reliability",
            "an exact value has no uncertainty to be reliable",
        )?;
        if dist_name.is_some_and(|d| d != "exact") {
            return Err(bad_dist("a value without an uncertainty is exact"));
        }
        input.estimate = v.value;
        input.evaluation = Evaluation::Exact;
        input.distribution = Distribution::Exact;
        Ok(input)
    }
}
/// Parse a unit; an error points at the key, with a caret under the unit text.
pub(super) fn parse_unit(
    r: &Reader,
    text: &str,
    span: Range<usize>,
) -> Result<incertus_units::Unit> {
    incertus_units::parse(text).map_err(|e| {
        let mut err = r.err(span, "unit", e.message.clone());
        err.detail = Some(incertus_expr::caret(
            text,
            incertus_expr::Span::new(e.start, e.end),
        ));
        err
    })
}

/// Convert an input given in its unit to coherent SI: values with the
/// offset (°C to K), uncertainties and half-widths with the factor only.
pub(super) fn to_si(mut input: Input, r: &Reader) -> Result<Input> {
    let Some(text) = input.unit.clone() else {
        return Ok(input);
    };
    let span = r.value_span_of("unit");
    let u = match parse_unit(r, &text, span.clone()) {
        Ok(u) => u,
        // A unit derived for a fit parameter or from the constants table
        // has no text in the file; name the input instead.
        Err(mut e) => {
            e.path = r.path.clone();
            return Err(e);
        }
    };
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
