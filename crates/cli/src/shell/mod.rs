//! `incertus shell`: typing input quantities and formulas at a prompt.
//!
//! Statements, one per line (`#` starts a comment):
//!
//! ```text
//! x = 2.0 u=0.1            an estimate and its standard uncertainty u
//! x = 1.234(5)             concise notation (JCGM 100:2008, 7.2.2)
//! x = 10.0 ± 0.5 (k=2)     an expanded uncertainty with its coverage factor
//! x = 10.0 rectangular a=0.5 [mm] dof=8
//!                          a distribution with limits and its half-width a
//!                          (rectangular, triangular, arcsine), a unit in
//!                          brackets, degrees of freedom
//! x = 3.5                  an exact value
//! y = x^2 + 1              a result, printed at once
//! A = a*b [mm^2]           a result reported in a unit
//! x*2                      a formula alone: its value and uncertainty
//! ```
//!
//! and commands: `budget NAME`, `sensitivities NAME`, `montecarlo NAME
//! [TRIALS]`, `correlate A B R`, `list`, `save FILE` (`save! FILE` to
//! replace an existing file), `load FILE`, `recover`, `help`, `quit`.
//!
//! `±` always means an expanded uncertainty, with its coverage factor
//! (`statement.rs`). The definitions are kept as a model description and
//! validated and propagated as `incertus eval` does, so `save` writes a file that
//! `eval` reads with the same numbers. An error never ends the session or
//! changes what was defined. On leaving (quit, end of input, Ctrl-C) the
//! definitions are written to a recovery file, which a new session offers
//! to load; every file is written to a temporary name and renamed.

use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

use clap::Args;
use incertus_gum::description::{InputDescription, MeasurandDescription, ModelDescription};
use incertus_gum::rounding::write;
use incertus_gum::Report;

use crate::Failure;

mod recovery;
mod session;
mod statement;
use recovery::{home, Recovery};
use session::Session;
use statement::parse_value;

#[derive(Args, Debug)]
pub struct ShellArgs {
    /// Load this model file first
    file: Option<PathBuf>,
}

pub(crate) use crate::atomic::write_atomic;

/// A name as the model loader takes it (`x`, `α`, `ρ_w`, `T_2`).
fn is_name(s: &str) -> bool {
    incertus_gum::description::is_formula_name(s)
}

fn show(name: &str, value: f64, u: f64, unit: Option<&str>) -> String {
    let unit = unit.map(|u| format!(" {u}")).unwrap_or_default();
    if u == 0.0 {
        return format!(
            "{name} = {}{unit}  (exact)",
            incertus_gum::rounding::significant_si(value, 10)
        );
    }
    let w = write(value, u, 2);
    let (lhs, u_of) = if name.is_empty() {
        (String::new(), "u".to_string())
    } else {
        (format!("{name} = "), format!("u({name})"))
    };
    format!(
        "{lhs}{}{unit}, {u_of} = {}{unit}   (concise: {}{unit})",
        w.with_power(&w.value),
        w.with_power(&w.uncertainty),
        w.concise
    )
}

/// A result as `show` writes it, with its warnings below; a zero
/// first-order u that a warning questions is not called exact.
fn show_result(name: &str, r: &incertus_gum::MeasurandResult) -> String {
    let mut s = if r.standard_uncertainty == 0.0 && !r.warnings.is_empty() {
        format!(
            "{name} = {}{}  (first-order u = 0, not exact: see the warning)",
            incertus_gum::rounding::significant_si(r.value, 10),
            r.unit
                .as_deref()
                .map(|u| format!(" {u}"))
                .unwrap_or_default()
        )
    } else {
        show(name, r.value, r.standard_uncertainty, r.unit.as_deref())
    };
    for w in &r.warnings {
        s.push_str(&format!("\n  WARNING  {w}"));
    }
    s
}

struct Shell {
    session: Session,
    /// Whether the definitions changed since the recovery state was taken.
    changed: bool,
    /// This session's own recovery file (not offered by `recover`).
    own_state: Option<PathBuf>,
    out: Vec<String>,
    /// Whether save, load and recover may touch files.
    files: bool,
    /// Statements that ended in an error.
    failures: usize,
}

