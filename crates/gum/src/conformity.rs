//! Conformity assessment with decision rules (JCGM 106:2012): is the item
//! within its tolerance interval, how probable is that, and what does the
//! decision risk?
//!
//! - The **conformance probability** p_c (JCGM 106:2012, clause 7) from the
//!   first-order result: the measurand is taken as normal N(y, u_c), or as
//!   Student's t with ν_eff degrees of freedom scaled by u_c and shifted to
//!   y when ν_eff is finite (the distribution behind y ± t_p(ν_eff) u_c,
//!   JCGM 100:2008, G.6 and JCGM 101:2008, 6.4.9). From Monte Carlo trials,
//!   p_c is the fraction of trials inside the tolerance interval.
//! - **Acceptance intervals** (clause 8): simple acceptance (the acceptance
//!   interval is the tolerance interval), guarded acceptance (shrunk by a
//!   guard band w on each side) and guarded rejection (widened by w). The
//!   guard band is a multiple of the expanded uncertainty, w = r U, or is
//!   derived from a largest specific risk: the acceptance limit is the
//!   measured value at which the specific risk equals the target.
//! - **Specific risks** for this item: if accepted, the specific consumer's
//!   risk 1 − p_c (the accepted item does not conform); if rejected, the
//!   specific producer's risk p_c (the rejected item conforms).
//! - **Global risks** (clause 9) when the user gives the distribution of the
//!   true values of the production process as N(y₀, u₀): the joint
//!   probabilities R_C = Pr(η outside the tolerance, measured value
//!   accepted) and R_P = Pr(η inside, measured value rejected), with the
//!   measuring system's error normal with standard deviation u_c. Each is a
//!   one-dimensional integral of the prior density times a difference of
//!   normal distribution functions, computed by adaptive Gauss-Kronrod
//!   quadrature with the limits as break points.
//!
//! Left out: asymmetric or non-normal process distributions, decision
//! rules on several measurands at once, and the cost models of JCGM 106
//! Annex; the laboratory's quality system chooses the rule and the risk.

use serde::Serialize;

/// How the acceptance interval is placed against the tolerance interval
/// (JCGM 106:2012, clause 8).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum Rule {
    /// The acceptance interval is the tolerance interval.
    #[serde(rename = "simple acceptance")]
    SimpleAcceptance,
    /// The acceptance interval is the tolerance interval shrunk by w.
    #[serde(rename = "guarded acceptance")]
    GuardedAcceptance,
    /// The acceptance interval is the tolerance interval widened by w.
    #[serde(rename = "guarded rejection")]
    GuardedRejection,
}

impl std::fmt::Display for Rule {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// The outcome of a decision rule.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    /// The result is accepted by the decision rule.
    Accepted,
    /// The result is rejected by the decision rule.
    Rejected,
}

impl Verdict {
    fn of(accepted: bool) -> Verdict {
        if accepted {
            Verdict::Accepted
        } else {
            Verdict::Rejected
        }
    }

    /// Whether the item is accepted.
    pub fn accepted(self) -> bool {
        self == Verdict::Accepted
    }

    /// The risk that goes with this verdict: the consumer's for an
    /// accepted item, the producer's for a rejected one.
    pub fn risk_kind(self) -> RiskKind {
        match self {
            Verdict::Accepted => RiskKind::Consumer,
            Verdict::Rejected => RiskKind::Producer,
        }
    }
}

impl Verdict {
    /// "accepted" or "rejected".
    pub fn name(&self) -> &'static str {
        match self {
            Verdict::Accepted => "accepted",
            Verdict::Rejected => "rejected",
        }
    }
}

impl std::fmt::Display for Verdict {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Whose specific risk (JCGM 106:2012, 9.3): the consumer's (an accepted
/// item that does not conform) or the producer's (a rejected item that does).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum RiskKind {
    #[serde(rename = "consumer's")]
    /// The risk of accepting a nonconforming item.
    Consumer,
    #[serde(rename = "producer's")]
    /// The risk of rejecting a conforming item.
    Producer,
}

impl RiskKind {
    /// "consumer's" or "producer's".
    pub fn name(&self) -> &'static str {
        match self {
            RiskKind::Consumer => "consumer's",
            RiskKind::Producer => "producer's",
        }
    }
}

impl std::fmt::Display for RiskKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

impl Rule {
    /// The name in reports.
    pub fn name(&self) -> &'static str {
        match self {
            Rule::SimpleAcceptance => "simple acceptance",
            Rule::GuardedAcceptance => "guarded acceptance",
            Rule::GuardedRejection => "guarded rejection",
        }
    }
}

/// How the guard band w is set.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Guard {
    /// No guard band (simple acceptance).
    None,
    /// w = r U, U the expanded uncertainty of the result.
    MultipleOfU(f64),
    /// w such that the specific risk at the acceptance limit equals this
    /// target: the consumer's risk for guarded acceptance, the producer's
    /// for guarded rejection.
    SpecificRisk(f64),
}

