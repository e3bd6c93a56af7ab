//! The plots of a report folder (plotters, SVG, greyscale so that they
//! print): contributions to u²(y); the Monte Carlo histogram with the
//! first-order distribution and both coverage intervals; the first-order
//! distribution against the tolerance limits; for fits, the data with the
//! fitted line and its ±2 u(ŷ) band, and the residuals with the same band
//! around zero.
//!
//! Every plot keeps its legend in a panel to the right of the data, draws
//! only what lies inside its axis ranges (the ranges are made from
//! everything drawn), labels every axis with its unit (quantity / unit, the
//! SI Brochure's form), and uses fonts that stay readable when the plot is
//! shrunk to the width of an A4 page.

use incertus_gum::Report;
use incertus_mc::McReport;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;

/// The size of a plot; the legend panel takes the right `LEGEND` pixels.
const W: u32 = 820;
const H: u32 = 400;
const LEGEND: u32 = 240;
const DARK: RGBColor = RGBColor(30, 30, 30);
const MID: RGBColor = RGBColor(110, 110, 110);
const LIGHT: RGBColor = RGBColor(205, 205, 205);
/// Font sizes in pixels: at the width of an A4 page (about 700 px) the
/// plot is scaled by 0.85, which leaves tick labels near 11 px (8 pt) and
/// axis labels near 12 px (9 pt).
const CAPTION: u32 = 21;
const LABEL: u32 = 19;
const TICK: u32 = 17;

fn perr<E: std::fmt::Debug>(e: E) -> String {
    format!("cannot draw the plot: {e:?}")
}

/// An axis range the plotting library can lay out: finite, ordered, not
/// wider than 1e300 nor narrower than 1e-12 of its magnitude (plotters
/// loops for ever laying out the ticks of a range near 1e308). A range
/// that cannot be drawn is an error naming the plot; a degenerate one is
/// widened around its centre.
pub(crate) fn axis(what: &str, lo: f64, hi: f64) -> Result<std::ops::Range<f64>, String> {
    let bad = || {
        format!("cannot draw the {what}: its values ({lo:e} to {hi:e}) are too large for a plot")
    };
    if !lo.is_finite() || !hi.is_finite() || lo.abs() > 1e300 || hi.abs() > 1e300 {
        return Err(bad());
    }
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    let mag = lo.abs().max(hi.abs());
    let min_width = (1e-12 * mag).max(1e-300);
    if hi - lo < min_width {
        let c = 0.5 * (lo + hi);
        return Ok((c - min_width)..(c + min_width));
    }
    if !(hi - lo).is_finite() {
        return Err(bad());
    }
    Ok(lo..hi)
}

/// The range of `values` widened by `pad` of its width on each side.
fn span(values: impl IntoIterator<Item = f64>, pad: f64) -> (f64, f64) {
    let (mut lo, mut hi) = values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        return (-1.0, 1.0);
    }
    if hi <= lo {
        let d = if lo == 0.0 { 1.0 } else { 0.05 * lo.abs() };
        lo -= d;
        hi += d;
    }
    let w = hi - lo;
    (lo - pad * w, hi + pad * w)
}

