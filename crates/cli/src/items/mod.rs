//! `incertus eval MODEL --items TABLE.csv`: one model over a table of items.
//!
//! A laboratory writes its budget once per procedure and applies it to
//! every item it measures. Each row of the table is one item: a column
//! named after an input sets its estimate; a column `INPUT.KEY` sets any
//! key a model file allows for that input (`x.standard_uncertainty`,
//! `x.half_width`, `x.observations` as a space-separated series, ...). Keys
//! that by themselves define an evaluation replace the model's evaluation
//! of that input, others replace only themselves
//! (`InputDescription::with_keys`). The column `item` (or the one
//! `--item-column` names) identifies the row; without one, rows are
//! numbered. Columns whose title begins with `#` are notes and not used;
//! lines beginning with `#` are comments.
//!
//! Every cell is read and every item evaluated before anything is printed
//! or written; a bad cell, an invalid input or a failed evaluation is an
//! error naming the table's line, the column and the item. The symbolic
//! work is done once (`gum::batch`); items are evaluated in parallel, in
//! the table's order. With `--mc` each item gets its own Monte Carlo run
//! whose seed is fixed by the given seed and the item's row, whatever the
//! number of threads.

mod output;
mod summary;

use std::io::Write;
use std::path::Path;

use incertus_gum::batch::{Batch, ItemError};
use incertus_gum::description::{item_key_kind, InputDescription, KeyValue};
use incertus_gum::Report;
use rayon::prelude::*;

use crate::Failure;

pub use summary::{range_fits, RangeFit};
pub(crate) use summary::{summarise, Summary};

/// One column of the table and what it sets.
#[derive(Clone, Debug)]
enum Column {
    Item,
    Note,
    /// (input, key) — key `value` for a column named after an input.
    Key(String, String),
}

/// One item: its identifier, the table's line and its changed inputs.
#[derive(Clone, Debug)]
pub(crate) struct Item {
    pub id: String,
    pub line: u64,
    pub changed: Vec<InputDescription>,
}

/// The conformity of one item's result: what tables and the summary use.
#[derive(Clone, Debug)]
pub(crate) struct ItemConformity {
    pub verdict: incertus_gum::conformity::Verdict,
    pub risk_kind: incertus_gum::conformity::RiskKind,
    pub specific_risk: f64,
    /// The specific risk in words (a count of trials says only what it can).
    pub risk_text: String,
    pub lower: Option<f64>,
    pub upper: Option<f64>,
}

/// One measurand's reported result for one item, as tables, the summary
/// and the plots use it (the full result is kept only for JSON and report
/// folders, so that a large table does not hold every budget in memory).
#[derive(Clone, Debug)]
pub(crate) struct ItemResult {
    pub name: String,
    pub unit: Option<String>,
    pub value: f64,
    pub standard_uncertainty: Option<f64>,
    pub expanded_uncertainty: f64,
    pub coverage_probability: f64,
    pub interval: [f64; 2],
    pub coverage_factor: f64,
    pub dof_used: Option<f64>,
    pub first_order: bool,
    pub conformity: Option<ItemConformity>,
}

impl ItemResult {
    fn of(r: &incertus_gum::MeasurandResult) -> Self {
        let rep = &r.reported;
        ItemResult {
            name: r.name.clone(),
            unit: r.unit.clone(),
            value: rep.value,
            standard_uncertainty: rep.standard_uncertainty,
            expanded_uncertainty: rep.expanded_uncertainty,
            coverage_probability: rep.coverage_probability,
            interval: rep.coverage_interval,
            coverage_factor: r.coverage_factor,
            dof_used: r.effective_dof_used,
            first_order: rep.method == incertus_gum::Method::FirstOrder,
            conformity: r.conformity.as_ref().map(|c| ItemConformity {
                verdict: c.verdict,
                risk_kind: c.specific_risk_kind,
                specific_risk: c.specific_risk,
                risk_text: c.risk_text(),
                lower: c.lower_limit,
                upper: c.upper_limit,
            }),
        }
    }
}

/// An item evaluated.
#[derive(Debug)]
pub(crate) struct Evaluated {
    pub id: String,
    pub line: u64,
    pub results: Vec<ItemResult>,
    /// The full results, when the output needs them (JSON, report folder).
    pub report: Option<Report>,
}

