//! The results of propagation of distributions (JCGM 101:2008) as typed
//! values, defined here beside the first-order ones so that a measurand's
//! result holds both (`MeasurandResult::monte_carlo`); `incertus_mc`
//! computes them and re-exports these types.

/// Histogram counts over `bins` equal bins between two quantiles (the
/// 0.05 % and 99.95 % points, so that a few extreme trials do not squash
/// the picture); values outside are counted separately.
#[derive(Clone, Debug, serde::Serialize)]
pub struct Histogram {
    /// The bin edges, one more than the counts.
    pub edges: Vec<f64>,
    /// The count of each bin.
    pub counts: Vec<u64>,
    /// Trials below the first edge.
    pub below: u64,
    /// Trials above the last edge.
    pub above: u64,
}

/// Validation of the first-order result (JCGM 101:2008, 8.2).
#[derive(Clone, Debug, serde::Serialize)]
pub struct Validation {
    /// δ from the first-order u_c(y) and ndig (7.9.2).
    pub numerical_tolerance: f64,
    /// Significant digits of the tolerance.
    pub ndig: u32,
    /// |y − U_p − y_low|.
    pub d_low: f64,
    /// |y + U_p − y_high|.
    pub d_high: f64,
    /// Whether both ends agree within the tolerance.
    pub passed: bool,
}

/// The Monte Carlo result for one measurand (the `monte_carlo` object of
/// the JSON report).
#[derive(Clone, Debug, serde::Serialize)]
pub struct McMeasurand {
    /// The measurand.
    pub name: String,
    /// Trials used (after dropping non-finite ones, if that was asked).
    pub trials: usize,
    /// The seed of the random generator.
    pub seed: u64,
    /// The mean of the trials.
    pub value: f64,
    /// Their standard deviation.
    pub standard_uncertainty: f64,
    /// The coverage probability of the intervals.
    pub coverage_probability: f64,
    /// The probabilistically symmetric coverage interval.
    pub symmetric_interval: [f64; 2],
    /// The shortest coverage interval.
    pub shortest_interval: [f64; 2],
    /// The comparison with the first-order interval (JCGM 101:2008, 8).
    pub validation: Validation,
    /// Trials dropped because a value was not finite.
    pub non_finite_dropped: usize,
    /// The histogram of the trials.
    pub histogram: Histogram,
    /// Trials inside the tolerance interval, when the measurand has a
    /// specification (the fraction of trials, as JCGM 101:2008 does for coverage).
    pub conformance: Option<crate::conformity::McConformance>,
    /// When Type A inputs or fit parameters are sampled as scaled and
    /// shifted t distributions (JCGM 101:2008, 6.4.9), the ratio of variances
    /// u²(MC)/u²(first order) this alone leads to, Σ share_i · ν_i/(ν_i − 2)
    /// over the budget (correlation terms left out); `None` when it is 1.
    pub t_sampling_variance_ratio: Option<f64>,
    /// Whether the output has a finite variance: false when an input it
    /// depends on is sampled from a distribution without one (t with
    /// ν ≤ 2, JCGM 101:2008, 6.4.9.4; quantities observed together with
    /// n − N ≤ 2, 6.4.8). Then the standard deviation of the trials is no
    /// estimate of anything and only the coverage intervals are results.
    pub finite_variance: bool,
}
