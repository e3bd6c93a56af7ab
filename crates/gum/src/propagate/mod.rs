//! The law of propagation of uncertainty (JCGM 100:2008, clause 5) for one
//! or more measurands, with uncertainty budgets, effective degrees of
//! freedom and coverage factors (Annex G), second-order terms (5.1.2 note),
//! and the covariance of several measurands (JCGM 102:2011, 6.2.1.3).
//!
//! A measurand that uses earlier measurands is expanded into a formula of the
//! inputs alone (by substitution), so shared inputs correlate the measurands
//! and enter each budget correctly.
//!
//! Effective dof with correlated inputs: JCGM 100:2008, G.4.1 assumes
//! independent components. Here the Welch-Satterthwaite formula is
//! generalised by Satterthwaite's two-moment match (derivation at
//! `coverage::effective_dof_correlated`): inputs observed together and the
//! parameters of one fit form blocks with one estimated scale each, and
//! every block counts with its share of u_c² including its correlation
//! terms. It reduces to G.4.1 without correlations and is exact (n − 1) for
//! a block alone; its coverage is checked by simulation in the tests.

use std::collections::HashMap;

use incertus_expr::{derivative, print, simplify, Expr, Kind};

mod cache;
pub use cache::DerivativeCache;
use cache::{Derived, Plan};
use serde::Serialize;

use crate::coverage::{coverage_factor, dof_used, effective_dof_correlated};
use crate::model::{Correlation, Distribution, Dof, Evaluation, Measurand, Model};

/// Options of one evaluation.
#[derive(Clone, Debug)]
pub struct Options {
    /// Overrides the model's coverage probability.
    pub coverage_probability: Option<f64>,
    /// Add the higher-order terms of JCGM 100:2008, 5.1.2 (note).
    pub second_order: bool,
    /// Size limits (the derivative limit is used here).
    pub limits: crate::limits::Limits,
    /// Write the conformity statement in words (true by default; false
    /// leaves it empty, for evaluations of many items whose statements are
    /// not shown: every figure and verdict stays the same).
    pub statements: bool,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            coverage_probability: None,
            second_order: false,
            limits: crate::limits::Limits::default(),
            statements: true,
        }
    }
}

/// ∂e/∂w, refused before it is built when it would exceed the limit.
fn checked_derivative(
    e: &Expr,
    w: &str,
    max_nodes: u64,
    of: &str,
) -> Result<Expr, PropagationError> {
    let size = incertus_expr::derivative_size(e, w);
    if size > max_nodes as f64 {
        return Err(perr_of(
            PropagationErrorKind::Limit,
            format!(
                "the derivative of `{of}` with respect to `{w}` would have about {size:.3e} nodes; \
                 the limit is {max_nodes} (INCERTUS_MAX_DERIVATIVE_NODES). Writing a long product or \
                 power as intermediate measurands keeps derivatives small"
            ),
            None,
        ));
    }
    Ok(derivative(e, w))
}

/// A problem found while propagating.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{message}{}", detail.as_ref().map(|d| format!("\n{d}")).unwrap_or_default())]
pub struct PropagationError {
    /// What kind of problem.
    pub kind: PropagationErrorKind,
    /// What is wrong, for a person.
    pub message: String,
    /// More lines (a formula with a caret, a derivative).
    pub detail: Option<String>,
    /// The line of the model file where the measurand concerned is defined.
    pub line: Option<usize>,
}

/// The kinds of [`PropagationError`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum PropagationErrorKind {
    /// A formula or a derivative is not defined at the input estimates.
    Domain,
    /// A value or an uncertainty leaves the range of double precision.
    Range,
    /// A derivative would exceed the size limit.
    Limit,
    /// No coverage factor exists for the coverage probability asked.
    Coverage,
    /// The method does not apply to this model (higher-order terms with
    /// correlated inputs, or a model too far from linear for them).
    Method,
    /// A specification cannot be assessed with this result.
    Conformity,
}

impl PropagationError {
    fn kind(mut self, kind: PropagationErrorKind) -> Self {
        self.kind = kind;
        self
    }

    fn at(mut self, line: usize) -> Self {
        if self.line.is_none() && line > 0 {
            self.line = Some(line);
        }
        self
    }
}

fn perr_of(
    kind: PropagationErrorKind,
    message: impl Into<String>,
    detail: Option<String>,
) -> PropagationError {
    perr(message, detail).kind(kind)
}

fn perr(message: impl Into<String>, detail: Option<String>) -> PropagationError {
    PropagationError {
        kind: PropagationErrorKind::Domain,
        message: message.into(),
        detail,
        line: None,
    }
}

