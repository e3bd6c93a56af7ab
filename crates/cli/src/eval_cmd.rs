//! `incertus eval` and `incertus check`: a model file through the law of
//! propagation, written as a budget; and the check of stated figures.

use std::io::Write;
use std::path::PathBuf;

use clap::{Args, ValueEnum};
use incertus_gum::{check, propagate, Model, Options, Report};

use crate::report::{self, Style};
use crate::Failure;

#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum Format {
    /// Aligned text for people
    Text,
    /// Markdown (budget tables, result, conformity statement)
    Markdown,
    /// Every figure in full precision
    Json,
    /// One row per measurand: the table `results.csv` of a report folder
    Csv,
    /// The budget rows: the table `budget.csv` of a report folder
    BudgetCsv,
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
    /// Also propagate distributions (JCGM 101:2008): a number of Monte Carlo
    /// trials, or "auto" for the adaptive procedure
    #[arg(long, value_name = "TRIALS|auto")]
    mc: Option<String>,
    /// Seed of the Monte Carlo trials (the same seed gives the same results on any number of threads)
    #[arg(long, value_name = "N", default_value_t = incertus_mc::DEFAULT_SEED)]
    seed: u64,
    /// Threads for the Monte Carlo trials (default: all cores)
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..=1024))]
    threads: Option<u32>,
    /// Significant digits of the numerical tolerance for the adaptive procedure and the validation
    #[arg(long, value_name = "N", default_value_t = 2, value_parser = clap::value_parser!(u32).range(1..=6))]
    ndig: u32,
    /// Discard Monte Carlo trials whose result is not a finite number (the report states how many)
    #[arg(long)]
    mc_drop_nonfinite: bool,
    /// Most trials the adaptive procedure may use
    #[arg(long, value_name = "N", default_value_t = 100_000_000)]
    mc_max_trials: usize,
    /// Also write a report folder: HTML, Markdown, CSV, JSON and SVG plots
    #[arg(long, value_name = "DIR")]
    report: Option<PathBuf>,
    /// Evaluate the model once per row of a CSV table of items: a column
    /// named after an input sets its estimate, a column INPUT.KEY any key
    /// of the input (INPUT.standard_uncertainty, INPUT.observations, ...)
    #[arg(long, value_name = "TABLE.csv")]
    items: Option<PathBuf>,
    /// The column of the table that identifies each item (default: `item`
    /// when there is one; otherwise rows are numbered)
    #[arg(long, value_name = "COLUMN", requires = "items")]
    item_column: Option<String>,
    /// Also show the budget of each measurand that uses these intermediate
    /// measurands in terms of the names of its own formula (the view a hand
    /// budget with intermediate quantities takes)
    #[arg(long, value_name = "NAME,...", value_delimiter = ',')]
    in_terms_of: Vec<String>,
    /// Who evaluated: named in the report's record (blank for signing otherwise)
    #[arg(long, value_name = "NAME")]
    evaluated_by: Option<String>,
    /// Who checked the evaluation: named in the report's record
    #[arg(long, value_name = "NAME")]
    checked_by: Option<String>,
    /// Replace the report files in an existing, non-empty report folder
    #[arg(long)]
    force: bool,
}

fn mc_settings(a: &EvalArgs) -> Result<Option<incertus_mc::Settings>, Failure> {
    let Some(spec) = &a.mc else { return Ok(None) };
    let trials = if spec == "auto" {
        incertus_mc::Trials::Adaptive {
            max: a.mc_max_trials,
        }
    } else {
        let clean = spec.replace('_', "");
        let n = clean
            .parse::<u64>()
            .ok()
            .or_else(|| clean.parse::<f64>().ok().filter(|v| v.fract() == 0.0 && *v >= 0.0 && *v < 1e15).map(|v| v as u64))
            .ok_or_else(|| {
                Failure::input(format!(
                    "--mc expects a number of trials (such as 1000000 or 1e6) or \"auto\", found `{spec}`"
                ))
            })?;
        incertus_mc::Trials::Fixed(n as usize)
    };
    Ok(Some(incertus_mc::Settings {
        trials,
        seed: a.seed,
        threads: a.threads.map(|t| t as usize),
        drop_non_finite: a.mc_drop_nonfinite,
        ndig: a.ndig,
        memory_limit: None,
    }))
}

#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The model file (TOML) with stated sensitivities or expected results
    file: PathBuf,
    /// Coverage probability (overrides the model file)
    #[arg(long, value_name = "P")]
    coverage: Option<f64>,
    #[command(flatten)]
    budget: crate::sheet::BudgetArgs,
}

pub(crate) fn load(file: &std::path::Path) -> Result<Model, Failure> {
    incertus_gum::load_file_with(file, &crate::limits()?).map_err(|e| Failure::input(e.to_string()))
}

