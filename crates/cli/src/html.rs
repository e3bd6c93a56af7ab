//! The HTML report: a self-contained document a laboratory can file.
//!
//! Real tables (results, conformity, inputs, budgets, correlation terms,
//! Monte Carlo, fits) with units in their headers; print CSS for A4 and US
//! Letter (repeated table headers, no row split across pages, nothing wider
//! than the page: cells wrap, plots shrink); a table of contents on screen;
//! no scripts and nothing fetched. The budget follows EA-4/02 (section 6 and
//! its examples): quantity, estimate, standard uncertainty, distribution,
//! sensitivity coefficient with its unit, contribution u_i(y) in the unit of
//! y; correlation terms in their own table, in the square of the unit of y.

use incertus_gum::description::{CentredShape, DofGiven, InputEvaluation, LimitsGiven};
use incertus_gum::rounding::significant_si as significant;
use incertus_gum::{MeasurandResult, Method, Model, Report};
use incertus_mc::McReport;

use crate::report::{self, Style, Table};

/// Escape text for HTML.
pub(crate) fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Everything the document is made of.
pub(crate) struct Parts<'a> {
    /// The report, with units as the SI Brochure prints them.
    pub report: &'a Report,
    pub mc: Option<&'a McReport>,
    /// The model, for the inputs as stated (absent for a fit alone).
    pub model: Option<&'a Model>,
    pub style: Style,
    pub record: &'a crate::record::Record,
    /// (file, caption, SVG).
    pub plots: &'a [(String, String, String)],
    pub not_drawn: &'a [String],
}

