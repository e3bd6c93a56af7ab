//! Every stated figure of a hand-made budget against the computed one.
//!
//! A stated figure agrees when it equals the computed one to within half a
//! unit of its last stated digit (the rounding of the stated figure). A
//! disagreement names the likely slip when one explains it: an expanded
//! uncertainty U taken as u (off by exactly k), a half-width a taken as u
//! (not divided by √3, √6 or √2 for the rectangular, triangular or arc
//! sine distribution; JCGM 100:2008, 4.3.7 and 4.3.9), a lost sign, a
//! factor 2 (a forgotten factor from a square: ∂(x²)/∂x = 2x). A stated
//! k = 2 is accepted with a note when ν_eff is large (k at 95.45 % no more
//! than 2.05, the EA-4/02 convention, whose table of k against ν_eff gives
//! 2.05 at 50 dof).
//!
//! An intermediate quantity (a measurand of the model that the checked one
//! uses) is checked as one line: its estimate, its u (its own combined
//! standard uncertainty), the sensitivity coefficient of the checked
//! measurand's own formula to it and the contribution; its correlation with
//! other lines of the budget is stated, since their covariance then
//! belongs in the combined uncertainty (JCGM 100:2008, 5.2).

use incertus_gum::description::{InputEvaluation, LimitShape, LimitsGiven};
use incertus_gum::rounding::significant_si as significant;
use incertus_gum::{MeasurandResult, Model, Report};

use super::grid::{Cell, Grid};
use super::Col;

/// One compared figure.
#[derive(Clone, Debug, serde::Serialize)]
pub(crate) struct Line {
    pub cell: String,
    pub what: String,
    pub stated: Option<f64>,
    pub computed: Option<f64>,
    pub unit: String,
    pub agrees: bool,
    pub relative_difference: Option<f64>,
    pub slip: Option<String>,
    pub note: Option<String>,
}

/// The result of a check.
#[derive(Debug, serde::Serialize)]
pub(crate) struct Checked {
    pub measurand: String,
    pub lines: Vec<Line>,
    pub notes: Vec<String>,
}

impl Checked {
    pub(crate) fn compared(&self) -> usize {
        self.lines.iter().filter(|l| l.stated.is_some()).count()
    }

    pub(crate) fn disagreements(&self) -> usize {
        self.lines.iter().filter(|l| !l.agrees).count()
    }

    pub(crate) fn text(&self, grid: &Grid, header: usize, cols: &[(usize, Col)]) -> String {
        let mut s = format!(
            "check of the budget of {} in {}\nheader row {}: {}\n",
            self.measurand,
            grid.name,
            grid.row_number(header),
            cols.iter()
                .map(|(c, k)| format!("{} = {}", k.name(), grid.cell_name(header, *c)))
                .collect::<Vec<_>>()
                .join(", ")
        );
        for l in &self.lines {
            let verdict = if l.agrees { "agrees    " } else { "DISAGREES " };
            let unit = if l.unit.is_empty() || l.unit == "1" {
                String::new()
            } else {
                format!(" {}", l.unit)
            };
            let figure = |v: Option<f64>| v.map_or("-".to_string(), |x| significant(x, 8));
            if l.stated.is_none() && l.computed.is_none() {
                s.push_str(&format!("{verdict}{:<14} {}\n", l.cell, l.what));
            } else {
                s.push_str(&format!(
                    "{verdict}{:<14} {}: stated {}, computed {}{unit}{}\n",
                    l.cell,
                    l.what,
                    figure(l.stated),
                    figure(l.computed),
                    l.relative_difference
                        .filter(|r| *r != 0.0)
                        .map(|r| format!(", relative difference {r:+.2e}"))
                        .unwrap_or_default()
                ));
            }
            if let Some(x) = &l.slip {
                s.push_str(&format!("           likely slip: {x}\n"));
            }
            if let Some(n) = &l.note {
                s.push_str(&format!("           note: {n}\n"));
            }
        }
        for n in &self.notes {
            s.push_str(&format!("note: {n}\n"));
        }
        let bad = self.disagreements();
        s.push_str(&format!(
            "{} agree, {bad} disagree{}\n",
            self.lines.len() - bad,
            if bad == 1 { "s" } else { "" }
        ));
        s
    }

