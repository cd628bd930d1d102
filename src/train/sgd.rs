//! Stochastic gradient descent with momentum on plain buffers.

use crate::{Error, Result};

/// The momentum coefficient μ used by the `sgd_momentum` optimiser gene.
pub const SGD_MOMENTUM: f32 = 0.9;

/// One SGD-with-momentum step, in place, for one parameter buffer, in
/// PyTorch's form (no dampening, no Nesterov): g = grad + l2·θ;
/// velocity ← μ·velocity + g; θ ← θ − lr·velocity. `velocity` starts at zero.
pub fn sgd_momentum_step(
    theta: &mut [f32],
    grad: &[f32],
    velocity: &mut [f32],
    learning_rate: f32,
    l2: f32,
) -> Result<()> {
    let n = theta.len();
    if grad.len() != n || velocity.len() != n {
        return Err(Error::internal(format!(
            "sgd_momentum_step: buffer lengths differ (theta {n}, grad {}, velocity {})",
            grad.len(),
            velocity.len()
        )));
    }
    for ((theta, &grad), velocity) in theta.iter_mut().zip(grad).zip(velocity.iter_mut()) {
        let g = grad + l2 * *theta;
        *velocity = SGD_MOMENTUM * *velocity + g;
        *theta -= learning_rate * *velocity;
    }
    Ok(())
}