/// One line of an uncertainty budget.
#[derive(Clone, Debug, Serialize)]
pub struct BudgetLine {
    /// The input.
    pub input: String,
    /// Its estimate, in its own unit.
    pub value: f64,
    /// Its standard uncertainty, in its own unit.
    pub standard_uncertainty: f64,
    /// `None` = infinite.
    pub dof: Option<f64>,
    /// Its distribution (serialised by name: `normal`, `t`, `rectangular`, ...).
    pub distribution: Distribution,
    /// Type A, Type B, exact, constant or a fit parameter.
    pub evaluation: EvaluationKind,
    /// Number of observations of a Type A input.
    pub observations: Option<usize>,
    /// Its unit.
    pub unit: Option<String>,
    /// Its description.
    pub description: Option<String>,
    /// The sensitivity coefficient, in the units of the measurand per unit of the input.
    pub sensitivity: f64,
    /// The sensitivity coefficient as a formula.
    pub sensitivity_formula: String,
    /// |c_i| u(x_i), the contribution u_i(y) (JCGM 100:2008, 5.1.3).
    pub contribution: f64,
    /// (c_i u(x_i))² / u_c²(y).
    pub share: f64,
}

/// The term of a budget that comes from one correlated pair.
#[derive(Clone, Debug, Serialize)]
pub struct CorrelationLine {
    /// The two inputs.
    pub inputs: [String; 2],
    /// Their correlation coefficient.
    pub coefficient: f64,
    /// 2 c_a c_b r u(x_a) u(x_b), in the unit of u²(y).
    pub term: f64,
    /// Its share of u² (may be negative).
    pub share: f64,
    /// Whether the coefficient comes from data (observed together, a fit).
    pub from_observations: bool,
    /// The fit it comes from, if any.
    pub from_fit: Option<String>,
}

/// Which evaluation gives the reported result of a measurand.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// The law of propagation of uncertainty (JCGM 100:2008).
    FirstOrder,
    /// Propagation of distributions (JCGM 101:2008), reported because the
    /// first-order result was not validated (JCGM 101:2008, 8.2).
    MonteCarlo,
}

/// The result a report states as *the* result of a measurand: estimate,
/// standard uncertainty and coverage interval, with the method that gave
/// them and why. Every writer and the conformity decision read this one.
#[derive(Clone, Debug, Serialize)]
pub struct ReportedResult {
    /// Which method gives the reported result.
    pub method: Method,
    /// Why this method, in words.
    pub why: String,
    /// The estimate.
    pub value: f64,
    /// The standard uncertainty; `None` when it does not exist (a Monte
    /// Carlo result of inputs without a finite variance, such as t with
    /// ν ≤ 2: the coverage interval alone is the result).
    pub standard_uncertainty: Option<f64>,
    /// The coverage probability.
    pub coverage_probability: f64,
    /// y ± U (first order) or the probabilistically symmetric interval
    /// (Monte Carlo), in the measurand's unit.
    pub coverage_interval: [f64; 2],
    /// U (first order) or half the width of the interval (Monte Carlo).
    pub expanded_uncertainty: f64,
}

/// The result for one measurand.
#[derive(Clone, Debug, Serialize)]
pub struct MeasurandResult {
    /// The measurand.
    pub name: String,
    /// The unit it is reported in.
    pub unit: Option<String>,
    /// Its description.
    pub description: Option<String>,
    /// Its formula as written.
    pub formula: String,
    /// The estimate, in `unit`.
    pub value: f64,
    /// The combined standard uncertainty u_c (first order).
    pub standard_uncertainty: f64,
    /// u_c/|y|, when y ≠ 0.
    pub relative_standard_uncertainty: Option<f64>,
    /// `None` = infinite.
    pub effective_dof: Option<f64>,
    /// The dof used for the coverage factor (after the rounding rule).
    pub effective_dof_used: Option<f64>,
    /// The coverage probability p.
    pub coverage_probability: f64,
    /// The coverage factor k.
    pub coverage_factor: f64,
    /// The expanded uncertainty U = k u.
    pub expanded_uncertainty: f64,
    /// u with the higher-order terms, when asked for.
    pub second_order_standard_uncertainty: Option<f64>,
    /// One line per input the formula uses.
    pub budget: Vec<BudgetLine>,
    /// Σ of the correlation terms, in the unit of u²(y).
    pub correlation_terms: f64,
    /// One line per correlated pair of those inputs.
    pub correlation_budget: Vec<CorrelationLine>,
    /// Filled by propagation of distributions when it is run.
    pub monte_carlo: Option<crate::distributions::McMeasurand>,
    /// Conformity assessment (JCGM 106:2012) when the measurand has a
    /// specification.
    pub conformity: Option<crate::conformity::Conformity>,
    /// Reasons why the first-order result may be wrong (a point where the
    /// formula has no derivative, first-order terms that all vanish); every
    /// writer shows them beside the result.
    pub warnings: Vec<String>,
    /// The reported result: the first-order one unless propagation of
    /// distributions was run and did not validate it.
    pub reported: ReportedResult,
}

