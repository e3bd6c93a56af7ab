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

struct Doc<'a> {
    src: &'a str,
    file: &'a str,
}

impl Doc<'_> {
    /// The folder data files are relative to: the model file's own.
    fn dir(&self) -> std::path::PathBuf {
        Path::new(self.file)
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default()
    }
}

impl Doc<'_> {
    fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.src.len());
        let before = &self.src[..offset];
        let line = before.matches('\n').count() + 1;
        let col = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        (line, col)
    }

    /// The line of the file holding `span`, with carets under the span.
    fn line_with_caret(&self, span: Range<usize>) -> String {
        let start = span.start.min(self.src.len());
        let line_start = self.src[..start].rfind('\n').map_or(0, |i| i + 1);
        let line_end = self.src[start..]
            .find('\n')
            .map_or(self.src.len(), |i| start + i);
        let end = span.end.clamp(start, line_end);
        let local = incertus_expr::Span::new(start - line_start, end - line_start);
        incertus_expr::caret(&self.src[line_start..line_end], local)
    }

    fn line(&self, span: &Range<usize>) -> usize {
        self.line_col(span.start).0
    }

    fn error(&self, span: Range<usize>, path: &str, message: impl Into<String>) -> ModelError {
        let (line, column) = self.line_col(span.start);
        ModelError {
            file: self.file.to_string(),
            line,
            column,
            path: path.to_string(),
            message: message.into(),
            detail: None,
        }
    }
}

type Result<T, E = ModelError> = std::result::Result<T, E>;

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

fn type_name(v: &DeValue) -> &'static str {
    match v {
        DeValue::String(_) => "a string",
        DeValue::Integer(_) => "an integer",
        DeValue::Float(_) => "a number",
        DeValue::Boolean(_) => "a boolean",
        DeValue::Datetime(_) => "a date",
        DeValue::Array(_) => "an array",
        DeValue::Table(_) => "a table",
    }
}

/// Names with their spans, and the span of the whole array.
type NameList = (Vec<(String, Range<usize>)>, Range<usize>);

/// A number with its span and text.
#[derive(Clone, Debug)]
struct Num {
    value: f64,
    span: Range<usize>,
    text: String,
}

/// Reads the keys of one table, remembering which were used, so that the
/// rest can be reported as unknown.
struct Reader<'d, 't, 'i> {
    doc: &'d Doc<'d>,
    path: String,
    table: &'t DeTable<'i>,
    span: Range<usize>,
    used: Vec<String>,
}

impl<'d, 't, 'i> Reader<'d, 't, 'i> {
    fn new(doc: &'d Doc<'d>, path: &str, table: &'t DeTable<'i>, span: Range<usize>) -> Self {
        Reader {
            doc,
            path: path.to_string(),
            table,
            span,
            used: Vec::new(),
        }
    }

    fn key_path(&self, key: &str) -> String {
        join(&self.path, key)
    }

    fn err(&self, span: Range<usize>, key: &str, msg: impl Into<String>) -> ModelError {
        self.doc.error(span, &self.key_path(key), msg)
    }

    fn get(&mut self, key: &str) -> Option<&'t Spanned<DeValue<'i>>> {
        let found = self
            .table
            .iter()
            .find(|(k, _)| k.get_ref().as_ref() == key)
            .map(|(_, v)| v);
        if found.is_some() && !self.used.iter().any(|u| u == key) {
            self.used.push(key.to_string());
        }
        found
    }

    fn value_span_of(&self, key: &str) -> Range<usize> {
        self.table
            .iter()
            .find(|(k, _)| k.get_ref().as_ref() == key)
            .map_or(self.span.clone(), |(_, v)| v.span())
    }

    fn span_of(&self, key: &str) -> Range<usize> {
        self.table
            .iter()
            .find(|(k, _)| k.get_ref().as_ref() == key)
            .map_or(self.span.clone(), |(k, _)| k.span())
    }

