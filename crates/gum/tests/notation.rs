//! The printed forms of a result read back as a person reads them
//! (JCGM 100:2008, 7.2.2 and 7.2.6; SI Brochure, 9th ed., 5.4): the digits
//! in parentheses are u in units of the last digit shown, ± gives the same
//! u, and a trailing `× 10ⁿ` multiplies both. Over a logarithmic grid of
//! estimates and uncertainties and every number of digits, the reading
//! must give u rounded to the stated significant digits and y rounded to
//! the same decimal place.

use incertus_gum::rounding::{write, MAX_SIGNIFICANT};

/// A printed number as a reader takes it: (digits as integer text,
/// decimals, negative).
fn plain(t: &str) -> (bool, String, i32) {
    let (neg, t) = match t.strip_prefix('-') {
        Some(r) => (true, r),
        None => (false, t),
    };
    assert!(
        !t.is_empty() && t.chars().all(|c| c.is_ascii_digit() || c == '.'),
        "not a plain number: {t:?}"
    );
    let decimals = t.find('.').map_or(0, |i| (t.len() - i - 1) as i32);
    (neg, t.replace('.', ""), decimals)
}

fn superscript(t: &str) -> i32 {
    let mut s = String::new();
    for c in t.chars() {
        s.push(match c {
            '⁻' => '-',
            '⁰' => '0',
            '¹' => '1',
            '²' => '2',
            '³' => '3',
            '⁴' => '4',
            '⁵' => '5',
            '⁶' => '6',
            '⁷' => '7',
            '⁸' => '8',
            '⁹' => '9',
            _ => panic!("not a superscript exponent: {t:?}"),
        });
    }
    s.parse().unwrap()
}

/// (y, u, place of the last digit of y) read from `1.234(56) × 10⁻³`.
fn read_concise(t: &str) -> (f64, f64, i32) {
    let (body, power) = match t.split_once(" × 10") {
        Some((b, p)) => (b, superscript(p)),
        None => (t, 0),
    };
    let (v, rest) = body.split_once('(').expect("parentheses");
    let digits = rest.strip_suffix(')').expect("closing parenthesis");
    let (neg, vd, dec) = plain(v);
    let place = power - dec;
    let y: f64 = format!("{}{vd}e{place}", if neg { "-" } else { "" })
        .parse()
        .unwrap();
    let (_, ud, udec) = plain(digits);
    assert_eq!(udec, 0, "{t}: the parentheses hold digits only");
    let u: f64 = format!("{ud}e{place}").parse().unwrap();
    (y, u, place)
}

/// (y, u, place) read from `(1.234 ± 0.056) × 10⁻³` or `1.234 ± 0.056`.
fn read_plus_minus(t: &str) -> (f64, f64, i32) {
    let (body, power) = match t.split_once(" × 10") {
        Some((b, p)) => {
            let b = b.strip_prefix('(').and_then(|b| b.strip_suffix(')'));
            (
                b.expect("parentheses around a ± with a power"),
                superscript(p),
            )
        }
        None => (t, 0),
    };
    let (v, uu) = body.split_once(" ± ").expect("±");
    let (neg, vd, dec) = plain(v);
    let (_, ud, udec) = plain(uu);
    assert_eq!(dec, udec, "{t}: estimate and uncertainty to the same place");
    let place = power - dec;
    let y: f64 = format!("{}{vd}e{place}", if neg { "-" } else { "" })
        .parse()
        .unwrap();
    let u: f64 = format!("{ud}e{place}").parse().unwrap();
    (y, u, place)
}

/// u rounded to `digits` significant digits by a separate route (the
/// `{:e}` formatting of the standard library, correctly rounded).
fn reference_u(u: f64, digits: u32) -> f64 {
    format!("{:.*e}", digits as usize - 1, u).parse().unwrap()
}

fn significant_digits(t: &str) -> i32 {
    let body = t.split(['(', ' ']).next().unwrap();
    let d: String = body.chars().filter(|c| c.is_ascii_digit()).collect();
    d.trim_start_matches('0').len() as i32
}

#[test]
fn printed_forms_read_back_over_a_grid() {
    // JCGM 100:2008, 7.2.2 (concise form) and 7.2.6 (two digits, the estimate to the same place).
    let mut checked = 0;
    for ey in (-300..=300).step_by(7) {
        for my in [1.0, 1.234_567_891_234, 4.999_96, 9.999_999, 5.5] {
            for ratio_exp in -12..=4 {
                for mr in [1.0, 1.149, 2.5, 9.96, 9.9951] {
                    for sign in [1.0, -1.0] {
                        let y = sign * my * 10f64.powi(ey);
                        let u = mr * 10f64.powi(ey + ratio_exp);
                        if !(u.is_finite() && y.is_finite()) || u < f64::MIN_POSITIVE {
                            continue;
                        }
                        for digits in 1..=3 {
                            check_one(y, u, digits);
                            checked += 1;
                        }
                    }
                }
            }
        }
    }
    assert!(checked > 100_000, "{checked}");
}

