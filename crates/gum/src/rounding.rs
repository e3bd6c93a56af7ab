//! Rounding of reported results (JCGM 100:2008, 7.2.2, 7.2.4 and 7.2.6):
//! the uncertainty to a given number of significant digits (two by default),
//! the estimate to the same decimal place, in concise notation `1.2345(67)`
//! or as `1.2345 ± 0.0067`.
//!
//! Very large or small numbers (and uncertainties of 100 or more at two
//! digits) are written with a common power of ten chosen as a multiple of
//! three, `(1.6180 ± 0.0034)e-30`, so that the digits stay readable.

/// A result written for a report.
#[derive(Clone, Debug, PartialEq)]
pub struct Written {
    /// The rounded estimate, without the power of ten.
    pub value: String,
    /// The rounded uncertainty, without the power of ten.
    pub uncertainty: String,
    /// The power of ten both are multiplied by, if any.
    pub exponent: Option<i32>,
    /// `value(digits)`, e.g. `1.2345(67)` or `1.2345(67)e-30`.
    pub concise: String,
    /// `value ± uncertainty`, e.g. `1.2345 ± 0.0067` or `(1.2345 ± 0.0067)e-30`.
    pub plus_minus: String,
}

/// Decimal exponent of the last digit kept when `u` is rounded to `digits`
/// significant digits, and the rounded value.
pub fn round_to_digits(u: f64, digits: u32) -> (f64, i32) {
    let digits = digits.clamp(1, 6) as i32;
    if u == 0.0 || !u.is_finite() {
        return (u, 0);
    }
    let mut e = u.abs().log10().floor() as i32 - (digits - 1);
    let mut r = (u / pow10(e)).round();
    if r >= 10f64.powi(digits) {
        // 9.96 to two digits is 10, not 10.0.
        e += 1;
        r = (u / pow10(e)).round();
    }
    (r * pow10(e), e)
}

fn pow10(e: i32) -> f64 {
    10f64.powi(e)
}

/// Write `value` with uncertainty `u` rounded to `digits` significant digits.
///
/// ```
/// use incertus_gum::rounding::write;
/// let w = write(10.000_025_3, 0.000_029_3, 2);
/// assert_eq!(w.concise, "10.000025(29)");
/// assert_eq!(w.plus_minus, "10.000025 ± 0.000029");
/// let w = write(1.618_03e-30, 3.4e-33, 2);
/// assert_eq!(w.plus_minus, "(1.6180 ± 0.0034)e-30");
/// ```
pub fn write(value: f64, u: f64, digits: u32) -> Written {
    if u == 0.0 || !u.is_finite() {
        let v = format!("{}", value);
        return Written {
            value: v.clone(),
            uncertainty: "0".into(),
            exponent: None,
            concise: v.clone(),
            plus_minus: format!("{v} ± 0"),
        };
    }
    let (_, e) = round_to_digits(u, digits);
    let big = value.abs().max(u.abs());
    let mag = big.log10().floor() as i32;
    let exponent = if e > 0 || !(-4..6).contains(&mag) {
        Some(3 * mag.div_euclid(3))
    } else {
        None
    };
    let shift = exponent.unwrap_or(0);
    let (us, es) = round_to_digits(u / pow10(shift), digits);
    let decimals = (-es).max(0) as usize;
    let vs = ((value / pow10(shift)) / pow10(es)).round() * pow10(es);
    let value_text = format!("{vs:.decimals$}");
    let u_text = format!("{us:.decimals$}");
    let digits_text = format!("{}", (us / pow10(es)).round() as i64);
    let suffix = exponent.map(|x| format!("e{x}")).unwrap_or_default();
    let concise = format!("{value_text}({digits_text}){suffix}");
    let plus_minus = match exponent {
        Some(x) => format!("({value_text} ± {u_text})e{x}"),
        None => format!("{value_text} ± {u_text}"),
    };
    Written {
        value: value_text,
        uncertainty: u_text,
        exponent,
        concise,
        plus_minus,
    }
}

/// A number to `sig` significant digits for tables (no trailing exponent
/// games: plain where readable, scientific otherwise).
pub fn significant(v: f64, sig: usize) -> String {
    if v == 0.0 {
        return "0".into();
    }
    if !v.is_finite() {
        return format!("{v}");
    }
    let mag = v.abs().log10().floor() as i32;
    if (-4..7).contains(&mag) {
        let decimals = (sig as i32 - 1 - mag).max(0) as usize;
        let s = format!("{v:.decimals$}");
        trim_zeros(&s)
    } else {
        let s = format!("{:.*e}", sig.saturating_sub(1), v);
        // 1.2300e-5 -> 1.23e-5
        match s.split_once('e') {
            Some((m, x)) => format!("{}e{}", trim_zeros(m), x),
            None => s,
        }
    }
}

fn trim_zeros(s: &str) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s.to_string()
    }
}
