//! Simple, slow implementations of the ops from candle's own tensor
//! operations (candle's `conv2d`, padding, index selection, `maximum`),
//! differentiated by candle's autograd.
//!
//! They are the yardstick the fast kernels are cross-checked and timed
//! against; networks use the functions of [`super`] instead.

use candle_core::{Device, Tensor};

use super::checks::{pool3x3_geometry, ConvGeometry};
use crate::Result;

/// Same contract as [`super::conv2d`], computed by candle's `Tensor::conv2d`
/// (which splits `groups > 1` into per-group convolutions and concatenates them).
pub fn conv2d(
    x: &Tensor,
    w: &Tensor,
    stride: usize,
    padding: usize,
    dilation: usize,
    groups: usize,
) -> Result<Tensor> {
    ConvGeometry::new(x, w, stride, padding, dilation, groups)?;
    Ok(x.conv2d(w, padding, stride, dilation, groups)?)
}

/// Same contract as [`super::max_pool3x3`]: the border is padded with −∞,
/// then the maximum of the nine shifted, strided views is taken.
pub fn max_pool3x3(x: &Tensor, stride: usize) -> Result<Tensor> {
    let g = pool3x3_geometry(x, stride, "max_pool3x3 input")?;
    let border = border_tensor(g.in_h(), g.in_w(), f32::NEG_INFINITY, x.device())?;
    let padded = x.pad_with_zeros(2, 1, 1)?.pad_with_zeros(3, 1, 1)?;
    let padded = padded.broadcast_add(&border)?;
    let views = window_views(&padded, stride, (g.out_h, g.out_w))?;
    let mut result = views[0].clone();
    for view in &views[1..] {
        result = result.maximum(view)?;
    }
    Ok(result)
}

/// Same contract as [`super::avg_pool3x3`]: the sum of the nine shifted,
/// strided views of the zero-padded input, divided by the number of
/// in-image cells under each window.
pub fn avg_pool3x3(x: &Tensor, stride: usize) -> Result<Tensor> {
    let g = pool3x3_geometry(x, stride, "avg_pool3x3 input")?;
    let (h, w, out_h, out_w) = (g.in_h(), g.in_w(), g.out_h, g.out_w);
    let padded = x.pad_with_zeros(2, 1, 1)?.pad_with_zeros(3, 1, 1)?;
    let views = window_views(&padded, stride, (out_h, out_w))?;
    let mut sum = views[0].clone();
    for view in &views[1..] {
        sum = (sum + view)?;
    }
    let counts: Vec<f32> = (0..out_h)
        .flat_map(|i| (0..out_w).map(move |j| (i, j)))
        .map(|(i, j)| (cells_in_window(i, stride, h) * cells_in_window(j, stride, w)) as f32)
        .collect();
    let counts = Tensor::from_vec(counts, (1, 1, out_h, out_w), x.device())?;
    Ok(sum.broadcast_div(&counts)?)
}

/// Same contract as [`super::global_avg_pool`]: candle's mean over dims 2 and 3.
pub fn global_avg_pool(x: &Tensor) -> Result<Tensor> {
    super::checks::f32_dims4(x, "global_avg_pool input")?;
    Ok(x.mean((2, 3))?)
}

/// Same contract as [`super::relu`]: candle's `Tensor::relu`.
pub fn relu(x: &Tensor) -> Result<Tensor> {
    Ok(x.relu()?)
}

/// Same contract as [`super::add_channel_bias`]: candle's `broadcast_add`
/// of the bias reshaped to (1, C, 1, 1).
pub fn add_channel_bias(x: &Tensor, bias: &Tensor) -> Result<Tensor> {
    let (_, c, _, _) = super::checks::f32_dims4(x, "add_channel_bias input")?;
    Ok(x.broadcast_add(&bias.reshape((1, c, 1, 1))?)?)
}

/// Batch normalisation of `x` (N, C, H, W) with `gamma` and `beta` of shape
/// (C), from candle tensor ops: with `running = None` the batch's own mean
/// and biased variance are used (training mode), otherwise the given
/// (mean, variance). Same arithmetic as [`super::BatchNorm2d::forward`]
/// (eps 1e-5) without touching any running statistics.
pub fn batch_norm(
    x: &Tensor,
    gamma: &Tensor,
    beta: &Tensor,
    running: Option<(&Tensor, &Tensor)>,
) -> Result<Tensor> {
    let (_, c, _, _) = super::checks::f32_dims4(x, "batch norm input")?;
    let per_channel = |t: &Tensor| t.reshape((1, c, 1, 1));
    let (gamma, beta) = (per_channel(gamma)?, per_channel(beta)?);
    let (centred, var) = match running {
        Some((mean, var)) => (x.broadcast_sub(&per_channel(mean)?)?, per_channel(var)?),
        None => {
            let centred = x.broadcast_sub(&x.mean_keepdim((0, 2, 3))?)?;
            let biased_var = centred.sqr()?.mean_keepdim((0, 2, 3))?;
            (centred, biased_var)
        }
    };
    let inv_std = (var + super::batch_norm::EPS)?.sqrt()?.recip()?;
    Ok(centred
        .broadcast_mul(&inv_std.mul(&gamma)?)?
        .broadcast_add(&beta)?)
}

/// How many of the 3 cells of a padding-1 window starting at output index
/// `out_index` lie inside an axis of `len` cells.
pub(crate) fn cells_in_window(out_index: usize, stride: usize, len: usize) -> usize {
    // In input coordinates the window covers out_index·stride − 1 ..= out_index·stride + 1.
    let centre = out_index * stride;
    let first = centre.saturating_sub(1);
    let last = (centre + 1).min(len.saturating_sub(1));
    last + 1 - first
}

/// A (1, 1, h + 2, w + 2) tensor holding `value` on its one-cell border and 0 inside.
fn border_tensor(h: usize, w: usize, value: f32, device: &Device) -> Result<Tensor> {
    let (rows, cols) = (h + 2, w + 2);
    let values: Vec<f32> = (0..rows * cols)
        .map(|cell| {
            let (r, c) = (cell / cols, cell % cols);
            let inside = r > 0 && r <= h && c > 0 && c <= w;
            if inside {
                0.0
            } else {
                value
            }
        })
        .collect();
    Ok(Tensor::from_vec(values, (1, 1, rows, cols), device)?)
}

/// The nine views `padded[:, :, di + stride·i, dj + stride·j]` for di, dj in 0..3,
/// each of the pooled output's size.
fn window_views(
    padded: &Tensor,
    stride: usize,
    (out_h, out_w): (usize, usize),
) -> Result<Vec<Tensor>> {
    let mut views = Vec::with_capacity(9);
    for di in 0..3 {
        let rows = strided_indices(di, stride, out_h, padded.device())?;
        let band = padded.index_select(&rows, 2)?;
        for dj in 0..3 {
            let cols = strided_indices(dj, stride, out_w, padded.device())?;
            views.push(band.index_select(&cols, 3)?);
        }
    }
    Ok(views)
}

/// The indices start, start + stride, … (count of them) as a u32 tensor.
fn strided_indices(start: usize, stride: usize, count: usize, device: &Device) -> Result<Tensor> {
    let indices: Vec<u32> = (0..count).map(|i| (start + i * stride) as u32).collect();
    Ok(Tensor::from_vec(indices, count, device)?)
}
