//! Propagation of distributions by the Monte Carlo method of
//! JCGM 101:2008 (GUM Supplement 1): sampling of the input distributions
//! (6.4), evaluation of the model on the compiled tape in batches (7.4),
//! estimate, standard uncertainty and the probabilistically symmetric and
//! shortest coverage intervals (7.5 to 7.7), the adaptive procedure (7.9)
//! and the validation of the first-order (GUM) result (clause 8). Several
//! measurands share the same trials, so their covariance comes too
//! (JCGM 102:2011, 7.5).
//!
//! Reproducibility: trials are cut into blocks of [`BLOCK`] trials; block b
//! draws from its own `Xoshiro256PlusPlus` stream seeded with
//! SplitMix64(seed, b), and every reduction runs over fixed chunks combined
//! in order. A seed therefore gives the same numbers, bit for bit, whatever
//! the number of threads. The default seed is [`DEFAULT_SEED`].
//!
//! Left out: the adaptive procedure's optional use of the shortest interval
//! for its stopping rule (the probabilistically symmetric one is used, as in
//! JCGM 101:2008, 7.9.4); Monte Carlo for the higher-order terms.

#![warn(missing_docs)]

pub mod copula;
mod sample;
pub mod stats;

use incertus_expr::Tape;
use incertus_gum::propagate::{expanded_formulas, NamedMatrix};
use incertus_gum::typea::power_of_two_near;
use incertus_gum::{Model, Report};
use rand::SeedableRng;
use rayon::prelude::*;
use serde::Serialize;

pub use sample::{describe, groups, Group, Marginal, Stream};
pub use stats::Histogram;

/// Trials per block: the unit of reproducibility and of parallel work.
pub const BLOCK: usize = 1 << 13;

/// The seed used when none is given.
pub const DEFAULT_SEED: u64 = 20_260_101;

/// How many trials.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Trials {
    /// This many trials.
    Fixed(usize),
    /// The adaptive procedure of JCGM 101:2008, 7.9, to `ndig` significant
    /// digits, with at most `max` trials.
    Adaptive {
        /// The largest number of trials.
        max: usize,
    },
}

/// Settings of one run.
#[derive(Clone, Debug)]
pub struct Settings {
    /// How many trials.
    pub trials: Trials,
    /// The seed of the random generator (the same seed gives the same trials).
    pub seed: u64,
    /// Worker threads (`None`: all cores).
    pub threads: Option<usize>,
    /// Drop trials whose result is not finite instead of refusing the run.
    pub drop_non_finite: bool,
    /// Significant digits of the numerical tolerance (JCGM 101:2008, 7.9.2).
    pub ndig: u32,
    /// Largest memory the trials may take, in bytes (`None`: 80 % of the
    /// memory the system reports available, or 4 GiB if it cannot be read).
    pub memory_limit: Option<u64>,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            trials: Trials::Fixed(1_000_000),
            seed: DEFAULT_SEED,
            threads: None,
            drop_non_finite: false,
            ndig: 2,
            memory_limit: None,
        }
    }
}

/// Why a run could not be done.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct McError {
    /// What kind of problem.
    pub kind: McErrorKind,
    /// What is wrong, for a person.
    pub message: String,
}

/// The kinds of [`McError`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum McErrorKind {
    /// The settings cannot give a valid run (too few trials, ndig).
    Settings,
    /// The trials would take more memory than allowed.
    Memory,
    /// The model cannot be sampled (a correlation structure not supported,
    /// a correlation matrix not positive semi-definite, too few joint
    /// observations).
    Model,
    /// Trials gave values that are not finite numbers.
    NonFinite,
    /// The worker threads could not be started.
    Threads,
}

impl McError {
    fn new(kind: McErrorKind, message: impl Into<String>) -> Self {
        McError {
            kind,
            message: message.into(),
        }
    }
}

pub use incertus_gum::distributions::{McMeasurand, Validation};

/// Adaptive-procedure bookkeeping (JCGM 101:2008, 7.9).
#[derive(Clone, Debug, Serialize)]
pub struct Adaptive {
    /// Significant digits asked of the standard uncertainties.
    pub ndig: u32,
    /// Trials per sequence.
    pub trials_per_sequence: usize,
    /// Sequences run.
    pub sequences: usize,
    /// Whether the results became stable within `max`.
    pub converged: bool,
}

/// Everything a run produced.
#[derive(Clone, Debug, Serialize)]
pub struct McReport {
    /// Trials run.
    pub trials: usize,
    /// The seed.
    pub seed: u64,
    /// Trials per block (the unit of work and of the moments).
    pub block_size: usize,
    /// Worker threads.
    pub threads: usize,
    /// Bytes held for the trials (outputs and the sort buffers).
    pub memory_bytes: u64,
    /// The adaptive procedure's record, when it ran.
    pub adaptive: Option<Adaptive>,
    /// How correlated inputs were sampled, in words.
    pub correlated_sampling: Vec<String>,
    /// One result per measurand.
    pub results: Vec<McMeasurand>,
    /// Covariance of the measurands from the trials.
    pub covariance_matrix: NamedMatrix,
    /// Correlation of the measurands from the trials.
    pub correlation_matrix: NamedMatrix,
}