/// The distribution of the true values of the production process, N(mean, sd).
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Process {
    /// Mean of the process.
    pub mean: f64,
    /// Standard deviation of the process.
    pub standard_deviation: f64,
}

/// The tolerance interval and decision rule of one measurand, in the
/// measurand's unit.
#[derive(Clone, Debug, PartialEq)]
pub struct Specification {
    /// Lower tolerance limit (`None`: no lower limit).
    pub lower: Option<f64>,
    /// Upper tolerance limit (`None`: no upper limit).
    pub upper: Option<f64>,
    /// The decision rule.
    pub rule: Rule,
    /// The guard band.
    pub guard: Guard,
    /// The distribution of the process, for the global risks.
    pub process: Option<Process>,
}

/// The first-order state of knowledge of the measurand: normal (dof
/// `None`) or scaled and shifted Student's t.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Belief {
    /// The estimate.
    pub value: f64,
    /// Its standard uncertainty.
    pub standard_uncertainty: f64,
    /// Degrees of freedom (`None`: normal).
    pub dof: Option<f64>,
}

pub use crate::coverage::normal_cdf;

fn std_cdf(z: f64, dof: Option<f64>) -> f64 {
    match dof {
        Some(nu) => crate::coverage::student_t_cdf(z, nu),
        None => normal_cdf(z),
    }
}

/// Pr(Z ≤ z) for z ≤ 0 and Pr(Z ≥ −z) alike: the smaller tail, accurately.
fn std_tail(z: f64, dof: Option<f64>) -> f64 {
    std_cdf(-z.abs(), dof)
}

impl Belief {
    fn z(&self, x: f64) -> f64 {
        (x - self.value) / self.standard_uncertainty
    }

    /// Pr(Y < lo or Y > hi), accurate when small (`None` = no limit).
    pub fn probability_outside(&self, lo: Option<f64>, hi: Option<f64>) -> f64 {
        let lo = lo.unwrap_or(f64::NEG_INFINITY);
        let hi = hi.unwrap_or(f64::INFINITY);
        if hi < lo {
            return 1.0;
        }
        if self.standard_uncertainty == 0.0 {
            return if lo <= self.value && self.value <= hi {
                0.0
            } else {
                1.0
            };
        }
        let (zl, zh) = (self.z(lo), self.z(hi));
        if zl < 0.0 && zh > 0.0 {
            std_tail(zl, self.dof) + std_tail(zh, self.dof)
        } else {
            1.0 - self.probability_inside(Some(lo), Some(hi))
        }
    }

    /// Pr(lo ≤ Y ≤ hi), accurate when small (`None` = no limit).
    pub fn probability_inside(&self, lo: Option<f64>, hi: Option<f64>) -> f64 {
        let lo = lo.unwrap_or(f64::NEG_INFINITY);
        let hi = hi.unwrap_or(f64::INFINITY);
        if hi < lo {
            return 0.0;
        }
        if self.standard_uncertainty == 0.0 {
            return if lo <= self.value && self.value <= hi {
                1.0
            } else {
                0.0
            };
        }
        let (zl, zh) = (self.z(lo), self.z(hi));
        if zl >= 0.0 {
            // Both limits above the value: a difference of upper tails.
            (std_tail(zl, self.dof) - std_tail(zh, self.dof)).max(0.0)
        } else if zh <= 0.0 {
            (std_tail(zh, self.dof) - std_tail(zl, self.dof)).max(0.0)
        } else {
            (1.0 - std_tail(zl, self.dof) - std_tail(zh, self.dof)).max(0.0)
        }
    }
}

/// The global risks of JCGM 106:2012, clause 9.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GlobalRisks {
    /// The process distribution they assume.
    pub process: Process,
    /// The measuring system's standard uncertainty used (u_c of the result).
    pub measurement_standard_uncertainty: f64,
    /// Pr(η outside the tolerance interval) under the process distribution.
    pub nonconforming_fraction: f64,
    /// Pr(η outside the tolerance interval and the item accepted).
    pub consumer_risk: f64,
    /// Pr(η inside the tolerance interval and the item rejected).
    pub producer_risk: f64,
}

/// The Monte Carlo side of the assessment.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct McConformance {
    /// The number of trials.
    pub trials: usize,
    /// Trials with a value inside the tolerance interval (limits included).
    pub inside: usize,
    /// The fraction of trials inside the tolerance interval.
    pub conformance_probability: f64,
    /// √(p(1 − p)/M): the standard uncertainty of that fraction.
    pub standard_uncertainty: f64,
    /// 1 − p_c if the item is accepted, p_c if rejected.
    pub specific_risk: f64,
    /// For a rule set by a largest specific risk: whether the Monte Carlo
    /// risk leads to the same verdict as the first-order one.
    pub same_verdict: Option<bool>,
    /// When no trial fell on the side of risk: the one-sided 95 % upper
    /// bound of the risk ([`zero_count_bound`]).
    pub specific_risk_upper_bound: Option<f64>,
}

