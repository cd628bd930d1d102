//! The forward pass over flat parameters into a [`Workspace`].

use rand::{Rng, RngCore};

use super::elementwise::{hidden_forward, HiddenForward};
use super::layout::LayerLayout;
use super::matmul::{matmul_bias_into, MatrixView};
use super::workspace::Workspace;
use crate::Result;

/// The weight matrix (fan_in × fan_out) and biases of `layout` in `params`.
pub(super) fn weight_and_bias<'p>(
    params: &'p [f32],
    layout: &LayerLayout,
) -> (&'p [f32], &'p [f32]) {
    let weight = &params[layout.weight_offset..layout.bias_offset];
    let bias = &params[layout.bias_offset..layout.bias_offset + layout.fan_out];
    (weight, bias)
}

/// Runs the network on `rows` rows of `x` (rows × n_inputs), leaving every
/// layer's buffers and the logits in `space` (which must hold `rows` rows).
/// With `dropout_rng` (training), masks are drawn for each layer with
/// dropout, row-major, in layer order — the draws candle's dropout makes.
pub(super) fn forward(
    params: &[f32],
    layouts: &[LayerLayout],
    x: &[f32],
    rows: usize,
    space: &mut Workspace,
    mut dropout_rng: Option<&mut dyn RngCore>,
) -> Result<()> {
    let (hidden_layouts, output_layout) = match layouts.split_last() {
        Some((output, hidden)) => (hidden, output),
        None => return Ok(()),
    };
    for (index, layout) in hidden_layouts.iter().enumerate() {
        let Some(kind) = layout.hidden else { continue };
        let n = rows * layout.fan_out;
        let (before, after) = space.out.split_at_mut(index);
        let input = match index.checked_sub(1) {
            Some(previous) => &before[previous][..rows * layout.fan_in],
            None => x,
        };
        let pre = &mut space.pre[index][..n];
        let (weight, bias) = weight_and_bias(params, layout);
        matmul_bias_into(
            pre,
            MatrixView::row_major(input, rows, layout.fan_in)?,
            MatrixView::row_major(weight, layout.fan_in, layout.fan_out)?,
            bias,
        )?;
        let mask: &[f32] = match dropout_rng.as_deref_mut() {
            Some(rng) if kind.dropout > 0.0 => {
                let mask = &mut space.mask[index][..n];
                draw_dropout_mask(kind.dropout, rng, mask);
                mask
            }
            _ => &[],
        };
        let pass = HiddenForward {
            pre,
            input,
            output: &mut after[0][..n],
            mask,
        };
        hidden_forward(kind.activation, kind.residual, pass);
    }
    let input = match space.out.last() {
        Some(last) => &last[..rows * output_layout.fan_in],
        None => x,
    };
    let logits = &mut space.logits[..rows * output_layout.fan_out];
    let (weight, bias) = weight_and_bias(params, output_layout);
    matmul_bias_into(
        logits,
        MatrixView::row_major(input, rows, output_layout.fan_in)?,
        MatrixView::row_major(weight, output_layout.fan_in, output_layout.fan_out)?,
        bias,
    )
}

/// Inverted dropout: each multiplier is 0 with probability `p`, else 1/(1−p).
fn draw_dropout_mask(p: f32, rng: &mut dyn RngCore, mask: &mut [f32]) {
    let keep_scale = 1.0 / (1.0 - p);
    for value in mask {
        *value = if rng.gen::<f32>() < p {
            0.0
        } else {
            keep_scale
        };
    }
}