    pub(crate) fn json(
        &self,
        grid: &Grid,
        header: usize,
        cols: &[(usize, Col)],
    ) -> serde_json::Value {
        serde_json::json!({
            "file": grid.name,
            "measurand": self.measurand,
            "header_row": grid.row_number(header),
            "columns": cols.iter().map(|(c, k)| serde_json::json!({"column": k.name(), "cell": grid.cell_name(header, *c)})).collect::<Vec<_>>(),
            "lines": self.lines,
            "notes": self.notes,
            "agree": self.lines.len() - self.disagreements(),
            "disagree": self.disagreements(),
        })
    }
}

/// Half a unit of the last stated digit of `v` stated to `digits`
/// significant digits.
fn half_unit(v: f64, digits: u32) -> f64 {
    if v == 0.0 {
        return 0.5 * 10f64.powi(-(digits as i32));
    }
    0.5 * 10f64.powi(v.abs().log10().floor() as i32 - digits.max(1) as i32 + 1)
}

fn agrees(stated: f64, digits: u32, computed: f64) -> bool {
    (stated - computed).abs() <= half_unit(stated, digits) * (1.0 + 1e-9) + 1e-12 * computed.abs()
}

fn near(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(a.abs())
}

/// The likely slip that makes a stated standard uncertainty differ.
fn u_slip(model: &Model, input: &str, stated: f64, computed: f64) -> Option<String> {
    let i = model.input(input)?;
    match &i.stated {
        InputEvaluation::Expanded {
            expanded_uncertainty,
            coverage_factor,
            ..
        } if near(stated, *expanded_uncertainty, 0.01) => Some(format!(
            "the expanded uncertainty U = {} taken as u: u = U/k with k = {} (JCGM 100:2008, 4.3.3)",
            significant(*expanded_uncertainty, 6),
            significant(*coverage_factor, 4)
        )),
        InputEvaluation::Limits { limits, shape, .. } => {
            let a = match limits {
                LimitsGiven::HalfWidth { half_width, .. } => *half_width,
                LimitsGiven::Bounds { lower, upper, .. } => 0.5 * (upper - lower),
            };
            let root = match shape {
                LimitShape::Rectangular => "√3",
                LimitShape::Triangular => "√6",
                LimitShape::Arcsine => "√2",
                _ => return None,
            };
            if near(stated, a, 0.01) {
                Some(format!(
                    "the half-width a = {} taken as u: for the {} distribution u = a/{root} (JCGM 100:2008, 4.3.7, 4.3.9)",
                    significant(a, 6),
                    shape.name()
                ))
            } else if near(stated, 2.0 * a, 0.01) {
                Some(format!(
                    "the full width 2a = {} taken as u: u = a/{root} with a = {}",
                    significant(2.0 * a, 6),
                    significant(a, 6)
                ))
            } else {
                ratio_slip(stated, computed)
            }
        }
        _ => ratio_slip(stated, computed),
    }
}

/// A slip that shows as a ratio: a sign, a factor 2.
fn ratio_slip(stated: f64, computed: f64) -> Option<String> {
    if computed == 0.0 {
        return None;
    }
    let r = stated / computed;
    if near(r, -1.0, 0.005) {
        Some("the sign: the stated figure is the computed one with the opposite sign".into())
    } else if near(r.abs(), 2.0, 0.01) {
        Some("a factor 2 too many (a factor from a square or a doubled term?)".into())
    } else if near(r.abs(), 0.5, 0.01) {
        Some("a factor 2 missing (the 2 of a square, ∂(x²)/∂x = 2x, forgotten?)".into())
    } else if near(r.abs(), 3f64.sqrt(), 0.005) {
        Some("a factor √3 too many (a half-width not divided by √3?)".into())
    } else {
        None
    }
}