/// SplitMix64: the seed of block `b`.
fn block_seed(seed: u64, b: u64) -> u64 {
    let mut z = seed ^ b.wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The memory this process may still take: the smallest of the system's
/// available memory (`MemAvailable`), its control group's limit less its
/// use (cgroup v2 `memory.max` − `memory.current`, or v1
/// `memory.limit_in_bytes` − `memory.usage_in_bytes`), and the process's
/// address-space and data limits (`ulimit -v`, `-d`) less what it already
/// maps. `None` when none of them can be read.
fn available_memory() -> Option<u64> {
    let read = |p: &str| std::fs::read_to_string(p).ok();
    let number = |s: Option<String>| s.and_then(|t| t.trim().parse::<u64>().ok());
    let mut candidates: Vec<u64> = Vec::new();
    if let Some(text) = read("/proc/meminfo") {
        if let Some(kb) = kb_field(&text, "MemAvailable:") {
            candidates.push(kb * 1024);
        }
    }
    for (max, used) in [
        ("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory.current"),
        (
            "/sys/fs/cgroup/memory/memory.limit_in_bytes",
            "/sys/fs/cgroup/memory/memory.usage_in_bytes",
        ),
    ] {
        // "max" (no limit) does not parse and is skipped.
        if let Some(limit) = number(read(max)) {
            candidates.push(limit.saturating_sub(number(read(used)).unwrap_or(0)));
        }
    }
    if let (Some(limits), Some(status)) = (read("/proc/self/limits"), read("/proc/self/status")) {
        for (name, field) in [
            ("Max address space", "VmSize:"),
            ("Max data size", "VmData:"),
        ] {
            let soft = limits
                .lines()
                .find(|l| l.starts_with(name))
                .and_then(|l| l[name.len()..].split_whitespace().next())
                .and_then(|v| v.parse::<u64>().ok());
            if let Some(soft) = soft {
                let mapped = kb_field(&status, field).unwrap_or(0) * 1024;
                candidates.push(soft.saturating_sub(mapped));
            }
        }
    }
    candidates.into_iter().min()
}

/// A `Name:  123 kB` field of a /proc file, in kB.
fn kb_field(text: &str, name: &str) -> Option<u64> {
    let line = text.lines().find(|l| l.starts_with(name))?;
    line[name.len()..].split_whitespace().next()?.parse().ok()
}

/// `m` columns of `n` zeros, or an error if the memory cannot be had (an
/// allocation that fails is reported, not an abort).
fn zeroed(m: usize, n: usize) -> Result<Vec<Vec<f64>>, McError> {
    let mut cols = Vec::new();
    cols.try_reserve_exact(m).map_err(|_| out_of_memory(n))?;
    for _ in 0..m {
        let mut c: Vec<f64> = Vec::new();
        c.try_reserve_exact(n).map_err(|_| out_of_memory(n))?;
        c.resize(n, 0.0);
        cols.push(c);
    }
    Ok(cols)
}

fn out_of_memory(n: usize) -> McError {
    McError::new(
        McErrorKind::Memory,
        format!(
            "the memory for {n} trials could not be had (the system or a limit on this process \
             refused it); ask for fewer trials"
        ),
    )
}

/// Bytes a run of `trials` trials holds: every measurand's values plus two
/// `u64` buffers for the sort, plus the per-thread block buffers.
pub fn memory_needed(model: &Model, trials: usize, threads: usize) -> u64 {
    let m = model.measurands.len() as u64;
    let n = trials as u64;
    let per_thread = (BLOCK * (2 * model.inputs.len() + m as usize + 2) * 8) as u64;
    n * 8 * (m + 2) + threads as u64 * per_thread
}

fn limit(settings: &Settings) -> u64 {
    settings
        .memory_limit
        .unwrap_or_else(|| available_memory().map_or(4 << 30, |a| a / 10 * 8))
}

fn human(bytes: u64) -> String {
    let b = bytes as f64;
    if b >= 1e9 {
        format!("{:.1} GB", b / 1e9)
    } else if b >= 1e6 {
        format!("{:.1} MB", b / 1e6)
    } else {
        format!("{:.0} kB", b / 1e3)
    }
}

/// Everything needed to draw and evaluate trials.
struct Engine<'a> {
    model: &'a Model,
    tape: Tape,
    groups: Vec<Group>,
    seed: u64,
    /// A power of two per measurand near its first-order u (in coherent
    /// SI): co-moments are summed in these units, so trials near 1e307 or
    /// 1e-307 neither overflow nor underflow.
    scales: Vec<f64>,
}

/// Counts, means and co-moments of the measurands over a set of trials
/// (for combining blocks: Chan, Golub and LeVeque's pairwise update, 1979,
/// from memory). Combined in block order, so the result does not depend on
/// the thread count.
#[derive(Clone, Debug)]
struct Moments {
    n: f64,
    /// The scale of each measurand: `co` holds Σ (Δy_a/s_a)(Δy_b/s_b).
    scale: Vec<f64>,
    mean: Vec<f64>,
    /// Σ (y_a − ȳ_a)(y_b − ȳ_b), a full m × m matrix.
    co: Vec<Vec<f64>>,
    min: Vec<f64>,
    max: Vec<f64>,
}

