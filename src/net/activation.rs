//! Applying a hidden layer's activation to a candle tensor (differentiably).

use candle_core::Tensor;

use crate::genome::Activation;

/// `activation(z)` element-wise, with gradients: relu, tanh, GELU in its tanh
/// approximation (candle's `gelu`), and the logistic sigmoid.
pub(crate) fn apply_activation(activation: Activation, z: &Tensor) -> candle_core::Result<Tensor> {
    match activation {
        Activation::Relu => z.relu(),
        Activation::Tanh => z.tanh(),
        Activation::Gelu => z.gelu(),
        Activation::Sigmoid => candle_nn::ops::sigmoid(z),
    }
}
