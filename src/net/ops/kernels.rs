//! Every convolution kernel behind [`super::conv2d`], callable directly so
//! tests and benchmarks can cross-check and time each one. Same contract as
//! [`super::conv2d`]; a kernel given a convolution it does not handle
//! returns [`crate::Error::Input`].

use candle_core::Tensor;

use super::checks::ConvGeometry;
use super::{conv_kernel, depthwise_kernel};
use crate::{Error, Result};

/// im2col + one gemm per block of images and group: any stride, padding, dilation, groups.
pub fn conv2d_im2col(
    x: &Tensor,
    w: &Tensor,
    stride: usize,
    padding: usize,
    dilation: usize,
    groups: usize,
) -> Result<Tensor> {
    let geometry = ConvGeometry::new(x, w, stride, padding, dilation, groups)?;
    Ok(conv_kernel::conv2d_im2col(x, w, geometry)?)
}

/// Direct loops per image row: depthwise only (groups = C_in = C_out), any stride.
pub fn depthwise_direct(
    x: &Tensor,
    w: &Tensor,
    stride: usize,
    padding: usize,
    dilation: usize,
    groups: usize,
) -> Result<Tensor> {
    let geometry = ConvGeometry::new(x, w, stride, padding, dilation, groups)?;
    if !depthwise_kernel::is_depthwise(&geometry) {
        return Err(Error::input("depthwise_direct needs groups = C_in = C_out"));
    }
    Ok(depthwise_kernel::depthwise_conv2d(x, w, geometry)?)
}
