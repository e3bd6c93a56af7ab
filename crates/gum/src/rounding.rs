//! Rounding of reported results (JCGM 100:2008, 7.2.2, 7.2.4 and 7.2.6):
//! the uncertainty to a given number of significant digits (two by default),
//! the estimate to the same decimal place, in concise notation `1.2345(67)`
//! or as `1.2345 ± 0.0067`.
//!
//! Rounding works on the decimal digits of the shortest representation of
//! each `f64` (what a person reads as the number), never on products with
//! powers of ten, so subnormal and huge values round as exactly as small
//! ones. A tie (0.25 to one digit) goes away from zero, so an uncertainty
//! is never rounded down at a tie (common practice, no published source;
//! JCGM 100:2008, 7.2.6 allows rounding uncertainties up). The digits in parentheses are always the uncertainty in units of
//! the last digit shown: when that digit would lie left of the units digit
//! (500 ± 120), a power of ten is factored out, `0.50(12) × 10³`, as the SI
//! Brochure (9th ed., 5.4) writes it. Very large or small numbers get a
//! common power of ten chosen as a multiple of three, `(1.6180 ± 0.0034) ×
//! 10⁻³⁰`.
//!
//! An estimate is never shown with more than [`MAX_SIGNIFICANT`] significant
//! digits (what an `f64` holds, DBL_DIG); an uncertainty below that
//! resolution is rounded up to it and [`Written::below_resolution`] says so.

/// The most significant digits an estimate is shown with (an `f64` holds
/// 15 decimal digits exactly, C's DBL_DIG).
pub const MAX_SIGNIFICANT: i32 = 15;

/// A result written for a report.
#[derive(Clone, Debug, PartialEq)]
pub struct Written {
    /// The rounded estimate, without the power of ten.
    pub value: String,
    /// The rounded uncertainty, without the power of ten.
    pub uncertainty: String,
    /// The power of ten both are multiplied by, if any.
    pub exponent: Option<i32>,
    /// `value(digits)`, e.g. `1.2345(67)` or `1.2345(67) × 10⁻³⁰`.
    pub concise: String,
    /// `value ± uncertainty`, e.g. `1.2345 ± 0.0067` or
    /// `(1.2345 ± 0.0067) × 10⁻³⁰`.
    pub plus_minus: String,
    /// The uncertainty lies below the resolution of the estimate's
    /// [`MAX_SIGNIFICANT`] digits and was rounded up to it.
    pub below_resolution: bool,
    /// The power of ten of the last digit shown (before the common power).
    pub place: i32,
}

impl Written {
    /// `text` followed by this result's power of ten, if any
    /// (`0.50` → `0.50 × 10³`).
    pub fn with_power(&self, text: &str) -> String {
        match self.exponent {
            Some(x) => format!("{text} × {}", power_of_ten(x)),
            None => text.to_string(),
        }
    }
}

/// `10³`, `10⁻³⁰`: a power of ten as the SI Brochure prints it.
pub fn power_of_ten(x: i32) -> String {
    const SUP: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut s = String::from("10");
    if x < 0 {
        s.push('⁻');
    }
    for c in x.unsigned_abs().to_string().chars() {
        s.push(SUP[c.to_digit(10).expect("decimal digits") as usize]);
    }
    s
}

/// A finite decimal number: `sign · digits × 10^place`, `digits` without
/// leading zeros (empty for zero).
#[derive(Clone, Debug, PartialEq)]
struct Decimal {
    negative: bool,
    digits: Vec<u8>,
    /// The power of ten of the last digit.
    place: i32,
}

impl Decimal {
    /// The shortest decimal form of a finite `f64` (the one Rust prints,
    /// which reads back to the same `f64`).
    fn of(x: f64) -> Decimal {
        let text = format!("{:e}", x.abs());
        let (mantissa, exponent) = text.split_once('e').expect("`{:e}` writes an exponent");
        let exponent: i32 = exponent.parse().expect("`{:e}` writes an integer exponent");
        let digits: Vec<u8> = mantissa
            .bytes()
            .filter(u8::is_ascii_digit)
            .map(|b| b - b'0')
            .collect();
        let mut d = Decimal {
            negative: x.is_sign_negative(),
            place: exponent - (digits.len() as i32 - 1),
            digits,
        };
        d.normalize();
        d
    }

    fn normalize(&mut self) {
        let lead = self.digits.iter().take_while(|&&d| d == 0).count();
        self.digits.drain(..lead);
        if self.digits.is_empty() {
            self.negative = false;
        }
    }

    fn is_zero(&self) -> bool {
        self.digits.is_empty()
    }

    /// Power of ten of the leading digit (`None` for zero).
    fn leading(&self) -> Option<i32> {
        (!self.is_zero()).then(|| self.place + self.digits.len() as i32 - 1)
    }

