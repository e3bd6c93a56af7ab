//! Summaries of Monte Carlo trials (JCGM 101:2008, 7.5 to 7.7): the mean and
//! standard deviation (compensated sums over fixed chunks, so that the
//! result does not depend on the thread count), the probabilistically
//! symmetric and the shortest coverage intervals from the sorted values, a
//! histogram, and an LSD radix sort of `f64` (the sort dominates the cost of
//! a run with numpy-style comparison sorts; radix sorting is O(n)).

use rayon::prelude::*;

const CHUNK: usize = 1 << 16;

/// Neumaier-compensated sum (the one of the Type A evaluation).
pub use incertus_gum::typea::sum;

/// Mean of a block, summed as deviations from its first value in four
/// interleaved accumulators: the shift removes any large offset, so the
/// plain sums of values of the size of the spread lose nothing that
/// matters, and the loop runs at the speed of the memory.
pub fn shifted_mean(v: &[f64], scale: f64) -> f64 {
    let Some(&x0) = v.first() else { return 0.0 };
    // `scale` is a power of two within 2^±1000: its reciprocal is exact.
    let inv = 1.0 / scale;
    let mut acc = [0.0f64; 4];
    let chunks = v.chunks_exact(4);
    let tail: f64 = chunks.remainder().iter().map(|x| (x - x0) * inv).sum();
    for c in chunks {
        for k in 0..4 {
            acc[k] += (c[k] - x0) * inv;
        }
    }
    x0 + scale * ((acc[0] + acc[1] + acc[2] + acc[3] + tail) / v.len() as f64)
}

/// Σ (a_i − ma)(b_i − mb) over a block, in four interleaved accumulators
/// (the deviations are already centred, so plain sums are accurate).
pub fn co_moment(a: &[f64], b: &[f64], ma: f64, mb: f64, sa: f64, sb: f64) -> f64 {
    // Powers of two within 2^±1000: the reciprocals are exact.
    let (ia, ib) = (1.0 / sa, 1.0 / sb);
    let mut acc = [0.0f64; 4];
    let (ca, cb) = (a.chunks_exact(4), b.chunks_exact(4));
    let tail: f64 = ca
        .remainder()
        .iter()
        .zip(cb.remainder())
        .map(|(x, y)| ((x - ma) * ia) * ((y - mb) * ib))
        .sum();
    for (x, y) in ca.zip(cb) {
        for k in 0..4 {
            acc[k] += ((x[k] - ma) * ia) * ((y[k] - mb) * ib);
        }
    }
    acc[0] + acc[1] + acc[2] + acc[3] + tail
}

/// Compensated sum of `f` over fixed chunks, combined in order: the same
/// result for any number of threads.
fn chunked_sum(v: &[f64], f: impl Fn(f64) -> f64 + Sync) -> f64 {
    let partial: Vec<f64> = v
        .par_chunks(CHUNK)
        .map(|c| sum(c.iter().map(|&x| f(x))))
        .collect();
    sum(partial)
}

/// Mean of the trials (JCGM 101:2008, 7.6, eq. 12).
pub fn mean(v: &[f64]) -> f64 {
    chunked_sum(v, |x| x) / v.len() as f64
}

/// Standard deviation of the trials about their mean, M − 1 in the
/// denominator (JCGM 101:2008, 7.6, eq. 13).
pub fn std_dev(v: &[f64], mean: f64) -> f64 {
    if v.len() < 2 {
        return 0.0;
    }
    // Deviations divided by a power of two near the largest, so that
    // values near 1e307 do not overflow when squared.
    let s = incertus_gum::typea::power_of_two_near(
        v.iter().fold(0.0f64, |m, x| m.max((x - mean).abs())),
    );
    s * (chunked_sum(v, |x| ((x - mean) / s) * ((x - mean) / s)) / (v.len() - 1) as f64).sqrt()
}

