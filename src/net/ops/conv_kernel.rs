//! 2-D convolution as a candle custom op: im2col + gemm over blocks of
//! images (one gemm per block and group, its columns several images wide),
//! with its own backward that unfolds the input once for both gradients
//! (weight: gemm against the columns; input: gemm, then col2im).
//!
//! Measured by benches/ops_quick.rs (thread CPU time, median of 15, one thread, forward +
//! backward of the output's sum on a 64×16×8×8 input, on a shared 2-core machine under load ~3.6,
//! so ±30%): µs, this kernel vs step 1 (candle's `Tensor::conv2d`):
//! 3×3 pad 1: 2,600 vs 22,000; 3×3 stride 2: 1,400 vs 5,800; 1×1: 450 vs 3,300;
//! 3×3 dilation 2 pad 2: 2,200 vs 15,400. Also tried and dropped: one gemm per kernel tap on a
//! zero-padded channel-major copy (no im2col): 2,700 for 3×3 (a tie), 4,500 dilated, 530 1×1,
//! and 1.2–2× slower than this kernel on 32×32 images. Since then the unfolding follows
//! per-geometry plans (`im2col::TapPlans`) and the backward skips the input gradient of data
//! (a network's first convolution): 3×3 pad 1 2,000 µs at load ~1 (`net::ops` table).

use candle_core::{CpuStorage, CustomOp2, CustomOp3, Layout, Shape, Tensor};

use super::checks::ConvGeometry;
use super::cpu_slices::contiguous_f32;
use super::im2col::{col2im_add, im2col, TapPlans};
use super::matmul::{matmul_into, MatrixView, MatrixViewMut};
use super::scratch;

/// Output columns one gemm aims for: images go through in blocks of
/// ⌈TARGET_COLUMNS / (H_out·W_out)⌉ so small images still make a wide product.
const TARGET_COLUMNS: usize = 512;

/// Applies the convolution `geometry` describes to `x` and `w`.
pub(crate) fn conv2d_im2col(
    x: &Tensor,
    w: &Tensor,
    geometry: ConvGeometry,
) -> candle_core::Result<Tensor> {
    x.contiguous()?
        .apply_op2(&w.contiguous()?, Conv2dIm2col { geometry })
}

/// The forward op; differentiable in both arguments (input, weight).
struct Conv2dIm2col {
    geometry: ConvGeometry,
}

/// Gradients of input (when `input_grad`) and weight packed in one vector:
/// arguments (input, grad_output, weight); no backward of its own.
struct Conv2dIm2colGrad {
    geometry: ConvGeometry,
    /// Whether the input needs a gradient (it does not when it is data, e.g. a
    /// network's first convolution): without it, the input-gradient gemm and
    /// col2im are skipped and the packed vector holds only the weight gradient.
    input_grad: bool,
}

/// Lengths of the input, weight and output of `g`.
fn lengths(g: &ConvGeometry) -> (usize, usize, usize) {
    (
        g.batch * g.in_channels * g.in_plane(),
        g.out_channels * g.patch_len(),
        g.batch * g.out_channels * g.out_plane(),
    )
}

/// One block of images and one group: where its data lives.
#[derive(Clone, Copy)]
struct BlockGroup {
    first_image: usize,
    images: usize,
    group: usize,
}

impl BlockGroup {
    /// Every (block, group) pair of `g`, blocks outermost.
    fn all(g: &ConvGeometry) -> impl Iterator<Item = BlockGroup> + '_ {
        let size = TARGET_COLUMNS.div_ceil(g.out_plane().max(1)).max(1);
        (0..g.batch).step_by(size).flat_map(move |first_image| {
            let images = size.min(g.batch - first_image);
            (0..g.groups).map(move |group| BlockGroup {
                first_image,
                images,
                group,
            })
        })
    }

    /// The width of the widest block (the first).
    fn widest(g: &ConvGeometry) -> usize {
        BlockGroup::all(g).next().map_or(0, |block| block.width(g))
    }

    /// Columns of the block's matrices: images · H_out · W_out.
    fn width(&self, g: &ConvGeometry) -> usize {
        self.images * g.out_plane()
    }

    /// Start of image `b`'s group input planes in the input.
    fn input_start(&self, g: &ConvGeometry, b: usize) -> usize {
        ((self.first_image + b) * g.in_channels + self.group * g.group_in()) * g.in_plane()
    }

    /// Start of image `b`'s output plane for the group's output channel `c`.
    fn output_start(&self, g: &ConvGeometry, b: usize, c: usize) -> usize {
        let channel = self.group * g.group_out() + c;
        ((self.first_image + b) * g.out_channels + channel) * g.out_plane()
    }

    /// The group's weights as a C_out/groups × patch_len matrix.
    fn weights<'a>(&self, g: &ConvGeometry, w: &'a [f32]) -> MatrixView<'a> {
        let size = g.group_out() * g.patch_len();
        MatrixView::row_major(
            &w[self.group * size..][..size],
            g.group_out(),
            g.patch_len(),
        )
    }

    /// Unfolds the block's images side by side into `columns` (patch_len × width).
    fn unfold(&self, g: &ConvGeometry, plans: &TapPlans, x: &[f32], columns: &mut [f32]) {
        let (width, group_len) = (self.width(g), g.group_in() * g.in_plane());
        for b in 0..self.images {
            let image = &x[self.input_start(g, b)..][..group_len];
            im2col(g, plans, image, &mut columns[b * g.out_plane()..], width);
        }
    }
}

fn to_candle(error: crate::Error) -> candle_core::Error {
    candle_core::Error::Msg(error.to_string())
}

