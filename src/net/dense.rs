//! The building blocks of an [`Mlp`](super::Mlp): affine maps and hidden layers.

use candle_core::Tensor;
use rand::{Rng, RngCore};

use super::activation::apply_activation;
use crate::genome::Activation;

/// z = h·W + b, with W of shape (fan_in, fan_out) and b of shape (fan_out).
#[derive(Clone, Debug)]
pub(crate) struct Affine {
    pub(crate) weight: Tensor,
    pub(crate) bias: Tensor,
}

impl Affine {
    /// h·W + b.
    pub(crate) fn forward(&self, h: &Tensor) -> candle_core::Result<Tensor> {
        h.matmul(&self.weight)?.broadcast_add(&self.bias)
    }
}

/// One hidden layer: `a = act(h·W + b)`, `+ h` when residual, then dropout in training.
#[derive(Clone, Debug)]
pub(crate) struct HiddenLayer {
    pub(crate) affine: Affine,
    pub(crate) activation: Activation,
    pub(crate) residual: bool,
    pub(crate) dropout: f32,
}

impl HiddenLayer {
    /// The layer's output; dropout is applied only when `dropout_rng` is given (training).
    pub(crate) fn forward<'r>(
        &self,
        h: &Tensor,
        dropout_rng: Option<&mut (dyn RngCore + 'r)>,
    ) -> candle_core::Result<Tensor> {
        let z = self.affine.forward(h)?;
        let mut a = apply_activation(self.activation, &z)?;
        if self.residual {
            a = (a + h)?;
        }
        if let (Some(rng), true) = (dropout_rng, self.dropout > 0.0) {
            a = inverted_dropout(&a, self.dropout, rng)?;
        }
        Ok(a)
    }
}

/// Zeroes each value with probability `p` and scales the survivors by
/// 1/(1−p), so the expected output equals the input; the mask comes from `rng`.
fn inverted_dropout(a: &Tensor, p: f32, rng: &mut dyn RngCore) -> candle_core::Result<Tensor> {
    let keep_scale = 1.0 / (1.0 - p);
    let mask: Vec<f32> = (0..a.elem_count())
        .map(|_| {
            if rng.gen::<f32>() < p {
                0.0
            } else {
                keep_scale
            }
        })
        .collect();
    let mask = Tensor::from_vec(mask, a.shape(), a.device())?;
    a.mul(&mask)
}