pub(crate) fn evaluate(
    file: &std::path::Path,
    model: &Model,
    coverage: Option<f64>,
    second_order: bool,
) -> Result<Report, Failure> {
    if let Some(p) = coverage {
        if let Err(m) = incertus_gum::coverage::check_coverage_probability(p) {
            return Err(Failure::input(format!("--coverage {m}")));
        }
    }
    propagate(
        model,
        &Options {
            coverage_probability: coverage,
            second_order,
            limits: crate::limits()?,
            ..Options::default()
        },
    )
    .map(|mut r| {
        crate::name_options(&mut r);
        r
    })
    .map_err(|e| match e.line {
        Some(line) => Failure::input(format!("{}:{line}: {e}", file.display())),
        None => Failure::input(e.to_string()),
    })
}

/// The files an evaluation reads: the model, a table of items, and the
/// data files of its fits (an inline fit has none).
fn files_read(
    file: &std::path::Path,
    table: Option<&std::path::Path>,
    model: &Model,
) -> Vec<PathBuf> {
    let mut files = vec![file.to_path_buf()];
    files.extend(table.map(std::path::Path::to_path_buf));
    files.extend(
        model
            .fits
            .iter()
            .filter(|f| f.data != "inline")
            .map(|f| PathBuf::from(&f.data)),
    );
    files
}

/// `eval --items`: one evaluation per item of a table.
fn run_items(
    a: &EvalArgs,
    table: &std::path::Path,
    out: &mut dyn Write,
    err: &mut dyn Write,
) -> Result<(), Failure> {
    let format = match a.format {
        Format::Text => crate::items::Format::Text,
        Format::Markdown => crate::items::Format::Markdown,
        Format::Json => crate::items::Format::Json,
        Format::Csv => crate::items::Format::Csv,
        Format::BudgetCsv => {
            return Err(Failure::input(
                "--format budget-csv gives one model's budget; with --items choose text, markdown, json or csv \
                 (one row per item and measurand)",
            ))
        }
    };
    let model = load(&a.file)?;
    let inputs = files_read(&a.file, Some(table), &model);
    if let Some(dir) = &a.report {
        crate::files::check_report_folder(dir, a.force, &inputs)?;
    }
    if let Some(p) = a.coverage {
        if let Err(m) = incertus_gum::coverage::check_coverage_probability(p) {
            return Err(Failure::input(format!("--coverage {m}")));
        }
    }
    let settings = mc_settings(a)?;
    // Statements in words are shown by JSON and report folders only; the
    // figures and verdicts do not depend on them.
    let opts = Options {
        coverage_probability: a.coverage,
        second_order: a.second_order,
        limits: crate::limits()?,
        statements: matches!(a.format, Format::Json) || a.report.is_some(),
    };
    let record = a.report.as_ref().map(|_| {
        let mut s = eval_settings(a, &model, None);
        if let Some(m) = &settings {
            s.push((
                "Monte Carlo".into(),
                format!(
                    "{} per item, seed {} with the item's row (SplitMix64)",
                    match m.trials {
                        incertus_mc::Trials::Fixed(n) => format!("{n} trials"),
                        _ => "adaptive trials".into(),
                    },
                    m.seed
                ),
            ));
        }
        if let Some(c) = &a.item_column {
            s.push(("item column".into(), c.clone()));
        }
        crate::record::Record::new(&inputs, s, a.evaluated_by.clone(), a.checked_by.clone())
    });
    crate::items::run(
        &a.file,
        table,
        a.item_column.as_deref(),
        opts,
        settings,
        format,
        Style { digits: a.digits },
        a.report
            .as_deref()
            .zip(record)
            .map(|(d, r)| (d, a.force, r)),
        out,
        err,
    )
}

pub fn run_eval(a: &EvalArgs, out: &mut dyn Write, err: &mut dyn Write) -> Result<(), Failure> {
    if let Some(table) = &a.items {
        return run_items(a, table, out, err);
    }
    let model = load(&a.file)?;
    let settings = mc_settings(a)?;
    let inputs = files_read(&a.file, None, &model);
    if let Some(dir) = &a.report {
        // Before any work: the folder must be free, or hold an earlier
        // report and none of these files.
        crate::files::check_report_folder(dir, a.force, &inputs)?;
    }
    let mut report = evaluate(&a.file, &model, a.coverage, a.second_order)?;
    let mc = match settings {
        Some(s) => {
            let mc =
                incertus_mc::run(&model, &report, &s).map_err(|e| Failure::input(e.to_string()))?;
            incertus_mc::attach(&model, &mut report, &mc);
            crate::name_options(&mut report);
            Some(mc)
        }
        None => None,
    };
    let style = Style { digits: a.digits };
    let text = match a.format {
        Format::Text => report::text(&report, style, mc.as_ref()),
        Format::Markdown => report::markdown(&report::with_si_units(&report), style, mc.as_ref()),
        Format::Json => report::json(&report, mc.as_ref()),
        Format::Csv => crate::tables::results_csv(&report),
        Format::BudgetCsv => crate::tables::csv(&report),
    };
    let _ = out.write_all(text.as_bytes());
    if !a.in_terms_of.is_empty() {
        let _ = out.write_all(in_terms_of(a, &model, &report)?.as_bytes());
    }
    if let Some(dir) = &a.report {
        let record = crate::record::Record::new(
            &inputs,
            eval_settings(a, &model, mc.as_ref()),
            a.evaluated_by.clone(),
            a.checked_by.clone(),
        );
        let files = crate::files::write_report(
            dir,
            a.force,
            &report,
            mc.as_ref(),
            Some(&model),
            style,
            &record,
        )?;
        crate::say_written(matches!(a.format, Format::Text), out, err, dir, &files);
    }
    Ok(())
}

