//! The output of `eval --items`: text (a table of the items, then the
//! summary), JSON (`{"items": [{"item", "line", "results"}], "summary"}`,
//! each item's results exactly as `eval` gives them), CSV (one row per item
//! and measurand), and a report folder (the record of the procedure once,
//! the summary, the items table, a plot per measurand).

use incertus_gum::batch::Batch;
use incertus_gum::rounding::{significant_si as significant, write};

use super::{Evaluated, RangeFit, Summary};
use crate::report::{Style, Table};
use crate::Failure;

/// Output formats of `eval --items`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum Format {
    Text,
    Markdown,
    Json,
    Csv,
}

fn unit_of(u: &Option<String>) -> String {
    u.as_deref()
        .filter(|u| !u.trim().is_empty())
        .map(|u| format!(" {u}"))
        .unwrap_or_default()
}

/// The items table: item, measurand, estimate and U rounded together
/// (JCGM 100:2008, 7.2.6), k, the verdict and the specific risk.
pub(crate) fn items_table(items: &[Evaluated], style: Style, si: bool) -> Table {
    let with_spec = items
        .iter()
        .any(|e| e.results.iter().any(|r| r.conformity.is_some()));
    let several = items.first().is_some_and(|e| e.results.len() > 1);
    let mut header = vec!["item".to_string()];
    if several {
        header.push("measurand".into());
    }
    header.extend(["estimate", "U", "k", "unit"].map(String::from));
    if with_spec {
        header.extend(["verdict", "specific risk"].map(String::from));
    }
    let mut rows = Vec::new();
    for e in items {
        for r in &e.results {
            let w = write(r.value, r.expanded_uncertainty, style.digits);
            let mut row = vec![e.id.clone()];
            if several {
                row.push(r.name.clone());
            }
            let unit = r.unit.clone().unwrap_or_default();
            row.extend([
                w.with_power(&w.value),
                w.with_power(&w.uncertainty),
                if r.first_order {
                    significant(r.coverage_factor, 3)
                } else {
                    "MC".into()
                },
                if si {
                    incertus_units::si_symbols(&unit)
                } else {
                    unit
                },
            ]);
            if with_spec {
                match &r.conformity {
                    Some(c) => {
                        row.push(c.verdict.to_string());
                        row.push(format!("{} {}", c.risk_kind, c.risk_text));
                    }
                    None => row.extend([String::new(), String::new()]),
                }
            }
            rows.push(row);
        }
    }
    Table { header, rows }
}

fn fit_line(f: &RangeFit, unit: &str) -> String {
    let form = if f.form == "a + b|y|" {
        "U = a + b·|y|"
    } else {
        "U = √(a² + (b·y)²)"
    };
    format!(
        "{form}: a = {}{unit}, b = {}; largest relative deviation from the items' U {} %, covers every item: {}{}",
        significant(f.a, 4),
        significant(f.b, 4),
        significant(100.0 * f.max_relative_deviation, 3),
        if f.covers_every_item { "yes" } else { "no" },
        f.note
            .as_ref()
            .map(|n| format!(" ({n})"))
            .unwrap_or_default()
    )
}

/// The summary as lines of text.
pub(crate) fn summary_lines(s: &Summary) -> Vec<String> {
    let mut lines = Vec::new();
    for m in &s.measurands {
        let unit = unit_of(&m.unit);
        let plural = if m.items == 1 { "" } else { "s" };
        lines.push(format!(
            "summary of {} over {} item{plural}",
            m.measurand, m.items
        ));
        if let (Some(a), Some(r), Some(x)) = (
            m.accepted,
            m.rejected,
            m.expected_nonconforming_among_accepted,
        ) {
            lines.push(format!("  accepted {a}, rejected {r}"));
            lines.push(format!(
                "  expected nonconforming among the accepted: {} (the sum of their specific consumer's risks; JCGM 106:2012, clause 9, applied to the batch)",
                significant(x, 3)
            ));
        }
        lines.push(format!(
            "  values from {} to {}{unit}",
            significant(m.range[0], 8),
            significant(m.range[1], 8)
        ));
        if let Some(why) = &m.not_fitted {
            lines.push(format!("  U over the range not fitted: {why}"));
        }
        for f in &m.uncertainty_over_range {
            lines.push(format!("  {}", fit_line(f, &unit)));
        }
    }
    lines
}

