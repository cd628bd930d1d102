//! Stride-1 depthwise 2-D convolution (groups = C_in = C_out) as a candle
//! custom op on the padded channel-major [`Grid`]: per channel and kernel
//! tap one long multiply-add over all images, `out_grid[c] += w[c, tap] ·
//! x_grid[c] shifted by the tap`, with its own backward.
//!
//! Timings: see the `ops` module documentation.

use candle_core::{CpuStorage, CustomOp2, CustomOp3, Layout, Shape, Tensor};

use super::checks::ConvGeometry;
use super::cpu_slices::contiguous_f32;
use super::depthwise_kernel::is_depthwise;
use super::grid::Grid;
use super::scratch;

/// True when `geometry` is a convolution this kernel handles.
pub(crate) fn handles(geometry: &ConvGeometry) -> bool {
    geometry.stride == 1 && is_depthwise(geometry)
}

/// Applies the depthwise convolution `geometry` describes (see [`handles`]).
pub(crate) fn shifted_depthwise_conv2d(
    x: &Tensor,
    w: &Tensor,
    geometry: ConvGeometry,
) -> candle_core::Result<Tensor> {
    x.contiguous()?
        .apply_op2(&w.contiguous()?, ShiftedDepthwise { geometry })
}

/// Forward op: arguments (input, weight).
struct ShiftedDepthwise {
    geometry: ConvGeometry,
}

/// Gradients of input and weight packed in one vector: arguments (input,
/// grad_output, weight); no backward of its own.
struct ShiftedDepthwiseGrad {
    geometry: ConvGeometry,
}

/// The padded grid of `g`, its tap shifts and the number of grid cells a tap
/// can compute without reading past a channel.
fn layout(g: &ConvGeometry) -> (Grid, Vec<usize>, usize) {
    let grid = Grid {
        batch: g.batch,
        rows: g.in_h + 2 * g.padding,
        cols: g.in_w + 2 * g.padding,
    };
    let shifts: Vec<usize> = (0..g.kernel_h)
        .flat_map(|ki| (0..g.kernel_w).map(move |kj| (ki, kj)))
        .map(|(ki, kj)| (ki * grid.cols + kj) * g.dilation)
        .collect();
    let largest = shifts.iter().copied().max().unwrap_or(0);
    let span = grid.channel_len().saturating_sub(largest);
    (grid, shifts, span)
}

fn lengths(g: &ConvGeometry) -> (usize, usize, usize) {
    let taps = g.kernel_h * g.kernel_w;
    let x_len = g.batch * g.in_channels * g.in_plane();
    let out_len = g.batch * g.out_channels * g.out_plane();
    (x_len, out_len, g.in_channels * taps)
}

impl CustomOp2 for ShiftedDepthwise {
    fn name(&self) -> &'static str {
        "gemmule-depthwise-shifted-taps"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        w_storage: &CpuStorage,
        w_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (x_len, _, w_len) = lengths(g);
        let x = contiguous_f32(x_storage, x_layout, x_len, self.name())?;
        let w = contiguous_f32(w_storage, w_layout, w_len, self.name())?;
        let (grid, shifts, span) = layout(g);
        let x_grid = grid.embed(x, g.in_channels, g.in_h, g.in_w, g.padding);
        let mut out_grid = grid.zeros(g.out_channels);
        let channels = x_grid
            .chunks_exact(grid.channel_len())
            .zip(out_grid.chunks_exact_mut(grid.channel_len()));
        for ((source, target), filter) in channels.zip(w.chunks_exact(shifts.len())) {
            for (&weight, &shift) in filter.iter().zip(&shifts) {
                let shifted = &source[shift..shift + span];
                for (cell, value) in target[..span].iter_mut().zip(shifted) {
                    *cell += weight * value;
                }
            }
        }
        let output = grid.extract(&out_grid, g.out_channels, g.out_h, g.out_w, 0);
        scratch::recycle(x_grid);
        scratch::recycle(out_grid);
        let shape = (g.batch, g.out_channels, g.out_h, g.out_w);
        Ok((CpuStorage::F32(output), Shape::from(shape)))
    }

    fn bwd(
        &self,
        x: &Tensor,
        w: &Tensor,
        _output: &Tensor,
        grad_output: &Tensor,
    ) -> candle_core::Result<(Option<Tensor>, Option<Tensor>)> {
        let g = self.geometry;
        let (x_len, _, w_len) = lengths(&g);
        let packed = x.contiguous()?.apply_op3_no_bwd(
            &grad_output.contiguous()?,
            &w.contiguous()?,
            &ShiftedDepthwiseGrad { geometry: g },
        )?;
        let grad_x = packed.narrow(0, 0, x_len)?.reshape(x.shape())?;
        let grad_w = packed.narrow(0, x_len, w_len)?.reshape(w.shape())?;
        Ok((Some(grad_x), Some(grad_w)))
    }
}

impl CustomOp3 for ShiftedDepthwiseGrad {
    fn name(&self) -> &'static str {
        "gemmule-depthwise-shifted-taps-grad"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        grad_storage: &CpuStorage,
        grad_layout: &Layout,
        w_storage: &CpuStorage,
        w_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (x_len, out_len, w_len) = lengths(g);
        let x = contiguous_f32(x_storage, x_layout, x_len, self.name())?;
        let grad = contiguous_f32(grad_storage, grad_layout, out_len, self.name())?;
        let w = contiguous_f32(w_storage, w_layout, w_len, self.name())?;
        let (grid, shifts, span) = layout(g);
        let x_grid = grid.embed(x, g.in_channels, g.in_h, g.in_w, g.padding);
        // Output cells outside H_out × W_out stay 0: the padding cells the
        // forward computed contribute nothing.
        let grad_grid = grid.embed(grad, g.out_channels, g.out_h, g.out_w, 0);
        let mut grad_x_grid = grid.zeros(g.in_channels);
        let mut grad_w = vec![0.0f32; w_len];
        let per_channel = x_grid
            .chunks_exact(grid.channel_len())
            .zip(grad_grid.chunks_exact(grid.channel_len()))
            .zip(grad_x_grid.chunks_exact_mut(grid.channel_len()))
            .zip(
                w.chunks_exact(shifts.len())
                    .zip(grad_w.chunks_exact_mut(shifts.len())),
            );
        for (((source, grads), grad_source), (filter, filter_grad)) in per_channel {
            let grads = &grads[..span];
            for ((&weight, weight_grad), &shift) in filter.iter().zip(filter_grad).zip(&shifts) {
                let shifted = &source[shift..shift + span];
                *weight_grad = grads.iter().zip(shifted).map(|(a, b)| a * b).sum();
                let target = &mut grad_source[shift..shift + span];
                for (cell, value) in target.iter_mut().zip(grads) {
                    *cell += weight * value;
                }
            }
        }
        let mut packed = grid.extract(&grad_x_grid, g.in_channels, g.in_h, g.in_w, g.padding);
        for buffer in [x_grid, grad_grid, grad_x_grid] {
            scratch::recycle(buffer);
        }
        packed.extend_from_slice(&grad_w);
        Ok((CpuStorage::F32(packed), Shape::from(x_len + w_len)))
    }
}