/// A file name part from a name (letters, digits, `_`).
pub(crate) fn slug(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// `quantity / unit` for an axis (parentheses around a compound unit),
/// the unit as the SI Brochure prints it.
fn axis_label(quantity: &str, unit: Option<&str>) -> String {
    crate::report::with_unit(quantity, unit.map(incertus_units::si_symbols).as_deref())
}

/// The y label of a probability density over a quantity with `unit`.
fn density_label(unit: Option<&str>) -> String {
    match unit.map(str::trim) {
        Some(u) if !u.is_empty() && u != "1" => {
            format!(
                "probability density / (1/{})",
                incertus_units::si_symbols(u)
            )
        }
        _ => "probability density".into(),
    }
}

/// How a legend entry is drawn.
#[derive(Clone, Copy)]
enum Mark {
    Fill(RGBColor),
    Line(RGBColor, u32),
    Dashed(RGBColor, u32),
    Dot,
    Triangle,
    Cross,
}

/// The legend, in its own panel right of the data: each entry a mark and
/// its text, wrapped to the panel's width.
fn legend(area: &DrawingArea<SVGBackend, Shift>, entries: &[(Mark, String)]) -> Result<(), String> {
    let font = ("sans-serif", TICK).into_font().color(&DARK);
    let mut y = 40i32;
    for (mark, text) in entries {
        let (x0, x1, ym) = (6i32, 34i32, y + 7);
        match *mark {
            Mark::Fill(c) => area
                .draw(&Rectangle::new([(x0, ym - 6), (x1, ym + 6)], c.filled()))
                .map_err(perr)?,
            Mark::Line(c, w) => area
                .draw(&PathElement::new(
                    vec![(x0, ym), (x1, ym)],
                    c.stroke_width(w),
                ))
                .map_err(perr)?,
            Mark::Dashed(c, w) => area
                .draw(&DashedPathElement::new(
                    vec![(x0, ym), (x1, ym)],
                    6,
                    4,
                    c.stroke_width(w),
                ))
                .map_err(perr)?,
            Mark::Dot => area
                .draw(&Circle::new((x0 + 14, ym), 4, DARK.filled()))
                .map_err(perr)?,
            Mark::Triangle => area
                .draw(&TriangleMarker::new((x0 + 14, ym), 7, DARK.filled()))
                .map_err(perr)?,
            Mark::Cross => area
                .draw(&Cross::new((x0 + 14, ym), 6, DARK.stroke_width(2)))
                .map_err(perr)?,
        }
        for line in wrap(text, 22) {
            area.draw(&Text::new(line, (42, y), font.clone()))
                .map_err(perr)?;
            y += 19;
        }
        y += 9;
    }
    Ok(())
}

/// Words of `text` in lines of at most `width` characters (a longer word
/// stands alone).
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = vec![String::new()];
    for word in text.split_whitespace() {
        let last = lines.last_mut().expect("one line");
        if !last.is_empty() && last.chars().count() + 1 + word.chars().count() > width {
            lines.push(word.to_string());
        } else {
            if !last.is_empty() {
                last.push(' ');
            }
            last.push_str(word);
        }
    }
    lines
}

type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// A white picture split into the data area and the legend panel.
fn canvas<'a>(svg: &'a mut String) -> Result<(Area<'a>, Area<'a>), String> {
    let root = SVGBackend::with_string(svg, (W, H)).into_drawing_area();
    root.fill(&WHITE).map_err(perr)?;
    Ok(root.split_horizontally(W - LEGEND))
}

/// A caption that fits the width of the data area: the font shrinks down
/// to the size of the tick labels, then the text is shortened with `…`
/// (the report's figure caption under the plot carries it in full). Widths
/// are estimated at 0.6 of the font size per character, generous for
/// sans-serif.
fn fitted_caption(text: &str, font: u32) -> (String, u32) {
    fitted(text, font, (W - LEGEND - 20) as f64)
}

/// The x axis label fitted to the data area's width, the y label to its
/// height (it is drawn turned).
fn fitted_labels(x: &str, y: &str) -> ((String, u32), (String, u32)) {
    (
        fitted(x, LABEL, (W - LEGEND - 96 - 30) as f64),
        fitted(y, LABEL, (H - 52 - 50) as f64),
    )
}

/// `text` in at most `room` pixels: a smaller font, then shortened.
fn fitted(text: &str, font: u32, room: f64) -> (String, u32) {
    let width = |n: usize, f: u32| n as f64 * 0.6 * f as f64;
    let n = text.chars().count();
    let mut f = font;
    while f > TICK && width(n, f) > room {
        f -= 1;
    }
    if width(n, f) <= room {
        return (text.to_string(), f);
    }
    let keep = (room / (0.6 * f as f64)) as usize - 1;
    (
        format!("{}…", text.chars().take(keep).collect::<String>()),
        f,
    )
}

