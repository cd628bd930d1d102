//! The backward pass: gradients of the (optionally class-weighted) mean
//! cross-entropy into a flat buffer.

use super::elementwise::{column_sums, hidden_backward};
use super::forward::weight_and_bias;
use super::layout::LayerLayout;
use super::matmul::{matmul_into, MatrixView};
use super::softmax_loss::softmax_cross_entropy;
use super::workspace::Workspace;
use crate::Result;

/// Scratch buffers of the backward pass, rows × the widest layer each.
#[derive(Clone, Debug, Default)]
pub(super) struct Deltas {
    /// dL/d(layer output), then dL/da in place.
    pub(super) output: Vec<f32>,
    /// dL/dz (dL/dlogits for the output layer).
    pub(super) pre: Vec<f32>,
}

impl Deltas {
    /// Makes both buffers hold at least `rows` rows of the widest layer.
    pub(super) fn ensure_rows(&mut self, layouts: &[LayerLayout], rows: usize) {
        let widest = layouts.iter().map(|l| l.fan_out).max().unwrap_or(0);
        let size = rows * widest;
        if self.output.len() < size {
            self.output = vec![0.0; size];
            self.pre = vec![0.0; size];
        }
    }
}

/// Back-propagates the mean softmax cross-entropy of the logits in `space`
/// (left by [`super::forward::forward`] on the same `x`, `rows` and
/// `params`) against `labels` (weighted by class when `class_weights` is
/// given, see [`softmax_cross_entropy`]), writing every gradient into
/// `grads` (laid out like `params`). Returns the loss.
#[allow(clippy::too_many_arguments)]
pub(super) fn backward(
    params: &[f32],
    grads: &mut [f32],
    layouts: &[LayerLayout],
    x: &[f32],
    labels: &[u32],
    class_weights: Option<&[f32]>,
    space: &Workspace,
    deltas: &mut Deltas,
) -> Result<f32> {
    let rows = labels.len();
    let Some((output_layout, hidden_layouts)) = layouts.split_last() else {
        return Ok(f32::NAN);
    };
    let n_classes = output_layout.fan_out;
    let delta_logits = &mut deltas.pre[..rows * n_classes];
    let logits = &space.logits[..rows * n_classes];
    let loss = softmax_cross_entropy(logits, labels, n_classes, class_weights, delta_logits);
    let layer_input = |index: usize, fan_in: usize| -> &[f32] {
        match index.checked_sub(1) {
            Some(previous) => &space.out[previous][..rows * fan_in],
            None => x,
        }
    };
    let last = hidden_layouts.len();
    affine_backward(
        params,
        grads,
        output_layout,
        layer_input(last, output_layout.fan_in),
        &deltas.pre[..rows * n_classes],
        if last > 0 {
            Some((&mut deltas.output[..rows * output_layout.fan_in], false))
        } else {
            None
        },
    )?;
    for (index, layout) in hidden_layouts.iter().enumerate().rev() {
        let Some(kind) = layout.hidden else { continue };
        let n = rows * layout.fan_out;
        let mask: &[f32] = if kind.dropout > 0.0 {
            &space.mask[index][..n]
        } else {
            &[]
        };
        let delta_output = &mut deltas.output[..n];
        hidden_backward(
            kind.activation,
            &space.pre[index][..n],
            mask,
            delta_output,
            &mut deltas.pre[..n],
        );
        let input_delta = if index > 0 {
            Some((&mut deltas.output[..rows * layout.fan_in], kind.residual))
        } else {
            None
        };
        affine_backward(
            params,
            grads,
            layout,
            layer_input(index, layout.fan_in),
            &deltas.pre[..n],
            input_delta,
        )?;
    }
    Ok(loss)
}

/// Gradients of z = h·W + b given dL/dz: dW = hᵀ·dz and db = Σ rows of dz
/// into `grads`; with `input_delta` also dL/dh = dz·Wᵀ, added to what the
/// buffer holds when its flag is set (a residual layer's dL/da) or written
/// over it otherwise.
fn affine_backward(
    params: &[f32],
    grads: &mut [f32],
    layout: &LayerLayout,
    input: &[f32],
    delta_pre: &[f32],
    input_delta: Option<(&mut [f32], bool)>,
) -> Result<()> {
    let rows = delta_pre.len() / layout.fan_out.max(1);
    let (fan_in, fan_out) = (layout.fan_in, layout.fan_out);
    let delta_view = MatrixView::row_major(delta_pre, rows, fan_out)?;
    let (weight_grad, bias_grad) =
        grads[layout.weight_offset..layout.bias_offset + fan_out].split_at_mut(fan_in * fan_out);
    matmul_into(
        weight_grad,
        MatrixView::row_major(input, rows, fan_in)?.transposed(),
        delta_view,
        false,
    )?;
    column_sums(delta_pre, fan_out, bias_grad);
    if let Some((input_delta, accumulate)) = input_delta {
        let (weight, _) = weight_and_bias(params, layout);
        matmul_into(
            input_delta,
            delta_view,
            MatrixView::row_major(weight, fan_in, fan_out)?.transposed(),
            accumulate,
        )?;
    }
    Ok(())
}