const HELP: &str = "statements:
  x = 2.0 u=0.1               an input with its standard uncertainty u
  x = 1.234(5)                concise notation: u = 0.005 (JCGM 100:2008, 7.2.2)
  x = 10.0 ± 0.5 (k=2)        an expanded uncertainty U and its coverage factor: u = U/k
  x = 1.0 rectangular a=0.5   limits with the half-width a (also triangular, arcsine)
                              after any of these: [unit] and dof=N
  x = 3.5                     an exact value
  ± always means an expanded uncertainty and needs (k=...)
  y = formula                 a result, printed at once (y = formula [unit] to report in a unit)
  formula                     its value and uncertainty
commands:
  specify NAME lower=L upper=U [rule=guarded-acceptance|guarded-rejection] [guard=R | risk=A]
                              tolerance limits and a decision rule (JCGM 106:2012); specify NAME off
  budget NAME, sensitivities NAME, montecarlo NAME [TRIALS], correlate A B R,
  list, save FILE (save! FILE replaces), load FILE, recover, help, quit";

impl Shell {
    fn new(files: bool) -> Self {
        Shell {
            session: Session::default(),
            changed: false,
            own_state: None,
            out: Vec::new(),
            files,
            failures: 0,
        }
    }

    fn say(&mut self, s: impl Into<String>) {
        let s = s.into();
        if s.starts_with("error:") {
            self.failures += 1;
        }
        self.out.push(s);
    }

    fn fail(&mut self, e: impl std::fmt::Display) {
        self.say(format!("error: {e}"));
    }

    fn result_line(&self, report: &Report, name: &str) -> Option<String> {
        report
            .results
            .iter()
            .find(|r| r.name == name)
            .map(|r| show_result(&r.name, r))
    }

    /// Run one line; `false` to end the session.
    fn line(&mut self, raw: &str) -> bool {
        let line = raw.split('#').next().unwrap_or("").trim();
        if line.is_empty() {
            return true;
        }
        let (cmd, arg) = line
            .split_once(char::is_whitespace)
            .map_or((line, ""), |(c, a)| (c, a.trim()));
        match cmd {
            "quit" | "exit" => return false,
            "help" => self.say(HELP),
            "list" => self.list(),
            "budget" if is_name(arg) => self.budget(arg),
            "sensitivities" if is_name(arg) => self.sensitivities(arg),
            "montecarlo" if !arg.is_empty() => self.montecarlo(arg),
            "correlate" if !arg.is_empty() => self.correlate(arg),
            "specify" if !arg.is_empty() => self.specify(arg),
            "save" | "save!" | "load" | "recover" if !self.files => self.say(format!(
                "error: `{cmd}` is not available here (files are off)"
            )),
            "save" | "save!" if !arg.is_empty() => self.save(arg, cmd == "save!"),
            "load" if !arg.is_empty() => self.load(Path::new(arg)),
            "recover" => match recovery::saved_states()
                .into_iter()
                .find(|p| Some(p) != self.own_state.as_ref())
            {
                Some(p) => self.load(&p),
                None => self.say("error: no earlier session was kept"),
            },
            _ => self.statement(line),
        }
        true
    }

    fn statement(&mut self, line: &str) {
        if let Some((lhs, rhs)) = line.split_once('=') {
            let name = lhs.trim();
            if !rhs.trim_start().starts_with('=')
                && !name.is_empty()
                && !name.contains(['<', '>', '!'])
            {
                if is_name(name) {
                    return self.define(name, rhs.trim());
                }
                if incertus_expr::parse(name).is_err() || name.contains('.') {
                    return self.fail(format!(
                        "`{name}` cannot be a name: a name starts with a letter or `_` and holds \
                         letters, digits and `_` (Greek letters and subscripts such as ρ_w are fine), \
                         and is not a function name or pi"
                    ));
                }
            }
        }
        // A formula alone: its value and uncertainty, nothing kept.
        if let Err(e) = incertus_expr::parse(line) {
            return self.fail(e.render(line));
        }
        let uses: Vec<String> = incertus_expr::parse(line)
            .map(|e| e.names())
            .unwrap_or_default();
        let roots: Vec<String> = uses
            .iter()
            .filter(|n| self.session.is_measurand(n))
            .cloned()
            .collect();
        let inputs: Vec<&str> = uses
            .iter()
            .filter(|n| !self.session.is_measurand(n))
            .map(String::as_str)
            .collect();
        let mut part = self.session.part(&roots, &inputs);
        part.measurands.push(MeasurandDescription::new("_", line));
        match Session::evaluate(&part) {
            Ok(x) => {
                let r = x
                    .report
                    .results
                    .iter()
                    .find(|r| r.name == "_")
                    .expect("added above");
                let s = show_result("", r);
                self.say(s.trim_start_matches(" = ").to_string());
            }
            Err(e) => self.fail(e),
        }
    }

