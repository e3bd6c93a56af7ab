//! Units and dimensions, parsed at run time: the seven base dimensions of
//! the SI, the SI prefixes, the units with special names and the units
//! accepted for use with the SI (SI Brochure, 9th edition, 2019, Tables 2,
//! 4, 7 and 8), and a few laboratory units (debye, ångström, ppm, %).
//! A unit is a factor to the coherent SI unit of its dimension, plus an
//! offset for the degree Celsius.
//!
//! No well-kept crate parses unit text at run time with located errors (the
//! established Rust unit crates check units at compile time), so this is a
//! small module of our own.
//!
//! Grammar: factors separated by spaces, `*`, `·` or `/` (everything after
//! a `/` divides, as in `J/(mol K)` or `J/mol/K`; parentheses group), each a
//! symbol with an optional prefix and an optional integer or rational power:
//! `kg m^-3`, `g/cm^3`, `(m^3)^(2/3)`, `m²`, `µm` or `um`, `degC` or `°C`.
//! A rational power is accepted where the result is a whole dimension.
//!
//! Temperatures: a value in °C (the unit alone) becomes K by adding 273.15;
//! an uncertainty or a difference in °C is the same number in K (factor 1,
//! no offset). Inside a compound unit (`1/°C`, `J/(kg °C)`) °C is a
//! temperature interval and means K. A quantity that is itself a
//! temperature difference (a deviation from 20 °C, say) is best given in K,
//! since `degC` alone converts values with the offset.

#![warn(missing_docs)]

use std::fmt;

/// Exponents of the seven base dimensions: length, mass, time, electric
/// current, thermodynamic temperature, amount of substance, luminous
/// intensity (SI Brochure, 9th edition, 2.3.3).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub struct Dimension(pub [i32; 7]);

const BASE: [&str; 7] = ["m", "kg", "s", "A", "K", "mol", "cd"];

impl Dimension {
    /// The dimension of a pure number.
    pub const ONE: Dimension = Dimension([0; 7]);

    /// Whether this is the dimension of a pure number.
    pub fn is_one(&self) -> bool {
        self.0 == [0; 7]
    }

    /// The dimension raised to n/d, if every exponent stays whole.
    pub fn pow(self, n: i32, d: i32) -> Option<Dimension> {
        let mut out = [0; 7];
        for (o, x) in out.iter_mut().zip(self.0) {
            // An exponent beyond the i32 range is no dimension at all.
            let num = x.checked_mul(n)?;
            if num % d != 0 {
                return None;
            }
            *o = num / d;
        }
        Some(Dimension(out))
    }
}

// Multiplying quantities adds the exponents of their dimensions.
#[allow(clippy::suspicious_arithmetic_impl)]
impl std::ops::Mul for Dimension {
    type Output = Dimension;
    fn mul(self, o: Dimension) -> Dimension {
        let mut d = self.0;
        for (x, y) in d.iter_mut().zip(o.0) {
            *x = x.saturating_add(y);
        }
        Dimension(d)
    }
}

#[allow(clippy::suspicious_arithmetic_impl)]
impl std::ops::Div for Dimension {
    type Output = Dimension;
    fn div(self, o: Dimension) -> Dimension {
        let mut d = self.0;
        for (x, y) in d.iter_mut().zip(o.0) {
            *x = x.saturating_sub(y);
        }
        Dimension(d)
    }
}

impl fmt::Display for Dimension {
    /// In coherent SI base units, e.g. `kg m^-3`, or `1`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.is_one() {
            return f.write_str("1");
        }
        let parts: Vec<String> = BASE
            .iter()
            .zip(self.0)
            .filter(|(_, e)| *e != 0)
            .map(|(s, e)| {
                if e == 1 {
                    s.to_string()
                } else {
                    format!("{s}^{e}")
                }
            })
            .collect();
        f.write_str(&parts.join(" "))
    }
}

/// A unit: value in the unit × `factor` (+ `offset`) = value in coherent SI.
#[derive(Clone, Debug, PartialEq)]
pub struct Unit {
    /// The unit as written.
    pub text: String,
    /// Its dimension.
    pub dimension: Dimension,
    /// Its factor to the coherent SI unit.
    pub factor: f64,
    /// Only the degree Celsius has one (273.15 K), and only alone.
    pub offset: f64,
}

