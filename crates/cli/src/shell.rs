//! `incertus shell`: typing formulas and uncertain values at a prompt.
//!
//! Statements, one per line (`#` starts a comment):
//!
//! ```text
//! x = 2.0 ± 0.1            standard uncertainty (also +-)
//! x = 1.234(5)             concise notation (JCGM 100:2008, 7.2.2)
//! x = 10.0 ± 0.5 (k=2)     expanded uncertainty with its coverage factor
//! x = 10.0 ± 0.5 rectangular [mm] dof=8
//!                          a distribution with limits (± gives the
//!                          half-width: rectangular, triangular, arcsine),
//!                          a unit in brackets, degrees of freedom
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
//! The definitions are kept as a model file and evaluated by the same
//! loader and propagation as `incertus eval`, so `save` writes a file that
//! `eval` reads with the same numbers. An error never ends the session or
//! changes what was defined. On leaving (quit, end of input, Ctrl-C) the
//! definitions are written to a recovery file, which a new session offers
//! to load; every file is written to a temporary name and renamed.

use std::io::{BufRead, IsTerminal, Write};
use std::path::{Path, PathBuf};

use clap::Args;
use incertus_gum::builder::text;
use incertus_gum::rounding::write;
use incertus_gum::{load_str, propagate, Options, Report};

use crate::Failure;

#[derive(Args, Debug)]
pub struct ShellArgs {
    /// Load this model file first
    file: Option<PathBuf>,
}

/// What the session has defined.
#[derive(Clone, Debug, Default)]
struct State {
    /// Inputs: name and their model-file keys (already TOML values).
    inputs: Vec<(String, Vec<(String, String)>)>,
    correlations: Vec<(String, String, f64)>,
    /// Results: name, formula, unit to report in.
    results: Vec<(String, String, Option<String>)>,
    /// Specifications of results (JCGM 106:2012): name and model-file keys.
    specs: Vec<(String, Vec<(String, String)>)>,
    /// Settings of a loaded model file, kept and saved with the session.
    title: Option<String>,
    coverage_probability: Option<f64>,
    effective_dof_rounding: Option<String>,
}

impl State {
    fn to_toml(&self) -> String {
        let mut t = String::from("# written by incertus shell\n");
        if let Some(title) = &self.title {
            t.push_str(&format!("title = {}\n", text(title)));
        }
        if let Some(p) = self.coverage_probability {
            t.push_str(&format!("coverage_probability = {p:?}\n"));
        }
        if let Some(r) = &self.effective_dof_rounding {
            t.push_str(&format!("effective_dof_rounding = {}\n", text(r)));
        }
        for (name, keys) in &self.inputs {
            t.push_str(&format!("\n[inputs.{name}]\n"));
            for (k, v) in keys {
                t.push_str(&format!("{k} = {v}\n"));
            }
        }
        for (a, b, r) in &self.correlations {
            t.push_str(&format!(
                "\n[[correlations]]\ninputs = [{}, {}]\ncoefficient = {r:?}\n",
                text(a),
                text(b)
            ));
        }
        for (name, f, unit) in &self.results {
            t.push_str(&format!(
                "\n[[measurands]]\nname = {}\nformula = {}\n",
                text(name),
                text(f)
            ));
            if let Some(u) = unit {
                t.push_str(&format!("unit = {}\n", text(u)));
            }
            if let Some((_, keys)) = self.specs.iter().find(|(n, _)| n == name) {
                t.push_str("\n[measurands.specification]\n");
                for (k, v) in keys {
                    t.push_str(&format!("{k} = {v}\n"));
                }
            }
        }
        t
    }

    fn remove(&mut self, name: &str) {
        self.inputs.retain(|(n, _)| n != name);
        self.results.retain(|(n, _, _)| n != name);
    }