/// The one-sided 95 % upper confidence bound of a probability of which 0
/// of `trials` independent trials showed an instance: 1 − 0.05^(1/N), the
/// exact binomial (Clopper-Pearson, 1934) bound for a count of zero, about
/// 3/N for large N ("rule of three"; both recalled from memory and checked
/// in `crates/gum/tests/conformity.rs` against the binomial probability
/// (1 − b)^N = 0.05 it solves).
///
/// ```
/// use incertus_gum::conformity::zero_count_bound;
/// let b = zero_count_bound(20_000);
/// assert!((b * 20_000.0 - 2.9957).abs() < 1e-3);
/// ```
pub fn zero_count_bound(trials: usize) -> f64 {
    if trials == 0 {
        return 1.0;
    }
    -(0.05f64.ln() / trials as f64).exp_m1()
}

/// A probability that is the fraction `count/trials` of Monte Carlo
/// trials, in words: the fraction, or, when the count is 0 or all of the
/// trials, the one-sided 95 % bound that the count supports (never a
/// figure finer than the trials can show).
///
/// ```
/// use incertus_gum::conformity::counted_probability;
/// assert!(counted_probability(0, 20_000).starts_with("below 0.01498 %"));
/// assert!(counted_probability(20_000, 20_000).starts_with("above 99.98"));
/// assert_eq!(counted_probability(5_000, 20_000), "25 %");
/// ```
pub fn counted_probability(count: usize, trials: usize) -> String {
    if trials == 0 {
        return "not available".into();
    }
    let b = zero_count_bound(trials);
    let rule = "one-sided 95 % upper bound 1 − 0.05^(1/N) of a count of zero, about 3/N";
    if count == 0 {
        format!("below {} (none of {trials} trials; {rule})", percent(b))
    } else if count >= trials {
        format!(
            "above {} (all of {trials} trials; {rule})",
            probability(1.0 - b)
        )
    } else {
        probability(count as f64 / trials as f64)
    }
}

impl McConformance {
    /// p_c in words ([`counted_probability`]).
    pub fn conformance_text(&self) -> String {
        counted_probability(self.inside, self.trials)
    }

    /// The specific risk in words for a decision that accepted the item
    /// (`accepted`) or rejected it.
    pub fn risk_text(&self, accepted: bool) -> String {
        let count = if accepted {
            self.trials - self.inside.min(self.trials)
        } else {
            self.inside
        };
        counted_probability(count, self.trials)
    }

    fn risk_bound(&self, accepted: bool) -> Option<f64> {
        let count = if accepted {
            self.trials - self.inside.min(self.trials)
        } else {
            self.inside
        };
        (count == 0 && self.trials > 0).then(|| zero_count_bound(self.trials))
    }
}

impl Conformity {
    /// The conformance probability in words: counted from the trials when
    /// the decision was made on them.
    pub fn conformance_text(&self) -> String {
        match (&self.monte_carlo, self.decided_on_trials) {
            (Some(m), true) => m.conformance_text(),
            _ => probability(self.conformance_probability),
        }
    }

    /// The specific risk in words: counted from the trials when the
    /// decision was made on them.
    pub fn risk_text(&self) -> String {
        match (&self.monte_carlo, self.decided_on_trials) {
            (Some(m), true) => m.risk_text(self.verdict.accepted()),
            _ => probability(self.specific_risk),
        }
    }
}

impl McConformance {
    /// From a count of trials inside the tolerance interval.
    pub fn from_count(inside: usize, trials: usize) -> McConformance {
        let p = if trials == 0 {
            f64::NAN
        } else {
            inside as f64 / trials as f64
        };
        McConformance {
            trials,
            inside,
            conformance_probability: p,
            standard_uncertainty: (p * (1.0 - p) / trials as f64).sqrt(),
            specific_risk: f64::NAN,
            same_verdict: None,
            specific_risk_upper_bound: None,
        }
    }
}

