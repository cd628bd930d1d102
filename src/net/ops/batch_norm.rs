//! Batch normalisation over (N, H, W) for each channel, with running statistics.

use candle_core::{Device, Tensor, Var};

use super::batch_norm_kernel::{channel_stats, normalise, ChannelStats};
use super::checks::f32_dims4;
use crate::{Error, Result};

/// Weight of the newest batch in the running statistics (PyTorch's default `momentum`).
const MOMENTUM: f64 = 0.1;
/// Added to the variance before the square root (PyTorch's default `eps`).
pub(crate) const EPS: f64 = 1e-5;

/// 2-D batch normalisation with a learnable per-channel scale `gamma`
/// (starts at 1) and shift `beta` (starts at 0), following
/// `torch.nn.BatchNorm2d` with its defaults (momentum 0.1, eps 1e-5,
/// affine, tracking running statistics).
///
/// In training mode each channel is normalised with the batch's own mean
/// and *biased* variance (divided by N·H·W), and the running statistics
/// move towards the batch's: `running = 0.9·running + 0.1·batch`, where
/// the variance entering the running average is the *unbiased* one
/// (divided by N·H·W − 1), as PyTorch does. In eval mode the running
/// statistics (initially mean 0, variance 1) are used instead.
#[derive(Clone, Debug)]
pub struct BatchNorm2d {
    gamma: Var,
    beta: Var,
    running_mean: Tensor,
    running_var: Tensor,
    channels: usize,
}

impl BatchNorm2d {
    /// A batch norm for `channels` channels: gamma 1, beta 0, running mean 0, running variance 1.
    pub fn new(channels: usize) -> Result<Self> {
        let device = Device::Cpu;
        Ok(Self {
            gamma: Var::ones(channels, candle_core::DType::F32, &device)?,
            beta: Var::zeros(channels, candle_core::DType::F32, &device)?,
            running_mean: Tensor::zeros(channels, candle_core::DType::F32, &device)?,
            running_var: Tensor::ones(channels, candle_core::DType::F32, &device)?,
            channels,
        })
    }

    /// Normalises `x` of shape (N, C, H, W). With `train`, batch statistics
    /// are used and the running statistics updated (an error when a channel
    /// has fewer than 2 values, as in PyTorch); otherwise the running
    /// statistics are used and nothing changes. Differentiable in `x`,
    /// gamma and beta.
    pub fn forward(&mut self, x: &Tensor, train: bool) -> Result<Tensor> {
        let (n, c, h, w) = f32_dims4(x, "batch norm input")?;
        if c != self.channels {
            return Err(Error::input(format!(
                "batch norm for {} channels got an input with {c} channels",
                self.channels
            )));
        }
        let dims = (n, c, h, w);
        let x = x.contiguous()?;
        let (gamma, beta) = (self.gamma.as_tensor(), self.beta.as_tensor());
        if !train {
            let stats = ChannelStats {
                mean: self.running_mean.to_vec1()?,
                var: self.running_var.to_vec1()?,
            };
            return Ok(normalise(&x, gamma, beta, &stats, EPS, false, dims)?);
        }
        let count = n * h * w;
        if count < 2 {
            return Err(Error::input(format!(
                "batch norm in training mode needs more than 1 value per channel, got input shape {:?}",
                x.dims()
            )));
        }
        let stats = channel_stats(&x, dims)?;
        let output = normalise(&x, gamma, beta, &stats, EPS, true, dims)?;
        let correction = count as f32 / (count - 1) as f32;
        let unbiased: Vec<f32> = stats.var.iter().map(|v| v * correction).collect();
        self.update_running_stats(
            &Tensor::from_vec(stats.mean, c, x.device())?,
            &Tensor::from_vec(unbiased, c, x.device())?,
        )?;
        Ok(output)
    }

    /// Moves the running statistics towards a batch's mean and unbiased variance.
    fn update_running_stats(&mut self, batch_mean: &Tensor, batch_var: &Tensor) -> Result<()> {
        let keep = 1.0 - MOMENTUM;
        self.running_mean = ((&self.running_mean * keep)? + (batch_mean * MOMENTUM)?)?;
        self.running_var = ((&self.running_var * keep)? + (batch_var * MOMENTUM)?)?;
        Ok(())
    }

    /// The learnable parameters: gamma then beta, each of shape (C).
    pub fn vars(&self) -> Vec<Var> {
        vec![self.gamma.clone(), self.beta.clone()]
    }

    /// The running mean and running (unbiased) variance, each of shape (C).
    pub fn running_stats(&self) -> (Tensor, Tensor) {
        (self.running_mean.clone(), self.running_var.clone())
    }

    /// Replaces the running statistics (e.g. loaded from a weights file);
    /// both must be f32 of shape (C). They are stored detached from any graph.
    pub fn set_running_stats(&mut self, mean: Tensor, var: Tensor) -> Result<()> {
        for (tensor, what) in [(&mean, "running mean"), (&var, "running variance")] {
            if tensor.dtype() != candle_core::DType::F32 || tensor.dims() != [self.channels] {
                return Err(Error::input(format!(
                    "batch norm {what} must be f32 of shape [{}], got {:?} of shape {:?}",
                    self.channels,
                    tensor.dtype(),
                    tensor.dims()
                )));
            }
        }
        self.running_mean = mean.detach();
        self.running_var = var.detach();
        Ok(())
    }
}
