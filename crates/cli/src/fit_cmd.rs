//! `incertus fit`: a least-squares fit of columns of a CSV file.

use std::io::Write;
use std::path::PathBuf;

use clap::{Args, ValueEnum};
use incertus_fit::{fit, read_columns_limited, FitRequest};

use crate::Failure;

#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum FitFormat {
    Text,
    Json,
    Csv,
}

#[derive(Args, Debug)]
pub struct FitArgs {
    /// The data file (CSV with a header line)
    file: PathBuf,
    /// Column of the abscissa
    #[arg(long, value_name = "COLUMN")]
    x: String,
    /// Column of the ordinate
    #[arg(long, value_name = "COLUMN")]
    y: String,
    /// Column of the standard uncertainties of y (weighted fit)
    #[arg(long, value_name = "COLUMN")]
    y_uncertainty: Option<String>,
    /// Column of the standard uncertainties of x (York's method; needs --y-uncertainty)
    #[arg(long, value_name = "COLUMN")]
    x_uncertainty: Option<String>,
    /// Degree of the polynomial
    #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u32).range(0..=20))]
    degree: u32,
    /// Data rows to exclude (1-based, the first row after the header is 1), e.g. 4,7
    #[arg(long, value_name = "ROWS", value_delimiter = ',')]
    exclude: Vec<usize>,
    /// Why the rows are excluded (recorded in the report; required with --exclude)
    #[arg(long, value_name = "TEXT")]
    exclude_reason: Option<String>,
    /// For a weighted fit, multiply the covariance by χ²/ν (the stated u(y) are then relative only)
    #[arg(long)]
    scale_by_chi_squared: bool,
    /// Unit of the x column (for the report's tables and plot axes), e.g. mg/L
    #[arg(long, value_name = "UNIT")]
    x_unit: Option<String>,
    /// Unit of the y column, e.g. mV
    #[arg(long, value_name = "UNIT")]
    y_unit: Option<String>,
    /// A name for the fit in the report (default: "Y against X")
    #[arg(long, value_name = "NAME")]
    name: Option<String>,
    /// Who evaluated: named in the report's record (blank for signing otherwise)
    #[arg(long, value_name = "NAME")]
    evaluated_by: Option<String>,
    /// Who checked the evaluation: named in the report's record
    #[arg(long, value_name = "NAME")]
    checked_by: Option<String>,
    /// Output format
    #[arg(long, value_enum, default_value_t = FitFormat::Text)]
    format: FitFormat,
    /// Also write a report folder: HTML, JSON and SVG plots of the fit
    #[arg(long, value_name = "DIR")]
    report: Option<PathBuf>,
    /// Replace the report files in an existing, non-empty report folder
    #[arg(long)]
    force: bool,
}