type Chart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
>;

fn chart<'a, 'b>(
    area: &'a Area<'b>,
    caption: &str,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    labels: (&str, &str),
) -> Result<Chart<'a, 'b>, String> {
    let (caption, size) = fitted_caption(caption, CAPTION);
    let mut chart = ChartBuilder::on(area)
        .caption(caption, ("sans-serif", size))
        .margin(10)
        .x_label_area_size(52)
        .y_label_area_size(96)
        .build_cartesian_2d(x, y)
        .map_err(perr)?;
    let ((xl, xf), (yl, yf)) = fitted_labels(labels.0, labels.1);
    chart
        .configure_mesh()
        .light_line_style(WHITE)
        .label_style(("sans-serif", TICK))
        .axis_desc_style(("sans-serif", xf.min(yf)))
        .x_desc(xl)
        .y_desc(yl)
        .draw()
        .map_err(perr)?;
    Ok(chart)
}

/// Bar chart of the shares of u²(y), correlation terms included.
fn contributions_svg(r: &incertus_gum::MeasurandResult) -> Result<String, String> {
    let mut labels: Vec<String> = r.budget.iter().map(|b| b.input.clone()).collect();
    let mut shares: Vec<f64> = r.budget.iter().map(|b| 100.0 * b.share).collect();
    for c in &r.correlation_budget {
        labels.push(format!("r({},{})", c.inputs[0], c.inputs[1]));
        shares.push(100.0 * c.share);
    }
    let n = labels.len().max(1);
    // Each bar's label fits its share of the axis (the budget table names
    // the quantity in full).
    let room = (((W - LEGEND - 110) as f64 / n as f64) / (0.6 * TICK as f64)).floor() as usize;
    for l in &mut labels {
        if l.chars().count() > room.max(3) {
            *l = format!("{}…", l.chars().take(room.max(3) - 1).collect::<String>());
        }
    }
    let hi = shares.iter().cloned().fold(0.0, f64::max).max(1.0) * 1.1;
    let lo = shares.iter().cloned().fold(0.0, f64::min).min(0.0) * 1.1;
    let mut svg = String::new();
    {
        let (plot, side) = canvas(&mut svg)?;
        let mut chart = ChartBuilder::on(&plot)
            .caption(
                format!("contributions to u²({})", r.name),
                ("sans-serif", CAPTION),
            )
            .margin(10)
            .x_label_area_size(52)
            .y_label_area_size(96)
            .build_cartesian_2d(
                -0.5f64..(n as f64 - 0.5),
                axis("contributions plot", lo, hi)?,
            )
            .map_err(perr)?;
        let names = labels.clone();
        let (_, (y_label, y_font)) = fitted_labels("", &format!("share of u²({}) / %", r.name));
        chart
            .configure_mesh()
            .disable_x_mesh()
            .light_line_style(WHITE)
            .label_style(("sans-serif", TICK))
            .axis_desc_style(("sans-serif", y_font))
            .x_labels(n)
            .x_label_formatter(&|x| {
                let i = x.round();
                if (x - i).abs() < 1e-6 && i >= 0.0 {
                    names.get(i as usize).cloned().unwrap_or_default()
                } else {
                    String::new()
                }
            })
            .x_desc("input quantity (and correlation terms)")
            .y_desc(y_label)
            .draw()
            .map_err(perr)?;
        chart
            .draw_series(shares.iter().enumerate().map(|(i, &v)| {
                let x = i as f64;
                Rectangle::new([(x - 0.35, 0.0), (x + 0.35, v)], MID.filled())
            }))
            .map_err(perr)?;
        let mut entries = vec![(Mark::Fill(MID), "share of u² (c_i u_i)² / u_c²".to_string())];
        if !r.correlation_budget.is_empty() {
            entries.push((
                Mark::Fill(MID),
                "r(a,b): a correlation term 2 c_a c_b r u_a u_b / u_c²; shares add to 100 % with them"
                    .into(),
            ));
        }
        legend(&side, &entries)?;
        plot.present().map_err(perr)?;
    }
    Ok(svg)
}

