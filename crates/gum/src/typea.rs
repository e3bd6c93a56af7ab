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

/// Arithmetic mean q̄ (JCGM 100:2008, 4.2.1).
pub fn mean(q: &[f64]) -> f64 {
    let m = sum(q.iter().copied()) / q.len() as f64;
    // One correction step: the mean of the residuals.
    m + sum(q.iter().map(|x| x - m)) / q.len() as f64
}

/// Experimental standard deviation s(q_k), n − 1 in the denominator
/// (JCGM 100:2008, 4.2.2).
pub fn std_dev(q: &[f64]) -> f64 {
    covariance(q, q).sqrt()
}

/// Experimental covariance s(q, r) of two series taken in pairs
/// (JCGM 100:2008, C.3.4): Σ(q_k − q̄)(r_k − r̄)/(n − 1).
pub fn covariance(q: &[f64], r: &[f64]) -> f64 {
    let (mq, mr) = (mean(q), mean(r));
    sum(q.iter().zip(r).map(|(a, b)| (a - mq) * (b - mr))) / (q.len() as f64 - 1.0)
}

/// Correlation coefficient of the two means, r(q̄, r̄) = s(q, r)/(s(q) s(r))
/// (JCGM 100:2008, 5.2.3 and H.2.3); 0 when either series does not vary.
pub fn correlation(q: &[f64], r: &[f64]) -> f64 {
    let sq = std_dev(q);
    let sr = std_dev(r);
    if sq == 0.0 || sr == 0.0 {
        return 0.0;
    }
    (covariance(q, r) / (sq * sr)).clamp(-1.0, 1.0)
}