impl MeasurandResult {
    /// The density of the first-order state of knowledge at `x`: normal
    /// N(y, u) or, with a finite ν_eff used for k, Student's t scaled by u
    /// and centred on y (JCGM 100:2008, G.3; JCGM 101:2008, 6.4.9), with the
    /// u the expanded uncertainty was made from (U/k). For plots.
    pub fn first_order_density(&self, x: f64) -> f64 {
        use statrs::distribution::{Continuous, Normal, StudentsT};
        let u = if self.coverage_factor > 0.0 {
            self.expanded_uncertainty / self.coverage_factor
        } else {
            self.standard_uncertainty
        }
        .max(f64::MIN_POSITIVE);
        match self.effective_dof_used {
            Some(nu) => StudentsT::new(self.value, u, nu)
                .map(|d| d.pdf(x))
                .unwrap_or(0.0),
            None => Normal::new(self.value, u).map(|d| d.pdf(x)).unwrap_or(0.0),
        }
    }
}

/// A square matrix with names.
#[derive(Clone, Debug, Serialize)]
pub struct NamedMatrix {
    /// The row and column names.
    pub names: Vec<String>,
    /// The matrix.
    pub matrix: Vec<Vec<f64>>,
}

/// All results of a model.
#[derive(Clone, Debug, Serialize)]
pub struct Report {
    /// The model's title.
    pub title: Option<String>,
    /// The fits of the model.
    pub fits: Vec<crate::model::NamedFit>,
    /// One result per measurand, in dependency order.
    pub results: Vec<MeasurandResult>,
    /// Correlation of the measurands (JCGM 102:2011).
    pub correlation_matrix: NamedMatrix,
    /// Covariance of the measurands.
    pub covariance_matrix: NamedMatrix,
    /// Remarks on the evaluation as a whole.
    pub notes: Vec<String>,
    /// How ν_eff was rounded.
    pub effective_dof_rounding: crate::coverage::DofRounding,
}

/// Replace each name of an earlier measurand by its formula of the inputs.
pub fn substitute(e: &Expr, known: &[(String, Expr)]) -> Expr {
    match &e.kind {
        Kind::Var(n) => match known.iter().find(|(k, _)| k == n) {
            Some((_, f)) => f.clone(),
            None => e.clone(),
        },
        _ => {
            let mut out = e.clone();
            map_children(&mut out, &|c| substitute(c, known));
            out
        }
    }
}

fn map_children(e: &mut Expr, f: &dyn Fn(&Expr) -> Expr) {
    match &mut e.kind {
        Kind::Num(_) | Kind::Pi | Kind::Var(_) => {}
        Kind::Neg(a) => **a = f(a),
        Kind::Sum(ts) => ts.iter_mut().for_each(|t| t.expr = f(&t.expr)),
        Kind::Product(fs) => fs.iter_mut().for_each(|x| x.expr = f(&x.expr)),
        Kind::Pow(a, b) => {
            **a = f(a);
            **b = f(b);
        }
        Kind::Call(_, args) => args.iter_mut().for_each(|a| *a = f(a)),
    }
}

/// Each measurand as a formula of the inputs alone, in model order.
pub fn expanded_formulas(model: &Model) -> Vec<(String, Expr)> {
    let mut known: Vec<(String, Expr)> = Vec::new();
    for m in &model.measurands {
        let e = substitute(&m.formula, &known);
        known.push((m.name.clone(), e));
    }
    known
}

/// How an input of a budget line was evaluated (serialised "A", "B",
/// "exact", "constant", "fit").
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum EvaluationKind {
    /// Type A (JCGM 100:2008, 4.2).
    #[serde(rename = "A")]
    TypeA,
    /// Type B (JCGM 100:2008, 4.3).
    #[serde(rename = "B")]
    TypeB,
    #[serde(rename = "exact")]
    /// An exact value.
    Exact,
    #[serde(rename = "constant")]
    /// A tabulated constant.
    Constant,
    /// A parameter of a least-squares fit.
    #[serde(rename = "fit")]
    Fit,
}

impl std::fmt::Display for EvaluationKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            EvaluationKind::TypeA => "A",
            EvaluationKind::TypeB => "B",
            EvaluationKind::Exact => "exact",
            EvaluationKind::Constant => "constant",
            EvaluationKind::Fit => "fit",
        })
    }
}

fn label(model: &Model, i: usize) -> (EvaluationKind, Option<usize>) {
    let inp = &model.inputs[i];
    match inp.evaluation {
        Evaluation::TypeA { n, .. } => (EvaluationKind::TypeA, Some(n)),
        Evaluation::TypeB => (EvaluationKind::TypeB, None),
        Evaluation::Exact => (EvaluationKind::Exact, None),
        Evaluation::Constant { .. } => (EvaluationKind::Constant, None),
        Evaluation::Fit { .. } => (EvaluationKind::Fit, None),
    }
}