    /// Rounded to the decimal place `place` (half away from zero on the
    /// shortest decimal form), or up (away from zero) when `up`.
    fn round_at(&self, place: i32, up: bool) -> Decimal {
        if place <= self.place {
            let mut d = self.clone();
            if !d.is_zero() {
                d.digits
                    .extend(std::iter::repeat_n(0, (self.place - place) as usize));
            }
            d.place = place;
            return d;
        }
        let drop = (place - self.place) as usize;
        let keep = self.digits.len().saturating_sub(drop);
        let dropped = &self.digits[keep..];
        // The first dropped digit, when all of them lie right of `place`.
        let first_dropped = if drop > self.digits.len() {
            0
        } else {
            dropped.first().copied().unwrap_or(0)
        };
        let round_up = if up {
            dropped.iter().any(|&d| d != 0)
        } else {
            first_dropped >= 5
        };
        let mut digits: Vec<u8> = self.digits[..keep].to_vec();
        if round_up {
            let mut i = digits.len();
            loop {
                if i == 0 {
                    digits.insert(0, 1);
                    break;
                }
                i -= 1;
                if digits[i] == 9 {
                    digits[i] = 0;
                } else {
                    digits[i] += 1;
                    break;
                }
            }
        }
        let mut d = Decimal {
            negative: self.negative,
            digits,
            place,
        };
        d.normalize();
        d
    }

    /// The digits as an integer text (`"0"` for zero), without sign.
    fn integer_text(&self) -> String {
        if self.is_zero() {
            "0".into()
        } else {
            self.digits.iter().map(|d| char::from(b'0' + d)).collect()
        }
    }

    /// Written as a plain decimal after dividing by `10^shift`, with
    /// exactly `shift − place` decimals (none when that is negative: then
    /// zeros are appended).
    fn text(&self, shift: i32) -> String {
        let p = self.place - shift;
        let mut s = self.integer_text();
        if p >= 0 {
            if !self.is_zero() {
                s.push_str(&"0".repeat(p as usize));
            }
        } else {
            let decimals = (-p) as usize;
            if s.len() <= decimals {
                s = format!("{}{s}", "0".repeat(decimals + 1 - s.len()));
            }
            s.insert(s.len() - decimals, '.');
        }
        if self.negative {
            s.insert(0, '-');
        }
        s
    }

    fn to_f64(&self) -> f64 {
        let t = format!(
            "{}{}e{}",
            if self.negative { "-" } else { "" },
            self.integer_text(),
            self.place
        );
        t.parse().expect("a decimal text parses as f64")
    }
}

/// Decimal exponent of the last digit kept when `u` is rounded to `digits`
/// significant digits, and the rounded value.
///
/// ```
/// use incertus_gum::rounding::round_to_digits;
/// assert_eq!(round_to_digits(0.0346, 2), (0.035, -3));
/// assert_eq!(round_to_digits(9.96, 2), (10.0, 0)); // 10, not 10.0
/// ```
pub fn round_to_digits(u: f64, digits: u32) -> (f64, i32) {
    if u == 0.0 || !u.is_finite() {
        return (u, 0);
    }
    let (r, place) = round_decimal(u, digits);
    (r.to_f64(), place)
}

fn round_decimal(u: f64, digits: u32) -> (Decimal, i32) {
    let digits = digits.clamp(1, 6) as i32;
    let d = Decimal::of(u);
    let lead = d.leading().expect("non-zero");
    let mut place = lead - (digits - 1);
    let mut r = d.round_at(place, false);
    if r.leading() != Some(lead) {
        // 9.96 to two digits is 10, not 10.0.
        place += 1;
        r = r.round_at(place, false);
    }
    (r, place)
}