impl Moments {
    fn empty(scale: &[f64]) -> Moments {
        let m = scale.len();
        Moments {
            n: 0.0,
            scale: scale.to_vec(),
            mean: vec![0.0; m],
            co: vec![vec![0.0; m]; m],
            min: vec![f64::INFINITY; m],
            max: vec![f64::NEG_INFINITY; m],
        }
    }

    /// Two-pass moments of one block (the values are in cache), over the
    /// trials where every measurand is finite, and the least and greatest
    /// value of each measurand.
    fn of_block(outs: &[&mut [f64]], all_finite: bool, scale: &[f64]) -> Moments {
        let m = outs.len();
        let len = outs[0].len();
        let mut r = Moments::empty(scale);
        if all_finite {
            r.n = len as f64;
            for (a, o) in outs.iter().enumerate() {
                r.mean[a] = stats::shifted_mean(o, scale[a]);
                let (lo, hi) = o
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &x| {
                        (l.min(x), h.max(x))
                    });
                r.min[a] = lo;
                r.max[a] = hi;
            }
            for a in 0..m {
                for b in 0..=a {
                    let (ma, mb) = (r.mean[a], r.mean[b]);
                    let c = stats::co_moment(outs[a], outs[b], ma, mb, scale[a], scale[b]);
                    r.co[a][b] = c;
                    r.co[b][a] = c;
                }
            }
            return r;
        }
        let ok = |i: usize| outs.iter().all(|o| o[i].is_finite());
        let n = (0..len).filter(|&i| ok(i)).count();
        if n == 0 {
            return r;
        }
        r.n = n as f64;
        for (a, o) in outs.iter().enumerate() {
            let x0 = (0..len).find(|&i| ok(i)).map_or(0.0, |i| o[i]);
            r.mean[a] = x0
                + scale[a]
                    * (stats::sum((0..len).filter(|&i| ok(i)).map(|i| (o[i] - x0) / scale[a]))
                        / r.n);
            for i in (0..len).filter(|&i| ok(i)) {
                r.min[a] = r.min[a].min(o[i]);
                r.max[a] = r.max[a].max(o[i]);
            }
        }
        for a in 0..m {
            for b in 0..=a {
                let (oa, ob) = (&outs[a], &outs[b]);
                let (ma, mb) = (r.mean[a], r.mean[b]);
                let (sa, sb) = (scale[a], scale[b]);
                let c = stats::sum(
                    (0..len)
                        .filter(|&i| ok(i))
                        .map(|i| ((oa[i] - ma) / sa) * ((ob[i] - mb) / sb)),
                );
                r.co[a][b] = c;
                r.co[b][a] = c;
            }
        }
        r
    }

    fn combine(&self, o: &Moments) -> Moments {
        if self.n == 0.0 {
            return o.clone();
        }
        if o.n == 0.0 {
            return self.clone();
        }
        let n = self.n + o.n;
        let m = self.mean.len();
        let d: Vec<f64> = (0..m).map(|a| o.mean[a] - self.mean[a]).collect();
        let mean = (0..m).map(|a| self.mean[a] + d[a] * (o.n / n)).collect();
        let f = self.n * o.n / n;
        let sc = &self.scale;
        let co = (0..m)
            .map(|a| {
                (0..m)
                    .map(|b| self.co[a][b] + o.co[a][b] + (d[a] / sc[a]) * (d[b] / sc[b]) * f)
                    .collect()
            })
            .collect();
        let min = (0..m).map(|a| self.min[a].min(o.min[a])).collect();
        let max = (0..m).map(|a| self.max[a].max(o.max[a])).collect();
        Moments {
            n,
            scale: self.scale.clone(),
            mean,
            co,
            min,
            max,
        }
    }
}

/// A block's index and its slice of every measurand's output.
type BlockSlices<'a> = (usize, Vec<&'a mut [f64]>);

/// A non-finite result met in a block.
#[derive(Clone, Debug)]
struct Bad {
    trial: usize,
    measurand: usize,
    inputs: Vec<f64>,
}

