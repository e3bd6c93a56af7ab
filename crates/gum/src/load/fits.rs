//! `[fits.NAME]`: least-squares fits whose parameters become inputs.

use super::*;

impl Loader<'_> {
    pub(super) fn fits(&self, top: &mut Reader) -> Result<Vec<NamedFit>> {
        let doc = self.doc;
        let mut out = Vec::new();
        let Some(v) = top.get("fits") else {
            return Ok(out);
        };
        let DeValue::Table(t) = v.get_ref() else {
            return Err(top.err(
                v.span(),
                "fits",
                format!("expected a table of fits, found {}", type_name(v.get_ref())),
            ));
        };
        for (k, val) in t.iter() {
            let name = k.get_ref().to_string();
            let path = format!("fits.{name}");
            let DeValue::Table(ft) = val.get_ref() else {
                return Err(doc.error(val.span(), &path, "expected a table describing the fit"));
            };
            let mut r = Reader::new(doc, &path, ft, val.span());
            let data = r.string("data")?;
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
            let reason = r.string("exclude_reason")?;
            if let Some((text, span)) = &reason {
                if text.trim().is_empty() {
                    return Err(r.err(
                        span.clone(),
                        "exclude_reason",
                        "the reason is blank: write why the points are excluded (the audit trail records it)",
                    ));
                }
            }
            let exclude_reason = reason.map(|x| x.0);
            if !exclude.is_empty() && exclude_reason.is_none() {
                return Err(r.err(
                    r.span_of("exclude"),
                    "exclude_reason",
                    "give exclude_reason: every exclusion is recorded with its reason",
                ));
            }
            let scale = r.boolean("scale_by_chi_squared")?.unwrap_or(false);
            let _ = r.string("description")?;
            let fit_unit = |key: &str, r: &mut Reader| -> Result<Option<String>> {
                match r.string(key)? {
                    None => Ok(None),
                    Some((t, span)) => {
                        let u = parse_unit(r, &t, span.clone())?;
                        if u.offset != 0.0 {
                            return Err(r.err(
                                span,
                                key,
                                "a fit's unit cannot have an offset; give temperatures in K",
                            ));
                        }
                        Ok(Some(t))
                    }
                }
            };
            let x_unit = fit_unit("x_unit", &mut r)?;
            let y_unit = fit_unit("y_unit", &mut r)?;
            if x_unit.is_some() != y_unit.is_some() {
                return Err(r.err(
                    r.span.clone(),
                    "x_unit",
                    "give both x_unit and y_unit, or neither",
                ));
            }
            let (x, y, uy, ux, rows, source, xname, yname) = match data {
                Some((file, fspan)) => {
                    let mut names = Vec::new();
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
                    let xc = col("x", true, &mut r)?.expect("required");
                    let yc = col("y", true, &mut r)?.expect("required");
                    let uyc = col("y_uncertainty", false, &mut r)?;
                    let uxc = col("x_uncertainty", false, &mut r)?;
                    names.push(xc.clone());
                    names.push(yc.clone());
                    names.extend(uyc.iter().cloned());
                    names.extend(uxc.iter().cloned());
                    let refs: Vec<&str> = names.iter().map(String::as_str).collect();
                    let p = doc.dir().join(&file);
                    let cols =
                        incertus_fit::read_columns_limited(&p, &refs, self.limits.max_data_rows)
                            .map_err(|e| r.err(fspan.clone(), "data", e.0))?;
                    let mut it = cols.columns.into_iter();
                    let x = it.next().expect("x column");
                    let y = it.next().expect("y column");
                    let uy = uyc.as_ref().map(|_| it.next().expect("u(y) column"));
                    let ux = uxc.as_ref().map(|_| it.next().expect("u(x) column"));
                    (x, y, uy, ux, cols.rows, p.display().to_string(), xc, yc)
                }
                None => {
                    let need = |r: &mut Reader, key: &str| -> Result<Vec<f64>> {
                        r.numbers(key)?.map(|x| x.0).ok_or_else(|| {
                            r.err(r.span.clone(), key, format!("give data = \"FILE.csv\" with column names, or {key} = [numbers]"))
                        })
                    };
                    let x = need(&mut r, "x")?;
                    let y = need(&mut r, "y")?;
                    let uy = r.numbers("y_uncertainty")?.map(|x| x.0);
                    let ux = r.numbers("x_uncertainty")?.map(|x| x.0);
                    let n = x.len();
                    for (key, len) in [
                        ("y", y.len()),
                        ("y_uncertainty", uy.as_ref().map_or(n, Vec::len)),
                        ("x_uncertainty", ux.as_ref().map_or(n, Vec::len)),
                    ] {
                        if len != n {
                            return Err(r.err(
                                r.span_of(key),
                                key,
                                format!("{key} has {len} values but x has {n}"),
                            ));
                        }
                    }
                    (
                        x,
                        y,
                        uy,
                        ux,
                        (1..=n).collect(),
                        "inline".to_string(),
                        "x".to_string(),
                        "y".to_string(),
                    )
                }
            };
            r.finish(FIT_KEYS)?;
            let result = incertus_fit::fit(&incertus_fit::FitRequest {
                x: &x,
                y: &y,
                u_y: uy.as_deref(),
                u_x: ux.as_deref(),
                rows,
                degree,
                exclude,
                exclude_reason,
                scale_by_chi_squared: scale,
                diagnostics: true,
            })
            .map_err(|e| doc.error(k.span(), &path, e.0))?;
            out.push(NamedFit {
                name,
                data: source,
                x: xname,
                y: yname,
                x_unit,
                y_unit,
                result,
            });
        }
        Ok(out)
    }
}