/// The assessment of one measurand (the `conformity` object of the JSON
/// report). Limits and intervals are in the measurand's unit; `None` is an
/// absent (infinite) limit.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Conformity {
    /// Lower acceptance limit.
    pub lower_limit: Option<f64>,
    /// Upper acceptance limit.
    pub upper_limit: Option<f64>,
    /// The decision rule (serialised "simple acceptance", "guarded
    /// acceptance" or "guarded rejection").
    pub rule: Rule,
    /// How the guard band was set, in words.
    pub guard_band_rule: String,
    /// w (0 for simple acceptance; `None` when no guard band gives the
    /// target risk, so that nothing can be accepted).
    pub guard_band: Option<f64>,
    /// The acceptance interval; `None` when no measured value is accepted.
    pub acceptance_interval: Option<[Option<f64>; 2]>,
    /// The first-order distribution used, in words.
    pub distribution: String,
    /// The probability that the true value lies within the tolerance limits.
    pub conformance_probability: f64,
    /// Accepted or rejected (serialised "accepted", "rejected").
    pub verdict: Verdict,
    /// Consumer's (accepted item) or producer's (rejected item).
    pub specific_risk_kind: RiskKind,
    /// The specific risk of the decision (consumer's when accepted, producer's when rejected).
    pub specific_risk: f64,
    /// C_m = (T_U − T_L)/(4 u_c) when both limits are given (JCGM 106:2012, 7.5).
    pub measurement_capability_index: Option<f64>,
    /// The global risks, when a process distribution is given.
    pub global_risks: Option<GlobalRisks>,
    /// The conformance probability counted from the Monte Carlo trials.
    pub monte_carlo: Option<McConformance>,
    /// Whether p_c and the specific risk above are fractions of the Monte
    /// Carlo trials (the decision made on propagation of distributions).
    pub decided_on_trials: bool,
    /// When the specific risk is a count of trials and none of them fell
    /// on the side of risk: the one-sided 95 % upper bound of the risk
    /// ([`zero_count_bound`]); the counted 0 means only "below this".
    pub specific_risk_upper_bound: Option<f64>,
    /// The decision rule and the result in words a certificate can quote.
    pub statement: String,
    /// Remarks on the assessment.
    pub notes: Vec<String>,
}

/// A problem with a specification that only shows with the result.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct ConformityError(pub String);

/// Assess one result against its specification. `expanded_uncertainty`
/// and `coverage_factor` are those of the report (w = r U uses them).
pub fn assess(
    spec: &Specification,
    belief: Belief,
    expanded_uncertainty: f64,
    coverage_factor: f64,
    coverage_probability: f64,
    unit: Option<&str>,
) -> Result<Conformity, ConformityError> {
    let mut c = assess_figures(
        spec,
        belief,
        expanded_uncertainty,
        coverage_factor,
        coverage_probability,
        unit,
    )?;
    c.statement = statement(&c, belief, expanded_uncertainty, unit);
    Ok(c)
}

/// [`assess`] without the statement in words (left empty): every figure
/// and the verdict, for evaluations whose statements are not shown.
pub fn assess_figures(
    spec: &Specification,
    belief: Belief,
    expanded_uncertainty: f64,
    coverage_factor: f64,
    coverage_probability: f64,
    unit: Option<&str>,
) -> Result<Conformity, ConformityError> {
    let (lo, hi) = (spec.lower, spec.upper);
    if !belief.value.is_finite() || !belief.standard_uncertainty.is_finite() {
        return Err(ConformityError(
            "the result is not finite, so conformity cannot be assessed".into(),
        ));
    }
    let u = belief.standard_uncertainty;
    let pc = belief.probability_inside(lo, hi);
    let mut notes = Vec::new();

    // The guard band w and the acceptance interval.
    let (w, guard_text) = match (spec.rule, spec.guard) {
        (Rule::SimpleAcceptance, _) | (_, Guard::None) => (0.0, "no guard band".to_string()),
        (_, Guard::MultipleOfU(r)) => (
            r * expanded_uncertainty,
            format!(
                "guard band w = {} × U, U = {}{} (k = {:.2}, p = {})",
                crate::rounding::significant_si(r, 4),
                crate::rounding::significant_si(expanded_uncertainty, 2),
                unit.map(|u| format!(" {u}")).unwrap_or_default(),
                coverage_factor,
                percent(coverage_probability)
            ),
        ),
        (rule, Guard::SpecificRisk(alpha)) => {
            let w = risk_guard_band(rule, alpha, belief, lo, hi);
            let who = if rule == Rule::GuardedAcceptance {
                "consumer's"
            } else {
                "producer's"
            };
            (
                w.unwrap_or(f64::NAN),
                format!(
                    "guard band set so that the specific {who} risk at the acceptance limits is {}",
                    percent(alpha)
                ),
            )
        }
    };
    let sign = match spec.rule {
        Rule::SimpleAcceptance => 0.0,
        Rule::GuardedAcceptance => 1.0,
        Rule::GuardedRejection => -1.0,
    };
    let acceptance = if w.is_nan() {
        None
    } else {
        let al = lo.map(|l| l + sign * w);
        let ah = hi.map(|h| h - sign * w);
        match (al, ah) {
            (Some(a), Some(b)) if a > b => None,
            (a, b) => Some([a, b]),
        }
    };
    let accepted = match acceptance {
        None => false,
        Some([a, b]) => a.is_none_or(|a| belief.value >= a) && b.is_none_or(|b| belief.value <= b),
    };
    if acceptance.is_none() {
        notes.push(
            "no measured value can be accepted under this rule: the uncertainty is too large \
             for the tolerance interval (reduce the uncertainty or review the rule)"
                .to_string(),
        );
    }
    let risk = if accepted {
        belief.probability_outside(lo, hi)
    } else {
        pc
    };
    let cm = match (lo, hi) {
        (Some(l), Some(h)) if u > 0.0 => Some((h - l) / (4.0 * u)),
        _ => None,
    };
    let distribution = match belief.dof {
        None => "normal, N(y, u_c)".to_string(),
        Some(nu) => format!(
            "Student's t with {} dof (the ν_eff used for k), scaled by u_c and centred on y",
            crate::rounding::significant_si(nu, 3)
        ),
    };
    if belief.dof.is_some() {
        notes.push(
            "finite effective degrees of freedom: the conformance probability uses Student's t, \
             which has heavier tails than the normal distribution"
                .to_string(),
        );
    }
    let global_risks = spec.process.map(|p| global_risks(p, u, lo, hi, acceptance));
    if global_risks.is_some() && belief.dof.is_some() {
        notes.push(
            "global risks take the measuring system's error as normal with standard deviation u_c \
             (JCGM 106:2012, clause 9)"
                .to_string(),
        );
    }
    let c = Conformity {
        lower_limit: lo,
        upper_limit: hi,
        rule: spec.rule,
        guard_band_rule: guard_text,
        guard_band: (!w.is_nan()).then_some(w),
        acceptance_interval: acceptance,
        distribution,
        conformance_probability: pc,
        verdict: Verdict::of(accepted),
        specific_risk_kind: Verdict::of(accepted).risk_kind(),
        specific_risk: risk,
        measurement_capability_index: cm,
        global_risks,
        monte_carlo: None,
        decided_on_trials: false,
        specific_risk_upper_bound: None,
        statement: String::new(),
        notes,
    };
    Ok(c)
}