/// Covariance of two sets of trials taken together.
pub fn covariance(a: &[f64], b: &[f64], ma: f64, mb: f64) -> f64 {
    let partial: Vec<f64> = a
        .par_chunks(CHUNK)
        .zip(b.par_chunks(CHUNK))
        .map(|(x, y)| sum(x.iter().zip(y).map(|(p, q)| (p - ma) * (q - mb))))
        .collect();
    sum(partial) / (a.len().max(2) - 1) as f64
}

/// q = pM if that is a whole number, else ⌊pM + ½⌋ (JCGM 101:2008, 7.7.1).
pub fn interval_count(m: usize, p: f64) -> usize {
    let pm = p * m as f64;
    let q = if pm.fract() == 0.0 {
        pm
    } else {
        (pm + 0.5).floor()
    };
    (q as usize).min(m.saturating_sub(1))
}

/// The probabilistically symmetric 100p % coverage interval from sorted
/// values: [y_(r), y_(r+q)] with r = (M − q)/2, or (M − q + 1)/2 when that is
/// not whole (JCGM 101:2008, 7.7.1; 1-based indices).
pub fn symmetric_interval(sorted: &[f64], p: f64) -> [f64; 2] {
    let m = sorted.len();
    let q = interval_count(m, p);
    // (M − q)/2 when whole, else (M − q + 1)/2: that is ⌈(M − q)/2⌉.
    let r = (m - q).div_ceil(2);
    let r = r.max(1);
    [sorted[r - 1], sorted[(r + q - 1).min(m - 1)]]
}

/// The shortest 100p % coverage interval: min over r of y_(r+q) − y_(r)
/// (JCGM 101:2008, 7.7.2). Ties go to the lowest r.
pub fn shortest_interval(sorted: &[f64], p: f64) -> [f64; 2] {
    let m = sorted.len();
    let q = interval_count(m, p);
    let mut best = (f64::INFINITY, 0usize);
    for j in 0..m - q {
        let w = sorted[j + q] - sorted[j];
        if w < best.0 {
            best = (w, j);
        }
    }
    [sorted[best.1], sorted[best.1 + q]]
}

pub use incertus_gum::distributions::Histogram;

/// The histogram of sorted trials (see [`Histogram`]).
pub fn histogram(sorted: &[f64], bins: usize) -> Histogram {
    let m = sorted.len();
    let lo = sorted[((m as f64 * 0.0005) as usize).min(m - 1)];
    let hi = sorted[((m as f64 * 0.9995) as usize).min(m - 1)];
    let (lo, hi) = if hi > lo {
        (lo, hi)
    } else {
        (lo - 0.5, lo + 0.5)
    };
    let w = (hi - lo) / bins as f64;
    let edges: Vec<f64> = (0..=bins).map(|i| lo + w * i as f64).collect();
    let mut counts = vec![0u64; bins];
    let (mut below, mut above) = (0, 0);
    for &v in sorted {
        if v < lo {
            below += 1;
        } else if v > hi {
            above += 1;
        } else {
            let b = (((v - lo) / w) as usize).min(bins - 1);
            counts[b] += 1;
        }
    }
    Histogram {
        edges,
        counts,
        below,
        above,
    }
}

/// Order-preserving map of an `f64` to a `u64` (NaN must not occur).
#[inline]
fn key(x: f64) -> u64 {
    let b = x.to_bits();
    if b >> 63 == 1 {
        !b
    } else {
        b | (1 << 63)
    }
}

#[inline]
fn unkey(k: u64) -> f64 {
    let b = if k >> 63 == 1 { k & !(1 << 63) } else { !k };
    f64::from_bits(b)
}

const BITS: usize = 11;
const BUCKETS: usize = 1 << BITS;
const DIGITS: usize = 6;