fn check_one(y: f64, u: f64, digits: u32) {
    let w = write(y, u, digits);
    assert!(!w.below_resolution, "{y} {u}: {w:?}");
    for (form, (ry, ru, place)) in [
        (&w.concise, read_concise(&w.concise)),
        (&w.plus_minus, read_plus_minus(&w.plus_minus)),
    ] {
        // A decimal tie (2.5 to one digit) may go either way.
        let uref = reference_u(u, digits);
        let (below, above) = (
            reference_u(u * (1.0 - 1e-14), digits),
            reference_u(u * (1.0 + 1e-14), digits),
        );
        assert!(
            [uref, below, above]
                .iter()
                .any(|r| (ru - r).abs() <= 1e-12 * r),
            "{form}: u read back {ru:e}, expected {uref:e} (y {y:e}, u {u:e}, {digits} digits)"
        );
        // the digits of u: exactly `digits` significant ones
        let steps: f64 = {
            let t = if !form.contains(" ± ") {
                form.split_once('(')
                    .unwrap()
                    .1
                    .split(')')
                    .next()
                    .unwrap()
                    .to_string()
            } else {
                let u_text = form.split(" ± ").nth(1).unwrap();
                let u_text = u_text.split(')').next().unwrap();
                plain(u_text).1
            };
            t.parse().unwrap_or_else(|_| panic!("{form}: {t:?}"))
        };
        let unit = ru / steps;
        let _ = place;
        assert!(
            steps >= 10f64.powi(digits as i32 - 1) && steps < 10f64.powi(digits as i32),
            "{form}: u is {steps} units of the last digit, not {digits} digits"
        );
        // y to the place of the last digit of u (half a unit, plus the
        // rounding of the decimal form of y itself)
        assert!(
            (ry - y).abs() <= 0.5 * unit * (1.0 + 1e-9) + 1e-15 * y.abs(),
            "{form}: y read back {ry:e}, from {y:e}, last digit 1e{place}"
        );
        assert!(significant_digits(form) <= MAX_SIGNIFICANT, "{form}");
        assert!(!form.contains("inf") && !form.contains("NaN"), "{form}");
    }
}

#[test]
fn the_last_digit_of_u_left_of_the_units_digit() {
    // SI Brochure (9th ed.), 5.4 and JCGM 100:2008, 7.2.2: 500 ± 120 is never 500(12).
    for (y, u, concise) in [
        (500.0, 120.0, "0.50(12) × 10³"),
        (999.0, 99.9, "1.00(10) × 10³"),
        (12345.0, 120.0, "12.35(12) × 10³"),
        (2830628.8, 1372.6, "2.8306(14) × 10⁶"),
        (0.0, 1e10, "0.0(1.0)"),
    ] {
        if u == 1e10 {
            // u far above y: y is 0 at the place of u.
            let w = write(y, u, 2);
            assert_eq!(read_concise(&w.concise).1, 1e10, "{}", w.concise);
            continue;
        }
        assert_eq!(write(y, u, 2).concise, concise);
    }
}

#[test]
fn at_the_ends_of_the_f64_range() {
    // common practice, no published source: subnormal and huge values print as numbers.
    for (y, u) in [
        (1e-320, 5e-324),
        (0.0, 5e-324),
        (3e-310, 1e-311),
        (1.7e308, 1e306),
        (-1.2e308, 1.0e307),
        (0.0, 0.5),
    ] {
        for digits in 1..=3 {
            let w = write(y, u, digits);
            let (ry, ru, _) = read_concise(&w.concise);
            assert!(ry.is_finite() && ru > 0.0, "{y} {u}: {}", w.concise);
            assert!(
                (ru / reference_u(u, digits) - 1.0).abs() < 1e-12,
                "{}",
                w.concise
            );
        }
    }
}

#[test]
fn uncertainty_below_the_resolution_of_the_estimate() {
    // common practice, no published source: an f64 holds 15 decimal digits (DBL_DIG).
    let w = write(1.7, 1e-16, 2);
    assert!(w.below_resolution);
    assert!(
        significant_digits(&w.concise) <= MAX_SIGNIFICANT,
        "{}",
        w.concise
    );
    let (y, u, _) = read_concise(&w.concise);
    assert_eq!(y, 1.7);
    assert!(u >= 1e-16, "{}: u is rounded up, never down", w.concise);
}
