//! One model evaluated for many items: a laboratory's procedure applied to
//! every item it measures, each item changing some inputs' numbers.
//!
//! The model's symbolic work (formulas written out in the inputs, how
//! each input enters each measurand, derivatives) is done once and shared
//! ([`crate::propagate::DerivativeCache`]); an item's changed inputs are
//! checked and converted exactly as a model file's are (the same
//! validation), correlations of inputs observed together are recomputed
//! when their series change, and the evaluation is
//! [`crate::propagate::propagate_cached`]: every item's result equals
//! `propagate` of the model with that item's values written in.

use std::collections::HashSet;

use crate::description::{InputDescription, ModelDescription};
use crate::model::Model;
use crate::propagate::{propagate_cached, DerivativeCache, Options, Report};
use crate::validate::{Origin, Validator};

/// What is wrong with one item: the key at fault (`x.standard_uncertainty`,
/// `x` for the estimate; empty when it is the evaluation as a whole) and
/// the message.
#[derive(Clone, Debug, PartialEq)]
pub struct ItemError {
    /// `INPUT.KEY`, `INPUT`, or empty.
    pub key: String,
    /// What is wrong.
    pub message: String,
}

impl std::fmt::Display for ItemError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        if self.key.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "`{}`: {}", self.key, self.message)
        }
    }
}

/// A model prepared for evaluation over many items.
#[derive(Debug)]
pub struct Batch {
    description: ModelDescription,
    model: Model,
    opts: Options,
    cache: DerivativeCache,
    /// Inputs observed together with others (their correlations come from
    /// their series).
    grouped: HashSet<String>,
}

impl Batch {
    /// Prepare `model`, validated from `description`, for evaluation with
    /// `opts`.
    pub fn new(description: ModelDescription, model: Model, opts: Options) -> Self {
        let grouped = description
            .observed_together
            .iter()
            .flatten()
            .cloned()
            .collect();
        Batch {
            description,
            model,
            opts,
            cache: DerivativeCache::default(),
            grouped,
        }
    }

    /// The model as the file gives it.
    pub fn model(&self) -> &Model {
        &self.model
    }

    /// The description of the input called `name`.
    pub fn input(&self, name: &str) -> Option<&InputDescription> {
        self.description.inputs.iter().find(|i| i.name == name)
    }

    /// The model with `changed` inputs (descriptions of inputs of the
    /// model, by name) in place of the file's.
    pub fn model_with(&self, changed: &[InputDescription]) -> Result<Model, ItemError> {
        let origin = Origin::built();
        let v = Validator {
            origin: &origin,
            limits: self.opts.limits,
            draft: false,
        };
        let mut model = self.model.clone();
        let mut regroup = false;
        for d in changed {
            let Some(at) = model.inputs.iter().position(|i| i.name == d.name) else {
                return Err(ItemError {
                    key: d.name.clone(),
                    message: format!("the model has no input `{}`", d.name),
                });
            };
            let path = format!("inputs.{}", d.name);
            let input = v
                .input(d, &path, &model.fits)
                .and_then(|i| v.to_si(i, &path))
                .map_err(|e| item_error(&d.name, &e))?;
            let base = &model.inputs[at];
            let input = crate::model::Input {
                stated_sensitivities: base.stated_sensitivities.clone(),
                line: base.line,
                ..input
            };
            model.inputs[at] = input;
            regroup |= self.grouped.contains(&d.name);
        }
        if regroup {
            model.correlations = v
                .correlations(&self.description, &model.inputs, &model.fits)
                .map_err(|e| item_error("", &e))?;
        }
        Ok(model)
    }

    /// The evaluation of the model with `changed` inputs.
    pub fn evaluate(&self, changed: &[InputDescription]) -> Result<Report, ItemError> {
        self.evaluate_model(&self.model_with(changed)?)
    }

    /// The evaluation of a model made by [`Batch::model_with`].
    pub fn evaluate_model(&self, model: &Model) -> Result<Report, ItemError> {
        propagate_cached(model, &self.opts, &self.cache).map_err(|e| ItemError {
            key: String::new(),
            message: e.to_string(),
        })
    }
}

/// A validation error of a changed input as an item error: the key
/// `INPUT.KEY` from the error's path `inputs.INPUT.KEY`.
fn item_error(input: &str, e: &crate::load::ModelError) -> ItemError {
    let key = e
        .path
        .strip_prefix("inputs.")
        .map(str::to_string)
        .unwrap_or_else(|| input.to_string());
    let mut message = e.message.clone();
    if let Some(d) = &e.detail {
        message.push('\n');
        message.push_str(d);
    }
    ItemError { key, message }
}