impl Engine<'_> {
    /// Draw and evaluate trials `[start, start + out[0].len())`; `start` is a
    /// multiple of BLOCK. Returns the non-finite count per measurand, the
    /// first bad trial and the moments of each block.
    fn run(
        &self,
        start: usize,
        outs: &mut [Vec<f64>],
        range: std::ops::Range<usize>,
    ) -> (Vec<usize>, Option<Bad>, Vec<Moments>) {
        let m = outs.len();
        let n_in = self.model.inputs.len();
        let len = range.len();
        let n_blocks = len.div_ceil(BLOCK);
        // Split every output into per-block slices.
        let mut per_block: Vec<Vec<&mut [f64]>> =
            (0..n_blocks).map(|_| Vec::with_capacity(m)).collect();
        for o in outs.iter_mut() {
            for (b, chunk) in o[range.clone()].chunks_mut(BLOCK).enumerate() {
                per_block[b].push(chunk);
            }
        }
        // One contiguous run of blocks per thread, each with buffers
        // allocated once (the block seeds do not depend on this grouping).
        let parts = rayon::current_num_threads().clamp(1, n_blocks.max(1));
        let per_part = n_blocks.div_ceil(parts).max(1);
        let mut grouped: Vec<Vec<BlockSlices>> = Vec::with_capacity(parts);
        for (b, slices) in per_block.into_iter().enumerate() {
            if b % per_part == 0 {
                grouped.push(Vec::with_capacity(per_part));
            }
            grouped.last_mut().expect("pushed above").push((b, slices));
        }
        let results: Vec<(Vec<usize>, Option<Bad>, Moments)> = grouped
            .into_par_iter()
            .map(|blocks| {
                let mut cols = vec![vec![0.0; BLOCK]; n_in];
                let mut scratch = Vec::<f64>::new();
                blocks
                    .into_iter()
                    .map(|(b, mut slices)| {
                        let block_index = (start / BLOCK + b) as u64;
                        let mut rng =
                            sample::Stream::seed_from_u64(block_seed(self.seed, block_index));
                        let blen = slices[0].len();
                        for g in &self.groups {
                            g.fill(&mut rng, &mut cols, blen, &mut scratch);
                        }
                        let col_refs: Vec<&[f64]> = cols.iter().map(|c| &c[..blen]).collect();
                        let report = self
                            .tape
                            .eval_batch(&col_refs, &mut slices)
                            .expect("columns and outputs have the tape's shape");
                        let bad = report
                            .first_non_finite
                            .iter()
                            .enumerate()
                            .filter_map(|(j, f)| f.map(|i| (i, j)))
                            .min()
                            .map(|(i, j)| Bad {
                                trial: start + b * BLOCK + i,
                                measurand: j,
                                inputs: cols.iter().map(|c| c[i]).collect(),
                            });
                        let moments = Moments::of_block(&slices, report.all_finite(), &self.scales);
                        (report.non_finite, bad, moments)
                    })
                    .collect::<Vec<_>>()
            })
            .collect::<Vec<_>>()
            .into_iter()
            .flatten()
            .collect();
        let mut counts = vec![0usize; m];
        let mut first: Option<Bad> = None;
        let mut moments = Vec::with_capacity(results.len());
        for (c, bad, mo) in results {
            moments.push(mo);
            for (t, x) in counts.iter_mut().zip(c) {
                *t += x;
            }
            if let Some(bad) = bad {
                if first.as_ref().is_none_or(|f| bad.trial < f.trial) {
                    first = Some(bad);
                }
            }
        }
        (counts, first, moments)
    }
}

/// Numerical tolerance δ of a standard uncertainty to `ndig` significant
/// digits: u = c × 10^l with c an ndig-digit integer after rounding,
/// δ = ½ × 10^l (JCGM 101:2008, 7.9.2).
///
/// ```
/// use incertus_mc::numerical_tolerance;
/// assert_eq!(numerical_tolerance(0.0996, 2), 0.005); // 10 × 10⁻²
/// assert_eq!(numerical_tolerance(0.0946, 2), 0.0005); // 95 × 10⁻³
/// ```
pub fn numerical_tolerance(u: f64, ndig: u32) -> f64 {
    if u <= 0.0 || !u.is_finite() {
        return 0.0;
    }
    // u rounded to ndig significant digits on its decimal digits, with the
    // carry: 0.0996 to two digits is 0.10 = 10 × 10⁻², so l = −2 (not −3,
    // which log10 of the unrounded u would give).
    let (_, l) = incertus_gum::rounding::round_to_digits(u, ndig);
    0.5 * 10f64.powi(l)
}

/// Run the Monte Carlo method on a model whose first-order report is `gum`.
pub fn run(model: &Model, gum: &Report, settings: &Settings) -> Result<McReport, McError> {
    let threads = settings
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .max(1);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| {
            McError::new(
                McErrorKind::Threads,
                format!("cannot start {threads} threads: {e}"),
            )
        })?;
    pool.install(|| run_in_pool(model, gum, settings, threads))
}