impl CustomOp2 for Conv2dIm2col {
    fn name(&self) -> &'static str {
        "gemmule-conv2d-im2col"
    }

    fn cpu_fwd(
        &self,
        x_storage: &CpuStorage,
        x_layout: &Layout,
        w_storage: &CpuStorage,
        w_layout: &Layout,
    ) -> candle_core::Result<(CpuStorage, Shape)> {
        let g = &self.geometry;
        let (x_len, w_len, out_len) = lengths(g);
        let x = contiguous_f32(x_storage, x_layout, x_len, self.name())?;
        let w = contiguous_f32(w_storage, w_layout, w_len, self.name())?;
        let plane = g.out_plane();
        let mut output = vec![0.0f32; out_len];
        let widest = BlockGroup::widest(g);
        let mut column_buffer = scratch::take(g.patch_len() * widest);
        let mut product_buffer = scratch::take(g.group_out() * widest);
        let plans = TapPlans::new(g);
        for block in BlockGroup::all(g) {
            let width = block.width(g);
            let columns = &mut column_buffer[..g.patch_len() * width];
            let product = &mut product_buffer[..g.group_out() * width];
            block.unfold(g, &plans, x, columns);
            matmul_into(
                MatrixViewMut::row_major(product, g.group_out(), width),
                block.weights(g, w),
                MatrixView::row_major(columns, g.patch_len(), width),
                false,
            )
            .map_err(to_candle)?;
            for (c, row) in product.chunks_exact(width).enumerate() {
                for (b, image_row) in row.chunks_exact(plane).enumerate() {
                    let start = block.output_start(g, b, c);
                    output[start..start + plane].copy_from_slice(image_row);
                }
            }
        }
        scratch::recycle(column_buffer);
        scratch::recycle(product_buffer);
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
        let (x_len, w_len, _) = lengths(&g);
        let input_grad = x.track_op();
        let packed = x.contiguous()?.apply_op3_no_bwd(
            &grad_output.contiguous()?,
            &w.contiguous()?,
            &Conv2dIm2colGrad {
                geometry: g,
                input_grad,
            },
        )?;
        if !input_grad {
            return Ok((None, Some(packed.reshape(w.shape())?)));
        }
        let grad_x = packed.narrow(0, 0, x_len)?.reshape(x.shape())?;
        let grad_w = packed.narrow(0, x_len, w_len)?.reshape(w.shape())?;
        Ok((Some(grad_x), Some(grad_w)))
    }
}

impl CustomOp3 for Conv2dIm2colGrad {
    fn name(&self) -> &'static str {
        "gemmule-conv2d-im2col-grad"
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
        let (x_len, w_len, out_len) = lengths(g);
        let x = contiguous_f32(x_storage, x_layout, x_len, self.name())?;
        let grad = contiguous_f32(grad_storage, grad_layout, out_len, self.name())?;
        let w = contiguous_f32(w_storage, w_layout, w_len, self.name())?;
        let (patch, plane) = (g.patch_len(), g.out_plane());
        // grad_x first (when wanted), then grad_w, in one vector.
        let x_part = if self.input_grad { x_len } else { 0 };
        let mut packed = vec![0.0f32; x_part + w_len];
        let (grad_x, grad_w) = packed.split_at_mut(x_part);
        let widest = BlockGroup::widest(g);
        let mut column_buffer = scratch::take(patch * widest);
        let mut grad_column_buffer = scratch::take(patch * widest);
        let mut grad_block_buffer = scratch::take(g.group_out() * widest);
        let mut weight_grads_started = vec![false; g.groups];
        let plans = TapPlans::new(g);
        for block in BlockGroup::all(g) {
            let width = block.width(g);
            let columns = &mut column_buffer[..patch * width];
            let grad_columns = &mut grad_column_buffer[..patch * width];
            let grad_block = &mut grad_block_buffer[..g.group_out() * width];
            block.unfold(g, &plans, x, columns);
            for (c, row) in grad_block.chunks_exact_mut(width).enumerate() {
                for (b, image_row) in row.chunks_exact_mut(plane).enumerate() {
                    let start = block.output_start(g, b, c);
                    image_row.copy_from_slice(&grad[start..start + plane]);
                }
            }
            let grads = MatrixView::row_major(grad_block, g.group_out(), width);
            // grad_W (group_out × patch) += grad (group_out × width) · columnsᵀ (width × patch)
            let group_size = g.group_out() * patch;
            let started = &mut weight_grads_started[block.group];
            matmul_into(
                MatrixViewMut::row_major(
                    &mut grad_w[block.group * group_size..][..group_size],
                    g.group_out(),
                    patch,
                ),
                grads,
                MatrixView::row_major(columns, patch, width).transposed(),
                *started,
            )
            .map_err(to_candle)?;
            *started = true;
            if !self.input_grad {
                continue;
            }
            // grad_columns (patch × width) = Wᵀ (patch × group_out) · grad (group_out × width)
            matmul_into(
                MatrixViewMut::row_major(grad_columns, patch, width),
                block.weights(g, w).transposed(),
                grads,
                false,
            )
            .map_err(to_candle)?;
            let group_len = g.group_in() * g.in_plane();
            for b in 0..block.images {
                let image = &mut grad_x[block.input_start(g, b)..][..group_len];
                col2im_add(g, &plans, &mut grad_columns[b * plane..], width, image);
            }
        }
        for buffer in [column_buffer, grad_column_buffer, grad_block_buffer] {
            scratch::recycle(buffer);
        }
        Ok((CpuStorage::F32(packed), Shape::from(x_part + w_len)))
    }
}