/// The columns of the table from its header.
fn columns(
    header: &csv::StringRecord,
    batch: &Batch,
    item_column: Option<&str>,
    table: &Path,
) -> Result<Vec<Column>, Failure> {
    let at = |col: usize, msg: String| {
        Failure::input(format!("{}:1: column {} : {msg}", table.display(), col + 1))
    };
    let names: Vec<&str> = batch
        .model()
        .inputs
        .iter()
        .map(|i| i.name.as_str())
        .collect();
    let mut out = Vec::new();
    let mut seen: Vec<(String, usize)> = Vec::new();
    let item_title = item_column.unwrap_or("item");
    if let Some(c) = item_column {
        if !header.iter().any(|h| h.trim() == c) {
            return Err(Failure::input(format!(
                "{}:1: --item-column {c:?}: the table has no such column (its columns: {})",
                table.display(),
                header.iter().collect::<Vec<_>>().join(", ")
            )));
        }
    }
    for (k, title) in header.iter().enumerate() {
        let t = title.trim();
        if t.is_empty() {
            return Err(at(k, "a column without a title; give every column a title (an input, INPUT.KEY, item, or #note)".into()));
        }
        if let Some((_, first)) = seen.iter().find(|(s, _)| s == t) {
            return Err(at(
                k,
                format!("`{t}` is also the title of column {}", first + 1),
            ));
        }
        seen.push((t.to_string(), k));
        if t == item_title {
            out.push(Column::Item);
            continue;
        }
        if t.starts_with('#') {
            out.push(Column::Note);
            continue;
        }
        let (input, key) = match t.split_once('.') {
            Some((i, k)) => (i, k),
            None => (t, "value"),
        };
        if !names.contains(&input) {
            let hint = incertus_gum::description::closest_name(input, names.iter().copied())
                .map(|n| format!("; did you mean `{n}`?"))
                .unwrap_or_default();
            let measurand = batch.model().measurands.iter().any(|m| m.name == input);
            return Err(at(
                k,
                format!(
                    "`{t}`: the model has no input `{input}`{}{hint} (a column is an input, INPUT.KEY, `{item_title}`, or a note whose title begins with #)",
                    if measurand { " (it is a measurand: the table gives inputs)" } else { "" }
                ),
            ));
        }
        if item_key_kind(key).is_none() {
            return Err(at(
                k,
                format!(
                    "`{t}`: `{key}` is not a key a table of items can set; keys: value, standard_uncertainty, \
                     expanded_uncertainty, coverage_factor, dof, relative_reliability, distribution, half_width, \
                     lower, upper, beta, limit_half_width, shape, scale, observations, pooled_standard_deviation, pooled_dof"
                ),
            ));
        }
        out.push(Column::Key(input.to_string(), key.to_string()));
    }
    Ok(out)
}

/// A cell as the key's value.
fn cell_value(key: &str, cell: &str) -> Result<KeyValue, String> {
    let number = |s: &str| -> Result<f64, String> {
        let v: f64 = s.parse().map_err(|_| format!("`{s}` is not a number"))?;
        if v.is_finite() {
            Ok(v)
        } else {
            Err(format!("`{s}` is not a finite number"))
        }
    };
    match item_key_kind(key) {
        Some("word") => Ok(KeyValue::Text(cell.to_string())),
        Some("series") => {
            let xs: Result<Vec<f64>, String> = cell
                .split(|c: char| c.is_whitespace() || c == ';')
                .filter(|s| !s.is_empty())
                .map(number)
                .collect();
            Ok(KeyValue::Numbers(xs.map_err(|e| {
                format!("{e} (observations are numbers separated by spaces)")
            })?))
        }
        _ => number(cell).map(KeyValue::Number),
    }
}

/// An input a row changes: its name, its keys and values, their columns.
type InputCells = (String, Vec<(String, KeyValue)>, Vec<usize>);

