//! The convolutional op family of NASNet-style cells, as differentiable
//! candle ops: grouped/dilated 2-D convolution, 3×3 max and average pooling
//! with padding 1, global average pooling and batch normalisation.
//!
//! Inputs are f32 tensors in (N, C, H, W) layout on the CPU. Each function
//! picks its kernel internally, so faster kernels can replace slower ones
//! without touching callers; [`reference`] keeps simple implementations
//! built from candle's own ops for cross-checks and timing.

mod avg_pool_kernel;
mod batch_norm;
mod batch_norm_kernel;
mod checks;
mod conv_kernel;
mod cpu_slices;
mod depthwise_kernel;
mod grid;
mod im2col;
pub mod kernels;
mod matmul;
mod max_pool_kernel;
mod pool_geometry;
pub mod reference;
mod scratch;
mod shifted_conv_kernel;
mod shifted_depthwise_kernel;

use candle_core::Tensor;

pub use batch_norm::BatchNorm2d;

use crate::Result;
use checks::{pool3x3_dims, ConvGeometry};
use pool_geometry::PoolGeometry;

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
    let geometry = pool_geometry(x, stride, "max_pool3x3 input")?;
    Ok(max_pool_kernel::max_pool3x3_kernel(x, geometry)?)
}

/// 3×3 average pool, padding 1, dividing by the number of in-image cells
/// (count_include_pad = false), given stride. Differentiable.
pub fn avg_pool3x3(x: &Tensor, stride: usize) -> Result<Tensor> {
    let geometry = pool_geometry(x, stride, "avg_pool3x3 input")?;
    Ok(avg_pool_kernel::avg_pool3x3_kernel(x, geometry)?)
}

/// Mean over H and W: (N, C, H, W) -> (N, C). Differentiable.
pub fn global_avg_pool(x: &Tensor) -> Result<Tensor> {
    reference::global_avg_pool(x)
}

/// The checked sizes of a 3×3, padding-1 pooling of `x`.
fn pool_geometry(x: &Tensor, stride: usize, what: &str) -> Result<PoolGeometry> {
    let (dims, (out_h, out_w)) = pool3x3_dims(x, stride, what)?;
    Ok(PoolGeometry {
        dims,
        out_h,
        out_w,
        stride,
    })
}
