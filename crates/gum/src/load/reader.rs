//! Reading the spanned TOML tree: the document with its lines, a reader of
//! one table that records the keys it used, typed values with located errors,
//! and the lists of keys each table may hold.

use super::*;

pub(super) struct Doc<'a> {
    pub(super) src: &'a str,
    pub(super) file: &'a str,
    /// Where each key path stood, for the errors of validation.
    pub(super) places: std::cell::RefCell<HashMap<String, Place>>,
}

impl Doc<'_> {
    /// Remember where `path` stood: its key and its value.
    pub(super) fn record(&self, path: String, key: Range<usize>, value: Range<usize>) {
        self.places.borrow_mut().insert(
            path,
            Place {
                key,
                value,
                text: None,
            },
        );
    }

    /// Remember how the number at `path` was written.
    pub(super) fn record_text(&self, path: &str, text: &str) {
        if let Some(p) = self.places.borrow_mut().get_mut(path) {
            p.text = Some(text.to_string());
        }
    }
}

impl Doc<'_> {
    pub(super) fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.src.len());
        let before = &self.src[..offset];
        let line = before.matches('\n').count() + 1;
        let col = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        (line, col)
    }

    /// The line of the file holding `span`, with carets under the span.
    pub(super) fn line_with_caret(&self, span: Range<usize>) -> String {
        let start = span.start.min(self.src.len());
        let line_start = self.src[..start].rfind('\n').map_or(0, |i| i + 1);
        let line_end = self.src[start..]
            .find('\n')
            .map_or(self.src.len(), |i| start + i);
        let end = span.end.clamp(start, line_end);
        let local = incertus_expr::Span::new(start - line_start, end - line_start);
        incertus_expr::caret(&self.src[line_start..line_end], local)
    }

    pub(super) fn line(&self, span: &Range<usize>) -> usize {
        self.line_col(span.start).0
    }

    pub(super) fn error(
        &self,
        span: Range<usize>,
        path: &str,
        message: impl Into<String>,
    ) -> ModelError {
        let (line, column) = self.line_col(span.start);
        ModelError {
            kind: ModelErrorKind::Key,
            file: self.file.to_string(),
            line,
            column,
            path: path.to_string(),
            message: message.into(),
            detail: None,
        }
    }
}

pub(super) type Result<T, E = ModelError> = std::result::Result<T, E>;

pub(super) use crate::validate::join;

pub(super) fn type_name(v: &DeValue) -> &'static str {
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
pub(super) type NameList = (Vec<(String, Range<usize>)>, Range<usize>);

/// A number with its span and text.
#[derive(Clone, Debug)]
pub(super) struct Num {
    pub(super) value: f64,
    pub(super) span: Range<usize>,
    pub(super) text: String,
}

/// Reads the keys of one table, remembering which were used, so that the
/// rest can be reported as unknown.
pub(super) struct Reader<'d, 't, 'i> {
    pub(super) doc: &'d Doc<'d>,
    pub(super) path: String,
    pub(super) table: &'t DeTable<'i>,
    pub(super) span: Range<usize>,
    pub(super) used: Vec<String>,
}

impl<'d, 't, 'i> Reader<'d, 't, 'i> {
    pub(super) fn new(
        doc: &'d Doc<'d>,
        path: &str,
        table: &'t DeTable<'i>,
        span: Range<usize>,
    ) -> Self {
        Reader {
            doc,
            path: path.to_string(),
            table,
            span,
            used: Vec::new(),
        }
    }

    pub(super) fn key_path(&self, key: &str) -> String {
        join(&self.path, key)
    }

    pub(super) fn err(&self, span: Range<usize>, key: &str, msg: impl Into<String>) -> ModelError {
        self.doc.error(span, &self.key_path(key), msg)
    }

    pub(super) fn get(&mut self, key: &str) -> Option<&'t Spanned<DeValue<'i>>> {
        let found = self.table.iter().find(|(k, _)| k.get_ref().as_ref() == key);
        if let Some((k, v)) = found {
            self.doc.record(self.key_path(key), k.span(), v.span());
        }
        let found = found.map(|(_, v)| v);
        if found.is_some() && !self.used.iter().any(|u| u == key) {
            self.used.push(key.to_string());
        }
        found
    }

    pub(super) fn value_span_of(&self, key: &str) -> Range<usize> {
        self.table
            .iter()
            .find(|(k, _)| k.get_ref().as_ref() == key)
            .map_or(self.span.clone(), |(_, v)| v.span())
    }

    pub(super) fn number(&mut self, key: &str) -> Result<Option<Num>> {
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
        self.doc.record_text(&self.key_path(key), &num.text);
        Ok(Some(num))
    }

    pub(super) fn boolean(&mut self, key: &str) -> Result<Option<bool>> {
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

    pub(super) fn string(&mut self, key: &str) -> Result<Option<(String, Range<usize>)>> {
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

    pub(super) fn array(&mut self, key: &str) -> Result<Option<(&'t DeArray<'i>, Range<usize>)>> {
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

    pub(super) fn numbers(&mut self, key: &str) -> Result<Option<(Vec<f64>, Range<usize>)>> {
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

    pub(super) fn names(&mut self, key: &str) -> Result<Option<NameList>> {
        let Some((a, span)) = self.array(key)? else {
            return Ok(None);
        };
        let mut out = Vec::new();
        for (i, v) in a.iter().enumerate() {
            match v.get_ref() {
                DeValue::String(s) => {
                    self.doc
                        .record(self.key_path(&format!("{key}[{i}]")), v.span(), v.span());
                    out.push((s.to_string(), v.span()))
                }
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
    pub(super) fn finish(&self, known: &[&str]) -> Result<()> {
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
pub(super) fn item_reader<'d, 't, 'i>(
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

pub(super) fn number_value(v: &Spanned<DeValue>) -> Option<Num> {
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

pub(super) fn edit_distance(a: &str, b: &str) -> usize {
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

pub(super) const TOP_KEYS: &[&str] = &[
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

pub(super) const FIT_KEYS: &[&str] = &[
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

pub(super) const INPUT_KEYS: &[&str] = &[
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
    "source",
    "unit",
    "sensitivity",
    "fit",
    "parameter",
];

pub(super) const MEASURAND_KEYS: &[&str] = &[
    "name",
    "formula",
    "description",
    "unit",
    "expected_value",
    "expected_standard_uncertainty",
    "specification",
];

pub(super) const SPECIFICATION_KEYS: &[&str] = &[
    "lower",
    "upper",
    "rule",
    "guard_multiple",
    "max_specific_risk",
    "process_mean",
    "process_standard_deviation",
];