    /// Evaluate; with no results, a placeholder keeps the model valid.
    fn evaluate(
        &self,
        extra: Option<(&str, &str)>,
    ) -> Result<(incertus_gum::Model, Report), String> {
        let mut s = self.clone();
        if let Some((n, f)) = extra {
            s.results.push((n.to_string(), f.to_string(), None));
        }
        if s.results.is_empty() {
            s.results.push(("_nothing".into(), "0".into(), None));
        }
        let model = load_str(&s.to_toml(), "<session>").map_err(|e| {
            let mut m = e.message.clone();
            if let Some(d) = e.detail {
                m.push('\n');
                m.push_str(&d);
            }
            m
        })?;
        let report = propagate(&model, &Options::default()).map_err(|e| e.to_string())?;
        Ok((model, report))
    }
}

/// Where the recovery file and the history live.
fn home() -> PathBuf {
    if let Some(h) = std::env::var_os("INCERTUS_HOME") {
        return PathBuf::from(h);
    }
    std::env::var_os("HOME")
        .map(|h| PathBuf::from(h).join(".incertus"))
        .unwrap_or_else(|| PathBuf::from(".incertus"))
}

pub(crate) use crate::atomic::write_atomic;

fn is_name(s: &str) -> bool {
    let mut c = s.chars();
    matches!(c.next(), Some(f) if f.is_alphabetic() || f == '_')
        && c.all(|x| x.is_alphanumeric() || x == '_')
        && incertus_expr::Func::from_name(s).is_none()
        && s != "pi"
}

