//! Checked single-threaded f32 matrix products over slices: our AVX2/FMA
//! kernel when the right-hand matrix has unit column stride and the CPU has
//! AVX2 and FMA, otherwise the `gemm` crate (the kernels candle uses, called
//! without candle's per-call overhead).

use gemm::Parallelism;

#[cfg(target_arch = "x86_64")]
use super::kernel_avx2::{matmul_avx2, Product};

use super::elementwise::broadcast_rows;
use crate::{Error, Result};

/// A read-only matrix view: element (r, c) is `data[r·row_stride + c·col_stride]`.
#[derive(Clone, Copy, Debug)]
pub(crate) struct MatrixView<'a> {
    data: &'a [f32],
    rows: usize,
    cols: usize,
    row_stride: usize,
    col_stride: usize,
}

impl<'a> MatrixView<'a> {
    /// The first rows × cols values of `data` as a row-major matrix.
    pub(crate) fn row_major(data: &'a [f32], rows: usize, cols: usize) -> Result<Self> {
        if data.len() < rows.saturating_mul(cols) {
            return Err(Error::internal(format!(
                "a {rows}×{cols} matrix needs {} values, the buffer has {}",
                rows.saturating_mul(cols),
                data.len()
            )));
        }
        Ok(MatrixView {
            data,
            rows,
            cols,
            row_stride: cols,
            col_stride: 1,
        })
    }

    /// The transpose, sharing the data.
    pub(crate) fn transposed(self) -> Self {
        MatrixView {
            data: self.data,
            rows: self.cols,
            cols: self.rows,
            row_stride: self.col_stride,
            col_stride: self.row_stride,
        }
    }
}

/// `dst ← lhs·rhs`, or `dst ← dst + lhs·rhs` with `accumulate`, where `dst`
/// is exactly lhs.rows × rhs.cols values, row-major. Runs on the calling thread.
pub(crate) fn matmul_into(
    dst: &mut [f32],
    lhs: MatrixView<'_>,
    rhs: MatrixView<'_>,
    accumulate: bool,
) -> Result<()> {
    let start = if accumulate {
        Start::Output
    } else {
        Start::Zero
    };
    product(dst, lhs, rhs, start)
}

/// `dst ← bias + lhs·rhs`, `bias` (rhs.cols values) added to every row;
/// the same values as writing the bias into each row of `dst` and then
/// adding `lhs·rhs` with [`matmul_into`], in one pass over `dst`.
pub(crate) fn matmul_bias_into(
    dst: &mut [f32],
    lhs: MatrixView<'_>,
    rhs: MatrixView<'_>,
    bias: &[f32],
) -> Result<()> {
    if bias.len() != rhs.cols {
        return Err(Error::internal(format!(
            "a bias of {} values for a product with {} columns",
            bias.len(),
            rhs.cols
        )));
    }
    product(dst, lhs, rhs, Start::Bias(bias))
}

/// What a product is added to.
#[derive(Clone, Copy)]
enum Start<'a> {
    /// Nothing.
    Zero,
    /// The destination's current values.
    Output,
    /// One value per column, the same for every row.
    Bias(&'a [f32]),
}

/// Whether the `gemm` crate sums every output of this product the way our
/// kernel does (one fused multiply-add chain over the whole depth from zero,
/// then added to the start value). Outside this range it takes other paths
/// (vector–vector for depth ≤ 2, matrix–vector for one row or column, dot
/// products for at most 256 outputs, depth blocks of 512 and more), so
/// products that used to run there stay there and keep their exact values.
/// The range was found by comparing both bit for bit (unit test below).
fn gemm_sums_like_ours(m: usize, n: usize, k: usize) -> bool {
    (3..=256).contains(&k) && m >= 2 && n >= 2 && m * n > 256
}

