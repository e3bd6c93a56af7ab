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

use incertus_fit::FitResult;
use incertus_gum::Report;
use incertus_mc::McReport;
use plotters::prelude::*;

use crate::report::{self, Style};
use crate::Failure;

const W: u32 = 720;
const H: u32 = 380;
const DARK: RGBColor = RGBColor(40, 40, 40);
const MID: RGBColor = RGBColor(120, 120, 120);
const LIGHT: RGBColor = RGBColor(200, 200, 200);

fn perr<E: std::fmt::Debug>(e: E) -> String {
    format!("cannot draw the plot: {e:?}")
}

/// A file name part from a name (letters, digits, `_`).
/// An axis range the plotting library can lay out: finite, ordered, not
/// wider than 1e300 nor narrower than 1e-12 of its magnitude (plotters
/// loops for ever laying out the ticks of a range near 1e308). A range
/// that cannot be drawn is an error naming the plot; a degenerate one is
/// widened around its centre.
fn axis(what: &str, lo: f64, hi: f64) -> Result<std::ops::Range<f64>, String> {
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

fn slug(s: &str) -> String {
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

/// Bar chart of the shares of u²(y).
fn contributions_svg(r: &incertus_gum::MeasurandResult) -> Result<String, String> {
    let mut labels: Vec<String> = r.budget.iter().map(|b| b.input.clone()).collect();
    let mut shares: Vec<f64> = r.budget.iter().map(|b| 100.0 * b.share).collect();
    for c in &r.correlation_budget {
        labels.push(format!("r({},{})", c.inputs[0], c.inputs[1]));
        shares.push(100.0 * c.share);
    }
    let n = labels.len().max(1);
    let hi = shares.iter().cloned().fold(0.0, f64::max).max(1.0) * 1.1;
    let lo = shares.iter().cloned().fold(0.0, f64::min).min(0.0) * 1.1;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (W, H)).into_drawing_area();
        root.fill(&WHITE).map_err(perr)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!("contributions to u²({})", r.name),
                ("sans-serif", 18),
            )
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .build_cartesian_2d(
                -0.5f64..(n as f64 - 0.5),
                axis("contributions plot", lo, hi)?,
            )
            .map_err(perr)?;
        let names = labels.clone();
        chart
            .configure_mesh()
            .disable_x_mesh()
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
            .y_desc("share of u² / %")
            .draw()
            .map_err(perr)?;
        chart
            .draw_series(shares.iter().enumerate().map(|(i, &v)| {
                let x = i as f64;
                Rectangle::new([(x - 0.35, 0.0), (x + 0.35, v)], MID.filled())
            }))
            .map_err(perr)?;
        root.present().map_err(perr)?;
    }
    Ok(svg)
}

/// The density of the first-order distribution of a result: normal, or
/// Student's t with the dof used for k, scaled by u_c and centred on y.
fn first_order_pdf(r: &incertus_gum::MeasurandResult) -> impl Fn(f64) -> f64 + '_ {
    move |x: f64| r.first_order_density(x)
}

