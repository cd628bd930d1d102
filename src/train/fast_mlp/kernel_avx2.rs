//! An AVX2/FMA f32 matrix-product kernel for the shapes an MLP step has
//! (a few hundred rows and columns, depth up to a few hundred), without
//! packing: the right-hand matrix must have unit column stride.
//!
//! C is cut into tiles of 6 rows × 16 columns; a tile keeps its 12 vector
//! accumulators in registers over the whole depth, broadcasting one value
//! of A per row and loading 16 values of B per depth step (the classic
//! 6×16 register blocking of BLIS-style kernels). Column panels are the
//! outer loop so a k × 16 panel of B stays in L1 while all row tiles pass.

#[cfg(target_arch = "x86_64")]
use std::arch::x86_64::*;
#[cfg(target_arch = "x86_64")]
use std::mem::MaybeUninit;

/// Rows per register tile.
const TILE_ROWS: usize = 6;
/// Columns per register tile (two 8-lane vectors).
const TILE_COLS: usize = 16;

/// A product `C (m × n, row-major, row stride n) ← [C +] A·B` described by
/// raw parts: A(i, p) at `a[i·a_row_stride + p·a_col_stride]`, B(p, j) at
/// `b[p·b_row_stride + j]`.
#[derive(Clone, Copy)]
pub(super) struct Product {
    pub(super) m: usize,
    pub(super) n: usize,
    pub(super) k: usize,
    pub(super) a: *const f32,
    pub(super) a_row_stride: usize,
    pub(super) a_col_stride: usize,
    pub(super) b: *const f32,
    pub(super) b_row_stride: usize,
    pub(super) c: *mut f32,
    pub(super) accumulate: bool,
}

/// Depth of one packed panel of B.
const PANEL_DEPTH: usize = 256;

/// Runs `product`.
///
/// Each k-slice of up to 256 rows × 16 columns of B is first copied into a
/// contiguous, zero-padded stack panel: rows of B a power of two apart map
/// to the same few L1 sets, and the panel stays in L1 for every row tile.
///
/// # Safety
/// The CPU must support AVX2 and FMA; every A(i, p), B(p, j) and C(i, j)
/// for i < m, j < n, p < k must be in bounds of its allocation, and C must
/// not overlap A or B.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
pub(super) unsafe fn matmul_avx2(product: Product) {
    // Not zeroed: zeroing 16 KB per call cost more than small products
    // themselves. `pack_panel` writes every value a tile then reads.
    let mut panel = MaybeUninit::<[f32; PANEL_DEPTH * TILE_COLS]>::uninit();
    let panel = panel.as_mut_ptr().cast::<f32>();
    let mut column = 0;
    while column < product.n {
        let cols = TILE_COLS.min(product.n - column);
        let mut depth_start = 0;
        while depth_start < product.k {
            let depth = PANEL_DEPTH.min(product.k - depth_start);
            pack_panel(&product, depth_start, depth, column, cols, panel);
            let slice = PanelSlice {
                panel,
                depth_start,
                depth,
                accumulate: product.accumulate || depth_start > 0,
            };
            let mut row = 0;
            while row < product.m {
                let rows = TILE_ROWS.min(product.m - row);
                if cols == TILE_COLS {
                    tile::<false>(&product, &slice, row, rows, column, cols);
                } else {
                    tile::<true>(&product, &slice, row, rows, column, cols);
                }
                row += TILE_ROWS;
            }
            depth_start += depth;
        }
        column += TILE_COLS;
    }
}

/// One packed k-slice of a 16-column panel of B.
struct PanelSlice {
    /// `depth` rows of 16 values.
    panel: *const f32,
    /// First depth index of the slice.
    depth_start: usize,
    /// Rows in the slice.
    depth: usize,
    /// Whether C is added to (true after the first slice).
    accumulate: bool,
}