fn product(
    dst: &mut [f32],
    lhs: MatrixView<'_>,
    rhs: MatrixView<'_>,
    start: Start<'_>,
) -> Result<()> {
    let (m, k, n) = (lhs.rows, lhs.cols, rhs.cols);
    if rhs.rows != k || dst.len() != m * n {
        return Err(Error::internal(format!(
            "matmul of {m}×{k} by {}×{n} into {} values",
            rhs.rows,
            dst.len()
        )));
    }
    if m == 0 || n == 0 {
        return Ok(());
    }
    if k == 0 {
        match start {
            Start::Zero => dst.fill(0.0),
            Start::Output => {}
            Start::Bias(bias) => broadcast_rows(bias, dst),
        }
        return Ok(());
    }
    #[cfg(target_arch = "x86_64")]
    if (rhs.col_stride == 1 || gemm_sums_like_ours(m, n, k))
        && std::is_x86_feature_detected!("avx2")
        && std::is_x86_feature_detected!("fma")
    {
        let product = Product {
            m,
            n,
            k,
            a: lhs.data.as_ptr(),
            a_row_stride: lhs.row_stride,
            a_col_stride: lhs.col_stride,
            b: rhs.data.as_ptr(),
            b_row_stride: rhs.row_stride,
            b_col_stride: rhs.col_stride,
            c: dst.as_mut_ptr(),
            accumulate: matches!(start, Start::Output),
            bias: match start {
                Start::Bias(bias) => bias.as_ptr(),
                _ => std::ptr::null(),
            },
        };
        // SAFETY: AVX2 and FMA are present (checked just above); bounds and
        // aliasing as for the gemm call below, and `bias` holds n values
        // (checked in `matmul_bias_into`).
        unsafe { matmul_avx2(product) };
        return Ok(());
    }
    let accumulate = match start {
        Start::Zero => false,
        Start::Output => true,
        Start::Bias(bias) => {
            broadcast_rows(bias, dst);
            true
        }
    };
    // SAFETY: every index gemm touches is in bounds: `dst` is exactly m×n
    // row-major (checked above); a view's largest index is
    // (rows−1)·row_stride + (cols−1)·col_stride ≤ rows·cols − 1 < data.len()
    // (checked in `row_major`, preserved by `transposed`). `dst` is a unique
    // borrow, so it overlaps neither input. Strides fit in isize because they
    // are at most the length of a slice.
    unsafe {
        gemm::gemm(
            m,
            n,
            k,
            dst.as_mut_ptr(),
            1,
            n as isize,
            accumulate,
            lhs.data.as_ptr(),
            lhs.col_stride as isize,
            lhs.row_stride as isize,
            rhs.data.as_ptr(),
            rhs.col_stride as isize,
            rhs.row_stride as isize,
            1.0,
            1.0,
            false,
            false,
            false,
            Parallelism::None,
        );
    }
    Ok(())
}