/// The Monte Carlo histogram with the first-order distribution and both
/// coverage intervals.
fn monte_carlo_svg(
    r: &incertus_gum::MeasurandResult,
    m: &incertus_mc::McMeasurand,
) -> Result<String, String> {
    let h = &m.histogram;
    let total = (h.counts.iter().sum::<u64>() + h.below + h.above).max(1) as f64;
    let w = (h.edges[1] - h.edges[0]).max(f64::MIN_POSITIVE);
    let dens: Vec<f64> = h.counts.iter().map(|c| *c as f64 / (total * w)).collect();
    let (x0, x1) = (h.edges[0], *h.edges.last().expect("edges"));
    let first_order = first_order_pdf(r);
    let curve: Vec<(f64, f64)> = (0..=200)
        .map(|i| x0 + (x1 - x0) * i as f64 / 200.0)
        .map(|x| (x, first_order(x)))
        .collect();
    let ymax = dens
        .iter()
        .cloned()
        .chain(curve.iter().map(|p| p.1))
        .fold(0.0, f64::max)
        * 1.15;
    let unit = r
        .unit
        .as_ref()
        .map(|u| format!(" / {u}"))
        .unwrap_or_default();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (W, H)).into_drawing_area();
        root.fill(&WHITE).map_err(perr)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!(
                    "{}: Monte Carlo ({} trials) and first order",
                    r.name, m.trials
                ),
                ("sans-serif", 18),
            )
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(
                axis("Monte Carlo histogram", x0, x1)?,
                axis("Monte Carlo histogram", 0.0, ymax.max(f64::MIN_POSITIVE))?,
            )
            .map_err(perr)?;
        chart
            .configure_mesh()
            .x_desc(format!("{}{unit}", r.name))
            .y_desc("probability density")
            .draw()
            .map_err(perr)?;
        chart
            .draw_series(dens.iter().enumerate().map(|(i, &d)| {
                Rectangle::new([(h.edges[i], 0.0), (h.edges[i + 1], d)], LIGHT.filled())
            }))
            .map_err(perr)?
            .label("Monte Carlo trials")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], LIGHT.filled()));
        chart
            .draw_series(LineSeries::new(curve, DARK.stroke_width(2)))
            .map_err(perr)?
            .label("first order (Gaussian or scaled t)")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], DARK.stroke_width(2)));
        let vline = |x: f64| vec![(x, 0.0), (x, ymax * 0.95)];
        for (iv, style, label) in [
            (
                m.symmetric_interval,
                DARK.stroke_width(1),
                "probabilistically symmetric interval",
            ),
            (
                m.shortest_interval,
                MID.stroke_width(3),
                "shortest interval",
            ),
        ] {
            chart
                .draw_series(
                    [iv[0], iv[1]]
                        .into_iter()
                        .map(|x| PathElement::new(vline(x), style)),
                )
                .map_err(perr)?
                .label(label)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], style));
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.9))
            .border_style(MID)
            .draw()
            .map_err(perr)?;
        root.present().map_err(perr)?;
    }
    Ok(svg)
}

/// The first-order distribution of a measurand against its tolerance
/// interval (JCGM 106:2012): the parts of the curve outside the tolerance
/// shaded (their area is 1 − p_c), the tolerance limits as thick lines, the
/// acceptance limits as thin ones, the measured value dotted.
fn conformity_svg(
    r: &incertus_gum::MeasurandResult,
    c: &incertus_gum::conformity::Conformity,
) -> Result<String, String> {
    if r.standard_uncertainty == 0.0 {
        return Err("the result has no uncertainty, so there is no distribution to draw".into());
    }
    let u = r.standard_uncertainty;
    let y = r.value;
    let pdf = first_order_pdf(r);
    // Limits further than 10 u from the value are left out of the picture.
    let near = |v: Option<f64>| v.filter(|v| (v - y).abs() <= 10.0 * u);
    let (al, ah) = match c.acceptance_interval {
        Some([a, b]) => (a, b),
        None => (None, None),
    };
    let marks: Vec<f64> = [c.lower_limit, c.upper_limit, al, ah]
        .into_iter()
        .filter_map(near)
        .collect();
    let x0 = marks.iter().copied().fold(y - 4.0 * u, f64::min) - 0.5 * u;
    let x1 = marks.iter().copied().fold(y + 4.0 * u, f64::max) + 0.5 * u;
    let curve: Vec<(f64, f64)> = (0..=400)
        .map(|i| x0 + (x1 - x0) * i as f64 / 400.0)
        .map(|x| (x, pdf(x)))
        .collect();
    let ymax = curve
        .iter()
        .map(|p| p.1)
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE)
        * 1.15;
    let unit = r
        .unit
        .as_ref()
        .map(|u| format!(" / {u}"))
        .unwrap_or_default();
    let lo = c.lower_limit.unwrap_or(f64::NEG_INFINITY);
    let hi = c.upper_limit.unwrap_or(f64::INFINITY);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (W, H)).into_drawing_area();
        root.fill(&WHITE).map_err(perr)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!(
                    "{}: p_c = {} under {}, {}",
                    r.name,
                    incertus_gum::conformity::probability(c.conformance_probability),
                    c.rule,
                    c.verdict
                ),
                ("sans-serif", 17),
            )
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(
                axis("conformity plot", x0, x1)?,
                axis("conformity plot", 0.0, ymax)?,
            )
            .map_err(perr)?;
        chart
            .configure_mesh()
            .x_desc(format!("{}{unit}", r.name))
            .y_desc("probability density")
            .draw()
            .map_err(perr)?;
        let outside: Vec<(f64, f64)> = curve
            .iter()
            .map(|&(x, d)| (x, if x < lo || x > hi { d } else { 0.0 }))
            .collect();
        chart
            .draw_series(AreaSeries::new(outside, 0.0, LIGHT.filled()))
            .map_err(perr)?
            .label("outside the tolerance (area 1 − p_c)")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], LIGHT.filled()));
        chart
            .draw_series(LineSeries::new(curve, DARK.stroke_width(2)))
            .map_err(perr)?
            .label("first-order distribution of the measurand")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], DARK.stroke_width(2)));
        let vline = |x: f64| vec![(x, 0.0), (x, ymax * 0.95)];
        let tol: Vec<f64> = [c.lower_limit, c.upper_limit]
            .into_iter()
            .filter_map(near)
            .collect();
        chart
            .draw_series(
                tol.into_iter()
                    .map(|x| PathElement::new(vline(x), DARK.stroke_width(3))),
            )
            .map_err(perr)?
            .label("tolerance limits")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], DARK.stroke_width(3)));
        if c.rule != incertus_gum::conformity::Rule::SimpleAcceptance {
            let acc: Vec<f64> = [al, ah].into_iter().filter_map(near).collect();
            chart
                .draw_series(
                    acc.into_iter()
                        .map(|x| PathElement::new(vline(x), MID.stroke_width(2))),
                )
                .map_err(perr)?
                .label("acceptance limits")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], MID.stroke_width(2)));
        }
        chart
            .draw_series(std::iter::once(PathElement::new(
                vline(y),
                MID.stroke_width(1),
            )))
            .map_err(perr)?
            .label("measured value")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], MID.stroke_width(1)));
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.9))
            .border_style(MID)
            .draw()
            .map_err(perr)?;
        root.present().map_err(perr)?;
    }
    Ok(svg)
}

