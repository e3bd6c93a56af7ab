//! One validating step from a [`ModelDescription`] to a [`Model`]: every
//! number checked, names resolved, Type A statistics and fits computed,
//! units converted to coherent SI, dimensions and the order of the
//! measurands checked.
//!
//! Errors name the key path (`inputs.d.dof`). A description read from a
//! file comes with an [`Origin`] that knows where each key path stood in
//! the text, so the same error then also carries `file:line:column` and a
//! caret; a description built in memory gets the path alone.

use std::collections::HashMap;
use std::ops::Range;
use std::path::PathBuf;

use incertus_expr::FormulaError;

use crate::description::*;
use crate::limits::Limits;
use crate::load::{ModelError, ModelErrorKind};
use crate::model::*;

mod checks;
mod correlations;
mod fits;
mod inputs;
mod measurands;

/// Where a key path stood in a file: the key's span, the value's span and
/// the value as written (numbers).
#[derive(Clone, Debug)]
pub(crate) struct Place {
    pub key: Range<usize>,
    pub value: Range<usize>,
    pub text: Option<String>,
}

/// Where a description came from: a file (with the places of its keys) or
/// memory.
pub(crate) struct Origin<'a> {
    /// The file as given, or a label such as `<built model>`.
    pub file: String,
    /// The file's text, for lines, columns and carets.
    pub src: Option<&'a str>,
    pub places: HashMap<String, Place>,
    /// The folder data files are relative to.
    pub dir: PathBuf,
}

impl Origin<'static> {
    /// A description built in memory: errors name the key path only, data
    /// files are relative to the working folder.
    pub(crate) fn built() -> Self {
        Origin {
            file: "<built model>".into(),
            src: None,
            places: HashMap::new(),
            dir: PathBuf::new(),
        }
    }
}

impl Origin<'_> {
    fn place(&self, path: &str) -> Option<&Place> {
        let mut p = path;
        loop {
            if let Some(x) = self.places.get(p) {
                return Some(x);
            }
            let cut = p.rfind(['.', '['])?;
            p = &p[..cut];
        }
    }

    fn line_col(&self, offset: usize) -> (usize, usize) {
        let Some(src) = self.src else {
            return (0, 0);
        };
        let offset = offset.min(src.len());
        let before = &src[..offset];
        let line = before.matches('\n').count() + 1;
        let col = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        (line, col)
    }

    /// An error at the value of `path` (or the nearest enclosing key).
    pub(crate) fn error(&self, path: &str, message: impl Into<String>) -> ModelError {
        self.error_shown(path, path, message)
    }

    /// An error placed at `place` but naming `shown` as its key path.
    pub(crate) fn error_shown(
        &self,
        place: &str,
        shown: &str,
        message: impl Into<String>,
    ) -> ModelError {
        let at = self.place(place).map(|p| p.value.start);
        self.error_at(at, shown, message)
    }

    /// An error at the key (not the value) of `path`.
    pub(crate) fn key_error(&self, path: &str, message: impl Into<String>) -> ModelError {
        let at = self.place(path).map(|p| p.key.start);
        self.error_at(at, path, message)
    }

    fn error_at(&self, at: Option<usize>, path: &str, message: impl Into<String>) -> ModelError {
        let (line, column) = at.map_or((0, 0), |o| self.line_col(o));
        ModelError {
            kind: ModelErrorKind::Value,
            file: self.file.clone(),
            line,
            column,
            path: path.to_string(),
            message: message.into(),
            detail: None,
        }
    }

    /// The 1-based line of `path` in the file, 0 when built in memory.
    pub(crate) fn line(&self, path: &str) -> usize {
        self.place(path)
            .map_or(0, |p| self.line_col(p.value.start).0)
    }

    /// The number at `path` as written, or its shortest form.
    pub(crate) fn text(&self, path: &str, value: f64) -> String {
        self.places
            .get(path)
            .and_then(|p| p.text.clone())
            .unwrap_or_else(|| number_text(value))
    }

    /// An error in the formula at `path`: placed on the formula's character
    /// when the file holds the formula verbatim, with a caret under it.
    pub(crate) fn formula_error(&self, path: &str, text: &str, e: &FormulaError) -> ModelError {
        let mut at = self.place(path).map(|p| p.value.start);
        if let (Some(src), Some(p)) = (self.src, self.places.get(path)) {
            let span = &p.value;
            let raw = &src[span.start.min(src.len())..span.end.min(src.len())];
            if raw.get(1..raw.len().saturating_sub(1)) == Some(text) {
                at = Some(span.start + 1 + e.span.start);
            }
        }
        let mut err = self
            .error_at(at, path, e.message.clone())
            .with_kind(ModelErrorKind::Formula);
        err.detail = Some(incertus_expr::caret(text, e.span));
        err
    }
}