/// `--in-terms-of`: the budgets in terms of intermediate measurands.
fn in_terms_of(a: &EvalArgs, model: &Model, report: &Report) -> Result<String, Failure> {
    for n in &a.in_terms_of {
        if !model.measurands.iter().any(|m| &m.name == n) {
            return Err(Failure::input(format!(
                "--in-terms-of {n}: the model has no measurand `{n}` (intermediate quantities are measurands a later one uses)"
            )));
        }
    }
    let mut s = String::new();
    for m in &model.measurands {
        if !a
            .in_terms_of
            .iter()
            .any(|n| m.formula.depends_on(n) && *n != m.name)
        {
            continue;
        }
        let r = report
            .results
            .iter()
            .find(|r| r.name == m.name)
            .expect("a result per measurand");
        let (t, notes) =
            crate::sheet::own_formula_budget(model, report, r).map_err(Failure::input)?;
        s.push_str(&format!(
            "\nuncertainty budget of {} in terms of {} = {}\n",
            m.name, m.name, m.formula_text
        ));
        s.push_str(&crate::report::aligned_table(&t));
        for n in notes {
            s.push_str(&format!("note: {n}\n"));
        }
    }
    if s.is_empty() {
        return Err(Failure::input(format!(
            "--in-terms-of {}: no measurand of the model uses {}",
            a.in_terms_of.join(","),
            if a.in_terms_of.len() == 1 {
                "it"
            } else {
                "them"
            }
        )));
    }
    Ok(s)
}

/// The settings of an evaluation, as its record states them.
fn eval_settings(
    a: &EvalArgs,
    model: &Model,
    mc: Option<&incertus_mc::McReport>,
) -> Vec<(String, String)> {
    let mut s = vec![
        (
            "coverage probability p".to_string(),
            format!("{}", a.coverage.unwrap_or(model.coverage_probability)),
        ),
        (
            "effective dof rounding".to_string(),
            match model.dof_rounding {
                incertus_gum::DofRounding::Truncate => "truncate".into(),
                incertus_gum::DofRounding::Exact => "exact".into(),
            },
        ),
        ("significant digits of u".to_string(), a.digits.to_string()),
        (
            "higher-order terms".to_string(),
            if a.second_order { "yes" } else { "no" }.into(),
        ),
    ];
    if let Some(mc) = mc {
        s.push(("Monte Carlo trials".into(), mc.trials.to_string()));
        s.push(("Monte Carlo seed".into(), mc.seed.to_string()));
        if let Some(ad) = &mc.adaptive {
            s.push((
                "adaptive procedure".into(),
                format!(
                    "ndig = {}, {} sequences of {}",
                    ad.ndig, ad.sequences, ad.trials_per_sequence
                ),
            ));
        }
    }
    s
}

pub fn run_check(a: &CheckArgs, out: &mut dyn Write) -> Result<(), Failure> {
    if a.budget.budget.is_some() {
        return crate::sheet::run(&a.file, &a.budget, a.coverage, out);
    }
    let model = load(&a.file)?;
    let report = evaluate(&a.file, &model, a.coverage, false)?;
    let c = check(&model, &report);
    let bad = c.items.iter().filter(|i| !i.agrees).count();
    let verdict = || -> Result<(), Failure> {
        if bad == 0 {
            return Ok(());
        }
        Err(Failure::input(format!(
            "{bad} stated figure{} of {} disagree{} with the law of propagation",
            if bad == 1 { "" } else { "s" },
            a.file.display(),
            if bad == 1 { "s" } else { "" }
        )))
    };
    if a.budget.format == crate::sheet::CheckFormat::Json {
        let mut s = serde_json::to_string_pretty(&c).expect("plain data");
        s.push('\n');
        let _ = out.write_all(s.as_bytes());
        return verdict();
    }
    let mut text = format!("check of {}\n", a.file.display());
    if c.items.is_empty() {
        text.push_str(
            "nothing to check: the model states no sensitivity, expected_value or \
             expected_standard_uncertainty\n",
        );
        let _ = out.write_all(text.as_bytes());
        return Ok(());
    }
    for i in &c.items {
        let verdict = if i.agrees { "agrees    " } else { "DISAGREES " };
        let rel = i
            .relative_difference
            .map(|r| format!(", relative difference {:+.2e}", r))
            .unwrap_or_default();
        text.push_str(&format!(
            "{verdict} line {:<4} {}: stated {}, computed {}{rel}\n",
            i.line,
            i.what,
            i.stated,
            incertus_gum::rounding::significant_si(i.computed, 8)
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
    verdict()
}
