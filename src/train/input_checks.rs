//! Checks of a training request before any work starts.

use super::settings::TrainSettings;
use crate::data::Dataset;
use crate::{Error, Result};

/// Checks epochs, class weights, both datasets and their agreement with each other and with
/// a network of `n_inputs` features and `n_classes` classes.
pub(crate) fn check_inputs(
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
    n_inputs: usize,
    n_classes: usize,
) -> Result<()> {
    if settings.max_epochs == 0 {
        return Err(Error::input("max_epochs is 0, allowed range is 1 or more"));
    }
    check_dataset("training", train)?;
    if let Some(valid) = valid {
        check_dataset("validation", valid)?;
        if valid.n_features != train.n_features || valid.n_classes != train.n_classes {
            return Err(Error::input(format!(
                "the validation set has {} features and {} classes but the training set has {} and {}",
                valid.n_features, valid.n_classes, train.n_features, train.n_classes
            )));
        }
    }
    if let Some(weights) = &settings.class_weights {
        check_class_weights(weights, n_classes)?;
    }
    if train.n_features != n_inputs || train.n_classes != n_classes {
        return Err(Error::input(format!(
            "the data has {} features and {} classes but the network takes {} and gives {}",
            train.n_features, train.n_classes, n_inputs, n_classes
        )));
    }
    Ok(())
}

/// Checks one dataset: rows present, sizes consistent, labels in range.
pub(crate) fn check_dataset(role: &str, data: &Dataset) -> Result<()> {
    if data.is_empty() {
        return Err(Error::input(format!("the {role} set has no rows")));
    }
    if data.n_features == 0 || data.n_classes == 0 {
        return Err(Error::input(format!(
            "the {role} set has {} features and {} classes; both must be at least 1",
            data.n_features, data.n_classes
        )));
    }
    if data.x.len() != data.len() * data.n_features {
        return Err(Error::input(format!(
            "the {role} set has {} values for {} rows of {} features",
            data.x.len(),
            data.len(),
            data.n_features
        )));
    }
    if let Some(label) = data
        .y
        .iter()
        .find(|&&label| label as usize >= data.n_classes)
    {
        return Err(Error::input(format!(
            "the {role} set has class index {label}, out of range for {} classes",
            data.n_classes
        )));
    }
    Ok(())
}

/// Checks class weights of the training loss: one per class, each finite and
/// above 0 (a zero weight could leave a batch with no weight at all).
pub(crate) fn check_class_weights(weights: &[f32], n_classes: usize) -> Result<()> {
    if weights.len() != n_classes {
        return Err(Error::input(format!(
            "{} class weights were given for {n_classes} classes; give exactly one weight per \
             class, in class-index order",
            weights.len()
        )));
    }
    if let Some((class, weight)) = weights
        .iter()
        .enumerate()
        .find(|(_, w)| !w.is_finite() || **w <= 0.0)
    {
        return Err(Error::input(format!(
            "the weight of class {class} is {weight}; class weights must be finite numbers \
             above 0"
        )));
    }
    Ok(())
}