/// The Monte Carlo histogram with the first-order distribution and both
/// coverage intervals (symmetric dashed, shortest solid).
fn monte_carlo_svg(
    r: &incertus_gum::MeasurandResult,
    m: &incertus_mc::McMeasurand,
) -> Result<String, String> {
    let h = &m.histogram;
    let total = (h.counts.iter().sum::<u64>() + h.below + h.above).max(1) as f64;
    let w = (h.edges[1] - h.edges[0]).max(f64::MIN_POSITIVE);
    let dens: Vec<f64> = h.counts.iter().map(|c| *c as f64 / (total * w)).collect();
    let (x0, x1) = span(
        [h.edges[0], *h.edges.last().expect("edges")]
            .into_iter()
            .chain(m.symmetric_interval)
            .chain(m.shortest_interval),
        0.02,
    );
    let curve: Vec<(f64, f64)> = (0..=300)
        .map(|i| x0 + (x1 - x0) * i as f64 / 300.0)
        .map(|x| (x, r.first_order_density(x)))
        .collect();
    let ymax = dens
        .iter()
        .cloned()
        .chain(curve.iter().map(|p| p.1))
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE)
        * 1.1;
    let unit = r.unit.as_deref();
    let mut svg = String::new();
    {
        let (plot, side) = canvas(&mut svg)?;
        let mut chart = chart(
            &plot,
            &format!(
                "{}: {} Monte Carlo trials and first order",
                r.name, m.trials
            ),
            axis("Monte Carlo histogram", x0, x1)?,
            axis("Monte Carlo histogram", 0.0, ymax)?,
            (&axis_label(&r.name, unit), &density_label(unit)),
        )?;
        chart
            .draw_series(dens.iter().enumerate().map(|(i, &d)| {
                Rectangle::new([(h.edges[i], 0.0), (h.edges[i + 1], d)], LIGHT.filled())
            }))
            .map_err(perr)?;
        chart
            .draw_series(LineSeries::new(curve, DARK.stroke_width(2)))
            .map_err(perr)?;
        let top = ymax * 0.92;
        for x in m.symmetric_interval {
            chart
                .draw_series(std::iter::once(DashedPathElement::new(
                    vec![(x, 0.0), (x, top)],
                    7,
                    5,
                    DARK.stroke_width(2),
                )))
                .map_err(perr)?;
        }
        for x in m.shortest_interval {
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(x, 0.0), (x, top * 0.8)],
                    MID.stroke_width(4),
                )))
                .map_err(perr)?;
        }
        let pc = incertus_gum::rounding::significant_si(100.0 * m.coverage_probability, 4);
        legend(
            &side,
            &[
                (
                    Mark::Fill(LIGHT),
                    "histogram of the Monte Carlo trials".to_string(),
                ),
                (
                    Mark::Line(DARK, 2),
                    "first-order distribution (normal or scaled t)".into(),
                ),
                (
                    Mark::Dashed(DARK, 2),
                    format!("probabilistically symmetric {pc} % interval"),
                ),
                (Mark::Line(MID, 4), format!("shortest {pc} % interval")),
            ],
        )?;
        plot.present().map_err(perr)?;
    }
    Ok(svg)
}

