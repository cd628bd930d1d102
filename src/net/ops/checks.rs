//! Argument checks and output sizes shared by the convolution and pooling ops.

use candle_core::{DType, Tensor};

use super::pool_geometry::PoolGeometry;
use crate::{Error, Result};

/// The four dimensions of `x`, which must be an f32 tensor of rank 4;
/// `what` names the argument in the error.
pub(crate) fn f32_dims4(x: &Tensor, what: &str) -> Result<(usize, usize, usize, usize)> {
    if x.dtype() != DType::F32 {
        return Err(Error::input(format!(
            "{what} must be f32, got {:?}",
            x.dtype()
        )));
    }
    match x.dims() {
        &[n, c, h, w] => Ok((n, c, h, w)),
        other => Err(Error::input(format!(
            "{what} must have 4 dimensions (N, C, H, W), got shape {other:?}"
        ))),
    }
}

/// Output length of a sliding window along one axis (PyTorch's formula,
/// `torch.nn.Conv2d` docs): ⌊(input + 2·padding − dilation·(kernel − 1) − 1) / stride⌋ + 1.
/// An error when the window does not fit or `stride`/`dilation` is zero.
pub(crate) fn window_output_len(
    input: usize,
    kernel: usize,
    stride: usize,
    padding: usize,
    dilation: usize,
) -> Result<usize> {
    if stride == 0 || dilation == 0 || kernel == 0 {
        return Err(Error::input(format!(
            "stride ({stride}), dilation ({dilation}) and kernel size ({kernel}) must be positive"
        )));
    }
    let span = dilation * (kernel - 1) + 1;
    let padded = input + 2 * padding;
    if padded < span {
        return Err(Error::input(format!(
            "a window spanning {span} cells does not fit an input of {input} cells with padding {padding}"
        )));
    }
    Ok((padded - span) / stride + 1)
}

/// The geometry of one 2-D convolution, checked: input (N, C_in, H, W),
/// weight (C_out, C_in / groups, KH, KW), output (N, C_out, H_out, W_out).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) struct ConvGeometry {
    pub(crate) batch: usize,
    pub(crate) in_channels: usize,
    pub(crate) in_h: usize,
    pub(crate) in_w: usize,
    pub(crate) out_channels: usize,
    pub(crate) kernel_h: usize,
    pub(crate) kernel_w: usize,
    pub(crate) out_h: usize,
    pub(crate) out_w: usize,
    pub(crate) stride: usize,
    pub(crate) padding: usize,
    pub(crate) dilation: usize,
    pub(crate) groups: usize,
}

impl ConvGeometry {
    /// Checks the shapes of `x` and `w` against each other and the settings.
    pub(crate) fn new(
        x: &Tensor,
        w: &Tensor,
        stride: usize,
        padding: usize,
        dilation: usize,
        groups: usize,
    ) -> Result<Self> {
        let (batch, in_channels, in_h, in_w) = f32_dims4(x, "conv2d input")?;
        let (out_channels, group_in, kernel_h, kernel_w) = f32_dims4(w, "conv2d weight")?;
        if groups == 0 || in_channels % groups != 0 || out_channels % groups != 0 {
            return Err(Error::input(format!(
                "conv2d: groups ({groups}) must be positive and divide both the input channels \
                 ({in_channels}) and the output channels ({out_channels})"
            )));
        }
        if group_in * groups != in_channels {
            return Err(Error::input(format!(
                "conv2d: weight has {group_in} input channels per group but the input has \
                 {in_channels} channels in {groups} groups"
            )));
        }
        let out_h = window_output_len(in_h, kernel_h, stride, padding, dilation)?;
        let out_w = window_output_len(in_w, kernel_w, stride, padding, dilation)?;
        Ok(Self {
            batch,
            in_channels,
            in_h,
            in_w,
            out_channels,
            kernel_h,
            kernel_w,
            out_h,
            out_w,
            stride,
            padding,
            dilation,
            groups,
        })
    }

    /// Input channels per group.
    pub(crate) fn group_in(&self) -> usize {
        self.in_channels / self.groups
    }

    /// Output channels per group.
    pub(crate) fn group_out(&self) -> usize {
        self.out_channels / self.groups
    }

    /// Rows of one group's im2col matrix: C_in/groups · KH · KW.
    pub(crate) fn patch_len(&self) -> usize {
        self.group_in() * self.kernel_h * self.kernel_w
    }

    /// Output cells per image and channel: H_out · W_out.
    pub(crate) fn out_plane(&self) -> usize {
        self.out_h * self.out_w
    }

    /// Input cells per image and channel: H · W.
    pub(crate) fn in_plane(&self) -> usize {
        self.in_h * self.in_w
    }
}

/// Checks a 3×3, padding-1 pooling of `x` with `stride` and returns its sizes.
pub(crate) fn pool3x3_geometry(x: &Tensor, stride: usize, what: &str) -> Result<PoolGeometry> {
    let dims = f32_dims4(x, what)?;
    Ok(PoolGeometry {
        dims,
        out_h: window_output_len(dims.2, 3, stride, 1, 1)?,
        out_w: window_output_len(dims.3, 3, stride, 1, 1)?,
        stride,
    })
}