/// What a budget row is.
enum RowKind<'a> {
    Input(&'a incertus_gum::BudgetLine),
    Intermediate(&'a MeasurandResult, f64),
    Result,
    Label(&'static str, usize),
    Other,
}

/// The label of a summary row and the column of the label.
fn label_of(row: &[Cell]) -> Option<(&'static str, usize)> {
    for (c, cell) in row.iter().enumerate() {
        let Some(t) = cell.text.as_deref() else {
            continue;
        };
        let b = super::bare_title(t);
        let kind = if b.contains("combined standard uncertainty") || b == "u c" || b == "uc" {
            "combined standard uncertainty"
        } else if b.contains("effective degrees of freedom")
            || b == "ν eff"
            || b == "v eff"
            || b == "nu eff"
        {
            "effective degrees of freedom"
        } else if b.contains("coverage factor") || b == "k" {
            "coverage factor"
        } else if b.contains("expanded uncertainty") || b == "u (expanded)" {
            "expanded uncertainty"
        } else {
            continue;
        };
        return Some((kind, c));
    }
    None
}

/// Whether `text` names `name`: equal, or a whole word of it.
fn names(text: &str, name: &str) -> bool {
    let t = text.trim();
    t == name
        || t.split(|c: char| !(c.is_alphanumeric() || c == '_'))
            .any(|w| w == name)
}

/// What a row is: named exactly by its quantity cell; else a summary row
/// whose label stands in the quantity column (`coverage factor k` is not
/// the input `k`); else named by a whole word of the cell; else a label
/// elsewhere in the row.
fn row_kind<'a>(
    qtext: &str,
    row: &[Cell],
    qcol: usize,
    model: &Model,
    report: &'a Report,
    r: &'a MeasurandResult,
    target: &incertus_gum::Measurand,
) -> Result<RowKind<'a>, String> {
    let q = qtext.trim();
    let label = label_of(row);
    let other = || label.map_or(RowKind::Other, |(l, c)| RowKind::Label(l, c));
    if q.is_empty() {
        return Ok(other());
    }
    let intermediate = |w: &&MeasurandResult, m: &dyn Fn(&str) -> bool| {
        w.name != r.name && target.formula.depends_on(&w.name) && m(&w.name)
    };
    for exact in [true, false] {
        if !exact && label.is_some_and(|(_, c)| c == qcol) {
            return Ok(other());
        }
        let m = |name: &str| if exact { q == name } else { names(q, name) };
        if let Some(b) = r.budget.iter().find(|b| m(&b.input)) {
            return Ok(RowKind::Input(b));
        }
        if m(&r.name) {
            return Ok(RowKind::Result);
        }
        if let Some(w) = report.results.iter().find(|w| intermediate(w, &m)) {
            let c = intermediate_coefficient(model, report, target, w)?;
            return Ok(RowKind::Intermediate(w, c));
        }
    }
    Ok(other())
}

/// Check the budget rows below the header against the model.
pub(crate) fn check(
    grid: &Grid,
    header: usize,
    cols: &[(usize, Col)],
    model: &Model,
    report: &Report,
    measurand: Option<&str>,
) -> Result<Checked, String> {
    let r = match measurand {
        Some(m) => report
            .results
            .iter()
            .find(|r| r.name == m)
            .ok_or_else(|| format!("--measurand {m}: the model has no measurand `{m}`"))?,
        None => report.results.last().ok_or("the model has no measurand")?,
    };
    let target = model
        .measurands
        .iter()
        .find(|m| m.name == r.name)
        .expect("a result per measurand");
    let col = |k: Col| cols.iter().find(|(_, c)| *c == k).map(|(i, _)| *i);
    let qcol = col(Col::Quantity).expect("a header has a quantity column");
    let mut lines: Vec<Line> = Vec::new();
    let mut notes = Vec::new();
    let mut listed: Vec<String> = Vec::new();
    let mut stated_contributions: Vec<(f64, bool)> = Vec::new();
    let y_unit = r.unit.clone().unwrap_or_default();
    // A budget in terms of intermediate quantities: its input lines carry
    // the partial derivatives of the measurand's own formula.
    let in_terms_of_intermediates = grid.rows.iter().skip(header + 1).any(|row| {
        let q = row
            .get(qcol)
            .and_then(|c| c.text.clone())
            .unwrap_or_default();
        report
            .results
            .iter()
            .any(|w| w.name != r.name && target.formula.depends_on(&w.name) && names(&q, &w.name))
    });
    for (ri, row) in grid.rows.iter().enumerate().skip(header + 1) {
        let qtext = row
            .get(qcol)
            .and_then(|c| c.text.clone())
            .unwrap_or_default();
        let kind = row_kind(&qtext, row, qcol, model, report, r, target)?;
        let rc = RowCx {
            grid,
            ri,
            row,
            cols,
            model,
            report,
            r,
            target,
            y_unit: &y_unit,
        };
        let cell = |k: Col| rc.cell(k);
        match kind {
            RowKind::Input(b) => {
                listed.push(b.input.clone());
                let own = in_terms_of_intermediates;
                input_row(&rc, b, own, &mut lines, &mut stated_contributions)?;
            }
            RowKind::Intermediate(w, c) => {
                listed.push(w.name.clone());
                intermediate_row(&rc, w, c, &mut lines, &mut stated_contributions);
            }
            RowKind::Result => {
                for (k, what, computed) in [
                    (Col::Estimate, format!("estimate of {}", r.name), r.value),
                    (
                        Col::StandardUncertainty,
                        format!("u({})", r.name),
                        r.standard_uncertainty,
                    ),
                ] {
                    let Some((c, x)) = cell(k) else { continue };
                    if let Some(l) = compare_cell(grid, ri, c, x, &what, computed, &y_unit, false) {
                        lines.push(l);
                    }
                }
            }
            RowKind::Label(label, at) => {
                if let Some(l) =
                    summary_line(grid, ri, row, at, label, r, &y_unit, &stated_contributions)
                {
                    lines.push(l);
                }
            }
            RowKind::Other => {
                if !qtext.trim().is_empty() && row.iter().any(|c| c.number.is_some()) {
                    notes.push(format!(
                        "{}: `{}` names no input or measurand of the model; the row is not checked",
                        grid.cell_name(ri, qcol),
                        qtext.trim()
                    ));
                }
            }
        }
    }
    notes.extend(correlation_notes(model, report, r, &listed));
    Ok(Checked {
        measurand: r.name.clone(),
        lines,
        notes,
    })
}