/// LSD radix sort of keys held as `f64` bit patterns (never used as
/// numbers), 11-bit digits, passes skipped where every key has the same
/// digit. The sorted keys end in `v`.
fn radix_keys(v: &mut [f64], scratch: &mut [f64]) {
    let n = v.len();
    let mut hist = vec![[0usize; BUCKETS]; DIGITS];
    for x in v.iter() {
        let k = x.to_bits();
        for (d, h) in hist.iter_mut().enumerate() {
            h[((k >> (d * BITS)) as usize) & (BUCKETS - 1)] += 1;
        }
    }
    let mut in_v = true;
    for (d, h) in hist.iter().enumerate() {
        if h.contains(&n) {
            continue;
        }
        let mut offset = [0usize; BUCKETS];
        let mut total = 0;
        for (o, &c) in offset.iter_mut().zip(h.iter()) {
            *o = total;
            total += c;
        }
        let shift = d * BITS;
        let (src, dst): (&[f64], &mut [f64]) = if in_v {
            (&*v, &mut *scratch)
        } else {
            (&*scratch, &mut *v)
        };
        for x in src {
            let digit = ((x.to_bits() >> shift) as usize) & (BUCKETS - 1);
            dst[offset[digit]] = *x;
            offset[digit] += 1;
        }
        in_v = !in_v;
    }
    if !in_v {
        v.copy_from_slice(scratch);
    }
}

/// Merge two sorted runs of keys into `out`.
fn merge_keys(a: &[f64], b: &[f64], out: &mut [f64]) {
    let (mut i, mut j) = (0, 0);
    for o in out.iter_mut() {
        let take_a = j >= b.len() || (i < a.len() && a[i].to_bits() <= b[j].to_bits());
        if take_a {
            *o = a[i];
            i += 1;
        } else {
            *o = b[j];
            j += 1;
        }
    }
}

/// Sort finite values ascending: the values become order-preserving keys,
/// equal chunks are radix-sorted in parallel, and the sorted chunks are
/// merged pairwise. The result is the same for any number of threads (a
/// sort has one answer). `scratch` is resized to `v.len()`.
pub fn radix_sort(v: &mut [f64], scratch: &mut Vec<f64>) {
    let n = v.len();
    if n < 2 {
        return;
    }
    scratch.clear();
    scratch.resize(n, 0.0);
    v.par_iter_mut().for_each(|x| *x = f64::from_bits(key(*x)));
    let parts = rayon::current_num_threads()
        .clamp(1, 64)
        .min(n.div_ceil(1 << 16))
        .max(1);
    let chunk = n.div_ceil(parts);
    v.par_chunks_mut(chunk)
        .zip(scratch.par_chunks_mut(chunk))
        .for_each(|(c, s)| radix_keys(c, s));
    // Pairwise merges, alternating between v and scratch.
    let mut width = chunk;
    let mut in_v = true;
    while width < n {
        {
            let (src, dst): (&[f64], &mut [f64]) = if in_v {
                (&*v, &mut scratch[..])
            } else {
                (&scratch[..], &mut *v)
            };
            src.par_chunks(2 * width)
                .zip(dst.par_chunks_mut(2 * width))
                .for_each(|(s, d)| {
                    let mid = width.min(s.len());
                    merge_keys(&s[..mid], &s[mid..], d);
                });
        }
        in_v = !in_v;
        width *= 2;
    }
    if in_v {
        v.par_iter_mut().for_each(|x| *x = unkey(x.to_bits()));
    } else {
        v.par_iter_mut()
            .zip(scratch.par_iter())
            .for_each(|(x, s)| *x = unkey(s.to_bits()));
    }
}

/// Both coverage intervals and the histogram of a set of trials.
#[derive(Clone, Debug)]
pub struct Summary {
    /// The probabilistically symmetric coverage interval.
    pub symmetric: [f64; 2],
    /// The shortest coverage interval.
    pub shortest: [f64; 2],
    /// The histogram for plots.
    pub histogram: Histogram,
    /// Whether the values had to be sorted in full (see [`summarize`]).
    pub sorted_in_full: bool,
}

const FINE: usize = 1 << 14;

