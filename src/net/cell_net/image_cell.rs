//! One image cell built from its genome cell and its [`CellStage`] shapes.

use candle_core::Tensor;

use super::cell_graph::CellGraph;
use super::conv_layers::{ConvBn, ConvSpec, FactorizedReduce};
use super::params::ParamBuilder;
use crate::genome::{Cell, CellKind, ConvOp, STATE_H0, STATE_H1};
use crate::net::ops::{avg_pool3x3, max_pool3x3};
use crate::net::CellStage;
use crate::Result;

/// The module behind one [`ConvOp`] branch.
#[derive(Clone, Debug)]
pub(crate) enum ImageOp {
    /// The input unchanged.
    Identity,
    /// 3×3 max pooling with the given stride.
    MaxPool(usize),
    /// 3×3 average pooling with the given stride.
    AvgPool(usize),
    /// ReLU → conv(s) → BN.
    Conv(ConvBn),
    /// Identity with stride 2.
    Reduce(FactorizedReduce),
}

impl ImageOp {
    /// Builds `op` on `c` channels with `stride` (1 or 2), named `name`.
    fn build(
        params: &mut ParamBuilder,
        name: &str,
        op: ConvOp,
        c: usize,
        stride: usize,
    ) -> Result<Self> {
        let conv = |params: &mut ParamBuilder, specs: &[ConvSpec]| {
            Ok::<_, crate::Error>(ImageOp::Conv(ConvBn::build(params, name, true, specs)?))
        };
        match op {
            ConvOp::Identity if stride == 2 => Ok(ImageOp::Reduce(FactorizedReduce::build(
                params, name, c, c,
            )?)),
            ConvOp::Identity => Ok(ImageOp::Identity),
            ConvOp::MaxPool3x3 => Ok(ImageOp::MaxPool(stride)),
            ConvOp::AvgPool3x3 => Ok(ImageOp::AvgPool(stride)),
            ConvOp::Conv1x1 => conv(params, &[ConvSpec::plain(c, c, 1).with_stride(stride)]),
            ConvOp::Conv3x3 => conv(params, &[ConvSpec::plain(c, c, 3).with_stride(stride)]),
            ConvOp::DilConv3x3 => {
                let spec = ConvSpec {
                    padding: 2,
                    dilation: 2,
                    ..ConvSpec::plain(c, c, 3).with_stride(stride)
                };
                conv(params, &[spec])
            }
            ConvOp::SepConv3x3 => {
                let depthwise = ConvSpec {
                    groups: c,
                    ..ConvSpec::plain(c, c, 3).with_stride(stride)
                };
                conv(params, &[depthwise, ConvSpec::plain(c, c, 1)])
            }
        }
    }

    /// The branch output for `x`.
    fn forward(&self, x: &Tensor, train: bool) -> Result<Tensor> {
        match self {
            ImageOp::Identity => Ok(x.clone()),
            ImageOp::MaxPool(stride) => max_pool3x3(x, *stride),
            ImageOp::AvgPool(stride) => avg_pool3x3(x, *stride),
            ImageOp::Conv(module) => module.forward(x, train),
            ImageOp::Reduce(module) => module.forward(x, train),
        }
    }
}

/// How h0 is brought to the cell's channels and size.
#[derive(Clone, Debug)]
enum ImagePreprocess {
    /// ReLU → 1×1 conv → BN.
    Map(ConvBn),
    /// h0 is spatially twice h1: factorised reduction.
    Reduce(FactorizedReduce),
}

/// A built image cell: preprocessing, blocks and the output 1×1 map.
#[derive(Clone, Debug)]
pub(crate) struct ImageCell {
    pre0: Option<ImagePreprocess>,
    pre1: Option<ConvBn>,
    graph: CellGraph<ImageOp>,
    combine: ConvBn,
}

impl ImageCell {
    /// Builds `cell` for `stage`, naming its tensors `{name}.…`.
    pub(crate) fn build(
        params: &mut ParamBuilder,
        name: &str,
        cell: &Cell<ConvOp>,
        stage: &CellStage,
    ) -> Result<Self> {
        let c = stage.output.channels as usize;
        let (c0, c1) = (stage.h0.channels as usize, stage.h1.channels as usize);
        let pre1 = if cell.reads_state(STATE_H1) && c1 != c {
            Some(ConvBn::pointwise(params, &format!("{name}.pre1"), c1, c)?)
        } else {
            None
        };
        let same_size = (stage.h0.height, stage.h0.width) == (stage.h1.height, stage.h1.width);
        let pre0 = if !cell.reads_state(STATE_H0) {
            None
        } else if !same_size {
            let reduce = FactorizedReduce::build(params, &format!("{name}.pre0"), c0, c)?;
            Some(ImagePreprocess::Reduce(reduce))
        } else if c0 != c {
            let map = ConvBn::pointwise(params, &format!("{name}.pre0"), c0, c)?;
            Some(ImagePreprocess::Map(map))
        } else {
            None
        };
        let reduction = stage.kind == CellKind::Reduction;
        let graph = CellGraph::build(cell, |j, slot, input, op| {
            let stride = if reduction && input <= STATE_H1 { 2 } else { 1 };
            ImageOp::build(params, &format!("{name}.blocks.{j}.{slot}"), op, c, stride)
        })?;
        let k = graph.unused.len();
        let combine = ConvBn::pointwise(params, &format!("{name}.combine"), k * c, c)?;
        Ok(ImageCell {
            pre0,
            pre1,
            graph,
            combine,
        })
    }

    /// The cell output for the states h0 and h1.
    pub(crate) fn forward(&self, h0: &Tensor, h1: &Tensor, train: bool) -> Result<Tensor> {
        let h0 = match &self.pre0 {
            Some(ImagePreprocess::Map(module)) => module.forward(h0, train)?,
            Some(ImagePreprocess::Reduce(module)) => module.forward(h0, train)?,
            None => h0.clone(),
        };
        let h1 = match &self.pre1 {
            Some(module) => module.forward(h1, train)?,
            None => h1.clone(),
        };
        let joined = self
            .graph
            .run(h0, h1, |module, x| module.forward(x, train))?;
        self.combine.forward(&joined, train)
    }
}