/// Merge the Monte Carlo count into an assessment.
pub fn add_monte_carlo(c: &mut Conformity, spec: &Specification, mut mc: McConformance) {
    let accepted = c.verdict.accepted();
    let p = mc.conformance_probability;
    mc.specific_risk = if accepted { 1.0 - p } else { p };
    mc.specific_risk_upper_bound = mc.risk_bound(accepted);
    if disagrees(c.conformance_probability, &mc) {
        let text = format!(
            "the Monte Carlo conformance probability {} (standard uncertainty {}) differs from the \
             first-order {} by more than three standard uncertainties: the first-order distribution \
             does not describe the measurand well here, and the first-order p_c and risks should not \
             be relied on",
            mc.conformance_text(),
            probability(mc.standard_uncertainty),
            probability(c.conformance_probability)
        );
        c.notes.push(text);
        c.statement.push_str(&format!(
            " Propagation of distributions (JCGM 101:2008) gives a conformance probability of {}, \
             which disagrees with this first-order figure; review before use.",
            mc.conformance_text()
        ));
    }
    if let Guard::SpecificRisk(alpha) = spec.guard {
        let mc_accepts = match spec.rule {
            Rule::GuardedAcceptance => 1.0 - p <= alpha,
            Rule::GuardedRejection => p > alpha,
            Rule::SimpleAcceptance => accepted,
        };
        mc.same_verdict = Some(mc_accepts == accepted);
        if mc_accepts != accepted {
            c.notes.push(format!(
                "the Monte Carlo conformance probability {} would lead to the other verdict under this rule; \
                 the first-order distribution may not describe the measurand well (compare the validation)",
                mc.conformance_text()
            ));
        }
    }
    c.monte_carlo = Some(mc);
}

/// Whether a Monte Carlo p_c differs from the first-order one by more than
/// three standard uncertainties of the count (the binomial √(p(1 − p)/M),
/// at least 1/M so that a count of all or none is not taken as exact).
fn disagrees(first_order: f64, mc: &McConformance) -> bool {
    let m = mc.trials.max(1) as f64;
    let u = mc.standard_uncertainty.max(1.0 / m);
    (mc.conformance_probability - first_order).abs() > 3.0 * u
}