/// What a budget row's check needs.
struct RowCx<'a> {
    grid: &'a Grid,
    ri: usize,
    row: &'a [Cell],
    cols: &'a [(usize, Col)],
    model: &'a Model,
    report: &'a Report,
    r: &'a MeasurandResult,
    target: &'a incertus_gum::Measurand,
    y_unit: &'a str,
}

impl<'a> RowCx<'a> {
    fn cell(&self, k: Col) -> Option<(usize, &'a Cell)> {
        let c = self.cols.iter().find(|(_, x)| *x == k).map(|(i, _)| *i)?;
        self.row.get(c).map(|x| (c, x))
    }
}

/// One line's four figures (estimate, u, c, contribution) with their
/// units, checked where the row states them; `u_slip` names the slip of a
/// disagreeing u (the contribution then follows from it).
#[allow(clippy::too_many_arguments)]
fn line_figures(
    rc: &RowCx,
    name: &str,
    (value, u, unit): (f64, f64, &str),
    (c, c_unit): (f64, &str),
    intermediate: bool,
    u_slip: &dyn Fn(f64, f64) -> Option<String>,
    lines: &mut Vec<Line>,
    stated_contributions: &mut Vec<(f64, bool)>,
) {
    let tag = if intermediate { " (intermediate)" } else { "" };
    let figures = [
        (
            Col::Estimate,
            format!("estimate of {name}{tag}"),
            value,
            unit,
        ),
        (Col::StandardUncertainty, format!("u({name}){tag}"), u, unit),
        (Col::Sensitivity, format!("c({name})"), c, c_unit),
        (
            Col::Contribution,
            format!("contribution of {name} to u({})", rc.r.name),
            (c * u).abs(),
            rc.y_unit,
        ),
    ];
    let mut u_wrong = false;
    for (k, what, computed, unit) in figures {
        let Some((col, x)) = rc.cell(k) else { continue };
        let contribution = k == Col::Contribution;
        let Some(mut l) = compare_cell(rc.grid, rc.ri, col, x, &what, computed, unit, contribution)
        else {
            continue;
        };
        if !l.agrees {
            let stated = l.stated.unwrap_or(0.0);
            l.slip = match k {
                Col::StandardUncertainty => {
                    u_wrong = true;
                    u_slip(stated, computed)
                }
                Col::Contribution if u_wrong => Some("follows from the u of this row".into()),
                _ => ratio_slip(stated, computed),
            };
        }
        if contribution {
            stated_contributions.push((l.stated.unwrap_or(0.0), l.agrees));
        }
        lines.push(l);
    }
}