pub fn run(a: &FitArgs, out: &mut dyn Write, err: &mut dyn Write) -> Result<(), Failure> {
    if let Some(dir) = &a.report {
        crate::files::check_report_folder(dir, a.force, std::slice::from_ref(&a.file))?;
    }
    if !a.exclude.is_empty() && a.exclude_reason.is_none() {
        return Err(Failure::input(
            "give --exclude-reason with --exclude: every exclusion is recorded with its reason",
        ));
    }
    if a.exclude_reason
        .as_deref()
        .is_some_and(|r| r.trim().is_empty())
    {
        return Err(Failure::input(
            "--exclude-reason is blank: write why the points are excluded (the audit trail records it)",
        ));
    }
    for (what, u) in [("--x-unit", &a.x_unit), ("--y-unit", &a.y_unit)] {
        if let Some(u) = u {
            if let Err(e) = incertus_units::parse(u) {
                return Err(Failure::input(format!("{what}: {}", e.render(u))));
            }
        }
    }
    let fit_name = a
        .name
        .clone()
        .unwrap_or_else(|| format!("{} against {}", a.y, a.x));
    let mut names = vec![a.x.as_str(), a.y.as_str()];
    if let Some(u) = &a.y_uncertainty {
        names.push(u);
    }
    if let Some(u) = &a.x_uncertainty {
        names.push(u);
    }
    let cols = read_columns_limited(&a.file, &names, crate::limits()?.max_data_rows)
        .map_err(|e| Failure::input(e.message))?;
    let uy = a.y_uncertainty.as_ref().map(|_| cols.columns[2].as_slice());
    let ux = a
        .x_uncertainty
        .as_ref()
        .map(|_| cols.columns[if a.y_uncertainty.is_some() { 3 } else { 2 }].as_slice());
    let result = fit(&FitRequest {
        x: &cols.columns[0],
        y: &cols.columns[1],
        u_y: uy,
        u_x: ux,
        rows: cols.rows.clone(),
        degree: a.degree as usize,
        exclude: a.exclude.clone(),
        exclude_reason: a.exclude_reason.clone(),
        scale_by_chi_squared: a.scale_by_chi_squared,
        diagnostics: true,
    })
    .map_err(|e| Failure::input(format!("{}: {}", a.file.display(), e.message)))?;
    let text = match a.format {
        FitFormat::Text => crate::report::fit_text(
            &format!(
                "least-squares fit of {} against {} from {}",
                a.y,
                a.x,
                a.file.display()
            ),
            &result,
            [
                &crate::report::with_unit(&a.x, a.x_unit.as_deref()),
                &crate::report::with_unit(&a.y, a.y_unit.as_deref()),
            ],
        ),
        FitFormat::Json => {
            let mut s = serde_json::to_string_pretty(&result).expect("plain data");
            s.push('\n');
            s
        }
        FitFormat::Csv => crate::tables::fit_data_csv(&result),
    };
    let _ = out.write_all(text.as_bytes());
    if let Some(dir) = &a.report {
        let empty = incertus_gum::Report {
            title: Some(format!("Least-squares fit: {fit_name}")),
            fits: vec![incertus_gum::model::NamedFit {
                name: fit_name.clone(),
                data: a.file.display().to_string(),
                x: a.x.clone(),
                y: a.y.clone(),
                x_unit: a.x_unit.clone(),
                y_unit: a.y_unit.clone(),
                result: result.clone(),
            }],
            results: Vec::new(),
            correlation_matrix: incertus_gum::propagate::NamedMatrix {
                names: vec![],
                matrix: vec![],
            },
            covariance_matrix: incertus_gum::propagate::NamedMatrix {
                names: vec![],
                matrix: vec![],
            },
            notes: Vec::new(),
            effective_dof_rounding: incertus_gum::DofRounding::Truncate,
        };
        let files = crate::files::write_report(
            dir,
            a.force,
            &empty,
            None,
            None,
            crate::report::Style { digits: 2 },
            &crate::record::Record::new(
                std::slice::from_ref(&a.file),
                fit_settings(a),
                a.evaluated_by.clone(),
                a.checked_by.clone(),
            ),
        )?;
        crate::say_written(matches!(a.format, FitFormat::Text), out, err, dir, &files);
    }
    Ok(())
}

/// The settings of a fit, as its record states them.
fn fit_settings(a: &FitArgs) -> Vec<(String, String)> {
    let none = || "none".to_string();
    vec![
        (
            "x column".into(),
            format!(
                "{}{}",
                a.x,
                a.x_unit
                    .as_ref()
                    .map(|u| format!(" ({u})"))
                    .unwrap_or_default()
            ),
        ),
        (
            "y column".into(),
            format!(
                "{}{}",
                a.y,
                a.y_unit
                    .as_ref()
                    .map(|u| format!(" ({u})"))
                    .unwrap_or_default()
            ),
        ),
        (
            "u(y) column".into(),
            a.y_uncertainty.clone().unwrap_or_else(none),
        ),
        (
            "u(x) column".into(),
            a.x_uncertainty.clone().unwrap_or_else(none),
        ),
        ("degree".into(), a.degree.to_string()),
        (
            "excluded rows".into(),
            if a.exclude.is_empty() {
                none()
            } else {
                a.exclude
                    .iter()
                    .map(|r| r.to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            },
        ),
        (
            "reason for the exclusions".into(),
            a.exclude_reason.clone().unwrap_or_else(none),
        ),
        (
            "covariance scaled by χ²/ν".into(),
            if a.scale_by_chi_squared { "yes" } else { "no" }.into(),
        ),
    ]
}
