//! A sheet or a CSV table as a grid of cells, each with its name
//! (`Budget!D6` in a spreadsheet, `line 6, column 4` in a CSV table), its
//! text, its number and whether it is a formula without a stored value.

use std::path::Path;

use calamine::{open_workbook_auto, Data, Reader};

/// One cell.
#[derive(Clone, Debug, Default)]
pub(crate) struct Cell {
    /// The text, when the cell holds text (or a number typed as text).
    pub text: Option<String>,
    /// The number the cell holds or its text reads as.
    pub number: Option<f64>,
    /// The significant digits of the number as stated (its text, or the
    /// shortest form of a stored value, at most 6).
    pub digits: u32,
    /// A formula whose value the file does not store.
    pub formula_without_value: bool,
}

/// The cells of one sheet or table.
#[derive(Debug)]
pub(crate) struct Grid {
    /// `file (sheet NAME)` or the file.
    pub name: String,
    /// The sheet's name, for cell names (`None` for CSV).
    pub sheet: Option<String>,
    /// The first row's and column's 0-based position in the sheet.
    pub origin: (usize, usize),
    pub rows: Vec<Vec<Cell>>,
    /// The unit a column's title states (`Contribution (mg)`), by column,
    /// once the header is found.
    pub column_units: Vec<Option<incertus_units::Unit>>,
    /// For a CSV table, the file's line of each row (a quoted cell may
    /// span lines).
    pub lines: Vec<u64>,
}

/// Column letters of a 0-based column (`A`, `Z`, `AA`).
pub(crate) fn letters(mut c: usize) -> String {
    let mut s = Vec::new();
    loop {
        s.push((b'A' + (c % 26) as u8) as char);
        if c < 26 {
            break;
        }
        c = c / 26 - 1;
    }
    s.iter().rev().collect()
}

impl Grid {
    /// The 1-based row of the sheet (or line of the file) of grid row `r`.
    pub(crate) fn row_number(&self, r: usize) -> u64 {
        self.lines
            .get(r)
            .copied()
            .unwrap_or((self.origin.0 + r + 1) as u64)
    }

    /// The name of the cell at (row, column) of the grid.
    pub(crate) fn cell_name(&self, r: usize, c: usize) -> String {
        let (r0, c0) = self.origin;
        match &self.sheet {
            Some(s) => format!("{s}!{}{}", letters(c0 + c), r0 + r + 1),
            None => format!("line {}, column {}", self.row_number(r), c0 + c + 1),
        }
    }
}

/// Significant digits of a number as written (`0.0058` → 2, `120.0` → 4,
/// `1.2e-3` → 2); 0 when it is not a plain number.
pub(crate) fn digits_of(text: &str) -> u32 {
    let t = text.trim().trim_start_matches(['+', '-', '−']);
    let mantissa = t.split(['e', 'E']).next().unwrap_or("");
    let ds: String = mantissa.chars().filter(|c| c.is_ascii_digit()).collect();
    let trimmed = ds.trim_start_matches('0');
    if trimmed.is_empty() {
        return 1;
    }
    trimmed.len() as u32
}

/// A number from a cell's text: a decimal point or a decimal comma, an
/// optional exponent; a minus sign as `-` or `−`.
pub(crate) fn number_of(text: &str) -> Option<f64> {
    let t = text.trim().replace('−', "-").replace('\u{a0}', "");
    if t.is_empty() {
        return None;
    }
    let t = if t.contains(',') && !t.contains('.') {
        t.replace(',', ".")
    } else {
        t
    };
    t.parse::<f64>().ok().filter(|v| v.is_finite())
}

fn text_cell(s: &str) -> Cell {
    let number = number_of(s);
    Cell {
        text: Some(s.trim().to_string()),
        number,
        digits: if number.is_some() { digits_of(s) } else { 0 },
        formula_without_value: false,
    }
}

fn number_cell(v: f64) -> Cell {
    let shortest = format!("{v:e}");
    Cell {
        text: None,
        number: Some(v),
        digits: digits_of(&shortest).min(6),
        formula_without_value: false,
    }
}