/// The figures of a row naming an input.
fn input_row(
    rc: &RowCx,
    b: &incertus_gum::BudgetLine,
    own: bool,
    lines: &mut Vec<Line>,
    stated_contributions: &mut Vec<(f64, bool)>,
) -> Result<(), String> {
    let unit = b.unit.clone().unwrap_or_default();
    let c_unit = crate::report::sensitivity_unit(rc.r, b);
    let c = input_coefficient(rc.model, rc.report, rc.target, b, own)?;
    let slip = |stated: f64, computed: f64| u_slip(rc.model, &b.input, stated, computed);
    line_figures(
        rc,
        &b.input,
        (b.value, b.standard_uncertainty, &unit),
        (c, &c_unit),
        false,
        &slip,
        lines,
        stated_contributions,
    );
    let (grid, ri) = (rc.grid, rc.ri);
    if let Some((c, x)) = rc.cell(Col::Dof) {
        if let Some(l) = compare_dof(grid, ri, c, x, &format!("ν({})", b.input), b.dof) {
            lines.push(l);
        }
    }
    if let Some((c, x)) = rc.cell(Col::Distribution) {
        let d = b.distribution.to_string();
        if let Some(l) = compare_distribution(grid, ri, c, x, &b.input, &d) {
            lines.push(l);
        }
    }
    Ok(())
}

/// The figures of a row naming an intermediate quantity `w` (coefficient
/// `c` of the own formula); a wrong u of it is its own budget's slip.
fn intermediate_row(
    rc: &RowCx,
    w: &MeasurandResult,
    c: f64,
    lines: &mut Vec<Line>,
    stated_contributions: &mut Vec<(f64, bool)>,
) {
    let unit = w.unit.clone().unwrap_or_default();
    let c_unit = incertus_units::quotient(rc.y_unit, &unit);
    let slip = |stated: f64, computed: f64| {
        ratio_slip(stated, computed).or_else(|| {
            Some(format!(
                "the intermediate quantity's own uncertainty: check its budget (`incertus eval` gives u({}) = {})",
                w.name,
                significant(w.standard_uncertainty, 5)
            ))
        })
    };
    line_figures(
        rc,
        &w.name,
        (w.value, w.standard_uncertainty, &unit),
        (c, &c_unit),
        true,
        &slip,
        lines,
        stated_contributions,
    );
}

/// One numeric figure of a cell against the computed one (`absolute`:
/// contributions may be stated signed or absolute).
#[allow(clippy::too_many_arguments)]
fn compare_cell(
    grid: &Grid,
    r: usize,
    c: usize,
    x: &Cell,
    what: &str,
    computed: f64,
    unit: &str,
    absolute: bool,
) -> Option<Line> {
    let name = grid.cell_name(r, c);
    if x.formula_without_value {
        return Some(Line {
            cell: name,
            what: what.into(),
            stated: None,
            computed: Some(computed),
            unit: unit.into(),
            agrees: false,
            relative_difference: None,
            slip: None,
            note: Some("a formula without a stored value: open the file in its program, let it calculate and save it".into()),
        });
    }
    let given = x.number?;
    // A column title with a unit of the same dimension as the figure's
    // (`Contribution (mg)` where the model shows g): the stated figure and
    // its rounding are converted to the model's unit.
    let column_unit = grid.column_units.get(c).and_then(Option::as_ref);
    let (scale, note) = match (column_unit, incertus_units::parse(unit).ok()) {
        (Some(cu), Some(fu))
            if !unit.trim().is_empty()
                && cu.dimension == fu.dimension
                && cu.offset == 0.0
                && fu.offset == 0.0
                && cu.factor != fu.factor =>
        {
            let note = format!("stated in {}, compared in {unit}", cu.text.trim());
            (cu.factor / fu.factor, Some(note))
        }
        _ => (1.0, None),
    };
    let stated = given * scale;
    let (s, cmp) = if absolute {
        (stated.abs(), computed.abs())
    } else {
        (stated, computed)
    };
    let tolerance = half_unit(given, x.digits) * scale;
    let ok = (s - cmp).abs() <= tolerance * (1.0 + 1e-9) + 1e-12 * cmp.abs();
    Some(Line {
        cell: name,
        what: what.into(),
        stated: Some(stated),
        computed: Some(computed),
        unit: unit.into(),
        agrees: ok,
        relative_difference: (cmp != 0.0).then(|| (s - cmp) / cmp),
        slip: None,
        note,
    })
}

fn compare_dof(
    grid: &Grid,
    r: usize,
    c: usize,
    x: &Cell,
    what: &str,
    computed: Option<f64>,
) -> Option<Line> {
    let text = x.text.clone().unwrap_or_default().to_lowercase();
    let infinite_text = matches!(text.trim(), "inf" | "∞" | "infinite" | "infinity");
    let stated = if infinite_text {
        Some(f64::INFINITY)
    } else {
        x.number
    };
    let stated = stated?;
    let ok = match computed {
        None => stated.is_infinite() || stated >= 1000.0,
        Some(v) => stated.is_finite() && ((stated - v).abs() < 1.0 || agrees(stated, x.digits, v)),
    };
    Some(Line {
        cell: grid.cell_name(r, c),
        what: what.into(),
        stated: stated.is_finite().then_some(stated),
        computed: computed.or(Some(f64::INFINITY)).filter(|v| v.is_finite()),
        unit: String::new(),
        agrees: ok,
        relative_difference: None,
        slip: None,
        note: computed.is_none().then(|| "computed: infinite".to_string()),
    })
}

