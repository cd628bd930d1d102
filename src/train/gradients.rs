//! Loss and gradients of one mini-batch through candle's autograd (the
//! plain or the class-weighted mean cross-entropy).

use candle_core::{Tensor, Var, D};
use rand::RngCore;

use super::input_checks::check_class_weights;
use crate::net::Mlp;
use crate::{Error, Result};

/// The mean (or class-weighted mean) softmax cross-entropy of a mini-batch
/// and its gradient with respect to every parameter tensor.
#[derive(Clone, Debug)]
pub struct Gradients {
    /// Mean (or weighted mean) cross-entropy over the batch (NaN or infinite
    /// when training diverged).
    pub loss: f32,
    /// One gradient per parameter, in [`Mlp::parameters`] order and shape.
    pub tensors: Vec<Tensor>,
}

impl Gradients {
    /// The gradients as row-major vectors, for tests and tools.
    pub fn to_vecs(&self) -> Result<Vec<Vec<f32>>> {
        self.tensors
            .iter()
            .map(|t| Ok(t.flatten_all()?.to_vec1::<f32>()?))
            .collect()
    }
}

/// Runs `mlp` on the batch `x` (rows × n_inputs, f32) in training mode
/// (dropout masks from `rng`), takes the mean softmax cross-entropy against
/// `labels` (rows, u32) and back-propagates it. The network must be trainable
/// ([`Mlp::build`] or [`Mlp::from_weights`]). Public for tests and tools.
pub fn compute_gradients<R: RngCore>(
    mlp: &Mlp,
    x: &Tensor,
    labels: &Tensor,
    rng: &mut R,
) -> Result<Gradients> {
    let logits = mlp.forward(x, true, rng)?;
    let parameters: Vec<&Tensor> = mlp.parameters();
    gradients_of_logits(&logits, labels, None, &parameters)
}

/// [`compute_gradients`] with the class-weighted mean cross-entropy
/// Σ w_{y_i}·CE_i / Σ w_{y_i} (see
/// [`TrainSettings::class_weights`](super::TrainSettings::class_weights)):
/// `class_weights` holds one finite, positive weight per class. Public for
/// tests and tools.
pub fn compute_weighted_gradients<R: RngCore>(
    mlp: &Mlp,
    x: &Tensor,
    labels: &Tensor,
    class_weights: &[f32],
    rng: &mut R,
) -> Result<Gradients> {
    check_class_weights(class_weights, mlp.n_classes())?;
    let row_weights = row_weights(&labels.to_vec1::<u32>()?, class_weights)?;
    let logits = mlp.forward(x, true, rng)?;
    let parameters: Vec<&Tensor> = mlp.parameters();
    gradients_of_logits(&logits, labels, Some(&row_weights), &parameters)
}

/// The weight of each row's class, for a batch of `labels`.
pub(crate) fn row_weights(labels: &[u32], class_weights: &[f32]) -> Result<Vec<f32>> {
    labels
        .iter()
        .map(|&label| {
            class_weights.get(label as usize).copied().ok_or_else(|| {
                Error::input(format!(
                    "class index {label} is out of range for {} classes",
                    class_weights.len()
                ))
            })
        })
        .collect()
}

/// The mean softmax cross-entropy of `logits` (rows × classes, recorded for
/// back-propagation) against `labels` and its gradient with respect to each
/// of `parameters` (variables), in order. With `row_weights` (one per row)
/// the mean is weighted: Σ w_i·CE_i / Σ w_i, the total taken in f64. A
/// parameter the loss does not depend on is an internal error.
pub(crate) fn gradients_of_logits(
    logits: &Tensor,
    labels: &Tensor,
    row_weights: Option<&[f32]>,
    parameters: &[&Tensor],
) -> Result<Gradients> {
    let loss = match row_weights {
        None => candle_nn::loss::cross_entropy(logits, labels)?,
        Some(weights) => weighted_cross_entropy(logits, labels, weights)?,
    };
    let loss_value = loss.to_scalar::<f32>()?;
    let mut store = loss.backward()?;
    let tensors = parameters
        .iter()
        .map(|parameter| {
            store.remove(parameter).ok_or_else(|| {
                Error::internal("a parameter got no gradient (is the network trainable?)")
            })
        })
        .collect::<Result<Vec<_>>>()?;
    Ok(Gradients {
        loss: loss_value,
        tensors,
    })
}

/// −Σ w_i·log softmax(logits_i)[label_i] / Σ w_i, recorded for back-propagation.
fn weighted_cross_entropy(logits: &Tensor, labels: &Tensor, weights: &[f32]) -> Result<Tensor> {
    let total: f64 = weights.iter().map(|&w| f64::from(w)).sum();
    let log_probabilities = candle_nn::ops::log_softmax(logits, D::Minus1)?;
    let picked = log_probabilities
        .gather(&labels.unsqueeze(1)?, 1)?
        .squeeze(1)?;
    let weights = Tensor::from_slice(weights, weights.len(), logits.device())?;
    Ok((picked * weights)?.sum_all()?.affine(-1.0 / total, 0.0)?)
}

/// The tensors behind `variables`, sharing their storage.
pub(crate) fn variable_tensors(variables: &[Var]) -> Vec<&Tensor> {
    variables.iter().map(Var::as_tensor).collect()
}
