//! Writers of an evaluation: aligned text, Markdown, JSON and CSV.
//!
//! Text and Markdown round the result by JCGM 100:2008, 7.2 (the
//! uncertainty to two significant digits unless asked otherwise, the
//! estimate to the same decimal place) and state k, p and ν_eff with every
//! expanded uncertainty; budgets show intermediate quantities to five
//! significant digits. JSON and CSV keep full precision.

use incertus_gum::rounding::{significant_si as significant, write};
use incertus_gum::{MeasurandResult, Report};
use incertus_mc::{McMeasurand, McReport};

/// How a result is written.
#[derive(Clone, Copy, Debug)]
pub struct Style {
    /// Significant digits of reported uncertainties (1 to 3).
    pub digits: u32,
}

fn dof_text(d: Option<f64>) -> String {
    match d {
        None => "inf".into(),
        Some(v) if v.fract() == 0.0 => format!("{v}"),
        Some(v) => significant(v, 3),
    }
}

fn percent(p: f64) -> String {
    let s = significant(100.0 * p, 4);
    format!("{s} %")
}

fn type_text(b: &incertus_gum::BudgetLine) -> String {
    use incertus_gum::propagate::EvaluationKind;
    match b.evaluation {
        EvaluationKind::TypeA => format!("A, n = {}", b.observations.unwrap_or(0)),
        EvaluationKind::TypeB => format!("B, {}", b.distribution),
        EvaluationKind::Constant => format!("constant, {}", b.distribution),
        other => other.to_string(),
    }
}