/// The coverage intervals of JCGM 101:2008, 7.7 without sorting all trials.
///
/// The order statistics the intervals need are found exactly, in O(M):
/// one pass counts the values in 16 384 equal bins between their minimum
/// and maximum (the bin index is a monotone function of the value, so all
/// values of a lower bin rank below those of a higher one). From the
/// cumulative counts every rank r has a known bin; the width
/// y_(r+q) − y_(r) of each candidate shortest interval is bounded above and
/// below by the bins' edges (widened by a bin, so that rounding in the bin
/// index cannot matter), which rules out all but a few bins. A second pass
/// gathers the values of the remaining bins (and of the bins holding the
/// symmetric interval's ends), which are sorted, and the intervals are
/// computed from exact order statistics: the result is identical to
/// sorting every value (a property test holds this). When the candidates
/// are many (heavy tails squeeze most values into few bins), all values are
/// sorted instead. The histogram for plots is the fine histogram regrouped
/// into `bins` bins between the 0.05 % and 99.95 % points. `range` is the
/// least and greatest value when the caller knows them.
pub fn summarize(v: &mut [f64], p: f64, bins: usize, range: Option<(f64, f64)>) -> Summary {
    let m = v.len();
    let q = interval_count(m, p);
    let (lo, hi) = range.unwrap_or_else(|| {
        v.par_chunks(CHUNK)
            .map(|c| {
                c.iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                        (a.min(x), b.max(x))
                    })
            })
            .reduce(
                || (f64::INFINITY, f64::NEG_INFINITY),
                |(a, b), (c, d)| (a.min(c), b.max(d)),
            )
    });
    let scale = FINE as f64 / (hi - lo);
    if hi <= lo || !scale.is_finite() || scale == 0.0 || m < 4 * FINE {
        return summarize_sorted(v, p, bins);
    }
    let width = 1.0 / scale;
    let bin = |x: f64| (((x - lo) * scale) as usize).min(FINE - 1);
    // Pass 1: counts per bin, one table per thread-sized part.
    let part = m.div_ceil(rayon::current_num_threads().max(1)).max(CHUNK);
    let count: Vec<u32> = v
        .par_chunks(part)
        .map(|c| {
            let mut acc = vec![0u32; FINE];
            for &x in c {
                acc[bin(x)] += 1;
            }
            acc
        })
        .reduce(
            || vec![0u32; FINE],
            |mut a, o| {
                for (x, y) in a.iter_mut().zip(o) {
                    *x += y;
                }
                a
            },
        );
    let mut cum = vec![0usize; FINE + 1];
    for k in 0..FINE {
        cum[k + 1] = cum[k] + count[k] as usize;
    }
    let bin_of_rank = |i: usize| -> usize { cum.partition_point(|&c| c <= i) - 1 };
    // Conservative value bounds of bin k.
    let lower_edge = |k: usize| lo + (k as f64 - 1.0) * width;
    let upper_edge = |k: usize| lo + (k as f64 + 2.0) * width;
    let mut wanted = vec![false; FINE];
    // Symmetric interval ends: 1-based ranks r and r + q.
    let r = (m - q).div_ceil(2).max(1);
    let sym_ranks = [r - 1, (r + q - 1).min(m - 1)];
    for &i in &sym_ranks {
        wanted[bin_of_rank(i)] = true;
    }
    // Shortest interval: segments of j (0-based) over which the bins of
    // j and j + q stay the same, with bounds on the width y_(j+q) − y_(j).
    let mut segments: Vec<(usize, usize, usize, usize, f64)> = Vec::new(); // (j0, j1, bin j, bin j+q, lower)
    let mut best_upper = f64::INFINITY;
    let mut j = 0;
    while j < m - q {
        let (ba, bb) = (bin_of_rank(j), bin_of_rank(j + q));
        let j1 = cum[ba + 1].min(cum[bb + 1] - q).min(m - q);
        let lower = lower_edge(bb) - upper_edge(ba);
        let upper = upper_edge(bb) - lower_edge(ba);
        best_upper = best_upper.min(upper);
        segments.push((j, j1, ba, bb, lower));
        j = j1;
    }
    segments.retain(|s| s.4 <= best_upper);
    let mut candidates = 0usize;
    for s in &segments {
        candidates += s.1 - s.0;
        wanted[s.2] = true;
        wanted[s.3] = true;
    }
    let gathered_count: usize = (0..FINE)
        .filter(|&k| wanted[k])
        .map(|k| count[k] as usize)
        .sum();
    if gathered_count > m / 4 || candidates > m / 4 {
        return summarize_sorted(v, p, bins);
    }
    // Pass 2: gather the wanted bins' values (in the order of the trials)
    // and sort them.
    let mut g: Vec<f64> = v
        .par_chunks(CHUNK)
        .map(|c| {
            c.iter()
                .copied()
                .filter(|&x| wanted[bin(x)])
                .collect::<Vec<f64>>()
        })
        .collect::<Vec<_>>()
        .concat();
    g.sort_unstable_by(f64::total_cmp);
    let mut offset = vec![usize::MAX; FINE];
    let mut o = 0;
    for k in 0..FINE {
        if wanted[k] {
            offset[k] = o;
            o += count[k] as usize;
        }
    }
    let value = |i: usize| -> f64 {
        let k = bin_of_rank(i);
        g[offset[k] + (i - cum[k])]
    };
    let symmetric = [value(sym_ranks[0]), value(sym_ranks[1])];
    let mut best = (f64::INFINITY, 0usize);
    for s in &segments {
        for j in s.0..s.1 {
            let w = value(j + q) - value(j);
            if w < best.0 {
                best = (w, j);
            }
        }
    }
    let shortest = [value(best.1), value(best.1 + q)];
    Summary {
        symmetric,
        shortest,
        histogram: fine_histogram(&count, &cum, (lo, hi), width, m, bins),
        sorted_in_full: false,
    }
}