    fn define(&mut self, name: &str, rhs: &str) {
        enum Definition {
            Input(InputDescription),
            Measurand(MeasurandDescription),
        }
        let def = match parse_value(name, rhs) {
            Some(Err(e)) => return self.fail(e),
            Some(Ok(input)) => Definition::Input(input),
            None => {
                // `formula [unit]`: the unit to report the result in.
                let (formula, unit) = match rhs
                    .trim_end()
                    .strip_suffix(']')
                    .and_then(|r| r.rsplit_once('['))
                {
                    Some((f, u)) => (f.trim(), Some(u.trim().to_string())),
                    None => (rhs, None),
                };
                if let Err(e) = incertus_expr::parse(formula) {
                    return self.fail(e.render(formula));
                }
                let mut m = MeasurandDescription::new(name, formula);
                m.unit = unit;
                Definition::Measurand(m)
            }
        };
        // Checked on the part of the model it touches; kept only if good.
        let part = match &def {
            Definition::Input(i) => self.session.part_with_input(i),
            Definition::Measurand(m) => self.session.part_with_measurand(m),
        };
        match Session::evaluate(&part) {
            Ok(part) => {
                let line = match part.model.input(name) {
                    Some(i) => {
                        let (v, u) = i.shown();
                        show(name, v, u, i.unit.as_deref())
                    }
                    None => self.result_line(&part.report, name).unwrap_or_default(),
                };
                match def {
                    Definition::Input(i) => self.session.set_input(i),
                    Definition::Measurand(m) => self.session.set_measurand(m),
                }
                self.changed = true;
                self.say(line);
            }
            Err(e) => self.fail(e),
        }
    }

    /// `specify NAME key=value ...`: a tolerance and decision rule for a
    /// result, checked like a file's specification.
    fn specify(&mut self, arg: &str) {
        let mut words = arg.split_whitespace();
        let name = words.next().unwrap_or("");
        if !self.session.is_measurand(name) {
            return self.fail(format!(
                "`{name}` is not a result (define it with {name} = formula, then specify it)"
            ));
        }
        let rest: Vec<&str> = words.collect();
        if rest == ["off"] {
            if let Some(m) = self.session.measurand_mut(name) {
                m.specification = None;
            }
            self.changed = true;
            return self.say(format!("{name}: no specification"));
        }
        let spec = match specification(&rest) {
            Ok(s) => s,
            Err(e) => return self.fail(e),
        };
        let mut part = self.session.part(&[name.to_string()], &[]);
        if let Some(m) = part.measurands.iter_mut().find(|m| m.name == name) {
            m.specification = Some(spec.clone());
        }
        match Session::evaluate(&part) {
            Ok(part) => {
                if let Some(m) = self.session.measurand_mut(name) {
                    m.specification = Some(spec);
                }
                self.changed = true;
                if let Some(r) = part.report.results.iter().find(|r| r.name == name) {
                    for l in crate::report::conformity_lines(r) {
                        self.say(l);
                    }
                }
            }
            Err(e) => self.fail(e),
        }
    }

    fn list(&mut self) {
        if self.session.is_empty() {
            return self.say("nothing is defined yet");
        }
        let part = match self.session.evaluate_all() {
            Ok(p) => p,
            Err(e) => return self.fail(format!("the definitions cannot be evaluated: {e}")),
        };
        let mut lines = Vec::new();
        for i in &part.model.inputs {
            let (v, u) = i.shown();
            lines.push(format!("input  {}", show(&i.name, v, u, i.unit.as_deref())));
        }
        for m in &self.session.d.measurands {
            let l = self.result_line(&part.report, &m.name).unwrap_or_default();
            lines.push(format!("result {l}   from {} = {}", m.name, m.formula));
        }
        for c in &self.session.d.correlations {
            lines.push(format!(
                "correlation r({}, {}) = {}",
                c.inputs[0], c.inputs[1], c.coefficient
            ));
        }
        for m in &self.session.d.measurands {
            let (Some(spec), Some(c)) = (
                &m.specification,
                part.report
                    .results
                    .iter()
                    .find(|r| r.name == m.name)
                    .and_then(|r| r.conformity.as_ref()),
            ) else {
                continue;
            };
            lines.push(format!(
                "specification of {}: {}; {}, p_c = {}",
                m.name,
                describe_specification(spec),
                c.verdict,
                c.conformance_text()
            ));
        }
        for l in lines {
            self.say(l);
        }
    }