/// The first-order distribution of a measurand against its tolerance
/// interval (JCGM 106:2012): the parts of the curve outside the tolerance
/// shaded (their area is 1 − p_c), the tolerance limits as thick lines, the
/// acceptance limits dashed, the measured value thin. Limits further than
/// 30 u from the value are not drawn and are named in the legend; the
/// axis includes every limit drawn.
fn conformity_svg(
    r: &incertus_gum::MeasurandResult,
    c: &incertus_gum::conformity::Conformity,
) -> Result<String, String> {
    if r.standard_uncertainty == 0.0 {
        return Err("the result has no uncertainty, so there is no distribution to draw".into());
    }
    let u = r.standard_uncertainty;
    let y = r.value;
    let near = |v: Option<f64>| v.filter(|v| (v - y).abs() <= 30.0 * u);
    let (al, ah) = match c.acceptance_interval {
        Some([a, b]) => (a, b),
        None => (None, None),
    };
    let tol: Vec<f64> = [c.lower_limit, c.upper_limit]
        .into_iter()
        .filter_map(near)
        .collect();
    let acc: Vec<f64> = if c.rule == incertus_gum::conformity::Rule::SimpleAcceptance {
        Vec::new()
    } else {
        [al, ah].into_iter().filter_map(near).collect()
    };
    let (x0, x1) = span(
        tol.iter()
            .chain(&acc)
            .copied()
            .chain([y - 4.0 * u, y + 4.0 * u]),
        0.04,
    );
    let curve: Vec<(f64, f64)> = (0..=400)
        .map(|i| x0 + (x1 - x0) * i as f64 / 400.0)
        .map(|x| (x, r.first_order_density(x)))
        .collect();
    let ymax = curve
        .iter()
        .map(|p| p.1)
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE)
        * 1.1;
    let unit = r.unit.as_deref();
    let lo = c.lower_limit.unwrap_or(f64::NEG_INFINITY);
    let hi = c.upper_limit.unwrap_or(f64::INFINITY);
    let mut svg = String::new();
    {
        let (plot, side) = canvas(&mut svg)?;
        let mut chart = chart(
            &plot,
            &{
                let pc = match (&c.monte_carlo, c.decided_on_trials) {
                    (Some(m), true) if m.inside == 0 || m.inside >= m.trials => {
                        let b = incertus_gum::conformity::zero_count_bound(m.trials);
                        if m.inside == 0 {
                            format!("< {}", incertus_gum::conformity::probability(b))
                        } else {
                            format!("> {}", incertus_gum::conformity::probability(1.0 - b))
                        }
                    }
                    _ => c.conformance_text(),
                };
                let rel = if pc.starts_with(['<', '>']) { "" } else { "= " };
                format!("{}: p_c {rel}{pc}, {}", r.name, c.verdict)
            },
            axis("conformity plot", x0, x1)?,
            axis("conformity plot", 0.0, ymax)?,
            (&axis_label(&r.name, unit), &density_label(unit)),
        )?;
        let outside: Vec<(f64, f64)> = curve
            .iter()
            .map(|&(x, d)| (x, if x < lo || x > hi { d } else { 0.0 }))
            .collect();
        chart
            .draw_series(AreaSeries::new(outside, 0.0, LIGHT.filled()))
            .map_err(perr)?;
        chart
            .draw_series(LineSeries::new(curve, DARK.stroke_width(2)))
            .map_err(perr)?;
        let top = ymax * 0.95;
        let vline = |x: f64| vec![(x, 0.0), (x, top)];
        chart
            .draw_series(
                tol.iter()
                    .map(|&x| PathElement::new(vline(x), DARK.stroke_width(4))),
            )
            .map_err(perr)?;
        for &x in &acc {
            chart
                .draw_series(std::iter::once(DashedPathElement::new(
                    vline(x),
                    7,
                    5,
                    MID.stroke_width(2),
                )))
                .map_err(perr)?;
        }
        chart
            .draw_series(std::iter::once(PathElement::new(
                vline(y),
                MID.stroke_width(1),
            )))
            .map_err(perr)?;
        let mut entries = vec![
            (
                Mark::Line(DARK, 2),
                "first-order distribution of the measurand".to_string(),
            ),
            (
                Mark::Fill(LIGHT),
                "outside the tolerance (area 1 − p_c)".into(),
            ),
            (Mark::Line(DARK, 4), "tolerance limits".into()),
        ];
        if !acc.is_empty() {
            entries.push((
                Mark::Dashed(MID, 2),
                format!("acceptance limits ({})", c.rule),
            ));
        }
        entries.push((Mark::Line(MID, 1), "measured value".into()));
        let shown = |v: f64| incertus_gum::rounding::significant_si(v, 6);
        for (what, v) in [("lower", c.lower_limit), ("upper", c.upper_limit)] {
            if let Some(v) = v.filter(|v| (v - y).abs() > 30.0 * u) {
                entries.push((
                    Mark::Line(WHITE, 1),
                    format!(
                        "{what} tolerance limit {} off the scale (more than 30 u away)",
                        shown(v)
                    ),
                ));
            }
        }
        legend(&side, &entries)?;
        plot.present().map_err(perr)?;
    }
    Ok(svg)
}