fn run_in_pool(
    model: &Model,
    gum: &Report,
    settings: &Settings,
    threads: usize,
) -> Result<McReport, McError> {
    if settings.ndig == 0 || settings.ndig > 6 {
        return Err(McError::new(
            McErrorKind::Settings,
            "ndig must be between 1 and 6",
        ));
    }
    let p = gum.results.first().map_or(0.95, |r| r.coverage_probability);
    let engine = engine(model, gum, settings)?;
    let run = Run {
        model,
        engine: &engine,
        settings,
        threads,
        p,
        cap: limit(settings),
    };
    let (mut outs, block_moments, adaptive) = match settings.trials {
        Trials::Fixed(n) => run.fixed(n)?,
        Trials::Adaptive { max } => run.adaptive(max)?,
    };
    let total = outs.first().map_or(0, Vec::len);
    let dropped = drop_non_finite_trials(&mut outs, settings.drop_non_finite);
    if outs.first().map_or(0, Vec::len) < 2 {
        return Err(McError::new(
            McErrorKind::NonFinite,
            "fewer than two trials gave finite values of every measurand",
        ));
    }
    // Moments and covariance from the blocks, combined in order.
    let total_moments = block_moments
        .iter()
        .fold(Moments::empty(&engine.scales), |acc, b| acc.combine(b));
    let (means, sds, mut cov, corr) = output_moments(model, &total_moments, &engine.scales)?;
    // By input name, as the budget lines name their inputs.
    let t_factors: std::collections::HashMap<&str, f64> = engine
        .groups
        .iter()
        .flat_map(sample::Group::t_variance_factors)
        .map(|(i, f)| (model.inputs[i].name.as_str(), f))
        .collect();
    let mut results = Vec::with_capacity(outs.len());
    for (j, o) in outs.iter_mut().enumerate() {
        let range = (total_moments.min[j], total_moments.max[j]);
        let moments = (means[j], sds[j]);
        results.push(run.measurand(j, o, gum, range, moments, &t_factors, dropped));
    }
    let m = model.measurands.len();
    let factors: Vec<f64> = model
        .measurands
        .iter()
        .map(incertus_gum::Measurand::unit_factor)
        .collect();
    for a in 0..m {
        for b in 0..m {
            cov[a][b] /= factors[a] * factors[b];
        }
    }
    let mnames: Vec<String> = model.measurands.iter().map(|x| x.name.clone()).collect();
    Ok(McReport {
        trials: total,
        seed: settings.seed,
        block_size: BLOCK,
        threads,
        memory_bytes: memory_needed(model, total, threads),
        adaptive,
        correlated_sampling: describe(&engine.groups, model),
        results,
        covariance_matrix: NamedMatrix {
            names: mnames.clone(),
            matrix: cov,
        },
        correlation_matrix: NamedMatrix {
            names: mnames,
            matrix: corr,
        },
    })
}

/// The compiled model with its samplers and the scales of its outputs.
fn engine<'m>(model: &'m Model, gum: &Report, settings: &Settings) -> Result<Engine<'m>, McError> {
    let names: Vec<&str> = model.inputs.iter().map(|i| i.name.as_str()).collect();
    let formulas: Vec<_> = expanded_formulas(model)
        .into_iter()
        .map(|(_, e)| e)
        .collect();
    let tape = Tape::compile(&formulas, &names)
        .map_err(|e| McError::new(McErrorKind::Model, e.message))?;
    let groups = groups(model).map_err(|m| McError::new(McErrorKind::Model, m))?;
    let scales: Vec<f64> = gum
        .results
        .iter()
        .zip(&model.measurands)
        .map(|(r, meas)| {
            let u = r.standard_uncertainty * meas.unit_factor();
            if u > 0.0 && u.is_finite() {
                power_of_two_near(u)
            } else {
                power_of_two_near(r.value * meas.unit_factor())
            }
        })
        .collect();
    Ok(Engine {
        model,
        tape,
        groups,
        seed: settings.seed,
        scales,
    })
}

/// The trial values of each measurand, the moments of each block, and the
/// record of the adaptive procedure if it ran.
type TrialValues = (Vec<Vec<f64>>, Vec<Moments>, Option<Adaptive>);

/// One run: what its steps share.
struct Run<'a> {
    model: &'a Model,
    engine: &'a Engine<'a>,
    settings: &'a Settings,
    threads: usize,
    p: f64,
    /// Largest memory allowed, in bytes.
    cap: u64,
}