    /// The evaluated part of the session behind the result `name`.
    fn result_part(&mut self, name: &str) -> Option<session::Part> {
        if !self.session.is_measurand(name) {
            self.fail(format!(
                "`{name}` is not a result (define it with {name} = formula)"
            ));
            return None;
        }
        match self.session.evaluate_part(&[name.to_string()], &[]) {
            Ok(p) => Some(p),
            Err(e) => {
                self.fail(e);
                None
            }
        }
    }

    /// The evaluated part behind the result `name`, and the result's index
    /// in its report.
    fn result_of(&mut self, name: &str) -> Option<(session::Part, usize)> {
        let part = self.result_part(name)?;
        let j = part.report.results.iter().position(|r| r.name == name)?;
        Some((part, j))
    }

    fn budget(&mut self, name: &str) {
        let Some((part, j)) = self.result_of(name) else {
            return;
        };
        let r = &part.report.results[j];
        let mut one = part.report.clone();
        one.results = vec![r.clone()];
        one.fits.clear();
        let t = crate::report::text(&one, crate::report::Style { digits: 2 }, None);
        self.say(t.trim_end().to_string());
    }

    fn sensitivities(&mut self, name: &str) {
        let Some((part, j)) = self.result_of(name) else {
            return;
        };
        let r = &part.report.results[j];
        let lines: Vec<String> = r
            .budget
            .iter()
            .map(|b| {
                format!(
                    "∂{name}/∂{} = {}  = {}",
                    b.input,
                    b.sensitivity_formula,
                    incertus_gum::rounding::significant_si(b.sensitivity, 8)
                )
            })
            .collect();
        for l in lines {
            self.say(l);
        }
    }

    fn montecarlo(&mut self, arg: &str) {
        let mut parts = arg.split_whitespace();
        let name = parts.next().unwrap_or("");
        let trials = match parts.next().map(str::parse::<usize>) {
            None => 100_000,
            Some(Ok(n)) => n,
            Some(Err(_)) => {
                return self.say("error: montecarlo NAME [TRIALS]: TRIALS is a whole number")
            }
        };
        if !self.session.is_measurand(name) {
            return self.fail(format!(
                "`{name}` is not a result (define it with {name} = formula)"
            ));
        }
        // The whole session, so that the trials are those `eval --mc` of the
        // saved session draws with the same seed.
        let part = match self.session.evaluate_all() {
            Ok(p) => p,
            Err(e) => return self.fail(e),
        };
        let j = part
            .report
            .results
            .iter()
            .position(|r| r.name == name)
            .expect("evaluated");
        let settings = incertus_mc::Settings {
            trials: incertus_mc::Trials::Fixed(trials),
            ..incertus_mc::Settings::default()
        };
        match incertus_mc::run(&part.model, &part.report, &settings) {
            Ok(mc) => {
                let m = &mc.results[j];
                let w = write(m.value, m.standard_uncertainty, 2);
                let u_text = if m.finite_variance {
                    w.with_power(&w.uncertainty)
                } else {
                    "none (an input has no finite variance)".to_string()
                };
                self.say(format!(
                    "{name}: {} trials, seed {}: {}, u = {u_text}; {} % interval [{}, {}] (probabilistically symmetric), [{}, {}] (shortest); first-order result {}",
                    m.trials,
                    m.seed,
                    w.with_power(&w.value),
                    incertus_gum::rounding::significant_si(100.0 * m.coverage_probability, 6),
                    incertus_gum::rounding::significant_si(m.symmetric_interval[0], 6),
                    incertus_gum::rounding::significant_si(m.symmetric_interval[1], 6),
                    incertus_gum::rounding::significant_si(m.shortest_interval[0], 6),
                    incertus_gum::rounding::significant_si(m.shortest_interval[1], 6),
                    if m.validation.passed { "validated" } else { "NOT validated (JCGM 101:2008, 8.2): the Monte Carlo result is the one to report" }
                ));
            }
            Err(e) => self.fail(e),
        }
    }

