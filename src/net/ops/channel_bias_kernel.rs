//! Adding one bias per channel to an (N, C, H, W) tensor, as a candle custom
//! op whose backward sums the output gradient per channel in one pass.
//!
//! The same sum through candle (`broadcast_add`, differentiated by
//! `sum_keepdim` over dims 0, 2 and 3) walks the gradient with a strided
//! index per value; on the B5 benchmark network (benches/cells.rs) that
//! reduction took about a third of each training step.

use candle_core::{CpuStorage, CustomOp2, Layout, Shape, Tensor};

use super::cpu_slices::contiguous_f32;

/// `x` (N, C, H, W) plus `bias[c]` on every cell of channel c; differentiable in both.
pub(crate) fn add_channel_bias_kernel(
    x: &Tensor,
    bias: &Tensor,
    dims: (usize, usize, usize, usize),
) -> candle_core::Result<Tensor> {
    x.contiguous()?
        .apply_op2(&bias.contiguous()?, ChannelBias { dims })
}

/// Forward op: arguments (input, bias).
struct ChannelBias {
    dims: (usize, usize, usize, usize),
}

/// Bias gradient: argument grad_output; no backward of its own.
struct ChannelSums {
    dims: (usize, usize, usize, usize),
}

impl CustomOp2 for ChannelBias {
    fn name(&self) -> &'static str {
        "gemmule-channel-bias"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        bias_storage: &CpuStorage,
        bias_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let (n, c, h, w) = self.dims;
        let x = contiguous_f32(x_storage, x_layout, n * c * h * w, self.name())?;
        let bias = contiguous_f32(bias_storage, bias_layout, c, self.name())?;
        let mut output = Vec::with_capacity(x.len());
        for (plane, b) in x.chunks_exact((h * w).max(1)).zip(bias.iter().cycle()) {
            output.extend(plane.iter().map(|v| v + b));
        }
        Ok((CpuStorage::F32(output), Shape::from(self.dims)))
    }

    fn bwd(
        &self,
        _x: &Tensor,
        _bias: &Tensor,
        _output: &Tensor,
        grad_output: &Tensor,
    ) -> candle_core::Result<(Option<Tensor>, Option<Tensor>)> {
        let grad_bias = grad_output
            .contiguous()?
            .apply_op1_no_bwd(&ChannelSums { dims: self.dims })?;
        Ok((Some(grad_output.clone()), Some(grad_bias)))
    }
}

impl candle_core::CustomOp1 for ChannelSums {
    fn name(&self) -> &'static str {
        "gemmule-channel-sums"
    }

    fn cpu_fwd(
        &self,
        storage: &CpuStorage,
        layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let (n, c, h, w) = self.dims;
        let grad = contiguous_f32(storage, layout, n * c * h * w, self.name())?;
        // Sum each plane in f64 first, then planes per channel in image order.
        let mut sums = vec![0.0f64; c];
        for (plane, sum) in grad.chunks_exact((h * w).max(1)).zip((0..c).cycle()) {
            sums[sum] += plane.iter().map(|&v| f64::from(v)).sum::<f64>();
        }
        let sums: Vec<f32> = sums.into_iter().map(|s| s as f32).collect();
        Ok((CpuStorage::F32(sums), Shape::from(c)))
    }
}