fn compare_distribution(
    grid: &Grid,
    r: usize,
    c: usize,
    x: &Cell,
    input: &str,
    computed: &str,
) -> Option<Line> {
    let t = x.text.clone()?.to_lowercase();
    if t.trim().is_empty() {
        return None;
    }
    let synonyms: &[(&str, &[&str])] = &[
        ("normal", &["normal", "gauss", "gaussian"]),
        ("rectangular", &["rectangular", "uniform", "rect"]),
        ("triangular", &["triangular", "triangle"]),
        ("arcsine", &["arcsine", "arc sine", "u-shaped", "u shaped"]),
        ("t", &["student", "t"]),
    ];
    let said: Vec<&str> = synonyms
        .iter()
        .filter(|(_, words)| {
            words.iter().any(|w| {
                t.split(|c: char| !c.is_alphanumeric() && c != '-')
                    .any(|p| p == *w)
                    || t.contains(w) && w.len() > 2
            })
        })
        .map(|(k, _)| *k)
        .collect();
    if said.is_empty() {
        return None;
    }
    let ok = said.contains(&computed) || (computed == "t" && said.contains(&"normal"));
    Some(Line {
        cell: grid.cell_name(r, c),
        what: format!("distribution of {input}"),
        stated: None,
        computed: None,
        unit: String::new(),
        agrees: ok,
        relative_difference: None,
        slip: None,
        note: Some(format!(
            "stated `{}`, the model assigns {computed}",
            x.text.clone().unwrap_or_default().trim()
        )),
    })
}

/// A summary row: its first number after the label against u_c, k, U or
/// ν_eff.
#[allow(clippy::too_many_arguments)]
fn summary_line(
    grid: &Grid,
    ri: usize,
    row: &[Cell],
    at: usize,
    label: &str,
    r: &MeasurandResult,
    y_unit: &str,
    contributions: &[(f64, bool)],
) -> Option<Line> {
    let (c, x) = row
        .iter()
        .enumerate()
        .skip(at + 1)
        .find(|(_, x)| x.number.is_some() || x.formula_without_value)?;
    let (what, computed, unit) = match label {
        "combined standard uncertainty" => {
            (format!("u_c({})", r.name), r.standard_uncertainty, y_unit)
        }
        "coverage factor" => ("k".to_string(), r.coverage_factor, ""),
        "expanded uncertainty" => (format!("U({})", r.name), r.expanded_uncertainty, y_unit),
        _ => {
            let mut l = compare_dof(
                grid,
                ri,
                c,
                x,
                &format!("ν_eff({})", r.name),
                r.effective_dof,
            )?;
            l.what = format!("ν_eff({})", r.name);
            return Some(l);
        }
    };
    // A coverage factor stated as `2` means 2.00 (common practice, no
    // published source): it is judged to three digits at least.
    let x = &Cell {
        digits: if label == "coverage factor" {
            x.digits.max(3)
        } else {
            x.digits
        },
        ..x.clone()
    };
    let mut l = compare_cell(grid, ri, c, x, &what, computed, unit, false)?;
    let stated = l.stated?;
    let large_dof = r
        .effective_dof
        .is_none_or(|v| incertus_gum::coverage::coverage_factor(0.9545, Some(v)) <= 2.05);
    if label == "coverage factor" && !l.agrees && near(stated, 2.0, 1e-9) && large_dof {
        l.agrees = true;
        l.note = Some(format!(
            "k = 2 for a normal distribution with ν_eff = {} (the EA-4/02 convention, about 95 %); the model's p = {} gives k = {}",
            r.effective_dof.map_or("∞".to_string(), |v| significant(v, 4)),
            significant(r.coverage_probability, 4),
            significant(r.coverage_factor, 4)
        ));
    }
    if label == "expanded uncertainty"
        && !l.agrees
        && large_dof
        && agrees(stated, x.digits, 2.0 * r.standard_uncertainty)
    {
        l.agrees = true;
        l.note = Some("U = 2 u_c (k = 2, the EA-4/02 convention for large ν_eff)".into());
    }
    if label == "combined standard uncertainty"
        && !l.agrees
        && !contributions.is_empty()
        && contributions.iter().all(|c| c.1)
        && r.correlation_budget.is_empty()
    {
        let own = contributions.iter().map(|c| c.0 * c.0).sum::<f64>().sqrt();
        if near(stated, own, 1e-6) {
            l.agrees = true;
            l.note = Some("equals √(Σ u_i²) of the stated contributions, each of which agrees within its rounding".into());
        }
    }
    if !l.agrees && l.slip.is_none() {
        l.slip = ratio_slip(stated, computed);
        if label == "expanded uncertainty" && near(stated, r.standard_uncertainty, 0.005) {
            l.slip = Some("u_c stated as U (not multiplied by k)".into());
        }
        if label == "combined standard uncertainty" && near(stated, r.expanded_uncertainty, 0.005) {
            l.slip = Some("U stated as u_c".into());
        }
        if label == "combined standard uncertainty" && !r.correlation_budget.is_empty() {
            let without = r
                .budget
                .iter()
                .map(|b| b.contribution * b.contribution)
                .sum::<f64>()
                .sqrt();
            if agrees(stated, x.digits, without) {
                l.slip =
                    Some("the correlation terms left out of u_c (JCGM 100:2008, 5.2.2)".into());
            }
        }
    }
    Some(l)
}