impl Unit {
    /// A value in this unit, in coherent SI.
    pub fn value_to_si(&self, v: f64) -> f64 {
        v * self.factor + self.offset
    }

    /// A value in coherent SI, in this unit.
    pub fn value_from_si(&self, v: f64) -> f64 {
        (v - self.offset) / self.factor
    }

    /// An uncertainty or a difference: the factor only.
    pub fn difference_to_si(&self, u: f64) -> f64 {
        u * self.factor
    }

    /// A difference in coherent SI in this unit (the factor alone).
    pub fn difference_from_si(&self, u: f64) -> f64 {
        u / self.factor
    }

    /// No unit: factor 1, no offset.
    pub fn dimensionless() -> Unit {
        Unit {
            text: "1".into(),
            dimension: Dimension::ONE,
            factor: 1.0,
            offset: 0.0,
        }
    }
}

/// A problem with a unit, at a byte offset of its text.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct UnitError {
    /// What kind of problem.
    pub kind: UnitErrorKind,
    /// What is wrong, for a person.
    pub message: String,
    /// Byte offsets of the part of the text concerned.
    pub start: usize,
    /// One past the last byte concerned.
    pub end: usize,
}

/// The kinds of [`UnitError`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum UnitErrorKind {
    /// The text is not a unit expression (a stray character, an unclosed
    /// parenthesis, a power that is not an integer or a simple fraction).
    Syntax,
    /// A symbol that is not a known unit.
    Unknown,
    /// A power that leaves a fractional dimension, or nesting too deep.
    Power,
}

impl UnitError {
    /// The message, the unit text and a caret line.
    pub fn render(&self, text: &str) -> String {
        let col = text[..self.start.min(text.len())].chars().count();
        let width = text
            .get(self.start..self.end.min(text.len()))
            .map_or(1, |s| s.chars().count().max(1));
        format!(
            "{}\n{text}\n{}{}",
            self.message,
            " ".repeat(col),
            "^".repeat(width)
        )
    }
}

const D_L: Dimension = Dimension([1, 0, 0, 0, 0, 0, 0]);
const D_M: Dimension = Dimension([0, 1, 0, 0, 0, 0, 0]);
const D_T: Dimension = Dimension([0, 0, 1, 0, 0, 0, 0]);
const D_I: Dimension = Dimension([0, 0, 0, 1, 0, 0, 0]);
const D_TH: Dimension = Dimension([0, 0, 0, 0, 1, 0, 0]);
const D_N: Dimension = Dimension([0, 0, 0, 0, 0, 1, 0]);
const D_J: Dimension = Dimension([0, 0, 0, 0, 0, 0, 1]);

const fn dim(e: [i32; 7]) -> Dimension {
    Dimension(e)
}

