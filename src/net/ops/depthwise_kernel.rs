//! Depthwise 2-D convolution (groups = C_in = C_out, one 2-D filter per
//! channel) as a candle custom op with direct loops and its own backward:
//! each kernel tap adds a scaled, shifted input row to an output row, which
//! the compiler vectorises for stride 1. Per-channel im2col + gemm would
//! run 1-row matrix products.
//!
//! Measured by benches/ops_quick.rs (thread CPU time, median of 15, one thread, forward +
//! backward of the output's sum on a 64×16×8×8 input, on a shared 2-core machine under load ~3.6,
//! so ±30%): µs, this kernel vs im2col + gemm vs step 1
//! (candle, per-group chunks + cat): 3×3 stride 1: 1,300 vs 1,460 vs 19,100; stride 2: 750 vs
//! 960 vs 5,300. Dropped: per-channel shifted multiply-adds on a padded copy (1,800).

use candle_core::{CpuStorage, CustomOp2, Layout, Shape, Tensor};

use super::checks::ConvGeometry;
use super::cpu_slices::contiguous_f32;
use super::im2col::valid_outputs;

/// True when `geometry` is a depthwise convolution this kernel handles.
pub(crate) fn is_depthwise(geometry: &ConvGeometry) -> bool {
    geometry.groups > 1 && geometry.group_in() == 1 && geometry.group_out() == 1
}

/// Applies the depthwise convolution `geometry` describes (see [`is_depthwise`]).
pub(crate) fn depthwise_conv2d(
    x: &Tensor,
    w: &Tensor,
    geometry: ConvGeometry,
) -> candle_core::Result<Tensor> {
    x.contiguous()?
        .apply_op2(&w.contiguous()?, DepthwiseConv2d { geometry })
}

/// Forward op: arguments (input, weight).
struct DepthwiseConv2d {
    geometry: ConvGeometry,
}

/// Input gradient: arguments (grad_output, weight); no backward of its own.
struct DepthwiseInputGrad {
    geometry: ConvGeometry,
}

/// Weight gradient: arguments (input, grad_output); no backward of its own.
struct DepthwiseWeightGrad {
    geometry: ConvGeometry,
}

/// One kernel tap applied to one output row: output cells `cols` of row
/// `out_row` read input row `in_row` at columns `oj·stride + in_shift − padding`.
struct TapRow {
    tap: usize,
    out_row: usize,
    in_row: usize,
    cols: std::ops::Range<usize>,
    in_shift: usize,
}

/// Every kernel tap and output row whose window touches the image, taps in
/// order and rows in order within a tap. Worked out once per call and
/// replayed for every plane (per plane, the range arithmetic cost more than
/// the arithmetic on 8×8 planes).
fn tap_rows(g: &ConvGeometry) -> Vec<TapRow> {
    let mut rows = Vec::new();
    for_each_tap_row(g, |t| rows.push(t));
    rows
}

/// Calls `visit` for every kernel tap and output row whose window touches the image.
fn for_each_tap_row(g: &ConvGeometry, mut visit: impl FnMut(TapRow)) {
    for ki in 0..g.kernel_h {
        let rows = valid_outputs(g.out_h, g.in_h, ki * g.dilation, g.stride, g.padding);
        for kj in 0..g.kernel_w {
            let cols = valid_outputs(g.out_w, g.in_w, kj * g.dilation, g.stride, g.padding);
            if cols.is_empty() {
                continue;
            }
            for out_row in rows.clone() {
                visit(TapRow {
                    tap: ki * g.kernel_w + kj,
                    out_row,
                    in_row: out_row * g.stride + ki * g.dilation - g.padding,
                    cols: cols.clone(),
                    in_shift: kj * g.dilation,
                });
            }
        }
    }
}

/// The input cells tap row `t` reads, paired with its output cells, for stride `stride`.
fn input_cols(t: &TapRow, stride: usize, padding: usize) -> impl Iterator<Item = usize> + '_ {
    t.cols
        .clone()
        .map(move |oj| oj * stride + t.in_shift - padding)
}

fn shapes(g: &ConvGeometry) -> (usize, usize, usize) {
    let channels = g.batch * g.in_channels;
    let taps = g.kernel_h * g.kernel_w;
    (channels, taps, g.in_channels * taps)
}