/// Read `file`: a CSV table, or a sheet of a workbook (`sheet`, or the
/// first). Errors say why the file cannot be read.
pub(crate) fn read(file: &Path, sheet: Option<&str>, max_bytes: u64) -> Result<Grid, String> {
    let ext = file
        .extension()
        .map(|e| e.to_string_lossy().to_lowercase())
        .unwrap_or_default();
    if ext == "csv" || ext == "txt" {
        return read_csv(file, max_bytes);
    }
    if !matches!(ext.as_str(), "xlsx" | "xlsm" | "xls" | "ods" | "xlsb") {
        return Err(format!(
            "{}: not a budget file incertus reads (.xlsx, .xls, .ods or .csv)",
            file.display()
        ));
    }
    let meta = std::fs::metadata(file).map_err(|e| format!("{}: {e}", file.display()))?;
    if !meta.is_file() {
        return Err(format!("{}: not a regular file", file.display()));
    }
    if meta.len() > max_bytes {
        return Err(format!(
            "{}: {} bytes; files are limited to {max_bytes} bytes (INCERTUS_MAX_FILE_BYTES)",
            file.display(),
            meta.len()
        ));
    }
    let mut book = open_workbook_auto(file)
        .map_err(|e| format!("{}: cannot read the workbook: {e}", file.display()))?;
    let names = book.sheet_names();
    let name = match sheet {
        Some(s) => names
            .iter()
            .find(|n| n.as_str() == s)
            .cloned()
            .ok_or_else(|| {
                format!(
                    "{}: no sheet `{s}` (sheets: {})",
                    file.display(),
                    names.join(", ")
                )
            })?,
        None => names
            .first()
            .cloned()
            .ok_or_else(|| format!("{}: the workbook has no sheet", file.display()))?,
    };
    let range = book
        .worksheet_range(&name)
        .map_err(|e| format!("{}: cannot read the sheet `{name}`: {e}", file.display()))?;
    let formulas = book.worksheet_formula(&name).ok();
    let (r0, c0) = range
        .start()
        .map_or((0, 0), |(r, c)| (r as usize, c as usize));
    let mut rows = Vec::new();
    for (r, row) in range.rows().enumerate() {
        let mut cells = Vec::with_capacity(row.len());
        for (c, d) in row.iter().enumerate() {
            let mut cell = match d {
                Data::Int(i) => number_cell(*i as f64),
                Data::Float(f) => number_cell(*f),
                Data::String(s) => text_cell(s),
                Data::Bool(b) => text_cell(&b.to_string()),
                Data::Empty => Cell::default(),
                other => Cell {
                    text: Some(other.to_string()),
                    ..Cell::default()
                },
            };
            if matches!(d, Data::Empty) {
                if let Some(f) = &formulas {
                    let at = ((r0 + r) as u32, (c0 + c) as u32);
                    if f.get_value(at).is_some_and(|t| !t.is_empty()) {
                        cell.formula_without_value = true;
                    }
                }
            }
            cells.push(cell);
        }
        rows.push(cells);
    }
    Ok(Grid {
        name: format!("{} (sheet {name})", file.display()),
        sheet: Some(if name.contains([' ', '!', '\'']) {
            format!("'{}'", name.replace('\'', "''"))
        } else {
            name
        }),
        origin: (r0, c0),
        rows,
        column_units: Vec::new(),
        lines: Vec::new(),
    })
}

fn read_csv(file: &Path, max_bytes: u64) -> Result<Grid, String> {
    let f = incertus_fit::open_regular(file, max_bytes)
        .map_err(|e| format!("{}: {e}", file.display()))?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(f);
    let (mut rows, mut lines) = (Vec::new(), Vec::new());
    for rec in reader.records() {
        let rec = rec.map_err(|e| format!("{}: {e}", file.display()))?;
        lines.push(rec.position().map_or(rows.len() as u64 + 1, |p| p.line()));
        rows.push(rec.iter().map(text_cell).collect());
    }
    Ok(Grid {
        name: file.display().to_string(),
        sheet: None,
        origin: (0, 0),
        rows,
        column_units: Vec::new(),
        lines,
    })
}