/// (symbol, dimension, factor to coherent SI, takes prefixes).
/// SI Brochure, 9th edition: Table 2 (base units), Table 4 (special names),
/// Table 8 (units accepted for use with the SI); the debye is 10⁻²¹/c C m
/// (a CGS unit, common practice of dipole-moment work).
const SYMBOLS: &[(&str, Dimension, f64, bool)] = &[
    ("m", D_L, 1.0, true),
    ("g", D_M, 1e-3, true),
    ("s", D_T, 1.0, true),
    ("A", D_I, 1.0, true),
    ("K", D_TH, 1.0, true),
    ("mol", D_N, 1.0, true),
    ("cd", D_J, 1.0, true),
    ("rad", Dimension::ONE, 1.0, true),
    ("sr", Dimension::ONE, 1.0, true),
    ("Hz", dim([0, 0, -1, 0, 0, 0, 0]), 1.0, true),
    ("N", dim([1, 1, -2, 0, 0, 0, 0]), 1.0, true),
    ("Pa", dim([-1, 1, -2, 0, 0, 0, 0]), 1.0, true),
    ("J", dim([2, 1, -2, 0, 0, 0, 0]), 1.0, true),
    ("W", dim([2, 1, -3, 0, 0, 0, 0]), 1.0, true),
    ("C", dim([0, 0, 1, 1, 0, 0, 0]), 1.0, true),
    ("V", dim([2, 1, -3, -1, 0, 0, 0]), 1.0, true),
    ("F", dim([-2, -1, 4, 2, 0, 0, 0]), 1.0, true),
    ("ohm", dim([2, 1, -3, -2, 0, 0, 0]), 1.0, true),
    ("Ω", dim([2, 1, -3, -2, 0, 0, 0]), 1.0, true),
    ("S", dim([-2, -1, 3, 2, 0, 0, 0]), 1.0, true),
    ("Wb", dim([2, 1, -2, -1, 0, 0, 0]), 1.0, true),
    ("T", dim([0, 1, -2, -1, 0, 0, 0]), 1.0, true),
    ("H", dim([2, 1, -2, -2, 0, 0, 0]), 1.0, true),
    ("lm", D_J, 1.0, true),
    ("lx", dim([-2, 0, 0, 0, 0, 0, 1]), 1.0, true),
    ("Bq", dim([0, 0, -1, 0, 0, 0, 0]), 1.0, true),
    ("Gy", dim([2, 0, -2, 0, 0, 0, 0]), 1.0, true),
    ("Sv", dim([2, 0, -2, 0, 0, 0, 0]), 1.0, true),
    ("kat", dim([0, 0, -1, 0, 0, 1, 0]), 1.0, true),
    ("min", D_T, 60.0, false),
    ("h", D_T, 3600.0, false),
    ("d", D_T, 86400.0, false),
    ("L", dim([3, 0, 0, 0, 0, 0, 0]), 1e-3, true),
    ("l", dim([3, 0, 0, 0, 0, 0, 0]), 1e-3, true),
    ("t", D_M, 1e3, true),
    ("Da", D_M, 1.660_539_066_60e-27, true),
    ("eV", dim([2, 1, -2, 0, 0, 0, 0]), 1.602_176_634e-19, true),
    ("bar", dim([-1, 1, -2, 0, 0, 0, 0]), 1e5, true),
    ("Å", D_L, 1e-10, false),
    (
        "D",
        dim([1, 0, 1, 1, 0, 0, 0]),
        1e-21 / 299_792_458.0,
        false,
    ),
    ("ppm", Dimension::ONE, 1e-6, false),
    ("%", Dimension::ONE, 1e-2, false),
];

/// SI prefixes (SI Brochure, 9th edition, Table 7; ronna, quetta, ronto,
/// quecto added in 2022), with `u` accepted for micro.
const PREFIXES: &[(&str, i32)] = &[
    ("Q", 30),
    ("R", 27),
    ("Y", 24),
    ("Z", 21),
    ("E", 18),
    ("P", 15),
    ("T", 12),
    ("G", 9),
    ("M", 6),
    ("k", 3),
    ("h", 2),
    ("da", 1),
    ("d", -1),
    ("c", -2),
    ("m", -3),
    ("µ", -6),
    ("μ", -6),
    ("u", -6),
    ("n", -9),
    ("p", -12),
    ("f", -15),
    ("a", -18),
    ("z", -21),
    ("y", -24),
    ("r", -27),
    ("q", -30),
];

fn lookup(sym: &str) -> Option<(Dimension, f64)> {
    if let Some(&(_, d, f, _)) = SYMBOLS.iter().find(|(s, ..)| *s == sym) {
        return Some((d, f));
    }
    for &(p, e) in PREFIXES {
        if let Some(rest) = sym.strip_prefix(p) {
            if let Some(&(_, d, f, true)) = SYMBOLS.iter().find(|(s, ..)| *s == rest) {
                return Some((d, f * 10f64.powi(e)));
            }
        }
    }
    None
}

/// A unit as the SI Brochure prints it: powers as superscripts (`mm^3` →
/// `mm³`, `m^-1` → `m⁻¹`), `µ` for the micro prefix typed as `u` (`uL` →
/// `µL`), `°C` for `degC`, `Ω` for `ohm`, `·` for `*`. Fractional powers
/// (`^(1/2)`) and anything not a unit symbol are kept as written, and the
/// result parses to the same unit.
///
/// ```
/// assert_eq!(incertus_units::si_symbols("kg/m^3"), "kg/m³");
/// assert_eq!(incertus_units::si_symbols("uL"), "µL");
/// assert_eq!(incertus_units::si_symbols("J/(kg*degC)"), "J/(kg·°C)");
/// ```
pub fn si_symbols(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 8);
    let chars: Vec<char> = text.chars().collect();
    let mut i = 0;
    while i < chars.len() {
        let c = chars[i];
        if c.is_alphabetic() {
            let start = i;
            while i < chars.len() && (chars[i].is_alphabetic() || chars[i] == '_') {
                i += 1;
            }
            let sym: String = chars[start..i].iter().collect();
            out.push_str(&si_symbol(&sym));
            continue;
        }
        let power_start = if c == '^' {
            Some(i + 1)
        } else if c == '*' && chars.get(i + 1) == Some(&'*') {
            Some(i + 2)
        } else {
            None
        };
        if let Some(p) = power_start {
            let mut j = p;
            if matches!(chars.get(j), Some('-') | Some('+')) {
                j += 1;
            }
            let digits_start = j;
            while j < chars.len() && chars[j].is_ascii_digit() {
                j += 1;
            }
            if j > digits_start {
                for &d in &chars[p..j] {
                    out.push(superscript(d));
                }
                i = j;
                continue;
            }
        }
        out.push(if c == '*' { '·' } else { c });
        i += 1;
    }
    out
}