/// A table shared by the text, Markdown and HTML writers: a header whose
/// titles carry the units of their columns (`contribution u_i(V) / mm^3`,
/// the SI Brochure's quantity/unit form for table headings), and the rows.
#[derive(Clone, Debug, Default)]
pub(crate) struct Table {
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

impl Table {
    /// Header and rows, header first (for `aligned`).
    pub(crate) fn all(&self) -> Vec<Vec<String>> {
        std::iter::once(self.header.clone())
            .chain(self.rows.iter().cloned())
            .collect()
    }
}

/// A unit for a header or a cell: as the SI Brochure prints it in Markdown
/// and HTML (`si`), as written in text.
fn shown_unit(u: &str, si: bool) -> String {
    if si {
        incertus_units::si_symbols(u)
    } else {
        u.to_string()
    }
}

/// ` / unit` after a column title, or nothing without a unit.
fn per_unit(u: &str, si: bool) -> String {
    if u.is_empty() {
        String::new()
    } else {
        format!(" / {}", shown_unit(u, si))
    }
}

/// The unit of the sensitivity coefficient of `b` in the budget of `r`.
pub fn sensitivity_unit(r: &MeasurandResult, b: &incertus_gum::BudgetLine) -> String {
    let q = incertus_units::quotient(
        r.unit.as_deref().unwrap_or(""),
        b.unit.as_deref().unwrap_or(""),
    );
    // Units that cancel (g per g) leave a coefficient of unit one, written
    // so that it does not read as a missing unit.
    if q.is_empty() && (r.unit.is_some() || b.unit.is_some()) {
        "1".into()
    } else {
        q
    }
}

/// The budget of a measurand as EA-4/02 (section 6 and its examples) lays it
/// out: quantity, estimate, standard uncertainty, distribution, sensitivity
/// coefficient with its unit, and the contribution u_i(y) = |c_i| u(x_i) in
/// the unit of y with its share of u²(y). Correlation terms, which are in
/// the square of the unit of y, are in their own table
/// (`correlation_table`).
pub(crate) fn budget_table(r: &MeasurandResult, si: bool) -> Table {
    let with_units = r.budget.iter().any(|b| b.unit.is_some()) || r.unit.is_some();
    let y_unit = r.unit.as_deref().unwrap_or("");
    let mut header: Vec<String> = vec!["quantity".into(), "estimate".into()];
    if with_units {
        header.push("unit".into());
    }
    header.extend([
        "standard uncertainty".to_string(),
        "type, distribution".into(),
        "dof".into(),
        "sensitivity coefficient".into(),
    ]);
    if with_units {
        header.push("unit of c".into());
    }
    header.push(format!(
        "contribution u_i({}){}",
        r.name,
        per_unit(y_unit, si)
    ));
    header.push(format!("share of u²({})", r.name));
    let mut rows = Vec::new();
    for b in &r.budget {
        let mut row = vec![b.input.clone(), significant(b.value, 8)];
        if with_units {
            row.push(shown_unit(b.unit.as_deref().unwrap_or(""), si));
        }
        row.extend([
            significant(b.standard_uncertainty, 5),
            type_text(b),
            if b.evaluation == incertus_gum::propagate::EvaluationKind::Exact
                || b.standard_uncertainty == 0.0
            {
                "-".into()
            } else {
                dof_text(b.dof)
            },
            significant(b.sensitivity, 5),
        ]);
        if with_units {
            row.push(shown_unit(&sensitivity_unit(r, b), si));
        }
        row.extend([significant(b.contribution, 5), percent(b.share)]);
        rows.push(row);
    }
    Table { header, rows }
}

/// The correlation terms of u²(y), one row per correlated pair: the
/// coefficient, where it comes from, the term 2·c_a·c_b·r·u(x_a)·u(x_b)
/// (JCGM 100:2008, eq. (16)) in the square of the unit of y, and its share.
/// `None` when no pair of the budget is correlated.
pub(crate) fn correlation_table(r: &MeasurandResult, si: bool) -> Option<Table> {
    if r.correlation_budget.is_empty() {
        return None;
    }
    let sq = incertus_units::squared(r.unit.as_deref().unwrap_or(""));
    let header = vec![
        "correlated inputs".to_string(),
        "r".into(),
        "from".into(),
        format!("term 2·c_a·c_b·r·u_a·u_b{}", per_unit(&sq, si)),
        format!("share of u²({})", r.name),
    ];
    let rows = r
        .correlation_budget
        .iter()
        .map(|c| {
            vec![
                format!("{}, {}", c.inputs[0], c.inputs[1]),
                significant(c.coefficient, 4),
                if let Some(f) = &c.from_fit {
                    format!("fit {f}")
                } else if c.from_observations {
                    "observed together".into()
                } else {
                    "stated".into()
                },
                signed(c.term),
                percent(c.share),
            ]
        })
        .collect();
    Some(Table { header, rows })
}

/// A number with its sign always written (`+2.4662 × 10⁵`, `-31.5`).
fn signed(v: f64) -> String {
    let s = significant(v, 5);
    if v > 0.0 {
        format!("+{s}")
    } else {
        s
    }
}

/// Why shares can be negative or exceed 100 %: stated under a budget whose
/// correlation terms are not zero.
pub(crate) fn share_note(r: &MeasurandResult) -> Option<String> {
    let odd = r.budget.iter().any(|b| b.share > 1.0 + 1e-12)
        || r.correlation_budget.iter().any(|c| c.share < 0.0);
    if r.correlation_budget.iter().all(|c| c.term == 0.0) {
        return None;
    }
    Some(format!(
        "the shares of u²({n}) add up to 100 % with the correlation terms included; {what} \
         (JCGM 100:2008, 5.2.2: u² = Σ c_i² u_i² + Σ 2 c_i c_j u_i u_j r_ij)",
        n = r.name,
        what = if odd {
            "a negative correlation term lowers u², so the other shares can exceed 100 % and \
             a term's own share is negative"
        } else {
            "a positive correlation term raises u² beyond the sum of the inputs' contributions"
        }
    ))
}

/// A table as aligned text.
pub(crate) fn aligned_table(t: &Table) -> String {
    aligned(&t.all())
}

fn aligned(rows: &[Vec<String>]) -> String {
    let cols = rows.iter().map(Vec::len).max().unwrap_or(0);
    let width: Vec<usize> = (0..cols)
        .map(|c| {
            rows.iter()
                .map(|r| r.get(c).map_or(0, |s| s.chars().count()))
                .max()
                .unwrap_or(0)
        })
        .collect();
    let mut out = String::new();
    for (i, r) in rows.iter().enumerate() {
        let mut line = String::new();
        for (c, cell) in r.iter().enumerate() {
            if c > 0 {
                line.push_str("  ");
            }
            line.push_str(cell);
            line.push_str(&" ".repeat(width[c] - cell.chars().count()));
        }
        out.push_str(line.trim_end());
        out.push('\n');
        if i == 0 {
            let total: usize = width.iter().sum::<usize>() + 2 * (cols.saturating_sub(1));
            out.push_str(&"-".repeat(total));
            out.push('\n');
        }
    }
    out
}

/// The same report with its units as the SI Brochure prints them (`mm³`,
/// `°C`, `µL`; `incertus_units::si_symbols`), for Markdown and HTML; text,
/// CSV and JSON keep the units as written.
pub fn with_si_units(report: &Report) -> Report {
    let si = |u: &mut Option<String>| {
        if let Some(t) = u {
            *t = incertus_units::si_symbols(t);
        }
    };
    let mut r = report.clone();
    for m in &mut r.results {
        si(&mut m.unit);
        for b in &mut m.budget {
            si(&mut b.unit);
        }
    }
    for f in &mut r.fits {
        si(&mut f.x_unit);
        si(&mut f.y_unit);
    }
    r
}

fn unit_suffix(r: &MeasurandResult) -> String {
    r.unit.as_ref().map(|u| format!(" {u}")).unwrap_or_default()
}

/// The line stating the rounding rule under a result.
fn rounding_line(style: Style) -> String {
    format!(
        "         rounded to {} significant digit{} of the uncertainty, the estimate to the same place (JCGM 100:2008, 7.2.6)",
        style.digits,
        if style.digits == 1 { "" } else { "s" }
    )
}

/// The first-order figures of a result as (label, value) pairs: estimate,
/// u_c, higher-order u, ν_eff with its rounding, k with its distribution,
/// U. Shared by the text, Markdown and HTML writers.
pub(crate) fn first_order_facts(r: &MeasurandResult, report: &Report) -> Vec<(String, String)> {
    let unit = unit_suffix(r);
    let name = &r.name;
    let p = percent(r.coverage_probability);
    let dof = match (r.effective_dof, r.effective_dof_used) {
        (None, _) => "ν_eff = infinite".to_string(),
        (Some(v), Some(used)) => {
            let rule = if report.effective_dof_rounding == incertus_gum::DofRounding::Truncate {
                "truncated to an integer, JCGM 100:2008, G.4.1"
            } else {
                "used as computed"
            };
            format!(
                "ν_eff = {} ({} used, {rule})",
                significant(v, 4),
                significant(used, 4)
            )
        }
        (Some(v), None) => format!("ν_eff = {}", significant(v, 4)),
    };
    let mut facts = vec![
        (
            "estimate".to_string(),
            format!("{name} = {}{unit}", significant(r.value, 10)),
        ),
        (
            "combined standard uncertainty".into(),
            format!(
                "u({name}) = {}{unit}{}",
                significant(r.standard_uncertainty, 5),
                r.relative_standard_uncertainty
                    .map(|x| format!("  (relative {})", significant(x, 3)))
                    .unwrap_or_default()
            ),
        ),
    ];
    if let Some(s) = r.second_order_standard_uncertainty {
        facts.push((
            "with higher-order terms".into(),
            format!(
                "u({name}) = {}{unit}  (JCGM 100:2008, 5.1.2; used for U)",
                significant(s, 5)
            ),
        ));
    }
    facts.push(("effective degrees of freedom".into(), dof));
    facts.push((
        "coverage factor".into(),
        format!(
            "k = {} for p = {p} ({})",
            significant(r.coverage_factor, 4),
            match r.effective_dof_used {
                None => "normal distribution, ν_eff infinite".to_string(),
                Some(v) => format!("Student's t with {} dof", significant(v, 4)),
            }
        ),
    ));
    facts.push((
        "expanded uncertainty".into(),
        format!(
            "U({name}) = {}{unit}",
            significant(r.expanded_uncertainty, 5)
        ),
    ));
    facts
}

/// The reported result of a measurand in words a certificate can quote,
/// stated once: the rounded result, what ± means (U = k u_c with k, p and
/// ν_eff), and the method (JCGM 100:2008 or, when the first-order result
/// was not validated, JCGM 101:2008 with its coverage interval).
pub(crate) fn result_sentence(r: &MeasurandResult, style: Style) -> String {
    let unit = unit_suffix(r);
    let name = &r.name;
    let rep = &r.reported;
    let p = percent(rep.coverage_probability);
    if rep.method == incertus_gum::Method::MonteCarlo {
        let Some(u) = rep.standard_uncertainty else {
            let like = write(rep.value, rep.expanded_uncertainty, style.digits + 1);
            let end = |v: f64| incertus_gum::rounding::write_like(v, &like);
            return format!(
                "The probabilistically symmetric coverage interval of {name} for a coverage probability \
                 of {p} is [{}, {}]{unit}; {name} has no standard uncertainty, as an input it depends on \
                 has no finite variance. Evaluated by propagation of distributions (JCGM 101:2008) with {} \
                 trials, because {}.",
                end(rep.coverage_interval[0]),
                end(rep.coverage_interval[1]),
                r.monte_carlo.as_ref().map_or(0, |m| m.trials),
                rep.why
            );
        };
        let w = write(rep.value, u, style.digits);
        let like = write(rep.value, u, style.digits + 1);
        let end = |v: f64| incertus_gum::rounding::write_like(v, &like);
        return format!(
            "{name} = {}{unit} (the standard uncertainty u in parentheses, in units of the last digits); \
             the probabilistically symmetric coverage interval for a coverage probability of {p} is [{}, {}]{unit}. \
             Evaluated by propagation of distributions (JCGM 101:2008) with {} trials, because {}.",
            w.concise,
            end(rep.coverage_interval[0]),
            end(rep.coverage_interval[1]),
            r.monte_carlo.as_ref().map_or(0, |m| m.trials),
            rep.why
        );
    }
    let wbig = write(r.value, r.expanded_uncertainty, style.digits);
    let dist = match r.effective_dof_used {
        None => "a normal distribution".to_string(),
        Some(v) => format!(
            "Student's t distribution with ν_eff = {} effective degrees of freedom",
            significant(v, 4)
        ),
    };
    let validated = match &r.monte_carlo {
        Some(m) if m.validation.passed => {
            "; propagation of distributions (JCGM 101:2008) validated it"
        }
        _ => "",
    };
    format!(
        "{name} = {}{unit}, where the number after ± is the expanded uncertainty U = k·u_c, \
         the combined standard uncertainty u_c multiplied by the coverage factor k = {}, which for {dist} \
         gives a coverage probability of about {p}. Evaluated by the law of propagation of uncertainty \
         (JCGM 100:2008){validated}.",
        wbig.plus_minus,
        significant(r.coverage_factor, 3)
    )
}

/// The first-order result rounded (concise form and y ± U with k and p),
/// for the HTML budget; marked when it is not the reported result.
pub(crate) fn rounded_statement(r: &MeasurandResult, style: Style) -> String {
    let u = r
        .second_order_standard_uncertainty
        .unwrap_or(r.standard_uncertainty);
    let unit = unit_suffix(r);
    format!(
        "{name} = {}{unit} (u in parentheses); {name} = {}{unit} (U with k = {}, p = {}); {} significant digit{} of the uncertainty, the estimate to the same place (JCGM 100:2008, 7.2.6){}",
        write(r.value, u, style.digits).concise,
        write(r.value, r.expanded_uncertainty, style.digits).plus_minus,
        significant(r.coverage_factor, 3),
        percent(r.coverage_probability),
        style.digits,
        if style.digits == 1 { "" } else { "s" },
        if r.reported.method == incertus_gum::Method::MonteCarlo {
            ". NOT VALIDATED by propagation of distributions and not the reported result"
        } else {
            ""
        },
        name = r.name,
    )
}

/// The lines stating a result, shared by text and Markdown.
fn result_lines(r: &MeasurandResult, report: &Report, style: Style) -> Vec<String> {
    let unit = unit_suffix(r);
    let name = &r.name;
    let u_used = r
        .second_order_standard_uncertainty
        .unwrap_or(r.standard_uncertainty);
    let wu = write(r.value, u_used, style.digits);
    let wbig = write(r.value, r.expanded_uncertainty, style.digits);
    let p = percent(r.coverage_probability);
    let mut lines = Vec::new();
    if r.reported.method == incertus_gum::Method::MonteCarlo {
        lines.push(
            "first-order evaluation (JCGM 100:2008), NOT VALIDATED and not the reported result:"
                .to_string(),
        );
    }
    for (label, value) in first_order_facts(r, report) {
        lines.push(format!("{label:<34}{value}"));
    }
    lines.push(String::new());
    let monte_carlo = r.reported.method == incertus_gum::Method::MonteCarlo;
    if monte_carlo {
        // JCGM 101:2008, 8.2: the first-order result was not validated, so
        // the Monte Carlo result is the reported one.
        let rep = &r.reported;
        let basis = rep.standard_uncertainty.unwrap_or(rep.expanded_uncertainty);
        let like = write(rep.value, basis, style.digits + 1);
        let end = |v: f64| incertus_gum::rounding::write_like(v, &like);
        match rep.standard_uncertainty {
            Some(u) => lines.push(format!(
                "result   {name} = {}{unit}   (REPORTED RESULT, by propagation of distributions, JCGM 101:2008; in parentheses: u in units of the last digits)",
                write(rep.value, u, style.digits).concise
            )),
            None => lines.push(format!(
                "result   {name}: no standard uncertainty (an input without a finite variance); the coverage interval below is the REPORTED RESULT, by propagation of distributions, JCGM 101:2008"
            )),
        }
        lines.push(format!(
            "         {} coverage interval [{}, {}]{unit}   (probabilistically symmetric, JCGM 101:2008, 7.7)",
            percent(rep.coverage_probability),
            end(rep.coverage_interval[0]),
            end(rep.coverage_interval[1])
        ));
        lines.push(format!(
            "         reported by Monte Carlo because {}",
            rep.why
        ));
        lines.push(rounding_line(style));
        lines.push(format!(
            "first-order result (not validated, not the reported result): {name} = {}{unit}, {}{unit}",
            wu.concise, wbig.plus_minus
        ));
        for w in &r.warnings {
            lines.push(format!("WARNING  {w}"));
        }
        return lines;
    }
    lines.push(format!(
        "result   {name} = {}{unit}   (in parentheses: the standard uncertainty u in units of the last digits)",
        wu.concise
    ));
    lines.push(format!(
        "         {name} = {}{unit}   (± gives the expanded uncertainty U: k = {}, p = {p}, {})",
        wbig.plus_minus,
        significant(r.coverage_factor, 3),
        match (r.effective_dof, r.effective_dof_used) {
            (_, None) => "ν_eff infinite, normal distribution".to_string(),
            (Some(v), Some(used)) if v != used => format!(
                "ν_eff = {}, {} used",
                significant(v, 4),
                significant(used, 4)
            ),
            (_, Some(used)) => format!("ν_eff = {}", significant(used, 4)),
        }
    ));
    lines.push(rounding_line(style));
    for w in &r.warnings {
        lines.push(format!("WARNING  {w}"));
    }
    if wu.below_resolution || wbig.below_resolution {
        lines.push(format!(
            "         the uncertainty lies below the resolution of {} significant digits of the estimate and is shown rounded up to it",
            incertus_gum::rounding::MAX_SIGNIFICANT
        ));
    }
    lines
}

/// The lines of a conformity assessment (JCGM 106:2012), shared by text
/// and Markdown; the statement comes last, as one line a certificate can
/// quote.
pub(crate) fn conformity_lines(r: &MeasurandResult) -> Vec<String> {
    let Some(c) = &r.conformity else {
        return Vec::new();
    };
    use incertus_gum::conformity::probability;
    let unit = unit_suffix(r);
    let name = &r.name;
    use incertus_gum::conformity::{at_place_of, limit_text as lim};
    let at = |v: f64| at_place_of(v, r.expanded_uncertainty);
    let mut lines = vec![
        format!("conformity assessment of {name} (JCGM 106:2012)"),
        format!(
            "  tolerance interval                 [{}, {}]{unit}",
            lim(c.lower_limit, true),
            lim(c.upper_limit, false)
        ),
        format!(
            "  decision rule                      {}, {}",
            c.rule, c.guard_band_rule
        ),
        format!(
            "  guard band                         {}",
            c.guard_band
                .map_or("none gives the target risk".to_string(), |w| format!(
                    "w = {}{unit}",
                    significant(w, 3)
                ))
        ),
        format!(
            "  acceptance interval                {}",
            match c.acceptance_interval {
                None => "empty: no measured value can be accepted".to_string(),
                Some([a, b]) => format!(
                    "[{}, {}]{unit}",
                    a.map_or("−∞".to_string(), at),
                    b.map_or("+∞".to_string(), at)
                ),
            }
        ),
        format!(
            "  conformance probability p_c        {}  ({})",
            c.conformance_text(),
            c.distribution
        ),
    ];
    if let Some(m) = &c.monte_carlo {
        lines.push(format!(
            "  p_c by Monte Carlo                 {}  ({} of {} trials inside; standard uncertainty {})",
            m.conformance_text(),
            m.inside,
            m.trials,
            probability(m.standard_uncertainty)
        ));
    }
    lines.push(format!(
        "  verdict                            {}, specific {} risk {}",
        c.verdict.to_string().to_uppercase(),
        c.specific_risk_kind,
        c.risk_text()
    ));
    if let Some(cm) = c.measurement_capability_index {
        lines.push(format!(
            "  measurement capability index       C_m = (T_U − T_L)/(4 u) = {}",
            significant(cm, 3)
        ));
    }
    if let Some(g) = &c.global_risks {
        lines.push(format!(
            "  global risks, process N({}, {}){unit}: consumer's R_C = {}, producer's R_P = {} (JCGM 106:2012, clause 9)",
            significant(g.process.mean, 6),
            significant(g.process.standard_deviation, 3),
            probability(g.consumer_risk),
            probability(g.producer_risk)
        ));
        lines.push(format!(
            "                                     non-conforming fraction of the process without measurement: {}",
            probability(g.nonconforming_fraction)
        ));
    }
    for n in &c.notes {
        lines.push(format!("  note: {n}"));
    }
    lines.push(format!("  statement: {}", c.statement));
    lines
}

/// A fit as text: method, parameters, covariance, diagnostics, flags and
/// exclusions, with the result without the exclusions beside.
/// A column title with its unit, `quantity / unit` (compound units in
/// parentheses), or the quantity alone without a unit.
pub fn with_unit(quantity: &str, unit: Option<&str>) -> String {
    match unit.map(str::trim) {
        Some(u) if !u.is_empty() && u != "1" => {
            if u.contains(['/', ' ', '*', '·']) {
                format!("{quantity} / ({u})")
            } else {
                format!("{quantity} / {u}")
            }
        }
        _ => quantity.to_string(),
    }
}

/// One data point of a fit as table cells: row, x and y (to `digits`
/// significant digits), residual, studentised residual, leverage, Cook's
/// distance and a note (excluded with the reason, or flagged with why).
pub(crate) fn point_cells(
    f: &incertus_fit::FitResult,
    p: &incertus_fit::Point,
    digits: usize,
) -> Vec<String> {
    let fixed = |v: f64| {
        if v.is_finite() {
            format!("{v:.3}")
        } else {
            "-".into()
        }
    };
    let note = if p.excluded {
        format!(
            "EXCLUDED{}",
            f.exclude_reason
                .as_ref()
                .map(|r| format!(": {r}"))
                .unwrap_or_default()
        )
    } else if p.flagged {
        format!("flagged: {}", p.flags.join("; "))
    } else {
        String::new()
    };
    vec![
        p.row.to_string(),
        significant(p.x, digits),
        significant(p.y, digits),
        significant(p.residual, 4),
        significant(p.studentized_residual, 3),
        fixed(p.leverage),
        fixed(p.cooks_distance),
        note,
    ]
}

/// A fit of a model as text, its columns titled with their units.
fn named_fit_text(f: &incertus_gum::model::NamedFit) -> String {
    fit_text(
        &format!(
            "least-squares fit `{}`: {} against {} from {}",
            f.name, f.y, f.x, f.data
        ),
        &f.result,
        [
            &with_unit(&f.x, f.x_unit.as_deref()),
            &with_unit(&f.y, f.y_unit.as_deref()),
        ],
    )
}

/// A fit as text; `axes` are the titles of the x and y columns.
pub fn fit_text(title: &str, f: &incertus_fit::FitResult, axes: [&str; 2]) -> String {
    let mut out = format!("{title}\n");
    out.push_str(&format!(
        "method: {}; {} points used, {} parameters, dof = {}\n",
        f.method,
        f.points.iter().filter(|p| !p.excluded).count(),
        f.parameters.len(),
        f.dof
    ));
    let mut rows = vec![vec![
        "parameter".to_string(),
        "value".into(),
        "standard uncertainty".into(),
    ]];
    for p in &f.parameters {
        rows.push(vec![
            p.name.clone(),
            significant(p.value, 8),
            significant(p.standard_uncertainty, 5),
        ]);
    }
    out.push_str(&aligned(&rows));
    if f.parameters.len() > 1 {
        out.push_str("correlation matrix of the parameters\n");
        let mut rows = vec![std::iter::once(String::new())
            .chain(f.parameters.iter().map(|p| p.name.clone()))
            .collect::<Vec<_>>()];
        for (i, row) in f.correlation.iter().enumerate() {
            rows.push(
                std::iter::once(f.parameters[i].name.clone())
                    .chain(row.iter().map(|v| format!("{v:.4}")))
                    .collect(),
            );
        }
        out.push_str(&aligned(&rows));
    }
    out.push_str(&format!(
        "residual standard deviation {}, R² = {}\n",
        significant(f.residual_standard_deviation, 5),
        if f.r_squared.is_finite() {
            format!("{:.6}", f.r_squared)
        } else {
            "n/a".into()
        }
    ));
    if let (Some(c), Some(cn), Some(pv)) = (f.chi_squared, f.chi_squared_per_dof, f.p_value) {
        out.push_str(&format!(
            "χ² = {}, χ²/ν = {}, p = {}; the covariance is {} (the stated u(y) are taken {})\n",
            significant(c, 5),
            significant(cn, 4),
            significant(pv, 3),
            if f.scaled_by_chi_squared {
                "multiplied by χ²/ν"
            } else {
                "not scaled"
            },
            if f.scaled_by_chi_squared {
                "as relative only"
            } else {
                "as known"
            }
        ));
    }
    let mut rows = vec![[
        "row",
        axes[0],
        axes[1],
        "residual",
        "studentised",
        "leverage",
        "Cook's D",
        "note",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect::<Vec<_>>()];
    rows.extend(f.points.iter().map(|p| point_cells(f, p, 8)));
    out.push_str(&aligned(&rows));
    if let Some(w) = &f.without_exclusions {
        out.push_str(&format!(
            "without the exclusions (rows {}): ",
            f.excluded_rows
                .iter()
                .map(|r| r.to_string())
                .collect::<Vec<_>>()
                .join(", ")
        ));
        let parts: Vec<String> = w
            .parameters
            .iter()
            .map(|p| {
                format!(
                    "{} = {} (u = {})",
                    p.name,
                    significant(p.value, 8),
                    significant(p.standard_uncertainty, 5)
                )
            })
            .collect();
        out.push_str(&parts.join(", "));
        out.push_str(&format!(
            ", residual sd {}\n",
            significant(w.residual_standard_deviation, 5)
        ));
    }
    out
}

/// Lines stating a Monte Carlo result next to the first-order one.
fn mc_lines(r: &MeasurandResult, m: &McMeasurand, mc: &McReport, style: Style) -> Vec<String> {
    let unit = unit_suffix(r);
    let name = &r.name;
    let p = percent(m.coverage_probability);
    // Interval ends to one digit more than the standard uncertainty shows.
    let basis = if m.finite_variance {
        m.standard_uncertainty
    } else {
        0.5 * (m.symmetric_interval[1] - m.symmetric_interval[0])
    };
    let like = write(m.value, basis, style.digits + 1);
    let end = |v: f64| incertus_gum::rounding::write_like(v, &like);
    let w = write(m.value, m.standard_uncertainty, style.digits);
    let no_u =
        "none: an input has no finite variance (t with ν ≤ 2, JCGM 101:2008, 6.4.9.4), so the \
                standard deviation of the trials estimates nothing";
    let mut lines = vec![
        format!(
            "propagation of distributions (JCGM 101:2008): {} trials, seed {}{}",
            m.trials,
            m.seed,
            match &mc.adaptive {
                Some(a) => format!(
                    ", adaptive procedure with ndig = {}: {} sequences of {} trials{}",
                    a.ndig,
                    a.sequences,
                    a.trials_per_sequence,
                    if a.converged {
                        ""
                    } else {
                        " (did not reach the tolerance within the trial limit)"
                    }
                ),
                None => String::new(),
            }
        ),
        format!(
            "  estimate (mean of the trials)       {name} = {}{unit}",
            significant(m.value, 10)
        ),
        format!(
            "  standard uncertainty                u({name}) = {}",
            if m.finite_variance {
                format!("{}{unit}", significant(m.standard_uncertainty, 5))
            } else {
                no_u.to_string()
            }
        ),
        format!(
            "  result                              {}",
            if m.finite_variance {
                format!("{name} = {}{unit}", w.concise)
            } else {
                "the coverage intervals below".to_string()
            }
        ),
        format!(
            "  probabilistically symmetric {p} coverage interval  [{}, {}]{unit}",
            end(m.symmetric_interval[0]),
            end(m.symmetric_interval[1])
        ),
        format!(
            "  shortest {p} coverage interval                     [{}, {}]{unit}",
            end(m.shortest_interval[0]),
            end(m.shortest_interval[1])
        ),
        format!(
            "  first-order interval y ± U                          [{}, {}]{unit}",
            end(r.value - r.expanded_uncertainty),
            end(r.value + r.expanded_uncertainty)
        ),
    ];
    if let Some(ratio) = m.t_sampling_variance_ratio.filter(|_| m.finite_variance) {
        let observed = m.standard_uncertainty / r.standard_uncertainty;
        lines.push(if ratio.is_finite() {
            format!(
                "  note: u is {}× the first-order u; about {}× is expected because Type A inputs and fit \
                 parameters are sampled as scaled and shifted t distributions, whose variance is \
                 ν/(ν − 2)·u² (JCGM 101:2008, 6.4.9)",
                significant(observed, 3),
                significant(ratio.sqrt(), 3)
            )
        } else {
            "  note: an input sampled as a t distribution has ν ≤ 2 dof and so no finite variance \
             (JCGM 101:2008, 6.4.9): the Monte Carlo u does not settle; rely on the coverage interval"
                .to_string()
        });
    }
    if m.non_finite_dropped > 0 {
        lines.push(format!(
            "  {} trials gave a non-finite value and were dropped (--mc-drop-nonfinite)",
            m.non_finite_dropped
        ));
    }
    let v = &m.validation;
    lines.push(format!(
        "validation of the first-order result (JCGM 101:2008, 8): numerical tolerance δ = {} (ndig = {}),",
        significant(v.numerical_tolerance, 2),
        v.ndig
    ));
    lines.push(format!(
        "  d_low = {}, d_high = {}: {}",
        significant(v.d_low, 3),
        significant(v.d_high, 3),
        if v.passed {
            "PASSED, the first-order result is validated"
        } else {
            "NOT PASSED, the first-order result is not validated at this tolerance; the Monte Carlo result is the reported result"
        }
    ));
    lines
}

pub(crate) fn mc_footer(mc: &McReport) -> Vec<String> {
    let mut lines = vec![format!(
        "Monte Carlo: {} trials in blocks of {}, seed {} ({} threads; the results do not depend on the thread count), about {} of memory",
        mc.trials,
        mc.block_size,
        mc.seed,
        mc.threads,
        if mc.memory_bytes >= 1_000_000 {
            format!("{:.1} MB", mc.memory_bytes as f64 / 1e6)
        } else {
            format!("{:.0} kB", mc.memory_bytes as f64 / 1e3)
        }
    )];
    for s in &mc.correlated_sampling {
        lines.push(format!("correlated inputs sampled jointly: {s}"));
    }
    lines
}

/// Append lines, each without trailing blanks.
fn push_lines<S: AsRef<str>>(out: &mut String, lines: impl IntoIterator<Item = S>) {
    for l in lines {
        out.push_str(l.as_ref().trim_end());
        out.push('\n');
    }
}

/// The aligned text report.
pub fn text(report: &Report, style: Style, mc: Option<&McReport>) -> String {
    let mut out = String::new();
    if let Some(t) = &report.title {
        out.push_str(t);
        out.push('\n');
        out.push_str(&"=".repeat(t.chars().count()));
        out.push_str("\n\n");
    }
    for f in &report.fits {
        out.push_str(&named_fit_text(f));
        out.push('\n');
    }
    for r in &report.results {
        out.push_str(&format!(
            "measurement model  {} = {}\n\n",
            r.name, r.formula
        ));
        out.push_str(&format!("uncertainty budget of {}\n", r.name));
        out.push_str(&aligned(&budget_table(r, false).all()));
        if let Some(t) = correlation_table(r, false) {
            out.push_str(&format!("\ncorrelation terms of u²({})\n", r.name));
            out.push_str(&aligned(&t.all()));
        }
        if let Some(n) = share_note(r) {
            out.push_str(&format!("note: {n}\n"));
        }
        out.push_str("\nsensitivity coefficients as formulas\n");
        for b in &r.budget {
            out.push_str(&format!(
                "  ∂{}/∂{} = {}\n",
                r.name, b.input, b.sensitivity_formula
            ));
        }
        out.push('\n');
        push_lines(&mut out, result_lines(r, report, style));
        out.push('\n');
        if let Some(mc) = mc {
            if let Some(m) = mc.results.iter().find(|m| m.name == r.name) {
                push_lines(&mut out, mc_lines(r, m, mc, style));
                out.push('\n');
            }
        }
        let c = conformity_lines(r);
        if !c.is_empty() {
            push_lines(&mut out, c);
            out.push('\n');
        }
    }
    if report.results.len() > 1 {
        out.push_str("correlation matrix of the measurands (JCGM 102:2011, first order)\n");
        let names = &report.correlation_matrix.names;
        let mut rows = vec![std::iter::once(String::new())
            .chain(names.iter().cloned())
            .collect::<Vec<_>>()];
        for (i, row) in report.correlation_matrix.matrix.iter().enumerate() {
            rows.push(
                std::iter::once(names[i].clone())
                    .chain(row.iter().map(|v| format!("{v:.4}")))
                    .collect(),
            );
        }
        out.push_str(&aligned(&rows));
        out.push('\n');
    }
    if let Some(mc) = mc {
        for l in mc_footer(mc) {
            out.push_str(&l);
            out.push('\n');
        }
    }
    for n in &report.notes {
        out.push_str(&format!("note: {n}\n"));
    }
    out
}

/// Text from a file as Markdown shows it literally: table bars, emphasis,
/// headings, links and raw HTML escaped.
pub(crate) fn md_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '|' | '*' | '_' | '`' | '[' | ']' | '#' | '\\' => {
                out.push('\\');
                out.push(c);
            }
            c => out.push(c),
        }
    }
    out
}

