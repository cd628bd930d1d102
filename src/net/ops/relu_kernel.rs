//! ReLU as a candle custom op with a one-pass backward.
//!
//! candle's own `relu` differentiates through four tensor ops (zeros,
//! `ge`, a dtype cast and a product), each a full pass with its own
//! allocation; here the backward is one pass. The arithmetic is candle's:
//! forward `max(x, 0)`, backward `grad · (x ≥ 0 ? 1 : 0)` (the gradient passes
//! at x = 0), so results are bit-identical to `Tensor::relu`.

use candle_core::{CpuStorage, CustomOp1, CustomOp2, Layout, Shape, Tensor};

use super::cpu_slices::contiguous_f32;

/// ReLU of `x` (any shape, f32); differentiable.
pub(crate) fn relu_kernel(x: &Tensor) -> candle_core::Result<Tensor> {
    x.contiguous()?.apply_op1(Relu)
}

/// Forward op: argument input.
struct Relu;

/// Input gradient: arguments (input, grad_output); no backward of its own.
struct ReluGrad;

impl CustomOp1 for Relu {
    fn name(&self) -> &'static str {
        "gemmule-relu"
    }

    fn cpu_fwd(
        &self,
        storage: &CpuStorage,
        layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let x = contiguous_f32(storage, layout, layout.shape().elem_count(), self.name())?;
        let output: Vec<f32> = x.iter().map(|v| v.max(0.0)).collect();
        Ok((CpuStorage::F32(output), layout.shape().clone()))
    }

    fn bwd(
        &self,
        x: &Tensor,
        _output: &Tensor,
        grad_output: &Tensor,
    ) -> candle_core::Result<Option<Tensor>> {
        let grad = x.apply_op2_no_bwd(&grad_output.contiguous()?, &ReluGrad)?;
        Ok(Some(grad))
    }
}

impl CustomOp2 for ReluGrad {
    fn name(&self) -> &'static str {
        "gemmule-relu-grad"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        grad_storage: &CpuStorage,
        grad_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let len = x_layout.shape().elem_count();
        let x = contiguous_f32(x_storage, x_layout, len, self.name())?;
        let grad = contiguous_f32(grad_storage, grad_layout, len, self.name())?;
        let grad_x: Vec<f32> = x
            .iter()
            .zip(grad)
            .map(|(&v, &g)| g * if v >= 0.0 { 1.0 } else { 0.0 })
            .collect();
        Ok((CpuStorage::F32(grad_x), x_layout.shape().clone()))
    }
}
