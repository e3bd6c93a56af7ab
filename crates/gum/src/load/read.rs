//! Model-file text to a [`ModelDescription`]: each table read with its
//! keys typed, unknown keys refused, and the rules of which keys go
//! together applied (`crate::description`); the places of the keys are
//! recorded in the document for the errors of validation.

use super::*;
use crate::description::{KeyContext, KeyProblem};

pub(super) fn model(doc: &Doc, top: &mut Reader) -> Result<ModelDescription> {
    let mut d = ModelDescription {
        title: top.string("title")?.map(|x| x.0),
        description: top.string("description")?.map(|x| x.0),
        ..ModelDescription::default()
    };
    d.settings.coverage_probability = top.number("coverage_probability")?.map(|n| n.value);
    d.settings.effective_dof_rounding = match top.string("effective_dof_rounding")? {
        None => None,
        Some((s, span)) => Some(match s.as_str() {
            "truncate" => DofRounding::Truncate,
            "exact" => DofRounding::Exact,
            _ => {
                return Err(top.err(
                    span,
                    "effective_dof_rounding",
                    format!("expected \"truncate\" or \"exact\", found \"{s}\""),
                ))
            }
        }),
    };
    d.fits = fits(doc, top)?;
    d.inputs = inputs(doc, top, &d.fits)?;
    d.observed_together = groups(doc, top)?;
    d.correlations = correlations(doc, top)?;
    d.measurands = measurands(doc, top)?;
    top.finish(TOP_KEYS)?;
    Ok(d)
}

/// The error for a problem with the keys of the table `r` reads.
fn key_problem(r: &Reader, p: KeyProblem) -> ModelError {
    let at = p.place.unwrap_or(p.key);
    let span = if at.is_empty() {
        r.span.clone()
    } else {
        r.value_span_of(at)
    };
    let mut e = r.doc.error(span, &join(&r.path, p.key), p.message);
    e.detail = p.detail;
    e
}

/// A named table (`[inputs.NAME]`, `[fits.NAME]`) of the table at `key`.
fn named_tables<'t, 'i>(
    top: &mut Reader<'_, 't, 'i>,
    key: &str,
    what: &str,
) -> Result<Option<&'t DeTable<'i>>> {
    let Some(v) = top.get(key) else {
        return Ok(None);
    };
    match v.get_ref() {
        DeValue::Table(t) => Ok(Some(t)),
        other => Err(top.err(
            v.span(),
            key,
            format!("expected a table of {what}, found {}", type_name(other)),
        )),
    }
}

fn inputs(doc: &Doc, top: &mut Reader, fits: &[FitDescription]) -> Result<Vec<InputDescription>> {
    let Some(t) = named_tables(top, "inputs", "inputs")? else {
        return Ok(Vec::new());
    };
    let fit_parameters = |f: &str| {
        fits.iter()
            .find(|x| x.name == f)
            .map(|x| incertus_fit::coefficient_names(x.degree))
    };
    let mut out = Vec::with_capacity(t.len());
    for (k, val) in t.iter() {
        let name = k.get_ref().to_string();
        let path = format!("inputs.{name}");
        doc.record(path.clone(), k.span(), val.span());
        let DeValue::Table(it) = val.get_ref() else {
            return Err(doc.error(
                val.span(),
                &path,
                format!(
                    "expected a table describing the input, found {}",
                    type_name(val.get_ref())
                ),
            ));
        };
        let mut r = Reader::new(doc, &path, it, val.span());
        let keys = input_keys(&mut r)?;
        let sensitivity = sensitivity(&mut r)?;
        r.finish(INPUT_KEYS)?;
        let line_of = |key: &str| {
            it.iter()
                .find(|(k, _)| k.get_ref().as_ref() == key)
                .map(|(_, v)| doc.line(&v.span()))
        };
        let cx = KeyContext {
            line_of: &line_of,
            fit_parameters: &fit_parameters,
        };
        let evaluation = keys
            .evaluation(&name, &cx)
            .map_err(|p| key_problem(&r, p))?;
        out.push(InputDescription {
            name,
            description: keys.description,
            source: keys.source,
            unit: keys.unit,
            evaluation,
            sensitivity,
        });
    }
    Ok(out)
}

fn input_keys(r: &mut Reader) -> Result<InputKeys> {
    let n =
        |r: &mut Reader, key: &str| -> Result<Option<f64>> { Ok(r.number(key)?.map(|n| n.value)) };
    let s =
        |r: &mut Reader, key: &str| -> Result<Option<String>> { Ok(r.string(key)?.map(|x| x.0)) };
    Ok(InputKeys {
        value: n(r, "value")?,
        standard_uncertainty: n(r, "standard_uncertainty")?,
        expanded_uncertainty: n(r, "expanded_uncertainty")?,
        coverage_factor: n(r, "coverage_factor")?,
        dof: n(r, "dof")?,
        relative_reliability: n(r, "relative_reliability")?,
        distribution: s(r, "distribution")?,
        half_width: n(r, "half_width")?,
        lower: n(r, "lower")?,
        upper: n(r, "upper")?,
        beta: n(r, "beta")?,
        limit_half_width: n(r, "limit_half_width")?,
        shape: n(r, "shape")?,
        scale: n(r, "scale")?,
        observations: r.numbers("observations")?.map(|x| x.0),
        pooled_standard_deviation: n(r, "pooled_standard_deviation")?,
        pooled_dof: n(r, "pooled_dof")?,
        constant: s(r, "constant")?,
        fit: s(r, "fit")?,
        parameter: s(r, "parameter")?,
        description: s(r, "description")?,
        source: s(r, "source")?,
        unit: s(r, "unit")?,
        sensitivity: None,
    })
}

