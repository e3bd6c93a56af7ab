//! The fits of an HTML report: for each fit its parameters with their
//! units, their covariance and correlation, the diagnostics, the excluded
//! rows with the reason, and the data with residuals.

use incertus_gum::model::NamedFit;
use incertus_gum::rounding::significant_si as significant;
use incertus_gum::Report;

use crate::html::esc;
use crate::report::Table;

/// The unit of the parameter of x^power in a polynomial fit of y on x,
/// unit(y)/unit(x)^power, as the SI Brochure prints it.
pub(crate) fn parameter_unit(f: &NamedFit, power: usize) -> String {
    incertus_units::si_symbols(&parameter_unit_as_written(f, power))
}

/// The same, as written in model files (for CSV).
pub(crate) fn parameter_unit_as_written(f: &NamedFit, power: usize) -> String {
    let y = f.y_unit.as_deref().unwrap_or("");
    let x = f.x_unit.as_deref().unwrap_or("");
    incertus_units::quotient(y, &incertus_units::power(x, power as i32))
}

/// `quantity / unit` for a column title, the unit as the SI Brochure
/// prints it.
fn axis(name: &str, unit: &Option<String>) -> String {
    crate::report::with_unit(
        name,
        unit.as_deref().map(incertus_units::si_symbols).as_deref(),
    )
}

/// The section of every fit of the report.
pub(crate) fn fits_section(report: &Report) -> String {
    let mut s = String::from("<h2 id=\"fits\">Fits</h2>\n");
    for f in &report.fits {
        s.push_str(&one_fit(f));
    }
    s
}

fn one_fit(f: &NamedFit) -> String {
    let r = &f.result;
    let used = r.points.iter().filter(|p| !p.excluded).count();
    let mut s = format!(
        "<h3>Fit {}: {} against {}</h3>\n<p>Data: <code>{}</code>; {}; {} points used of {}, {} parameters, residual degrees of freedom ν = {}.</p>\n",
        esc(&f.name),
        esc(&f.y),
        esc(&f.x),
        esc(&f.data),
        esc(&r.method.to_string()),
        used,
        r.points.len(),
        r.parameters.len(),
        r.dof
    );
    let params = Table {
        header: vec![
            "parameter".into(),
            "value".into(),
            "standard uncertainty".into(),
            "unit".into(),
        ],
        rows: r
            .parameters
            .iter()
            .enumerate()
            .map(|(k, p)| {
                vec![
                    p.name.clone(),
                    significant(p.value, 8),
                    significant(p.standard_uncertainty, 5),
                    parameter_unit(f, k),
                ]
            })
            .collect(),
    };
    s.push_str(&crate::html::table(
        &format!("Parameters of the fit {}", f.name),
        &params,
        &[1, 2],
        "fit-parameters",
    ));
    if r.parameters.len() > 1 {
        let names: Vec<String> = r.parameters.iter().map(|p| p.name.clone()).collect();
        s.push_str(&crate::html::matrix_tables(
            &format!("Covariance matrix of the parameters of {}", f.name),
            &names,
            &r.covariance,
            &|v| significant(v, 6),
        ));
        s.push_str(&crate::html::matrix_tables(
            &format!("Correlation matrix of the parameters of {}", f.name),
            &names,
            &r.correlation,
            &|v| format!("{v:.4}"),
        ));
    }
    s.push_str(&diagnostics(f));
    s.push_str(&data_table(f));
    s
}

fn diagnostics(f: &NamedFit) -> String {
    let r = &f.result;
    let mut rows = vec![
        vec![
            "residual standard deviation".to_string(),
            format!(
                "{}{}",
                significant(r.residual_standard_deviation, 5),
                f.y_unit
                    .as_deref()
                    .filter(|u| !matches!(u.trim(), "" | "1"))
                    .map(|u| format!(" {}", incertus_units::si_symbols(u)))
                    .unwrap_or_default()
            ),
        ],
        vec![
            "R²".into(),
            if r.r_squared.is_finite() {
                format!("{:.6}", r.r_squared)
            } else {
                "n/a".into()
            },
        ],
    ];
    if let (Some(c), Some(cn), Some(pv)) = (r.chi_squared, r.chi_squared_per_dof, r.p_value) {
        rows.push(vec![
            "χ², χ²/ν, P(χ²_ν ≥ χ²)".into(),
            format!(
                "{}, {}, {}; covariance {}",
                significant(c, 5),
                significant(cn, 4),
                significant(pv, 3),
                if r.scaled_by_chi_squared {
                    "multiplied by χ²/ν (stated u(y) relative only)"
                } else {
                    "not scaled (stated u(y) taken as known)"
                }
            ),
        ]);
    }
    if !r.excluded_rows.is_empty() {
        rows.push(vec![
            "excluded rows".into(),
            format!(
                "{} — reason: {}",
                r.excluded_rows
                    .iter()
                    .map(|x| x.to_string())
                    .collect::<Vec<_>>()
                    .join(", "),
                r.exclude_reason.as_deref().unwrap_or("(none given)")
            ),
        ]);
    }
    if let Some(w) = &r.without_exclusions {
        rows.push(vec![
            "without the exclusions".into(),
            w.parameters
                .iter()
                .map(|p| {
                    format!(
                        "{} = {} (u = {})",
                        p.name,
                        significant(p.value, 8),
                        significant(p.standard_uncertainty, 5)
                    )
                })
                .collect::<Vec<_>>()
                .join(", "),
        ]);
    }
    crate::html::table(
        &format!("Diagnostics of the fit {}", f.name),
        &Table {
            header: vec!["quantity".into(), "value".into()],
            rows,
        },
        &[],
        "fit-diagnostics",
    )
}

fn data_table(f: &NamedFit) -> String {
    let r = &f.result;
    let t = Table {
        header: vec![
            "row".into(),
            axis(&f.x, &f.x_unit),
            axis(&f.y, &f.y_unit),
            axis("residual", &f.y_unit),
            "studentised residual".into(),
            "leverage".into(),
            "Cook's D".into(),
            "note".into(),
        ],
        rows: r
            .points
            .iter()
            .map(|p| crate::report::point_cells(r, p, 10))
            .collect(),
    };
    crate::html::table(
        &format!("Data of the fit {} with residuals", f.name),
        &t,
        &[0, 1, 2, 3, 4, 5, 6],
        "fit-data",
    )
}
