//! The command-line front end of incertus: argument parsing and the text
//! output of each command. This is the only crate of the workspace that
//! prints; the library crates return values and errors.
//!
//! Exit codes: 0 success, 1 a problem with the input (formula, values,
//! files), 2 a problem with the command line itself.

use std::ffi::OsString;
use std::io::Write;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

mod atomic;
mod derive_cmd;
mod dipole_cmd;
mod eval_cmd;
pub mod files;
mod fit_cmd;
mod html;
mod html_fit;
pub mod items;
pub mod plots;
pub mod record;
pub mod report;
mod sheet;
mod shell;
pub mod tables;
pub mod terminal;
pub use shell::run_statements;

/// Exit code for a problem with the user's input.
pub const EXIT_INPUT: u8 = 1;
/// Exit code for a malformed command line.
pub const EXIT_USAGE: u8 = 2;
/// Exit code of an internal error (a bug): never caused by input alone.
pub const EXIT_INTERNAL: u8 = 70;

#[derive(Parser, Debug)]
#[command(
    name = "incertus",
    version,
    about = "Evaluation of measurement uncertainty: formulas, sensitivity coefficients, propagation",
    long_about = None
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Print the partial derivatives of a formula, simplified, and their values at a point
    Derive(derive_cmd::DeriveArgs),
    /// Evaluate a model file by the law of propagation and print its uncertainty budget
    Eval(eval_cmd::EvalArgs),
    /// Compare the sensitivity coefficients and results stated in a model file with the computed ones
    Check(eval_cmd::CheckArgs),
    /// Fit a straight line or polynomial to columns of a CSV file by least squares, with diagnostics
    Fit(fit_cmd::FitArgs),
    /// Type input quantities and formulas at a prompt (or pipe statements in)
    Shell(shell::ShellArgs),
    /// Dipole moment from dilute-solution series (Guggenheim-Smith). Caution: organic solvents are
    /// flammable and many are toxic; follow the safety data sheets and local rules
    Dipole(dipole_cmd::DipoleArgs),
    /// Run the worked instance end to end on built-in INVENTED data: budget, dipole moment in debye,
    /// Monte Carlo validation, and a report folder
    Demo(dipole_cmd::DemoArgs),
}

/// An error a command reports: the text to print and the exit code.
#[derive(Debug)]
pub struct Failure {
    pub message: String,
    pub code: u8,
}

impl Failure {
    pub fn input(message: impl Into<String>) -> Self {
        Failure {
            message: with_options(&message.into()),
            code: EXIT_INPUT,
        }
    }
}

/// The library's texts name remedies (propagation of distributions, the
/// higher-order terms, discarding non-finite trials) without command-line
/// options; here they get the options that carry them out.
pub(crate) fn with_options(s: &str) -> String {
    const OPTIONS: [(&str, &str); 5] = [
        (
            "give a fixed number of trials (its coverage",
            "give a fixed number of trials (--mc N; its coverage",
        ),
        (
            "propagation of distributions (JCGM 101:2008)",
            "propagation of distributions (--mc, JCGM 101:2008)",
        ),
        (
            "Include the higher-order terms or use propagation of distributions",
            "Include the higher-order terms (--second-order) or use propagation of distributions (--mc)",
        ),
        (
            "The higher-order terms vanish too; use propagation of distributions",
            "The higher-order terms vanish too; use propagation of distributions (--mc)",
        ),
        (
            "rerun discarding such trials (`Settings::drop_non_finite`;",
            "rerun with --mc-drop-nonfinite to discard such trials (",
        ),
    ];
    let mut out = s.to_string();
    for (from, to) in OPTIONS {
        if out.contains(from) {
            out = out.replace(from, to);
        }
    }
    out
}

/// [`with_options`] over every text of a report.
pub(crate) fn name_options(report: &mut incertus_gum::Report) {
    for r in &mut report.results {
        for w in &mut r.warnings {
            *w = with_options(w);
        }
        if let Some(c) = &mut r.conformity {
            c.statement = with_options(&c.statement);
            for n in &mut c.notes {
                *n = with_options(n);
            }
        }
    }
    for n in &mut report.notes {
        *n = with_options(n);
    }
}

