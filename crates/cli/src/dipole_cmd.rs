//! `incertus dipole FILE` and `incertus demo`: dipole moments from
//! dilute-solution series by the Guggenheim-Smith method.
//!
//! Caution: organic solvents and many polar solutes are flammable or toxic;
//! follow the safety data sheets and your local rules when preparing the
//! solutions, and let results meant for certificates go through your
//! laboratory's own quality system.

use std::io::Write;
use std::path::{Path, PathBuf};

use clap::Args;
use incertus_dipole::{build, demo_problem, read_problem, Problem};
use incertus_gum::{propagate, Options};

use crate::eval_cmd::Format;
use crate::report::{self, Style};
use crate::Failure;

#[derive(Args, Debug)]
pub struct DipoleArgs {
    /// The problem file (TOML naming a CSV series; see the README)
    file: PathBuf,
    /// Output format
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Monte Carlo trials for the cross-check (0 for none)
    #[arg(long, default_value_t = 1_000_000)]
    mc: usize,
    /// Also write a report folder
    #[arg(long, value_name = "DIR")]
    report: Option<PathBuf>,
    /// Replace the report files in an existing, non-empty report folder
    #[arg(long)]
    force: bool,
}

#[derive(Args, Debug)]
pub struct DemoArgs {
    /// Folder for the report (default: a fresh folder named incertus-demo-report[-N] here)
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
}

#[allow(clippy::too_many_arguments)]
fn solve(
    p: &Problem,
    format: Format,
    trials: usize,
    report_dir: Option<&Path>,
    force: bool,
    inputs: &[PathBuf],
    out: &mut dyn Write,
    err: &mut dyn Write,
) -> Result<(), Failure> {
    if let Some(dir) = report_dir {
        crate::files::check_report_folder(dir, force, inputs)?;
    }
    let checked = build(p).map_err(|e| Failure::input(e.message))?;
    let mut rep = propagate(&checked.model, &Options::default())
        .map_err(|e| Failure::input(e.to_string()))?;
    let mc = if trials > 0 {
        let s = incertus_mc::Settings {
            trials: incertus_mc::Trials::Fixed(trials),
            ..incertus_mc::Settings::default()
        };
        let mc = incertus_mc::run(&checked.model, &rep, &s)
            .map_err(|e| Failure::input(e.to_string()))?;
        incertus_mc::attach(&checked.model, &mut rep, &mc);
        Some(mc)
    } else {
        None
    };
    crate::name_options(&mut rep);
    rep.notes
        .extend(checked.warnings.iter().map(|w| format!("check: {w}")));
    let style = Style { digits: 2 };
    let text = match format {
        Format::Text => report::text(&rep, style, mc.as_ref()),
        Format::Markdown => report::markdown(&report::with_si_units(&rep), style, mc.as_ref()),
        Format::Json => report::json(&rep, mc.as_ref()),
        Format::Csv => crate::tables::results_csv(&rep),
        Format::BudgetCsv => crate::tables::csv(&rep),
    };
    let _ = out.write_all(text.as_bytes());
    if let Some(dir) = report_dir {
        let mut settings = vec![("Monte Carlo trials".to_string(), trials.to_string())];
        if let Some(m) = &mc {
            settings.push(("Monte Carlo seed".into(), m.seed.to_string()));
        }
        let record = crate::record::Record::new(inputs, settings, None, None);
        let files = crate::files::write_report(
            dir,
            force,
            &rep,
            mc.as_ref(),
            Some(&checked.model),
            style,
            &record,
        )?;
        crate::say_written(matches!(format, Format::Text), out, err, dir, &files);
    }
    Ok(())
}

pub fn run_dipole(a: &DipoleArgs, out: &mut dyn Write, err: &mut dyn Write) -> Result<(), Failure> {
    let p = read_problem(&a.file).map_err(|e| Failure::input(e.message))?;
    let mut inputs = vec![a.file.clone()];
    inputs.extend(p.data_file.clone());
    solve(
        &p,
        a.format,
        a.mc,
        a.report.as_deref(),
        a.force,
        &inputs,
        out,
        err,
    )
}

pub fn run_demo(a: &DemoArgs, out: &mut dyn Write) -> Result<(), Failure> {
    let dir = match &a.out {
        Some(d) => d.clone(),
        None => {
            let mut k = 1;
            loop {
                let name = if k == 1 {
                    "incertus-demo-report".to_string()
                } else {
                    format!("incertus-demo-report-{k}")
                };
                let p = PathBuf::from(name);
                if !p.exists() {
                    break p;
                }
                k += 1;
            }
        }
    };
    let _ = writeln!(
        out,
        "incertus demo: the dipole moment of chlorobenzene from INVENTED series of its dilute solutions in \
         cyclohexane (Guggenheim-Smith method; data made by tests/fixtures/make_dipole_demo.py)\n\
         Caution: organic solvents are flammable and many are toxic; follow the safety data sheets and local rules.\n"
    );
    solve(
        &demo_problem(),
        Format::Text,
        1_000_000,
        Some(&dir),
        false,
        &[],
        out,
        &mut std::io::sink(),
    )
}
