//! `incertus derive`: symbolic partial derivatives of a formula, simplified,
//! and optionally their values at a point.

use std::io::Write;

use clap::Args;
use incertus_expr::{derivative, format_number, parse, print, Expr, FormulaError};

use crate::Failure;

#[derive(Args, Debug)]
pub struct DeriveArgs {
    /// The formula, e.g. "x^2*sin(y)"
    formula: String,
    /// Differentiate with respect to NAME (repeatable); default: every name in the formula
    #[arg(long = "wrt", value_name = "NAME")]
    wrt: Vec<String>,
    /// Evaluate at a point: NAME=VALUE pairs separated by commas (repeatable);
    /// a value may be a constant formula such as 273.15+25
    #[arg(long = "at", value_name = "NAME=VALUE,...")]
    at: Vec<String>,
    /// Highest order of derivative to print (1 to 3); mixed partials are included
    #[arg(long = "order", default_value_t = 1, value_parser = clap::value_parser!(u8).range(1..=3))]
    order: u8,
}

fn formula_failure(what: &str, src: &str, e: &FormulaError) -> Failure {
    Failure::input(format!("{what}: {}", e.render(src)))
}

/// The point given with `--at`, in the order written.
fn parse_point(specs: &[String], names: &[String]) -> Result<Vec<(String, f64)>, Failure> {
    let mut point: Vec<(String, f64)> = Vec::new();
    for spec in specs {
        for item in spec.split(',').map(str::trim).filter(|s| !s.is_empty()) {
            let Some((name, value)) = item.split_once('=') else {
                return Err(Failure::input(format!(
                    "--at expects NAME=VALUE, found `{item}`"
                )));
            };
            let name = name.trim().to_string();
            if !names.contains(&name) {
                return Err(Failure::input(format!(
                    "--at gives a value for `{name}`, which does not appear in the formula \
                     (names in the formula: {})",
                    names.join(", ")
                )));
            }
            if point.iter().any(|(n, _)| *n == name) {
                return Err(Failure::input(format!(
                    "--at gives `{name}` more than once"
                )));
            }
            let value = value.trim();
            let v = parse(value)
                .and_then(|e| {
                    if let Some(free) = e.names().first() {
                        return Err(FormulaError::new(
                            incertus_expr::ErrorKind::Name,
                            format!("a value must be a constant, but it uses `{free}`"),
                            e.span,
                        ));
                    }
                    e.eval::<f64, _>(&|_: &str| None)
                })
                .map_err(|e| {
                    formula_failure(&format!("the value of `{name}` in --at"), value, &e)
                })?;
            point.push((name, v));
        }
    }
    if let Some(missing) = names.iter().find(|n| !point.iter().any(|(p, _)| p == *n)) {
        return Err(Failure::input(format!(
            "--at gives no value for `{missing}`; add --at {missing}=VALUE"
        )));
    }
    Ok(point)
}

/// Combinations with repetition of `k` indices out of `n`, in lexical order.
fn combinations(n: usize, k: usize) -> Vec<Vec<usize>> {
    let mut out = Vec::new();
    let mut cur = vec![0usize; k];
    if n == 0 || k == 0 {
        return out;
    }
    loop {
        out.push(cur.clone());
        let mut i = k;
        loop {
            if i == 0 {
                return out;
            }
            i -= 1;
            if cur[i] + 1 < n {
                let v = cur[i] + 1;
                for c in cur.iter_mut().skip(i) {
                    *c = v;
                }
                break;
            }
        }
    }
}

fn label(wrt: &[&str]) -> String {
    let order = wrt.len();
    let sup = match order {
        1 => "",
        2 => "²",
        _ => "³",
    };
    let mut den = String::new();
    let mut i = 0;
    while i < wrt.len() {
        let mut j = i;
        while j < wrt.len() && wrt[j] == wrt[i] {
            j += 1;
        }
        let p = match j - i {
            1 => "",
            2 => "²",
            _ => "³",
        };
        den.push_str(&format!("∂{}{}", wrt[i], p));
        i = j;
    }
    format!("∂{sup}f/{den}")
}

pub fn run(a: &DeriveArgs, out: &mut dyn Write) -> Result<(), Failure> {
    let src = a.formula.as_str();
    let f: Expr = parse(src).map_err(|e| formula_failure("in the formula", src, &e))?;
    let names = f.names();
    let wrt: Vec<String> = if a.wrt.is_empty() {
        names.clone()
    } else {
        for w in &a.wrt {
            if !names.contains(w) {
                return Err(Failure::input(format!(
                    "--wrt `{w}`: the formula does not use this name, so every derivative \
                     with respect to it is 0 (names in the formula: {})",
                    if names.is_empty() {
                        "none".to_string()
                    } else {
                        names.join(", ")
                    }
                )));
            }
        }
        let mut v: Vec<String> = Vec::new();
        for w in &a.wrt {
            if !v.contains(w) {
                v.push(w.clone());
            }
        }
        v
    };
    let point = if a.at.is_empty() {
        None
    } else {
        Some(parse_point(&a.at, &names)?)
    };

    // Each derivative, built on the one of one order lower.
    let mut rows: Vec<(String, Expr)> = vec![("f".to_string(), f.clone())];
    let mut previous: Vec<(Vec<usize>, Expr)> = vec![(Vec::new(), f.clone())];
    for order in 1..=a.order as usize {
        let mut next = Vec::new();
        for combo in combinations(wrt.len(), order) {
            let parent = previous
                .iter()
                .find(|(c, _)| c[..] == combo[..order - 1])
                .map(|(_, e)| e)
                .expect("the lower-order derivative was computed");
            let d = derivative(parent, &wrt[combo[order - 1]]);
            let names: Vec<&str> = combo.iter().map(|&i| wrt[i].as_str()).collect();
            rows.push((label(&names), d.clone()));
            next.push((combo, d));
        }
        previous = next;
    }

    let width = rows
        .iter()
        .map(|(l, _)| l.chars().count())
        .max()
        .unwrap_or(1);
    let pad = |l: &str| format!("{l}{}", " ".repeat(width - l.chars().count()));
    let mut text = String::new();
    for (l, e) in &rows {
        text.push_str(&format!("{} = {}\n", pad(l), print(e)));
    }
    if let Some(point) = point {
        let env: Vec<(&str, f64)> = point.iter().map(|(n, v)| (n.as_str(), *v)).collect();
        let at: Vec<String> = point
            .iter()
            .map(|(n, v)| format!("{n} = {}", format_number(*v)))
            .collect();
        text.push_str(&format!("\nat {}:\n", at.join(", ")));
        for (l, e) in &rows {
            let v = e.eval::<f64, _>(env.as_slice()).map_err(|err| {
                formula_failure(&format!("evaluating {l} at the point"), src, &err)
            })?;
            text.push_str(&format!("{} = {}\n", pad(l), format_number(v)));
        }
    }
    let _ = out.write_all(text.as_bytes());
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn combinations_with_repetition() {
        assert_eq!(combinations(2, 2), vec![vec![0, 0], vec![0, 1], vec![1, 1]]);
        assert_eq!(combinations(3, 1).len(), 3);
        // C(n + k - 1, k) = C(4, 3) = 4 for n = 2, k = 3.
        assert_eq!(combinations(2, 3).len(), 4);
    }

    #[test]
    fn labels() {
        assert_eq!(label(&["x"]), "∂f/∂x");
        assert_eq!(label(&["x", "x"]), "∂²f/∂x²");
        assert_eq!(label(&["x", "y"]), "∂²f/∂x∂y");
    }
}