/// The points of a fit at (x, y(p)): plain as dots, flagged as triangles,
/// excluded as crosses.
fn draw_points(
    chart: &mut Chart,
    points: &[incertus_fit::Point],
    y: impl Fn(&incertus_fit::Point) -> f64,
) -> Result<(), String> {
    chart
        .draw_series(
            points
                .iter()
                .filter(|p| !p.excluded && !p.flagged)
                .map(|p| Circle::new((p.x, y(p)), 4, DARK.filled())),
        )
        .map_err(perr)?;
    chart
        .draw_series(
            points
                .iter()
                .filter(|p| p.flagged && !p.excluded)
                .map(|p| TriangleMarker::new((p.x, y(p)), 7, DARK.filled())),
        )
        .map_err(perr)?;
    chart
        .draw_series(
            points
                .iter()
                .filter(|p| p.excluded)
                .map(|p| Cross::new((p.x, y(p)), 6, DARK.stroke_width(2))),
        )
        .map_err(perr)?;
    Ok(())
}

/// Legend entries of the points that occur.
fn point_entries(points: &[incertus_fit::Point]) -> Vec<(Mark, String)> {
    let mut e = vec![(Mark::Dot, "point".to_string())];
    if points.iter().any(|p| p.flagged && !p.excluded) {
        e.push((Mark::Triangle, "flagged point (see the data table)".into()));
    }
    if points.iter().any(|p| p.excluded) {
        e.push((Mark::Cross, "excluded point".into()));
    }
    e
}

/// A band drawn as a light area with dashed edges, so that it shows even
/// where it is narrow.
fn draw_band(chart: &mut Chart, hi: &[(f64, f64)], lo: &[(f64, f64)]) -> Result<(), String> {
    let mut poly: Vec<(f64, f64)> = hi.to_vec();
    poly.extend(lo.iter().rev().cloned());
    chart
        .draw_series(std::iter::once(Polygon::new(poly, LIGHT.filled())))
        .map_err(perr)?;
    for edge in [hi, lo] {
        chart
            .draw_series(std::iter::once(DashedPathElement::new(
                edge.to_vec(),
                6,
                4,
                MID.stroke_width(1),
            )))
            .map_err(perr)?;
    }
    Ok(())
}