impl Run<'_> {
    fn check_memory(&self, n: usize) -> Result<u64, McError> {
        let need = memory_needed(self.model, n, self.threads);
        if need > self.cap {
            return Err(McError::new(
                McErrorKind::Memory,
                format!(
                "{n} trials would need about {} of memory, more than the {} allowed; ask for fewer \
                 trials (memory grows by {} bytes per trial for this model)",
                human(need),
                human(self.cap),
                8 * (self.model.measurands.len() + 2)
            ),
            ));
        }
        Ok(need)
    }

    /// A fixed number of trials.
    fn fixed(&self, n: usize) -> Result<TrialValues, McError> {
        if n < 2 {
            return Err(McError::new(
                McErrorKind::Settings,
                "at least 2 trials are needed",
            ));
        }
        let min = (100.0 / (1.0 - self.p)).ceil() as usize;
        if n < min {
            return Err(McError::new(
                McErrorKind::Settings,
                format!(
                "{n} trials are too few for a {} % coverage interval; JCGM 101:2008, 7.2.2 asks \
                 for at least 100/(1 − p) = {min}",
                100.0 * self.p
            ),
            ));
        }
        self.check_memory(n)?;
        let mut outs = zeroed(self.model.measurands.len(), n)?;
        let (counts, bad, mo) = self.engine.run(0, &mut outs, 0..n);
        handle_non_finite(self.model, self.engine, &counts, bad, n, self.settings)?;
        Ok((outs, mo, None))
    }

    /// The adaptive procedure of JCGM 101:2008, 7.9: sequences of
    /// M = max(⌈100/(1 − p)⌉, 10⁴) trials (rounded up to whole blocks) until
    /// the means, standard deviations and interval ends are stable.
    fn adaptive(&self, max: usize) -> Result<TrialValues, McError> {
        let (model, settings) = (self.model, self.settings);
        infinite_variance(model)?;
        let m = model.measurands.len();
        let per = ((100.0 / (1.0 - self.p)).ceil() as usize)
            .max(10_000)
            .div_ceil(BLOCK)
            * BLOCK;
        // The cap is also what the memory allows: a run that does not
        // settle ends there with its record saying so, instead of failing
        // for want of memory after all its work.
        let per_trial = 8 * (m as u64 + 2);
        let fixed = memory_needed(model, 0, self.threads);
        let affordable = (self.cap.saturating_sub(fixed) / per_trial) as usize;
        let max_seq = (max / per).min(affordable / per).max(2);
        self.check_memory(per * max_seq.min(2))?;
        let mut outs: Vec<Vec<f64>> = Vec::new();
        let mut block_moments: Vec<Moments> = Vec::new();
        let mut seq_stats: Vec<Vec<[f64; 4]>> = vec![Vec::new(); m];
        let mut h = 0;
        let mut converged = false;
        let batch = self.threads.max(2);
        while h < max_seq && !converged {
            let k = batch.min(max_seq - h);
            let start = h * per;
            let end = start + k * per;
            self.check_memory(end)?;
            for o in outs.iter_mut() {
                o.try_reserve_exact(end - o.len())
                    .map_err(|_| out_of_memory(end))?;
                o.resize(end, 0.0);
            }
            if outs.is_empty() {
                outs = zeroed(m, end)?;
            }
            let (counts, bad, mo) = self.engine.run(start, &mut outs, start..end);
            block_moments.extend(mo);
            if !settings.drop_non_finite {
                handle_non_finite(model, self.engine, &counts, bad, end - start, settings)?;
            }
            // Statistics of each new sequence, then the stopping rule after
            // each one in order, as if they had been run one by one.
            for s in 0..k {
                self.sequence_statistics(&outs, start + s * per, per, &mut seq_stats)?;
                h += 1;
                if h >= 2 && stable(&seq_stats, per, settings.ndig) {
                    converged = true;
                    break;
                }
            }
        }
        let n = h * per;
        for o in outs.iter_mut() {
            o.truncate(n);
            o.shrink_to_fit();
        }
        block_moments.truncate(n / BLOCK);
        let adaptive = Adaptive {
            ndig: settings.ndig,
            trials_per_sequence: per,
            sequences: h,
            converged,
        };
        Ok((outs, block_moments, Some(adaptive)))
    }

    /// Mean, standard deviation and interval ends of one sequence.
    fn sequence_statistics(
        &self,
        outs: &[Vec<f64>],
        lo: usize,
        per: usize,
        seq_stats: &mut [Vec<[f64; 4]>],
    ) -> Result<(), McError> {
        for (j, o) in outs.iter().enumerate() {
            let mut v: Vec<f64> = o[lo..lo + per]
                .iter()
                .copied()
                .filter(|x| x.is_finite())
                .collect();
            if v.len() < 2 {
                return Err(McError::new(
                    McErrorKind::NonFinite,
                    format!(
                        "a sequence of {per} trials gave fewer than two finite values of `{}`",
                        self.model.measurands[j].name
                    ),
                ));
            }
            let mean = stats::mean(&v);
            let sd = stats::std_dev(&v, mean);
            let iv = stats::summarize(&mut v, self.p, 1, None).symmetric;
            seq_stats[j].push([mean, sd, iv[0], iv[1]]);
        }
        Ok(())
    }

    /// The result of measurand `j` from its trial values `o`, in the
    /// measurand's unit, validated against the first-order result.
    #[allow(clippy::too_many_arguments)]
    fn measurand(
        &self,
        j: usize,
        o: &mut [f64],
        gum: &Report,
        range: (f64, f64),
        (mean, sd): (f64, f64),
        t_factors: &std::collections::HashMap<&str, f64>,
        dropped: usize,
    ) -> McMeasurand {
        let (model, settings, p) = (self.model, self.settings, self.p);
        let meas = &model.measurands[j];
        // Conformance by counting, in the measurand's unit (limits included).
        let conformance = meas.specification.as_ref().map(|spec| {
            let lo = spec.lower.unwrap_or(f64::NEG_INFINITY);
            let hi = spec.upper.unwrap_or(f64::INFINITY);
            let inside = o
                .iter()
                .filter(|&&v| {
                    let x = meas.shown_value(v);
                    x >= lo && x <= hi
                })
                .count();
            incertus_gum::conformity::McConformance::from_count(inside, o.len())
        });
        let mut summary = stats::summarize(o, p, 60, Some(range));
        // From coherent SI to the measurand's unit, as the first-order report.
        let val = |v: f64| meas.shown_value(v);
        let sym = summary.symmetric.map(val);
        let short = summary.shortest.map(val);
        for e in summary.histogram.edges.iter_mut() {
            *e = val(*e);
        }
        let g = &gum.results[j];
        let t_sampling_variance_ratio = {
            let share: f64 = g.budget.iter().map(|b| b.share).sum();
            let ratio: f64 = g
                .budget
                .iter()
                .map(|b| b.share * t_factors.get(b.input.as_str()).copied().unwrap_or(1.0))
                .sum();
            // Stated from 1 % in variance (0.5 % in u) on.
            (share > 0.0 && ratio / share > 1.01).then(|| ratio / share)
        };
        let finite_variance = !g.budget.iter().any(|b| {
            b.standard_uncertainty > 0.0
                && t_factors
                    .get(b.input.as_str())
                    .is_some_and(|f| f.is_infinite())
        });
        let delta = numerical_tolerance(g.standard_uncertainty, settings.ndig);
        let d_low = (g.value - g.expanded_uncertainty - sym[0]).abs();
        let d_high = (g.value + g.expanded_uncertainty - sym[1]).abs();
        McMeasurand {
            name: meas.name.clone(),
            trials: o.len(),
            seed: settings.seed,
            value: val(mean),
            standard_uncertainty: sd / meas.unit_factor(),
            coverage_probability: p,
            symmetric_interval: sym,
            shortest_interval: short,
            validation: Validation {
                numerical_tolerance: delta,
                ndig: settings.ndig,
                d_low,
                d_high,
                // Never passed on a figure that is not a number.
                passed: d_low <= delta
                    && d_high <= delta
                    && delta.is_finite()
                    && d_low.is_finite()
                    && d_high.is_finite(),
            },
            non_finite_dropped: dropped,
            histogram: summary.histogram,
            conformance,
            t_sampling_variance_ratio,
            finite_variance,
        }
    }
}

