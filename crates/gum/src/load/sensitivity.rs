//! Sensitivity coefficients stated by the model's author, read before the
//! names are known and resolved after.

use super::*;

/// Sensitivities stated for later resolution (formulas need all names).
pub(super) struct PendingSensitivity {
    pub(super) input: usize,
    pub(super) measurand: Option<(String, Range<usize>)>,
    pub(super) value: RawSensitivity,
    pub(super) span: Range<usize>,
    pub(super) path: String,
}

/// A stated sensitivity as read, before the names are known.
pub(super) enum RawSensitivity {
    Number(Num),
    Formula(String),
    Other(&'static str),
}

pub(super) fn raw_sensitivity(v: &Spanned<DeValue>) -> RawSensitivity {
    if let Some(n) = number_value(v) {
        return RawSensitivity::Number(n);
    }
    match v.get_ref() {
        DeValue::String(s) => RawSensitivity::Formula(s.to_string()),
        other => RawSensitivity::Other(type_name(other)),
    }
}

impl Loader<'_> {
    pub(super) fn collect_sensitivity(
        &self,
        input: usize,
        v: &Spanned<DeValue>,
        path: &str,
        pending: &mut Vec<PendingSensitivity>,
    ) -> Result<()> {
        let path = join(path, "sensitivity");
        match v.get_ref() {
            DeValue::Table(t) => {
                for (k, val) in t.iter() {
                    pending.push(PendingSensitivity {
                        input,
                        measurand: Some((k.get_ref().to_string(), k.span())),
                        value: raw_sensitivity(val),
                        span: val.span(),
                        path: join(&path, k.get_ref()),
                    });
                }
            }
            _ => pending.push(PendingSensitivity {
                input,
                measurand: None,
                value: raw_sensitivity(v),
                span: v.span(),
                path,
            }),
        }
        Ok(())
    }

    pub(super) fn resolve_sensitivity(
        &self,
        p: PendingSensitivity,
        inputs: &mut [Input],
        measurands: &[Measurand],
    ) -> Result<()> {
        let doc = self.doc;
        let measurand = match &p.measurand {
            Some((m, span)) => {
                if !measurands.iter().any(|x| &x.name == m) {
                    return Err(doc.error(
                        span.clone(),
                        &p.path,
                        format!("no measurand named `{m}`"),
                    ));
                }
                m.clone()
            }
            None => {
                if measurands.len() != 1 {
                    return Err(doc.error(
                        p.span.clone(),
                        &p.path,
                        "the model has several measurands: give sensitivity = { measurand = ... }",
                    ));
                }
                measurands[0].name.clone()
            }
        };
        let line = doc.line(&p.span);
        let stated = match p.value {
            RawSensitivity::Number(n) if !n.value.is_finite() => {
                return Err(doc.error(
                    p.span.clone(),
                    &p.path,
                    format!(
                        "`{}` is not a finite number; a stated sensitivity coefficient must be one",
                        n.text
                    ),
                ));
            }
            RawSensitivity::Number(n) => StatedSensitivity::Number(Stated {
                value: n.value,
                text: n.text,
                line,
            }),
            RawSensitivity::Formula(s) => {
                let expr = parse(&s).map_err(|e| {
                    let mut err = doc.error(p.span.clone(), &p.path, e.message.clone());
                    err.detail = Some(incertus_expr::caret(&s, e.span));
                    err
                })?;
                for (name, span) in var_spans(&expr) {
                    if !inputs.iter().any(|i| i.name == name)
                        && !measurands.iter().any(|m| m.name == name)
                    {
                        let mut err = doc.error(
                            p.span.clone(),
                            &p.path,
                            format!("`{name}` is neither an input nor a measurand"),
                        );
                        err.detail = Some(incertus_expr::caret(&s, span));
                        return Err(err);
                    }
                }
                StatedSensitivity::Formula {
                    text: s,
                    expr,
                    line,
                }
            }
            RawSensitivity::Other(t) => {
                return Err(doc.error(
                    p.span.clone(),
                    &p.path,
                    format!("expected a number or a formula (a string), found {t}"),
                ))
            }
        };
        inputs[p.input]
            .stated_sensitivities
            .push((measurand, stated));
        Ok(())
    }
}
