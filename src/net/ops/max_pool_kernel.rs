//! 3×3, padding-1 max pooling as a candle custom op with its own backward,
//! which routes each output gradient to the first largest in-image cell of
//! its window (row-major order, as PyTorch's CPU kernel scans). Both
//! passes are separable: maxima along rows first, then across the window's
//! rows; the forward keeps values only, the backward recomputes the argmax.
//!
//! Timings: see the `ops` module documentation.

use candle_core::{CpuStorage, CustomOp1, CustomOp2, Layout, Shape, Tensor};

use super::cpu_slices::contiguous_f32;
use super::pool_geometry::{column_windows, row_windows, PoolGeometry};

/// Max-pools `x` as `geometry` describes; differentiable.
pub(crate) fn max_pool3x3_kernel(
    x: &Tensor,
    geometry: PoolGeometry,
) -> candle_core::Result<Tensor> {
    x.contiguous()?.apply_op1(MaxPool3x3 { geometry })
}

/// Forward op: argument input.
struct MaxPool3x3 {
    geometry: PoolGeometry,
}

/// Input gradient: arguments (input, grad_output); no backward of its own.
struct MaxPool3x3Grad {
    geometry: PoolGeometry,
}

/// Reusable scratch of the backward's row pass: the first maximum of each
/// (input row, output column) window and its column.
struct RowMaxima {
    values: Vec<f32>,
    cols: Vec<usize>,
}

/// Index of the first maximum among in-image neighbours `centre − 1`,
/// `centre`, `centre + 1` of `cells` (an earlier cell wins ties, so the
/// earlier neighbour needs ≥ and the later one >). Written with selects
/// rather than unpredictable branches.
fn first_max(cells: impl Fn(usize) -> f32, centre: usize, len: usize) -> (f32, usize) {
    let (mut best, mut index) = (cells(centre), centre);
    if centre >= 1 {
        let before = cells(centre - 1);
        let wins = before >= best;
        best = if wins { before } else { best };
        index = if wins { centre - 1 } else { index };
    }
    if centre + 1 < len {
        let after = cells(centre + 1);
        let wins = after > best;
        best = if wins { after } else { best };
        index = if wins { centre + 1 } else { index };
    }
    (best, index)
}

impl RowMaxima {
    fn new(g: &PoolGeometry) -> Self {
        Self {
            values: vec![0.0; g.in_h() * g.out_w],
            cols: vec![0; g.in_h() * g.out_w],
        }
    }

    /// Calls `visit(output index, input index of the window's first maximum)`
    /// for every output of `plane`: row-major first, as PyTorch's CPU kernel
    /// scans (first along rows, then across them, earlier winning ties).
    fn for_each_argmax(
        &mut self,
        g: &PoolGeometry,
        plane: &[f32],
        mut visit: impl FnMut(usize, usize),
    ) {
        let (width, out_w) = (g.in_w(), g.out_w);
        let rows_out = self
            .values
            .chunks_exact_mut(out_w)
            .zip(self.cols.chunks_exact_mut(out_w));
        for (row, (values, cols)) in plane.chunks_exact(width).zip(rows_out) {
            for (oj, (value, col)) in values.iter_mut().zip(cols.iter_mut()).enumerate() {
                (*value, *col) = first_max(|c| row[c], oj * g.stride, width);
            }
        }
        for oi in 0..g.out_h {
            for oj in 0..out_w {
                let cell = |r: usize| self.values[r * out_w + oj];
                let (_, r) = first_max(cell, oi * g.stride, g.in_h());
                visit(oi * out_w + oj, r * width + self.cols[r * out_w + oj]);
            }
        }
    }
}

impl CustomOp1 for MaxPool3x3 {
    fn name(&self) -> &'static str {
        "gemmule-max-pool3x3"
    }

    fn cpu_fwd(
        &self,
        storage: &CpuStorage,
        layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let x = contiguous_f32(storage, layout, g.planes() * g.in_plane(), self.name())?;
        let mut output = vec![0.0f32; g.planes() * g.out_plane()];
        let mut row_maxima = vec![0.0f32; g.in_h() * g.out_w];
        let out_planes = output.chunks_exact_mut(g.out_plane());
        for (plane, out) in x.chunks_exact(g.in_plane()).zip(out_planes) {
            let rows = plane.chunks_exact(g.in_w());
            for (row, maxima) in rows.zip(row_maxima.chunks_exact_mut(g.out_w)) {
                row_windows(row, maxima, g.stride, f32::max);
            }
            for (oi, out_row) in out.chunks_exact_mut(g.out_w).enumerate() {
                column_windows(&row_maxima, g.out_w, out_row, oi, g.stride, f32::max);
            }
        }
        Ok((CpuStorage::F32(output), g.output_shape()))
    }

    fn bwd(
        &self,
        x: &Tensor,
        _output: &Tensor,
        grad_output: &Tensor,
    ) -> candle_core::Result<Option<Tensor>> {
        let geometry = self.geometry;
        let grad = x
            .contiguous()?
            .apply_op2_no_bwd(&grad_output.contiguous()?, &MaxPool3x3Grad { geometry })?;
        Ok(Some(grad))
    }
}

impl CustomOp2 for MaxPool3x3Grad {
    fn name(&self) -> &'static str {
        "gemmule-max-pool3x3-grad"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        grad_storage: &CpuStorage,
        grad_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let x = contiguous_f32(x_storage, x_layout, g.planes() * g.in_plane(), self.name())?;
        let grad_len = g.planes() * g.out_plane();
        let grad = contiguous_f32(grad_storage, grad_layout, grad_len, self.name())?;
        let mut grad_x = vec![0.0f32; x.len()];
        let mut scratch = RowMaxima::new(g);
        let planes = x
            .chunks_exact(g.in_plane())
            .zip(grad.chunks_exact(g.out_plane()));
        for ((plane, grad_out), grad_in) in planes.zip(grad_x.chunks_exact_mut(g.in_plane())) {
            scratch.for_each_argmax(g, plane, |o, i| grad_in[i] += grad_out[o]);
        }
        Ok((CpuStorage::F32(grad_x), g.input_shape()))
    }
}
