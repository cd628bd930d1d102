//! An AVX2/FMA f32 matrix-product kernel for the shapes an MLP step has
//! (a few hundred rows and columns, depth up to a few hundred), for any
//! strides of A and B.
//!
//! C is cut into register tiles of 6 rows × 16 columns (12 rows × 8 columns
//! when C has at most 8 columns, as an output layer with few classes does);
//! a tile keeps its vector accumulators in registers over the depth,
//! broadcasting one value of A per row and loading the panel's values of B
//! per depth step (the classic register blocking of BLIS-style kernels).
//! Column panels are the outer loop so a packed k × 16 panel of B stays in
//! L1 while all row tiles pass.
//!
//! Every C(i, j) is summed the same way whatever the tile shape, packing or
//! strides: a fused multiply-add chain over p = 0, 1, …, k−1 starting from
//! zero, cut into slices of 256, each slice's sum added to C in turn. So
//! results do not depend on which path ran.

#[cfg(target_arch = "x86_64")]
use std::arch::x86_64::*;
#[cfg(target_arch = "x86_64")]
use std::cell::RefCell;
#[cfg(target_arch = "x86_64")]
use std::mem::MaybeUninit;

/// Lanes of one AVX vector of f32.
const LANES: usize = 8;
/// Depth of one packed panel of B (one k-slice).
const PANEL_DEPTH: usize = 256;
/// Widest panel of B: two vectors.
const MAX_PANEL_COLS: usize = 2 * LANES;

/// A product `C (m × n, row-major, row stride n) ← start + A·B` described by
/// raw parts: A(i, p) at `a[i·a_row_stride + p·a_col_stride]`, B(p, j) at
/// `b[p·b_row_stride + j·b_col_stride]`; `start` is C itself with
/// `accumulate`, else `bias[j]` when `bias` is not null, else zero.
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
    pub(super) b_col_stride: usize,
    pub(super) c: *mut f32,
    pub(super) accumulate: bool,
    /// n values added to every row of C, or null; ignored with `accumulate`.
    pub(super) bias: *const f32,
}

#[cfg(target_arch = "x86_64")]
thread_local! {
    /// Packed copy of A when A is stored column-major (a transposed view):
    /// grows to the largest A seen on the thread and is then reused.
    static PACKED_A: RefCell<Vec<f32>> = const { RefCell::new(Vec::new()) };
}

/// Runs `product`.
///
/// Each k-slice of up to 256 rows of a column panel of B is first copied
/// into a contiguous, zero-padded stack panel: rows of B a power of two
/// apart map to the same few L1 sets, and the panel stays in L1 for every
/// row tile. When A's rows are not contiguous (A is a transposed view, as
/// in dW = hᵀ·dz) and A is read more than once (more than one column
/// panel), A is first copied into tile-major order (for each tile of rows,
/// the tile's values depth by depth), for the same reason.
///
/// # Safety
/// The CPU must support AVX2 and FMA; every A(i, p), B(p, j) and C(i, j)
/// for i < m, j < n, p < k must be in bounds of its allocation, and C must
/// not overlap A or B.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
pub(super) unsafe fn matmul_avx2(product: Product) {
    if product.n <= LANES {
        run::<12, 1>(&product);
    } else {
        run::<6, 2>(&product);
    }
}

/// Where the kernel reads A: the caller's matrix, or a tile-major copy.
#[derive(Clone, Copy)]
enum ASource {
    /// A(i, p) at `a[i·row_stride + p·col_stride]`.
    Strided {
        a: *const f32,
        row_stride: usize,
        col_stride: usize,
    },
    /// Tile t's value (r, p) at `a[t·ROWS·k + p·ROWS + r]`; rows past m are zero.
    Packed { a: *const f32 },
}

/// Runs `p` with ROWS × (8·VECTORS) register tiles.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn run<const ROWS: usize, const VECTORS: usize>(p: &Product) {
    let strided = ASource::Strided {
        a: p.a,
        row_stride: p.a_row_stride,
        col_stride: p.a_col_stride,
    };
    // A copy pays off only when A is read more than once: once per column panel.
    if p.a_col_stride == 1 || p.n <= VECTORS * LANES {
        return run_with::<ROWS, VECTORS>(p, strided);
    }
    let packed = PACKED_A.try_with(|cell| match cell.try_borrow_mut() {
        Ok(mut buffer) => {
            let len = p.m.div_ceil(ROWS) * ROWS * p.k;
            if buffer.len() < len {
                buffer.resize(len, 0.0);
            }
            pack_a::<ROWS>(p, buffer.as_mut_ptr());
            run_with::<ROWS, VECTORS>(p, ASource::Packed { a: buffer.as_ptr() });
            true
        }
        Err(_) => false,
    });
    if packed != Ok(true) {
        run_with::<ROWS, VECTORS>(p, strided);
    }
}