/// u(ŷ) at x from the parameters' covariance (g = 1, x, x², ...).
type Chart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
>;

/// The points of a fit at (x, y(p)): plain as dots, flagged as triangles,
/// excluded as crosses; with legend entries when asked.
fn draw_points(
    chart: &mut Chart,
    points: &[incertus_fit::Point],
    y: impl Fn(&incertus_fit::Point) -> f64,
    legend: bool,
) -> Result<(), String> {
    let plain = chart
        .draw_series(
            points
                .iter()
                .filter(|p| !p.excluded && !p.flagged)
                .map(|p| Circle::new((p.x, y(p)), 4, DARK.filled())),
        )
        .map_err(perr)?;
    if legend {
        plain
            .label("point")
            .legend(|(x, y)| Circle::new((x + 8, y), 4, DARK.filled()));
    }
    let flagged = chart
        .draw_series(
            points
                .iter()
                .filter(|p| p.flagged && !p.excluded)
                .map(|p| TriangleMarker::new((p.x, y(p)), 7, DARK.filled())),
        )
        .map_err(perr)?;
    if legend {
        flagged
            .label("flagged point")
            .legend(|(x, y)| TriangleMarker::new((x + 8, y), 7, DARK.filled()));
    }
    let excluded = chart
        .draw_series(
            points
                .iter()
                .filter(|p| p.excluded)
                .map(|p| Cross::new((p.x, y(p)), 6, DARK.stroke_width(2))),
        )
        .map_err(perr)?;
    if legend {
        excluded
            .label("excluded point")
            .legend(|(x, y)| Cross::new((x + 8, y), 6, DARK.stroke_width(2)));
    }
    Ok(())
}