    fn number(&mut self, key: &str) -> Result<Option<Num>> {
        let Some(v) = self.get(key) else {
            return Ok(None);
        };
        let num = number_value(v).ok_or_else(|| {
            self.err(
                v.span(),
                key,
                format!("expected a number, found {}", type_name(v.get_ref())),
            )
        })?;
        if !num.value.is_finite() {
            return Err(self.err(
                v.span(),
                key,
                format!("`{}` is not a finite number", num.text),
            ));
        }
        Ok(Some(num))
    }

    fn boolean(&mut self, key: &str) -> Result<Option<bool>> {
        let Some(v) = self.get(key) else {
            return Ok(None);
        };
        match v.get_ref() {
            DeValue::Boolean(b) => Ok(Some(*b)),
            other => Err(self.err(
                v.span(),
                key,
                format!("expected true or false, found {}", type_name(other)),
            )),
        }
    }

    fn string(&mut self, key: &str) -> Result<Option<(String, Range<usize>)>> {
        let Some(v) = self.get(key) else {
            return Ok(None);
        };
        match v.get_ref() {
            DeValue::String(s) => Ok(Some((s.to_string(), v.span()))),
            other => Err(self.err(
                v.span(),
                key,
                format!("expected a string, found {}", type_name(other)),
            )),
        }
    }

    fn array(&mut self, key: &str) -> Result<Option<(&'t DeArray<'i>, Range<usize>)>> {
        let Some(v) = self.get(key) else {
            return Ok(None);
        };
        match v.get_ref() {
            DeValue::Array(a) => Ok(Some((a, v.span()))),
            other => Err(self.err(
                v.span(),
                key,
                format!("expected an array, found {}", type_name(other)),
            )),
        }
    }

    fn numbers(&mut self, key: &str) -> Result<Option<(Vec<f64>, Range<usize>)>> {
        let Some((a, span)) = self.array(key)? else {
            return Ok(None);
        };
        let mut out = Vec::with_capacity(a.len());
        for (i, v) in a.iter().enumerate() {
            let p = format!("{key}[{i}]");
            let n = number_value(v).ok_or_else(|| {
                self.err(
                    v.span(),
                    &p,
                    format!("expected a number, found {}", type_name(v.get_ref())),
                )
            })?;
            if !n.value.is_finite() {
                return Err(self.err(v.span(), &p, format!("`{}` is not a finite number", n.text)));
            }
            out.push(n.value);
        }
        Ok(Some((out, span)))
    }

    fn names(&mut self, key: &str) -> Result<Option<NameList>> {
        let Some((a, span)) = self.array(key)? else {
            return Ok(None);
        };
        let mut out = Vec::new();
        for (i, v) in a.iter().enumerate() {
            match v.get_ref() {
                DeValue::String(s) => out.push((s.to_string(), v.span())),
                other => {
                    return Err(self.err(
                        v.span(),
                        &format!("{key}[{i}]"),
                        format!("expected a name (a string), found {}", type_name(other)),
                    ))
                }
            }
        }
        Ok(Some((out, span)))
    }

    /// Error on any key not read.
    fn finish(&self, known: &[&str]) -> Result<()> {
        for (k, _) in self.table.iter() {
            let key = k.get_ref().as_ref();
            if !self.used.iter().any(|u| u == key) {
                let mut msg = format!("unknown key `{key}`");
                if let Some(close) = closest(key, known.iter().copied()) {
                    msg.push_str(&format!("; did you mean `{close}`?"));
                }
                let mut e = self.err(k.span(), key, msg);
                e.detail = Some(format!("keys allowed here: {}", known.join(", ")));
                return Err(e);
            }
        }
        Ok(())
    }
}

/// A reader for an element of an array of tables (`[[correlations]]`, ...),
/// or an error saying what the element should hold.
fn item_reader<'d, 't, 'i>(
    doc: &'d Doc<'d>,
    item: &'t Spanned<DeValue<'i>>,
    path: &str,
    expected: &str,
) -> Result<Reader<'d, 't, 'i>> {
    match item.get_ref() {
        DeValue::Table(t) => Ok(Reader::new(doc, path, t, item.span())),
        _ => Err(doc.error(
            item.span(),
            path,
            format!("expected a table with {expected}"),
        )),
    }
}

