//! How an input is stated at the shell's prompt.
//!
//! ```text
//! x = 2.0 u=0.1               an estimate and its standard uncertainty u
//! x = 1.234(5)                concise notation (JCGM 100:2008, 7.2.2): u = 0.005
//! x = 10.0 ± 0.5 (k=2)        an expanded uncertainty U with its coverage factor: u = U/k
//! x = 1.0 rectangular a=0.5   limits: a distribution (also triangular, arcsine) and its half-width a
//! x = 3.5                     an exact value
//! ```
//!
//! with `[unit]` and `dof=N` after any of them. `±` always means an
//! expanded uncertainty, as in every result `eval` prints, so it needs its
//! coverage factor; a `±` without one is refused with the forms to use
//! (JCGM 100:2008, 7.2.2 advises against ± for a standard uncertainty).

use incertus_gum::description::{
    CentredShape, DofGiven, InputDescription, InputEvaluation, LimitShape, LimitsGiven,
};

/// What may follow a value.
#[derive(Default)]
struct Modifiers {
    k: Option<f64>,
    u: Option<f64>,
    half_width: Option<f64>,
    dist: Option<&'static str>,
    unit: Option<String>,
    dof: Option<f64>,
}

/// `key=NUMBER` (or `key = NUMBER`) at the start of `rest`: the number and
/// what follows it.
fn keyed<'a>(rest: &'a str, key: &str) -> Option<Result<(f64, &'a str), String>> {
    let r = rest.strip_prefix(key)?.trim_start().strip_prefix('=')?;
    let r = r.trim_start();
    let end = r
        .find(|c: char| c.is_whitespace() || c == '[' || c == '(')
        .unwrap_or(r.len());
    Some(match r[..end].parse::<f64>() {
        Ok(v) if v.is_finite() => Ok((v, &r[end..])),
        _ => Err(format!("{key}= needs a number, found `{}`", &r[..end])),
    })
}

/// The modifiers after a value; `None` when the text goes on as a formula.
fn modifiers(mut rest: &str) -> Option<Result<Modifiers, String>> {
    let mut m = Modifiers::default();
    loop {
        rest = rest.trim_start();
        if rest.is_empty() {
            return Some(Ok(m));
        }
        if let Some(r) = rest
            .strip_prefix("(k=")
            .or_else(|| rest.strip_prefix("(k ="))
        {
            let Some(close) = r.find(')') else {
                return Some(Err("expected `)` after k=".into()));
            };
            match r[..close].trim().parse::<f64>() {
                Ok(v) => m.k = Some(v),
                Err(_) => return Some(Err("k must be a number".into())),
            }
            rest = &r[close + 1..];
            continue;
        }
        if let Some(r) = rest.strip_prefix('[') {
            let Some(close) = r.find(']') else {
                return Some(Err("expected `]` after the unit".into()));
            };
            m.unit = Some(r[..close].trim().to_string());
            rest = &r[close + 1..];
            continue;
        }
        let mut matched = None;
        for key in ["dof", "u", "half_width", "a"] {
            match keyed(rest, key) {
                Some(Ok((v, r))) => {
                    matched = Some((key, v));
                    rest = r;
                    break;
                }
                Some(Err(e)) => return Some(Err(e)),
                None => {}
            }
        }
        if let Some((key, v)) = matched {
            match key {
                "dof" => m.dof = Some(v),
                "u" => m.u = Some(v),
                _ => m.half_width = Some(v),
            }
            continue;
        }
        if let Some(d) = ["rectangular", "triangular", "arcsine"]
            .into_iter()
            .find(|d| rest.starts_with(d))
        {
            m.dist = Some(d);
            rest = &rest[d.len()..];
            continue;
        }
        if rest.starts_with(['*', '/', '^', '+', '-', '(']) {
            return None; // `2 * y`: a formula, not a value
        }
        return Some(Err(format!(
            "cannot read `{rest}` after the value; write e.g. x = 2.0 u=0.1, x = 10.0 ± 0.5 (k=2), \
             x = 1.0 rectangular a=0.5, with [mm] or dof=8 after it"
        )));
    }
}

/// The number at the start of `s` and where it ends.
fn leading_number(s: &str) -> (Option<f64>, usize) {
    let end = s
        .char_indices()
        .find(|(i, c)| {
            !(c.is_ascii_digit()
                || *c == '.'
                || *c == 'e'
                || *c == 'E'
                || ((*c == '-' || *c == '+') && (*i == 0 || s[..*i].ends_with(['e', 'E']))))
        })
        .map_or(s.len(), |(i, _)| i);
    (s[..end].parse().ok(), end)
}