/// ∂y/∂w of the checked measurand's own formula at the values of the
/// inputs and measurands, in the unit of y per unit of w (w an
/// intermediate measurand).
fn intermediate_coefficient(
    model: &Model,
    report: &Report,
    target: &incertus_gum::Measurand,
    w: &MeasurandResult,
) -> Result<f64, String> {
    let fw = model
        .measurands
        .iter()
        .find(|m| m.name == w.name)
        .map_or(1.0, |m| m.unit_factor());
    own_coefficient(model, report, target, &w.name, fw)
}

/// ∂y/∂name of the own formula of `target` (a partial derivative: the
/// measurands it uses held as they are), at the values of the inputs and
/// measurands, in the unit of y per unit of `name` (`factor`: that unit
/// in coherent SI).
fn own_coefficient(
    model: &Model,
    report: &Report,
    target: &incertus_gum::Measurand,
    name: &str,
    factor: f64,
) -> Result<f64, String> {
    let mut env: Vec<(&str, f64)> = model
        .inputs
        .iter()
        .map(|i| (i.name.as_str(), i.estimate))
        .collect();
    for (m, res) in model.measurands.iter().zip(&report.results) {
        env.push((
            m.name.as_str(),
            m.unit_si
                .as_ref()
                .map_or(res.value, |u| u.value_to_si(res.value)),
        ));
    }
    let d = incertus_expr::derivative(&target.formula, name);
    let c_si = d.eval(env.as_slice()).map_err(|e| {
        format!(
            "the sensitivity coefficient of `{name}` cannot be evaluated: {}",
            e.message
        )
    })?;
    Ok(c_si * factor / target.unit_factor())
}

/// The coefficient of an input line: the partial derivative of the own
/// formula when the budget is in terms of intermediate quantities, the
/// total one (through every measurand) otherwise.
fn input_coefficient(
    model: &Model,
    report: &Report,
    target: &incertus_gum::Measurand,
    b: &incertus_gum::BudgetLine,
    own: bool,
) -> Result<f64, String> {
    if !own {
        return Ok(b.sensitivity);
    }
    let factor = model.input(&b.input).map_or(1.0, |i| i.unit_factor());
    own_coefficient(model, report, target, &b.input, factor)
}

/// Correlations between the lines of the budget: an intermediate quantity
/// with the inputs it is made from, or with another intermediate sharing
/// inputs; and stated correlations between listed inputs.
fn correlation_notes(
    model: &Model,
    report: &Report,
    r: &MeasurandResult,
    listed: &[String],
) -> Vec<String> {
    let mut notes = Vec::new();
    let result = |n: &str| report.results.iter().find(|x| x.name == n);
    for (i, a) in listed.iter().enumerate() {
        for b in listed.iter().skip(i + 1) {
            let rho = match (result(a), result(b)) {
                (Some(wa), _) if wa.name != r.name => line_correlation(model, wa, b, result(b)),
                (_, Some(wb)) if wb.name != r.name => line_correlation(model, wb, a, None),
                _ => {
                    let (ia, ib) = (
                        model.inputs.iter().position(|x| &x.name == a),
                        model.inputs.iter().position(|x| &x.name == b),
                    );
                    match (ia, ib) {
                        (Some(x), Some(y)) => model.correlation(x, y),
                        _ => 0.0,
                    }
                }
            };
            if rho.abs() > 1e-9 {
                notes.push(format!(
                    "`{a}` and `{b}` are correlated (r = {}): the budget's u_c must carry their covariance term 2 c c r u u (JCGM 100:2008, 5.2.2)",
                    significant(rho, 4)
                ));
            }
        }
    }
    notes
}