/// `sensitivity`: a number, a formula, or a table of them per measurand.
fn sensitivity(r: &mut Reader) -> Result<Vec<StatedCoefficient>> {
    let Some(v) = r.get("sensitivity") else {
        return Ok(Vec::new());
    };
    let path = r.key_path("sensitivity");
    let doc = r.doc;
    let one = |v: &Spanned<DeValue>, path: &str| -> Result<Coefficient> {
        if let Some(n) = number_value(v) {
            if !n.value.is_finite() {
                return Err(doc.error(
                    v.span(),
                    path,
                    format!(
                        "`{}` is not a finite number; a stated sensitivity coefficient must be one",
                        n.text
                    ),
                ));
            }
            doc.record_text(path, &n.text);
            return Ok(Coefficient::Number(n.value));
        }
        match v.get_ref() {
            DeValue::String(s) => Ok(Coefficient::Formula(s.to_string())),
            other => Err(doc.error(
                v.span(),
                path,
                format!(
                    "expected a number or a formula (a string), found {}",
                    type_name(other)
                ),
            )),
        }
    };
    match v.get_ref() {
        DeValue::Table(t) => {
            let mut out = Vec::new();
            for (k, val) in t.iter() {
                let p = join(&path, k.get_ref());
                doc.record(p.clone(), k.span(), val.span());
                out.push(StatedCoefficient {
                    measurand: Some(k.get_ref().to_string()),
                    value: one(val, &p)?,
                });
            }
            Ok(out)
        }
        _ => Ok(vec![StatedCoefficient {
            measurand: None,
            value: one(v, &path)?,
        }]),
    }
}

fn fits(doc: &Doc, top: &mut Reader) -> Result<Vec<FitDescription>> {
    let Some(t) = named_tables(top, "fits", "fits")? else {
        return Ok(Vec::new());
    };
    let mut out = Vec::new();
    for (k, val) in t.iter() {
        let name = k.get_ref().to_string();
        let path = format!("fits.{name}");
        doc.record(path.clone(), k.span(), val.span());
        let DeValue::Table(ft) = val.get_ref() else {
            return Err(doc.error(val.span(), &path, "expected a table describing the fit"));
        };
        let mut r = Reader::new(doc, &path, ft, val.span());
        out.push(fit(&name, &mut r)?);
        r.finish(FIT_KEYS)?;
    }
    Ok(out)
}

fn fit(name: &str, r: &mut Reader) -> Result<FitDescription> {
    let degree = match r.number("degree")? {
        None => 1,
        Some(n) => {
            if n.value.fract() != 0.0 || !(0.0..=20.0).contains(&n.value) {
                return Err(r.err(
                    n.span,
                    "degree",
                    format!("degree is a whole number from 0 to 20, found {}", n.text),
                ));
            }
            n.value as usize
        }
    };
    let exclude: Vec<usize> = match r.numbers("exclude")? {
        None => Vec::new(),
        Some((v, span)) => {
            if let Some(bad) = v.iter().find(|x| x.fract() != 0.0 || **x < 1.0) {
                return Err(r.err(
                    span,
                    "exclude",
                    format!("exclude lists 1-based data rows, found {bad}"),
                ));
            }
            v.iter().map(|x| *x as usize).collect()
        }
    };
    let data = match r.string("data")? {
        Some((file, _)) => {
            let col = |key: &str, req: bool, r: &mut Reader| -> Result<Option<String>> {
                match r.string(key)? {
                    Some((c, _)) => Ok(Some(c)),
                    None if req => Err(r.err(
                        r.span.clone(),
                        key,
                        format!("give {key} = \"COLUMN\", a column of {file}"),
                    )),
                    None => Ok(None),
                }
            };
            FitData::File {
                x: col("x", true, r)?.expect("required"),
                y: col("y", true, r)?.expect("required"),
                y_uncertainty: col("y_uncertainty", false, r)?,
                x_uncertainty: col("x_uncertainty", false, r)?,
                path: file,
            }
        }
        None => {
            let need = |r: &mut Reader, key: &str| -> Result<Vec<f64>> {
                r.numbers(key)?.map(|x| x.0).ok_or_else(|| {
                    r.err(
                        r.span.clone(),
                        key,
                        format!("give data = \"FILE.csv\" with column names, or {key} = [numbers]"),
                    )
                })
            };
            FitData::Inline {
                x: need(r, "x")?,
                y: need(r, "y")?,
                y_uncertainty: r.numbers("y_uncertainty")?.map(|x| x.0),
                x_uncertainty: r.numbers("x_uncertainty")?.map(|x| x.0),
            }
        }
    };
    Ok(FitDescription {
        name: name.to_string(),
        description: r.string("description")?.map(|x| x.0),
        data,
        degree,
        exclude,
        exclude_reason: r.string("exclude_reason")?.map(|x| x.0),
        scale_by_chi_squared: r.boolean("scale_by_chi_squared")?.unwrap_or(false),
        x_unit: r.string("x_unit")?.map(|x| x.0),
        y_unit: r.string("y_unit")?.map(|x| x.0),
    })
}