/// Blocks of inputs whose uncertainties share one estimated scale:
/// union-find over the correlations that come from observations taken
/// together or from one fit (see `coverage::effective_dof_correlated`).
/// Stated correlations do not join blocks.
fn groups(model: &Model) -> Vec<usize> {
    let n = model.inputs.len();
    let mut parent: Vec<usize> = (0..n).collect();
    fn find(p: &mut [usize], mut i: usize) -> usize {
        while p[i] != i {
            p[i] = p[p[i]];
            i = p[i];
        }
        i
    }
    for c in &model.correlations {
        if c.coefficient != 0.0 && (c.from_observations || c.from_fit.is_some()) {
            let (a, b) = (find(&mut parent, c.a), find(&mut parent, c.b));
            parent[a] = b;
        }
    }
    (0..n).map(|i| find(&mut parent, i)).collect()
}

/// Warnings for the points without a derivative (`expr::kinks`) that lie
/// within three standard uncertainties of a function's argument, though
/// not on it (that is `non_smooth_points`): the distribution of the result
/// reaches a kink, a jump or the edge of a domain, where the first-order
/// result may be poor (three standard uncertainties: about 99.7 % of a
/// normal distribution; common practice, no published source).
fn near_kinks(model: &Model, f: &Expr, env: &[(&str, f64)], name: &str) -> Vec<String> {
    let mut out = Vec::new();
    for k in incertus_expr::kinks(f) {
        let Ok(v) = k.argument.eval::<f64, _>(env) else {
            continue;
        };
        if let Some(x) = k.when_negative {
            if x.eval::<f64, _>(env).map_or(true, |x| x >= 0.0) {
                continue;
            }
        }
        let distance =
            k.at.iter()
                .map(|a| (v - a).abs())
                .fold(f64::INFINITY, f64::min);
        if distance == 0.0 || !distance.is_finite() {
            continue;
        }
        // u of the argument, first order, with the inputs' correlations.
        let idx: Vec<usize> = (0..model.inputs.len())
            .filter(|&i| model.inputs[i].standard_uncertainty > 0.0)
            .filter(|&i| k.argument.depends_on(&model.inputs[i].name))
            .collect();
        let c: Vec<f64> = idx
            .iter()
            .map(|&i| {
                derivative(k.argument, &model.inputs[i].name)
                    .eval::<f64, _>(env)
                    .unwrap_or(0.0)
                    * model.inputs[i].standard_uncertainty
            })
            .collect();
        let mut u2 = 0.0;
        for (a, &i) in idx.iter().enumerate() {
            for (b, &j) in idx.iter().enumerate() {
                u2 += c[a] * c[b] * model.correlation(i, j);
            }
        }
        let u = u2.max(0.0).sqrt();
        if u > 0.0 && distance <= 3.0 * u {
            out.push(format!(
                "`{}` in the formula of `{name}`: its argument {} lies within {} standard \
                 uncertainties (u = {}) of {}, where {} has no derivative, so the distribution of the \
                 result reaches that point and the first-order result may be poor; check it by \
                 propagation of distributions (JCGM 101:2008)",
                k.text,
                crate::rounding::significant_si(v, 6),
                crate::rounding::significant_si(distance / u, 2),
                crate::rounding::significant_si(u, 3),
                k.at.iter()
                    .map(|a| crate::rounding::significant_si(*a, 3))
                    .collect::<Vec<_>>()
                    .join(" or "),
                k.function
            ));
        }
    }
    out
}

/// Zero or subnormal.
fn tiny(v: f64) -> bool {
    v == 0.0 || v.abs() < f64::MIN_POSITIVE
}

fn underflow(measurand: &str, what: &str, part: &str) -> PropagationError {
    perr_of(
            PropagationErrorKind::Range,
        format!(
            "`{measurand}`: the value of {what} at the input estimates underflows: `{part}` lies below \
             the normal range of double precision (about 2.2e-308) and comes out as 0 or with lost \
             digits; express the model in units that keep its values well inside that range"
        ),
        None,
    )
}

/// Evaluate every measurand of the model.
pub fn propagate(model: &Model, opts: &Options) -> Result<Report, PropagationError> {
    propagate_cached(model, opts, &DerivativeCache::default())
}

