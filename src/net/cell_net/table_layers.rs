//! Affine maps and the dense ops of table cells.

use candle_core::Tensor;

use super::conv_layers::in_mode;
use super::params::ParamBuilder;
use crate::genome::DenseOp;
use crate::net::init::InitScheme;
use crate::Result;

/// z = h·W + b, W of shape (n_in, n_out).
#[derive(Clone, Debug)]
pub(crate) struct Linear {
    weight: Tensor,
    bias: Tensor,
}

impl Linear {
    /// Creates `{name}.weight` (drawn with `scheme`) and a zero `{name}.bias`.
    pub(crate) fn build(
        params: &mut ParamBuilder,
        name: &str,
        n_in: usize,
        n_out: usize,
        scheme: InitScheme,
    ) -> Result<Self> {
        let weight = params.weight(
            format!("{name}.weight"),
            &[n_in, n_out],
            scheme,
            n_in,
            n_out,
        )?;
        let bias = params.bias(format!("{name}.bias"), n_out)?;
        Ok(Linear { weight, bias })
    }

    /// h·W + b for `h` of shape (rows, n_in).
    pub(crate) fn forward(&self, h: &Tensor, train: bool) -> Result<Tensor> {
        let weight = in_mode(&self.weight, train);
        let bias = in_mode(&self.bias, train);
        Ok(h.matmul(&weight)?.broadcast_add(&bias)?)
    }
}

/// The module behind one [`DenseOp`] branch.
#[derive(Clone, Debug)]
pub(crate) enum TableOp {
    /// The input unchanged.
    Identity,
    /// act(W h + b) for a relu, tanh or GELU op.
    Dense(Linear, DenseOp),
    /// sigmoid(W_g h + b_g) ⊙ (W h + b).
    Gated { gate: Linear, value: Linear },
}

impl TableOp {
    /// Builds `op` on width `w`: He uniform for relu/GELU, Glorot otherwise.
    pub(crate) fn build(
        params: &mut ParamBuilder,
        name: &str,
        op: DenseOp,
        w: usize,
    ) -> Result<Self> {
        match op {
            DenseOp::Identity => Ok(TableOp::Identity),
            DenseOp::DenseRelu | DenseOp::DenseGelu => Ok(TableOp::Dense(
                Linear::build(params, name, w, w, InitScheme::HeUniform)?,
                op,
            )),
            DenseOp::DenseTanh => Ok(TableOp::Dense(
                Linear::build(params, name, w, w, InitScheme::GlorotUniform)?,
                op,
            )),
            DenseOp::Gated => Ok(TableOp::Gated {
                gate: Linear::build(
                    params,
                    &format!("{name}.gate"),
                    w,
                    w,
                    InitScheme::GlorotUniform,
                )?,
                value: Linear::build(
                    params,
                    &format!("{name}.value"),
                    w,
                    w,
                    InitScheme::GlorotUniform,
                )?,
            }),
        }
    }

    /// The branch output for `h`.
    pub(crate) fn forward(&self, h: &Tensor, train: bool) -> Result<Tensor> {
        match self {
            TableOp::Identity => Ok(h.clone()),
            TableOp::Dense(linear, op) => {
                let z = linear.forward(h, train)?;
                Ok(match op {
                    DenseOp::DenseRelu => crate::net::ops::relu(&z)?,
                    DenseOp::DenseTanh => z.tanh()?,
                    _ => z.gelu()?,
                })
            }
            TableOp::Gated { gate, value } => {
                let g = candle_nn::ops::sigmoid(&gate.forward(h, train)?)?;
                Ok((g * value.forward(h, train)?)?)
            }
        }
    }
}
