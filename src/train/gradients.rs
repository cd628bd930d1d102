//! Loss and gradients of one mini-batch through candle's autograd.

use candle_core::{Tensor, Var};
use rand::RngCore;

use crate::net::Mlp;
use crate::{Error, Result};

/// The mean softmax cross-entropy of a mini-batch and its gradient with
/// respect to every parameter tensor.
#[derive(Clone, Debug)]
pub struct Gradients {
    /// Mean cross-entropy over the batch (NaN or infinite when training diverged).
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
    gradients_of_logits(&logits, labels, &parameters)
}

/// The mean softmax cross-entropy of `logits` (rows × classes, recorded for
/// back-propagation) against `labels` and its gradient with respect to each
/// of `parameters` (variables), in order. A parameter the loss does not
/// depend on is an internal error.
pub(crate) fn gradients_of_logits(
    logits: &Tensor,
    labels: &Tensor,
    parameters: &[&Tensor],
) -> Result<Gradients> {
    let loss = candle_nn::loss::cross_entropy(logits, labels)?;
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

/// The tensors behind `variables`, sharing their storage.
pub(crate) fn variable_tensors(variables: &[Var]) -> Vec<&Tensor> {
    variables.iter().map(Var::as_tensor).collect()
}