const CSS: &str = "\
body { font-family: 'DejaVu Sans', 'Liberation Sans', Arial, sans-serif; color: #1d1d1d; max-width: 62em; margin: 2em auto; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 1.55em; margin-bottom: 0.3em; }
h2 { font-size: 1.2em; border-bottom: 1px solid #999; padding-bottom: 0.15em; margin-top: 1.8em; }
h3 { font-size: 1.02em; margin: 1.2em 0 0.4em; }
p, li { overflow-wrap: anywhere; }
table { border-collapse: collapse; margin: 0.5em 0 0.9em; font-size: 0.88em; max-width: 100%; }
caption { text-align: left; font-weight: 600; padding: 0.2em 0; caption-side: top; }
th, td { border: 1px solid #c8c8c8; padding: 0.18em 0.45em; text-align: left; vertical-align: top; overflow-wrap: anywhere; }
thead th { background: #ececec; font-weight: 600; }
tbody th { font-weight: normal; background: #f7f7f7; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
th { overflow-wrap: anywhere; }
table.budget, table.results, table.inputs, table.fit-data, table.monte-carlo { width: 100%; }
tr.total td { border-top: 2px solid #777; font-weight: 600; }
code { font-family: 'DejaVu Sans Mono', monospace; font-size: 0.92em; overflow-wrap: anywhere; }
.result { border-left: 4px solid #3b5b7a; background: #f4f6f8; padding: 0.5em 0.9em; margin: 0.6em 0; }
.warning { border-left: 4px solid #a33; background: #fbf3f3; padding: 0.3em 0.8em; }
.note { color: #333; font-size: 0.92em; }
.caution { font-size: 0.92em; color: #333; }
nav.toc { border: 1px solid #ccc; padding: 0.4em 1em; margin: 1em 0; font-size: 0.92em; }
nav.toc ol { margin: 0.3em 0; padding-left: 1.4em; }
figure { margin: 1.2em 0; }
figcaption { color: #444; font-size: 0.9em; }
svg { max-width: 100%; height: auto; display: block; }
.sign td { height: 2.2em; min-width: 12em; }
ol.observations { columns: 10em; font-size: 0.9em; }
@page { margin: 14mm 12mm; }
@media print {
  body { max-width: none; margin: 0; padding: 0; font-size: 9pt; }
  nav.toc { display: none; }
  table { font-size: 7.6pt; }
  thead { display: table-header-group; }
  tr, figure, .result, .sign { break-inside: avoid; page-break-inside: avoid; }
  h2, h3, caption { break-after: avoid; page-break-after: avoid; }
  svg { max-height: 120mm; }
  a { color: inherit; text-decoration: none; }
}
";

/// A table with a caption, header row in `<thead>` (repeated on every
/// printed page), numeric cells right-aligned.
pub(crate) fn table(caption: &str, t: &Table, numeric: &[usize], class: &str) -> String {
    let mut s = format!("<table class=\"{class}\">\n");
    if !caption.is_empty() {
        s.push_str(&format!("<caption>{}</caption>\n", esc(caption)));
    }
    s.push_str("<thead><tr>");
    for h in &t.header {
        s.push_str(&format!("<th scope=\"col\">{}</th>", esc(h)));
    }
    s.push_str("</tr></thead>\n<tbody>\n");
    for row in &t.rows {
        s.push_str("<tr>");
        for (i, c) in row.iter().enumerate() {
            if numeric.contains(&i) {
                s.push_str(&format!("<td class=\"n\">{}</td>", esc(c)));
            } else {
                s.push_str(&format!("<td>{}</td>", esc(c)));
            }
        }
        s.push_str("</tr>\n");
    }
    s.push_str("</tbody>\n</table>\n");
    s
}

/// Columns of a table whose header is in `names`.
fn columns(t: &Table, names: &[&str]) -> Vec<usize> {
    t.header
        .iter()
        .enumerate()
        .filter(|(_, h)| names.iter().any(|n| h.starts_with(n)))
        .map(|(i, _)| i)
        .collect()
}

fn anchor(prefix: &str, name: &str) -> String {
    let slug: String = name
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '-' })
        .collect();
    // Names differing only in non-ASCII letters stay distinct.
    let h = name
        .bytes()
        .fold(0u32, |h, b| h.wrapping_mul(31).wrapping_add(b as u32));
    format!("{prefix}-{slug}-{:x}", h & 0xffff)
}

/// The HTML document.
pub(crate) fn document(p: &Parts) -> String {
    let report = p.report;
    let title = report
        .title
        .clone()
        .unwrap_or_else(|| "Uncertainty evaluation".into());
    let mut toc: Vec<(String, String)> = Vec::new();
    let mut body = String::new();
    if !report.results.is_empty() {
        toc.push(("results".into(), "Results".into()));
        body.push_str(&results_section(p));
    }
    if report.results.iter().any(|r| r.conformity.is_some()) {
        toc.push(("conformity".into(), "Conformity".into()));
        body.push_str(&conformity_section(report));
    }
    if let Some(m) = p.model {
        if !m.inputs.is_empty() {
            toc.push(("inputs".into(), "Inputs".into()));
            body.push_str(&inputs_section(m));
        }
    }
    for r in &report.results {
        let id = anchor("budget", &r.name);
        toc.push((id.clone(), format!("Uncertainty budget of {}", r.name)));
        body.push_str(&budget_section(&id, r, report, p.style));
    }
    if let Some(mc) = p.mc {
        toc.push(("monte-carlo".into(), "Propagation of distributions".into()));
        body.push_str(&monte_carlo_section(report, mc));
    }
    if report.results.len() > 1 {
        toc.push((
            "measurand-correlation".into(),
            "Correlation of the measurands".into(),
        ));
        body.push_str(&measurand_correlation(report));
    }
    if !report.fits.is_empty() {
        toc.push(("fits".into(), "Fits".into()));
        body.push_str(&crate::html_fit::fits_section(report));
    }
    let notes = notes_section(p);
    if !notes.is_empty() {
        toc.push(("notes".into(), "Notes".into()));
        body.push_str(&notes);
    }
    toc.push(("record".into(), "Record of the evaluation".into()));
    body.push_str(&p.record.html(esc));
    if !p.plots.is_empty() || !p.not_drawn.is_empty() {
        toc.push(("plots".into(), "Plots".into()));
        body.push_str(&plots_section(p));
    }
    let mut s = format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n\
         <meta name=\"generator\" content=\"incertus {}\"/>\n<title>{}</title>\n<style>\n{CSS}</style>\n</head>\n<body>\n<h1>{}</h1>\n",
        env!("CARGO_PKG_VERSION"),
        esc(&title),
        esc(&title)
    );
    s.push_str(&format!(
        "<p class=\"caution\">Evaluation of measurement uncertainty by incertus {} (JCGM 100:2008{}). \
         The results are an aid to, not a substitute for, the laboratory's validation of its methods \
         and its quality system; check them against the laboratory's procedures before they go on a certificate.</p>\n",
        env!("CARGO_PKG_VERSION"),
        if p.mc.is_some() { ", JCGM 101:2008" } else { "" }
    ));
    s.push_str("<nav class=\"toc\"><b>Contents</b>\n<ol>\n");
    for (id, text) in &toc {
        s.push_str(&format!("<li><a href=\"#{id}\">{}</a></li>\n", esc(text)));
    }
    s.push_str("</ol>\n</nav>\n");
    s.push_str(&body);
    s.push_str("</body>\n</html>\n");
    s
}

/// The reported result of each measurand stated once, in words a
/// certificate can quote, then the table of results.
fn results_section(p: &Parts) -> String {
    let report = p.report;
    let mut s = String::from("<h2 id=\"results\">Results</h2>\n");
    for r in &report.results {
        s.push_str(&format!(
            "<p class=\"result\">{}</p>\n",
            esc(&report::result_sentence(r, p.style))
        ));
        if let Some(d) = &r.description {
            s.push_str(&format!(
                "<p class=\"note\">{}: {}</p>\n",
                esc(&r.name),
                esc(d)
            ));
        }
        for w in &r.warnings {
            s.push_str(&format!(
                "<p class=\"warning\">Warning ({}): {}</p>\n",
                esc(&r.name),
                esc(w)
            ));
        }
    }
    let t = Table {
        header: [
            "measurand",
            "unit",
            "estimate y",
            "standard uncertainty u(y)",
            "expanded uncertainty U",
            "coverage factor k",
            "coverage probability p",
            "ν_eff",
            "coverage interval",
            "method",
        ]
        .map(String::from)
        .to_vec(),
        rows: report
            .results
            .iter()
            .map(|r| {
                let rep = &r.reported;
                let first = rep.method == Method::FirstOrder;
                vec![
                    r.name.clone(),
                    r.unit.clone().unwrap_or_default(),
                    significant(rep.value, 10),
                    rep.standard_uncertainty
                        .map_or("none (no finite variance)".to_string(), |u| {
                            significant(u, 5)
                        }),
                    significant(rep.expanded_uncertainty, 5),
                    if first {
                        significant(r.coverage_factor, 4)
                    } else {
                        "-".into()
                    },
                    format!("{} %", significant(100.0 * rep.coverage_probability, 4)),
                    if first {
                        match r.effective_dof_used {
                            None => "∞".into(),
                            Some(v) => significant(v, 4),
                        }
                    } else {
                        "-".into()
                    },
                    format!(
                        "[{}, {}]",
                        significant(rep.coverage_interval[0], 8),
                        significant(rep.coverage_interval[1], 8)
                    ),
                    if first {
                        "law of propagation (JCGM 100:2008)".into()
                    } else {
                        "propagation of distributions (JCGM 101:2008)".into()
                    },
                ]
            })
            .collect(),
    };
    s.push_str(&table(
        "Reported results (full digits of the evaluation; the statements above are rounded by JCGM 100:2008, 7.2.6)",
        &t,
        &[2, 3, 4, 5, 6, 7],
        "results",
    ));
    s
}

fn conformity_section(report: &Report) -> String {
    let mut s = String::from(
        "<h2 id=\"conformity\">Conformity with the specification (JCGM 106:2012)</h2>\n",
    );
    for r in &report.results {
        if r.conformity.is_none() {
            continue;
        }
        // The same figures as the text: each line of the assessment is a
        // label, two or more spaces, and its value; deeper-indented lines
        // continue the value above.
        let mut rows: Vec<Vec<String>> = Vec::new();
        let (mut notes, mut statement) = (Vec::new(), String::new());
        for line in report::conformity_lines(r).iter().skip(1) {
            let t = line.trim_start();
            if let Some(n) = t.strip_prefix("note: ") {
                notes.push(n.to_string());
            } else if let Some(st) = t.strip_prefix("statement: ") {
                statement = st.to_string();
            } else if line.starts_with("    ") {
                if let Some(last) = rows.last_mut() {
                    last[1].push_str("; ");
                    last[1].push_str(t);
                }
            } else {
                match t.split_once("  ") {
                    Some((label, value)) => {
                        rows.push(vec![label.to_string(), value.trim().to_string()])
                    }
                    None => rows.push(vec![t.to_string(), String::new()]),
                }
            }
        }
        let t = Table {
            header: vec!["quantity".into(), "value".into()],
            rows,
        };
        s.push_str(&table(
            &format!("Conformity of {}", r.name),
            &t,
            &[],
            "conformity",
        ));
        s.push_str(&format!(
            "<p class=\"result\"><b>Statement.</b> {}</p>\n",
            esc(&statement)
        ));
        for n in notes {
            s.push_str(&format!("<p class=\"note\">Note: {}</p>\n", esc(&n)));
        }
    }
    s.push_str(
        "<p class=\"caution\">The decision rule and the acceptable risk are the laboratory's and its customer's \
         choice (ISO/IEC 17025:2017, 7.1.3); check them against the quality system before a statement goes on a \
         certificate.</p>\n",
    );
    s
}

fn dof_given(d: &Option<DofGiven>) -> String {
    match d {
        None => String::new(),
        Some(DofGiven::Dof(v)) => format!(", ν = {}", significant(*v, 6)),
        Some(DofGiven::RelativeReliability(r)) => {
            format!(
                ", relative reliability {} (JCGM 100:2008, G.4.2)",
                significant(*r, 4)
            )
        }
    }
}

/// How an input was evaluated, in the words and units it was stated in.
pub(crate) fn stated_text(e: &InputEvaluation, unit: &str) -> String {
    let n = |v: f64| significant(v, 15);
    let u = if unit.is_empty() {
        String::new()
    } else {
        format!(" {unit}")
    };
    let shape = |s: &CentredShape| match s {
        CentredShape::Normal => "normal",
        CentredShape::StudentT => "Student's t",
    };
    match e {
        InputEvaluation::Exact { value } => format!("exact value {}{u}", n(*value)),
        InputEvaluation::Standard {
            value,
            standard_uncertainty,
            dof,
            shape: sh,
        } => format!(
            "Type B: {}{u} with standard uncertainty u = {}{u}, {}{}",
            n(*value),
            n(*standard_uncertainty),
            shape(sh),
            dof_given(dof)
        ),
        InputEvaluation::Expanded {
            value,
            expanded_uncertainty,
            coverage_factor,
            dof,
            shape: sh,
        } => format!(
            "Type B: {}{u} with expanded uncertainty U = {}{u} for k = {}: u = U/k (JCGM 100:2008, 4.3.3), {}{}",
            n(*value),
            n(*expanded_uncertainty),
            n(*coverage_factor),
            shape(sh),
            dof_given(dof)
        ),
        InputEvaluation::Limits { limits, shape, dof } => {
            let where_ = match limits {
                LimitsGiven::HalfWidth { value, half_width } => {
                    format!("{}{u} ± a, half-width a = {}{u}", n(*value), n(*half_width))
                }
                LimitsGiven::Bounds { lower, upper, value } => format!(
                    "limits [{}, {}]{u}{}",
                    n(*lower),
                    n(*upper),
                    value.map(|v| format!(", estimate {}{u}", n(v))).unwrap_or_default()
                ),
            };
            format!("Type B: {}, {} distribution{}", where_, shape.name().replace('_', " "), dof_given(dof))
        }
        InputEvaluation::Observations { values, pooled } => format!(
            "Type A: mean of {} observations (listed below){}",
            values.len(),
            pooled
                .map(|p| format!(
                    ", pooled standard deviation {}{u} with {} dof (JCGM 100:2008, 4.2.4)",
                    n(p.standard_deviation),
                    n(p.dof)
                ))
                .unwrap_or_default()
        ),
        InputEvaluation::Gamma { shape, scale, dof } => format!(
            "Type B: gamma distribution, shape {}, scale {}{u}{}",
            n(*shape),
            n(*scale),
            dof_given(dof)
        ),
        InputEvaluation::Exponential { value, dof } => format!(
            "Type B: exponential distribution with mean {}{u}{}",
            n(*value),
            dof_given(dof)
        ),
        InputEvaluation::Constant { name } => {
            format!("constant `{name}` of the built-in table (CODATA)")
        }
        InputEvaluation::FitParameter { fit, parameter } => {
            format!("parameter `{parameter}` of the fit `{fit}` (see Fits)")
        }
        other => format!("{other:?}"),
    }
}

/// The inputs as stated: quantity, description, unit, estimate, u, the
/// evaluation in the words and units it was given in, and its source.
pub(crate) fn inputs_table(m: &Model) -> Table {
    let rows: Vec<Vec<String>> = m
        .inputs
        .iter()
        .map(|i| {
            let unit = i
                .unit
                .as_deref()
                .map(incertus_units::si_symbols)
                .unwrap_or_default();
            let (v, u) = i.shown();
            vec![
                i.name.clone(),
                i.description.clone().unwrap_or_default(),
                unit.clone(),
                significant(v, 8),
                significant(u, 5),
                stated_text(&i.stated, &unit),
                i.source.clone().unwrap_or_default(),
            ]
        })
        .collect();
    Table {
        header: [
            "quantity",
            "description",
            "unit",
            "estimate",
            "standard uncertainty",
            "evaluation as stated",
            "source",
        ]
        .map(String::from)
        .to_vec(),
        rows,
    }
}

fn inputs_section(m: &Model) -> String {
    let mut s = String::from("<h2 id=\"inputs\">Inputs</h2>\n");
    let t = inputs_table(m);
    s.push_str(&table("Input quantities", &t, &[3, 4], "inputs"));
    for i in &m.inputs {
        if let InputEvaluation::Observations { values, .. } = &i.stated {
            let unit = i
                .unit
                .as_deref()
                .map(incertus_units::si_symbols)
                .unwrap_or_default();
            s.push_str(&format!(
                "<h3>Observations of {}{}</h3>\n<ol class=\"observations\">\n",
                esc(&i.name),
                if unit.is_empty() {
                    String::new()
                } else {
                    format!(" / {}", esc(&unit))
                }
            ));
            for v in values {
                s.push_str(&format!("<li>{}</li>\n", esc(&significant(*v, 15))));
            }
            s.push_str("</ol>\n");
        }
    }
    if !m.correlations.is_empty() {
        let t = Table {
            header: vec![
                "inputs".into(),
                "correlation coefficient r".into(),
                "from".into(),
            ],
            rows: m
                .correlations
                .iter()
                .map(|c| {
                    vec![
                        format!("{}, {}", m.inputs[c.a].name, m.inputs[c.b].name),
                        significant(c.coefficient, 6),
                        match (&c.from_fit, c.from_observations) {
                            (Some(f), _) => format!("fit {f}"),
                            (None, true) => "observed together (JCGM 100:2008, 5.2.3)".into(),
                            (None, false) => "stated".into(),
                        },
                    ]
                })
                .collect(),
        };
        s.push_str(&table(
            "Correlations between inputs",
            &t,
            &[1],
            "correlations",
        ));
    }
    s
}

fn budget_section(id: &str, r: &MeasurandResult, report: &Report, style: Style) -> String {
    let mut s = format!(
        "<h2 id=\"{id}\">Uncertainty budget of {}</h2>\n<p>Measurement model: <code>{} = {}</code></p>\n",
        esc(&r.name),
        esc(&r.name),
        esc(&r.formula)
    );
    let t = report::budget_table(r, true);
    let numeric = columns(
        &t,
        &[
            "estimate",
            "standard uncertainty",
            "dof",
            "sensitivity coefficient",
            "contribution",
            "share",
        ],
    );
    let mut html = table(
        &format!(
            "Budget of {} (EA-4/02 layout; u_i({}) = |c_i| u(x_i))",
            r.name, r.name
        ),
        &t,
        &numeric,
        "budget",
    );
    // The total under the contributions: u_c.
    let cols = t.header.len();
    let total = format!(
        "<tr class=\"total\"><td colspan=\"{}\">combined standard uncertainty u_c({}) = √(Σ u_i² + correlation terms)</td><td class=\"n\">{}</td><td class=\"n\">100 %</td></tr>\n",
        cols - 2,
        esc(&r.name),
        esc(&significant(r.standard_uncertainty, 5))
    );
    html = html.replace(
        "</tbody>\n</table>\n",
        &format!("{total}</tbody>\n</table>\n"),
    );
    s.push_str(&html);
    if let Some(ct) = report::correlation_table(r, true) {
        s.push_str(&table(
            &format!("Correlation terms of u²({})", r.name),
            &ct,
            &[1, 3, 4],
            "correlation-terms",
        ));
    }
    if let Some(n) = report::share_note(r) {
        s.push_str(&format!("<p class=\"note\">Note: {}</p>\n", esc(&n)));
    }
    let facts = Table {
        header: vec!["quantity".into(), "value".into()],
        rows: report::first_order_facts(r, report)
            .into_iter()
            .map(|(k, v)| vec![k, v])
            .collect(),
    };
    s.push_str(&table(
        &format!("First-order evaluation of {} (JCGM 100:2008)", r.name),
        &facts,
        &[],
        "facts",
    ));
    s.push_str(&format!(
        "<p class=\"note\">First-order result, rounded: {}</p>\n",
        esc(&report::rounded_statement(r, style))
    ));
    s.push_str("<h3>Sensitivity coefficients as formulas</h3>\n<ul>\n");
    for b in &r.budget {
        s.push_str(&format!(
            "<li><code>∂{}/∂{} = {}</code></li>\n",
            esc(&r.name),
            esc(&b.input),
            esc(&b.sensitivity_formula)
        ));
    }
    s.push_str("</ul>\n");
    s
}

fn monte_carlo_section(report: &Report, mc: &McReport) -> String {
    let mut s =
        String::from("<h2 id=\"monte-carlo\">Propagation of distributions (JCGM 101:2008)</h2>\n");
    s.push_str(&format!(
        "<p>{} trials, seed {}{}.</p>\n",
        mc.trials,
        mc.seed,
        mc.adaptive
            .as_ref()
            .map(|a| format!(
                ", adaptive procedure (JCGM 101:2008, 7.9) with ndig = {}",
                a.ndig
            ))
            .unwrap_or_default()
    ));
    let rows: Vec<Vec<String>> = report
        .results
        .iter()
        .filter_map(|r| r.monte_carlo.as_ref().map(|m| (r, m)))
        .map(|(r, m)| {
            let v = &m.validation;
            vec![
                r.name.clone(),
                r.unit.clone().unwrap_or_default(),
                significant(m.value, 10),
                if m.finite_variance {
                    significant(m.standard_uncertainty, 5)
                } else {
                    "none (no finite variance)".to_string()
                },
                format!(
                    "[{}, {}]",
                    significant(m.symmetric_interval[0], 8),
                    significant(m.symmetric_interval[1], 8)
                ),
                format!(
                    "[{}, {}]",
                    significant(m.shortest_interval[0], 8),
                    significant(m.shortest_interval[1], 8)
                ),
                format!(
                    "[{}, {}]",
                    significant(r.value - r.expanded_uncertainty, 8),
                    significant(r.value + r.expanded_uncertainty, 8)
                ),
                format!(
                    "{}: d_low = {}, d_high = {}, δ = {}",
                    if v.passed { "passed" } else { "NOT passed" },
                    significant(v.d_low, 3),
                    significant(v.d_high, 3),
                    significant(v.numerical_tolerance, 2)
                ),
            ]
        })
        .collect();
    let p = report
        .results
        .first()
        .map_or(0.95, |r| r.coverage_probability);
    let pc = significant(100.0 * p, 4);
    let t = Table {
        header: vec![
            "measurand".into(),
            "unit".into(),
            "mean of the trials".into(),
            "standard deviation u".into(),
            format!("probabilistically symmetric {pc} % interval"),
            format!("shortest {pc} % interval"),
            "first-order interval y ± U".into(),
            "validation of the first-order result (JCGM 101:2008, 8)".into(),
        ],
        rows,
    };
    s.push_str(&table("Monte Carlo results", &t, &[2, 3], "monte-carlo"));
    s
}

/// Columns of a matrix in one printed table; a larger matrix is printed
/// in blocks of this many columns, each with the row names, so that it fits
/// the width of an A4 page.
const MATRIX_COLUMNS: usize = 7;

/// A square matrix with named rows and columns as one table or, when it is
/// wide, as blocks of columns.
pub(crate) fn matrix_tables(
    caption: &str,
    names: &[String],
    m: &[Vec<f64>],
    cell: &dyn Fn(f64) -> String,
) -> String {
    let mut s = String::new();
    let blocks = names.len().div_ceil(MATRIX_COLUMNS).max(1);
    for b in 0..blocks {
        let cols: Vec<usize> =
            (b * MATRIX_COLUMNS..((b + 1) * MATRIX_COLUMNS).min(names.len())).collect();
        let t = Table {
            header: std::iter::once(String::new())
                .chain(cols.iter().map(|&c| names[c].clone()))
                .collect(),
            rows: m
                .iter()
                .enumerate()
                .map(|(i, row)| {
                    std::iter::once(names[i].clone())
                        .chain(
                            cols.iter()
                                .map(|&c| row.get(c).map_or(String::new(), |v| cell(*v))),
                        )
                        .collect()
                })
                .collect(),
        };
        let numeric: Vec<usize> = (1..=cols.len()).collect();
        let title = if blocks > 1 {
            format!(
                "{caption} (columns {} to {} of {})",
                cols[0] + 1,
                cols[cols.len() - 1] + 1,
                names.len()
            )
        } else {
            caption.to_string()
        };
        s.push_str(&table(&title, &t, &numeric, "matrix"));
    }
    s
}

fn measurand_correlation(report: &Report) -> String {
    format!(
        "<h2 id=\"measurand-correlation\">Correlation of the measurands</h2>\n{}",
        matrix_tables(
            "First-order correlation matrix (JCGM 102:2011)",
            &report.correlation_matrix.names,
            &report.correlation_matrix.matrix,
            &|v| format!("{v:.4}"),
        )
    )
}

fn notes_section(p: &Parts) -> String {
    let mut items: Vec<String> = Vec::new();
    if let Some(d) = p.model.and_then(|m| m.description.as_ref()) {
        items.push(format!("About the model: {d}"));
    }
    items.extend(p.report.notes.iter().cloned());
    if let Some(mc) = p.mc {
        items.extend(report::mc_footer(mc));
    }
    if items.is_empty() {
        return String::new();
    }
    let mut s = String::from("<h2 id=\"notes\">Notes</h2>\n<ul>\n");
    for n in items {
        s.push_str(&format!("<li>{}</li>\n", esc(&n)));
    }
    s.push_str("</ul>\n");
    s
}

fn plots_section(p: &Parts) -> String {
    let mut s = String::from("<h2 id=\"plots\">Plots</h2>\n");
    for n in p.not_drawn {
        s.push_str(&format!("<p class=\"note\">Not drawn: {}</p>\n", esc(n)));
    }
    for (file, caption, svg) in p.plots {
        s.push_str(&format!(
            "<figure>\n{}\n<figcaption>{} ({})</figcaption>\n</figure>\n",
            svg.trim(),
            esc(caption),
            esc(file)
        ));
    }
    s
}

/// The HTML document of a table of items: the procedure (the model's
/// inputs as stated) once, the summary, the items, the record, the plots.
pub(crate) fn items_document(
    title: &str,
    model: &Model,
    items: &Table,
    summary: &[String],
    record: &crate::record::Record,
    plots: &[(String, String, String)],
    not_drawn: &[String],
) -> String {
    let mut s = format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n\
         <meta name=\"generator\" content=\"incertus {}\"/>\n<title>{}</title>\n<style>\n{CSS}</style>\n</head>\n<body>\n<h1>{}</h1>\n",
        env!("CARGO_PKG_VERSION"),
        esc(title),
        esc(title)
    );
    s.push_str(
        "<p class=\"caution\">One measurement procedure evaluated for every item of a table (JCGM 100:2008). \
         The results are an aid to, not a substitute for, the laboratory's validation of its methods and its \
         quality system.</p>\n<nav class=\"toc\"><b>Contents</b>\n<ol>\n<li><a href=\"#summary\">Summary</a></li>\n\
         <li><a href=\"#procedure\">The procedure</a></li>\n<li><a href=\"#items\">Items</a></li>\n\
         <li><a href=\"#record\">Record of the evaluation</a></li>\n<li><a href=\"#plots\">Plots</a></li>\n</ol>\n</nav>\n",
    );
    s.push_str("<h2 id=\"summary\">Summary</h2>\n<ul>\n");
    for l in summary {
        s.push_str(&format!("<li>{}</li>\n", esc(l.trim())));
    }
    s.push_str("</ul>\n<h2 id=\"procedure\">The procedure</h2>\n");
    for m in &model.measurands {
        s.push_str(&format!(
            "<p>Measurement model: <code>{} = {}</code></p>\n",
            esc(&m.name),
            esc(&m.formula_text)
        ));
    }
    s.push_str(&table(
        "Inputs as the model states them (a table of items changes some of them per item)",
        &inputs_table(model),
        &[3, 4],
        "inputs",
    ));
    s.push_str("<h2 id=\"items\">Items</h2>\n");
    let numeric = columns(items, &["estimate", "U", "k"]);
    s.push_str(&table(
        "Each item's result, rounded (JCGM 100:2008, 7.2.6)",
        items,
        &numeric,
        "results",
    ));
    s.push_str(&record.html(esc));
    s.push_str("<h2 id=\"plots\">Plots</h2>\n");
    for n in not_drawn {
        s.push_str(&format!("<p class=\"note\">Not drawn: {}</p>\n", esc(n)));
    }
    for (file, caption, svg) in plots {
        s.push_str(&format!(
            "<figure>\n{}\n<figcaption>{} ({})</figcaption>\n</figure>\n",
            svg.trim(),
            esc(caption),
            esc(file)
        ));
    }
    s.push_str("</body>\n</html>\n");
    s
}
