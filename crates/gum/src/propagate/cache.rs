//! The symbolic work of a model kept for evaluations that share its
//! formulas (`propagate_cached`, `crate::batch`).

use std::collections::HashMap;

use incertus_expr::{print, simplify, Expr, Kind};

use super::{checked_derivative, Chain, Context, PropagationError, CHAIN_RULE_FROM};
use crate::model::Measurand;

/// A derivative of a measurand's formula, kept for evaluations that share
/// the model's formulas.
#[derive(Debug)]
pub(crate) struct Derived {
    pub(super) expr: Expr,
    pub(super) text: String,
    /// Whether it simplifies to 0 (the input does not really enter),
    /// found when first asked.
    zero: std::sync::OnceLock<bool>,
}

impl Derived {
    pub(super) fn is_zero(&self) -> bool {
        *self
            .zero
            .get_or_init(|| matches!(simplify(&self.expr).kind, Kind::Num(v) if v == 0.0))
    }
}

/// How one input enters one measurand's formula.
#[derive(Clone, Debug)]
pub(super) enum Plan {
    NotUsed,
    ChainRule,
    Direct(std::sync::Arc<Derived>),
}

/// The symbolic work of a model, done once and shared by evaluations of
/// the same formulas at other input values (`crate::batch`): the formulas
/// written out in the inputs, and per measurand how each input enters it
/// with its derivative. A fresh cache for every `propagate`; filled on
/// first use, read by later evaluations from any thread.
#[derive(Debug, Default)]
pub struct DerivativeCache {
    pub(super) expanded: std::sync::OnceLock<Vec<(String, Expr)>>,
    plans: std::sync::RwLock<HashMap<String, std::sync::Arc<Vec<Plan>>>>,
    own: std::sync::RwLock<HashMap<(String, String), std::sync::Arc<Derived>>>,
}

fn derived(expr: Expr) -> Derived {
    Derived {
        text: print(&expr),
        zero: std::sync::OnceLock::new(),
        expr,
    }
}

impl Context<'_> {
    /// How each input enters the measurand `m` (formula `f` in the inputs):
    /// not at all, by the chain rule, or through its derivative; from the
    /// cache when an earlier evaluation of the same formulas made it.
    pub(super) fn plan(
        &self,
        m: &Measurand,
        f: &Expr,
        chain: &Chain,
    ) -> Result<std::sync::Arc<Vec<Plan>>, PropagationError> {
        if let Some(p) = self
            .cache
            .plans
            .read()
            .ok()
            .and_then(|c| c.get(&m.name).cloned())
        {
            return Ok(p);
        }
        let through_measurands = m
            .formula
            .names()
            .iter()
            .any(|w| chain.row_of.contains_key(w.as_str()));
        let mut plan = Vec::with_capacity(self.model.inputs.len());
        for input in &self.model.inputs {
            let name = &input.name;
            if !f.depends_on(name) {
                plan.push(Plan::NotUsed);
                continue;
            }
            // A chain of measurands: the derivative of the formula written
            // out grows with the square of the chain; the chain rule over
            // each measurand's own formula stays linear (same value to the
            // last bits, JCGM 100:2008, 5.1.3).
            if through_measurands && incertus_expr::derivative_size(f, name) > CHAIN_RULE_FROM {
                plan.push(Plan::ChainRule);
                continue;
            }
            let d = checked_derivative(f, name, self.opts.limits.max_derivative_nodes, &m.name)
                .map_err(|e| e.at(m.line))?;
            plan.push(Plan::Direct(std::sync::Arc::new(derived(d))));
        }
        let plan = std::sync::Arc::new(plan);
        if let Ok(mut c) = self.cache.plans.write() {
            c.insert(m.name.clone(), plan.clone());
        }
        Ok(plan)
    }

    /// ∂(own formula of `m`)/∂w, from the cache when it holds it.
    pub(super) fn own_derivative(
        &self,
        m: &Measurand,
        w: &str,
    ) -> Result<std::sync::Arc<Derived>, PropagationError> {
        let key = (m.name.clone(), w.to_string());
        if let Some(d) = self
            .cache
            .own
            .read()
            .ok()
            .and_then(|c| c.get(&key).cloned())
        {
            return Ok(d);
        }
        let d = checked_derivative(
            &m.formula,
            w,
            self.opts.limits.max_derivative_nodes,
            &m.name,
        )?;
        let d = std::sync::Arc::new(derived(d));
        if let Ok(mut c) = self.cache.own.write() {
            c.insert(key, d.clone());
        }
        Ok(d)
    }
}
