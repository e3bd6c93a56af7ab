//! Columns of a CSV file by header name, with errors that name the file,
//! the line and the column. The file is only read.

use std::path::Path;

/// A problem with a data file.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct DataError {
    /// What kind of problem.
    pub kind: DataErrorKind,
    /// What is wrong and where (`file:line`), for a person.
    pub message: String,
}

/// The kinds of [`DataError`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum DataErrorKind {
    /// The file cannot be read (missing, unreadable, not text).
    Read,
    /// A line or cell is not what a CSV table of numbers holds.
    Format,
    /// A column asked for is not in the header.
    Column,
    /// The file exceeds a size limit.
    Limit,
}

impl DataError {
    fn new(kind: DataErrorKind, message: String) -> Self {
        DataError { kind, message }
    }
}

/// The requested columns and the 1-based data row of each value.
#[derive(Clone, Debug)]
pub struct Columns {
    /// The values of each requested column, in the order asked.
    pub columns: Vec<Vec<f64>>,
    /// The 1-based data row of each value (the header is not counted).
    pub rows: Vec<usize>,
}

/// Largest data file read, in bytes.
pub const MAX_DATA_BYTES: u64 = 256 << 20;

/// Most data rows read by [`read_columns`].
pub const MAX_DATA_ROWS: usize = 10_000_000;

/// Read the named columns as numbers. Every cell of them must hold a
/// finite number; the first line is the header.
pub fn read_columns(path: &Path, names: &[&str]) -> Result<Columns, DataError> {
    read_columns_limited(path, names, MAX_DATA_ROWS)
}

/// Open a file that must be a regular file (not a device, a pipe or a
/// socket, which could block or never end), for reading at most `limit`
/// bytes: the reader stops one byte past the limit, so a file that grows or
/// lies about its size is still caught. The error says why, without any of
/// the file's content.
pub fn open_regular(path: &Path, limit: u64) -> Result<std::io::Take<std::fs::File>, String> {
    let meta = std::fs::metadata(path).map_err(|e| format!("cannot read the file: {e}"))?;
    if meta.is_dir() {
        return Err("is a directory, not a file".into());
    }
    if !meta.is_file() {
        return Err(
            "is not a regular file (a device, a pipe or a socket); give a file on disk".into(),
        );
    }
    if meta.len() > limit {
        return Err(format!(
            "the file is {} bytes; the limit is {limit} bytes",
            meta.len()
        ));
    }
    let f = std::fs::File::open(path).map_err(|e| format!("cannot read the file: {e}"))?;
    Ok(std::io::Read::take(f, limit + 1))
}

/// Read a whole regular file of at most `limit` bytes ([`open_regular`]).
pub fn read_regular(path: &Path, limit: u64) -> Result<Vec<u8>, String> {
    let mut r = open_regular(path, limit)?;
    let mut bytes = Vec::new();
    std::io::Read::read_to_end(&mut r, &mut bytes)
        .map_err(|e| format!("cannot read the file: {e}"))?;
    if bytes.len() as u64 > limit {
        return Err(format!(
            "the file is larger than the limit of {limit} bytes"
        ));
    }
    Ok(bytes)
}

/// [`read_columns`] with a limit on the number of data rows.
pub fn read_columns_limited(
    path: &Path,
    names: &[&str],
    max_rows: usize,
) -> Result<Columns, DataError> {
    let file = path.display().to_string();
    let mut f = open_regular(path, MAX_DATA_BYTES).map_err(|e| {
        let kind = if e.contains("limit") {
            DataErrorKind::Limit
        } else {
            DataErrorKind::Read
        };
        DataError::new(kind, format!("{file}: cannot read the data file: {e}"))
    })?;
    let columns = columns_from_reader(&mut f, &file, names, max_rows);
    // The reader stops one byte past the limit: reaching it means the file
    // is larger than its metadata said (a special file, or one growing).
    if f.limit() == 0 {
        return Err(DataError::new(
            DataErrorKind::Limit,
            format!("{file}: the data file is larger than {MAX_DATA_BYTES} bytes"),
        ));
    }
    columns
}

