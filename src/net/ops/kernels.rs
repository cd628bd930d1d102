//! Every convolution kernel behind [`super::conv2d`], callable directly so
//! tests and benchmarks can cross-check and time each one. Same contract as
//! [`super::conv2d`]; a kernel given a convolution it does not handle
//! returns [`crate::Error::Input`].

use candle_core::Tensor;

use super::checks::ConvGeometry;
use super::{conv_kernel, depthwise_kernel, shifted_conv_kernel, shifted_depthwise_kernel};
use crate::{Error, Result};

/// im2col + gemm per image and group: any stride, padding, dilation, groups.
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

/// One gemm per kernel tap on a padded channel-major copy: stride 1, groups 1 only.
pub fn conv2d_shifted_taps(
    x: &Tensor,
    w: &Tensor,
    stride: usize,
    padding: usize,
    dilation: usize,
    groups: usize,
) -> Result<Tensor> {
    let geometry = ConvGeometry::new(x, w, stride, padding, dilation, groups)?;
    if !shifted_conv_kernel::handles(&geometry) {
        return Err(Error::input(
            "conv2d_shifted_taps needs stride 1 and groups 1",
        ));
    }
    Ok(shifted_conv_kernel::shifted_conv2d(x, w, geometry)?)
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

/// One multiply-add per channel and tap on a padded channel-major copy:
/// depthwise (groups = C_in = C_out) with stride 1 only.
pub fn depthwise_shifted_taps(
    x: &Tensor,
    w: &Tensor,
    stride: usize,
    padding: usize,
    dilation: usize,
    groups: usize,
) -> Result<Tensor> {
    let geometry = ConvGeometry::new(x, w, stride, padding, dilation, groups)?;
    if !shifted_depthwise_kernel::handles(&geometry) {
        return Err(Error::input(
            "depthwise_shifted_taps needs stride 1 and groups = C_in = C_out",
        ));
    }
    Ok(shifted_depthwise_kernel::shifted_depthwise_conv2d(
        x, w, geometry,
    )?)
}