/// The shortest text that reads back as `v` (`0.001`, `5.0`, `1e-30`, `NaN`).
pub(crate) fn number_text(v: f64) -> String {
    format!("{v:?}")
}

pub(crate) type Result<T, E = ModelError> = std::result::Result<T, E>;

/// The validating step, with its origin and limits.
pub(crate) struct Validator<'o, 'a> {
    pub origin: &'o Origin<'a>,
    pub limits: Limits,
    /// A draft (a model still being written) may have no measurands.
    pub draft: bool,
}

/// Validate a description into a model.
pub(crate) fn validate(d: &ModelDescription, origin: &Origin, limits: &Limits) -> Result<Model> {
    Validator {
        origin,
        limits: *limits,
        draft: false,
    }
    .model(d)
}

/// Validate a draft: as [`validate`], but no measurand is needed.
pub(crate) fn validate_draft(
    d: &ModelDescription,
    origin: &Origin,
    limits: &Limits,
) -> Result<Model> {
    Validator {
        origin,
        limits: *limits,
        draft: true,
    }
    .model(d)
}

impl Validator<'_, '_> {
    fn err(&self, path: &str, message: impl Into<String>) -> ModelError {
        self.origin.error(path, message)
    }

    /// A number that must be finite (a description built in memory may
    /// hold NaN or an infinity; a file's are checked when read).
    fn finite(&self, path: &str, v: f64) -> Result<()> {
        if v.is_finite() {
            Ok(())
        } else {
            Err(self.err(
                path,
                format!("`{}` is not a finite number", self.origin.text(path, v)),
            ))
        }
    }

    /// [`Self::finite`] at `path.key`, the path made only for an error.
    fn finite_at(&self, path: &str, key: &str, v: f64) -> Result<()> {
        if v.is_finite() {
            Ok(())
        } else {
            self.finite(&join(path, key), v)
        }
    }

    fn model(&self, d: &ModelDescription) -> Result<Model> {
        let (coverage_probability, dof_rounding) = self.settings(d)?;
        let fits = self.fits(&d.fits)?;
        let mut inputs = self.inputs(&d.inputs, &fits)?;
        let correlations = self.correlations(d, &inputs, &fits)?;
        let measurands = self.measurands(d, &mut inputs)?;
        let units = inputs.iter().any(|i| i.unit_si.is_some())
            || measurands.iter().any(|m| m.unit_si.is_some());
        Ok(Model {
            title: d.title.clone(),
            description: d.description.clone(),
            coverage_probability,
            dof_rounding,
            inputs,
            correlations,
            measurands,
            fits,
            units,
        })
    }

    fn settings(&self, d: &ModelDescription) -> Result<(f64, DofRounding)> {
        let p = match d.settings.coverage_probability {
            Some(p) => {
                self.finite("coverage_probability", p)?;
                if let Err(m) = crate::coverage::check_coverage_probability(p) {
                    let text = self.origin.text("coverage_probability", p);
                    return Err(self.err(
                        "coverage_probability",
                        m.replace(&format!("found {p}"), &format!("found {text}")),
                    ));
                }
                p
            }
            None => 0.95,
        };
        Ok((
            p,
            d.settings
                .effective_dof_rounding
                .unwrap_or(DofRounding::Truncate),
        ))
    }
}

/// A name must read as a single name of the formula language.
fn name_problem(name: &str) -> Option<String> {
    (!is_formula_name(name)).then(|| {
        format!(
            "`{name}` cannot be used as a name in formulas: a name starts with a letter \
             or `_` and holds letters, digits and `_` (and is not a function name or pi)"
        )
    })
}

/// `path.key`, or `path` for the table itself.
pub(crate) fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else if key.is_empty() {
        path.to_string()
    } else {
        format!("{path}.{key}")
    }
}
