//! The Adam update (Kingma & Ba 2015, Algorithm 1) on plain buffers.

use crate::{Error, Result};

/// Adam's hyper-parameters.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AdamSettings {
    /// Step size α.
    pub learning_rate: f64,
    /// Decay of the first-moment estimate, β1.
    pub beta1: f64,
    /// Decay of the second-moment estimate, β2.
    pub beta2: f64,
    /// ε, added to √v̂ (after the square root, as in Algorithm 1 and PyTorch).
    pub epsilon: f64,
}

impl AdamSettings {
    /// The paper's defaults (β1 0.9, β2 0.999, ε 1e-8) with step size `learning_rate`.
    pub fn with_learning_rate(learning_rate: f64) -> Self {
        AdamSettings {
            learning_rate,
            beta1: 0.9,
            beta2: 0.999,
            epsilon: 1e-8,
        }
    }
}

/// One Adam step, in place, for one parameter buffer: `step` is the 1-based
/// step count t shared by all buffers; `m` and `v` are this buffer's moment
/// estimates (zero before step 1).
///
/// With `l2` > 0 the gradient used is `grad + l2·theta` (L2 regularisation
/// folded into the gradient, not AdamW's decoupled decay). Per value:
/// m ← β1·m + (1−β1)·g; v ← β2·v + (1−β2)·g²;
/// θ ← θ − α·(m/(1−β1ᵗ)) / (√(v/(1−β2ᵗ)) + ε).
/// Public so tests and tools can run a single step; the trainer calls it for
/// every parameter tensor.
pub fn adam_step(
    theta: &mut [f32],
    grad: &[f32],
    m: &mut [f32],
    v: &mut [f32],
    step: u32,
    settings: &AdamSettings,
    l2: f32,
) -> Result<()> {
    let n = theta.len();
    if grad.len() != n || m.len() != n || v.len() != n {
        return Err(Error::internal(format!(
            "adam_step: buffer lengths differ (theta {n}, grad {}, m {}, v {})",
            grad.len(),
            m.len(),
            v.len()
        )));
    }
    if step == 0 {
        return Err(Error::internal("adam_step: steps are counted from 1"));
    }
    let t = f64::from(step);
    let bias_correction1 = 1.0 - settings.beta1.powf(t);
    let bias_correction2 = 1.0 - settings.beta2.powf(t);
    let coefficients = AdamCoefficients {
        lr: settings.learning_rate as f32,
        beta1: settings.beta1 as f32,
        beta2: settings.beta2 as f32,
        one_minus_beta1: (1.0 - settings.beta1) as f32,
        one_minus_beta2: (1.0 - settings.beta2) as f32,
        inv_correction1: (1.0 / bias_correction1) as f32,
        inv_correction2: (1.0 / bias_correction2) as f32,
        epsilon: settings.epsilon as f32,
        l2,
    };
    let buffers = AdamBuffers { theta, grad, m, v };
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU supports AVX2 (checked just above).
        unsafe { adam_values_avx2(buffers, &coefficients) };
        return Ok(());
    }
    adam_values(buffers, &coefficients);
    Ok(())
}

/// The f32 constants of one Adam step.
struct AdamCoefficients {
    lr: f32,
    beta1: f32,
    beta2: f32,
    one_minus_beta1: f32,
    one_minus_beta2: f32,
    inv_correction1: f32,
    inv_correction2: f32,
    epsilon: f32,
    l2: f32,
}

/// The equally long buffers one Adam step updates.
struct AdamBuffers<'a> {
    theta: &'a mut [f32],
    grad: &'a [f32],
    m: &'a mut [f32],
    v: &'a mut [f32],
}

/// [`adam_values`] compiled for 256-bit vectors. The arithmetic is the same
/// (Rust never fuses a multiply and an add on its own), so results are
/// bit-identical to the baseline build.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn adam_values_avx2(buffers: AdamBuffers<'_>, c: &AdamCoefficients) {
    adam_values(buffers, c);
}

#[inline(always)]
fn adam_values(buffers: AdamBuffers<'_>, c: &AdamCoefficients) {
    let AdamBuffers { theta, grad, m, v } = buffers;
    let values = theta
        .iter_mut()
        .zip(grad)
        .zip(m.iter_mut().zip(v.iter_mut()));
    for ((theta, &grad), (m, v)) in values {
        let g = grad + c.l2 * *theta;
        *m = c.beta1 * *m + c.one_minus_beta1 * g;
        *v = c.beta2 * *v + c.one_minus_beta2 * g * g;
        let m_hat = *m * c.inv_correction1;
        let v_hat = *v * c.inv_correction2;
        *theta -= c.lr * m_hat / (v_hat.sqrt() + c.epsilon);
    }
}
