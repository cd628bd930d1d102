//! Convolution building blocks of image cells: conv → BN chains and the
//! factorised reduction (rules in `crate::net::cell_cost`).

use candle_core::Tensor;

use super::params::{Norm, ParamBuilder};
use crate::net::init::InitScheme;
use crate::net::ops::{conv2d, relu};
use crate::Result;

/// The weights a module uses: tracked for gradients in training, detached otherwise.
pub(crate) fn in_mode(tensor: &Tensor, train: bool) -> Tensor {
    if train {
        tensor.clone()
    } else {
        tensor.detach()
    }
}

/// Settings of one square convolution without bias.
#[derive(Clone, Copy, Debug)]
pub(crate) struct ConvSpec {
    pub(crate) c_in: usize,
    pub(crate) c_out: usize,
    pub(crate) kernel: usize,
    pub(crate) stride: usize,
    pub(crate) padding: usize,
    pub(crate) dilation: usize,
    pub(crate) groups: usize,
}

impl ConvSpec {
    /// A k×k convolution c_in → c_out with stride 1, dilation 1, one group
    /// and "same" padding.
    pub(crate) fn plain(c_in: usize, c_out: usize, kernel: usize) -> Self {
        ConvSpec {
            c_in,
            c_out,
            kernel,
            stride: 1,
            padding: kernel / 2,
            dilation: 1,
            groups: 1,
        }
    }

    /// The same convolution with another stride.
    pub(crate) fn with_stride(self, stride: usize) -> Self {
        ConvSpec { stride, ..self }
    }
}

/// One convolution without bias, weight (C_out, C_in/groups, k, k), He-initialised.
#[derive(Clone, Debug)]
pub(crate) struct Conv {
    weight: Tensor,
    spec: ConvSpec,
}

impl Conv {
    /// Creates the weight `{name}.weight` with fan_in = C_in/groups·k·k.
    pub(crate) fn build(params: &mut ParamBuilder, name: &str, spec: ConvSpec) -> Result<Self> {
        let per_group = spec.c_in / spec.groups.max(1);
        let fan_in = per_group * spec.kernel * spec.kernel;
        let shape = [spec.c_out, per_group, spec.kernel, spec.kernel];
        let weight = params.weight(
            format!("{name}.weight"),
            &shape,
            InitScheme::HeUniform,
            fan_in,
            spec.c_out,
        )?;
        Ok(Conv { weight, spec })
    }

    /// The convolution of `x` (N, C_in, H, W).
    pub(crate) fn forward(&self, x: &Tensor, train: bool) -> Result<Tensor> {
        let s = self.spec;
        conv2d(
            x,
            &in_mode(&self.weight, train),
            s.stride,
            s.padding,
            s.dilation,
            s.groups,
        )
    }
}

/// Optional ReLU → convolutions in sequence → batch norm.
#[derive(Clone, Debug)]
pub(crate) struct ConvBn {
    relu: bool,
    convs: Vec<Conv>,
    norm: Norm,
}

impl ConvBn {
    /// Builds `{name}.convs.{i}` for each spec and `{name}.bn` over the last output.
    pub(crate) fn build(
        params: &mut ParamBuilder,
        name: &str,
        relu: bool,
        specs: &[ConvSpec],
    ) -> Result<Self> {
        let mut convs = Vec::with_capacity(specs.len());
        for (i, spec) in specs.iter().enumerate() {
            convs.push(Conv::build(params, &format!("{name}.convs.{i}"), *spec)?);
        }
        let channels = specs.last().map_or(0, |s| s.c_out);
        let norm = params.norm(format!("{name}.bn"), channels)?;
        Ok(ConvBn { relu, convs, norm })
    }

    /// ReLU → 1×1 conv (given stride) → BN: a channel map.
    pub(crate) fn pointwise(
        params: &mut ParamBuilder,
        name: &str,
        c_in: usize,
        c_out: usize,
    ) -> Result<Self> {
        Self::build(params, name, true, &[ConvSpec::plain(c_in, c_out, 1)])
    }

    /// The module's output for `x`.
    pub(crate) fn forward(&self, x: &Tensor, train: bool) -> Result<Tensor> {
        let mut h = if self.relu { relu(x)? } else { x.clone() };
        for conv in &self.convs {
            h = conv.forward(&h, train)?;
        }
        self.norm.forward(&h, train)
    }
}

/// ReLU → two 1×1 stride-2 convs (on x and on x shifted one pixel right and
/// down, zero-padded) with ⌊C/2⌋ and C − ⌊C/2⌋ outputs → concat → BN(C).
#[derive(Clone, Debug)]
pub(crate) struct FactorizedReduce {
    on_grid: Conv,
    off_grid: Conv,
    norm: Norm,
}

impl FactorizedReduce {
    /// Builds `{name}.conv_a`, `{name}.conv_b` and `{name}.bn` for c_in → c_out.
    pub(crate) fn build(
        params: &mut ParamBuilder,
        name: &str,
        c_in: usize,
        c_out: usize,
    ) -> Result<Self> {
        let first = c_out / 2;
        let second = c_out - first;
        let spec = |out| ConvSpec::plain(c_in, out, 1).with_stride(2);
        Ok(FactorizedReduce {
            on_grid: Conv::build(params, &format!("{name}.conv_a"), spec(first))?,
            off_grid: Conv::build(params, &format!("{name}.conv_b"), spec(second))?,
            norm: params.norm(format!("{name}.bn"), c_out)?,
        })
    }

    /// The reduced map, ⌈H/2⌉ × ⌈W/2⌉.
    pub(crate) fn forward(&self, x: &Tensor, train: bool) -> Result<Tensor> {
        let x = relu(x)?;
        let (height, width) = (x.dim(2)?, x.dim(3)?);
        let shifted = x
            .pad_with_zeros(2, 0, 1)?
            .pad_with_zeros(3, 0, 1)?
            .narrow(2, 1, height)?
            .narrow(3, 1, width)?
            .contiguous()?;
        let a = self.on_grid.forward(&x, train)?;
        let b = self.off_grid.forward(&shifted, train)?;
        let joined = Tensor::cat(&[a, b], 1)?;
        self.norm.forward(&joined, train)
    }
}