/// Read the named columns from CSV text; `file` names it in errors.
pub fn columns_from_reader(
    source: impl std::io::Read,
    file: &str,
    names: &[&str],
    max_rows: usize,
) -> Result<Columns, DataError> {
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(true)
        .trim(csv::Trim::All)
        .comment(Some(b'#'))
        .from_reader(source);
    let headers = rdr
        .headers()
        .map_err(|e| {
            DataError::new(
                DataErrorKind::Format,
                format!("{file}:1: cannot read the header line: {e}"),
            )
        })?
        .clone();
    // A header line that is no header (binary data, a very long line) is
    // not echoed: it may be anything (`/proc/self/environ`, a key file).
    let binary = headers
        .iter()
        .any(|h| h.chars().any(|c| c.is_control() && c != '\t'));
    if binary || headers.as_slice().len() > 4096 {
        return Err(DataError::new(
            DataErrorKind::Format,
            format!(
                "{file}:1: the first line is not a header of column names (it holds {}); \
                 give a CSV table with a header line",
                if binary {
                    "binary data"
                } else {
                    "more than 4096 bytes"
                }
            ),
        ));
    }
    let mut idx = Vec::new();
    for n in names {
        match headers.iter().position(|h| h == *n) {
            Some(i) => idx.push(i),
            None => {
                let other = headers.iter().any(|h| h.contains([';', '\t']));
                return Err(DataError::new(
                    DataErrorKind::Column,
                    format!(
                        "{file}:1: no column named `{n}`; the columns are: {}{}",
                        headers.iter().collect::<Vec<_>>().join(", "),
                        if other {
                            " (the header seems to use `;` or a tab between fields; incertus reads \
                         fields separated by commas, with decimal points)"
                        } else {
                            ""
                        }
                    ),
                ));
            }
        }
    }
    let mut columns = vec![Vec::new(); names.len()];
    let mut rows = Vec::new();
    for (k, rec) in rdr.records().enumerate() {
        if k >= max_rows {
            return Err(DataError::new(DataErrorKind::Limit, format!(
                "{file}: more than {max_rows} data rows; the limit can be raised (INCERTUS_MAX_DATA_ROWS)"
            )));
        }
        let rec = rec.map_err(|e| {
            let line = e.position().map_or(0, |p| p.line());
            DataError::new(
                DataErrorKind::Format,
                format!("{file}:{line}: cannot read the line: {e}"),
            )
        })?;
        let line = rec.position().map_or(k as u64 + 2, |p| p.line());
        if rec.len() != headers.len() {
            return Err(DataError::new(
                DataErrorKind::Format,
                format!(
                    "{file}:{line}: the line has {} field{} but the header has {}; decimal commas \
                 (`0,5` for 0.5) or a separator other than the comma are the likely cause: export \
                 the data with decimal points and commas between fields",
                    rec.len(),
                    if rec.len() == 1 { "" } else { "s" },
                    headers.len()
                ),
            ));
        }
        for (c, &i) in idx.iter().enumerate() {
            let cell = rec.get(i).ok_or_else(|| {
                DataError::new(
                    DataErrorKind::Format,
                    format!(
                    "{file}:{line}: column `{}` is missing (the line is shorter than the header)",
                    names[c]
                ),
                )
            })?;
            if cell.is_empty() {
                return Err(DataError::new(
                    DataErrorKind::Format,
                    format!("{file}:{line}: column `{}` is empty", names[c]),
                ));
            }
            let v: f64 = cell.parse().map_err(|_| {
                let comma =
                    cell.matches(',').count() == 1 && cell.replace(',', ".").parse::<f64>().is_ok();
                DataError::new(
                    DataErrorKind::Format,
                    format!(
                        "{file}:{line}: column `{}` holds `{cell}`, which is not a number{}",
                        names[c],
                        if comma {
                            "; it looks like a decimal comma: export the data with decimal points"
                        } else {
                            ""
                        }
                    ),
                )
            })?;
            if !v.is_finite() {
                return Err(DataError::new(
                    DataErrorKind::Format,
                    format!(
                        "{file}:{line}: column `{}` holds `{cell}`, which is not finite",
                        names[c]
                    ),
                ));
            }
            columns[c].push(v);
        }
        rows.push(k + 1);
    }
    if rows.is_empty() {
        return Err(DataError::new(
            DataErrorKind::Format,
            format!("{file}: the data file has no data rows"),
        ));
    }
    Ok(Columns { columns, rows })
}