fn fit_svgs(
    name: &str,
    xname: &str,
    yname: &str,
    f: &FitResult,
) -> Result<(String, String), String> {
    let xs: Vec<f64> = f.points.iter().map(|p| p.x).collect();
    let ys: Vec<f64> = f.points.iter().map(|p| p.y).collect();
    let (mut x0, mut x1) = xs
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    if x1.partial_cmp(&x0) != Some(std::cmp::Ordering::Greater) {
        x0 -= 1.0;
        x1 += 1.0;
    }
    let pad = 0.05 * (x1 - x0);
    let (x0, x1) = (x0 - pad, x1 + pad);
    let line: Vec<(f64, f64)> = (0..=200)
        .map(|i| x0 + (x1 - x0) * i as f64 / 200.0)
        .map(|x| (x, f.predict(x)))
        .collect();
    let band_hi: Vec<(f64, f64)> = line
        .iter()
        .map(|&(x, y)| (x, y + 2.0 * f.predict_standard_uncertainty(x)))
        .collect();
    let band_lo: Vec<(f64, f64)> = line
        .iter()
        .map(|&(x, y)| (x, y - 2.0 * f.predict_standard_uncertainty(x)))
        .collect();
    let (mut y0, mut y1) = ys
        .iter()
        .chain(band_hi.iter().map(|p| &p.1))
        .chain(band_lo.iter().map(|p| &p.1))
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &y| {
            (a.min(y), b.max(y))
        });
    if y1.partial_cmp(&y0) != Some(std::cmp::Ordering::Greater) {
        y0 -= 1.0;
        y1 += 1.0;
    }
    let ypad = 0.05 * (y1 - y0);
    let mut data = String::new();
    {
        let root = SVGBackend::with_string(&mut data, (W, H)).into_drawing_area();
        root.fill(&WHITE).map_err(perr)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!("fit {name}: {yname} against {xname}"),
                ("sans-serif", 18),
            )
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(
                axis("fit plot", x0, x1)?,
                axis("fit plot", y0 - ypad, y1 + ypad)?,
            )
            .map_err(perr)?;
        chart
            .configure_mesh()
            .x_desc(xname)
            .y_desc(yname)
            .draw()
            .map_err(perr)?;
        let mut poly: Vec<(f64, f64)> = band_hi.clone();
        poly.extend(band_lo.iter().rev().cloned());
        chart
            .draw_series(std::iter::once(Polygon::new(poly, LIGHT.filled())))
            .map_err(perr)?
            .label("band ± 2 u(ŷ)")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], LIGHT.filled()));
        chart
            .draw_series(LineSeries::new(line, DARK.stroke_width(2)))
            .map_err(perr)?
            .label("fitted line")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], DARK.stroke_width(2)));
        draw_points(&mut chart, &f.points, |p| p.y, true)?;
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.9))
            .border_style(MID)
            .draw()
            .map_err(perr)?;
        root.present().map_err(perr)?;
    }
    let res: Vec<f64> = f.points.iter().map(|p| p.residual).collect();
    let rmax = res
        .iter()
        .fold(0.0f64, |m, r| m.max(r.abs()))
        .max(f64::MIN_POSITIVE)
        * 1.2;
    let mut resid = String::new();
    {
        let root = SVGBackend::with_string(&mut resid, (W, H)).into_drawing_area();
        root.fill(&WHITE).map_err(perr)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(format!("fit {name}: residuals"), ("sans-serif", 18))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(
                axis("residual plot", x0, x1)?,
                axis("residual plot", -rmax, rmax)?,
            )
            .map_err(perr)?;
        chart
            .configure_mesh()
            .x_desc(xname)
            .y_desc(format!("residual of {yname}"))
            .draw()
            .map_err(perr)?;
        chart
            .draw_series(LineSeries::new(vec![(x0, 0.0), (x1, 0.0)], MID))
            .map_err(perr)?;
        draw_points(&mut chart, &f.points, |p| p.residual, false)?;
        root.present().map_err(perr)?;
    }
    Ok((data, resid))
}

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
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

pub fn plots(
    report: &Report,
    mc: Option<&McReport>,
    extra_fits: &[(String, String, String, FitResult)],
) -> Plots {
    let mut p = Plots::default();
    let mut add = |file: String, caption: String, svg: Result<String, String>| match svg {
        Ok(svg) => p.drawn.push((file, caption, svg)),
        Err(e) => p.not_drawn.push(format!("{file}: {e}")),
    };
    for r in &report.results {
        add(
            format!("contributions_{}.svg", slug(&r.name)),
            format!("Contributions to u²({})", r.name),
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
                format!("Propagation of distributions for {}", r.name),
                monte_carlo_svg(r, m),
            );
        }
    }
    let mut fits: Vec<(String, String, String, &FitResult)> = report
        .fits
        .iter()
        .map(|f| (f.name.clone(), f.x.clone(), f.y.clone(), &f.result))
        .collect();
    fits.extend(
        extra_fits
            .iter()
            .map(|(n, x, y, f)| (n.clone(), x.clone(), y.clone(), f)),
    );
    for (name, x, y, f) in &fits {
        match fit_svgs(name, x, y, f) {
            Ok((data, resid)) => {
                add(
                    format!("fit_{}.svg", slug(name)),
                    format!("Fit {name}: data, line and band"),
                    Ok(data),
                );
                add(
                    format!("residuals_{}.svg", slug(name)),
                    format!("Fit {name}: residuals"),
                    Ok(resid),
                );
            }
            Err(e) => add(format!("fit_{}.svg", slug(name)), String::new(), Err(e)),
        }
    }
    p
}