/// Parse `VALUE ± U [modifiers]`, `VALUE(DIGITS) [modifiers]` or a plain
/// number; `None` when the text is not a value (then it is a formula).
fn parse_value(rhs: &str) -> Option<Result<Vec<(String, String)>, String>> {
    let s = rhs.trim();
    let num_end = s
        .char_indices()
        .find(|(i, c)| {
            !(c.is_ascii_digit()
                || *c == '.'
                || *c == 'e'
                || *c == 'E'
                || ((*c == '-' || *c == '+') && (*i == 0 || s[..*i].ends_with(['e', 'E']))))
        })
        .map_or(s.len(), |(i, _)| i);
    let value: f64 = s[..num_end].parse().ok()?;
    let rest = s[num_end..].trim_start();
    let mut keys: Vec<(String, String)> = vec![("value".into(), format!("{value:?}"))];
    let (u, mut rest): (Option<f64>, &str) = if let Some(r) =
        rest.strip_prefix('±').or_else(|| rest.strip_prefix("+-"))
    {
        let r = r.trim_start();
        let end = r
            .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == 'e' || c == 'E' || c == '-'))
            .unwrap_or(r.len());
        match r[..end].parse::<f64>() {
            Ok(v) => (Some(v), &r[end..]),
            Err(_) => return Some(Err("expected a number after ±".into())),
        }
    } else if let Some(r) = rest.strip_prefix('(') {
        // Concise notation: the digits in parentheses are the uncertainty
        // in units of the last digit of the value.
        let Some(close) = r.find(')') else {
            return Some(Err(
                "expected `)` after the digits of the uncertainty".into()
            ));
        };
        let digits = &r[..close];
        if digits.starts_with('k') {
            return None;
        }
        let Ok(d) = digits.parse::<u64>() else {
            return Some(Err(format!(
                "`({digits})` is not concise notation: write digits, as in 1.234(5)"
            )));
        };
        let mantissa = &s[..num_end];
        let decimals = mantissa
            .split(['e', 'E'])
            .next()
            .and_then(|m| m.split_once('.'))
            .map_or(0, |(_, f)| f.len());
        let exp: i32 = mantissa
            .split_once(['e', 'E'])
            .and_then(|(_, e)| e.parse().ok())
            .unwrap_or(0);
        (
            Some(d as f64 * 10f64.powi(exp - decimals as i32)),
            &r[close + 1..],
        )
    } else {
        (None, rest)
    };
    let mut k: Option<f64> = None;
    let mut dist: Option<&str> = None;
    loop {
        rest = rest.trim_start();
        if rest.is_empty() {
            break;
        }
        if let Some(r) = rest
            .strip_prefix("(k=")
            .or_else(|| rest.strip_prefix("(k ="))
        {
            let Some(close) = r.find(')') else {
                return Some(Err("expected `)` after k=".into()));
            };
            match r[..close].trim().parse::<f64>() {
                Ok(v) => k = Some(v),
                Err(_) => return Some(Err("k must be a number".into())),
            }
            rest = &r[close + 1..];
        } else if let Some(r) = rest.strip_prefix('[') {
            let Some(close) = r.find(']') else {
                return Some(Err("expected `]` after the unit".into()));
            };
            keys.push(("unit".into(), text(r[..close].trim())));
            rest = &r[close + 1..];
        } else if let Some(r) = rest
            .strip_prefix("dof=")
            .or_else(|| rest.strip_prefix("dof ="))
        {
            let end = r
                .trim_start()
                .find(char::is_whitespace)
                .unwrap_or(r.trim_start().len());
            match r.trim_start()[..end].parse::<f64>() {
                Ok(v) => keys.push(("dof".into(), format!("{v:?}"))),
                Err(_) => return Some(Err("dof must be a number".into())),
            }
            rest = &r.trim_start()[end..];
        } else if let Some(d) = ["rectangular", "triangular", "arcsine"]
            .iter()
            .find(|d| rest.starts_with(**d))
        {
            dist = Some(d);
            rest = &rest[d.len()..];
        } else if rest.starts_with(['*', '/', '^', '+', '-', '(']) {
            return None; // a formula such as 2 ± ... is not a value; treat as formula
        } else {
            return Some(Err(format!(
                "cannot read `{rest}` after the value; write e.g. 2.0 ± 0.1 (k=2), 1.0 ± 0.5 rectangular, [mm], dof=8"
            )));
        }
    }
    match (u, k, dist) {
        (None, None, None) => {}
        (Some(u), None, None) => keys.push(("standard_uncertainty".into(), format!("{u:?}"))),
        (Some(u), Some(k), None) => {
            keys.push(("expanded_uncertainty".into(), format!("{u:?}")));
            keys.push(("coverage_factor".into(), format!("{k:?}")));
        }
        (Some(a), None, Some(d)) => {
            keys.push(("distribution".into(), text(d)));
            keys.push(("half_width".into(), format!("{a:?}")));
        }
        (None, _, _) => {
            return Some(Err(
                "give an uncertainty with ± before (k=...) or a distribution".into(),
            ))
        }
        (Some(_), Some(_), Some(_)) => {
            return Some(Err(
                "(k=...) goes with an expanded uncertainty, not with a distribution".into(),
            ))
        }
    }
    Some(Ok(keys))
}

fn show(name: &str, value: f64, u: f64, unit: Option<&str>) -> String {
    let unit = unit.map(|u| format!(" {u}")).unwrap_or_default();
    if u == 0.0 {
        return format!(
            "{name} = {}{unit}  (exact)",
            incertus_gum::rounding::significant(value, 10)
        );
    }
    let w = write(value, u, 2);
    format!(
        "{name} = {}{unit}   [{}]   (± is the standard uncertainty u)",
        w.plus_minus, w.concise
    )
}