fn superscript(c: char) -> char {
    match c {
        '0' => '⁰',
        '1' => '¹',
        '2' => '²',
        '3' => '³',
        '4' => '⁴',
        '5' => '⁵',
        '6' => '⁶',
        '7' => '⁷',
        '8' => '⁸',
        '9' => '⁹',
        '-' => '⁻',
        '+' => '⁺',
        other => other,
    }
}

fn si_symbol(sym: &str) -> String {
    if sym == "degC" {
        return "°C".into();
    }
    if let Some(prefix) = sym.strip_suffix("ohm") {
        if lookup(sym).is_some() {
            return format!("{}Ω", prefix.replacen('u', "µ", 1));
        }
    }
    let exact = SYMBOLS.iter().any(|(s, ..)| *s == sym);
    if let Some(rest) = sym.strip_prefix('u') {
        if !exact && !rest.is_empty() && lookup(sym).is_some() {
            return format!("µ{rest}");
        }
    }
    sym.to_string()
}

/// Parse a unit.
///
/// ```
/// let u = incertus_units::parse("g/cm^3").unwrap();
/// assert_eq!(u.dimension.to_string(), "m^-3 kg");
/// assert!((u.factor - 1000.0).abs() < 1e-12);
/// ```
pub fn parse(text: &str) -> Result<Unit, UnitError> {
    let trimmed = text.trim();
    if trimmed.is_empty() || trimmed == "1" {
        return Ok(Unit {
            text: text.to_string(),
            ..Unit::dimensionless()
        });
    }
    if matches!(trimmed, "degC" | "°C" | "℃") {
        return Ok(Unit {
            text: text.to_string(),
            dimension: D_TH,
            factor: 1.0,
            offset: 273.15,
        });
    }
    let mut p = UnitParser {
        s: text,
        pos: 0,
        depth: 0,
    };
    let (d, f) = p.product()?;
    p.skip_ws();
    if p.pos < text.len() {
        let c = text[p.pos..].chars().next().expect("not at the end");
        return Err(p.err(
            &format!("unexpected `{c}` in the unit"),
            p.pos,
            p.pos + c.len_utf8(),
        ));
    }
    Ok(Unit {
        text: text.to_string(),
        dimension: d,
        factor: f,
        offset: 0.0,
    })
}

struct UnitParser<'a> {
    s: &'a str,
    pos: usize,
    depth: usize,
}