/// Copies A into tile-major order at `out` (`m` rounded up to ROWS, × k values).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn pack_a<const ROWS: usize>(p: &Product, out: *mut f32) {
    let mut destination = out;
    let mut row = 0;
    while row < p.m {
        let rows = ROWS.min(p.m - row);
        if rows == ROWS && p.a_row_stride == 1 {
            // A transposed view: the tile's values at one depth are contiguous.
            let mut source = p.a.add(row);
            for _ in 0..p.k {
                copy_rows::<ROWS>(source, destination);
                source = source.add(p.a_col_stride);
                destination = destination.add(ROWS);
            }
        } else {
            for depth in 0..p.k {
                for r in 0..ROWS {
                    let value = if r < rows {
                        *p.a.add((row + r) * p.a_row_stride + depth * p.a_col_stride)
                    } else {
                        0.0
                    };
                    destination.add(r).write(value);
                }
                destination = destination.add(ROWS);
            }
        }
        row += ROWS;
    }
}

/// Copies ROWS (6 or 12) contiguous values with vector moves: a `memcpy`
/// call per 24 or 48 bytes costs more than the copy.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[inline]
unsafe fn copy_rows<const ROWS: usize>(source: *const f32, destination: *mut f32) {
    let mut done = 0;
    while done + LANES <= ROWS {
        _mm256_storeu_ps(destination.add(done), _mm256_loadu_ps(source.add(done)));
        done += LANES;
    }
    while done + 4 <= ROWS {
        _mm_storeu_ps(destination.add(done), _mm_loadu_ps(source.add(done)));
        done += 4;
    }
    while done < ROWS {
        destination.add(done).write(*source.add(done));
        done += 1;
    }
}

/// The loops over column panels, k-slices and row tiles.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn run_with<const ROWS: usize, const VECTORS: usize>(p: &Product, a: ASource) {
    let width = VECTORS * LANES;
    // Not zeroed: zeroing 16 KB per call cost more than small products
    // themselves. `pack_panel` writes every value a tile then reads.
    let mut panel = MaybeUninit::<[f32; PANEL_DEPTH * MAX_PANEL_COLS]>::uninit();
    let panel = panel.as_mut_ptr().cast::<f32>();
    let mut column = 0;
    while column < p.n {
        let cols = width.min(p.n - column);
        let mut depth_start = 0;
        while depth_start < p.k {
            let depth = PANEL_DEPTH.min(p.k - depth_start);
            pack_panel::<VECTORS>(p, depth_start, depth, column, cols, panel);
            let start = if p.accumulate || depth_start > 0 {
                Start::Output
            } else if p.bias.is_null() {
                Start::Zero
            } else {
                Start::Bias
            };
            let slice = PanelSlice {
                panel,
                depth,
                start,
            };
            let mut row = 0;
            while row < p.m {
                let rows = ROWS.min(p.m - row);
                let (a_rows, a_step) = tile_rows::<ROWS>(p, a, row, rows, depth_start);
                let at = TileAt {
                    row,
                    rows,
                    column,
                    cols,
                    a_rows,
                    a_step,
                };
                if cols == width {
                    tile::<ROWS, VECTORS, false>(p, &slice, &at);
                } else {
                    tile::<ROWS, VECTORS, true>(p, &slice, &at);
                }
                row += ROWS;
            }
            depth_start += depth;
        }
        column += width;
    }
}

/// Pointers to A(row + r, depth_start) for each tile row r (rows past `rows`
/// repeat row `row` when A is strided) and the step from one depth to the next.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
unsafe fn tile_rows<const ROWS: usize>(
    p: &Product,
    a: ASource,
    row: usize,
    rows: usize,
    depth_start: usize,
) -> ([*const f32; ROWS], usize) {
    match a {
        ASource::Strided {
            a,
            row_stride,
            col_stride,
        } => {
            let mut pointers = [a; ROWS];
            for (r, pointer) in pointers.iter_mut().enumerate() {
                let source_row = row + if r < rows { r } else { 0 };
                *pointer = a.add(source_row * row_stride + depth_start * col_stride);
            }
            (pointers, col_stride)
        }
        ASource::Packed { a } => {
            let base = a.add(row * p.k + depth_start * ROWS);
            let mut pointers = [base; ROWS];
            for (r, pointer) in pointers.iter_mut().enumerate() {
                *pointer = base.add(r);
            }
            (pointers, ROWS)
        }
    }
}

/// One packed k-slice of a column panel of B.
struct PanelSlice {
    /// `depth` rows of the panel's width.
    panel: *const f32,
    /// Rows in the slice.
    depth: usize,
    /// What the slice's sums are added to.
    start: Start,
}

/// What a k-slice's sums are added to before they are stored in C.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Start {
    /// Nothing: C ← sums.
    Zero,
    /// C's current values (with `accumulate`, and after the first slice).
    Output,
    /// The bias of the column (`Product::bias`).
    Bias,
}