/// The adaptive procedure stops when the standard deviation of the trials
/// settles; an input sampled from a t distribution with ν ≤ 2 has no
/// finite variance (JCGM 101:2008, 6.4.9: the variance of t_ν is ν/(ν − 2)
/// for ν > 2 only), so it would never stop.
fn infinite_variance(model: &Model) -> Result<(), McError> {
    let used: std::collections::HashSet<String> = model
        .measurands
        .iter()
        .flat_map(|m| m.formula.names())
        .collect();
    for i in &model.inputs {
        let nu = i.dof.unwrap_or(f64::INFINITY);
        if matches!(i.distribution, incertus_gum::Distribution::StudentT)
            && nu <= 2.0
            && i.standard_uncertainty > 0.0
            && used.contains(&i.name)
        {
            let how = match i.evaluation {
                incertus_gum::Evaluation::TypeA { n, .. } => format!(" (from {n} observations)"),
                _ => String::new(),
            };
            return Err(McError::new(
                McErrorKind::Settings,
                format!(
                    "`{}` is sampled from a t distribution with ν = {}{how}, which has no finite \
                     variance (JCGM 101:2008, 6.4.9), so the standard deviation of the trials never \
                     settles and the adaptive procedure (7.9) would not stop; give a fixed number of \
                     trials (its coverage intervals remain valid), or base the input on more \
                     observations",
                    i.name,
                    incertus_gum::rounding::significant_si(nu, 4)
                ),
            ));
        }
    }
    Ok(())
}

/// A trial with a non-finite value of any measurand is dropped as a whole
/// (only when that was asked; otherwise the run stopped before), so the
/// measurands stay paired trial by trial. The number dropped.
fn drop_non_finite_trials(outs: &mut [Vec<f64>], asked: bool) -> usize {
    if !asked || !outs.iter().any(|o| o.par_iter().any(|x| !x.is_finite())) {
        return 0;
    }
    let n_all = outs.first().map_or(0, Vec::len);
    let keep: Vec<bool> = (0..n_all)
        .map(|i| outs.iter().all(|o| o[i].is_finite()))
        .collect();
    for o in outs.iter_mut() {
        let mut it = keep.iter();
        o.retain(|_| *it.next().expect("one flag per trial"));
    }
    keep.iter().filter(|k| !**k).count()
}

/// Means, standard deviations, covariance and correlation of the outputs
/// (coherent SI) from the combined moments.
#[allow(clippy::type_complexity)]
fn output_moments(
    model: &Model,
    total: &Moments,
    sc: &[f64],
) -> Result<(Vec<f64>, Vec<f64>, Vec<Vec<f64>>, Vec<Vec<f64>>), McError> {
    let m = sc.len();
    let dof = (total.n - 1.0).max(1.0);
    let means = total.mean.clone();
    let sds: Vec<f64> = (0..m)
        .map(|a| sc[a] * (total.co[a][a] / dof).sqrt())
        .collect();
    if let Some(j) = (0..m).find(|&j| !(means[j].is_finite() && sds[j].is_finite())) {
        return Err(McError::new(
            McErrorKind::NonFinite,
            format!(
                "the mean or the standard deviation of the trials of `{}` is not a finite number \
             (values near the limits of double precision, about 1.8e308); express the model in \
             units that keep its values well inside that range",
                model.measurands[j].name
            ),
        ));
    }
    let mut cov = vec![vec![0.0; m]; m];
    let mut corr = vec![vec![0.0; m]; m];
    for a in 0..m {
        for b in 0..m {
            cov[a][b] = total.co[a][b] / dof * sc[a] * sc[b];
            corr[a][b] = if a == b {
                1.0
            } else if sds[a] > 0.0 && sds[b] > 0.0 {
                (cov[a][b] / (sds[a] * sds[b])).clamp(-1.0, 1.0)
            } else {
                0.0
            };
        }
    }
    Ok((means, sds, cov, corr))
}