    fn correlate(&mut self, arg: &str) {
        let p: Vec<&str> = arg.split_whitespace().collect();
        let [a, b, r] = p.as_slice() else {
            return self.say("error: correlate A B R, e.g. correlate x y 0.5");
        };
        let Ok(r) = r.parse::<f64>() else {
            return self.say("error: the coefficient must be a number");
        };
        let c = incertus_gum::description::CorrelationDescription {
            inputs: [a.to_string(), b.to_string()],
            coefficient: r,
        };
        let same = |x: &incertus_gum::description::CorrelationDescription| {
            let [p, q] = &x.inputs;
            (p == a && q == b) || (p == b && q == a)
        };
        let mut part = self
            .session
            .part(&self.session.dependents(&[a, b]), &[a, b]);
        part.correlations.retain(|x| !same(x));
        part.correlations.push(c.clone());
        match Session::evaluate(&part) {
            Ok(_) => {
                self.session.d.correlations.retain(|x| !same(x));
                self.session.d.correlations.push(c);
                self.changed = true;
                self.say(format!("r({a}, {b}) = {r}"));
            }
            Err(e) => self.fail(e),
        }
    }

    fn save(&mut self, file: &str, replace: bool) {
        let p = Path::new(file);
        if p.exists() && !replace {
            return self.say(format!(
                "error: {file} exists; use save! {file} to replace it"
            ));
        }
        match write_atomic(p, &saved_text(&self.session.d)) {
            Ok(()) => self.say(format!("saved to {file}")),
            Err(e) => self.say(format!("error: cannot write {file}: {e}")),
        }
    }

    fn load(&mut self, path: &Path) {
        let limit = incertus_gum::Limits::default().max_file_bytes;
        let text = match incertus_fit::read_regular(path, limit).map(String::from_utf8) {
            Ok(Ok(t)) => t,
            Ok(Err(_)) => return self.fail(format!("{} is not UTF-8 text", path.display())),
            Err(e) => return self.fail(format!("{}: {e}", path.display())),
        };
        let file = path.display().to_string();
        let d = match ModelDescription::from_toml(&text, &file) {
            Ok(d) => d,
            Err(e) => return self.fail(e),
        };
        // Data files of fits are relative to the model file: read them
        // now, from there, and keep the numbers.
        let d = match inline_fit_data(d, path) {
            Ok(d) => d,
            Err(e) => return self.fail(e),
        };
        let session = Session::from_description(d);
        match session.evaluate_all() {
            Ok(_) => {
                let n = session.d.inputs.len() + session.d.measurands.len();
                self.session = session;
                self.changed = true;
                self.say(format!("loaded {n} definitions from {}", path.display()));
            }
            Err(e) => self.fail(format!("{}: {e}", path.display())),
        }
    }
}

/// The text `save` writes: the session's description as a model file.
fn saved_text(d: &ModelDescription) -> String {
    format!("# written by incertus shell\n{}", d.to_toml())
}

/// A loaded model's fits with their data read from files relative to the
/// model file, so the session holds numbers and does not depend on the
/// working folder.
fn inline_fit_data(mut d: ModelDescription, model: &Path) -> Result<ModelDescription, String> {
    use incertus_gum::description::FitData;
    let dir = model.parent().map(Path::to_path_buf).unwrap_or_default();
    for f in &mut d.fits {
        let FitData::File {
            path,
            x,
            y,
            y_uncertainty,
            x_uncertainty,
        } = &f.data
        else {
            continue;
        };
        let mut names: Vec<&str> = vec![x, y];
        names.extend(y_uncertainty.as_deref());
        names.extend(x_uncertainty.as_deref());
        let cols = incertus_fit::read_columns(&dir.join(path), &names)
            .map_err(|e| format!("fits.{}.data: {}", f.name, e.message))?;
        if cols.rows.iter().enumerate().any(|(i, r)| *r != i + 1) {
            // Rows were skipped in the file: keep the file reference.
            continue;
        }
        let mut it = cols.columns.into_iter();
        let cx = it.next().expect("x");
        let cy = it.next().expect("y");
        let uy = y_uncertainty.as_ref().map(|_| it.next().expect("u(y)"));
        let ux = x_uncertainty.as_ref().map(|_| it.next().expect("u(x)"));
        f.data = FitData::Inline {
            x: cx,
            y: cy,
            y_uncertainty: uy,
            x_uncertainty: ux,
        };
    }
    Ok(d)
}

