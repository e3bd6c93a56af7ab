//! Model files (TOML) to [`Model`], with errors that name the key path and
//! the line.
//!
//! The file is parsed with spans (`toml::de::DeTable`) and walked by hand,
//! so that every problem — an unknown key, a value of the wrong type, two
//! descriptions of one uncertainty, an unknown name in a formula — is
//! reported with `file:line:column`, the key path (`inputs.d.dof`) and, for
//! formulas, a caret under the place. The file is only ever read.

use std::collections::HashMap;
use std::ops::Range;
use std::path::Path;

use incertus_expr::{parse, Expr, FormulaError, Kind};
use toml::de::{DeArray, DeTable, DeValue};
use toml::Spanned;

use crate::conformity::Specification;
use crate::constants;
use crate::limits::Limits;
use crate::model::*;
use crate::typea;

/// Largest model file accepted, in bytes.
pub const MAX_FILE_BYTES: u64 = 16 << 20;

/// A problem with a model file.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{}", self.render())]
pub struct ModelError {
    /// The file as given (or `<model>` for text).
    pub file: String,
    /// 1-based line and column; 0 when the problem is the file as a whole.
    pub line: usize,
    pub column: usize,
    /// Key path, e.g. `inputs.d.dof` (empty for the whole file).
    pub path: String,
    pub message: String,
    /// More lines (a formula with a caret, a hint).
    pub detail: Option<String>,
}

impl ModelError {
    fn render(&self) -> String {
        let mut s = if self.line > 0 {
            format!("{}:{}:{}: ", self.file, self.line, self.column)
        } else {
            format!("{}: ", self.file)
        };
        if !self.path.is_empty() {
            s.push_str(&format!("`{}`: ", self.path));
        }
        s.push_str(&self.message);
        if let Some(d) = &self.detail {
            s.push('\n');
            s.push_str(d);
        }
        s
    }
}

/// Read and load a model file with the default [`Limits`]. The file is
/// opened for reading only.
pub fn load_file(path: &Path) -> Result<Model, ModelError> {
    load_file_with(path, &Limits::default())
}

/// Read and load a model file with explicit limits.
pub fn load_file_with(path: &Path, limits: &Limits) -> Result<Model, ModelError> {
    let file = path.display().to_string();
    let whole = |message: String| ModelError {
        file: file.clone(),
        line: 0,
        column: 0,
        path: String::new(),
        message,
        detail: None,
    };
    let meta = std::fs::metadata(path).map_err(|e| whole(format!("cannot read the file: {e}")))?;
    if meta.is_dir() {
        return Err(whole("is a directory, not a model file".into()));
    }
    if meta.len() > limits.max_file_bytes {
        return Err(whole(format!(
            "the file is {} bytes; model files are limited to {} bytes (INCERTUS_MAX_FILE_BYTES)",
            meta.len(),
            limits.max_file_bytes
        )));
    }
    let bytes = std::fs::read(path).map_err(|e| whole(format!("cannot read the file: {e}")))?;
    let text = String::from_utf8(bytes).map_err(|e| {
        whole(format!(
            "the file is not UTF-8 text (invalid byte at offset {})",
            e.utf8_error().valid_up_to()
        ))
    })?;
    load_str_with(&text, &file, limits)
}

/// Load a model from TOML text with the default [`Limits`]; `file` names
/// it in errors.
pub fn load_str(text: &str, file: &str) -> Result<Model, ModelError> {
    load_str_with(text, file, &Limits::default())
}

/// Load a model from TOML text with explicit limits.
pub fn load_str_with(text: &str, file: &str, limits: &Limits) -> Result<Model, ModelError> {
    let doc = Doc { src: text, file };
    let root = DeTable::parse(text).map_err(|e| {
        let span = e.span().unwrap_or(0..0);
        let mut err = doc.error(
            span.clone(),
            "",
            format!("not valid TOML: {}", e.message().trim()),
        );
        err.detail = Some(doc.line_with_caret(span));
        err
    })?;
    let root_span = root.span();
    let mut top = Reader::new(&doc, "", root.get_ref(), root_span);
    Loader {
        doc: &doc,
        limits: *limits,
    }
    .model(&mut top)
}

mod checks;
mod fits;
mod inputs;
mod reader;
mod sensitivity;
mod specification;