impl UnitParser<'_> {
    fn err(&self, m: &str, start: usize, end: usize) -> UnitError {
        let kind = if m.starts_with("unknown unit") {
            UnitErrorKind::Unknown
        } else if m.contains("fractional dimension") || m.contains("too deeply") {
            UnitErrorKind::Power
        } else {
            UnitErrorKind::Syntax
        };
        UnitError {
            kind,
            message: m.to_string(),
            start,
            end,
        }
    }

    fn peek(&self) -> Option<char> {
        self.s[self.pos..].chars().next()
    }

    fn skip_ws(&mut self) {
        while let Some(c) = self.peek() {
            if c.is_whitespace() {
                self.pos += c.len_utf8();
            } else {
                break;
            }
        }
    }

    /// factor ((' ' | '*' | '·')? factor | '/' factor)*; after a `/` every
    /// further factor divides.
    fn product(&mut self) -> Result<(Dimension, f64), UnitError> {
        let (mut d, mut f) = self.factor()?;
        let mut dividing = false;
        loop {
            self.skip_ws();
            match self.peek() {
                None | Some(')') => return Ok((d, f)),
                Some('/') => {
                    self.pos += 1;
                    dividing = true;
                    self.skip_ws();
                }
                Some('*') | Some('·') | Some('.') => {
                    self.pos += self.peek().expect("peeked").len_utf8();
                    self.skip_ws();
                }
                _ => {}
            }
            let (d2, f2) = self.factor()?;
            if dividing {
                d = d / d2;
                f /= f2;
            } else {
                d = d * d2;
                f *= f2;
            }
        }
    }

    fn factor(&mut self) -> Result<(Dimension, f64), UnitError> {
        self.skip_ws();
        let start = self.pos;
        let (d, f) = match self.peek() {
            Some('(') => {
                self.depth += 1;
                if self.depth > 16 {
                    return Err(self.err(
                        "the unit nests parentheses too deeply",
                        start,
                        start + 1,
                    ));
                }
                self.pos += 1;
                let inner = self.product()?;
                if self.peek() != Some(')') {
                    return Err(self.err("expected `)` to close the `(`", start, start + 1));
                }
                self.pos += 1;
                self.depth -= 1;
                inner
            }
            Some('1') => {
                self.pos += 1;
                (Dimension::ONE, 1.0)
            }
            Some(c) if c.is_alphabetic() || c == '%' || c == 'Å' || c == 'Ω' || c == '°' => {
                let end = self.s[self.pos..]
                    .char_indices()
                    .find(|(_, c)| !(c.is_alphabetic() || *c == '%' || *c == '°'))
                    .map_or(self.s.len(), |(i, _)| self.pos + i);
                let sym = &self.s[self.pos..end];
                self.pos = end;
                // Inside a compound unit (1/°C, J/(kg °C)) the degree Celsius
                // is a temperature interval: the kelvin, without offset.
                if matches!(sym, "degC" | "°C") {
                    (D_TH, 1.0)
                } else {
                    lookup(sym).ok_or_else(|| {
                        self.err(
                            &format!("unknown unit `{sym}` (units are SI symbols with SI prefixes, e.g. mg, mL, kPa, µm, or min, h, d, L, t, bar, eV, Da, Å, D, ppm, %)"),
                            start,
                            end,
                        )
                    })?
                }
            }
            Some(c) => {
                return Err(self.err(
                    &format!("expected a unit symbol, found `{c}`"),
                    start,
                    start + c.len_utf8(),
                ))
            }
            None => return Err(self.err("expected a unit symbol at the end", start, start)),
        };
        let (n, den) = self.power()?;
        let d = d
            .pow(n, den)
            .ok_or_else(|| self.err("this power leaves a fractional dimension", start, self.pos))?;
        Ok((d, f.powf(n as f64 / den as f64)))
    }

    /// `^n`, `^-n`, `^(n/d)`, `**n`, or superscript digits; default 1.
    fn power(&mut self) -> Result<(i32, i32), UnitError> {
        let start = self.pos;
        let rest = &self.s[self.pos..];
        let sup = |c: char| "⁰¹²³⁴⁵⁶⁷⁸⁹".chars().position(|s| s == c);
        if rest.starts_with(['⁻', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹']) {
            let mut sign = 1;
            let mut v = 0i32;
            for c in rest.chars() {
                if c == '⁻' && v == 0 && sign == 1 {
                    sign = -1;
                } else if let Some(dg) = sup(c) {
                    v = v * 10 + dg as i32;
                } else {
                    break;
                }
                self.pos += c.len_utf8();
            }
            return Ok((sign * v, 1));
        }
        let after = if let Some(r) = rest.strip_prefix('^') {
            self.pos += 1;
            r
        } else if let Some(r) = rest.strip_prefix("**") {
            self.pos += 2;
            r
        } else {
            return Ok((1, 1));
        };
        let (text, paren) = match after.strip_prefix('(') {
            Some(r) => match r.find(')') {
                Some(i) => (&r[..i], true),
                None => {
                    return Err(self.err(
                        "the parenthesis of the power is not closed: write ^(1/2)",
                        start,
                        start + 1 + after.len(),
                    ))
                }
            },
            None => {
                let len = after
                    .char_indices()
                    .find(|(i, c)| !(c.is_ascii_digit() || (*i == 0 && (*c == '-' || *c == '+'))))
                    .map_or(after.len(), |(i, _)| i);
                (&after[..len], false)
            }
        };
        let consumed = text.len() + if paren { 2 } else { 0 };
        let bad = |p: &Self| {
            p.err(
                "expected an integer power such as ^2, ^-3 or ^(1/2)",
                start,
                start + 1 + consumed,
            )
        };
        let (n, d) = match text.split_once('/') {
            Some((a, b)) => (
                a.trim().parse::<i32>().map_err(|_| bad(self))?,
                b.trim().parse::<i32>().map_err(|_| bad(self))?,
            ),
            None => (text.trim().parse::<i32>().map_err(|_| bad(self))?, 1),
        };
        if d == 0 || n.abs() > 64 || d.abs() > 64 {
            return Err(bad(self));
        }
        self.pos += consumed;
        Ok((n, d))
    }
}