/// A result as `show` writes it, with its warnings below; a zero
/// first-order u that a warning questions is not called exact.
fn show_result(name: &str, r: &incertus_gum::MeasurandResult) -> String {
    let mut s = if r.standard_uncertainty == 0.0 && !r.warnings.is_empty() {
        format!(
            "{name} = {}{}  (first-order u = 0, not exact: see the warning)",
            incertus_gum::rounding::significant(r.value, 10),
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
    state: State,
    out: Vec<String>,
    /// Whether save, load and recover may touch files.
    files: bool,
    /// Statements that ended in an error.
    failures: usize,
}

const HELP: &str = "statements:
  x = 2.0 ± 0.1               an input with its standard uncertainty (also +-)
  x = 1.234(5)                concise notation
  x = 10.0 ± 0.5 (k=2)        an expanded uncertainty and its coverage factor
  x = 1.0 ± 0.5 rectangular   limits (also triangular, arcsine); add [unit] and dof=N
  x = 3.5                     an exact value
  y = formula                 a result, printed at once (y = formula [unit] to report in a unit)
  formula                     its value and uncertainty
commands:
  specify NAME lower=L upper=U [rule=guarded-acceptance|guarded-rejection] [guard=R | risk=A]
                              tolerance limits and a decision rule (JCGM 106:2012); specify NAME off
  budget NAME, sensitivities NAME, montecarlo NAME [TRIALS], correlate A B R,
  list, save FILE (save! FILE replaces), load FILE, recover, help, quit";

impl Shell {
    fn say(&mut self, s: impl Into<String>) {
        let s = s.into();
        if s.starts_with("error:") {
            self.failures += 1;
        }
        self.out.push(s);
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
            "recover" => {
                let p = home().join("recovery.toml");
                self.load(&p)
            }
            _ => self.statement(line),
        }
        true
    }

    fn statement(&mut self, line: &str) {
        if let Some((lhs, rhs)) = line.split_once('=') {
            let name = lhs.trim();
            if is_name(name) && !rhs.trim_start().starts_with('=') {
                return self.define(name, rhs.trim());
            }
        }
        // A formula alone.
        match self.state.evaluate(Some(("_", line))) {
            Ok((_, report)) => {
                let r = report
                    .results
                    .iter()
                    .find(|r| r.name == "_")
                    .expect("added above");
                let s = show_result("", r);
                self.say(s.trim_start_matches(" = ").to_string());
            }
            Err(e) => self.say(format!("error: {e}")),
        }
    }

    fn define(&mut self, name: &str, rhs: &str) {
        let mut next = self.state.clone();
        next.remove(name);
        match parse_value(rhs) {
            Some(Err(e)) => return self.say(format!("error: {e}")),
            Some(Ok(keys)) => next.inputs.push((name.to_string(), keys)),
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
                    return self.say(format!("error: {}", e.render(formula)));
                }
                // A result is not an input: its stated correlations go.
                next.correlations.retain(|(a, b, _)| a != name && b != name);
                next.results
                    .push((name.to_string(), formula.to_string(), unit));
            }
        }
        match next.evaluate(None) {
            Ok((model, report)) => {
                let line = match model.input(name) {
                    Some(i) => {
                        let unit = i.unit.clone();
                        let (v, u) = i.shown();
                        show(name, v, u, unit.as_deref())
                    }
                    None => self.result_line(&report, name).unwrap_or_default(),
                };
                self.state = next;
                self.say(line);
            }
            Err(e) => self.say(format!("error: {e}")),
        }
    }

    /// `specify NAME key=value ...`: a tolerance and decision rule for a
    /// result, checked by the model loader like a file's specification.
    fn specify(&mut self, arg: &str) {
        let mut words = arg.split_whitespace();
        let name = words.next().unwrap_or("");
        if !self.state.results.iter().any(|(n, _, _)| n == name) {
            return self.say(format!(
                "error: `{name}` is not a result (define it with {name} = formula, then specify it)"
            ));
        }
        let mut next = self.state.clone();
        next.specs.retain(|(n, _)| n != name);
        let rest: Vec<&str> = words.collect();
        if rest == ["off"] {
            self.state = next;
            return self.say(format!("{name}: no specification"));
        }
        let mut keys = Vec::new();
        for w in rest {
            let Some((k, v)) = w.split_once('=') else {
                return self.say(format!(
                    "error: `{w}`: write key=value (lower, upper, rule, guard, risk, process_mean, process_sd)"
                ));
            };
            let key = match k {
                "lower" | "upper" | "process_mean" => k,
                "process_sd" => "process_standard_deviation",
                "guard" => "guard_multiple",
                "risk" => "max_specific_risk",
                "rule" => {
                    let rule = match v {
                        "simple" | "simple-acceptance" => "simple acceptance",
                        "guarded-acceptance" => "guarded acceptance",
                        "guarded-rejection" => "guarded rejection",
                        other => {
                            return self.say(format!(
                                "error: unknown rule `{other}`: simple, guarded-acceptance or guarded-rejection"
                            ))
                        }
                    };
                    keys.push(("rule".to_string(), text(rule)));
                    continue;
                }
                other => {
                    return self.say(format!(
                        "error: unknown key `{other}`: lower, upper, rule, guard, risk, process_mean, process_sd"
                    ))
                }
            };
            match v.parse::<f64>() {
                Ok(x) if x.is_finite() => keys.push((key.to_string(), format!("{x:?}"))),
                _ => return self.say(format!("error: `{k}` needs a number, found `{v}`")),
            }
        }
        next.specs.push((name.to_string(), keys));
        match next.evaluate(None) {
            Ok((_, report)) => {
                self.state = next;
                if let Some(r) = report.results.iter().find(|r| r.name == name) {
                    for l in crate::report::conformity_lines(r) {
                        self.say(l);
                    }
                }
            }
            Err(e) => self.say(format!("error: {e}")),
        }
    }

    fn list(&mut self) {
        let Ok((_, report)) = self.state.evaluate(None) else {
            return self.say("error: the definitions cannot be evaluated");
        };
        if self.state.inputs.is_empty() && self.state.results.is_empty() {
            return self.say("nothing is defined yet");
        }
        let (model, _) = self.state.evaluate(None).expect("evaluated above");
        for (name, _) in &self.state.inputs.clone() {
            let i = model.input(name).expect("defined");
            let (v, u) = i.shown();
            self.say(format!("input  {}", show(name, v, u, i.unit.as_deref())));
        }
        for (name, f, _) in &self.state.results.clone() {
            let l = self.result_line(&report, name).unwrap_or_default();
            self.say(format!("result {l}   from {name} = {f}"));
        }
        for (a, b, r) in &self.state.correlations.clone() {
            self.say(format!("correlation r({a}, {b}) = {r}"));
        }
        for (name, keys) in &self.state.specs.clone() {
            if let Some(c) = report
                .results
                .iter()
                .find(|r| &r.name == name)
                .and_then(|r| r.conformity.as_ref())
            {
                let given: Vec<String> = keys.iter().map(|(k, v)| format!("{k} = {v}")).collect();
                self.say(format!(
                    "specification of {name}: {}; {}, p_c = {}",
                    given.join(", "),
                    c.verdict,
                    incertus_gum::conformity::probability(c.conformance_probability)
                ));
            }
        }
    }

    fn budget(&mut self, name: &str) {
        match self.state.evaluate(None) {
            Ok((_, report)) => match report.results.iter().find(|r| r.name == name) {
                Some(r) => {
                    let mut one = report.clone();
                    one.results = vec![r.clone()];
                    one.fits.clear();
                    let t = crate::report::text(&one, crate::report::Style { digits: 2 }, None);
                    self.say(t.trim_end().to_string());
                }
                None => self.say(format!(
                    "error: `{name}` is not a result (define it with {name} = formula)"
                )),
            },
            Err(e) => self.say(format!("error: {e}")),
        }
    }

    fn sensitivities(&mut self, name: &str) {
        match self.state.evaluate(None) {
            Ok((_, report)) => match report.results.iter().find(|r| r.name == name) {
                Some(r) => {
                    for b in &r.budget {
                        let l = format!(
                            "∂{name}/∂{} = {}  = {}",
                            b.input,
                            b.sensitivity_formula,
                            incertus_gum::rounding::significant(b.sensitivity, 8)
                        );
                        self.say(l);
                    }
                }
                None => self.say(format!("error: `{name}` is not a result")),
            },
            Err(e) => self.say(format!("error: {e}")),
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
        let (model, report) = match self.state.evaluate(None) {
            Ok(x) => x,
            Err(e) => return self.say(format!("error: {e}")),
        };
        let Some(j) = report.results.iter().position(|r| r.name == name) else {
            return self.say(format!("error: `{name}` is not a result"));
        };
        let settings = incertus_mc::Settings {
            trials: incertus_mc::Trials::Fixed(trials),
            ..incertus_mc::Settings::default()
        };
        match incertus_mc::run(&model, &report, &settings) {
            Ok(mc) => {
                let m = &mc.results[j];
                let w = write(m.value, m.standard_uncertainty, 2);
                self.say(format!(
                    "{name}: {} trials, seed {}: {} (± is u); {} % interval [{}, {}] (probabilistically symmetric), [{}, {}] (shortest); first-order result {}",
                    m.trials,
                    m.seed,
                    w.plus_minus,
                    incertus_gum::rounding::significant(100.0 * m.coverage_probability, 6),
                    incertus_gum::rounding::significant(m.symmetric_interval[0], 6),
                    incertus_gum::rounding::significant(m.symmetric_interval[1], 6),
                    incertus_gum::rounding::significant(m.shortest_interval[0], 6),
                    incertus_gum::rounding::significant(m.shortest_interval[1], 6),
                    if m.validation.passed { "validated" } else { "NOT validated (JCGM 101:2008, 8.2): the Monte Carlo result is the one to report" }
                ));
            }
            Err(e) => self.say(format!("error: {e}")),
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
        let mut next = self.state.clone();
        next.correlations
            .retain(|(x, y, _)| !((x == a && y == b) || (x == b && y == a)));
        next.correlations.push((a.to_string(), b.to_string(), r));
        match next.evaluate(None) {
            Ok(_) => {
                self.state = next;
                self.say(format!("r({a}, {b}) = {r}"));
            }
            Err(e) => self.say(format!("error: {e}")),
        }
    }

    fn save(&mut self, file: &str, replace: bool) {
        let p = Path::new(file);
        if p.exists() && !replace {
            return self.say(format!(
                "error: {file} exists; use save! {file} to replace it"
            ));
        }
        match write_atomic(p, &self.state.to_toml()) {
            Ok(()) => self.say(format!("saved to {file}")),
            Err(e) => self.say(format!("error: cannot write {file}: {e}")),
        }
    }

    fn load(&mut self, path: &Path) {
        let text = match std::fs::read_to_string(path) {
            Ok(t) => t,
            Err(e) => return self.say(format!("error: cannot read {}: {e}", path.display())),
        };
        let table: toml::Table = match text.parse() {
            Ok(t) => t,
            Err(e) => return self.say(format!("error: {e}")),
        };
        let mut st = State::default();
        for (k, _) in table.iter() {
            if !matches!(
                k.as_str(),
                "inputs"
                    | "correlations"
                    | "measurands"
                    | "title"
                    | "coverage_probability"
                    | "effective_dof_rounding"
            ) {
                return self.say(format!(
                    "error: the shell cannot hold `{k}` of {}; use incertus eval",
                    path.display()
                ));
            }
        }
        st.title = table
            .get("title")
            .and_then(|v| v.as_str())
            .map(str::to_string);
        st.coverage_probability = table
            .get("coverage_probability")
            .and_then(|v| v.as_float().or(v.as_integer().map(|i| i as f64)));
        st.effective_dof_rounding = table
            .get("effective_dof_rounding")
            .and_then(|v| v.as_str())
            .map(str::to_string);
        if let Some(toml::Value::Table(inputs)) = table.get("inputs") {
            for (name, v) in inputs {
                let toml::Value::Table(keys) = v else {
                    continue;
                };
                st.inputs.push((
                    name.clone(),
                    keys.iter()
                        .map(|(k, v)| (k.clone(), v.to_string()))
                        .collect(),
                ));
            }
        }
        if let Some(toml::Value::Array(cs)) = table.get("correlations") {
            for c in cs {
                let names: Vec<String> = c
                    .get("inputs")
                    .and_then(|v| v.as_array())
                    .map(|a| {
                        a.iter()
                            .filter_map(|x| x.as_str().map(str::to_string))
                            .collect()
                    })
                    .unwrap_or_default();
                let r = c
                    .get("coefficient")
                    .and_then(|v| v.as_float().or(v.as_integer().map(|i| i as f64)));
                if let ([a, b], Some(r)) = (names.as_slice(), r) {
                    st.correlations.push((a.clone(), b.clone(), r));
                }
            }
        }
        if let Some(toml::Value::Array(ms)) = table.get("measurands") {
            for m in ms {
                if let (Some(n), Some(f)) = (
                    m.get("name").and_then(|v| v.as_str()),
                    m.get("formula").and_then(|v| v.as_str()),
                ) {
                    let unit = m.get("unit").and_then(|v| v.as_str()).map(str::to_string);
                    st.results.push((n.to_string(), f.to_string(), unit));
                    if let Some(toml::Value::Table(spec)) = m.get("specification") {
                        st.specs.push((
                            n.to_string(),
                            spec.iter()
                                .map(|(k, v)| (k.clone(), v.to_string()))
                                .collect(),
                        ));
                    }
                }
            }
        }
        match st.evaluate(None) {
            Ok(_) => {
                let n = st.inputs.len() + st.results.len();
                self.state = st;
                self.say(format!("loaded {n} definitions from {}", path.display()));
            }
            Err(e) => self.say(format!("error: {e}")),
        }
    }
}

/// Run shell statements without a terminal and without files (save, load
/// and recover are refused): the output lines. For tests and fuzzing of
/// the statement parser.
pub fn run_statements<'a>(lines: impl IntoIterator<Item = &'a str>) -> Vec<String> {
    let mut sh = Shell {
        state: State::default(),
        out: Vec::new(),
        files: false,
        failures: 0,
    };
    for l in lines {
        if !sh.line(l) {
            break;
        }
    }
    sh.out
}