/// Where one register tile sits and where its rows of A start.
struct TileAt<const ROWS: usize> {
    row: usize,
    rows: usize,
    column: usize,
    cols: usize,
    /// A(row + r, depth_start) per tile row.
    a_rows: [*const f32; ROWS],
    /// Distance between A(i, p) and A(i, p + 1).
    a_step: usize,
}

/// Copies B(depth_start.., column..column+cols) into the first `depth`
/// rows of 8·VECTORS values of `panel`, zero beyond `cols`.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[inline]
unsafe fn pack_panel<const VECTORS: usize>(
    p: &Product,
    depth_start: usize,
    depth: usize,
    column: usize,
    cols: usize,
    panel: *mut f32,
) {
    let width = VECTORS * LANES;
    if p.b_col_stride == 1 {
        for offset in 0..depth {
            let source = p.b.add((depth_start + offset) * p.b_row_stride + column);
            let destination = panel.add(offset * width);
            if cols == width {
                // Vector copies: a memcpy call per 64-byte row costs more than the row.
                for v in 0..VECTORS {
                    let value = _mm256_loadu_ps(source.add(v * LANES));
                    _mm256_storeu_ps(destination.add(v * LANES), value);
                }
            } else {
                for lane in 0..width {
                    let value = if lane < cols { *source.add(lane) } else { 0.0 };
                    destination.add(lane).write(value);
                }
            }
        }
        return;
    }
    // B is a transposed view (dh = dz·Wᵀ): walk each column of B, which is
    // contiguous when b_row_stride is 1, and scatter it into the panel.
    for lane in 0..width {
        let destination = panel.add(lane);
        if lane < cols {
            let mut source =
                p.b.add(depth_start * p.b_row_stride + (column + lane) * p.b_col_stride);
            for offset in 0..depth {
                destination.add(offset * width).write(*source);
                source = source.add(p.b_row_stride);
            }
        } else {
            for offset in 0..depth {
                destination.add(offset * width).write(0.0);
            }
        }
    }
}

/// Lane mask of vector `v` for the first `cols` columns of a tile.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
unsafe fn column_mask(cols: usize, v: usize) -> __m256i {
    let lanes = _mm256_setr_epi32(0, 1, 2, 3, 4, 5, 6, 7);
    _mm256_cmpgt_epi32(_mm256_set1_epi32(cols as i32 - (v * LANES) as i32), lanes)
}

/// One tile of `rows` (≤ ROWS) rows and `cols` (≤ 8·VECTORS) columns;
/// `MASKED` when `cols` < 8·VECTORS. Missing rows are computed but not
/// stored. Masked-off lanes of C are never touched (AVX masked loads and
/// stores do not fault on them), so pointers to them use wrapping arithmetic.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
#[inline]
unsafe fn tile<const ROWS: usize, const VECTORS: usize, const MASKED: bool>(
    p: &Product,
    slice: &PanelSlice,
    at: &TileAt<ROWS>,
) {
    let width = VECTORS * LANES;
    let mut acc = [[_mm256_setzero_ps(); VECTORS]; ROWS];
    let mut b_row = slice.panel;
    let mut a_offset = 0;
    for _ in 0..slice.depth {
        let mut b = [_mm256_setzero_ps(); VECTORS];
        for (v, b) in b.iter_mut().enumerate() {
            *b = _mm256_loadu_ps(b_row.add(v * LANES));
        }
        for (acc, a_row) in acc.iter_mut().zip(&at.a_rows) {
            let a = _mm256_broadcast_ss(&*a_row.add(a_offset));
            for (acc, b) in acc.iter_mut().zip(&b) {
                *acc = _mm256_fmadd_ps(a, *b, *acc);
            }
        }
        b_row = b_row.wrapping_add(width);
        a_offset += at.a_step;
    }
    let mut bias = [_mm256_setzero_ps(); VECTORS];
    if slice.start == Start::Bias {
        let start = p.bias.wrapping_add(at.column);
        for (v, bias) in bias.iter_mut().enumerate() {
            let start = start.wrapping_add(v * LANES);
            *bias = if MASKED {
                _mm256_maskload_ps(start, column_mask(at.cols, v))
            } else {
                _mm256_loadu_ps(start)
            };
        }
    }
    for (r, acc) in acc.iter().enumerate().take(at.rows) {
        let c = p.c.add((at.row + r) * p.n + at.column);
        for (v, &sum) in acc.iter().enumerate() {
            let c = c.wrapping_add(v * LANES);
            let mask = if MASKED {
                column_mask(at.cols, v)
            } else {
                _mm256_set1_epi32(-1)
            };
            let value = match slice.start {
                Start::Zero => sum,
                Start::Bias => _mm256_add_ps(bias[v], sum),
                Start::Output if MASKED => _mm256_add_ps(_mm256_maskload_ps(c, mask), sum),
                Start::Output => _mm256_add_ps(_mm256_loadu_ps(c), sum),
            };
            if MASKED {
                _mm256_maskstore_ps(c, mask, value);
            } else {
                _mm256_storeu_ps(c, value);
            }
        }
    }
}