/// The correlation of an intermediate quantity `w` with a line `other`
/// (an input, or another intermediate `other_w`): Σ_j c_wj u_j r_jk c_ok u_k
/// over inputs, divided by u_w u_other (JCGM 100:2008, 5.2; F.1.2.3).
fn line_correlation(
    model: &Model,
    w: &MeasurandResult,
    other: &str,
    other_w: Option<&MeasurandResult>,
) -> f64 {
    let comp = |m: &MeasurandResult| -> Vec<(usize, f64)> {
        m.budget
            .iter()
            .filter_map(|b| {
                let i = model.inputs.iter().position(|x| x.name == b.input)?;
                Some((i, b.sensitivity * b.standard_uncertainty))
            })
            .collect()
    };
    let a = comp(w);
    let (b, ub): (Vec<(usize, f64)>, f64) = match other_w {
        Some(o) => (comp(o), o.standard_uncertainty),
        None => match model.inputs.iter().position(|x| x.name == other) {
            Some(i) => {
                let u = model.inputs[i].shown().1;
                (vec![(i, u)], u)
            }
            None => return 0.0,
        },
    };
    let mut cov = 0.0;
    for &(i, x) in &a {
        for &(j, y) in &b {
            cov += x * y * model.correlation(i, j);
        }
    }
    let den = w.standard_uncertainty * ub;
    if den > 0.0 {
        cov / den
    } else {
        0.0
    }
}

/// The budget of measurand `r` in terms of the names of its own formula
/// (inputs, and measurands it uses as intermediate quantities), as
/// `eval --in-terms-of` prints it: each line's estimate, standard
/// uncertainty, sensitivity coefficient of the own formula and
/// contribution, then the correlations between lines whose covariance
/// belongs in u_c (JCGM 100:2008, 5.2).
pub(crate) fn own_formula_budget(
    model: &Model,
    report: &Report,
    r: &MeasurandResult,
) -> Result<(crate::report::Table, Vec<String>), String> {
    let target = model
        .measurands
        .iter()
        .find(|m| m.name == r.name)
        .ok_or("no such measurand")?;
    let y_unit = r.unit.clone().unwrap_or_default();
    let mut rows = Vec::new();
    let mut listed = Vec::new();
    for name in target.formula.names() {
        if let Some(b) = r.budget.iter().find(|b| b.input == name) {
            let c = input_coefficient(model, report, target, b, true)?;
            rows.push(vec![
                name.clone(),
                significant(b.value, 8),
                b.unit.clone().unwrap_or_default(),
                significant(b.standard_uncertainty, 5),
                significant(c, 5),
                crate::report::sensitivity_unit(r, b),
                significant((c * b.standard_uncertainty).abs(), 5),
            ]);
            listed.push(name.clone());
        } else if let Some(w) = report.results.iter().find(|w| w.name == name) {
            let c = intermediate_coefficient(model, report, target, w)?;
            let unit = w.unit.clone().unwrap_or_default();
            rows.push(vec![
                format!("{name} (intermediate)"),
                significant(w.value, 8),
                unit.clone(),
                significant(w.standard_uncertainty, 5),
                significant(c, 5),
                incertus_units::quotient(&y_unit, &unit),
                significant((c * w.standard_uncertainty).abs(), 5),
            ]);
            listed.push(name.clone());
        }
    }
    let header = vec![
        "quantity".to_string(),
        "estimate".into(),
        "unit".into(),
        "standard uncertainty".into(),
        "sensitivity coefficient".into(),
        "unit of c".into(),
        format!(
            "contribution u_i({}){}",
            r.name,
            if y_unit.is_empty() {
                String::new()
            } else {
                format!(" / {y_unit}")
            }
        ),
    ];
    Ok((
        crate::report::Table { header, rows },
        correlation_notes(model, report, r, &listed),
    ))
}