/// [`propagate`] with the symbolic work kept in `cache`, for many
/// evaluations of models that differ only in their inputs' numbers (the
/// same formulas, inputs and measurands in the same order).
pub fn propagate_cached(
    model: &Model,
    opts: &Options,
    cache: &DerivativeCache,
) -> Result<Report, PropagationError> {
    let p = opts
        .coverage_probability
        .unwrap_or(model.coverage_probability);
    if let Err(m) = crate::coverage::check_coverage_probability(p) {
        return Err(perr_of(
            PropagationErrorKind::Coverage,
            format!("the coverage probability {m}"),
            None,
        ));
    }
    let cx = Context {
        model,
        opts,
        p,
        u: model
            .inputs
            .iter()
            .map(|i| i.standard_uncertainty)
            .collect(),
        env: model
            .inputs
            .iter()
            .map(|i| (i.name.as_str(), i.estimate))
            .collect(),
        group_of: groups(model),
        cache,
    };
    let values = cx.values()?;
    let expanded = cache.expanded.get_or_init(|| expanded_formulas(model));
    let mut notes: Vec<String> = Vec::new();
    let mut results = Vec::new();
    let mut sens_rows: Vec<Vec<f64>> = Vec::new();
    let mut grouped_note = false;
    // Inputs and measurands at their values, for the chain rule.
    let mut all_env = cx.env.clone();
    all_env.extend(
        model
            .measurands
            .iter()
            .zip(&values)
            .map(|(m, v)| (m.name.as_str(), *v)),
    );
    let mut row_of: HashMap<&str, usize> = HashMap::new();
    for (mi, m) in model.measurands.iter().enumerate() {
        let chain = Chain {
            env: &all_env,
            rows: &sens_rows,
            row_of: &row_of,
        };
        let first = cx.first_order(m, &expanded[mi].1, values[mi], &chain)?;
        row_of.insert(m.name.as_str(), mi);
        grouped_note |= first
            .corr_lines
            .iter()
            .any(|(cor, _)| model.inputs[cor.a].dof.is_some() || model.inputs[cor.b].dof.is_some());
        let result = cx
            .result(m, &expanded[mi].1, values[mi], &first, &mut notes)
            .map_err(|e| e.at(m.line))?;
        results.push(result);
        sens_rows.push(first.c);
    }
    if grouped_note {
        notes.push(
            "correlated inputs with finite degrees of freedom: ν_eff by Satterthwaite's two-moment match \
             carried through the correlation terms (inputs whose uncertainties share one estimate, as when \
             observed together or fitted together, count as one block with its dof; JCGM 100:2008, G.4.1 \
             when nothing is correlated)"
                .to_string(),
        );
    }
    let (correlation_matrix, covariance_matrix) = output_covariance(model, &results, &sens_rows);
    Ok(Report {
        title: model.title.clone(),
        fits: model.fits.clone(),
        results,
        correlation_matrix,
        covariance_matrix,
        notes,
        effective_dof_rounding: model.dof_rounding,
    })
}

/// What every measurand's evaluation shares.
struct Context<'a> {
    model: &'a Model,
    opts: &'a Options,
    p: f64,
    /// Standard uncertainties of the inputs (coherent SI).
    u: Vec<f64>,
    /// The inputs' estimates by name.
    env: Vec<(&'a str, f64)>,
    /// The block (shared estimate of u) of each input, for ν_eff.
    group_of: Vec<usize>,
    cache: &'a DerivativeCache,
}

/// Above this size (nodes) of a derivative of a formula written out,
/// measurands that use measurands are differentiated by the chain rule.
const CHAIN_RULE_FROM: f64 = 500.0;

/// What the chain rule needs: every input and measurand at its value, and
/// the sensitivity rows of the measurands done so far.
struct Chain<'e> {
    env: &'e [(&'e str, f64)],
    rows: &'e [Vec<f64>],
    row_of: &'e HashMap<&'e str, usize>,
}

/// The first-order result of one measurand before it is reported.
struct FirstOrder<'m> {
    /// Sensitivity coefficients (0 for inputs the formula does not use).
    c: Vec<f64>,
    formulas: Vec<String>,
    derivatives: Vec<Option<std::sync::Arc<Derived>>>,
    /// The inputs the formula uses.
    used: Vec<usize>,
    /// Largest |c_i u_i|, and the contributions divided by it.
    s: f64,
    w: Vec<f64>,
    corr_lines: Vec<(&'m Correlation, f64)>,
    corr_sum_scaled: f64,
    total_scaled: f64,
    uc: f64,
    warnings: Vec<String>,
}

impl<'a> Context<'a> {
    /// Values, in dependency order, each on its own formula (so that an
    /// error points into the text the user wrote).
    fn values(&self) -> Result<Vec<f64>, PropagationError> {
        let mut env = self.env.clone();
        let mut values = Vec::with_capacity(self.model.measurands.len());
        for m in &self.model.measurands {
            let v: f64 = m.formula.eval(env.as_slice()).map_err(|e| {
                perr(
                    format!(
                        "the formula of `{}` cannot be evaluated at the input estimates: {}",
                        m.name, e.message
                    ),
                    Some(incertus_expr::caret(&m.formula_text, e.span)),
                )
                .at(m.line)
            })?;
            env.push((m.name.as_str(), v));
            values.push(v);
        }
        Ok(values)
    }

