//! Tables for other programs: `results.csv` (one row per measurand) and
//! `budget.csv` (the budget rows with their kind and units). UTF-8, a
//! header row, every figure in full precision.

use crate::report::sensitivity_unit;
use incertus_gum::Report;

pub(crate) fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn opt(v: Option<f64>) -> String {
    v.map(table_number).unwrap_or_default()
}

/// A number for a table another program reads: every digit of the f64 in
/// its shortest form, with an exponent only far from 1 (`2830628.82…`,
/// `1.6e-5`).
pub(crate) fn table_number(v: f64) -> String {
    if v == 0.0 || (v.abs() >= 1e-4 && v.abs() < 1e15) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

/// One row per measurand for other programs (`results.csv`): the reported
/// result with its unit, u, U, k, p, ν_eff and method, the first-order and
/// Monte Carlo figures, and the conformity verdict. UTF-8, a header row,
/// full precision; an empty ν_eff means infinite (or, with k, that the
/// Monte Carlo result is reported).
pub fn results_csv(report: &Report) -> String {
    let mut out = String::from(
        "measurand,unit,estimate,standard_uncertainty,expanded_uncertainty,coverage_factor,\
         coverage_probability,effective_dof,method,interval_lower,interval_upper,\
         first_order_estimate,first_order_standard_uncertainty,monte_carlo_standard_uncertainty,\
         monte_carlo_symmetric_lower,monte_carlo_symmetric_upper,monte_carlo_shortest_lower,\
         monte_carlo_shortest_upper,verdict\n",
    );
    for r in &report.results {
        let rep = &r.reported;
        let mc = r.monte_carlo.as_ref();
        let mcf = |f: &dyn Fn(&incertus_gum::distributions::McMeasurand) -> f64| {
            mc.map(|m| table_number(f(m))).unwrap_or_default()
        };
        let fields = [
            csv_field(&r.name),
            csv_field(r.unit.as_deref().unwrap_or("")),
            table_number(rep.value),
            rep.standard_uncertainty
                .map(table_number)
                .unwrap_or_default(),
            table_number(rep.expanded_uncertainty),
            // k and ν_eff belong to the first-order result; a Monte Carlo
            // interval comes from the distribution of the trials.
            match rep.method {
                incertus_gum::Method::FirstOrder => table_number(r.coverage_factor),
                _ => String::new(),
            },
            table_number(rep.coverage_probability),
            match rep.method {
                incertus_gum::Method::FirstOrder => {
                    r.effective_dof_used.map(table_number).unwrap_or_default()
                }
                _ => String::new(),
            },
            match rep.method {
                incertus_gum::Method::FirstOrder => "first order".into(),
                incertus_gum::Method::MonteCarlo => "Monte Carlo".into(),
            },
            table_number(rep.coverage_interval[0]),
            table_number(rep.coverage_interval[1]),
            table_number(r.value),
            table_number(r.standard_uncertainty),
            mc.filter(|m| m.finite_variance)
                .map(|m| table_number(m.standard_uncertainty))
                .unwrap_or_default(),
            mcf(&|m| m.symmetric_interval[0]),
            mcf(&|m| m.symmetric_interval[1]),
            mcf(&|m| m.shortest_interval[0]),
            mcf(&|m| m.shortest_interval[1]),
            r.conformity
                .as_ref()
                .map(|c| c.verdict.to_string())
                .unwrap_or_default(),
        ];
        out.push_str(&fields.join(","));
        out.push('\n');
    }
    // A fit on its own: its parameters are the results.
    if report.results.is_empty() {
        for f in &report.fits {
            for (k, p) in f.result.parameters.iter().enumerate() {
                let mut fields = vec![String::new(); 19];
                fields[0] = csv_field(&format!("{}.{}", f.name, p.name));
                fields[1] = csv_field(&crate::html_fit::parameter_unit_as_written(f, k));
                fields[2] = table_number(p.value);
                fields[3] = table_number(p.standard_uncertainty);
                fields[7] = f.result.dof.to_string();
                fields[8] = "least squares".into();
                out.push_str(&fields.join(","));
                out.push('\n');
            }
        }
    }
    out
}

/// The data of a fit with its diagnostics (`fit_data_NAME.csv` of a report
/// folder; `fit --format csv`): one row per data row, the excluded ones
/// marked with the reason.
pub fn fit_data_csv(f: &incertus_fit::FitResult) -> String {
    let mut s = String::from(
        "row,x,y,residual,standardized_residual,studentized_residual,leverage,cooks_distance,flagged,excluded,note\n",
    );
    for p in &f.points {
        let note = if p.excluded {
            f.exclude_reason.clone().unwrap_or_default()
        } else {
            p.flags.join("; ")
        };
        s.push_str(&format!(
            "{},{},{},{},{},{},{},{},{},{},{}\n",
            p.row,
            table_number(p.x),
            table_number(p.y),
            table_number(p.residual),
            table_number(p.standardized_residual),
            table_number(p.studentized_residual),
            table_number(p.leverage),
            table_number(p.cooks_distance),
            p.flagged,
            p.excluded,
            csv_field(&note)
        ));
    }
    s
}

/// The rows of the fits for `budget.csv`: each parameter (kind
/// `fit_parameter`, with its unit), each covariance (`fit_covariance`) and
/// the diagnostics (`fit_diagnostic`: dof, residual standard deviation, R²,
/// χ², excluded rows with the reason).
fn fit_rows(report: &Report) -> String {
    let mut out = String::new();
    let mut row = |fit: &str, kind: &str, what: &str, value: String, u: String, unit: String| {
        let mut fields = vec![String::new(); 15];
        fields[0] = csv_field(fit);
        fields[1] = kind.into();
        fields[2] = csv_field(what);
        fields[3] = value;
        fields[4] = u;
        fields[12] = csv_field(&unit);
        out.push_str(&fields.join(","));
        out.push('\n');
    };
    for f in &report.fits {
        let r = &f.result;
        for (k, p) in r.parameters.iter().enumerate() {
            row(
                &f.name,
                "fit_parameter",
                &p.name,
                table_number(p.value),
                table_number(p.standard_uncertainty),
                crate::html_fit::parameter_unit_as_written(f, k),
            );
        }
        for (i, a) in r.parameters.iter().enumerate() {
            for (j, b) in r.parameters.iter().enumerate().skip(i) {
                row(
                    &f.name,
                    "fit_covariance",
                    &format!("{} {}", a.name, b.name),
                    table_number(r.covariance[i][j]),
                    String::new(),
                    String::new(),
                );
            }
        }
        row(
            &f.name,
            "fit_diagnostic",
            "dof",
            r.dof.to_string(),
            String::new(),
            String::new(),
        );
        row(
            &f.name,
            "fit_diagnostic",
            "residual_standard_deviation",
            table_number(r.residual_standard_deviation),
            String::new(),
            f.y_unit
                .clone()
                .filter(|u| u.trim() != "1")
                .unwrap_or_default(),
        );
        row(
            &f.name,
            "fit_diagnostic",
            "r_squared",
            table_number(r.r_squared),
            String::new(),
            String::new(),
        );
        if let Some(c) = r.chi_squared {
            row(
                &f.name,
                "fit_diagnostic",
                "chi_squared",
                table_number(c),
                String::new(),
                String::new(),
            );
        }
        for x in &r.excluded_rows {
            row(
                &f.name,
                "fit_diagnostic",
                "excluded_row",
                x.to_string(),
                String::new(),
                String::new(),
            );
        }
        if let Some(reason) = &r.exclude_reason {
            row(
                &f.name,
                "fit_diagnostic",
                "exclude_reason",
                csv_field(reason),
                String::new(),
                String::new(),
            );
        }
    }
    out
}

/// The budgets as CSV (full precision; an empty dof means infinite).
pub fn csv(report: &Report) -> String {
    let mut out = String::from(
        "measurand,kind,input,value,standard_uncertainty,dof,evaluation,distribution,sensitivity,sensitivity_formula,contribution,share,unit,sensitivity_unit,contribution_unit\n",
    );
    for r in &report.results {
        // The reported result first (full precision), with its unit and method.
        let rep = &r.reported;
        let rows: [(&str, String); 10] = [
            (
                "method",
                match rep.method {
                    incertus_gum::Method::FirstOrder => "first_order".into(),
                    incertus_gum::Method::MonteCarlo => "monte_carlo".into(),
                },
            ),
            ("unit", csv_field(r.unit.as_deref().unwrap_or(""))),
            ("value", table_number(rep.value)),
            (
                "standard_uncertainty",
                rep.standard_uncertainty
                    .map(table_number)
                    .unwrap_or_default(),
            ),
            (
                "expanded_uncertainty",
                table_number(rep.expanded_uncertainty),
            ),
            (
                "coverage_probability",
                table_number(rep.coverage_probability),
            ),
            (
                "coverage_interval_lower",
                table_number(rep.coverage_interval[0]),
            ),
            (
                "coverage_interval_upper",
                table_number(rep.coverage_interval[1]),
            ),
            ("coverage_factor", table_number(r.coverage_factor)),
            ("effective_dof", opt(r.effective_dof_used)),
        ];
        for (what, v) in rows {
            let mut fields = vec![String::new(); 15];
            fields[0] = csv_field(&r.name);
            fields[1] = "result".into();
            fields[2] = what.into();
            fields[3] = v;
            fields[12] = csv_field(r.unit.as_deref().unwrap_or(""));
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        for b in &r.budget {
            let fields = [
                csv_field(&r.name),
                "input".into(),
                csv_field(&b.input),
                table_number(b.value),
                table_number(b.standard_uncertainty),
                opt(b.dof),
                b.evaluation.to_string(),
                b.distribution.to_string(),
                table_number(b.sensitivity),
                csv_field(&b.sensitivity_formula),
                table_number(b.contribution),
                table_number(b.share),
                // The input's own unit (value, u); the coefficient's is y's
                // per x's, the contribution is in the measurand's.
                csv_field(b.unit.as_deref().unwrap_or("")),
                csv_field(&sensitivity_unit(r, b)),
                csv_field(r.unit.as_deref().unwrap_or("")),
            ];
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        for c in &r.correlation_budget {
            let fields = [
                csv_field(&r.name),
                "correlation".into(),
                csv_field(&format!("{} {}", c.inputs[0], c.inputs[1])),
                table_number(c.coefficient),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                table_number(c.term),
                table_number(c.share),
                // The covariance term is in the square of the measurand's unit.
                String::new(),
                String::new(),
                csv_field(&incertus_units::squared(r.unit.as_deref().unwrap_or(""))),
            ];
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        if let Some(c) = &r.conformity {
            for (what, v) in conformity_rows(c) {
                let mut fields = vec![String::new(); 15];
                fields[0] = csv_field(&r.name);
                fields[1] = "conformity".into();
                fields[2] = what.into();
                fields[3] = v;
                out.push_str(&fields.join(","));
                out.push('\n');
            }
        }
    }
    out.push_str(&fit_rows(report));
    out
}

/// The numbers of a conformity assessment as (quantity, value) pairs for
/// CSV; an empty value is an absent limit.
fn conformity_rows(c: &incertus_gum::conformity::Conformity) -> Vec<(&'static str, String)> {
    let mut rows = vec![
        ("lower_limit", opt(c.lower_limit)),
        ("upper_limit", opt(c.upper_limit)),
        ("rule", csv_field(c.rule.name())),
        ("guard_band", opt(c.guard_band)),
    ];
    match c.acceptance_interval {
        Some([a, b]) => {
            rows.push(("acceptance_lower", opt(a)));
            rows.push(("acceptance_upper", opt(b)));
        }
        None => rows.push(("acceptance_interval", "empty".into())),
    }
    rows.push((
        "conformance_probability",
        table_number(c.conformance_probability),
    ));
    rows.push(("verdict", c.verdict.to_string()));
    rows.push((
        if c.specific_risk_kind == incertus_gum::conformity::RiskKind::Consumer {
            "specific_consumer_risk"
        } else {
            "specific_producer_risk"
        },
        table_number(c.specific_risk),
    ));
    if let Some(m) = &c.monte_carlo {
        rows.push((
            "monte_carlo_conformance_probability",
            table_number(m.conformance_probability),
        ));
    }
    if let Some(g) = &c.global_risks {
        rows.push(("global_consumer_risk", table_number(g.consumer_risk)));
        rows.push(("global_producer_risk", table_number(g.producer_risk)));
    }
    rows
}