/// Read the table into items (every cell checked, nothing evaluated).
pub(crate) fn read_items(
    table: &Path,
    batch: &Batch,
    item_column: Option<&str>,
    max_rows: usize,
    max_bytes: u64,
) -> Result<Vec<Item>, Failure> {
    let file = incertus_fit::open_regular(table, max_bytes)
        .map_err(|e| Failure::input(format!("{}: {e}", table.display())))?;
    // Lines beginning with `#` are comments, as in the data files of fits.
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(false)
        .comment(Some(b'#'))
        .from_reader(file);
    let header = reader
        .headers()
        .map_err(|e| Failure::input(format!("{}: {}", table.display(), csv_error(&e))))?
        .clone();
    let cols = columns(&header, batch, item_column, table)?;
    let has_item = cols.iter().any(|c| matches!(c, Column::Item));
    let item_col = cols.iter().position(|c| matches!(c, Column::Item));
    // First pass, in order: the records, their lines and identifiers.
    let mut rows: Vec<(csv::StringRecord, u64, String)> = Vec::new();
    let mut ids: std::collections::HashMap<String, u64> = std::collections::HashMap::new();
    for (n, record) in reader.records().enumerate() {
        let record = record
            .map_err(|e| Failure::input(format!("{}: {}", table.display(), csv_error(&e))))?;
        let line = record.position().map_or(n as u64 + 2, |p| p.line());
        if rows.len() >= max_rows {
            return Err(Failure::input(format!(
                "{}: more than {max_rows} items; the limit is INCERTUS_MAX_DATA_ROWS",
                table.display()
            )));
        }
        if record.iter().all(|c| c.trim().is_empty()) {
            continue;
        }
        let id = match item_col {
            Some(k) => record.get(k).unwrap_or("").trim().to_string(),
            None => (rows.len() + 1).to_string(),
        };
        let title = header.get(item_col.unwrap_or(0)).unwrap_or("").trim();
        if has_item && id.is_empty() {
            return Err(Failure::input(format!(
                "{}:{line}: column `{title}`: the item has no identifier",
                table.display()
            )));
        }
        if let Some(first) = ids.insert(id.clone(), line) {
            return Err(Failure::input(format!(
                "{}:{line}: item {id}, column `{title}`: the item `{id}` is also on line {first}; identifiers must differ",
                table.display()
            )));
        }
        rows.push((record, line, id));
    }
    // Second pass, in parallel: every cell read and applied to its input.
    let made: Vec<Result<Item, Failure>> = rows
        .into_par_iter()
        .map(|(record, line, id)| item_of(&record, line, id, &cols, &header, batch, table))
        .collect();
    let items: Vec<Item> = made.into_iter().collect::<Result<_, _>>()?;
    if items.is_empty() {
        return Err(Failure::input(format!(
            "{}: the table has no items (a header line and one line per item)",
            table.display()
        )));
    }
    Ok(items)
}

/// One item from its record: every cell read and the inputs it changes.
fn item_of(
    record: &csv::StringRecord,
    line: u64,
    id: String,
    cols: &[Column],
    header: &csv::StringRecord,
    batch: &Batch,
    table: &Path,
) -> Result<Item, Failure> {
    let here = |col: usize, msg: String| {
        Failure::input(format!(
            "{}:{line}: item {id}, column `{}`: {msg}",
            table.display(),
            header.get(col).unwrap_or("").trim()
        ))
    };
    // The keys of each input this row sets, in the columns' order.
    let mut by_input: Vec<InputCells> = Vec::new();
    for (k, col) in cols.iter().enumerate() {
        let Column::Key(input, key) = col else {
            continue;
        };
        let cell = record.get(k).unwrap_or("").trim();
        if cell.is_empty() {
            return Err(here(
                k,
                "the cell is empty; every item gives every column of the table (the model's value is never taken for a missing one)".into(),
            ));
        }
        let v = cell_value(key, cell).map_err(|m| here(k, m))?;
        match by_input.iter_mut().find(|(i, ..)| i == input) {
            Some((_, keys, at)) => {
                keys.push((key.clone(), v));
                at.push(k);
            }
            None => by_input.push((input.clone(), vec![(key.clone(), v)], vec![k])),
        }
    }
    let mut changed = Vec::with_capacity(by_input.len());
    for (input, keys, at) in by_input {
        let base = batch.input(&input).expect("columns name inputs");
        let d = base.with_keys(&keys).map_err(|(key, msg)| {
            let col = keys
                .iter()
                .position(|(k, _)| *k == key)
                .map_or(at[0], |p| at[p]);
            here(col, format!("`{input}`: {msg}"))
        })?;
        changed.push(d);
    }
    Ok(Item { id, line, changed })
}

