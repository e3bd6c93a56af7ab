//! Summaries of Monte Carlo trials (JCGM 101:2008, 7.5 to 7.7): the mean and
//! standard deviation (compensated sums over fixed chunks, so that the
//! result does not depend on the thread count), the probabilistically
//! symmetric and the shortest coverage intervals from the sorted values, a
//! histogram, and an LSD radix sort of `f64` (the sort dominates the cost of
//! a run with numpy-style comparison sorts; radix sorting is O(n)).

use rayon::prelude::*;

const CHUNK: usize = 1 << 16;

/// Neumaier-compensated sum.
pub fn sum(xs: impl Iterator<Item = f64>) -> f64 {
    let mut s = 0.0f64;
    let mut c = 0.0f64;
    for x in xs {
        let t = s + x;
        if s.abs() >= x.abs() {
            c += (s - t) + x;
        } else {
            c += (x - t) + s;
        }
        s = t;
    }
    s + c
}

/// Compensated sum of `f` over fixed chunks, combined in order: the same
/// result for any number of threads.
fn chunked_sum(v: &[f64], f: impl Fn(f64) -> f64 + Sync) -> f64 {
    let partial: Vec<f64> = v
        .par_chunks(CHUNK)
        .map(|c| sum(c.iter().map(|&x| f(x))))
        .collect();
    sum(partial.into_iter())
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
    (chunked_sum(v, |x| (x - mean) * (x - mean)) / (v.len() - 1) as f64).sqrt()
}

/// Covariance of two sets of trials taken together.
pub fn covariance(a: &[f64], b: &[f64], ma: f64, mb: f64) -> f64 {
    let partial: Vec<f64> = a
        .par_chunks(CHUNK)
        .zip(b.par_chunks(CHUNK))
        .map(|(x, y)| sum(x.iter().zip(y).map(|(p, q)| (p - ma) * (q - mb))))
        .collect();
    sum(partial.into_iter()) / (a.len().max(2) - 1) as f64
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

/// Histogram counts over `bins` equal bins between two quantiles (the
/// 0.05 % and 99.95 % points, so that a few extreme trials do not squash
/// the picture); values outside are counted separately.
#[derive(Clone, Debug, serde::Serialize)]
pub struct Histogram {
    pub edges: Vec<f64>,
    pub counts: Vec<u64>,
    pub below: u64,
    pub above: u64,
}

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