/// Write `value` with uncertainty `u` rounded to `digits` significant digits.
///
/// ```
/// use incertus_gum::rounding::write;
/// let w = write(10.000_025_3, 0.000_029_3, 2);
/// assert_eq!(w.concise, "10.000025(29)");
/// assert_eq!(w.plus_minus, "10.000025 ± 0.000029");
/// let w = write(1.618_03e-30, 3.4e-33, 2);
/// assert_eq!(w.plus_minus, "(1.6180 ± 0.0034) × 10⁻³⁰");
/// // The last digit of u lies left of the units digit: a power of ten.
/// assert_eq!(write(500.0, 120.0, 2).concise, "0.50(12) × 10³");
/// ```
pub fn write(value: f64, u: f64, digits: u32) -> Written {
    if !value.is_finite() || u == 0.0 || !u.is_finite() {
        let v = significant(value, MAX_SIGNIFICANT as usize);
        let u_text = if u == 0.0 {
            "0".to_string()
        } else {
            format!("{u}")
        };
        return Written {
            value: v.clone(),
            uncertainty: u_text.clone(),
            exponent: None,
            concise: v.clone(),
            plus_minus: format!("{v} ± {u_text}"),
            below_resolution: false,
            place: 0,
        };
    }
    let (mut ur, mut place) = round_decimal(u.abs(), digits);
    let y = Decimal::of(value);
    let mut below_resolution = false;
    if let Some(lead) = y.leading() {
        let finest = lead - (MAX_SIGNIFICANT - 1);
        if place < finest {
            // u below the estimate's resolution: round it up to that place.
            place = finest;
            ur = Decimal::of(u.abs()).round_at(place, true);
            below_resolution = true;
        }
    }
    let mut yr = y.round_at(place, false);
    if let (Some(before), Some(after)) = (y.leading(), yr.leading()) {
        if after > before && after - place + 1 > MAX_SIGNIFICANT {
            // 999…9.5 rounded up gained a digit beyond the resolution.
            place += 1;
            ur = Decimal::of(u.abs()).round_at(place, true);
            yr = y.round_at(place, false);
            below_resolution = true;
        }
    }
    let big = match yr.leading() {
        Some(q) => q.max(ur.leading().expect("u is not zero")),
        None => ur.leading().expect("u is not zero"),
    };
    let exponent = if place > 0 || !(-4..6).contains(&big) {
        let mut shift = 3 * big.div_euclid(3);
        if shift < place {
            shift = 3 * (place + 2).div_euclid(3);
        }
        Some(shift)
    } else {
        None
    };
    let shift = exponent.unwrap_or(0);
    let value_text = yr.text(shift);
    let u_text = ur.text(shift);
    let digits_text = ur.integer_text();
    let power = exponent.map(|x| format!(" × {}", power_of_ten(x)));
    let concise = format!(
        "{value_text}({digits_text}){}",
        power.as_deref().unwrap_or("")
    );
    let plus_minus = match &power {
        Some(p) => format!("({value_text} ± {u_text}){p}"),
        None => format!("{value_text} ± {u_text}"),
    };
    Written {
        value: value_text,
        uncertainty: u_text,
        exponent,
        concise,
        plus_minus,
        below_resolution,
        place,
    }
}

/// `v` rounded to the decimal place of `like` and written with its power
/// of ten, so that interval ends read beside the result
/// (`write_like(0.75e-3, &write(0.5e-3, 1e-5, 2))` → `0.750 × 10⁻³`).
///
/// ```
/// use incertus_gum::rounding::{write, write_like};
/// let w = write(36e-6, 27e-6, 2);
/// assert_eq!(write_like(1.4e-6, &w), "1 × 10⁻⁶");
/// assert_eq!(write_like(100.5e-6, &w), "101 × 10⁻⁶");
/// ```
pub fn write_like(v: f64, like: &Written) -> String {
    if !v.is_finite() || like.uncertainty == "0" {
        return significant(v, MAX_SIGNIFICANT as usize);
    }
    let shift = like.exponent.unwrap_or(0);
    let d = Decimal::of(v).round_at(like.place, false);
    like.with_power(&d.text(shift))
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
    let sig = sig.clamp(1, 17);
    // Round first, so that the magnitude is that of the rounded number.
    let s = format!("{:.*e}", sig - 1, v);
    let (m, x) = s.split_once('e').expect("`{:e}` writes an exponent");
    let mag: i32 = x.parse().expect("an integer exponent");
    if (-4..7).contains(&mag) {
        let decimals = (sig as i32 - 1 - mag).max(0) as usize;
        let s = format!("{v:.decimals$}");
        trim_zeros(&s)
    } else {
        // 1.2300e-5 -> 1.23e-5
        format!("{}e{}", trim_zeros(m), x)
    }
}

/// [`significant`] for people: a power of ten as the SI Brochure writes it
/// (`7.42868 × 10⁻⁷`, `6.02 × 10²³`) instead of `e`; the same digits.
/// CSV and JSON keep [`significant`]'s or full forms.
pub fn significant_si(v: f64, sig: usize) -> String {
    let s = significant(v, sig);
    match s.split_once('e') {
        Some((m, x)) => match x.parse::<i32>() {
            Ok(x) => format!("{m} × {}", power_of_ten(x)),
            Err(_) => s,
        },
        None => s,
    }
}

fn trim_zeros(s: &str) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decimal_rounding() {
        // common practice, no published source: half away from zero
        assert_eq!(Decimal::of(0.0346).round_at(-3, false).text(0), "0.035");
        assert_eq!(Decimal::of(-0.0004).round_at(-3, false).text(0), "0.000");
        assert_eq!(Decimal::of(999.9).round_at(0, false).text(0), "1000");
        assert_eq!(Decimal::of(0.7).round_at(0, false).text(0), "1");
        assert_eq!(Decimal::of(0.3).round_at(0, false).text(0), "0");
        assert_eq!(Decimal::of(0.03).round_at(0, false).text(0), "0");
        assert_eq!(Decimal::of(5e-324).leading(), Some(-324));
        assert_eq!(Decimal::of(1.01).round_at(-1, true).text(0), "1.1");
    }

    #[test]
    fn any_bit_pattern_writes_without_panic() {
        // common practice, no published source: every f64, NaN, ±inf and subnormals included.
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            f64::from_bits(x)
        };
        for _ in 0..200_000 {
            let (y, u) = (next(), next());
            for digits in 1..=3 {
                let w = write(y, u.abs(), digits);
                assert!(!w.concise.is_empty());
                let _ = write_like(next(), &w);
            }
        }
    }
}