fn number_value(v: &Spanned<DeValue>) -> Option<Num> {
    let (value, text) = match v.get_ref() {
        DeValue::Integer(i) => {
            let t = i.as_str().replace('_', "");
            let digits = t.trim_start_matches(['+', '-']);
            let digits = digits
                .strip_prefix("0x")
                .or_else(|| digits.strip_prefix("0o"))
                .or_else(|| digits.strip_prefix("0b"))
                .unwrap_or(digits);
            let mag = i128::from_str_radix(digits, i.radix()).ok()? as f64;
            (
                if t.starts_with('-') { -mag } else { mag },
                i.as_str().to_string(),
            )
        }
        DeValue::Float(f) => {
            let t = f.as_str().replace('_', "");
            (t.parse::<f64>().ok()?, f.as_str().to_string())
        }
        _ => return None,
    };
    Some(Num {
        value,
        span: v.span(),
        text,
    })
}

/// The closest of `options` to `word` by edit distance, if close enough to
/// be a likely typo.
pub(crate) fn closest<'a>(word: &str, options: impl Iterator<Item = &'a str>) -> Option<&'a str> {
    let mut best: Option<(usize, &str)> = None;
    for o in options {
        let d = edit_distance(word, o);
        if d <= 2.max(word.chars().count() / 3) && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, o));
        }
    }
    best.map(|(_, o)| o)
}

fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut cur = vec![i; b.len() + 1];
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            cur[j] = (prev[j] + 1).min(cur[j - 1] + 1).min(prev[j - 1] + cost);
        }
        prev = cur;
    }
    prev[b.len()]
}

const TOP_KEYS: &[&str] = &[
    "title",
    "description",
    "coverage_probability",
    "effective_dof_rounding",
    "inputs",
    "fits",
    "correlations",
    "observed_together",
    "measurands",
];

const FIT_KEYS: &[&str] = &[
    "data",
    "x",
    "y",
    "y_uncertainty",
    "x_uncertainty",
    "degree",
    "exclude",
    "exclude_reason",
    "scale_by_chi_squared",
    "description",
    "x_unit",
    "y_unit",
];

const INPUT_KEYS: &[&str] = &[
    "value",
    "standard_uncertainty",
    "dof",
    "relative_reliability",
    "distribution",
    "expanded_uncertainty",
    "coverage_factor",
    "half_width",
    "lower",
    "upper",
    "beta",
    "limit_half_width",
    "shape",
    "scale",
    "observations",
    "pooled_standard_deviation",
    "pooled_dof",
    "constant",
    "description",
    "unit",
    "sensitivity",
    "fit",
    "parameter",
];

const MEASURAND_KEYS: &[&str] = &[
    "name",
    "formula",
    "description",
    "unit",
    "expected_value",
    "expected_standard_uncertainty",
    "specification",
];

const SPECIFICATION_KEYS: &[&str] = &[
    "lower",
    "upper",
    "rule",
    "guard_multiple",
    "max_specific_risk",
    "process_mean",
    "process_standard_deviation",
];

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

/// Sensitivities stated for later resolution (formulas need all names).
struct PendingSensitivity {
    input: usize,
    measurand: Option<(String, Range<usize>)>,
    value: RawSensitivity,
    span: Range<usize>,
    path: String,
}