/// `key=value` words of `specify` to a specification.
fn specification(words: &[&str]) -> Result<incertus_gum::conformity::Specification, String> {
    use incertus_gum::conformity::{Guard, Process, Rule, Specification};
    let mut s = Specification {
        lower: None,
        upper: None,
        rule: Rule::SimpleAcceptance,
        guard: Guard::None,
        process: None,
    };
    let (mut rule, mut mean, mut sd) = (None, None, None);
    let (mut multiple, mut risk) = (None, None);
    for w in words {
        let Some((k, v)) = w.split_once('=') else {
            return Err(format!(
                "`{w}`: write key=value (lower, upper, rule, guard, risk, process_mean, process_sd)"
            ));
        };
        if k == "rule" {
            rule = Some(match v {
                "simple" | "simple-acceptance" => Rule::SimpleAcceptance,
                "guarded-acceptance" => Rule::GuardedAcceptance,
                "guarded-rejection" => Rule::GuardedRejection,
                other => {
                    return Err(format!(
                        "unknown rule `{other}`: simple, guarded-acceptance or guarded-rejection"
                    ))
                }
            });
            continue;
        }
        let x = match v.parse::<f64>() {
            Ok(x) if x.is_finite() => x,
            _ => return Err(format!("`{k}` needs a number, found `{v}`")),
        };
        match k {
            "lower" => s.lower = Some(x),
            "upper" => s.upper = Some(x),
            "process_mean" => mean = Some(x),
            "process_sd" => sd = Some(x),
            "guard" => multiple = Some(x),
            "risk" => risk = Some(x),
            other => {
                return Err(format!(
                "unknown key `{other}`: lower, upper, rule, guard, risk, process_mean, process_sd"
            ))
            }
        }
    }
    if s.lower.is_none() && s.upper.is_none() {
        return Err("a specification needs lower=, upper= or both (the tolerance limits)".into());
    }
    s.rule = rule.unwrap_or(Rule::SimpleAcceptance);
    s.guard = match (s.rule, multiple, risk) {
        (_, Some(_), Some(_)) => return Err("give either guard= or risk=, not both".into()),
        (Rule::SimpleAcceptance, None, None) => Guard::None,
        (Rule::SimpleAcceptance, _, _) => {
            return Err("simple acceptance has no guard band; say rule=guarded-acceptance or rule=guarded-rejection".into())
        }
        (r, None, None) => {
            return Err(format!(
                "{} needs a guard band: guard=R (w = R U) or risk=A (the largest specific risk)",
                r.name()
            ))
        }
        (_, Some(m), None) => Guard::MultipleOfU(m),
        (_, None, Some(a)) => Guard::SpecificRisk(a),
    };
    s.process = match (mean, sd) {
        (None, None) => None,
        (Some(mean), Some(standard_deviation)) => Some(Process {
            mean,
            standard_deviation,
        }),
        _ => return Err("give both process_mean= and process_sd=".into()),
    };
    Ok(s)
}

/// A specification as `list` shows it, in the model file's key names.
fn describe_specification(s: &incertus_gum::conformity::Specification) -> String {
    use incertus_gum::conformity::Guard;
    let mut parts = Vec::new();
    if let Some(l) = s.lower {
        parts.push(format!("lower = {l:?}"));
    }
    if let Some(u) = s.upper {
        parts.push(format!("upper = {u:?}"));
    }
    parts.push(format!("rule = \"{}\"", s.rule.name()));
    match s.guard {
        Guard::None => {}
        Guard::MultipleOfU(r) => parts.push(format!("guard_multiple = {r:?}")),
        Guard::SpecificRisk(a) => parts.push(format!("max_specific_risk = {a:?}")),
    }
    if let Some(p) = s.process {
        parts.push(format!("process_mean = {:?}", p.mean));
        parts.push(format!(
            "process_standard_deviation = {:?}",
            p.standard_deviation
        ));
    }
    parts.join(", ")
}

/// Run shell statements without a terminal and without files (save, load
/// and recover are refused): the output lines. For tests and fuzzing of
/// the statement parser.
pub fn run_statements<'a>(lines: impl IntoIterator<Item = &'a str>) -> Vec<String> {
    let mut sh = Shell::new(false);
    for l in lines {
        if !sh.line(l) {
            break;
        }
    }
    sh.out
}