fn csv_error(e: &csv::Error) -> String {
    match e.kind() {
        csv::ErrorKind::UnequalLengths {
            pos,
            expected_len,
            len,
        } => format!(
            "line {}: {len} cells where the header has {expected_len}",
            pos.as_ref().map_or(0, |p| p.line())
        ),
        csv::ErrorKind::Utf8 { pos, .. } => format!(
            "line {}: not UTF-8 text",
            pos.as_ref().map_or(0, |p| p.line())
        ),
        _ => e.to_string(),
    }
}

/// The seed of item `row`'s Monte Carlo run: SplitMix64 of the given seed
/// and the row (Steele, Lea and Flood, OOPSLA 2014), so that items get
/// independent, reproducible streams whatever the number of threads.
pub(crate) fn item_seed(seed: u64, row: usize) -> u64 {
    let mut z = seed ^ (row as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// Evaluate every item (in parallel, results in the table's order); the
/// first failure in the table's order is the error.
pub(crate) fn evaluate_items(
    items: &[Item],
    batch: &Batch,
    mc: Option<&incertus_mc::Settings>,
    table: &Path,
    keep_full: bool,
) -> Result<Vec<Evaluated>, Failure> {
    let results: Vec<Result<Evaluated, (usize, ItemError)>> = items
        .par_iter()
        .enumerate()
        .map(|(row, it)| {
            let model = batch.model_with(&it.changed).map_err(|e| (row, e))?;
            let mut report = batch.evaluate_model(&model).map_err(|e| (row, e))?;
            if let Some(s) = mc {
                let s = incertus_mc::Settings {
                    seed: item_seed(s.seed, row),
                    threads: Some(1),
                    ..s.clone()
                };
                let m = incertus_mc::run(&model, &report, &s).map_err(|e| {
                    let message = e.to_string();
                    (
                        row,
                        ItemError {
                            key: String::new(),
                            message,
                        },
                    )
                })?;
                incertus_mc::attach(&model, &mut report, &m);
            }
            if keep_full {
                crate::name_options(&mut report);
            }
            Ok(Evaluated {
                id: it.id.clone(),
                line: it.line,
                results: report.results.iter().map(ItemResult::of).collect(),
                report: keep_full.then_some(report),
            })
        })
        .collect();
    let mut out = Vec::with_capacity(results.len());
    for r in results {
        match r {
            Ok(e) => out.push(e),
            Err((row, e)) => {
                let it = &items[row];
                return Err(Failure::input(format!(
                    "{}:{}: item {}{}: {}",
                    table.display(),
                    it.line,
                    it.id,
                    if e.key.is_empty() {
                        String::new()
                    } else {
                        format!(", column `{}`", e.key)
                    },
                    crate::with_options(&e.message)
                )));
            }
        }
    }
    Ok(out)
}

/// Run `eval MODEL --items TABLE`.
#[allow(clippy::too_many_arguments)]
pub(crate) fn run(
    file: &Path,
    table: &Path,
    item_column: Option<&str>,
    opts: incertus_gum::propagate::Options,
    mc: Option<incertus_mc::Settings>,
    format: output::Format,
    style: crate::report::Style,
    report_dir: Option<(&Path, bool, crate::record::Record)>,
    out: &mut dyn Write,
    err: &mut dyn Write,
) -> Result<(), Failure> {
    let limits = opts.limits;
    // The model and the description it was validated from, from one read.
    let (description, model) = incertus_gum::load_file_described(file, &limits)
        .map_err(|e| Failure::input(e.to_string()))?;
    let batch = Batch::new(description, model, opts);
    let items = read_items(
        table,
        &batch,
        item_column,
        limits.max_data_rows,
        limits.max_file_bytes,
    )?;
    let keep_full = format == output::Format::Json || report_dir.is_some();
    let evaluated = evaluate_items(&items, &batch, mc.as_ref(), table, keep_full)?;
    let summary = summarise(&evaluated);
    let shown = output::render(format, &batch, &evaluated, &summary, style);
    let _ = out.write_all(shown.as_bytes());
    if let Some((dir, force, record)) = report_dir {
        let files = output::write_folder(dir, force, &batch, &evaluated, &summary, style, &record)?;
        crate::say_written(
            matches!(format, output::Format::Text),
            out,
            err,
            dir,
            &files,
        );
    }
    Ok(())
}

pub(crate) use output::Format;