/// Conformity decided on the Monte Carlo result, for when it is the
/// reported result (the first-order one not validated, JCGM 101:2008,
/// 8.2): the measured value is the mean of the trials, U half the width of
/// the coverage interval (w = r U uses it), p_c the fraction of trials in
/// the tolerance interval, and a rule set by a largest specific risk
/// decides on that p_c.
pub fn decide_on_monte_carlo(
    spec: &Specification,
    value: f64,
    standard_uncertainty: Option<f64>,
    half_width: f64,
    coverage_probability: f64,
    mut mc: McConformance,
    unit: Option<&str>,
) -> Result<Conformity, ConformityError> {
    // Without a standard uncertainty (inputs without a finite variance) the
    // guard band of a rule set by a largest risk is that of a normal
    // distribution with the same coverage interval; the decision itself
    // rests on the counted trials alone.
    let no_variance = standard_uncertainty.is_none();
    let standard_uncertainty = standard_uncertainty.unwrap_or_else(|| {
        half_width / crate::coverage::normal_quantile(0.5 * (1.0 + coverage_probability))
    });
    let belief = Belief {
        value,
        standard_uncertainty,
        dof: None,
    };
    let k = if standard_uncertainty > 0.0 {
        half_width / standard_uncertainty
    } else {
        2.0
    };
    let mut c = assess(spec, belief, half_width, k, coverage_probability, unit)?;
    let p = mc.conformance_probability;
    let mut accepted = c.verdict.accepted();
    if let Guard::SpecificRisk(alpha) = spec.guard {
        accepted = match spec.rule {
            Rule::GuardedAcceptance => 1.0 - p <= alpha,
            Rule::GuardedRejection => p > alpha,
            Rule::SimpleAcceptance => accepted,
        };
    }
    c.conformance_probability = p;
    c.verdict = Verdict::of(accepted);
    c.specific_risk_kind = c.verdict.risk_kind();
    c.specific_risk = if accepted { 1.0 - p } else { p };
    c.distribution = format!(
        "the {} Monte Carlo trials (fraction inside the tolerance interval)",
        mc.trials
    );
    mc.specific_risk = c.specific_risk;
    mc.same_verdict = None;
    mc.specific_risk_upper_bound = mc.risk_bound(accepted);
    c.specific_risk_upper_bound = mc.specific_risk_upper_bound;
    c.decided_on_trials = true;
    c.monte_carlo = Some(mc);
    c.notes.push(
        "decided on the result of propagation of distributions (JCGM 101:2008, 8.2), because the \
         first-order result was not validated: the measured value is the mean of the trials and p_c the \
         fraction of trials inside the tolerance interval"
            .to_string(),
    );
    if no_variance {
        c.notes.push(
            "the result has no standard uncertainty (an input without a finite variance); the \
             decision rests on the fraction of trials alone, and a guard band set by a largest risk \
             is that of a normal distribution with the same coverage interval"
                .to_string(),
        );
    }
    c.statement = statement(&c, belief, half_width, unit);
    c.statement.push_str(
        " Result and conformance probability by propagation of distributions (JCGM 101:2008); the \
         first-order result was not validated.",
    );
    Ok(c)
}

fn percent(p: f64) -> String {
    format!("{} %", crate::rounding::significant_si(100.0 * p, 4))
}

/// The guard band for a largest specific risk `alpha`, or `None` when no
/// measured value can be accepted.
fn risk_guard_band(
    rule: Rule,
    alpha: f64,
    belief: Belief,
    lo: Option<f64>,
    hi: Option<f64>,
) -> Option<f64> {
    let u = belief.standard_uncertainty;
    if u == 0.0 {
        return Some(0.0);
    }
    // Whether a measured value y may be accepted. Guarded acceptance: the
    // consumer's risk Pr(outside) ≤ α; guarded rejection: reject only when
    // p_c < α, i.e. accept while Pr(inside) ≥ α. Both probabilities are
    // computed as tails, accurate when small, so that α down to 1e-300 is
    // met rather than saturating where 1 − α rounds to 1.
    let acceptable = |y: f64| {
        let b = Belief { value: y, ..belief };
        match rule {
            Rule::GuardedRejection => b.probability_inside(lo, hi) >= alpha,
            _ => b.probability_outside(lo, hi) <= alpha,
        }
    };
    let w = match (lo, hi) {
        (Some(l), Some(h)) => {
            // Acceptability is symmetric about the midpoint and is lost away from it.
            let mid = 0.5 * (l + h);
            if !acceptable(mid) {
                return None;
            }
            let mut a = mid;
            let mut step = (h - mid).max(u);
            let mut b = mid + step;
            let mut n = 0;
            while acceptable(b) && n < 1100 {
                a = b;
                step *= 2.0;
                b = mid + step;
                n += 1;
            }
            for _ in 0..300 {
                let m = 0.5 * (a + b);
                if m <= a || m >= b {
                    break;
                }
                if acceptable(m) {
                    a = m;
                } else {
                    b = m;
                }
            }
            let upper_acceptance = a;
            match rule {
                Rule::GuardedRejection => upper_acceptance - h,
                _ => h - upper_acceptance,
            }
        }
        _ => {
            // One limit: the risk at the acceptance limit is the tail beyond ±w/u;
            // the quantile of the lower tail α is accurate for tiny α.
            let z = -match belief.dof {
                Some(nu) => crate::coverage::student_t_quantile(alpha, nu),
                None => crate::coverage::normal_quantile(alpha),
            };
            if !z.is_finite() {
                return None;
            }
            z * u
        }
    };
    // Never claim a risk the guard band does not give.
    let at_limit = match (lo, hi, rule) {
        (_, Some(h), Rule::GuardedRejection) => h + w,
        (_, Some(h), _) => h - w,
        (Some(l), None, Rule::GuardedRejection) => l - w,
        (Some(l), None, _) => l + w,
        (None, None, _) => return Some(w),
    };
    let b = Belief {
        value: at_limit,
        ..belief
    };
    let met = match rule {
        Rule::GuardedRejection => b.probability_inside(lo, hi) >= alpha * (1.0 - 1e-6),
        _ => b.probability_outside(lo, hi) <= alpha * (1.0 + 1e-6),
    };
    (met && w.is_finite()).then_some(w)
}

