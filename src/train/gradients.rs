//! Loss and gradients of one mini-batch.

use candle_core::Tensor;
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
/// ([`Mlp::build`] or [`Mlp::from_weights`]). Used by the trainer; public for
/// tests and tools.
pub fn compute_gradients<R: RngCore>(
    mlp: &Mlp,
    x: &Tensor,
    labels: &Tensor,
    rng: &mut R,
) -> Result<Gradients> {
    let logits = mlp.forward(x, true, rng)?;
    let loss = candle_nn::loss::cross_entropy(&logits, labels)?;
    let loss_value = loss.to_scalar::<f32>()?;
    let mut store = loss.backward()?;
    let tensors = mlp
        .parameters()
        .into_iter()
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
