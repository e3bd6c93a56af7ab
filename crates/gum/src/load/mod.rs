//! Model files (TOML) to [`Model`], with errors that name the key path and
//! the line.
//!
//! The file is parsed with spans (`toml::de::DeTable`) and walked by hand
//! into a [`ModelDescription`], recording where each key stood; an unknown
//! key, a value of the wrong type or two descriptions of one uncertainty
//! are refused there. The description is then validated
//! (`crate::validate`), and every problem — a negative uncertainty, an
//! unknown name in a formula — is reported with `file:line:column`, the key
//! path (`inputs.d.dof`) and, for formulas, a caret under the place. The
//! file is only ever read.

use std::collections::HashMap;
use std::ops::Range;
use std::path::Path;

use toml::de::{DeArray, DeTable, DeValue};
use toml::Spanned;

use crate::description::*;
use crate::limits::Limits;
use crate::model::*;
use crate::validate::{Origin, Place};

/// Largest model file accepted, in bytes.
pub const MAX_FILE_BYTES: u64 = 16 << 20;

/// A problem with a model: a model file's text, or a description built in
/// memory (then `file` is a label such as `<built model>` and `line` is 0).
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{}", self.render())]
pub struct ModelError {
    /// What kind of problem.
    pub kind: ModelErrorKind,
    /// The file as given (or a label for a model built in memory).
    pub file: String,
    /// 1-based line and column; 0 when the problem is the file as a whole.
    pub line: usize,
    /// 1-based column; 0 with `line`.
    pub column: usize,
    /// Key path, e.g. `inputs.d.dof` (empty for the whole file).
    pub path: String,
    /// What is wrong, for a person.
    pub message: String,
    /// More lines (a formula with a caret, a hint).
    pub detail: Option<String>,
}

/// The kinds of [`ModelError`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum ModelErrorKind {
    /// The file cannot be read, or is not UTF-8 text.
    File,
    /// The text is not valid TOML.
    Syntax,
    /// A key that is not known, a value of the wrong type, a key missing or
    /// one that does not go with the others.
    Key,
    /// A value out of its range (a negative uncertainty, r outside [−1, 1],
    /// reversed limits), or inputs that contradict one another.
    Value,
    /// A name: one the formulas cannot use, one defined twice, one that
    /// names nothing (an input, fit, constant or measurand).
    Name,
    /// A formula that does not parse, names what is not defined, or whose
    /// dimensions do not agree.
    Formula,
    /// A unit that cannot be read or does not fit its quantity.
    Unit,
    /// A fit's data file or data.
    Data,
    /// A size limit (inputs, measurands, formula size, file size).
    Limit,
}

impl ModelError {
    /// The same error with another kind.
    pub(crate) fn with_kind(mut self, kind: ModelErrorKind) -> Self {
        self.kind = kind;
        self
    }

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
/// opened for reading only; a model without a `title` is titled by the
/// file's name.
pub fn load_file(path: &Path) -> Result<Model, ModelError> {
    load_file_with(path, &Limits::default())
}

/// Read and load a model file with explicit limits.
pub fn load_file_with(path: &Path, limits: &Limits) -> Result<Model, ModelError> {
    load_file_described(path, limits).map(|(_, model)| model)
}

/// [`load_file_with`], also giving the description the model was
/// validated from (read once: the file is not read again for it).
pub fn load_file_described(
    path: &Path,
    limits: &Limits,
) -> Result<(ModelDescription, Model), ModelError> {
    let file = path.display().to_string();
    let whole = |message: String| ModelError {
        kind: ModelErrorKind::File,
        file: file.clone(),
        line: 0,
        column: 0,
        path: String::new(),
        message,
        detail: None,
    };
    if let Ok(meta) = std::fs::metadata(path) {
        if meta.is_dir() {
            return Err(whole("is a directory, not a model file".into()));
        }
        if meta.len() > limits.max_file_bytes {
            return Err(whole(format!(
                "the file is {} bytes; model files are limited to {} bytes (INCERTUS_MAX_FILE_BYTES)",
                meta.len(),
                limits.max_file_bytes
            ))
            .with_kind(ModelErrorKind::Limit));
        }
    }
    let bytes = incertus_fit::read_regular(path, limits.max_file_bytes).map_err(|e| {
        let e = if e.contains("limit") {
            format!("{e} (INCERTUS_MAX_FILE_BYTES)")
        } else {
            e
        };
        let kind = if e.contains("limit") {
            ModelErrorKind::Limit
        } else {
            ModelErrorKind::File
        };
        whole(e).with_kind(kind)
    })?;
    let text = String::from_utf8(bytes).map_err(|e| {
        whole(format!(
            "the file is not UTF-8 text (invalid byte at offset {})",
            e.utf8_error().valid_up_to()
        ))
    })?;
    let (description, mut model) = load_str_described(&text, &file, limits)?;
    // A model without a title is called by its file name.
    if model.title.is_none() {
        model.title = path.file_name().map(|n| n.to_string_lossy().into_owned());
    }
    Ok((description, model))
}

/// Load a model from TOML text with the default [`Limits`]; `file` names
/// it in errors.
pub fn load_str(text: &str, file: &str) -> Result<Model, ModelError> {
    load_str_with(text, file, &Limits::default())
}

/// Load a model from TOML text with explicit limits: the text is read
/// into a [`ModelDescription`] (keeping where each key stood) and validated.
pub fn load_str_with(text: &str, file: &str, limits: &Limits) -> Result<Model, ModelError> {
    load_str_described(text, file, limits).map(|(_, model)| model)
}

/// [`load_str_with`], also giving the description the model was validated
/// from.
pub fn load_str_described(
    text: &str,
    file: &str,
    limits: &Limits,
) -> Result<(ModelDescription, Model), ModelError> {
    let (description, places) = describe_str(text, file)?;
    let origin = Origin {
        file: file.to_string(),
        src: Some(text),
        places,
        dir: Path::new(file)
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default(),
    };
    let model = crate::validate::validate(&description, &origin, limits)?;
    Ok((description, model))
}

/// Read model-file text into a description and the places of its keys.
pub(crate) fn describe_str(
    text: &str,
    file: &str,
) -> Result<(ModelDescription, HashMap<String, Place>), ModelError> {
    let doc = Doc {
        src: text,
        file,
        places: Default::default(),
    };
    let root = DeTable::parse(text).map_err(|e| {
        let span = e.span().unwrap_or(0..0);
        let mut err = doc.error(
            span.clone(),
            "",
            format!("not valid TOML: {}", e.message().trim()),
        );
        err.detail = Some(doc.line_with_caret(span));
        err.with_kind(ModelErrorKind::Syntax)
    })?;
    let root_span = root.span();
    let mut top = Reader::new(&doc, "", root.get_ref(), root_span);
    let d = read::model(&doc, &mut top)?;
    Ok((d, doc.places.into_inner()))
}

mod read;
mod reader;

pub(crate) use reader::closest;
use reader::*;
