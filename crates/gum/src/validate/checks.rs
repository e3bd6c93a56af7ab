//! Checks across the whole model: sizes of the expanded formulas, dimensions
//! (and the classification of °C results), names used in formulas, and the
//! order of the measurands.

use std::collections::HashMap as Map;

use incertus_expr::{Expr, FormulaError, Kind};

use super::*;
use crate::constants;
use crate::load::closest;

impl Validator<'_, '_> {
    /// The formula of each measurand in terms of the inputs (measurands it
    /// uses substituted) must stay within the node and depth limits:
    /// substitution can double a formula at every level.
    pub(super) fn check_expanded_size(
        &self,
        measurands: &[Measurand],
        index: &Map<String, usize>,
    ) -> Result<()> {
        fn walk(e: &Expr, known: &HashMap<&str, (f64, usize)>) -> (f64, usize) {
            match &e.kind {
                Kind::Var(n) => known.get(n.as_str()).copied().unwrap_or((1.0, 1)),
                _ => {
                    let mut nodes = 1.0;
                    let mut depth = 0;
                    for c in e.children() {
                        let (n, d) = walk(c, known);
                        nodes += n;
                        depth = depth.max(d);
                    }
                    (nodes, depth + 1)
                }
            }
        }
        let mut known: HashMap<&str, (f64, usize)> = HashMap::new();
        for m in measurands {
            let (nodes, depth) = walk(&m.formula, &known);
            let over_nodes = nodes > self.limits.max_formula_nodes as f64;
            let over_depth = depth > self.limits.max_formula_depth;
            if over_nodes || over_depth {
                let path = format!("measurands[{}].formula", index[&m.name]);
                let msg = if over_nodes {
                    format!(
                        "with the measurands it uses written out, the formula of `{}` has about {:.3e} nodes; \
                         the limit is {} (INCERTUS_MAX_FORMULA_NODES)",
                        m.name, nodes, self.limits.max_formula_nodes
                    )
                } else {
                    format!(
                        "with the measurands it uses written out, the formula of `{}` is nested {} levels deep; \
                         the limit is {} (INCERTUS_MAX_FORMULA_DEPTH)",
                        m.name, depth, self.limits.max_formula_depth
                    )
                };
                return Err(self.err(&path, msg).with_kind(ModelErrorKind::Limit));
            }
            known.insert(m.name.as_str(), (nodes, depth));
        }
        Ok(())
    }

    /// Every formula's dimension, and each measurand's against its unit.
    pub(super) fn check_dimensions(
        &self,
        inputs: &[Input],
        measurands: &mut [Measurand],
        index: &Map<String, usize>,
    ) -> Result<()> {
        use incertus_units::Dimension;
        let mut expanded: Vec<(String, incertus_expr::Expr)> = Vec::new();
        let mut known: Vec<(String, Dimension)> = inputs
            .iter()
            .map(|i| {
                (
                    i.name.clone(),
                    i.unit_si.as_ref().map_or(Dimension::ONE, |u| u.dimension),
                )
            })
            .collect();
        for m in measurands.iter_mut() {
            let path = format!("measurands[{}]", index[&m.name]);
            let fpath = join(&path, "formula");
            let of = |n: &str| {
                known
                    .iter()
                    .find(|(k, _)| k == n)
                    .map_or(Dimension::ONE, |(_, d)| *d)
            };
            let d = crate::dimensions::dimension(&m.formula, &of)
                .map_err(|e| self.origin.formula_error(&fpath, &m.formula_text, &e))?;
            if let Some(u) = &m.unit_si {
                if u.dimension != d {
                    return Err(self.err(
                        &join(&path, "unit"),
                        format!(
                            "the formula of `{}` has dimension {d}, but its unit `{}` has dimension {}",
                            m.name,
                            m.unit.as_deref().unwrap_or(""),
                            u.dimension
                        ),
                    ));
                }
            }
            let full = crate::propagate::substitute(&m.formula, &expanded);
            if m.unit_si.as_ref().is_some_and(|u| u.offset != 0.0) {
                match crate::offsets::classify(&full, inputs) {
                    crate::offsets::OnScale::Point => {}
                    crate::offsets::OnScale::Interval => m.interval = true,
                    crate::offsets::OnScale::Neither(message) => {
                        let e = incertus_expr::FormulaError::new(
                            incertus_expr::ErrorKind::Domain,
                            message,
                            m.formula.span,
                        );
                        return Err(self.origin.formula_error(&fpath, &m.formula_text, &e));
                    }
                }
            }
            expanded.push((m.name.clone(), full));
            if m.unit_si.is_none() && !d.is_one() {
                // No unit stated: the result is reported in its coherent SI
                // unit (SI Brochure, 9th ed., 2.3.4), named so everywhere.
                let text = crate::dimensions::coherent_si_unit(d);
                m.unit = Some(text.clone());
                m.unit_si = Some(incertus_units::Unit {
                    text,
                    dimension: d,
                    factor: 1.0,
                    offset: 0.0,
                });
            }
            known.push((m.name.clone(), d));
        }
        Ok(())
    }