/// A stated sensitivity as read, before the names are known.
enum RawSensitivity {
    Number(Num),
    Formula(String),
    Other(&'static str),
}

fn raw_sensitivity(v: &Spanned<DeValue>) -> RawSensitivity {
    if let Some(n) = number_value(v) {
        return RawSensitivity::Number(n);
    }
    match v.get_ref() {
        DeValue::String(s) => RawSensitivity::Formula(s.to_string()),
        other => RawSensitivity::Other(type_name(other)),
    }
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

    /// `specification` of a measurand: tolerance limits and decision rule
    /// (JCGM 106:2012), in the measurand's unit.
    fn specification(&self, r: &mut Reader) -> Result<Option<Specification>> {
        use crate::conformity::{Guard, Process, Rule};
        let doc = self.doc;
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
        let mut s = Reader::new(doc, &path, t, v.span());
        let lower = s.number("lower")?;
        let upper = s.number("upper")?;
        if lower.is_none() && upper.is_none() {
            return Err(doc.error(
                v.span(),
                &path,
                "a specification needs `lower`, `upper` or both (the tolerance limits, in the measurand's unit)",
            ));
        }
        if let (Some(l), Some(u)) = (&lower, &upper) {
            if l.value >= u.value {
                return Err(s.err(
                    u.span.clone(),
                    "upper",
                    format!(
                        "the upper limit {} must be greater than the lower limit {}",
                        u.text, l.text
                    ),
                ));
            }
        }
        let rule_text = s.string("rule")?;
        let multiple = s.number("guard_multiple")?;
        let risk = s.number("max_specific_risk")?;
        let rule = match &rule_text {
            None => {
                if multiple.is_some() || risk.is_some() {
                    return Err(doc.error(
                        v.span(),
                        &path,
                        "a guard band is given but no `rule`: say \"guarded acceptance\" or \"guarded rejection\"",
                    ));
                }
                Rule::SimpleAcceptance
            }
            Some((t, span)) => match t.as_str() {
                "simple acceptance" => Rule::SimpleAcceptance,
                "guarded acceptance" => Rule::GuardedAcceptance,
                "guarded rejection" => Rule::GuardedRejection,
                other => {
                    let known = [
                        "simple acceptance",
                        "guarded acceptance",
                        "guarded rejection",
                    ];
                    let mut msg = format!("unknown decision rule `{other}`");
                    if let Some(c) = closest(other, known.iter().copied()) {
                        msg.push_str(&format!("; did you mean `{c}`?"));
                    }
                    let mut e = s.err(span.clone(), "rule", msg);
                    e.detail = Some(format!("rules: {}", known.join(", ")));
                    return Err(e);
                }
            },
        };
        let guard = match (rule, &multiple, &risk) {
            (Rule::SimpleAcceptance, None, None) => Guard::None,
            (Rule::SimpleAcceptance, Some(n), _) | (Rule::SimpleAcceptance, None, Some(n)) => {
                let key = if multiple.is_some() {
                    "guard_multiple"
                } else {
                    "max_specific_risk"
                };
                return Err(s.err(
                    n.span.clone(),
                    key,
                    "simple acceptance has no guard band; use rule = \"guarded acceptance\" or \"guarded rejection\"",
                ));
            }
            (_, Some(_), Some(n)) => {
                return Err(s.err(
                    n.span.clone(),
                    "max_specific_risk",
                    "give either `guard_multiple` or `max_specific_risk`, not both",
                ));
            }
            (_, None, None) => {
                return Err(doc.error(
                    v.span(),
                    &path,
                    format!(
                        "{} needs a guard band: `guard_multiple` (w = r U) or `max_specific_risk` (the largest \
                         specific risk, e.g. 0.05)",
                        rule.name()
                    ),
                ));
            }
            (_, Some(n), None) => {
                if n.value < 0.0 {
                    return Err(s.err(
                        n.span.clone(),
                        "guard_multiple",
                        format!(
                            "the guard band multiple must not be negative, found {}",
                            n.text
                        ),
                    ));
                }
                Guard::MultipleOfU(n.value)
            }
            (_, None, Some(n)) => {
                if !(n.value > 0.0 && n.value < 0.5) {
                    return Err(s.err(
                        n.span.clone(),
                        "max_specific_risk",
                        format!(
                            "the largest specific risk is a probability between 0 and 0.5 (e.g. 0.05), found {}",
                            n.text
                        ),
                    ));
                }
                Guard::SpecificRisk(n.value)
            }
        };
        let mean = s.number("process_mean")?;
        let sd = s.number("process_standard_deviation")?;
        let process = match (mean, sd) {
            (None, None) => None,
            (Some(m), Some(sd)) => {
                if sd.value <= 0.0 {
                    return Err(s.err(
                        sd.span,
                        "process_standard_deviation",
                        format!(
                            "the process standard deviation must be positive, found {}",
                            sd.text
                        ),
                    ));
                }
                Some(Process {
                    mean: m.value,
                    standard_deviation: sd.value,
                })
            }
            (Some(_), None) | (None, Some(_)) => {
                return Err(doc.error(
                    v.span(),
                    &path,
                    "the process distribution needs both `process_mean` and `process_standard_deviation`",
                ));
            }
        };
        s.finish(SPECIFICATION_KEYS)?;
        Ok(Some(Specification {
            lower: lower.map(|n| n.value),
            upper: upper.map(|n| n.value),
            rule,
            guard,
            process,
        }))
    }

    fn fits(&self, top: &mut Reader) -> Result<Vec<NamedFit>> {
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

    fn formula_error(
        &self,
        r: &Reader,
        key: &str,
        span: Range<usize>,
        text: &str,
        e: &FormulaError,
    ) -> ModelError {
        // Point into the string when the file holds it verbatim ("..." or '...').
        let raw =
            &self.doc.src[span.start.min(self.doc.src.len())..span.end.min(self.doc.src.len())];
        let inner = raw.get(1..raw.len().saturating_sub(1));
        let at = if inner == Some(text) {
            span.start + 1 + e.span.start
        } else {
            span.start
        };
        let mut err = r.err(at..at, key, e.message.clone());
        err.detail = Some(incertus_expr::caret(text, e.span));
        err
    }

    /// The formula of each measurand in terms of the inputs (measurands it
    /// uses substituted) must stay within the node and depth limits:
    /// substitution can double a formula at every level.
    fn check_expanded_size(&self, measurands: &[Measurand], items: &DeArray) -> Result<()> {
        fn walk(e: &Expr, known: &HashMap<&str, (f64, usize)>) -> (f64, usize) {
            match &e.kind {
                Kind::Var(n) => known.get(n.as_str()).copied().unwrap_or((1.0, 1)),
                _ => {
                    let mut nodes = 1.0;
                    let mut depth = 0;
                    for c in e.children() {
                        let (n, d) = walk(c, known);
                        nodes += n;
                        depth = depth.max(d);
                    }
                    (nodes, depth + 1)
                }
            }
        }
        let mut known: HashMap<&str, (f64, usize)> = HashMap::new();
        for m in measurands {
            let (nodes, depth) = walk(&m.formula, &known);
            let over_nodes = nodes > self.limits.max_formula_nodes as f64;
            let over_depth = depth > self.limits.max_formula_depth;
            if over_nodes || over_depth {
                let index = items
                    .iter()
                    .position(|it| {
                        it.get_ref()
                            .as_table()
                            .and_then(|t| t.iter().find(|(k, _)| k.get_ref().as_ref() == "name"))
                            .and_then(|(_, v)| v.get_ref().as_str().map(|s| s == m.name))
                            .unwrap_or(false)
                    })
                    .unwrap_or(0);
                let r = item_reader(
                    self.doc,
                    &items[index],
                    &format!("measurands[{index}]"),
                    "name and formula",
                )?;
                let msg = if over_nodes {
                    format!(
                        "with the measurands it uses written out, the formula of `{}` has about {:.3e} nodes; \
                         the limit is {} (INCERTUS_MAX_FORMULA_NODES)",
                        m.name, nodes, self.limits.max_formula_nodes
                    )
                } else {
                    format!(
                        "with the measurands it uses written out, the formula of `{}` is nested {} levels deep; \
                         the limit is {} (INCERTUS_MAX_FORMULA_DEPTH)",
                        m.name, depth, self.limits.max_formula_depth
                    )
                };
                return Err(r.err(r.value_span_of("formula"), "formula", msg));
            }
            known.insert(m.name.as_str(), (nodes, depth));
        }
        Ok(())
    }

    /// Every formula's dimension, and each measurand's against its unit.
    fn check_dimensions(
        &self,
        inputs: &[Input],
        measurands: &mut [Measurand],
        items: &DeArray,
    ) -> Result<()> {
        use incertus_units::Dimension;
        let mut expanded: Vec<(String, incertus_expr::Expr)> = Vec::new();
        let mut known: Vec<(String, Dimension)> = inputs
            .iter()
            .map(|i| {
                (
                    i.name.clone(),
                    i.unit_si.as_ref().map_or(Dimension::ONE, |u| u.dimension),
                )
            })
            .collect();
        for m in measurands.iter_mut() {
            let index = items
                .iter()
                .position(|it| {
                    it.get_ref()
                        .as_table()
                        .and_then(|t| t.iter().find(|(k, _)| k.get_ref().as_ref() == "name"))
                        .and_then(|(_, v)| v.get_ref().as_str().map(|s| s == m.name))
                        .unwrap_or(false)
                })
                .unwrap_or(0);
            let item = &items[index];
            let r = item_reader(
                self.doc,
                item,
                &format!("measurands[{index}]"),
                "name and formula",
            )?;
            let of = |n: &str| {
                known
                    .iter()
                    .find(|(k, _)| k == n)
                    .map_or(Dimension::ONE, |(_, d)| *d)
            };
            let d = crate::dimensions::dimension(&m.formula, &of).map_err(|e| {
                self.formula_error(
                    &r,
                    "formula",
                    r.value_span_of("formula"),
                    &m.formula_text,
                    &e,
                )
            })?;
            if let Some(u) = &m.unit_si {
                if u.dimension != d {
                    return Err(r.err(
                        r.value_span_of("unit"),
                        "unit",
                        format!(
                            "the formula of `{}` has dimension {d}, but its unit `{}` has dimension {}",
                            m.name,
                            m.unit.as_deref().unwrap_or(""),
                            u.dimension
                        ),
                    ));
                }
            }
            let full = crate::propagate::substitute(&m.formula, &expanded);
            if m.unit_si.as_ref().is_some_and(|u| u.offset != 0.0) {
                match crate::offsets::classify(&full, inputs) {
                    crate::offsets::OnScale::Point => {}
                    crate::offsets::OnScale::Interval => m.interval = true,
                    crate::offsets::OnScale::Neither(message) => {
                        let e = incertus_expr::FormulaError::new(
                            incertus_expr::ErrorKind::Domain,
                            message,
                            m.formula.span,
                        );
                        return Err(self.formula_error(
                            &r,
                            "formula",
                            r.value_span_of("formula"),
                            &m.formula_text,
                            &e,
                        ));
                    }
                }
            }
            expanded.push((m.name.clone(), full));
            if m.unit_si.is_none() && !d.is_one() {
                // No unit stated: the result is reported in its coherent SI
                // unit (SI Brochure, 9th ed., 2.3.4), named so everywhere.
                let text = crate::dimensions::coherent_si_unit(d);
                m.unit = Some(text.clone());
                m.unit_si = Some(incertus_units::Unit {
                    text,
                    dimension: d,
                    factor: 1.0,
                    offset: 0.0,
                });
            }
            known.push((m.name.clone(), d));
        }
        Ok(())
    }

    fn check_formula_names(
        &self,
        inputs: &[Input],
        measurands: &[Measurand],
        items: &DeArray,
    ) -> Result<()> {
        for (m, meas) in measurands.iter().enumerate() {
            let item = &items[m];
            let DeValue::Table(t) = item.get_ref() else {
                continue;
            };
            let r = Reader::new(self.doc, &format!("measurands[{m}]"), t, item.span());
            for (name, span) in var_spans(&meas.formula) {
                if inputs.iter().any(|i| i.name == name)
                    || measurands.iter().any(|x| x.name == name)
                {
                    continue;
                }
                let mut msg = format!("`{name}` is neither an input nor a measurand");
                let all = inputs
                    .iter()
                    .map(|i| i.name.as_str())
                    .chain(measurands.iter().map(|x| x.name.as_str()));
                if let Some(c) = closest(&name, all) {
                    msg.push_str(&format!("; did you mean `{c}`?"));
                } else if constants::find(&name).is_some() {
                    msg.push_str(&format!(
                        "; to use the physical constant, add [inputs.{name}] with constant = \"{name}\""
                    ));
                }
                let e = FormulaError::new(incertus_expr::ErrorKind::Name, msg, span);
                return Err(self.formula_error(
                    &r,
                    "formula",
                    r.value_span_of("formula"),
                    &meas.formula_text,
                    &e,
                ));
            }
        }
        Ok(())
    }

    fn input(&self, name: &str, r: &mut Reader, line: usize, fits: &[NamedFit]) -> Result<Input> {
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

    fn collect_sensitivity(
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

    fn resolve_sensitivity(
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

/// Parse a unit; an error points at the key, with a caret under the unit text.
fn parse_unit(r: &Reader, text: &str, span: Range<usize>) -> Result<incertus_units::Unit> {
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
fn to_si(mut input: Input, r: &Reader) -> Result<Input> {
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

fn unknown_input(n: &str, inputs: &[Input]) -> String {
    let mut msg = format!("`{n}` is not an input");
    if let Some(c) = closest(n, inputs.iter().map(|i| i.name.as_str())) {
        msg.push_str(&format!("; did you mean `{c}`?"));
    }
    msg
}

/// Every name in a formula with the span of its first use.
fn var_spans(e: &Expr) -> Vec<(String, incertus_expr::Span)> {
    let mut out: Vec<(String, incertus_expr::Span)> = Vec::new();
    let mut stack = vec![e];
    while let Some(x) = stack.pop() {
        if let Kind::Var(n) = &x.kind {
            if !out.iter().any(|(o, _)| o == n) {
                out.push((n.clone(), x.span));
            }
        }
        let mut ch = x.children();
        ch.reverse();
        stack.extend(ch);
    }
    out
}

/// Order measurands so that each comes after those it uses; a cycle is an
/// error naming it.
fn order_measurands(doc: &Doc, ms: Vec<Measurand>, items: &DeArray) -> Result<Vec<Measurand>> {
    let n = ms.len();
    let deps: Vec<Vec<usize>> = ms
        .iter()
        .map(|m| {
            let names = m.formula.names();
            (0..n).filter(|&j| names.contains(&ms[j].name)).collect()
        })
        .collect();
    // Depth-first search with colours, reporting the first cycle found.
    let mut state = vec![0u8; n]; // 0 new, 1 on the path, 2 done
    let mut order = Vec::with_capacity(n);
    fn visit(
        i: usize,
        deps: &[Vec<usize>],
        state: &mut [u8],
        order: &mut Vec<usize>,
        path: &mut Vec<usize>,
    ) -> Option<Vec<usize>> {
        state[i] = 1;
        path.push(i);
        for &j in &deps[i] {
            if state[j] == 1 {
                let start = path.iter().position(|&p| p == j).expect("j is on the path");
                let mut cycle = path[start..].to_vec();
                cycle.push(j);
                return Some(cycle);
            }
            if state[j] == 0 {
                if let Some(c) = visit(j, deps, state, order, path) {
                    return Some(c);
                }
            }
        }
        path.pop();
        state[i] = 2;
        order.push(i);
        None
    }
    for i in 0..n {
        if state[i] == 0 {
            let mut path = Vec::new();
            if let Some(cycle) = visit(i, &deps, &mut state, &mut order, &mut path) {
                let names: Vec<&str> = cycle.iter().map(|&c| ms[c].name.as_str()).collect();
                let first = cycle[0];
                return Err(doc.error(
                    items[first].span(),
                    &format!("measurands[{first}]"),
                    format!(
                        "the measurands depend on one another in a cycle: {}",
                        names.join(" -> ")
                    ),
                ));
            }
        }
    }
    let mut slots: Vec<Option<Measurand>> = ms.into_iter().map(Some).collect();
    Ok(order
        .into_iter()
        .map(|i| slots[i].take().expect("each measurand once"))
        .collect())
}
