//! `incertus eval` and `incertus check`: a model file through the law of
//! propagation, written as a budget; and the check of stated figures.

use std::io::Write;
use std::path::PathBuf;

use clap::{Args, ValueEnum};
use incertus_gum::{check, load_file, propagate, Model, Options, Report};

use crate::report::{self, Style};
use crate::Failure;

#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum Format {
    Text,
    Markdown,
    Json,
    Csv,
}

#[derive(Args, Debug)]
pub struct EvalArgs {
    /// The model file (TOML)
    file: PathBuf,
    /// Output format
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Coverage probability for the expanded uncertainty (overrides the model file)
    #[arg(long, value_name = "P")]
    coverage: Option<f64>,
    /// Add the higher-order terms of JCGM 100:2008, 5.1.2 (independent inputs only)
    #[arg(long)]
    second_order: bool,
    /// Significant digits of reported uncertainties (1 to 3)
    #[arg(long, default_value_t = 2, value_parser = clap::value_parser!(u32).range(1..=3))]
    digits: u32,
}

#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The model file (TOML) with stated sensitivities or expected results
    file: PathBuf,
    /// Coverage probability (overrides the model file)
    #[arg(long, value_name = "P")]
    coverage: Option<f64>,
}

pub(crate) fn load(file: &std::path::Path) -> Result<Model, Failure> {
    load_file(file).map_err(|e| Failure::input(e.to_string()))
}

pub(crate) fn evaluate(
    model: &Model,
    coverage: Option<f64>,
    second_order: bool,
) -> Result<Report, Failure> {
    if let Some(p) = coverage {
        if !(p > 0.0 && p < 1.0) {
            return Err(Failure::input(format!(
                "--coverage must lie strictly between 0 and 1, found {p}"
            )));
        }
    }
    propagate(
        model,
        &Options {
            coverage_probability: coverage,
            second_order,
        },
    )
    .map_err(|e| Failure::input(e.to_string()))
}

pub fn run_eval(a: &EvalArgs, out: &mut dyn Write) -> Result<(), Failure> {
    let model = load(&a.file)?;
    let report = evaluate(&model, a.coverage, a.second_order)?;
    let style = Style { digits: a.digits };
    let text = match a.format {
        Format::Text => report::text(&report, style),
        Format::Markdown => report::markdown(&report, style),
        Format::Json => report::json(&report),
        Format::Csv => report::csv(&report),
    };
    let _ = out.write_all(text.as_bytes());
    Ok(())
}

pub fn run_check(a: &CheckArgs, out: &mut dyn Write) -> Result<(), Failure> {
    let model = load(&a.file)?;
    let report = evaluate(&model, a.coverage, false)?;
    let c = check(&model, &report);
    let mut text = format!("check of {}\n", a.file.display());
    if c.items.is_empty() {
        text.push_str(
            "nothing to check: the model states no sensitivity, expected_value or \
             expected_standard_uncertainty\n",
        );
        let _ = out.write_all(text.as_bytes());
        return Ok(());
    }
    let mut bad = 0;
    for i in &c.items {
        let verdict = if i.agrees { "agrees    " } else { "DISAGREES " };
        if !i.agrees {
            bad += 1;
        }
        let rel = i
            .relative_difference
            .map(|r| format!(", relative difference {:+.2e}", r))
            .unwrap_or_default();
        text.push_str(&format!(
            "{verdict} line {:<4} {}: stated {}, computed {}{rel}\n",
            i.line,
            i.what,
            i.stated,
            incertus_gum::rounding::significant(i.computed, 8)
        ));
        if let Some(n) = &i.note {
            text.push_str(&format!("           {n}\n"));
        }
    }
    text.push_str(&format!(
        "{} agree, {} disagree{}\n",
        c.items.len() - bad,
        bad,
        if bad == 1 { "s" } else { "" }
    ));
    let _ = out.write_all(text.as_bytes());
    if bad > 0 {
        return Err(Failure::input(format!(
            "{bad} stated figure{} of {} disagree{} with the law of propagation",
            if bad == 1 { "" } else { "s" },
            a.file.display(),
            if bad == 1 { "s" } else { "" }
        )));
    }
    Ok(())
}
