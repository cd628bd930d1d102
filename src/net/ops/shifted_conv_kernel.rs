//! Stride-1, ungrouped 2-D convolution as a candle custom op on the padded
//! channel-major [`Grid`]: one gemm per kernel tap over all images at once,
//! `out_grid += W[:, :, ki, kj] · x_grid shifted by the tap`, with its own
//! backward (the same taps transposed). No im2col copy; the price is
//! computing the grid's padding cells too.
//!
//! Timings: see the `ops` module documentation.

use candle_core::{CpuStorage, CustomOp2, CustomOp3, Layout, Shape, Tensor};

use super::checks::ConvGeometry;
use super::cpu_slices::contiguous_f32;
use super::grid::Grid;
use super::matmul::{matmul_into, MatrixView, MatrixViewMut};
use super::scratch;

/// True when `geometry` is a convolution this kernel handles.
pub(crate) fn handles(geometry: &ConvGeometry) -> bool {
    geometry.stride == 1 && geometry.groups == 1
}

/// Applies the convolution `geometry` describes (see [`handles`]).
pub(crate) fn shifted_conv2d(
    x: &Tensor,
    w: &Tensor,
    geometry: ConvGeometry,
) -> candle_core::Result<Tensor> {
    x.contiguous()?
        .apply_op2(&w.contiguous()?, ShiftedConv2d { geometry })
}

/// Forward op: arguments (input, weight).
struct ShiftedConv2d {
    geometry: ConvGeometry,
}

/// Gradients of input and weight packed in one vector: arguments (input,
/// grad_output, weight); no backward of its own.
struct ShiftedConv2dGrad {
    geometry: ConvGeometry,
}

/// The padded grid of `g` and its tap shifts, plus the number of output grid
/// columns a tap can compute without reading past the grid.
struct Taps {
    grid: Grid,
    shifts: Vec<usize>,
    span: usize,
}

impl Taps {
    fn new(g: &ConvGeometry) -> Self {
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
        Self { grid, shifts, span }
    }

    /// A `rows × span` view of `data` starting at `shift`, one row per channel.
    fn channels<'a>(&self, data: &'a [f32], rows: usize, shift: usize) -> MatrixView<'a> {
        MatrixView {
            data: &data[shift.min(data.len())..],
            rows,
            cols: self.span,
            row_stride: self.grid.channel_len(),
            col_stride: 1,
        }
    }

    /// The writable counterpart of [`Taps::channels`].
    fn channels_mut<'a>(
        &self,
        data: &'a mut [f32],
        rows: usize,
        shift: usize,
    ) -> MatrixViewMut<'a> {
        let start = shift.min(data.len());
        MatrixViewMut {
            data: &mut data[start..],
            rows,
            cols: self.span,
            row_stride: self.grid.channel_len(),
            col_stride: 1,
        }
    }
}

/// Tap `tap` of weight (C_out, C_in, KH, KW) as a C_out × C_in matrix view.
fn weight_tap<'a>(g: &ConvGeometry, weight: &'a [f32], tap: usize) -> MatrixView<'a> {
    let taps = g.kernel_h * g.kernel_w;
    MatrixView {
        data: &weight[tap.min(weight.len())..],
        rows: g.out_channels,
        cols: g.in_channels,
        row_stride: g.in_channels * taps,
        col_stride: taps,
    }
}

fn to_candle(error: crate::Error) -> candle_core::Error {
    candle_core::Error::Msg(error.to_string())
}

impl CustomOp2 for ShiftedConv2d {
    fn name(&self) -> &'static str {
        "gemmule-conv2d-shifted-taps"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        w_storage: &CpuStorage,
        w_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let x_len = g.batch * g.in_channels * g.in_plane();
        let x = contiguous_f32(x_storage, x_layout, x_len, self.name())?;
        let w_len = g.out_channels * g.patch_len();
        let w = contiguous_f32(w_storage, w_layout, w_len, self.name())?;
        let taps = Taps::new(g);
        let x_grid = taps.grid.embed(x, g.in_channels, g.in_h, g.in_w, g.padding);
        let mut out_grid = taps.grid.zeros(g.out_channels);
        for (tap, &shift) in taps.shifts.iter().enumerate() {
            matmul_into(
                taps.channels_mut(&mut out_grid, g.out_channels, 0),
                weight_tap(g, w, tap),
                taps.channels(&x_grid, g.in_channels, shift),
                tap > 0,
            )
            .map_err(to_candle)?;
        }
        let output = taps
            .grid
            .extract(&out_grid, g.out_channels, g.out_h, g.out_w, 0);
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
        let packed = x.contiguous()?.apply_op3_no_bwd(
            &grad_output.contiguous()?,
            &w.contiguous()?,
            &ShiftedConv2dGrad { geometry: g },
        )?;
        let x_len = g.batch * g.in_channels * g.in_plane();
        let grad_x = packed.narrow(0, 0, x_len)?.reshape(x.shape())?;
        let grad_w = packed
            .narrow(0, x_len, g.out_channels * g.patch_len())?
            .reshape(w.shape())?;
        Ok((Some(grad_x), Some(grad_w)))
    }
}

impl CustomOp3 for ShiftedConv2dGrad {
    fn name(&self) -> &'static str {
        "gemmule-conv2d-shifted-taps-grad"
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
        let x_len = g.batch * g.in_channels * g.in_plane();
        let x = contiguous_f32(x_storage, x_layout, x_len, self.name())?;
        let w_len = g.out_channels * g.patch_len();
        let w = contiguous_f32(w_storage, w_layout, w_len, self.name())?;
        let grad_len = g.batch * g.out_channels * g.out_plane();
        let grad = contiguous_f32(grad_storage, grad_layout, grad_len, self.name())?;
        let taps = Taps::new(g);
        let x_grid = taps.grid.embed(x, g.in_channels, g.in_h, g.in_w, g.padding);
        // Output cells outside H_out × W_out stay 0, so the padding cells the
        // forward computed contribute nothing.
        let grad_grid = taps.grid.embed(grad, g.out_channels, g.out_h, g.out_w, 0);
        let mut grad_x_grid = taps.grid.zeros(g.in_channels);
        let mut grad_w = vec![0.0f32; w_len];
        let kernel_taps = g.kernel_h * g.kernel_w;
        for (tap, &shift) in taps.shifts.iter().enumerate() {
            // grad_x_grid (shifted) += W_tapᵀ · grad_grid
            matmul_into(
                taps.channels_mut(&mut grad_x_grid, g.in_channels, shift),
                weight_tap(g, w, tap).transposed(),
                taps.channels(&grad_grid, g.out_channels, 0),
                true,
            )
            .map_err(to_candle)?;
            // grad_W_tap = grad_grid · x_grid (shifted)ᵀ
            matmul_into(
                MatrixViewMut {
                    data: &mut grad_w[tap..],
                    rows: g.out_channels,
                    cols: g.in_channels,
                    row_stride: g.in_channels * kernel_taps,
                    col_stride: kernel_taps,
                },
                taps.channels(&grad_grid, g.out_channels, 0),
                taps.channels(&x_grid, g.in_channels, shift).transposed(),
                false,
            )
            .map_err(to_candle)?;
        }
        let mut packed = taps
            .grid
            .extract(&grad_x_grid, g.in_channels, g.in_h, g.in_w, g.padding);
        for buffer in [x_grid, grad_grid, grad_x_grid] {
            scratch::recycle(buffer);
        }
        packed.extend_from_slice(&grad_w);
        Ok((CpuStorage::F32(packed), Shape::from(x_len + w_len)))
    }
}