/// The CSV rows: one per item and measurand, full precision.
pub(crate) fn csv(items: &[Evaluated]) -> String {
    use crate::tables::{csv_field, table_number};
    let mut s = String::from(
        "item,measurand,unit,estimate,standard_uncertainty,expanded_uncertainty,coverage_factor,\
         coverage_probability,effective_dof,method,verdict,specific_risk\n",
    );
    for e in items {
        for r in &e.results {
            let first = r.first_order;
            let fields = [
                csv_field(&e.id),
                csv_field(&r.name),
                csv_field(r.unit.as_deref().unwrap_or("")),
                table_number(r.value),
                r.standard_uncertainty.map(table_number).unwrap_or_default(),
                table_number(r.expanded_uncertainty),
                if first {
                    table_number(r.coverage_factor)
                } else {
                    String::new()
                },
                table_number(r.coverage_probability),
                if first {
                    r.dof_used.map(table_number).unwrap_or_default()
                } else {
                    String::new()
                },
                if first { "first order" } else { "Monte Carlo" }.to_string(),
                r.conformity
                    .as_ref()
                    .map(|c| c.verdict.to_string())
                    .unwrap_or_default(),
                r.conformity
                    .as_ref()
                    .map(|c| table_number(c.specific_risk))
                    .unwrap_or_default(),
            ];
            s.push_str(&fields.join(","));
            s.push('\n');
        }
    }
    s
}

/// JSON: every item's results exactly as `eval` gives them, and the summary.
pub(crate) fn json(items: &[Evaluated], summary: &Summary) -> serde_json::Value {
    serde_json::json!({
        "items": items.iter().map(|e| serde_json::json!({
            "item": e.id,
            "line": e.line,
            "results": e.report.as_ref().map(|r| serde_json::to_value(&r.results).expect("plain data")),
        })).collect::<Vec<_>>(),
        "summary": serde_json::to_value(summary).expect("plain data"),
        "program": {"name": "incertus", "version": env!("CARGO_PKG_VERSION")},
    })
}

/// The output in `format`.
pub(crate) fn render(
    format: Format,
    batch: &Batch,
    items: &[Evaluated],
    summary: &Summary,
    style: Style,
) -> String {
    let title = batch
        .model()
        .title
        .clone()
        .unwrap_or_else(|| "Items".into());
    match format {
        Format::Json => {
            let mut s = serde_json::to_string_pretty(&json(items, summary)).expect("plain data");
            s.push('\n');
            s
        }
        Format::Csv => csv(items),
        Format::Text => {
            let n = items.len();
            let mut s = format!("{title}: {n} item{}\n\n", if n == 1 { "" } else { "s" });
            s.push_str(&crate::report::aligned_table(&items_table(
                items, style, false,
            )));
            s.push('\n');
            for l in summary_lines(summary) {
                s.push_str(&l);
                s.push('\n');
            }
            s
        }
        Format::Markdown => markdown(&title, items, summary, style),
    }
}

fn markdown(title: &str, items: &[Evaluated], summary: &Summary, style: Style) -> String {
    let mut s = format!("# {}\n\n## Summary\n\n", crate::report::md_escape(title));
    for l in summary_lines(summary) {
        s.push_str(&format!("- {}\n", crate::report::md_escape(l.trim())));
    }
    s.push_str(&format!("\n## Items ({})\n\n", items.len()));
    crate::report::md_table(&mut s, &items_table(items, style, true));
    s
}

/// Write the report folder of a table of items.
pub(crate) fn write_folder(
    dir: &std::path::Path,
    _force: bool,
    batch: &Batch,
    items: &[Evaluated],
    summary: &Summary,
    style: Style,
    record: &crate::record::Record,
) -> Result<Vec<String>, Failure> {
    let title = batch
        .model()
        .title
        .clone()
        .unwrap_or_else(|| "Items".into());
    let mut plots = Vec::new();
    let mut not_drawn = Vec::new();
    for (k, m) in summary.measurands.iter().enumerate() {
        let file = format!("items_{}.svg", crate::plots::slug(&m.measurand));
        match crate::plots::items_svg(items, k) {
            Ok(svg) => plots.push((
                file,
                format!(
                    "{} of every item with its coverage interval y ± U, against the tolerance limits",
                    m.measurand
                ),
                svg,
            )),
            Err(e) => not_drawn.push(format!("{file}: {e}")),
        }
    }
    let html = crate::html::items_document(
        &title,
        batch.model(),
        &items_table(items, style, true),
        &summary_lines(summary),
        record,
        &plots,
        &not_drawn,
    );
    let mut json = json(items, summary);
    if let Some(o) = json.as_object_mut() {
        o.insert("record".into(), record.json());
    }
    let mut files = vec![
        ("report.html".to_string(), html),
        (
            "report.md".into(),
            format!(
                "{}\n{}",
                markdown(&title, items, summary, style),
                record.markdown(crate::report::md_escape)
            ),
        ),
        ("items.csv".into(), csv(items)),
        (
            "result.json".into(),
            format!(
                "{}\n",
                serde_json::to_string_pretty(&json).expect("plain data")
            ),
        ),
    ];
    for (f, _, svg) in &plots {
        files.push((f.clone(), svg.clone()));
    }
    crate::atomic::write_folder(dir, &files).map_err(|e| {
        Failure::input(format!(
            "cannot write the report folder {}: {e} (nothing of it was changed)",
            dir.display()
        ))
    })?;
    let mut written: Vec<String> = files.into_iter().map(|(n, _)| n).collect();
    written.extend(not_drawn.iter().map(|n| format!("(not drawn: {n})")));
    Ok(written)
}