pub fn run(a: &ShellArgs, out: &mut dyn Write) -> Result<(), Failure> {
    let mut sh = Shell {
        state: State::default(),
        out: Vec::new(),
        files: true,
        failures: 0,
    };
    let flush = |sh: &mut Shell, out: &mut dyn Write| {
        for l in sh.out.drain(..) {
            let _ = writeln!(out, "{l}");
        }
        let _ = out.flush();
    };
    if let Some(f) = &a.file {
        sh.load(f);
        flush(&mut sh, out);
    }
    let recovery = home().join("recovery.toml");
    let interactive = std::io::stdin().is_terminal();
    if interactive {
        let _ = writeln!(
            out,
            "incertus shell: type help for statements and commands, quit to leave"
        );
        if recovery.exists() {
            let _ = writeln!(
                out,
                "the definitions of an earlier session were kept in {}; type recover to load them",
                recovery.display()
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
            flush(&mut sh, out);
            if !go_on {
                break;
            }
        }
        let _ = crate::atomic::replace_with(&history, |tmp| {
            rl.save_history(tmp).map_err(std::io::Error::other)
        });
    } else {
        let stdin = std::io::stdin();
        for line in stdin.lock().lines() {
            let Ok(line) = line else { break };
            let go_on = sh.line(&line);
            flush(&mut sh, out);
            if !go_on {
                break;
            }
        }
    }
    if !sh.state.inputs.is_empty() || !sh.state.results.is_empty() {
        if let Err(e) = write_atomic(&recovery, &sh.state.to_toml()) {
            let _ = writeln!(
                out,
                "note: the recovery file {} could not be written: {e}",
                recovery.display()
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
