//! Sizes of a 3×3, padding-1 pooling, shared by the pooling kernels.

use candle_core::Shape;

/// Sizes of one pooling: input planes (N·C of them, H × W) and output planes (H_out × W_out).
#[derive(Clone, Copy, Debug)]
pub(crate) struct PoolGeometry {
    /// Input dims (N, C, H, W).
    pub(crate) dims: (usize, usize, usize, usize),
    pub(crate) out_h: usize,
    pub(crate) out_w: usize,
    pub(crate) stride: usize,
}

impl PoolGeometry {
    /// Number of (image, channel) planes: N·C.
    pub(crate) fn planes(&self) -> usize {
        self.dims.0 * self.dims.1
    }

    /// Input height.
    pub(crate) fn in_h(&self) -> usize {
        self.dims.2
    }

    /// Input width.
    pub(crate) fn in_w(&self) -> usize {
        self.dims.3
    }

    /// Input cells per plane.
    pub(crate) fn in_plane(&self) -> usize {
        self.dims.2 * self.dims.3
    }

    /// Output cells per plane.
    pub(crate) fn out_plane(&self) -> usize {
        self.out_h * self.out_w
    }

    /// (N, C, H_out, W_out).
    pub(crate) fn output_shape(&self) -> Shape {
        Shape::from((self.dims.0, self.dims.1, self.out_h, self.out_w))
    }

    /// (N, C, H, W).
    pub(crate) fn input_shape(&self) -> Shape {
        Shape::from(self.dims)
    }

    /// The in-image cells 0..len that output `index`'s window covers along one axis:
    /// index·stride − 1 ..= index·stride + 1, clipped (padding cells are skipped).
    pub(crate) fn window(&self, index: usize, len: usize) -> std::ops::Range<usize> {
        let centre = index * self.stride;
        centre.saturating_sub(1)..(centre + 2).min(len)
    }
}

/// Combines, for every output column, the in-image cells of its 3-wide
/// window in one row: `out[oj] = combine(row[c], row[c − 1], row[c + 1])`
/// with c = oj·stride, missing neighbours skipped. Written as three passes
/// over shifted cells so that stride 1 vectorises.
pub(crate) fn row_windows(
    row: &[f32],
    out: &mut [f32],
    stride: usize,
    combine: impl Fn(f32, f32) -> f32,
) {
    for (oj, cell) in out.iter_mut().enumerate() {
        *cell = row[oj * stride];
    }
    for (oj, cell) in out.iter_mut().enumerate().skip(1) {
        *cell = combine(*cell, row[oj * stride - 1]);
    }
    // The right neighbour exists while oj·stride + 1 < row.len().
    let with_right = row.len().saturating_sub(1).div_ceil(stride).min(out.len());
    for (oj, cell) in out[..with_right].iter_mut().enumerate() {
        *cell = combine(*cell, row[oj * stride + 1]);
    }
}

/// Combines whole rows: `out = combine(rows[c], rows[c − 1], rows[c + 1])`
/// element-wise for c = `out_row`·stride, with `rows` holding `row_len`-long
/// rows and missing neighbours skipped.
pub(crate) fn column_windows(
    rows: &[f32],
    row_len: usize,
    out: &mut [f32],
    out_row: usize,
    stride: usize,
    combine: impl Fn(f32, f32) -> f32,
) {
    let row = |r: usize| &rows[r * row_len..(r + 1) * row_len];
    let centre = out_row * stride;
    out.copy_from_slice(row(centre));
    let neighbours = [centre.checked_sub(1), Some(centre + 1)];
    for r in neighbours.into_iter().flatten() {
        if r * row_len < rows.len() {
            for (cell, value) in out.iter_mut().zip(row(r)) {
                *cell = combine(*cell, *value);
            }
        }
    }
}