fn groups(doc: &Doc, top: &mut Reader) -> Result<Vec<Vec<String>>> {
    let Some((items, _)) = top.array("observed_together")? else {
        return Ok(Vec::new());
    };
    let mut out = Vec::new();
    for (g, item) in items.iter().enumerate() {
        let path = format!("observed_together[{g}]");
        doc.record(path.clone(), item.span(), item.span());
        let mut r = item_reader(doc, item, &path, "`inputs = [...]`")?;
        let Some((names, _)) = r.names("inputs")? else {
            return Err(doc.error(item.span(), &path, "missing `inputs = [\"a\", \"b\", ...]`"));
        };
        r.finish(&["inputs"])?;
        out.push(names.into_iter().map(|x| x.0).collect());
    }
    Ok(out)
}

fn correlations(doc: &Doc, top: &mut Reader) -> Result<Vec<CorrelationDescription>> {
    let Some((items, _)) = top.array("correlations")? else {
        return Ok(Vec::new());
    };
    let mut out = Vec::new();
    for (c, item) in items.iter().enumerate() {
        let path = format!("correlations[{c}]");
        doc.record(path.clone(), item.span(), item.span());
        let mut r = item_reader(
            doc,
            item,
            &path,
            "`inputs = [\"a\", \"b\"]` and `coefficient`",
        )?;
        let Some((names, span)) = r.names("inputs")? else {
            return Err(doc.error(item.span(), &path, "missing `inputs = [\"a\", \"b\"]`"));
        };
        let Some(coef) = r.number("coefficient")? else {
            return Err(doc.error(item.span(), &path, "missing `coefficient`"));
        };
        r.finish(&["inputs", "coefficient"])?;
        let [a, b] = names.as_slice() else {
            return Err(r.err(span, "inputs", "a correlation names exactly two inputs"));
        };
        out.push(CorrelationDescription {
            inputs: [a.0.clone(), b.0.clone()],
            coefficient: coef.value,
        });
    }
    Ok(out)
}

fn measurands(doc: &Doc, top: &mut Reader) -> Result<Vec<MeasurandDescription>> {
    let Some((items, _)) = top.array("measurands")? else {
        return Ok(Vec::new());
    };
    let mut out = Vec::with_capacity(items.len());
    for (m, item) in items.iter().enumerate() {
        let path = format!("measurands[{m}]");
        doc.record(path.clone(), item.span(), item.span());
        let mut r = item_reader(doc, item, &path, "name and formula")?;
        let Some((name, _)) = r.string("name")? else {
            return Err(doc.error(item.span(), &path, "missing `name`"));
        };
        let Some((formula, _)) = r.string("formula")? else {
            return Err(doc.error(item.span(), &path, "missing `formula`"));
        };
        let d = MeasurandDescription {
            name,
            formula,
            description: r.string("description")?.map(|x| x.0),
            unit: r.string("unit")?.map(|x| x.0),
            expected_value: r.number("expected_value")?.map(|n| n.value),
            expected_standard_uncertainty: r
                .number("expected_standard_uncertainty")?
                .map(|n| n.value),
            specification: specification(&mut r)?,
        };
        r.finish(MEASURAND_KEYS)?;
        out.push(d);
    }
    Ok(out)
}

/// `specification` of a measurand (JCGM 106:2012).
fn specification(r: &mut Reader) -> Result<Option<crate::conformity::Specification>> {
    let Some(v) = r.get("specification") else {
        return Ok(None);
    };
    let path = r.key_path("specification");
    let DeValue::Table(t) = v.get_ref() else {
        return Err(r.err(
            v.span(),
            "specification",
            format!(
                "expected a table with lower and/or upper (the tolerance limits) and rule, found {}",
                type_name(v.get_ref())
            ),
        ));
    };
    let mut s = Reader::new(r.doc, &path, t, v.span());
    let n =
        |s: &mut Reader, key: &str| -> Result<Option<f64>> { Ok(s.number(key)?.map(|n| n.value)) };
    let keys = SpecificationKeys {
        lower: n(&mut s, "lower")?,
        upper: n(&mut s, "upper")?,
        rule: s.string("rule")?.map(|x| x.0),
        guard_multiple: n(&mut s, "guard_multiple")?,
        max_specific_risk: n(&mut s, "max_specific_risk")?,
        process_mean: n(&mut s, "process_mean")?,
        process_standard_deviation: n(&mut s, "process_standard_deviation")?,
    };
    s.finish(SPECIFICATION_KEYS)?;
    keys.specification()
        .map(Some)
        .map_err(|p| key_problem(&s, p))
}