    pub(super) fn check_formula_names(
        &self,
        inputs: &[Input],
        measurands: &[Measurand],
    ) -> Result<()> {
        for (m, meas) in measurands.iter().enumerate() {
            let fpath = format!("measurands[{m}].formula");
            for (name, span) in var_spans(&meas.formula) {
                if inputs.iter().any(|i| i.name == name)
                    || measurands.iter().any(|x| x.name == name)
                {
                    continue;
                }
                let mut msg = format!("`{name}` is neither an input nor a measurand");
                let all = inputs
                    .iter()
                    .map(|i| i.name.as_str())
                    .chain(measurands.iter().map(|x| x.name.as_str()));
                if let Some(c) = closest(&name, all) {
                    msg.push_str(&format!("; did you mean `{c}`?"));
                } else if constants::find(&name).is_some() {
                    msg.push_str(&format!(
                        "; to use the physical constant, add [inputs.{name}] with constant = \"{name}\""
                    ));
                }
                let e = FormulaError::new(incertus_expr::ErrorKind::Name, msg, span);
                return Err(self.origin.formula_error(&fpath, &meas.formula_text, &e));
            }
        }
        Ok(())
    }
}
/// Every name in a formula with the span of its first use.
pub(super) fn var_spans(e: &Expr) -> Vec<(String, incertus_expr::Span)> {
    let mut out: Vec<(String, incertus_expr::Span)> = Vec::new();
    let mut stack = vec![e];
    while let Some(x) = stack.pop() {
        if let Kind::Var(n) = &x.kind {
            if !out.iter().any(|(o, _)| o == n) {
                out.push((n.clone(), x.span));
            }
        }
        let mut ch = x.children();
        ch.reverse();
        stack.extend(ch);
    }
    out
}

/// Order measurands so that each comes after those it uses; a cycle is an
/// error naming it.
pub(super) fn order_measurands(ms: Vec<Measurand>) -> Result<Vec<Measurand>, String> {
    let n = ms.len();
    let at: Map<&str, usize> = ms
        .iter()
        .enumerate()
        .map(|(i, m)| (m.name.as_str(), i))
        .collect();
    let deps: Vec<Vec<usize>> = ms
        .iter()
        .map(|m| {
            let mut d: Vec<usize> = m
                .formula
                .names()
                .iter()
                .filter_map(|x| at.get(x.as_str()).copied())
                .collect();
            d.sort_unstable();
            d.dedup();
            d
        })
        .collect();
    // Depth-first search with colours, reporting the first cycle found.
    let mut state = vec![0u8; n]; // 0 new, 1 on the path, 2 done
    let mut order = Vec::with_capacity(n);
    fn visit(
        i: usize,
        deps: &[Vec<usize>],
        state: &mut [u8],
        order: &mut Vec<usize>,
        path: &mut Vec<usize>,
    ) -> Option<Vec<usize>> {
        state[i] = 1;
        path.push(i);
        for &j in &deps[i] {
            if state[j] == 1 {
                let start = path.iter().position(|&p| p == j).expect("j is on the path");
                let mut cycle = path[start..].to_vec();
                cycle.push(j);
                return Some(cycle);
            }
            if state[j] == 0 {
                if let Some(c) = visit(j, deps, state, order, path) {
                    return Some(c);
                }
            }
        }
        path.pop();
        state[i] = 2;
        order.push(i);
        None
    }
    for i in 0..n {
        if state[i] == 0 {
            let mut path = Vec::new();
            if let Some(cycle) = visit(i, &deps, &mut state, &mut order, &mut path) {
                let names: Vec<&str> = cycle.iter().map(|&c| ms[c].name.as_str()).collect();
                return Err(format!(
                    "the measurands depend on one another in a cycle: {}",
                    names.join(" -> ")
                ));
            }
        }
    }
    let mut slots: Vec<Option<Measurand>> = ms.into_iter().map(Some).collect();
    Ok(order
        .into_iter()
        .map(|i| slots[i].take().expect("each measurand once"))
        .collect())
}

impl Validator<'_, '_> {
    /// The measurands in dependency order; a cycle is an error at the first
    /// measurand on it (they are still in the order given here).
    pub(super) fn order_measurands(&self, ms: Vec<Measurand>) -> Result<Vec<Measurand>> {
        let first: Map<String, usize> = ms
            .iter()
            .enumerate()
            .map(|(i, m)| (m.name.clone(), i))
            .collect();
        order_measurands(ms).map_err(|msg| {
            let name = msg
                .rsplit(": ")
                .next()
                .and_then(|c| c.split(" -> ").next())
                .unwrap_or("");
            let i = first.get(name).copied().unwrap_or(0);
            self.origin.key_error(&format!("measurands[{i}]"), msg)
        })
    }
}
