//! `incertus check MODEL --budget FILE`: a hand-made budget checked where
//! it lives, in a spreadsheet (`.xlsx`, `.xls`, `.ods`, read by calamine)
//! or a CSV table.
//!
//! The header row is found by its column titles in the budget vocabulary of
//! EA-4/02 and JCGM 100 (quantity, estimate, standard uncertainty,
//! distribution, sensitivity coefficient, contribution, degrees of
//! freedom; case-insensitive, units in parentheses allowed; `--columns`
//! maps other titles). Rows below it whose first cell names an input (or a
//! measurand the checked one uses: an intermediate quantity) are budget
//! lines; a row naming the checked measurand states its estimate and u;
//! rows labelled combined standard uncertainty, coverage factor, expanded
//! uncertainty or effective degrees of freedom state those in the first
//! number after the label. Every stated figure is compared with the
//! computed one (`compare.rs`).

mod compare;
mod grid;

use std::io::Write;
use std::path::PathBuf;

use clap::Args;

use crate::Failure;

pub(crate) use compare::own_formula_budget;
pub(crate) use grid::Grid;

/// `check MODEL --budget FILE`.
#[derive(Args, Debug)]
pub struct BudgetArgs {
    /// The spreadsheet (.xlsx, .xls, .ods) or CSV table holding the hand-made budget
    #[arg(long, value_name = "FILE")]
    pub budget: Option<PathBuf>,
    /// The sheet to read (default: the first)
    #[arg(long, value_name = "NAME", requires = "budget")]
    pub sheet: Option<String>,
    /// Map other column titles to the budget's columns, e.g.
    /// "Größe=quantity,Schätzwert=estimate,Beitrag=contribution"
    #[arg(long, value_name = "TITLE=COLUMN,...", requires = "budget")]
    pub columns: Option<String>,
    /// The measurand the budget is of (default: the model's last)
    #[arg(long, value_name = "NAME", requires = "budget")]
    pub measurand: Option<String>,
    /// Output: text, or json (every line with its cell)
    #[arg(long, value_enum, default_value_t = CheckFormat::Text)]
    pub format: CheckFormat,
}

/// Output formats of `check`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum CheckFormat {
    /// Aligned text, one line per figure
    Text,
    /// Every figure with its cell (or model-file line) and verdict
    Json,
}

/// The columns of a budget table.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub(crate) enum Col {
    Quantity,
    Estimate,
    StandardUncertainty,
    Distribution,
    Sensitivity,
    Contribution,
    Dof,
}

impl Col {
    pub(crate) fn name(self) -> &'static str {
        match self {
            Col::Quantity => "quantity",
            Col::Estimate => "estimate",
            Col::StandardUncertainty => "standard uncertainty",
            Col::Distribution => "distribution",
            Col::Sensitivity => "sensitivity coefficient",
            Col::Contribution => "contribution",
            Col::Dof => "degrees of freedom",
        }
    }

    fn from_name(s: &str) -> Option<Col> {
        Some(match s {
            "quantity" => Col::Quantity,
            "estimate" => Col::Estimate,
            "standard uncertainty" | "standard_uncertainty" | "u" => Col::StandardUncertainty,
            "distribution" => Col::Distribution,
            "sensitivity coefficient" | "sensitivity_coefficient" | "sensitivity" => {
                Col::Sensitivity
            }
            "contribution" => Col::Contribution,
            "degrees of freedom" | "degrees_of_freedom" | "dof" => Col::Dof,
            _ => return None,
        })
    }
}

/// A column title without its unit in parentheses or brackets, lower case,
/// single spaces.
fn bare_title(t: &str) -> String {
    let mut s = String::new();
    let mut depth = 0;
    for c in t.chars() {
        match c {
            '(' | '[' if depth == 0 && !s.trim().is_empty() => depth = 1,
            '(' | '[' if depth > 0 => depth += 1,
            ')' | ']' if depth > 0 => depth -= 1,
            _ if depth == 0 => s.push(c),
            _ => {}
        }
    }
    s.to_lowercase()
        .replace(['_', '\u{a0}'], " ")
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
}

/// The budget vocabulary (EA-4/02 section 6 and its examples, JCGM
/// 100:2008, 7.2; common practice for the short forms): a title's column.
fn title_col(t: &str, map: &[(String, Col)]) -> Option<Col> {
    let raw = t.trim();
    if let Some((_, c)) = map.iter().find(|(k, _)| k.eq_ignore_ascii_case(raw)) {
        return Some(*c);
    }
    let b = bare_title(raw);
    if let Some((_, c)) = map.iter().find(|(k, _)| bare_title(k) == b) {
        return Some(*c);
    }
    let compact: String = raw
        .to_lowercase()
        .chars()
        .filter(|c| !c.is_whitespace())
        .collect();
    Some(match b.as_str() {
        "quantity"
        | "input quantity"
        | "input"
        | "quantity x i"
        | "symbol"
        | "component"
        | "source of uncertainty" => Col::Quantity,
        "estimate" | "value" | "estimate x i" | "input estimate" => Col::Estimate,
        "standard uncertainty" | "standard uncertainty u(x i)" | "u(x i)" | "u(xi)" => {
            Col::StandardUncertainty
        }
        "distribution" | "probability distribution" | "type" | "type, distribution" => {
            Col::Distribution
        }
        "sensitivity coefficient"
        | "sensitivity"
        | "c i"
        | "ci"
        | "sensitivity coefficient c i" => Col::Sensitivity,
        "contribution"
        | "uncertainty contribution"
        | "contribution to the standard uncertainty"
        | "u i(y)"
        | "ui(y)"
        | "contribution u i(y)" => Col::Contribution,
        "degrees of freedom" | "dof" | "ν" | "nu" | "ν i" | "effective degrees of freedom" => {
            Col::Dof
        }
        _ => match compact.as_str() {
            "u(x_i)" | "u(xi)" => Col::StandardUncertainty,
            "c_i" | "ci" => Col::Sensitivity,
            "u_i(y)" | "ui(y)" => Col::Contribution,
            "x_i" | "xi" => Col::Estimate,
            _ => return None,
        },
    })
}

