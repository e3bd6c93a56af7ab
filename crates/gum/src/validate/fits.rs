//! Fits: their data read (CSV relative to the model file) or taken inline,
//! exclusions checked, the least-squares fit computed.

use super::*;

impl Validator<'_, '_> {
    pub(super) fn fits(&self, ds: &[FitDescription]) -> Result<Vec<NamedFit>> {
        let mut out: Vec<NamedFit> = Vec::with_capacity(ds.len());
        for f in ds {
            let path = format!("fits.{}", f.name);
            if out.iter().any(|o| o.name == f.name) {
                return Err(self.err(&path, format!("`{}` is defined twice", f.name)));
            }
            out.push(self.fit(f, &path)?);
        }
        Ok(out)
    }

    fn fit_unit(&self, path: &str, key: &str, unit: &Option<String>) -> Result<()> {
        if let Some(t) = unit {
            let p = join(path, key);
            let u = self.unit(&p, &p, t)?;
            if u.offset != 0.0 {
                return Err(self.err(
                    &p,
                    "a fit's unit cannot have an offset; give temperatures in K",
                ));
            }
        }
        Ok(())
    }

    fn fit(&self, f: &FitDescription, path: &str) -> Result<NamedFit> {
        if f.degree > 20 {
            return Err(self.err(
                &join(path, "degree"),
                format!("degree is a whole number from 0 to 20, found {}", f.degree),
            ));
        }
        if let Some(bad) = f.exclude.iter().find(|&&r| r == 0) {
            return Err(self.err(
                &join(path, "exclude"),
                format!("exclude lists 1-based data rows, found {bad}"),
            ));
        }
        if let Some(r) = &f.exclude_reason {
            if r.trim().is_empty() {
                return Err(self.err(
                    &join(path, "exclude_reason"),
                    "the reason is blank: write why the points are excluded (the audit trail records it)",
                ));
            }
        }
        if !f.exclude.is_empty() && f.exclude_reason.is_none() {
            return Err(self.origin.error_shown(
                &join(path, "exclude"),
                &join(path, "exclude_reason"),
                "give exclude_reason: every exclusion is recorded with its reason",
            ));
        }
        self.fit_unit(path, "x_unit", &f.x_unit)?;
        self.fit_unit(path, "y_unit", &f.y_unit)?;
        if f.x_unit.is_some() != f.y_unit.is_some() {
            return Err(self.origin.error_shown(
                path,
                &join(path, "x_unit"),
                "give both x_unit and y_unit, or neither",
            ));
        }
        let columns = self.fit_data(f, path)?;
        let result = incertus_fit::fit(&incertus_fit::FitRequest {
            x: &columns.x,
            y: &columns.y,
            u_y: columns.uy.as_deref(),
            u_x: columns.ux.as_deref(),
            rows: columns.rows,
            degree: f.degree,
            exclude: f.exclude.clone(),
            exclude_reason: f.exclude_reason.clone(),
            scale_by_chi_squared: f.scale_by_chi_squared,
            diagnostics: true,
        })
        .map_err(|e| {
            self.origin
                .key_error(path, e.message)
                .with_kind(ModelErrorKind::Data)
        })?;
        Ok(NamedFit {
            name: f.name.clone(),
            data: columns.source,
            x: columns.x_name,
            y: columns.y_name,
            x_unit: f.x_unit.clone(),
            y_unit: f.y_unit.clone(),
            result,
        })
    }

    fn fit_data(&self, f: &FitDescription, path: &str) -> Result<Columns> {
        match &f.data {
            FitData::File {
                path: file,
                x,
                y,
                y_uncertainty,
                x_uncertainty,
            } => {
                let mut names: Vec<&str> = vec![x, y];
                names.extend(y_uncertainty.as_deref());
                names.extend(x_uncertainty.as_deref());
                let p = self.origin.dir.join(file);
                let cols =
                    incertus_fit::read_columns_limited(&p, &names, self.limits.max_data_rows)
                        .map_err(|e| {
                            self.err(&join(path, "data"), e.message)
                                .with_kind(ModelErrorKind::Data)
                        })?;
                let mut it = cols.columns.into_iter();
                let cx = it.next().expect("x column");
                let cy = it.next().expect("y column");
                let uy = y_uncertainty.as_ref().map(|_| it.next().expect("u(y)"));
                let ux = x_uncertainty.as_ref().map(|_| it.next().expect("u(x)"));
                Ok(Columns {
                    x: cx,
                    y: cy,
                    uy,
                    ux,
                    rows: cols.rows,
                    source: p.display().to_string(),
                    x_name: x.clone(),
                    y_name: y.clone(),
                })
            }
            FitData::Inline {
                x,
                y,
                y_uncertainty,
                x_uncertainty,
            } => {
                let n = x.len();
                for (key, v) in [
                    ("x", Some(x)),
                    ("y", Some(y)),
                    ("y_uncertainty", y_uncertainty.as_ref()),
                    ("x_uncertainty", x_uncertainty.as_ref()),
                ] {
                    let Some(v) = v else { continue };
                    let p = join(path, key);
                    if let Some(i) = v.iter().position(|a| !a.is_finite()) {
                        self.finite(&format!("{p}[{i}]"), v[i])?;
                    }
                    if v.len() != n {
                        return Err(self
                            .origin
                            .key_error(&p, format!("{key} has {} values but x has {n}", v.len())));
                    }
                }
                Ok(Columns {
                    x: x.clone(),
                    y: y.clone(),
                    uy: y_uncertainty.clone(),
                    ux: x_uncertainty.clone(),
                    rows: (1..=n).collect(),
                    source: "inline".into(),
                    x_name: "x".into(),
                    y_name: "y".into(),
                })
            }
        }
    }
}

struct Columns {
    x: Vec<f64>,
    y: Vec<f64>,
    uy: Option<Vec<f64>>,
    ux: Option<Vec<f64>>,
    rows: Vec<usize>,
    source: String,
    x_name: String,
    y_name: String,
}