/// The plot histogram from the fine bins: regrouped into `bins` between the
/// 0.05 % and 99.95 % points (by bin centre), the rest counted below and
/// above.
fn fine_histogram(
    count: &[u32],
    cum: &[usize],
    (lo, hi): (f64, f64),
    width: f64,
    m: usize,
    bins: usize,
) -> Histogram {
    let bin_of_rank = |i: usize| -> usize { cum.partition_point(|&c| c <= i) - 1 };
    let centre = |k: usize| lo + (k as f64 + 0.5) * width;
    let qlo = centre(bin_of_rank(((m as f64 * 0.0005) as usize).min(m - 1)));
    let qhi = centre(bin_of_rank(((m as f64 * 0.9995) as usize).min(m - 1)));
    let (qlo, qhi) = if qhi > qlo { (qlo, qhi) } else { (lo, hi) };
    let w = (qhi - qlo) / bins as f64;
    let edges: Vec<f64> = (0..=bins).map(|i| qlo + w * i as f64).collect();
    let mut counts = vec![0u64; bins];
    let (mut below, mut above) = (0u64, 0u64);
    for (k, &c) in count.iter().enumerate() {
        let x = centre(k);
        if c == 0 {
            continue;
        } else if x < qlo {
            below += c as u64;
        } else if x > qhi {
            above += c as u64;
        } else {
            counts[(((x - qlo) / w) as usize).min(bins - 1)] += c as u64;
        }
    }
    Histogram {
        edges,
        counts,
        below,
        above,
    }
}

/// The same summary by sorting every value (the fallback, and the
/// reference the fast path is tested against).
pub fn summarize_sorted(v: &mut [f64], p: f64, bins: usize) -> Summary {
    let mut scratch = Vec::new();
    radix_sort(v, &mut scratch);
    Summary {
        symmetric: symmetric_interval(v, p),
        shortest: shortest_interval(v, p),
        histogram: histogram(v, bins),
        sorted_in_full: true,
    }
}
