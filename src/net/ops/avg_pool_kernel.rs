//! 3×3, padding-1 average pooling (dividing by the in-image cells of each
//! window) as a candle custom op with its own backward, which spreads each
//! output gradient evenly over its window's in-image cells. Separable: sums
//! along rows first, then across the window's rows.
//!
//! Measured by benches/ops_quick.rs (thread CPU time, median of 15, one thread, forward +
//! backward of the output's sum on a 64×16×8×8 input, on a shared 2-core machine under load ~3.6,
//! so ±30%): µs, this kernel vs step 1
//! (zero padding + sum of 9 strided index_selects ÷ counts): stride 1: 510 vs 11,000;
//! stride 2: 320 vs 2,250.

use candle_core::{CpuStorage, CustomOp1, Layout, Shape, Tensor};

use super::cpu_slices::contiguous_f32;
use super::pool_geometry::{column_windows, row_windows, PoolGeometry};

/// Average-pools `x` as `geometry` describes; differentiable.
pub(crate) fn avg_pool3x3_kernel(
    x: &Tensor,
    geometry: PoolGeometry,
) -> candle_core::Result<Tensor> {
    x.contiguous()?.apply_op1(AvgPool3x3 { geometry })
}

/// Forward op: argument input.
struct AvgPool3x3 {
    geometry: PoolGeometry,
}

/// Input gradient: argument grad_output; no backward of its own.
struct AvgPool3x3Grad {
    geometry: PoolGeometry,
}

/// In-image cells under each output's window, row-major over one output plane.
fn cell_counts(g: &PoolGeometry) -> Vec<f32> {
    let rows = (0..g.out_h).map(|oi| g.window(oi, g.in_h()).len());
    rows.flat_map(|r| (0..g.out_w).map(move |oj| (r * g.window(oj, g.in_w()).len()) as f32))
        .collect()
}

impl CustomOp1 for AvgPool3x3 {
    fn name(&self) -> &'static str {
        "gemmule-avg-pool3x3"
    }

    fn cpu_fwd(
        &self,
        storage: &CpuStorage,
        layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (w, out_w) = (g.in_w(), g.out_w);
        let x = contiguous_f32(storage, layout, g.planes() * g.in_plane(), self.name())?;
        let counts = cell_counts(g);
        let mut output = vec![0.0f32; g.planes() * g.out_plane()];
        let mut row_sums = vec![0.0f32; g.in_h() * out_w];
        let out_planes = output.chunks_exact_mut(g.out_plane());
        for (plane, out) in x.chunks_exact(g.in_plane()).zip(out_planes) {
            for (row, sums) in plane.chunks_exact(w).zip(row_sums.chunks_exact_mut(out_w)) {
                row_windows(row, sums, g.stride, |a, b| a + b);
            }
            for (oi, out_row) in out.chunks_exact_mut(out_w).enumerate() {
                column_windows(&row_sums, out_w, out_row, oi, g.stride, |a, b| a + b);
            }
            for (cell, count) in out.iter_mut().zip(&counts) {
                *cell /= count;
            }
        }
        Ok((CpuStorage::F32(output), g.output_shape()))
    }

    fn bwd(
        &self,
        _x: &Tensor,
        _output: &Tensor,
        grad_output: &Tensor,
    ) -> candle_core::Result<Option<Tensor>> {
        let geometry = self.geometry;
        let grad = grad_output
            .contiguous()?
            .apply_op1_no_bwd(&AvgPool3x3Grad { geometry })?;
        Ok(Some(grad))
    }
}

impl CustomOp1 for AvgPool3x3Grad {
    fn name(&self) -> &'static str {
        "gemmule-avg-pool3x3-grad"
    }

    fn cpu_fwd(
        &self,
        storage: &CpuStorage,
        layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (h, w, out_w) = (g.in_h(), g.in_w(), g.out_w);
        let grad = contiguous_f32(storage, layout, g.planes() * g.out_plane(), self.name())?;
        let counts = cell_counts(g);
        let mut grad_x = vec![0.0f32; g.planes() * g.in_plane()];
        let mut shares = vec![0.0f32; g.out_plane()];
        let mut row_shares = vec![0.0f32; h * out_w];
        let planes = grad
            .chunks_exact(g.out_plane())
            .zip(grad_x.chunks_exact_mut(g.in_plane()));
        for (grad_out, grad_in) in planes {
            // The adjoint of the forward: each output's share goes to its
            // window's rows, then along each row to the window's columns.
            for ((share, value), count) in shares.iter_mut().zip(grad_out).zip(&counts) {
                *share = value / count;
            }
            row_shares.fill(0.0);
            for (oi, share_row) in shares.chunks_exact(out_w).enumerate() {
                let centre = oi * g.stride;
                for r in centre.saturating_sub(1)..(centre + 2).min(h) {
                    let target = &mut row_shares[r * out_w..(r + 1) * out_w];
                    for (cell, share) in target.iter_mut().zip(share_row) {
                        *cell += share;
                    }
                }
            }
            let rows = grad_in
                .chunks_exact_mut(w)
                .zip(row_shares.chunks_exact(out_w));
            for (row, row_share) in rows {
                spread_along_row(row_share, row, g.stride);
            }
        }
        Ok((CpuStorage::F32(grad_x), g.input_shape()))
    }
}

/// Adds each output column's share to the in-image cells c − 1, c, c + 1
/// (c = oj·stride) of `row`: the adjoint of [`row_windows`] with a sum.
fn spread_along_row(shares: &[f32], row: &mut [f32], stride: usize) {
    for (oj, share) in shares.iter().enumerate() {
        row[oj * stride] += share;
    }
    for (oj, share) in shares.iter().enumerate().skip(1) {
        row[oj * stride - 1] += share;
    }
    let with_right = row
        .len()
        .saturating_sub(1)
        .div_ceil(stride)
        .min(shares.len());
    for (oj, share) in shares[..with_right].iter().enumerate() {
        row[oj * stride + 1] += share;
    }
}