pub(crate) fn md_table(out: &mut String, t: &Table) {
    for (i, row) in t.all().iter().enumerate() {
        out.push_str("| ");
        out.push_str(
            &row.iter()
                .map(|c| md_escape(c))
                .collect::<Vec<_>>()
                .join(" | "),
        );
        out.push_str(" |\n");
        if i == 0 {
            out.push('|');
            out.push_str(&row.iter().map(|_| "---|").collect::<String>());
            out.push('\n');
        }
    }
}

/// The same content as Markdown.
pub fn markdown(report: &Report, style: Style, mc: Option<&McReport>) -> String {
    let mut out = String::new();
    out.push_str(&format!(
        "# {}\n\n",
        md_escape(report.title.as_deref().unwrap_or("Uncertainty evaluation"))
    ));
    if !report.results.is_empty() {
        out.push_str("## Results\n\n");
        for r in &report.results {
            out.push_str(&format!(
                "**{}**\n\n",
                md_escape(&result_sentence(r, style))
            ));
        }
    }
    for f in &report.fits {
        out.push_str(&format!(
            "## Fit {}\n\n```text\n{}```\n\n",
            md_escape(&f.name),
            named_fit_text(f)
        ));
    }
    for r in &report.results {
        out.push_str(&format!(
            "## {}\n\nMeasurement model: `{} = {}`\n\n",
            md_escape(&r.name),
            r.name,
            r.formula
        ));
        md_table(&mut out, &budget_table(r, true));
        if let Some(t) = correlation_table(r, true) {
            out.push_str(&format!(
                "\nCorrelation terms of u²({}):\n\n",
                md_escape(&r.name)
            ));
            md_table(&mut out, &t);
        }
        if let Some(n) = share_note(r) {
            out.push_str(&format!("\nNote: {}\n", md_escape(&n)));
        }
        out.push_str("\nSensitivity coefficients as formulas:\n\n");
        for b in &r.budget {
            out.push_str(&format!(
                "- `∂{}/∂{} = {}`\n",
                r.name, b.input, b.sensitivity_formula
            ));
        }
        out.push_str("\n```text\n");
        push_lines(&mut out, result_lines(r, report, style));
        if let Some(mc) = mc {
            if let Some(m) = mc.results.iter().find(|m| m.name == r.name) {
                out.push('\n');
                push_lines(&mut out, mc_lines(r, m, mc, style));
            }
        }
        let c = conformity_lines(r);
        if let Some((statement, rest)) = c.split_last() {
            out.push('\n');
            push_lines(&mut out, rest);
            out.push_str("```\n\n");
            out.push_str(&format!(
                "**Conformity statement.** {}\n\n",
                md_escape(statement.trim_start().trim_start_matches("statement: "))
            ));
        } else {
            out.push_str("```\n\n");
        }
    }
    if report.results.len() > 1 {
        out.push_str("Correlation matrix of the measurands (JCGM 102:2011, first order):\n\n| |");
        let names = &report.correlation_matrix.names;
        out.push_str(
            &names
                .iter()
                .map(|n| format!(" {} |", md_escape(n)))
                .collect::<String>(),
        );
        out.push_str("\n|---|");
        out.push_str(&names.iter().map(|_| "---|").collect::<String>());
        out.push('\n');
        for (i, row) in report.correlation_matrix.matrix.iter().enumerate() {
            out.push_str(&format!("| {} |", md_escape(&names[i])));
            out.push_str(&row.iter().map(|v| format!(" {v:.4} |")).collect::<String>());
            out.push('\n');
        }
        out.push('\n');
    }
    if let Some(mc) = mc {
        for l in mc_footer(mc) {
            out.push_str(&format!("- {}\n", md_escape(&l)));
        }
    }
    for n in &report.notes {
        out.push_str(&format!("- Note: {}\n", md_escape(n)));
    }
    out
}

/// The full result as JSON (full precision).
pub fn json(report: &Report, mc: Option<&McReport>) -> String {
    let mut v = serde_json::to_value(report).expect("a report is plain data");
    if let Some(obj) = v.as_object_mut() {
        if let Some(mc) = mc {
            obj.insert(
                "monte_carlo_run".into(),
                serde_json::json!({
                    "trials": mc.trials,
                    "seed": mc.seed,
                    "block_size": mc.block_size,
                    "threads": mc.threads,
                    "memory_bytes": mc.memory_bytes,
                    "adaptive": mc.adaptive,
                    "correlated_sampling": mc.correlated_sampling,
                    "covariance_matrix": mc.covariance_matrix,
                    "correlation_matrix": mc.correlation_matrix,
                }),
            );
        }
        obj.insert(
            "program".into(),
            serde_json::json!({"name": "incertus", "version": env!("CARGO_PKG_VERSION")}),
        );
    }
    let mut s = serde_json::to_string_pretty(&v).expect("a report is plain data");
    s.push('\n');
    s
}
