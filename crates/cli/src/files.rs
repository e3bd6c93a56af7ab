//! `--report DIR`: a folder a laboratory can file: a self-contained HTML
//! report (inline styles and SVG plots, no scripts, no network), the same
//! content as Markdown, the budget as CSV, the full result as JSON, and each
//! plot as an SVG file. Every file is written to a temporary name and
//! renamed; an existing folder that is not empty is refused unless
//! `--force` is given.
//!
//! Plots (plotters, SVG, greyscale): contributions to u²(y); the Monte Carlo
//! histogram with the first-order distribution and both coverage intervals;
//! for fits, the data with the fitted line and its 95 % confidence band, and
//! the residuals with flagged and excluded points marked.

use std::path::{Path, PathBuf};

use incertus_gum::Report;
use incertus_mc::McReport;

use crate::report::{self, Style};
use crate::Failure;

/// Write the report folder.
pub fn write_report(
    dir: &Path,
    force: bool,
    report: &Report,
    mc: Option<&McReport>,
    model: Option<&incertus_gum::Model>,
    style: Style,
    record: &crate::record::Record,
) -> Result<Vec<String>, Failure> {
    check_report_folder(dir, force, &[])?;
    let mut files: Vec<(String, String)> = Vec::new();
    let crate::plots::Plots {
        drawn: plots,
        not_drawn,
    } = crate::plots::plots(report, mc);
    // Markdown and HTML print units as the SI Brochure does (mm³, °C, µL).
    let si = report::with_si_units(report);
    let md = report::markdown(&si, style, mc);
    let json = with_record(&report::json(report, mc), record, model);
    let csv = crate::tables::csv(report);
    let html = crate::html::document(&crate::html::Parts {
        report: &si,
        mc,
        model,
        style,
        record,
        plots: &plots,
        not_drawn: &not_drawn,
    });
    files.push(("report.html".into(), html));
    files.push((
        "report.md".into(),
        format!(
            "{md}\n{}{}",
            model.map(markdown_inputs).unwrap_or_default(),
            record.markdown(report::md_escape)
        ),
    ));
    files.push(("budget.csv".into(), csv));
    files.push(("results.csv".into(), crate::tables::results_csv(report)));
    files.push(("result.json".into(), json));
    for f in &report.fits {
        files.push((
            format!("fit_data_{}.csv", crate::plots::slug(&f.name)),
            crate::tables::fit_data_csv(&f.result),
        ));
    }
    for (file, _, svg) in plots {
        files.push((file, svg));
    }
    crate::atomic::write_folder(dir, &files).map_err(|e| {
        Failure::input(format!(
            "cannot write the report folder {}: {e} (nothing of it was changed)",
            dir.display()
        ))
    })?;
    let mut written: Vec<String> = files.into_iter().map(|(name, _)| name).collect();
    written.extend(not_drawn.iter().map(|n| format!("(not drawn: {n})")));
    Ok(written)
}

/// The inputs of the model as stated, with their sources and the
/// observations of every Type A input, as Markdown.
fn markdown_inputs(m: &incertus_gum::Model) -> String {
    let mut s = String::from("## Inputs\n\n");
    report::md_table(&mut s, &crate::html::inputs_table(m));
    for i in &m.inputs {
        if let incertus_gum::description::InputEvaluation::Observations { values, .. } = &i.stated {
            let shown: Vec<String> = values
                .iter()
                .map(|v| incertus_gum::rounding::significant_si(*v, 15))
                .collect();
            s.push_str(&format!(
                "\nObservations of {}{}: {}\n",
                report::md_escape(&i.name),
                i.unit
                    .as_deref()
                    .map(|u| format!(" ({})", incertus_units::si_symbols(u)))
                    .unwrap_or_default(),
                shown.join(", ")
            ));
        }
    }
    s.push('\n');
    s
}

/// The JSON report with the record of the evaluation added: the record's
/// fields, and with a model its description and every input as stated
/// (description, source, unit, the evaluation in words, the observations).
fn with_record(
    json: &str,
    record: &crate::record::Record,
    model: Option<&incertus_gum::Model>,
) -> String {
    match serde_json::from_str::<serde_json::Value>(json) {
        Ok(serde_json::Value::Object(mut o)) => {
            let mut r = record.json();
            if let (Some(m), Some(obj)) = (model, r.as_object_mut()) {
                obj.insert("model_description".into(), serde_json::json!(m.description));
                let inputs: Vec<serde_json::Value> = m
                    .inputs
                    .iter()
                    .map(|i| {
                        let observations = match &i.stated {
                            incertus_gum::description::InputEvaluation::Observations {
                                values,
                                ..
                            } => Some(values.clone()),
                            _ => None,
                        };
                        serde_json::json!({
                            "name": i.name,
                            "description": i.description,
                            "source": i.source,
                            "unit": i.unit,
                            "evaluation": crate::html::stated_text(&i.stated, i.unit.as_deref().unwrap_or("")),
                            "observations": observations,
                        })
                    })
                    .collect();
                obj.insert("inputs".into(), serde_json::Value::Array(inputs));
            }
            o.insert("record".into(), r);
            let mut s =
                serde_json::to_string_pretty(&serde_json::Value::Object(o)).expect("plain data");
            s.push('\n');
            s
        }
        _ => json.to_string(),
    }
}

/// Whether a report may be written to `dir`, checked before any work: a
/// new or empty folder, or with `--force` a folder holding nothing but an
/// earlier report — never one holding a file this evaluation reads
/// (`inputs`: the model and its data files).
pub fn check_report_folder(dir: &Path, force: bool, inputs: &[PathBuf]) -> Result<(), Failure> {
    if !dir.exists() {
        return Ok(());
    }
    if !dir.is_dir() {
        return Err(Failure::input(format!(
            "{} exists and is not a folder",
            dir.display()
        )));
    }
    let entries: Vec<String> = std::fs::read_dir(dir)
        .map_err(|e| Failure::input(format!("cannot read the folder {}: {e}", dir.display())))?
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    if entries.is_empty() {
        return Ok(());
    }
    if !force {
        return Err(Failure::input(format!(
            "the report folder {} exists and is not empty; choose another, or give --force to replace an earlier report there",
            dir.display()
        )));
    }
    let folder = dir.canonicalize().unwrap_or_else(|_| dir.to_path_buf());
    for input in inputs {
        if let Ok(p) = input.canonicalize() {
            if p.starts_with(&folder) {
                return Err(Failure::input(format!(
                    "{} holds {}, which this evaluation reads; --force never replaces what the program is given: choose another report folder",
                    dir.display(),
                    input.display()
                )));
            }
        }
    }
    if let Some(other) = entries.iter().find(|n| !crate::atomic::is_report_file(n)) {
        return Err(Failure::input(format!(
            "{} holds `{other}`, which is not a file of an incertus report; --force replaces an earlier report only: choose another report folder",
            dir.display()
        )));
    }
    Ok(())
}