    /// Warnings about points where the formula has no derivative.
    fn smoothness_warnings(&self, m: &Measurand, f: &Expr) -> Vec<String> {
        let mut warnings: Vec<String> = incertus_expr::non_smooth_points(f, self.env.as_slice())
            .into_iter()
            .map(|p| {
                format!(
                    "`{}` in the formula of `{}`: {}. The law of propagation needs a derivative \
                     (JCGM 100:2008, 5.1.2), so the first-order result does not hold here; use \
                     propagation of distributions (JCGM 101:2008)",
                    p.text, m.name, p.what
                )
            })
            .collect();
        warnings.extend(near_kinks(self.model, f, &self.env, &m.name));
        warnings
    }

    /// Sensitivity coefficients, scaled contributions and u_c of one
    /// measurand given by `f` (in terms of the inputs), with value `y`.
    fn first_order(
        &self,
        m: &Measurand,
        f: &Expr,
        y: f64,
        chain: &Chain,
    ) -> Result<FirstOrder<'a>, PropagationError> {
        let model = self.model;
        let n = model.inputs.len();
        if tiny(y) {
            if let Some(p) = incertus_expr::underflow_points(f, self.env.as_slice()).first() {
                return Err(underflow(&m.name, &m.name, &p.text).at(m.line));
            }
        }
        let warnings = self.smoothness_warnings(m, f);
        let mut c = vec![0.0; n];
        let mut formulas = vec![String::new(); n];
        let mut derivatives: Vec<Option<std::sync::Arc<Derived>>> = vec![None; n];
        let mut used = Vec::new();
        let plan = self.plan(m, f, chain)?;
        for i in 0..n {
            let name = &model.inputs[i].name;
            let d = match &plan[i] {
                Plan::NotUsed => continue,
                Plan::ChainRule => {
                    let (ci, text) = self.by_chain_rule(m, i, chain)?;
                    c[i] = ci;
                    formulas[i] = text;
                    used.push(i);
                    continue;
                }
                Plan::Direct(d) => d,
            };
            c[i] = d.expr.eval(self.env.as_slice()).map_err(|e| {
                perr(
                    format!(
                        "the sensitivity coefficient of `{name}` in `{}` is not defined at the input \
                         estimates: {}{}",
                        m.name,
                        e.message,
                        warnings
                            .first()
                            .map(|w| format!("\n{w}"))
                            .unwrap_or_default()
                    ),
                    Some(format!("∂{}/∂{name} = {}", m.name, d.text)),
                )
                .at(m.line)
            })?;
            formulas[i] = d.text.clone();
            derivatives[i] = Some(d.clone());
            used.push(i);
        }
        // Scaled contributions w_i = c_i u_i / s avoid under- and overflow
        // of squares and fourth powers (u near 1e-40 or 1e40).
        let u = &self.u;
        let s = used
            .iter()
            .map(|&i| (c[i] * u[i]).abs())
            .fold(0.0, f64::max);
        let w: Vec<f64> = (0..n)
            .map(|i| if s > 0.0 { c[i] * u[i] / s } else { 0.0 })
            .collect();
        let sum_sq: f64 = used.iter().map(|&i| w[i] * w[i]).sum();
        let mut corr_lines = Vec::new();
        let mut corr_sum_scaled = 0.0;
        if !model.correlations.is_empty() {
            let in_use: std::collections::HashSet<usize> = used.iter().copied().collect();
            for cor in &model.correlations {
                if in_use.contains(&cor.a) && in_use.contains(&cor.b) {
                    let t = 2.0 * w[cor.a] * w[cor.b] * cor.coefficient;
                    corr_sum_scaled += t;
                    corr_lines.push((cor, t));
                }
            }
        }
        let total_scaled = (sum_sq + corr_sum_scaled).max(0.0);
        let uc = s * total_scaled.sqrt();
        check_range(m, y, uc)?;
        Ok(FirstOrder {
            c,
            formulas,
            derivatives,
            used,
            s,
            w,
            corr_lines,
            corr_sum_scaled,
            total_scaled,
            uc,
            warnings,
        })
    }

    /// ∂y/∂x_i by the chain rule: Σ_w ∂f/∂w · ∂w/∂x_i over the names w of
    /// the measurand's own formula (∂x_i/∂x_i = 1, a measurand's row from
    /// its own evaluation), and the sum written out as text.
    fn by_chain_rule(
        &self,
        m: &Measurand,
        i: usize,
        chain: &Chain,
    ) -> Result<(f64, String), PropagationError> {
        let input = self.model.inputs[i].name.as_str();
        let (mut total, mut terms) = (0.0, Vec::new());
        for w in m.formula.names() {
            let through = if w == input {
                1.0
            } else if let Some(&k) = chain.row_of.get(w.as_str()) {
                chain.rows[k][i]
            } else {
                continue;
            };
            if through == 0.0 {
                continue;
            }
            let d = self.own_derivative(m, &w)?;
            let dw = d.expr.eval(chain.env).map_err(|e| {
                perr(
                    format!(
                        "the sensitivity coefficient of `{w}` in `{}` is not defined at the input \
                         estimates: {}",
                        m.name, e.message
                    ),
                    Some(format!("∂{}/∂{w} = {}", m.name, d.text)),
                )
                .at(m.line)
            })?;
            total += dw * through;
            terms.push(if w == input {
                format!("({})", d.text)
            } else {
                format!("({})*∂{w}/∂{input}", d.text)
            });
        }
        Ok((total, terms.join(" + ")))
    }

    /// ν_eff: Welch-Satterthwaite generalised to correlated inputs by
    /// Satterthwaite's two moments (coverage::effective_dof_correlated; G.4.1
    /// when nothing is correlated); with u from higher-order terms alone, the
    /// least dof of the uncertain inputs.
    fn effective_dof(
        &self,
        m: &Measurand,
        first: &FirstOrder,
        second: Option<f64>,
        notes: &mut Vec<String>,
    ) -> Dof {
        let model = self.model;
        let used = &first.used;
        if first.uc > 0.0 {
            let block: Vec<usize> = used.iter().map(|&i| self.group_of[i]).collect();
            let block_dof: Vec<Dof> = used.iter().map(|&i| model.inputs[i].dof).collect();
            let wu: Vec<f64> = used.iter().map(|&i| first.w[i]).collect();
            // Correlated pairs as indices into `used`.
            let position: std::collections::HashMap<usize, usize> =
                used.iter().enumerate().map(|(k, &i)| (i, k)).collect();
            let pairs: Vec<(usize, usize, f64)> = model
                .correlations
                .iter()
                .filter_map(|c| Some((*position.get(&c.a)?, *position.get(&c.b)?, c.coefficient)))
                .collect();
            return effective_dof_correlated(&wu, &pairs, &block, &block_dof);
        }
        if !second.is_some_and(|v| v > 0.0) {
            return None;
        }
        // No Welch-Satterthwaite weights exist; the least dof of the
        // uncertain inputs is the conservative choice (common practice, no
        // published source).
        let least = used
            .iter()
            .filter(|&&i| self.u[i] > 0.0)
            .filter_map(|&i| model.inputs[i].dof)
            .fold(None, |m: Option<f64>, d| Some(m.map_or(d, |m| m.min(d))));
        if least.is_some() {
            notes.push(format!(
                "`{}`: u comes from the higher-order terms alone, so ν_eff is taken as the least dof \
                 of its inputs",
                m.name
            ));
        }
        least
    }

    /// Second-order terms (JCGM 100:2008, 5.1.2 note, eq. 10 extended) when
    /// asked for, with a note when inputs are not normal.
    fn second_order(
        &self,
        m: &Measurand,
        f: &Expr,
        first: &FirstOrder,
        notes: &mut Vec<String>,
    ) -> Result<Option<f64>, PropagationError> {
        if !self.opts.second_order {
            return Ok(None);
        }
        let model = self.model;
        if first.used.iter().any(|&i| {
            !matches!(
                model.inputs[i].distribution,
                Distribution::Normal | Distribution::StudentT | Distribution::Exact
            )
        }) {
            notes.push(format!(
                "`{}`: the higher-order terms of JCGM 100:2008, 5.1.2 assume normal inputs; some inputs \
                 here are not normal, so propagation of distributions is the better check",
                m.name
            ));
        }
        second_order(
            model,
            m.name.as_str(),
            f,
            &first.used,
            &self.u,
            first.uc,
            &self.env,
            self.opts.limits.max_derivative_nodes,
        )
        .map(Some)
    }

    /// The warning for a zero u with uncertain inputs: the inputs whose
    /// derivative is not zero everywhere (one that simplifies to 0, as in
    /// `q - x*y` with q = x*y, means the input does not really enter).
    fn flat_warning(&self, m: &Measurand, first: &FirstOrder) -> Option<String> {
        let uncertain: Vec<&str> = first
            .used
            .iter()
            .filter(|&&i| self.u[i] > 0.0)
            .filter(|&&i| first.derivatives[i].as_ref().is_some_and(|d| !d.is_zero()))
            .map(|&i| self.model.inputs[i].name.as_str())
            .collect();
        if uncertain.is_empty() {
            return None;
        }
        Some(format!(
            "the first-order standard uncertainty of `{}` is 0 although uncertain inputs enter \
             its formula ({}): every sensitivity coefficient vanishes at the estimates, so the \
             result is flat to first order there, not certain (JCGM 100:2008, 5.1.2, note). {}",
            m.name,
            uncertain.join(", "),
            if self.opts.second_order {
                "The higher-order terms vanish too; use propagation of distributions"
            } else {
                "Include the higher-order terms or use propagation of distributions"
            }
        ))
    }

    /// The reported result of one measurand from its first-order parts.
    fn result(
        &self,
        m: &Measurand,
        f: &Expr,
        y: f64,
        first: &FirstOrder,
        notes: &mut Vec<String>,
    ) -> Result<MeasurandResult, PropagationError> {
        let second = self.second_order(m, f, first, notes)?;
        let nu_eff = self.effective_dof(m, first, second, notes);
        let nu_used = dof_used(nu_eff, self.model.dof_rounding);
        if let Some(v) = nu_eff.filter(|v| *v < 1.0) {
            notes.push(format!(
                "`{}`: the effective degrees of freedom ({v:.3}) are below 1; 1 is used for the coverage factor",
                m.name,
            ));
        }
        let p = self.p;
        let k = coverage_factor(p, nu_used);
        if !k.is_finite() {
            return Err(perr_of(
            PropagationErrorKind::Coverage,
                format!(
                    "`{}`: no finite coverage factor exists for p = {p} with {} degrees of freedom; \
                     choose a smaller coverage probability",
                    m.name,
                    nu_used.map_or("infinite".to_string(), |v| v.to_string())
                ),
                None,
            ));
        }
        let u_for_expanded = second.unwrap_or(first.uc);
        let mut warnings = first.warnings.clone();
        if u_for_expanded == 0.0 {
            warnings.extend(self.flat_warning(m, first));
        }
        let f_out = m.unit_factor();
        let y_shown = m.shown_value(y);
        let (budget, correlation_budget) = self.budget(first, f_out);
        let big_u = k * u_for_expanded / f_out;
        let mut result = MeasurandResult {
            name: m.name.clone(),
            unit: m.unit.clone(),
            description: m.description.clone(),
            formula: m.formula_text.clone(),
            value: y_shown,
            standard_uncertainty: first.uc / f_out,
            relative_standard_uncertainty: (y_shown != 0.0)
                .then(|| first.uc / f_out / y_shown.abs()),
            effective_dof: nu_eff,
            effective_dof_used: nu_used,
            coverage_probability: p,
            coverage_factor: k,
            expanded_uncertainty: big_u,
            second_order_standard_uncertainty: second.map(|v| v / f_out),
            budget,
            correlation_terms: first.corr_sum_scaled * first.s * first.s / (f_out * f_out),
            correlation_budget,
            monte_carlo: None,
            conformity: None,
            warnings,
            reported: ReportedResult {
                method: Method::FirstOrder,
                why: "the law of propagation of uncertainty (JCGM 100:2008)".into(),
                value: y_shown,
                standard_uncertainty: Some(u_for_expanded / f_out),
                coverage_probability: p,
                coverage_interval: [y_shown - big_u, y_shown + big_u],
                expanded_uncertainty: big_u,
            },
        };
        if let Some(spec) = &m.specification {
            assess_conformity(
                &mut result,
                spec,
                p,
                m.unit.as_deref(),
                self.opts.statements,
            )?;
        }
        Ok(result)
    }

    /// The budget lines and correlation lines, in the inputs' and the
    /// measurand's own units: a coefficient becomes c·f_in/f_out, a
    /// contribution |c| u / f_out.
    fn budget(&self, first: &FirstOrder, f_out: f64) -> (Vec<BudgetLine>, Vec<CorrelationLine>) {
        let model = self.model;
        let share = |t: f64| {
            if first.total_scaled > 0.0 {
                t / first.total_scaled
            } else {
                0.0
            }
        };
        let budget = first
            .used
            .iter()
            .map(|&i| {
                let inp = &model.inputs[i];
                let (evaluation, observations) = label(model, i);
                let f_in = inp.unit_factor();
                BudgetLine {
                    input: inp.name.clone(),
                    value: inp.shown().0,
                    standard_uncertainty: self.u[i] / f_in,
                    dof: inp.dof,
                    distribution: inp.distribution.clone(),
                    evaluation,
                    observations,
                    unit: inp.unit.clone(),
                    description: inp.description.clone(),
                    sensitivity: first.c[i] * f_in / f_out,
                    sensitivity_formula: first.formulas[i].clone(),
                    contribution: (first.c[i] * self.u[i]).abs() / f_out,
                    share: share(first.w[i] * first.w[i]),
                }
            })
            .collect();
        let s = first.s;
        let lines = first
            .corr_lines
            .iter()
            .map(|(cor, t)| CorrelationLine {
                inputs: [
                    model.inputs[cor.a].name.clone(),
                    model.inputs[cor.b].name.clone(),
                ],
                coefficient: cor.coefficient,
                term: t * s * s / (f_out * f_out),
                share: share(*t),
                from_observations: cor.from_observations,
                from_fit: cor.from_fit.clone(),
            })
            .collect();
        (budget, lines)
    }
}

mod parts;
use parts::*;