/// `dst ← lhs·rhs` for row-major `lhs` (m × k), `rhs` (k × n) and `dst`
/// (m × n), on the calling thread, with the kernels
/// [`FastMlpLearner`](super::FastMlpLearner) uses. For benchmarks and
/// tools; a size mismatch is an internal error.
pub fn matmul_row_major(
    dst: &mut [f32],
    lhs: &[f32],
    rhs: &[f32],
    (m, k, n): (usize, usize, usize),
) -> Result<()> {
    let dst = dst.get_mut(..m.saturating_mul(n)).ok_or_else(|| {
        Error::internal(format!("the destination holds fewer than {m}×{n} values"))
    })?;
    matmul_into(
        dst,
        MatrixView::row_major(lhs, m, k)?,
        MatrixView::row_major(rhs, k, n)?,
        false,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// Plain triple loop in f64: the reference for every kernel path.
    fn naive(lhs: MatrixView<'_>, rhs: MatrixView<'_>, start: &[f32]) -> Vec<f64> {
        let at =
            |v: &MatrixView<'_>, r: usize, c: usize| v.data[r * v.row_stride + c * v.col_stride];
        let mut out: Vec<f64> = start.iter().map(|&v| f64::from(v)).collect();
        for i in 0..lhs.rows {
            for j in 0..rhs.cols {
                for p in 0..lhs.cols {
                    out[i * rhs.cols + j] += f64::from(at(&lhs, i, p)) * f64::from(at(&rhs, p, j));
                }
            }
        }
        out
    }

    #[test]
    fn every_path_matches_the_naive_product() {
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let sizes = [1, 2, 5, 6, 7, 8, 9, 15, 16, 17, 31, 33];
        let mut shapes: Vec<(usize, usize, usize)> = (0..sizes.len())
            .map(|case| {
                let k = sizes[(case * 5 + 3) % sizes.len()];
                (sizes[case], k, sizes[(case * 7 + 1) % sizes.len()])
            })
            .collect();
        // Depths past one 256-deep packed panel, and exact tile multiples.
        shapes.extend([(13, 300, 21), (12, 257, 16), (6, 512, 32)]);
        for (m, k, n) in shapes {
            let mut values = |count: usize| -> Vec<f32> {
                (0..count).map(|_| rng.gen_range(-1.0..1.0)).collect()
            };
            let (a, b, a_t, b_t, start) = (
                values(m * k),
                values(k * n),
                values(k * m),
                values(n * k),
                values(m * n),
            );
            let lhs_options = [
                MatrixView::row_major(&a, m, k).unwrap(),
                MatrixView::row_major(&a_t, k, m).unwrap().transposed(),
            ];
            let rhs_options = [
                MatrixView::row_major(&b, k, n).unwrap(),
                MatrixView::row_major(&b_t, n, k).unwrap().transposed(),
            ];
            for lhs in lhs_options {
                for rhs in rhs_options {
                    for accumulate in [false, true] {
                        let mut dst = start.clone();
                        matmul_into(&mut dst, lhs, rhs, accumulate).unwrap();
                        let zeros = vec![0.0; m * n];
                        let want = naive(lhs, rhs, if accumulate { &start } else { &zeros });
                        for (got, want) in dst.iter().zip(&want) {
                            assert!(
                                (f64::from(*got) - want).abs() < 1e-4,
                                "{m}×{k}×{n}: {got} vs {want}"
                            );
                        }
                    }
                }
            }
        }
    }

    /// C(i, j) as the kernel documents it: a fused multiply-add chain over
    /// the depth from zero, in slices of 256, each slice added to the start.
    fn documented_order(lhs: MatrixView<'_>, rhs: MatrixView<'_>, start: &[f32]) -> Vec<f32> {
        let at =
            |v: &MatrixView<'_>, r: usize, c: usize| v.data[r * v.row_stride + c * v.col_stride];
        let mut out = start.to_vec();
        for i in 0..lhs.rows {
            for j in 0..rhs.cols {
                for slice_start in (0..lhs.cols).step_by(256) {
                    let mut sum = 0.0f32;
                    for p in slice_start..lhs.cols.min(slice_start + 256) {
                        sum = at(&lhs, i, p).mul_add(at(&rhs, p, j), sum);
                    }
                    out[i * rhs.cols + j] += sum;
                }
            }
        }
        out
    }

    fn random_values(rng: &mut ChaCha8Rng, count: usize) -> Vec<f32> {
        (0..count).map(|_| rng.gen_range(-1.0..1.0)).collect()
    }

    #[test]
    fn the_kernel_sums_in_the_documented_order_on_every_path() {
        if !(std::is_x86_feature_detected!("avx2") && std::is_x86_feature_detected!("fma")) {
            return;
        }
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        // Narrow (≤ 8 columns) and wide tiles, edge tiles, one and several
        // column panels (A packed or not), depths past one slice.
        let shapes = [
            (256, 256, 5),
            (13, 40, 8),
            (25, 300, 3),
            (256, 32, 256),
            (31, 257, 33),
            (7, 600, 40),
            (64, 64, 64),
        ];
        for (m, k, n) in shapes {
            let (a, a_t, b) = (
                random_values(&mut rng, m * k),
                random_values(&mut rng, k * m),
                random_values(&mut rng, k * n),
            );
            let start = random_values(&mut rng, m * n);
            let lhs_options = [
                MatrixView::row_major(&a, m, k).unwrap(),
                MatrixView::row_major(&a_t, k, m).unwrap().transposed(),
            ];
            for lhs in lhs_options {
                let rhs = MatrixView::row_major(&b, k, n).unwrap();
                let mut dst = start.clone();
                matmul_into(&mut dst, lhs, rhs, true).unwrap();
                let want = documented_order(lhs, rhs, &start);
                let same = dst
                    .iter()
                    .zip(&want)
                    .all(|(x, y)| x.to_bits() == y.to_bits());
                assert!(same, "{m}×{k}×{n}: not the documented order");
            }
        }
    }

    #[test]
    fn transposed_right_hand_sides_keep_the_values_the_gemm_crate_gave() {
        // dh = dz·Wᵀ used to run in the `gemm` crate. Where our kernel now
        // takes over, both must give the same bits; elsewhere the crate still runs.
        let mut rng = ChaCha8Rng::seed_from_u64(12);
        let mut shapes = vec![(256, 256, 256), (256, 5, 256), (8, 64, 64), (2, 3, 129)];
        shapes.extend((0..40).map(|_| {
            (
                rng.gen_range(2..200usize),
                rng.gen_range(3..=256usize),
                rng.gen_range(2..200usize),
            )
        }));
        for (m, k, n) in shapes
            .into_iter()
            .filter(|&(m, k, n)| gemm_sums_like_ours(m, n, k))
        {
            let (a, b_t) = (
                random_values(&mut rng, m * k),
                random_values(&mut rng, n * k),
            );
            let start = random_values(&mut rng, m * n);
            let lhs = MatrixView::row_major(&a, m, k).unwrap();
            let rhs = MatrixView::row_major(&b_t, n, k).unwrap().transposed();
            for accumulate in [false, true] {
                let mut ours = start.clone();
                matmul_into(&mut ours, lhs, rhs, accumulate).unwrap();
                let mut theirs = start.clone();
                // SAFETY: as in `product`'s gemm call.
                unsafe {
                    gemm::gemm(
                        m,
                        n,
                        k,
                        theirs.as_mut_ptr(),
                        1,
                        n as isize,
                        accumulate,
                        a.as_ptr(),
                        1,
                        k as isize,
                        b_t.as_ptr(),
                        k as isize,
                        1,
                        1.0,
                        1.0,
                        false,
                        false,
                        false,
                        Parallelism::None,
                    );
                }
                let same = ours
                    .iter()
                    .zip(&theirs)
                    .all(|(x, y)| x.to_bits() == y.to_bits());
                assert!(
                    same,
                    "{m}×{k}×{n} (accumulate {accumulate}) differs from gemm"
                );
            }
        }
    }

    #[test]
    fn a_bias_start_equals_writing_the_bias_first() {
        let mut rng = ChaCha8Rng::seed_from_u64(13);
        for (m, k, n) in [
            (9, 0, 5),
            (256, 256, 5),
            (13, 300, 21),
            (6, 32, 16),
            (3, 7, 40),
        ] {
            let (a, b) = (
                random_values(&mut rng, m * k),
                random_values(&mut rng, k * n),
            );
            let bias = random_values(&mut rng, n);
            let lhs = MatrixView::row_major(&a, m, k).unwrap();
            let rhs = MatrixView::row_major(&b, k, n).unwrap();
            let mut fused = vec![f32::NAN; m * n];
            matmul_bias_into(&mut fused, lhs, rhs, &bias).unwrap();
            let mut separate = vec![0.0; m * n];
            broadcast_rows(&bias, &mut separate);
            matmul_into(&mut separate, lhs, rhs, true).unwrap();
            let same = fused
                .iter()
                .zip(&separate)
                .all(|(x, y)| x.to_bits() == y.to_bits());
            assert!(same, "{m}×{k}×{n}");
        }
        let values = [0.0f32; 12];
        let lhs = MatrixView::row_major(&values, 3, 2).unwrap();
        let rhs = MatrixView::row_major(&values, 2, 4).unwrap();
        assert!(matmul_bias_into(&mut [0.0; 12], lhs, rhs, &[0.0; 3]).is_err());
    }

    #[test]
    fn mismatched_sizes_are_errors() {
        let values = [0.0f32; 12];
        let lhs = MatrixView::row_major(&values, 3, 4).unwrap();
        let rhs = MatrixView::row_major(&values, 3, 4).unwrap();
        assert!(matmul_into(&mut [0.0; 16], lhs, rhs, false).is_err());
        assert!(MatrixView::row_major(&values, 4, 4).is_err());
    }
}