pub fn run(a: &ShellArgs, out: &mut dyn Write) -> Result<(), Failure> {
    let mut sh = Shell::new(true);
    let interactive = std::io::stdin().is_terminal();
    let mut recovery = Recovery::new(interactive);
    sh.own_state = Some(recovery.path().to_path_buf());
    recovery.watch_signals();
    if let Some(f) = &a.file {
        sh.load(f);
        flush(&mut sh, out);
    }
    if interactive {
        prompt_loop(&mut sh, &mut recovery, out)?;
    } else {
        script_loop(&mut sh, &mut recovery, out);
    }
    if !sh.session.is_empty() {
        keep_state(&mut sh, &mut recovery);
        if let Err(e) = recovery.flush() {
            let _ = writeln!(
                out,
                "note: the recovery file {} could not be written: {e}",
                recovery.path().display()
            );
        }
    }
    // A script (standard input not a terminal) fails if a statement did.
    if !interactive && sh.failures > 0 {
        return Err(Failure::input(format!(
            "{} statement{} of the script failed (see the lines starting with error:)",
            sh.failures,
            if sh.failures == 1 { "" } else { "s" }
        )));
    }
    Ok(())
}

fn flush(sh: &mut Shell, out: &mut dyn Write) {
    for l in sh.out.drain(..) {
        let _ = writeln!(out, "{l}");
    }
    let _ = out.flush();
}

/// Hand the definitions to the recovery state if they changed.
fn keep_state(sh: &mut Shell, recovery: &mut Recovery) {
    if sh.changed && !sh.session.is_empty() {
        recovery.changed(saved_text(&sh.session.d));
        sh.changed = false;
    }
}

/// At a terminal: line editing and history; every change kept at once.
fn prompt_loop(
    sh: &mut Shell,
    recovery: &mut Recovery,
    out: &mut dyn Write,
) -> Result<(), Failure> {
    let _ = writeln!(
        out,
        "incertus shell: type help for statements and commands, quit to leave"
    );
    if let Some(p) = recovery.newest_other() {
        let _ = writeln!(
            out,
            "the definitions of an earlier session were kept in {}; type recover to load them",
            p.display()
        );
    }
    let mut rl = rustyline::DefaultEditor::new()
        .map_err(|e| Failure::input(format!("cannot start the line editor: {e}")))?;
    let history = home().join("history");
    let _ = rl.load_history(&history);
    // Ctrl-C, Ctrl-D or a closed terminal end the loop.
    while let Ok(line) = rl.readline("incertus> ") {
        let _ = rl.add_history_entry(line.as_str());
        let go_on = sh.line(&line);
        flush(sh, out);
        keep_state(sh, recovery);
        if !go_on {
            break;
        }
    }
    let _ = crate::atomic::replace_with(&history, |tmp| {
        rl.save_history(tmp).map_err(std::io::Error::other)
    });
    Ok(())
}

/// A piped script, line by line, decoded strictly: a line that is not UTF-8
/// text is an error naming it (the script then exits 1), and the script
/// goes on. The state is handed over whenever the input runs dry (the next
/// read may wait), and written at most twice a second.
fn script_loop(sh: &mut Shell, recovery: &mut Recovery, out: &mut dyn Write) {
    use std::io::BufRead;
    // Reads larger than standard input's own buffer pass it by, so this
    // buffer alone says whether the next read may wait.
    let mut reader = std::io::BufReader::with_capacity(1 << 16, std::io::stdin());
    let mut buf = Vec::new();
    let mut number = 0usize;
    loop {
        buf.clear();
        match reader.read_until(b'\n', &mut buf) {
            Ok(0) => break,
            Ok(_) => {}
            Err(e) => {
                sh.say(format!("error: cannot read the script: {e}"));
                flush(sh, out);
                break;
            }
        }
        number += 1;
        if buf.ends_with(b"\n") {
            buf.pop();
            if buf.ends_with(b"\r") {
                buf.pop();
            }
        }
        let go_on = match std::str::from_utf8(&buf) {
            Ok(line) => sh.line(line),
            Err(e) => {
                let at = e.valid_up_to();
                sh.say(format!(
                    "error: line {number} is not UTF-8 text (byte 0x{:02X} after `{}`); the line was not run",
                    buf[at],
                    crate::terminal::visible(&String::from_utf8_lossy(&buf[..at]))
                ));
                true
            }
        };
        flush(sh, out);
        if sh.changed && reader.buffer().is_empty() {
            keep_state(sh, recovery);
        }
        if !go_on {
            break;
        }
    }
}