/// The header row: the first row where at least three titles are budget
/// columns (one of them the quantity), with the column of each.
pub(crate) fn find_header(
    grid: &Grid,
    map: &[(String, Col)],
) -> Option<(usize, Vec<(usize, Col)>)> {
    for (r, row) in grid.rows.iter().enumerate() {
        let mut cols: Vec<(usize, Col)> = Vec::new();
        for (c, cell) in row.iter().enumerate() {
            if let Some(col) = cell.text.as_deref().and_then(|t| title_col(t, map)) {
                if !cols.iter().any(|(_, k)| *k == col) {
                    cols.push((c, col));
                }
            }
        }
        if cols.len() >= 3 && cols.iter().any(|(_, k)| *k == Col::Quantity) {
            return Some((r, cols));
        }
    }
    None
}

/// The unit a column title states in parentheses or brackets at its end
/// (`Contribution (mg)`, `Estimate [g]`), when it is a unit.
fn title_unit(t: &str) -> Option<incertus_units::Unit> {
    let t = t.trim();
    let (open, close) = match t.chars().last()? {
        ')' => ('(', ')'),
        ']' => ('[', ']'),
        _ => return None,
    };
    let start = t.rfind(open)?;
    let inner = t[start + 1..t.len() - close.len_utf8()].trim();
    if inner.is_empty() {
        return None;
    }
    incertus_units::parse(inner).ok()
}

/// `--columns "Title=column,..."`.
fn column_map(spec: &str) -> Result<Vec<(String, Col)>, String> {
    let mut out = Vec::new();
    for part in spec.split(',').filter(|p| !p.trim().is_empty()) {
        let (title, col) = part
            .rsplit_once('=')
            .ok_or_else(|| format!("--columns: `{part}` is not TITLE=COLUMN"))?;
        let c = Col::from_name(&bare_title(col)).ok_or_else(|| {
            format!(
                "--columns: `{}` is not a budget column (quantity, estimate, standard uncertainty, distribution, \
                 sensitivity coefficient, contribution, degrees of freedom)",
                col.trim()
            )
        })?;
        out.push((title.trim().to_string(), c));
    }
    Ok(out)
}

/// Run `check MODEL --budget FILE`: exit 0 when every figure agrees, 1 on
/// any disagreement, 2 when the sheet cannot be read or understood.
pub(crate) fn run(
    model_file: &std::path::Path,
    a: &BudgetArgs,
    coverage: Option<f64>,
    out: &mut dyn Write,
) -> Result<(), Failure> {
    let unreadable = |m: String| Failure {
        message: m,
        code: crate::EXIT_USAGE,
    };
    let file = a.budget.as_ref().expect("--budget given");
    let map = column_map(a.columns.as_deref().unwrap_or("")).map_err(unreadable)?;
    let model = crate::eval_cmd::load(model_file)?;
    let report = crate::eval_cmd::evaluate(model_file, &model, coverage, false)?;
    let grid = grid::read(file, a.sheet.as_deref(), crate::limits()?.max_file_bytes)
        .map_err(unreadable)?;
    let Some((header_row, cols)) = find_header(&grid, &map) else {
        return Err(unreadable(format!(
            "{}: no header row of a budget found: a row with a quantity column and at least two more of \
             estimate, standard uncertainty, distribution, sensitivity coefficient, contribution, degrees of \
             freedom (give --columns \"Your title=quantity,...\" for other titles)",
            grid.name
        )));
    };
    let mut grid = grid;
    grid.column_units = grid.rows[header_row]
        .iter()
        .map(|c| c.text.as_deref().and_then(title_unit))
        .collect();
    let checked = compare::check(
        &grid,
        header_row,
        &cols,
        &model,
        &report,
        a.measurand.as_deref(),
    )
    .map_err(unreadable)?;
    let text = if a.format == CheckFormat::Json {
        let mut s = serde_json::to_string_pretty(&checked.json(&grid, header_row, &cols))
            .expect("plain data");
        s.push('\n');
        s
    } else {
        checked.text(&grid, header_row, &cols)
    };
    let _ = out.write_all(text.as_bytes());
    if checked.compared() == 0 {
        return Err(unreadable(format!(
            "{}: no figure of the budget could be compared (no row names an input or the measurand of the model)",
            grid.name
        )));
    }
    let bad = checked.disagreements();
    if bad > 0 {
        return Err(Failure::input(format!(
            "{bad} figure{} of {} disagree{} with the model",
            if bad == 1 { "" } else { "s" },
            grid.name,
            if bad == 1 { "s" } else { "" }
        )));
    }
    Ok(())
}