/// The data of a fit with the fitted line and its ±2 u(ŷ) band, and the
/// residuals with the same band around zero (where it can be seen when it
/// is too narrow beside the data).
fn fit_svgs(nf: &incertus_gum::model::NamedFit) -> Result<(String, String), String> {
    let f = &nf.result;
    let (x0, x1) = span(f.points.iter().map(|p| p.x), 0.05);
    let line: Vec<(f64, f64)> = (0..=200)
        .map(|i| x0 + (x1 - x0) * i as f64 / 200.0)
        .map(|x| (x, f.predict(x)))
        .collect();
    let half: Vec<f64> = line
        .iter()
        .map(|&(x, _)| 2.0 * f.predict_standard_uncertainty(x))
        .collect();
    let band = |sign: f64, base: &dyn Fn(f64) -> f64| -> Vec<(f64, f64)> {
        line.iter()
            .zip(&half)
            .map(|(&(x, yv), &h)| (x, base(yv) + sign * h))
            .collect()
    };
    let (hi, lo) = (band(1.0, &|y| y), band(-1.0, &|y| y));
    let (y0, y1) = span(
        f.points
            .iter()
            .map(|p| p.y)
            .chain(hi.iter().map(|p| p.1))
            .chain(lo.iter().map(|p| p.1)),
        0.05,
    );
    let widest = half.iter().cloned().fold(0.0, f64::max);
    let thin = widest < 0.01 * (y1 - y0);
    let (xl, yl) = (
        axis_label(&nf.x, nf.x_unit.as_deref()),
        axis_label(&nf.y, nf.y_unit.as_deref()),
    );
    let mut data = String::new();
    {
        let (plot, side) = canvas(&mut data)?;
        let mut chart = chart(
            &plot,
            &format!("fit {}: {} against {}", nf.name, nf.y, nf.x),
            axis("fit plot", x0, x1)?,
            axis("fit plot", y0, y1)?,
            (&xl, &yl),
        )?;
        draw_band(&mut chart, &hi, &lo)?;
        chart
            .draw_series(LineSeries::new(line.clone(), DARK.stroke_width(2)))
            .map_err(perr)?;
        draw_points(&mut chart, &f.points, |p| p.y)?;
        let mut entries = vec![
            (Mark::Line(DARK, 2), "fitted line".to_string()),
            (
                Mark::Dashed(MID, 1),
                if thin {
                    "band ± 2 u(ŷ) of the line: narrower than the line at this scale, drawn on the residual plot".into()
                } else {
                    "band ± 2 u(ŷ) of the line".into()
                },
            ),
        ];
        entries.extend(point_entries(&f.points));
        legend(&side, &entries)?;
        plot.present().map_err(perr)?;
    }
    let (zhi, zlo) = (band(1.0, &|_| 0.0), band(-1.0, &|_| 0.0));
    let rmax = f
        .points
        .iter()
        .map(|p| p.residual.abs())
        .chain(half.iter().copied())
        .fold(0.0f64, f64::max)
        .max(f64::MIN_POSITIVE)
        * 1.15;
    let mut resid = String::new();
    {
        let (plot, side) = canvas(&mut resid)?;
        let mut chart = chart(
            &plot,
            &format!("fit {}: residuals", nf.name),
            axis("residual plot", x0, x1)?,
            axis("residual plot", -rmax, rmax)?,
            (
                &xl,
                &axis_label(&format!("residual of {}", nf.y), nf.y_unit.as_deref()),
            ),
        )?;
        draw_band(&mut chart, &zhi, &zlo)?;
        chart
            .draw_series(LineSeries::new(vec![(x0, 0.0), (x1, 0.0)], MID))
            .map_err(perr)?;
        draw_points(&mut chart, &f.points, |p| p.residual)?;
        let mut entries = vec![(
            Mark::Dashed(MID, 1),
            "± 2 u(ŷ) of the fitted line, around zero".to_string(),
        )];
        entries.extend(point_entries(&f.points));
        legend(&side, &entries)?;
        plot.present().map_err(perr)?;
    }
    Ok((data, resid))
}

/// The plots of a report folder, made in memory (also used by the fuzz
/// tests, so that no input can make a plot panic or hang).
#[derive(Debug, Default)]
pub struct Plots {
    /// (file name, caption, SVG text).
    pub drawn: Vec<(String, String, String)>,
    /// Plots that could not be drawn, with the reason (stated in the report).
    pub not_drawn: Vec<String>,
}

