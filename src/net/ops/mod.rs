//! The convolutional op family of NASNet-style cells, as differentiable
//! candle ops: grouped/dilated 2-D convolution, 3×3 max and average pooling
//! with padding 1, global average pooling, batch normalisation, ReLU and a
//! per-channel bias.
//!
//! Inputs are f32 tensors in (N, C, H, W) layout on the CPU. Each function
//! picks its kernel internally (custom candle ops with their own backward),
//! so faster kernels can replace slower ones without touching callers;
//! [`kernels`] exposes every convolution kernel and [`reference`] keeps
//! simple implementations built from candle's own ops, both for
//! cross-checks and timing.
//!
//! Forward + backward on a 64×16×8×8 input, one thread, µs (chosen kernel vs
//! reference; benches/ops_quick.rs, median thread CPU time, quiet machine at
//! load ~1, ±10%):
//!
//! | op | kernel | µs | reference µs |
//! |---|---|---|---|
//! | conv 3×3, pad 1 | im2col + gemm | 2,000 | 15,400 |
//! | conv 3×3, stride 2 | im2col + gemm | 930 | 4,500 |
//! | conv 1×1 | im2col + gemm | 240 | 2,400 |
//! | conv 3×3, dilation 2 | im2col + gemm | 2,900 | 18,200 |
//! | depthwise 3×3 (stride 1 / 2) | direct loops | 2,200 / 780 | 18,000 / 5,500 |
//! | max pool 3×3 (stride 1 / 2) | separable | 1,250 / 630 | 13,200 / 3,250 |
//! | avg pool 3×3 (stride 1 / 2) | separable | 460 / 310 | 7,650 / 2,200 |
//! | global avg pool | candle `mean` | 32 | 34 |
//! | batch norm (train / eval) | per-channel loops | 300 / 170 | 5,000 / 1,950 |
//! | relu | one-pass backward | 84 | 345 |
//! | channel bias | per-channel sums | 114 | 935 |
//!
//! (Depthwise 3×3 at stride 1 through im2col + gemm now measures 1,780; the
//! direct kernel stays the choice so cell networks keep their exact results.)

mod avg_pool_kernel;
mod batch_norm;
mod batch_norm_kernel;
mod channel_bias_kernel;
mod checks;
mod conv_kernel;
mod cpu_slices;
mod depthwise_kernel;
mod im2col;
#[cfg(test)]
mod kernel_tests;
pub mod kernels;
mod matmul;
mod max_pool_kernel;
mod pool_geometry;
pub mod reference;
mod relu_kernel;
mod scratch;

use candle_core::Tensor;

pub use batch_norm::BatchNorm2d;

use crate::{Error, Result};
use checks::{f32_dims4, pool3x3_geometry, ConvGeometry};

/// x: (N, C_in, H, W) f32; w: (C_out, C_in / groups, KH, KW); returns
/// (N, C_out, H_out, W_out) with H_out = ⌊(H + 2·padding − dilation·(KH − 1) − 1) / stride⌋ + 1
/// (likewise W_out), as `torch.nn.functional.conv2d` (cross-correlation, no bias).
/// Differentiable in x and w. Bad shapes or settings are [`crate::Error::Input`].
pub fn conv2d(
    x: &Tensor,
    w: &Tensor,
    stride: usize,
    padding: usize,
    dilation: usize,
    groups: usize,
) -> Result<Tensor> {
    let geometry = ConvGeometry::new(x, w, stride, padding, dilation, groups)?;
    if depthwise_kernel::is_depthwise(&geometry) {
        Ok(depthwise_kernel::depthwise_conv2d(x, w, geometry)?)
    } else {
        Ok(conv_kernel::conv2d_im2col(x, w, geometry)?)
    }
}

/// 3×3 max pool, padding 1 (padded cells never win), given stride (1 or 2). Differentiable.
pub fn max_pool3x3(x: &Tensor, stride: usize) -> Result<Tensor> {
    let geometry = pool3x3_geometry(x, stride, "max_pool3x3 input")?;
    Ok(max_pool_kernel::max_pool3x3_kernel(x, geometry)?)
}

/// 3×3 average pool, padding 1, dividing by the number of in-image cells
/// (count_include_pad = false), given stride. Differentiable.
pub fn avg_pool3x3(x: &Tensor, stride: usize) -> Result<Tensor> {
    let geometry = pool3x3_geometry(x, stride, "avg_pool3x3 input")?;
    Ok(avg_pool_kernel::avg_pool3x3_kernel(x, geometry)?)
}

/// Mean over H and W: (N, C, H, W) -> (N, C). Differentiable. (candle's own
/// `mean` is already fast here, ~40 µs forward + backward, so no custom kernel.)
pub fn global_avg_pool(x: &Tensor) -> Result<Tensor> {
    reference::global_avg_pool(x)
}

/// `max(x, 0)` elementwise for an f32 tensor of any shape. Differentiable,
/// with candle's convention (the gradient passes at x = 0) and bit-identical
/// to `Tensor::relu` forward and backward, but its backward is one pass
/// instead of four tensor ops.
pub fn relu(x: &Tensor) -> Result<Tensor> {
    if x.dtype() != candle_core::DType::F32 {
        return Err(Error::input(format!(
            "relu input must be f32, got {:?}",
            x.dtype()
        )));
    }
    Ok(relu_kernel::relu_kernel(x)?)
}

/// x (N, C, H, W) f32 plus `bias[c]` (bias: f32 of shape (C)) on every cell
/// of channel c: the bias of a convolution. Differentiable in both; the
/// bias gradient is the per-channel sum of the output gradient.
pub fn add_channel_bias(x: &Tensor, bias: &Tensor) -> Result<Tensor> {
    let dims = f32_dims4(x, "add_channel_bias input")?;
    let channels = dims.1;
    if bias.dtype() != candle_core::DType::F32 || bias.dims() != [channels] {
        return Err(Error::input(format!(
            "add_channel_bias needs an f32 bias of shape ({channels}) for {channels} channels, got {:?} of shape {:?}",
            bias.dtype(),
            bias.dims()
        )));
    }
    Ok(channel_bias_kernel::add_channel_bias_kernel(x, bias, dims)?)
}