/// Copies B(depth_start.., column..column+cols) into the first `depth`
/// rows of 16 of `panel`, zero beyond `cols`.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[inline]
unsafe fn pack_panel(
    p: &Product,
    depth_start: usize,
    depth: usize,
    column: usize,
    cols: usize,
    panel: *mut f32,
) {
    for offset in 0..depth {
        let source = p.b.add((depth_start + offset) * p.b_row_stride + column);
        let destination = panel.add(offset * TILE_COLS);
        if cols == TILE_COLS {
            // Two vector copies: a memcpy call per 64-byte row costs more than the row.
            _mm256_storeu_ps(destination, _mm256_loadu_ps(source));
            _mm256_storeu_ps(destination.add(8), _mm256_loadu_ps(source.add(8)));
        } else {
            for lane in 0..TILE_COLS {
                let value = if lane < cols { *source.add(lane) } else { 0.0 };
                destination.add(lane).write(value);
            }
        }
    }
}

/// Lane masks for the first `cols` (< 16) columns of a tile, as two vectors.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
unsafe fn column_masks(cols: usize) -> (__m256i, __m256i) {
    let lanes = _mm256_setr_epi32(0, 1, 2, 3, 4, 5, 6, 7);
    let low = _mm256_cmpgt_epi32(_mm256_set1_epi32(cols as i32), lanes);
    let high = _mm256_cmpgt_epi32(_mm256_set1_epi32(cols as i32 - 8), lanes);
    (low, high)
}

/// One tile of `rows` (≤ 6) rows from `row` and `cols` (≤ 16) columns from
/// `column`; `MASKED` when `cols` < 16. Missing rows read row `row` again
/// and are not stored. Masked-off lanes of C are never touched (AVX masked
/// loads and stores do not fault on them), so pointers to them use
/// wrapping arithmetic.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[inline]
unsafe fn tile<const MASKED: bool>(
    p: &Product,
    slice: &PanelSlice,
    row: usize,
    rows: usize,
    column: usize,
    cols: usize,
) {
    let (mask_low, mask_high) = if MASKED {
        column_masks(cols)
    } else {
        (_mm256_set1_epi32(-1), _mm256_set1_epi32(-1))
    };
    let row_start = |r: usize| {
        p.a.add((row + if r < rows { r } else { 0 }) * p.a_row_stride)
    };
    let a_rows = [
        row_start(0),
        row_start(1),
        row_start(2),
        row_start(3),
        row_start(4),
        row_start(5),
    ];
    let mut acc = [[_mm256_setzero_ps(); 2]; TILE_ROWS];
    let mut b_row = slice.panel;
    let mut a_offset = slice.depth_start * p.a_col_stride;
    for _ in 0..slice.depth {
        let (b0, b1) = (_mm256_loadu_ps(b_row), _mm256_loadu_ps(b_row.add(8)));
        for r in 0..TILE_ROWS {
            let a = _mm256_broadcast_ss(&*a_rows[r].add(a_offset));
            acc[r][0] = _mm256_fmadd_ps(a, b0, acc[r][0]);
            acc[r][1] = _mm256_fmadd_ps(a, b1, acc[r][1]);
        }
        b_row = b_row.wrapping_add(TILE_COLS);
        a_offset += p.a_col_stride;
    }
    for (r, acc) in acc.iter().enumerate().take(rows) {
        let c = p.c.add((row + r) * p.n + column);
        let (mut low, mut high) = (acc[0], acc[1]);
        if MASKED {
            if slice.accumulate {
                low = _mm256_add_ps(_mm256_maskload_ps(c, mask_low), low);
                high = _mm256_add_ps(_mm256_maskload_ps(c.wrapping_add(8), mask_high), high);
            }
            _mm256_maskstore_ps(c, mask_low, low);
            _mm256_maskstore_ps(c.wrapping_add(8), mask_high, high);
        } else {
            if slice.accumulate {
                low = _mm256_add_ps(_mm256_loadu_ps(c), low);
                high = _mm256_add_ps(_mm256_loadu_ps(c.add(8)), high);
            }
            _mm256_storeu_ps(c, low);
            _mm256_storeu_ps(c.add(8), high);
        }
    }
}