/// Write the report folder.
pub fn write_report(
    dir: &Path,
    force: bool,
    report: &Report,
    mc: Option<&McReport>,
    extra_fits: &[(String, String, String, FitResult)],
    style: Style,
    record: &crate::record::Record,
) -> Result<Vec<String>, Failure> {
    check_report_folder(dir, force, &[])?;
    let mut files: Vec<(String, String)> = Vec::new();
    let Plots {
        drawn: plots,
        not_drawn,
    } = plots(report, mc, extra_fits);
    // Markdown and HTML print units as the SI Brochure does (mm³, °C, µL).
    let si = report::with_si_units(report);
    let text = report::text(&si, style, mc);
    let md = report::markdown(&si, style, mc);
    let json = with_record(&report::json(report, mc), record);
    let csv = report::csv(report);
    let title = report
        .title
        .clone()
        .unwrap_or_else(|| "Uncertainty evaluation".into());
    let mut html = format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n<title>{}</title>\n<style>\n\
         body {{ font-family: sans-serif; color: #222; max-width: 60em; margin: 2em auto; padding: 0 1em; }}\n\
         pre {{ background: #f4f4f4; padding: 0.8em; overflow-x: auto; font-size: 0.85em; }}\n\
         figure {{ margin: 1.5em 0; }} figcaption {{ color: #555; font-size: 0.9em; }}\n\
         svg {{ max-width: 100%; height: auto; }}\n</style>\n</head>\n<body>\n<h1>{}</h1>\n\
         <p>Written by incertus {} (evaluation of measurement uncertainty by JCGM 100:2008{}). \
         Results are an aid to, not a substitute for, the laboratory's validation of its methods and its quality system.</p>\n",
        esc(&title),
        esc(&title),
        env!("CARGO_PKG_VERSION"),
        if mc.is_some() { " and JCGM 101:2008" } else { "" }
    );
    let statements: Vec<(&str, &str)> = report
        .results
        .iter()
        .filter_map(|r| {
            r.conformity
                .as_ref()
                .map(|c| (r.name.as_str(), c.statement.as_str()))
        })
        .collect();
    if !statements.is_empty() {
        html.push_str("<h2>Conformity (JCGM 106:2012)</h2>\n");
        for (name, s) in statements {
            html.push_str(&format!("<p><b>{}</b>: {}</p>\n", esc(name), esc(s)));
        }
        html.push_str(
            "<p>The decision rule and the acceptable risk are the laboratory's and its customer's choice \
             (ISO/IEC 17025:2017, 7.1.3); check them against the quality system before a statement goes \
             on a certificate.</p>\n",
        );
    }
    html.push_str("<h2>Inputs, budget and result</h2>\n<pre>");
    html.push_str(&esc(&text));
    html.push_str("</pre>\n");
    html.push_str(&record.html(esc));
    html.push_str("<h2>Plots</h2>\n");
    for n in &not_drawn {
        html.push_str(&format!("<p>Not drawn: {}</p>\n", esc(n)));
    }
    for (file, caption, svg) in &plots {
        html.push_str(&format!(
            "<figure>\n{}\n<figcaption>{} ({})</figcaption>\n</figure>\n",
            svg.trim(),
            esc(caption),
            esc(file)
        ));
    }
    html.push_str("</body>\n</html>\n");
    files.push(("report.html".into(), html));
    files.push((
        "report.md".into(),
        format!("{md}\n{}", record.markdown(report::md_escape)),
    ));
    files.push(("budget.csv".into(), csv));
    files.push(("results.csv".into(), report::results_csv(report)));
    files.push(("result.json".into(), json));
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

/// The JSON report with the record of the evaluation added.
fn with_record(json: &str, record: &crate::record::Record) -> String {
    match serde_json::from_str::<serde_json::Value>(json) {
        Ok(serde_json::Value::Object(mut o)) => {
            o.insert("record".into(), record.json());
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