impl CustomOp2 for DepthwiseConv2d {
    fn name(&self) -> &'static str {
        "gemmule-depthwise-conv2d"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        w_storage: &CpuStorage,
        w_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (planes, taps, weight_len) = shapes(g);
        let x = contiguous_f32(x_storage, x_layout, planes * g.in_plane(), self.name())?;
        let w = contiguous_f32(w_storage, w_layout, weight_len, self.name())?;
        let mut output = vec![0.0f32; planes * g.out_plane()];
        let plan = tap_rows(g);
        let pairs = x
            .chunks_exact(g.in_plane())
            .zip(output.chunks_exact_mut(g.out_plane()));
        for (index, (image, out)) in pairs.enumerate() {
            let filter = &w[(index % g.in_channels) * taps..][..taps];
            for t in &plan {
                let weight = filter[t.tap];
                let source = &image[t.in_row * g.in_w..][..g.in_w];
                let target = &mut out[t.out_row * g.out_w..][..g.out_w];
                let target = &mut target[t.cols.clone()];
                if g.stride == 1 {
                    let start = t.cols.start + t.in_shift - g.padding;
                    for (cell, value) in target.iter_mut().zip(&source[start..]) {
                        *cell += weight * value;
                    }
                } else {
                    for (cell, col) in target.iter_mut().zip(input_cols(t, g.stride, g.padding)) {
                        *cell += weight * source[col];
                    }
                }
            }
        }
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
        let geometry = self.geometry;
        let grad_output = grad_output.contiguous()?;
        let grad_x =
            grad_output.apply_op2_no_bwd(&w.contiguous()?, &DepthwiseInputGrad { geometry })?;
        let grad_w = x
            .contiguous()?
            .apply_op2_no_bwd(&grad_output, &DepthwiseWeightGrad { geometry })?;
        Ok((Some(grad_x), Some(grad_w)))
    }
}

impl CustomOp2 for DepthwiseInputGrad {
    fn name(&self) -> &'static str {
        "gemmule-depthwise-conv2d-input-grad"
    }

    fn cpu_fwd(
        &self,
        grad_storage: &CpuStorage,
        grad_layout: &Layout,
        w_storage: &CpuStorage,
        w_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (planes, taps, weight_len) = shapes(g);
        let grad = contiguous_f32(
            grad_storage,
            grad_layout,
            planes * g.out_plane(),
            self.name(),
        )?;
        let w = contiguous_f32(w_storage, w_layout, weight_len, self.name())?;
        let mut grad_x = vec![0.0f32; planes * g.in_plane()];
        let plan = tap_rows(g);
        let pairs = grad
            .chunks_exact(g.out_plane())
            .zip(grad_x.chunks_exact_mut(g.in_plane()));
        for (index, (grad_out, grad_in)) in pairs.enumerate() {
            let filter = &w[(index % g.in_channels) * taps..][..taps];
            for t in &plan {
                let weight = filter[t.tap];
                let source = &grad_out[t.out_row * g.out_w..][..g.out_w];
                let source = &source[t.cols.clone()];
                let target = &mut grad_in[t.in_row * g.in_w..][..g.in_w];
                if g.stride == 1 {
                    let start = t.cols.start + t.in_shift - g.padding;
                    for (cell, value) in target[start..].iter_mut().zip(source) {
                        *cell += weight * value;
                    }
                } else {
                    for (value, col) in source.iter().zip(input_cols(t, g.stride, g.padding)) {
                        target[col] += weight * value;
                    }
                }
            }
        }
        let shape = (g.batch, g.in_channels, g.in_h, g.in_w);
        Ok((CpuStorage::F32(grad_x), Shape::from(shape)))
    }
}

impl CustomOp2 for DepthwiseWeightGrad {
    fn name(&self) -> &'static str {
        "gemmule-depthwise-conv2d-weight-grad"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        grad_storage: &CpuStorage,
        grad_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (planes, taps, weight_len) = shapes(g);
        let x = contiguous_f32(x_storage, x_layout, planes * g.in_plane(), self.name())?;
        let grad = contiguous_f32(
            grad_storage,
            grad_layout,
            planes * g.out_plane(),
            self.name(),
        )?;
        let mut grad_w = vec![0.0f32; weight_len];
        let plan = tap_rows(g);
        let pairs = x
            .chunks_exact(g.in_plane())
            .zip(grad.chunks_exact(g.out_plane()));
        for (index, (image, grad_out)) in pairs.enumerate() {
            let filter_grad = &mut grad_w[(index % g.in_channels) * taps..][..taps];
            for t in &plan {
                let source = &image[t.in_row * g.in_w..][..g.in_w];
                let grads = &grad_out[t.out_row * g.out_w..][..g.out_w];
                let grads = &grads[t.cols.clone()];
                let dot: f32 = if g.stride == 1 {
                    let start = t.cols.start + t.in_shift - g.padding;
                    grads.iter().zip(&source[start..]).map(|(a, b)| a * b).sum()
                } else {
                    let cols = input_cols(t, g.stride, g.padding);
                    grads.iter().zip(cols).map(|(a, col)| a * source[col]).sum()
                };
                filter_grad[t.tap] += dot;
            }
        }
        let shape = (g.out_channels, 1, g.kernel_h, g.kernel_w);
        Ok((CpuStorage::F32(grad_w), Shape::from(shape)))
    }
}