/// Where a report folder went: on standard output beside a text report,
/// on standard error when standard output carries JSON, CSV or Markdown
/// (so that it stays machine-readable).
pub(crate) fn say_written(
    text_output: bool,
    out: &mut dyn Write,
    err: &mut dyn Write,
    dir: &std::path::Path,
    files: &[String],
) {
    let line = format!("report written to {}: {}", dir.display(), files.join(", "));
    let _ = if text_output {
        writeln!(out, "{line}")
    } else {
        writeln!(err, "{line}")
    };
}

/// The size limits, with the environment's overrides (`INCERTUS_MAX_*`).
pub(crate) fn limits() -> Result<incertus_gum::Limits, Failure> {
    incertus_gum::Limits::with_settings(|name| std::env::var(name).ok()).map_err(Failure::input)
}

/// Stack of the thread that runs a command: formulas are walked
/// recursively, and a deeply nested model (within the limits) must not
/// overflow the 8 MiB of a main thread.
const STACK_BYTES: usize = 256 << 20;

/// Run the program with the process's arguments.
pub fn run() -> ExitCode {
    // Unlocked handles: a lock held for the whole run would deadlock any
    // worker thread that writes to the same stream.
    let worker = std::thread::Builder::new()
        .name("incertus".into())
        .stack_size(STACK_BYTES)
        .spawn(|| {
            run_with(
                std::env::args_os(),
                &mut std::io::stdout(),
                &mut std::io::stderr(),
            )
        });
    let code = match worker.map(|h| h.join()) {
        Ok(Ok(code)) => code,
        // A panic has printed its message; say what it means for the user.
        Ok(Err(_)) => {
            eprintln!(
                "error: internal error (a bug in incertus, not in your input); no file was changed. \
                 Please report it with the command and the input files"
            );
            EXIT_INTERNAL
        }
        Err(e) => {
            eprintln!("error: cannot start the worker thread: {e}");
            EXIT_INTERNAL
        }
    };
    ExitCode::from(code)
}

/// Run the program with the given arguments and output streams; returns the
/// exit code.
pub fn run_with<I, T>(args: I, out: &mut dyn Write, err: &mut dyn Write) -> u8
where
    I: IntoIterator<Item = T>,
    T: Into<OsString> + Clone,
{
    // Control characters from files and statements never reach the
    // terminal raw (`terminal`).
    let (mut out, mut err) = (terminal::Visible(out), terminal::Visible(err));
    let (out, err): (&mut dyn Write, &mut dyn Write) = (&mut out, &mut err);
    let args: Vec<OsString> = args.into_iter().map(Into::into).collect();
    record::set_command(
        &args
            .iter()
            .map(|a| a.to_string_lossy().into_owned())
            .collect::<Vec<_>>(),
    );
    let cli = match Cli::try_parse_from(args) {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { EXIT_USAGE } else { 0 };
            let text = e.render().to_string();
            let _ = if code == 0 {
                write!(out, "{text}")
            } else {
                write!(err, "{text}")
            };
            return code;
        }
    };
    let result = match cli.command {
        Command::Derive(a) => derive_cmd::run(&a, out),
        Command::Eval(a) => eval_cmd::run_eval(&a, out, err),
        Command::Check(a) => eval_cmd::run_check(&a, out),
        Command::Fit(a) => fit_cmd::run(&a, out, err),
        Command::Shell(a) => shell::run(&a, out),
        Command::Dipole(a) => dipole_cmd::run_dipole(&a, out, err),
        Command::Demo(a) => dipole_cmd::run_demo(&a, out),
    };
    match result {
        Ok(()) => 0,
        Err(f) => {
            let _ = writeln!(err, "error: {}", f.message);
            f.code
        }
    }
}