/// Put a run's results into the first-order report: each measurand's
/// `monte_carlo` object, and the Monte Carlo conformance probability into
/// its conformity assessment.
pub fn attach(model: &Model, report: &mut Report, mc: &McReport) {
    for ((r, m), meas) in report
        .results
        .iter_mut()
        .zip(&mc.results)
        .zip(&model.measurands)
    {
        r.monte_carlo = Some(m.clone());
        if !m.validation.passed {
            // JCGM 101:2008, 8.2: the first-order result is not validated, so
            // the Monte Carlo result is the reported one, everywhere.
            let [lo, hi] = m.symmetric_interval;
            r.reported = incertus_gum::ReportedResult {
                method: incertus_gum::Method::MonteCarlo,
                why: format!(
                    "the first-order result was not validated by propagation of distributions \
                     (JCGM 101:2008, 8.2: the ends of y ± U differ from those of the Monte Carlo \
                     coverage interval by {} and {}, more than the numerical tolerance {})",
                    incertus_gum::rounding::significant_si(m.validation.d_low, 3),
                    incertus_gum::rounding::significant_si(m.validation.d_high, 3),
                    incertus_gum::rounding::significant_si(m.validation.numerical_tolerance, 3)
                ),
                value: m.value,
                standard_uncertainty: m.finite_variance.then_some(m.standard_uncertainty),
                coverage_probability: m.coverage_probability,
                coverage_interval: [lo, hi],
                expanded_uncertainty: 0.5 * (hi - lo),
            };
            if !m.finite_variance {
                r.reported.why.push_str(
                    "; an input is sampled from a distribution without a finite variance (t with \
                     ν ≤ 2 dof, JCGM 101:2008, 6.4.9.4), so the output has no standard uncertainty \
                     and the coverage interval alone is the result",
                );
            }
            if let (Some(spec), Some(count)) = (meas.specification.as_ref(), m.conformance.as_ref())
            {
                if let Ok(c) = incertus_gum::conformity::decide_on_monte_carlo(
                    spec,
                    m.value,
                    m.finite_variance.then_some(m.standard_uncertainty),
                    0.5 * (hi - lo),
                    m.coverage_probability,
                    count.clone(),
                    meas.unit.as_deref(),
                ) {
                    r.conformity = Some(c);
                }
            }
        } else if let (Some(c), Some(spec), Some(count)) = (
            r.conformity.as_mut(),
            meas.specification.as_ref(),
            m.conformance.as_ref(),
        ) {
            incertus_gum::conformity::add_monte_carlo(c, spec, count.clone());
        }
    }
}

/// The stopping rule of JCGM 101:2008, 7.9.4: twice the standard deviation
/// of the sequence means of y, u(y), y_low and y_high each within the
/// numerical tolerance of u(y) from all trials so far, for every measurand.
///
/// u(y) of all trials comes from the sequences' own means and standard
/// deviations (the pooled variance: within-sequence plus between-sequence
/// sums of squares over hM − 1), so a check costs O(h), not a pass over
/// every trial: the procedure stays linear in the number of trials.
fn stable(seq: &[Vec<[f64; 4]>], per: usize, ndig: u32) -> bool {
    for s in seq {
        let h = s.len() as f64;
        let m = per as f64;
        let grand = s.iter().map(|r| r[0]).sum::<f64>() / h;
        let within: f64 = s.iter().map(|r| (m - 1.0) * r[1] * r[1]).sum();
        let between: f64 = s.iter().map(|r| m * (r[0] - grand).powi(2)).sum();
        let u = ((within + between) / (h * m - 1.0)).sqrt();
        let delta = numerical_tolerance(u, ndig);
        for k in 0..4 {
            let vals: Vec<f64> = s.iter().map(|r| r[k]).collect();
            let mean = vals.iter().sum::<f64>() / h;
            let var = vals.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (h - 1.0);
            let sd_of_mean = (var / h).sqrt();
            if 2.0 * sd_of_mean > delta {
                return false;
            }
        }
    }
    true
}

fn handle_non_finite(
    model: &Model,
    engine: &Engine,
    counts: &[usize],
    bad: Option<Bad>,
    n: usize,
    settings: &Settings,
) -> Result<(), McError> {
    if settings.drop_non_finite || counts.iter().all(|&c| c == 0) {
        return Ok(());
    }
    let bad = bad.expect("a non-finite count has a first trial");
    let j = bad.measurand;
    let at: Vec<String> = model
        .inputs
        .iter()
        .zip(&bad.inputs)
        .map(|(i, v)| format!("{} = {v}", i.name))
        .collect();
    let why = engine
        .tape
        .explain_point(j, &bad.inputs)
        .err()
        .map(|e| format!(" ({})", e.message))
        .unwrap_or_default();
    Err(McError::new(McErrorKind::NonFinite, format!(
        "{} of {n} trials gave a value of `{}` that is not a finite number{why}; the first is trial {} \
         at {}. The model is not defined everywhere the input distributions reach: check the model \
         and the distributions, or rerun discarding such trials (`Settings::drop_non_finite`; the \
         report then states how many)",
        counts[j],
        model.measurands[j].name,
        bad.trial,
        at.join(", ")
    )))
}