/// Adaptive Gauss-Kronrod (7-15) quadrature of `f` on [a, b].
fn integrate(f: &dyn Fn(f64) -> f64, a: f64, b: f64, tol: f64) -> f64 {
    const XK: [f64; 8] = [
        0.991_455_371_120_812_6,
        0.949_107_912_342_758_5,
        0.864_864_423_359_769_1,
        0.741_531_185_599_394_4,
        0.586_087_235_467_691_1,
        0.405_845_151_377_397_2,
        0.207_784_955_007_898_5,
        0.0,
    ];
    const WK: [f64; 8] = [
        0.022_935_322_010_529_22,
        0.063_092_092_629_978_55,
        0.104_790_010_322_250_2,
        0.140_653_259_715_525_9,
        0.169_004_726_639_267_9,
        0.190_350_578_064_785_4,
        0.204_432_940_075_298_9,
        0.209_482_141_084_727_8,
    ];
    const WG: [f64; 4] = [
        0.129_484_966_168_869_7,
        0.279_705_391_489_276_7,
        0.381_830_050_505_118_9,
        0.417_959_183_673_469_4,
    ];
    let gk = |a: f64, b: f64| {
        let c = 0.5 * (a + b);
        let h = 0.5 * (b - a);
        let fc = f(c);
        let mut k = WK[7] * fc;
        let mut g = WG[3] * fc;
        for j in 0..7 {
            let x = h * XK[j];
            let s = f(c - x) + f(c + x);
            k += WK[j] * s;
            if j % 2 == 1 {
                g += WG[j / 2] * s;
            }
        }
        (k * h, ((k - g) * h).abs())
    };
    if b <= a {
        return 0.0;
    }
    let mut total = 0.0;
    let mut stack = vec![(a, b, 0u32)];
    let mut evaluations = 0usize;
    while let Some((x, y, depth)) = stack.pop() {
        let (v, err) = gk(x, y);
        evaluations += 1;
        if err <= tol * (y - x) / (b - a) || depth >= 50 || evaluations > 200_000 {
            total += v;
        } else {
            let m = 0.5 * (x + y);
            stack.push((x, m, depth + 1));
            stack.push((m, y, depth + 1));
        }
    }
    total
}

/// R_C and R_P of JCGM 106:2012, clause 9, for a normal process
/// distribution and a normal measuring system with standard deviation `u`.
pub fn global_risks(
    process: Process,
    u: f64,
    lo: Option<f64>,
    hi: Option<f64>,
    acceptance: Option<[Option<f64>; 2]>,
) -> GlobalRisks {
    let (m0, s0) = (process.mean, process.standard_deviation);
    let a = m0 - 40.0 * s0;
    let b = m0 + 40.0 * s0;
    let clip = |x: Option<f64>| x.map(|v| v.clamp(a, b));
    let tl = clip(lo).unwrap_or(a);
    let tu = clip(hi).unwrap_or(b);
    let density = |eta: f64| {
        let z = (eta - m0) / s0;
        (-0.5 * z * z).exp() / (s0 * (2.0 * std::f64::consts::PI).sqrt())
    };
    // Pr(measured value in the acceptance interval | true value eta).
    let accept = |eta: f64| match acceptance {
        None => 0.0,
        Some([al, ah]) => Belief {
            value: eta,
            standard_uncertainty: u,
            dof: None,
        }
        .probability_inside(al, ah),
    };
    let reject = |eta: f64| match acceptance {
        None => 1.0,
        Some([al, ah]) => Belief {
            value: eta,
            standard_uncertainty: u,
            dof: None,
        }
        .probability_outside(al, ah),
    };
    // Break points: the limits and acceptance limits inside [a, b].
    let mut points = vec![a, b, tl, tu, m0];
    if let Some([al, ah]) = acceptance {
        points.extend(clip(al));
        points.extend(clip(ah));
    }
    points.sort_by(f64::total_cmp);
    points.dedup();
    let tol = 1e-15;
    let mut consumer = 0.0;
    let mut producer = 0.0;
    for pair in points.windows(2) {
        let (x, y) = (pair[0], pair[1]);
        let mid = 0.5 * (x + y);
        let inside = lo.is_none_or(|l| mid >= l) && hi.is_none_or(|h| mid <= h);
        if inside {
            producer += integrate(&|e| density(e) * reject(e), x, y, tol);
        } else {
            consumer += integrate(&|e| density(e) * accept(e), x, y, tol);
        }
    }
    let nonconforming = Belief {
        value: m0,
        standard_uncertainty: s0,
        dof: None,
    }
    .probability_outside(lo, hi);
    GlobalRisks {
        process,
        measurement_standard_uncertainty: u,
        nonconforming_fraction: nonconforming,
        consumer_risk: consumer,
        producer_risk: producer,
    }
}