use checks::*;
use inputs::*;
use reader::*;
use sensitivity::*;

struct Loader<'a> {
    doc: &'a Doc<'a>,
    limits: Limits,
}

/// A name must read as a single name of the formula language.
fn check_name(doc: &Doc, name: &str, span: Range<usize>, path: &str) -> Result<()> {
    let ok = matches!(parse(name), Ok(Expr { kind: Kind::Var(ref n), .. }) if n == name);
    if !ok {
        return Err(doc.error(
            span,
            path,
            format!(
                "`{name}` cannot be used as a name in formulas: a name starts with a letter \
                 or `_` and holds letters, digits and `_` (and is not a function name or pi)"
            ),
        ));
    }
    Ok(())
}

impl Loader<'_> {
    fn model(&self, top: &mut Reader) -> Result<Model> {
        let doc = self.doc;
        let title = top.string("title")?.map(|(s, _)| s);
        let _ = top.string("description")?;
        let coverage_probability = match top.number("coverage_probability")? {
            Some(n) => {
                if let Err(m) = crate::coverage::check_coverage_probability(n.value) {
                    return Err(top.err(
                        n.span,
                        "coverage_probability",
                        m.replace(&format!("found {}", n.value), &format!("found {}", n.text)),
                    ));
                }
                n.value
            }
            None => 0.95,
        };
        let dof_rounding = match top.string("effective_dof_rounding")? {
            None => DofRounding::Truncate,
            Some((s, span)) => match s.as_str() {
                "truncate" => DofRounding::Truncate,
                "exact" => DofRounding::Exact,
                _ => {
                    return Err(top.err(
                        span,
                        "effective_dof_rounding",
                        format!("expected \"truncate\" or \"exact\", found \"{s}\""),
                    ))
                }
            },
        };

        let fits = self.fits(top)?;

        // Inputs.
        let mut inputs: Vec<Input> = Vec::new();
        let mut pending: Vec<PendingSensitivity> = Vec::new();
        if let Some(v) = top.get("inputs") {
            let DeValue::Table(t) = v.get_ref() else {
                return Err(top.err(
                    v.span(),
                    "inputs",
                    format!(
                        "expected a table of inputs, found {}",
                        type_name(v.get_ref())
                    ),
                ));
            };
            if t.len() > self.limits.max_inputs {
                return Err(top.err(
                    top.span_of("inputs"),
                    "inputs",
                    format!(
                        "{} inputs; the limit is {} (INCERTUS_MAX_INPUTS)",
                        t.len(),
                        self.limits.max_inputs
                    ),
                ));
            }
            for (k, val) in t.iter() {
                let name = k.get_ref().to_string();
                let path = format!("inputs.{name}");
                check_name(doc, &name, k.span(), &path)?;
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
                let input = self.input(&name, &mut r, doc.line(&k.span()), &fits)?;
                let input = to_si(input, &r)?;
                if let Some(s) = r.get("sensitivity") {
                    self.collect_sensitivity(inputs.len(), s, &path, &mut pending)?;
                }
                r.finish(INPUT_KEYS)?;
                inputs.push(input);
            }
        }

        // Parameters of one fit are correlated through its covariance.
        let mut correlations: Vec<Correlation> = Vec::new();
        for i in 0..inputs.len() {
            let Evaluation::Fit {
                fit: fi,
                parameter: pi,
            } = &inputs[i].evaluation
            else {
                continue;
            };
            for j in i + 1..inputs.len() {
                let Evaluation::Fit {
                    fit: fj,
                    parameter: pj,
                } = &inputs[j].evaluation
                else {
                    continue;
                };
                if fi != fj {
                    continue;
                }
                if pi == pj {
                    return Err(doc.error(
                        top.span_of("inputs"),
                        &format!("inputs.{}", inputs[j].name),
                        format!(
                            "`{}` and `{}` are both parameter `{pi}` of fit `{fi}`; name each parameter once",
                            inputs[i].name, inputs[j].name
                        ),
                    ));
                }
                let f = fits
                    .iter()
                    .find(|f| &f.name == fi)
                    .expect("checked when the input was read");
                let (a, b) = (
                    f.result.parameter(pi).expect("checked"),
                    f.result.parameter(pj).expect("checked"),
                );
                correlations.push(Correlation {
                    a: i,
                    b: j,
                    coefficient: f.result.correlation[a][b],
                    from_observations: true,
                    from_fit: Some(fi.clone()),
                });
            }
        }

        // Inputs observed together: their covariance from the data.
        let index_of = |inputs: &[Input], name: &str| inputs.iter().position(|i| i.name == name);
        if let Some((groups, _)) = top.array("observed_together")? {
            let mut grouped: HashMap<usize, usize> = HashMap::new();
            for (g, item) in groups.iter().enumerate() {
                let path = format!("observed_together[{g}]");
                let mut r = item_reader(doc, item, &path, "`inputs = [...]`")?;
                let Some((names, span)) = r.names("inputs")? else {
                    return Err(doc.error(
                        item.span(),
                        &path,
                        "missing `inputs = [\"a\", \"b\", ...]`",
                    ));
                };
                r.finish(&["inputs"])?;
                if names.len() < 2 {
                    return Err(r.err(
                        span,
                        "inputs",
                        "name at least two inputs observed together",
                    ));
                }
                let mut idx = Vec::new();
                for (n, s) in &names {
                    let Some(i) = index_of(&inputs, n) else {
                        return Err(r.err(s.clone(), "inputs", unknown_input(n, &inputs)));
                    };
                    let inp = &inputs[i];
                    if !matches!(inp.evaluation, Evaluation::TypeA { pooled: false, .. }) {
                        return Err(r.err(
                            s.clone(),
                            "inputs",
                            format!(
                                "`{n}` must be given by `observations` (without a pooled \
                                 standard deviation) to be observed together with others"
                            ),
                        ));
                    }
                    if let Some(prev) = grouped.insert(i, g) {
                        return Err(r.err(
                            s.clone(),
                            "inputs",
                            format!("`{n}` is already in observed_together[{prev}]"),
                        ));
                    }
                    if idx.contains(&i) {
                        return Err(r.err(s.clone(), "inputs", format!("`{n}` is named twice")));
                    }
                    idx.push(i);
                }
                let n0 = inputs[idx[0]].observations.as_ref().map_or(0, Vec::len);
                for (&i, (n, s)) in idx.iter().zip(&names) {
                    let len = inputs[i].observations.as_ref().map_or(0, Vec::len);
                    if len != n0 {
                        return Err(r.err(
                            s.clone(),
                            "inputs",
                            format!(
                                "`{n}` has {len} observations but `{}` has {n0}; inputs observed \
                                 together need the same number, taken pairwise",
                                names[0].0
                            ),
                        ));
                    }
                }
                for (x, &i) in idx.iter().enumerate() {
                    for &j in &idx[x + 1..] {
                        let a = inputs[i]
                            .observations
                            .as_ref()
                            .expect("Type A has observations");
                        let b = inputs[j]
                            .observations
                            .as_ref()
                            .expect("Type A has observations");
                        let r = typea::correlation(a, b);
                        correlations.push(Correlation {
                            a: i,
                            b: j,
                            coefficient: r,
                            from_observations: true,
                            from_fit: None,
                        });
                    }
                }
            }
        }

        // Stated correlations.
        if let Some((items, _)) = top.array("correlations")? {
            for (c, item) in items.iter().enumerate() {
                let path = format!("correlations[{c}]");
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
                if names.len() != 2 {
                    return Err(r.err(span, "inputs", "a correlation names exactly two inputs"));
                }
                let mut idx = [0usize; 2];
                for (slot, (n, s)) in idx.iter_mut().zip(&names) {
                    *slot = index_of(&inputs, n)
                        .ok_or_else(|| r.err(s.clone(), "inputs", unknown_input(n, &inputs)))?;
                }
                if idx[0] == idx[1] {
                    return Err(r.err(span, "inputs", "an input cannot be correlated with itself"));
                }
                if !(-1.0..=1.0).contains(&coef.value) {
                    return Err(r.err(
                        coef.span,
                        "coefficient",
                        format!(
                            "a correlation coefficient lies in [-1, 1], found {}",
                            coef.text
                        ),
                    ));
                }
                if let Some(prev) = correlations
                    .iter()
                    .find(|x| (x.a == idx[0] && x.b == idx[1]) || (x.a == idx[1] && x.b == idx[0]))
                {
                    let why = if prev.from_observations {
                        "their correlation already comes from observations taken together"
                    } else {
                        "this pair is already correlated above"
                    };
                    return Err(r.err(
                        span,
                        "inputs",
                        format!("`{}` and `{}`: {why}", names[0].0, names[1].0),
                    ));
                }
                for &i in &idx {
                    if inputs[i].standard_uncertainty == 0.0 && coef.value != 0.0 {
                        return Err(r.err(
                            span.clone(),
                            "inputs",
                            format!(
                                "`{}` has no uncertainty, so it cannot be correlated",
                                inputs[i].name
                            ),
                        ));
                    }
                }
                correlations.push(Correlation {
                    a: idx[0],
                    b: idx[1],
                    coefficient: coef.value,
                    from_observations: false,
                    from_fit: None,
                });
            }
        }
        crate::matrix::check_correlations(&inputs, &correlations)
            .map_err(|m| doc.error(top.span_of("correlations"), "correlations", m))?;

        // Measurands.
        let mut measurands: Vec<Measurand> = Vec::new();
        let Some((items, mspan)) = top.array("measurands")? else {
            return Err(doc.error(
                0..0,
                "measurands",
                "the model has no measurands; add [[measurands]] with name and formula",
            ));
        };
        if items.is_empty() {
            return Err(doc.error(mspan, "measurands", "the list of measurands is empty"));
        }
        if items.len() > self.limits.max_measurands {
            return Err(doc.error(
                mspan,
                "measurands",
                format!(
                    "{} measurands; the limit is {} (INCERTUS_MAX_MEASURANDS)",
                    items.len(),
                    self.limits.max_measurands
                ),
            ));
        }
        for (m, item) in items.iter().enumerate() {
            let path = format!("measurands[{m}]");
            let mut r = item_reader(doc, item, &path, "name and formula")?;
            let Some((name, nspan)) = r.string("name")? else {
                return Err(doc.error(item.span(), &path, "missing `name`"));
            };
            check_name(doc, &name, nspan.clone(), &join(&path, "name"))?;
            if inputs.iter().any(|i| i.name == name) || measurands.iter().any(|x| x.name == name) {
                return Err(r.err(nspan, "name", format!("`{name}` is defined twice")));
            }
            let Some((formula_text, fspan)) = r.string("formula")? else {
                return Err(doc.error(item.span(), &path, "missing `formula`"));
            };
            let formula = parse(&formula_text)
                .map_err(|e| self.formula_error(&r, "formula", fspan.clone(), &formula_text, &e))?;
            let description = r.string("description")?.map(|x| x.0);
            let unit = r.string("unit")?;
            let unit_si = match &unit {
                Some((t, span)) => Some(parse_unit(&r, t, span.clone())?),
                None => None,
            };
            let unit = unit.map(|x| x.0);
            let stated = |n: Option<Num>| {
                n.map(|n| Stated {
                    value: n.value,
                    line: doc.line(&n.span),
                    text: n.text,
                })
            };
            let expected_value = stated(r.number("expected_value")?);
            let expected_standard_uncertainty = stated(r.number("expected_standard_uncertainty")?);
            let specification = self.specification(&mut r)?;
            r.finish(MEASURAND_KEYS)?;
            measurands.push(Measurand {
                name,
                formula_text,
                formula,
                description,
                unit,
                unit_si,
                expected_value,
                expected_standard_uncertainty,
                specification,
                interval: false,
                line: doc.line(&item.span()),
            });
            // Names in the formula are checked once all measurands are known.
            let _ = fspan;
        }
        self.check_formula_names(&inputs, &measurands, items)?;
        let mut measurands = order_measurands(doc, measurands, items)?;
        self.check_expanded_size(&measurands, items)?;
        let units = inputs.iter().any(|i| i.unit_si.is_some())
            || measurands.iter().any(|m| m.unit_si.is_some());
        if units {
            self.check_dimensions(&inputs, &mut measurands, items)?;
        }

        for p in pending {
            self.resolve_sensitivity(p, &mut inputs, &measurands)?;
        }
        top.finish(TOP_KEYS)?;
        Ok(Model {
            title,
            coverage_probability,
            dof_rounding,
            inputs,
            correlations,
            measurands,
            fits,
            units,
        })
    }
}