/// The factors of a unit written as a product of symbols with integer
/// powers, parentheses allowed (`kg m^-3`, `g/mL`, `1/(mg/L)`, `J/(kg K)`):
/// each symbol with its power, in the order written. `None` for anything
/// else (fractional powers); an empty list for no unit or `1`. Follows the
/// parser's rule that after a `/` every further factor divides.
fn plain_factors(text: &str) -> Option<Vec<(String, i32)>> {
    let chars: Vec<char> = text.trim().chars().collect();
    let mut i = 0;
    let out = product_factors(&chars, &mut i, 0)?;
    (i == chars.len()).then_some(out)
}

/// An integer power after a symbol or a group: `^n`, `^-n`, `**n` or
/// superscript digits; 1 when there is none, `None` when it is not an
/// integer of at most three digits.
fn integer_power(chars: &[char], i: &mut usize) -> Option<i32> {
    let sup = |c: char| "⁰¹²³⁴⁵⁶⁷⁸⁹".chars().position(|s| s == c);
    let (neg, start) = match chars.get(*i) {
        Some('^') => match chars.get(*i + 1) {
            Some('-') => (true, *i + 2),
            Some('+') => (false, *i + 2),
            _ => (false, *i + 1),
        },
        Some('*') if chars.get(*i + 1) == Some(&'*') => (false, *i + 2),
        Some('⁻') => (true, *i + 1),
        Some(&c) if sup(c).is_some() => (false, *i),
        _ => return Some(1),
    };
    let superscript = !matches!(chars.get(*i), Some('^') | Some('*'));
    let mut j = start;
    let mut v = 0i32;
    while j < chars.len() && j - start < 3 {
        let d = if superscript {
            sup(chars[j])
        } else {
            chars[j].to_digit(10).map(|d| d as usize)
        };
        match d {
            Some(d) => v = v * 10 + d as i32,
            None => break,
        }
        j += 1;
    }
    if j == start
        || chars
            .get(j)
            .is_some_and(|c| c.is_ascii_digit() || sup(*c).is_some())
    {
        return None;
    }
    *i = j;
    Some(if neg { -v } else { v })
}

fn product_factors(chars: &[char], i: &mut usize, depth: usize) -> Option<Vec<(String, i32)>> {
    if depth > 8 {
        return None;
    }
    let mut out: Vec<(String, i32)> = Vec::new();
    let mut sign = 1;
    while *i < chars.len() {
        let c = chars[*i];
        if c == ')' {
            break;
        }
        if c.is_whitespace() || matches!(c, '*' | '·' | '.') {
            *i += 1;
            continue;
        }
        if c == '/' {
            sign = -1;
            *i += 1;
            continue;
        }
        if c == '(' {
            *i += 1;
            let inner = product_factors(chars, i, depth + 1)?;
            if chars.get(*i) != Some(&')') {
                return None;
            }
            *i += 1;
            let p = integer_power(chars, i)?;
            out.extend(inner.into_iter().map(|(s, q)| (s, sign * p * q)));
            continue;
        }
        if c == '1' && !chars.get(*i + 1).is_some_and(|n| n.is_ascii_digit()) {
            *i += 1;
            let p = integer_power(chars, i)?;
            let _ = p; // 1 to any power is 1
            continue;
        }
        if c.is_alphabetic() || matches!(c, '%' | '°' | 'Å' | 'Ω' | 'µ') {
            let start = *i;
            while *i < chars.len() && (chars[*i].is_alphabetic() || matches!(chars[*i], '%' | '°'))
            {
                *i += 1;
            }
            let sym: String = chars[start..*i].iter().collect();
            let p = integer_power(chars, i)?;
            out.push((sym, sign * p));
            continue;
        }
        return None;
    }
    Some(out)
}

