//! A bounds-checked front end to the `gemm` crate (the matrix kernel candle
//! itself uses), single-threaded.

use crate::{Error, Result};

/// A read-only strided view of a matrix inside a slice: element (r, c) is
/// `data[r·row_stride + c·col_stride]`. Transposing is swapping the strides.
#[derive(Clone, Copy, Debug)]
pub(crate) struct MatrixView<'a> {
    pub(crate) data: &'a [f32],
    pub(crate) rows: usize,
    pub(crate) cols: usize,
    pub(crate) row_stride: usize,
    pub(crate) col_stride: usize,
}

impl<'a> MatrixView<'a> {
    /// A row-major `rows × cols` matrix stored densely at the start of `data`.
    pub(crate) fn row_major(data: &'a [f32], rows: usize, cols: usize) -> Self {
        Self {
            data,
            rows,
            cols,
            row_stride: cols,
            col_stride: 1,
        }
    }

    /// The same matrix transposed (no copy).
    pub(crate) fn transposed(self) -> Self {
        Self {
            data: self.data,
            rows: self.cols,
            cols: self.rows,
            row_stride: self.col_stride,
            col_stride: self.row_stride,
        }
    }

    /// True when every element the strides address lies inside `data`.
    fn fits(&self) -> bool {
        if self.rows == 0 || self.cols == 0 {
            return true;
        }
        let last = (self.rows - 1) * self.row_stride + (self.cols - 1) * self.col_stride;
        last < self.data.len()
    }
}

/// A writable strided view of a matrix inside a slice (see [`MatrixView`]).
#[derive(Debug)]
pub(crate) struct MatrixViewMut<'a> {
    pub(crate) data: &'a mut [f32],
    pub(crate) rows: usize,
    pub(crate) cols: usize,
    pub(crate) row_stride: usize,
    pub(crate) col_stride: usize,
}

impl<'a> MatrixViewMut<'a> {
    /// A row-major `rows × cols` matrix stored densely at the start of `data`.
    pub(crate) fn row_major(data: &'a mut [f32], rows: usize, cols: usize) -> Self {
        Self {
            data,
            rows,
            cols,
            row_stride: cols,
            col_stride: 1,
        }
    }

    fn as_view(&self) -> MatrixView<'_> {
        MatrixView {
            data: self.data,
            rows: self.rows,
            cols: self.cols,
            row_stride: self.row_stride,
            col_stride: self.col_stride,
        }
    }
}

/// `dst = lhs · rhs`, or `dst += lhs · rhs` with `accumulate`. Shapes and
/// extents are checked, so the unsafe kernel never reads or writes outside
/// the slices.
pub(crate) fn matmul_into(
    dst: MatrixViewMut<'_>,
    lhs: MatrixView<'_>,
    rhs: MatrixView<'_>,
    accumulate: bool,
) -> Result<()> {
    let (m, k, n) = (lhs.rows, lhs.cols, rhs.cols);
    let shapes_agree = rhs.rows == k && dst.rows == m && dst.cols == n;
    if !shapes_agree || !lhs.fits() || !rhs.fits() || !dst.as_view().fits() {
        return Err(Error::internal(format!(
            "matmul: bad operands ({m}×{k} · {}×{n} into {}×{})",
            rhs.rows, dst.rows, dst.cols
        )));
    }
    if m == 0 || n == 0 {
        return Ok(());
    }
    if k == 0 {
        if !accumulate {
            for r in 0..m {
                for c in 0..n {
                    dst.data[r * dst.row_stride + c * dst.col_stride] = 0.0;
                }
            }
        }
        return Ok(());
    }
    // SAFETY: `fits` guarantees that every index r·row_stride + c·col_stride
    // gemm touches lies inside its slice; the strides are below isize::MAX
    // because they index existing slices; `dst` is borrowed mutably and so
    // cannot alias `lhs`/`rhs` (shared borrows).
    unsafe {
        gemm::gemm(
            m,
            n,
            k,
            dst.data.as_mut_ptr(),
            dst.col_stride as isize,
            dst.row_stride as isize,
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
            gemm::Parallelism::None,
        );
    }
    Ok(())
}