/// Concise notation: the digits in parentheses are u in units of the last
/// digit of the value (`1.234(5)`: u = 0.005). `None` when `(` starts
/// something else.
fn concise(mantissa: &str, r: &str) -> Option<Result<(f64, usize), String>> {
    let close = match r.find(')') {
        Some(c) => c,
        None => {
            return Some(Err(
                "expected `)` after the digits of the uncertainty".into()
            ))
        }
    };
    let digits = &r[..close];
    if digits.trim_start().starts_with('k') {
        return None;
    }
    let Ok(d) = digits.parse::<u64>() else {
        return Some(Err(format!(
            "`({digits})` is not concise notation: write digits, as in 1.234(5)"
        )));
    };
    let decimals = mantissa
        .split(['e', 'E'])
        .next()
        .and_then(|m| m.split_once('.'))
        .map_or(0, |(_, f)| f.len());
    let exp: i32 = mantissa
        .split_once(['e', 'E'])
        .and_then(|(_, e)| e.parse().ok())
        .unwrap_or(0);
    Some(Ok((
        d as f64 * 10f64.powi(exp - decimals as i32),
        close + 1,
    )))
}

/// Parse a value statement's right-hand side into an input called `name`;
/// `None` when the text is not a value (then it is a formula).
pub(super) fn parse_value(name: &str, rhs: &str) -> Option<Result<InputDescription, String>> {
    let s = rhs.trim();
    let (value, num_end) = leading_number(s);
    let value = value?;
    let mantissa = &s[..num_end];
    let rest = s[num_end..].trim_start();
    // `± U`: an expanded uncertainty (its k comes among the modifiers).
    let (plus_minus, concise_u, rest) =
        if let Some(r) = rest.strip_prefix('±').or_else(|| rest.strip_prefix("+-")) {
            let r = r.trim_start();
            match leading_number(r) {
                (Some(v), end) => (Some((v, &r[..end])), None, &r[end..]),
                _ => return Some(Err("expected a number after ±".into())),
            }
        } else if let Some(r) = rest.strip_prefix('(') {
            match concise(mantissa, r) {
                None => (None, None, rest),
                Some(Err(e)) => return Some(Err(e)),
                Some(Ok((u, used))) => (None, Some(u), &r[used..]),
            }
        } else {
            (None, None, rest)
        };
    let m = match modifiers(rest)? {
        Ok(m) => m,
        Err(e) => return Some(Err(e)),
    };
    evaluation(name, value, mantissa, plus_minus, concise_u, m).map(|r| {
        r.map(|(evaluation, unit)| {
            let mut input = InputDescription::new(name, evaluation);
            input.unit = unit;
            input
        })
    })
}

/// The evaluation a value statement states, or what is wrong with it.
fn evaluation(
    name: &str,
    value: f64,
    mantissa: &str,
    plus_minus: Option<(f64, &str)>,
    concise_u: Option<f64>,
    m: Modifiers,
) -> Option<Result<(InputEvaluation, Option<String>), String>> {
    let dof = m.dof.map(DofGiven::Dof);
    let shape = |d: &str| match d {
        "triangular" => LimitShape::Triangular,
        "arcsine" => LimitShape::Arcsine,
        _ => LimitShape::Rectangular,
    };
    let err = |s: String| Some(Err(s));
    let given = [
        plus_minus.is_some(),
        concise_u.is_some(),
        m.u.is_some(),
        m.half_width.is_some(),
    ]
    .iter()
    .filter(|g| **g)
    .count();
    if given > 1 {
        return err(
            "give one uncertainty: u=…, a concise (digits), ± U (k=…), or a distribution with a=…"
                .into(),
        );
    }
    let e = match (plus_minus, m.k, m.dist) {
        (Some((big_u, _)), Some(k), None) => InputEvaluation::Expanded {
            value,
            expanded_uncertainty: big_u,
            coverage_factor: k,
            dof,
            shape: CentredShape::Normal,
        },
        (Some((_, u_text)), None, None) => {
            return err(format!(
                "± gives an expanded uncertainty U and needs its coverage factor: write \
                 `{name} = {mantissa} ± {u_text} (k=2)` (U with k = 2), or `{name} = {mantissa} u={u_text}` \
                 for a standard uncertainty"
            ))
        }
        (Some((_, a_text)), _, Some(d)) => {
            return err(format!(
                "for limits write `{name} = {mantissa} {d} a={a_text}` (a: the half-width); \
                 ± gives an expanded uncertainty, with (k=…)"
            ))
        }
        (None, Some(_), _) => return err("(k=…) goes with an expanded uncertainty: write VALUE ± U (k=…)".into()),
        (None, None, Some(d)) => match m.half_width {
            Some(a) => InputEvaluation::Limits {
                limits: LimitsGiven::HalfWidth { value, half_width: a },
                shape: shape(d),
                dof,
            },
            None => return err(format!("a {d} distribution needs its half-width: write `{name} = {mantissa} {d} a=…`")),
        },
        (None, None, None) => match (m.u.or(concise_u), m.half_width) {
            (Some(u), None) => InputEvaluation::Standard {
                value,
                standard_uncertainty: u,
                dof,
                shape: CentredShape::Normal,
            },
            (None, Some(_)) => {
                return err("a= is the half-width of a distribution with limits: add rectangular, triangular or arcsine".into())
            }
            _ if m.dof.is_some() => return err("an exact value has no degrees of freedom".into()),
            _ => InputEvaluation::Exact { value },
        },
    };
    Some(Ok((e, m.unit)))
}