fn write_factors(factors: &[(String, i32)]) -> String {
    let one = |(s, p): &(String, i32)| {
        if *p == 1 {
            s.clone()
        } else {
            format!("{s}^{p}")
        }
    };
    let num: Vec<String> = factors.iter().filter(|f| f.1 > 0).map(one).collect();
    let den: Vec<String> = factors
        .iter()
        .filter(|f| f.1 < 0)
        .map(|(s, p)| one(&(s.clone(), -p)))
        .collect();
    let top = if num.is_empty() {
        "1".to_string()
    } else {
        num.join("*")
    };
    match den.len() {
        0 => top,
        1 => format!("{top}/{}", den[0]),
        _ => format!("{top}/({})", den.join("*")),
    }
}

/// The unit of a sensitivity coefficient ∂y/∂x: the unit of `y` divided by
/// the unit of `x`, as written (no conversion: `mm^3` per `mm` is `mm^2`, `g`
/// per `mL` is `g/mL`, `mm` per `m` stays `mm/m`). Equal symbols cancel; an
/// empty string means the coefficient has no unit. Units that are not plain
/// products are divided as written, in parentheses. The result parses to the
/// quotient of the two units (tested over a grid).
///
/// ```
/// assert_eq!(incertus_units::quotient("mm^3", "mm"), "mm^2");
/// assert_eq!(incertus_units::quotient("g/mL", "g"), "1/mL");
/// assert_eq!(incertus_units::quotient("", "K"), "1/K");
/// assert_eq!(incertus_units::quotient("Pa", "Pa"), "");
/// ```
pub fn quotient(y: &str, x: &str) -> String {
    if let (Some(fy), Some(fx)) = (plain_factors(y), plain_factors(x)) {
        let mut all: Vec<(String, i32)> = Vec::new();
        for (s, p) in fy.into_iter().chain(fx.into_iter().map(|(s, p)| (s, -p))) {
            match all.iter_mut().find(|(t, _)| *t == s) {
                Some(f) => f.1 += p,
                None => all.push((s, p)),
            }
        }
        all.retain(|f| f.1 != 0);
        if all.is_empty() {
            return String::new();
        }
        return write_factors(&all);
    }
    let wrap = |t: &str| {
        let t = t.trim();
        if t.is_empty() || t == "1" {
            None
        } else {
            Some(format!("({t})"))
        }
    };
    match (wrap(y), wrap(x)) {
        (Some(a), Some(b)) => format!("{a}/{b}"),
        (Some(_), None) => y.trim().to_string(),
        (None, Some(b)) => format!("1/{b}"),
        (None, None) => String::new(),
    }
}

/// A unit as written raised to an integer power (`mm^3`, 2 → `mm^6`;
/// `g/mL`, 2 → `g^2/mL^2`); units that are not products of integer powers
/// are raised in parentheses. Empty for no unit or a power of 0.
///
/// ```
/// assert_eq!(incertus_units::power("mg/L", 2), "mg^2/L^2");
/// assert_eq!(incertus_units::power("K", -1), "1/K");
/// ```
pub fn power(text: &str, n: i32) -> String {
    match plain_factors(text) {
        _ if n == 0 => String::new(),
        Some(f) if f.is_empty() => String::new(),
        Some(f) => write_factors(&f.into_iter().map(|(s, p)| (s, n * p)).collect::<Vec<_>>()),
        None if n == 1 => text.trim().to_string(),
        None => format!("({})^{n}", text.trim()),
    }
}

/// The square of a unit as written (`mm^3` → `mm^6`, `g/mL` → `g^2/mL^2`),
/// the unit of a variance or covariance term; units that are not plain
/// products are squared in parentheses. Empty for no unit.
///
/// ```
/// assert_eq!(incertus_units::squared("mm^3"), "mm^6");
/// assert_eq!(incertus_units::squared("g/mL"), "g^2/mL^2");
/// assert_eq!(incertus_units::squared(""), "");
/// ```
pub fn squared(text: &str) -> String {
    power(text, 2)
}
