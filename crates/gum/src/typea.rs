//! Type A evaluation from observations (JCGM 100:2008, 4.2): the mean (4.2.1),
//! the experimental standard deviation (4.2.2), and the covariance of two
//! means from observations taken in pairs (5.2.3, C.3.4). Sums are
//! compensated (Neumaier) and deviations taken from the mean, so series with
//! a large offset and a small spread lose no digits.

/// Compensated sum.
pub fn sum(xs: impl IntoIterator<Item = f64>) -> f64 {
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

/// A power of two near |x| (1 for 0 or a value that is not finite), kept
/// within 2^±1000 so that its reciprocal is finite too: dividing by it is
/// exact, and it keeps sums and squares of values near 1e-300 or 1e300
/// from under- or overflowing. Used by the Type A statistics here and the
/// Monte Carlo moments.
pub fn power_of_two_near(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        1.0
    } else {
        2f64.powi((x.abs().log2().floor() as i32).clamp(-1000, 1000))
    }
}

/// A power of two near the largest magnitude of `q`.
fn scale_of(q: &[f64]) -> f64 {
    power_of_two_near(q.iter().fold(0.0f64, |a, x| a.max(x.abs())))
}

fn scaled(q: &[f64], s: f64) -> Vec<f64> {
    q.iter().map(|x| x / s).collect()
}

fn mean_unscaled(q: &[f64]) -> f64 {
    let m = sum(q.iter().copied()) / q.len() as f64;
    // One correction step: the mean of the residuals.
    m + sum(q.iter().map(|x| x - m)) / q.len() as f64
}

fn covariance_unscaled(q: &[f64], r: &[f64]) -> f64 {
    let (mq, mr) = (mean_unscaled(q), mean_unscaled(r));
    sum(q.iter().zip(r).map(|(a, b)| (a - mq) * (b - mr))) / (q.len() as f64 - 1.0)
}

/// Arithmetic mean q̄ (JCGM 100:2008, 4.2.1).
pub fn mean(q: &[f64]) -> f64 {
    let s = scale_of(q);
    s * mean_unscaled(&scaled(q, s))
}

/// Experimental standard deviation s(q_k), n − 1 in the denominator
/// (JCGM 100:2008, 4.2.2), computed on the series scaled by a power of two
/// so that observations up to the largest `f64` give a finite s.
pub fn std_dev(q: &[f64]) -> f64 {
    let s = scale_of(q);
    let x = scaled(q, s);
    s * covariance_unscaled(&x, &x).max(0.0).sqrt()
}

/// Experimental covariance s(q, r) of two series taken in pairs
/// (JCGM 100:2008, C.3.4): Σ(q_k − q̄)(r_k − r̄)/(n − 1). It may overflow
/// when the product of the spreads exceeds the `f64` range; the
/// standard deviations and the correlation never do.
pub fn covariance(q: &[f64], r: &[f64]) -> f64 {
    let (sq, sr) = (scale_of(q), scale_of(r));
    sq * sr * covariance_unscaled(&scaled(q, sq), &scaled(r, sr))
}

/// Correlation coefficient of the two means, r(q̄, r̄) = s(q, r)/(s(q) s(r))
/// (JCGM 100:2008, 5.2.3 and H.2.3); 0 when either series does not vary.
pub fn correlation(q: &[f64], r: &[f64]) -> f64 {
    let (x, y) = (scaled(q, scale_of(q)), scaled(r, scale_of(r)));
    let sx = covariance_unscaled(&x, &x).max(0.0).sqrt();
    let sy = covariance_unscaled(&y, &y).max(0.0).sqrt();
    if sx == 0.0 || sy == 0.0 {
        return 0.0;
    }
    (covariance_unscaled(&x, &y) / (sx * sy)).clamp(-1.0, 1.0)
}