/// A tolerance or acceptance limit for reports: ten significant digits,
/// or −∞ / +∞ when absent.
pub fn limit_text(v: Option<f64>, lower: bool) -> String {
    match v {
        Some(v) => crate::rounding::significant_si(v, 10),
        None => if lower { "−∞" } else { "+∞" }.to_string(),
    }
}

/// `v` written to the decimal place of `reference` rounded to two
/// significant digits (JCGM 100:2008, 7.2.6), or to six significant digits
/// where that place is not a plain decimal.
pub fn at_place_of(v: f64, reference: f64) -> String {
    let (_, e) = crate::rounding::round_to_digits(reference, 2);
    if e < 0 && e > -16 {
        let d = (-e) as usize;
        format!("{v:.d$}")
    } else {
        crate::rounding::significant_si(v, 6)
    }
}

fn statement(c: &Conformity, belief: Belief, big_u: f64, unit: Option<&str>) -> String {
    let unit_text = unit.map(|u| format!(" {u}")).unwrap_or_default();
    let at = |v: f64| at_place_of(v, big_u.max(belief.standard_uncertainty));
    let tolerance = format!(
        "[{}, {}]{unit_text}",
        limit_text(c.lower_limit, true),
        limit_text(c.upper_limit, false)
    );
    let acceptance = match c.acceptance_interval {
        None => "empty".to_string(),
        Some([a, b]) => format!(
            "[{}, {}]{unit_text}",
            a.map_or("−∞".to_string(), at),
            b.map_or("+∞".to_string(), at)
        ),
    };
    let rule = match c.rule {
        _ if c.acceptance_interval.is_none() => format!(
            "Decision rule: {} (JCGM 106:2012, clause 8), {}: with this uncertainty no measured value \
             can be accepted, as the tolerance interval {tolerance} leaves no room for the guard band.",
            c.rule, c.guard_band_rule
        ),
        Rule::SimpleAcceptance => format!(
            "Decision rule: simple acceptance (JCGM 106:2012, clause 8): the item is accepted when the \
             measured value lies in the tolerance interval {tolerance}, limits included."
        ),
        Rule::GuardedAcceptance => format!(
            "Decision rule: guarded acceptance (JCGM 106:2012, clause 8): the item is accepted when the \
             measured value lies in the acceptance interval {acceptance}, the tolerance interval {tolerance} \
             reduced on each side by a {}.",
            c.guard_band_rule
        ),
        Rule::GuardedRejection => format!(
            "Decision rule: guarded rejection (JCGM 106:2012, clause 8): the item is rejected only when the \
             measured value lies outside the acceptance interval {acceptance}, the tolerance interval \
             {tolerance} widened on each side by a {}.",
            c.guard_band_rule
        ),
    };
    let who = if c.verdict.accepted() {
        "specific consumer's risk (probability that this accepted item does not conform)"
    } else {
        "specific producer's risk (probability that this rejected item conforms)"
    };
    format!(
        "{rule} Measured value {}{unit_text}: {}. Conformance probability {}; {who}: {}.",
        at(belief.value),
        c.verdict,
        c.conformance_text(),
        c.risk_text()
    )
}

/// A probability for a statement, as a percentage: four significant
/// digits, but near 100 % enough decimals to show two digits of the
/// complement (99.99962 %, not 100 %); below 10⁻¹⁵, "< 10⁻¹³ %".
pub fn probability(p: f64) -> String {
    if p.is_nan() {
        return "not available".into();
    }
    if p < 1e-15 {
        return "< 10⁻¹³ %".into();
    }
    if p > 1.0 - 1e-15 {
        return "> 99.9999999999999 %".into();
    }
    let q = 1.0 - p;
    if q < 1e-3 {
        let decimals = (-(100.0 * q).log10().floor()) as usize + 1;
        return format!("{:.*} %", decimals, 100.0 * p);
    }
    format!("{} %", crate::rounding::significant_si(100.0 * p, 4))
}

// Comparisons with the serialised names, as JSON readers and tests write them.
macro_rules! eq_name {
    ($t:ty) => {
        impl PartialEq<&str> for $t {
            fn eq(&self, other: &&str) -> bool {
                self.name() == *other
            }
        }
    };
}
eq_name!(Rule);
eq_name!(Verdict);
eq_name!(RiskKind);