/// Every plot of a report.
pub fn plots(report: &Report, mc: Option<&McReport>) -> Plots {
    let mut p = Plots::default();
    let mut add = |file: String, caption: String, svg: Result<String, String>| match svg {
        Ok(svg) => p.drawn.push((file, caption, svg)),
        Err(e) => p.not_drawn.push(format!("{file}: {e}")),
    };
    for r in &report.results {
        add(
            format!("contributions_{}.svg", slug(&r.name)),
            format!(
                "Contributions to u²({}), correlation terms included",
                r.name
            ),
            contributions_svg(r),
        );
        if let Some(c) = &r.conformity {
            add(
                format!("conformity_{}.svg", slug(&r.name)),
                format!(
                    "Conformity of {} with its tolerance (JCGM 106:2012)",
                    r.name
                ),
                conformity_svg(r, c),
            );
        }
        if let Some(m) = mc.and_then(|mc| mc.results.iter().find(|m| m.name == r.name)) {
            add(
                format!("monte_carlo_{}.svg", slug(&r.name)),
                format!(
                    "Propagation of distributions for {} (JCGM 101:2008)",
                    r.name
                ),
                monte_carlo_svg(r, m),
            );
        }
    }
    for f in &report.fits {
        let what = format!("{} against {}", f.y, f.x);
        match fit_svgs(f) {
            Ok((data, resid)) => {
                add(
                    format!("fit_{}.svg", slug(&f.name)),
                    format!(
                        "Fit {}: {what}, data, fitted line and its ±2 u(ŷ) band",
                        f.name
                    ),
                    Ok(data),
                );
                add(
                    format!("residuals_{}.svg", slug(&f.name)),
                    format!("Fit {}: residuals of {what}", f.name),
                    Ok(resid),
                );
            }
            Err(e) => add(format!("fit_{}.svg", slug(&f.name)), String::new(), Err(e)),
        }
    }
    p
}

/// Most items drawn in the plot of a table of items (the tables hold all).
const MOST_ITEMS: usize = 2000;

/// Each item's value of measurand `k` with its coverage interval (y ± U, or
/// the Monte Carlo interval when that is reported) against the tolerance
/// limits, items in the table's order.
pub(crate) fn items_svg(items: &[crate::items::Evaluated], k: usize) -> Result<String, String> {
    let shown = &items[..items.len().min(MOST_ITEMS)];
    let pts: Vec<(f64, f64, f64, f64)> = shown
        .iter()
        .enumerate()
        .map(|(i, e)| {
            let r = &e.results[k];
            ((i + 1) as f64, r.value, r.interval[0], r.interval[1])
        })
        .collect();
    let first = &items[0].results[k];
    let limits: Vec<f64> = first
        .conformity
        .as_ref()
        .map(|c| [c.lower, c.upper].into_iter().flatten().collect())
        .unwrap_or_default();
    let (y0, y1) = span(
        pts.iter()
            .flat_map(|p| [p.2, p.3])
            .chain(limits.iter().copied()),
        0.06,
    );
    let n = pts.len();
    let unit = first.unit.as_deref();
    let mut svg = String::new();
    {
        let (plot, side) = canvas(&mut svg)?;
        let mut chart = chart(
            &plot,
            &format!("{} of {} items", first.name, items.len()),
            axis("items plot", 0.0, n as f64 + 1.0)?,
            axis("items plot", y0, y1)?,
            (
                "item (in the table's order)",
                &axis_label(&first.name, unit),
            ),
        )?;
        let dot = if n > 200 { 2 } else { 4 };
        chart
            .draw_series(pts.iter().map(|&(x, _, lo, hi)| {
                PathElement::new(vec![(x, lo), (x, hi)], MID.stroke_width(1))
            }))
            .map_err(perr)?;
        chart
            .draw_series(
                pts.iter()
                    .map(|&(x, y, ..)| Circle::new((x, y), dot, DARK.filled())),
            )
            .map_err(perr)?;
        for &l in &limits {
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(0.0, l), (n as f64 + 1.0, l)],
                    DARK.stroke_width(3),
                )))
                .map_err(perr)?;
        }
        let mut entries = vec![
            (Mark::Dot, "measured value".to_string()),
            (Mark::Line(MID, 1), "coverage interval (y ± U)".into()),
        ];
        if !limits.is_empty() {
            entries.push((Mark::Line(DARK, 3), "tolerance limits".into()));
        }
        if items.len() > MOST_ITEMS {
            entries.push((
                Mark::Line(WHITE, 1),
                format!("the first {MOST_ITEMS} of {} items are drawn", items.len()),
            ));
        }
        legend(&side, &entries)?;
        plot.present().map_err(perr)?;
    }
    Ok(svg)
}
