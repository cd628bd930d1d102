//! Unfolding one image group into patch columns (im2col) and folding
//! column gradients back into the image (col2im).
//!
//! Column matrix of one image and group: row (c·KH + ki)·KW + kj, column
//! oi·W_out + oj holds x[c][oi·stride − padding + ki·dilation][oj·stride − padding + kj·dilation],
//! 0 where that cell lies in the padding.

use super::checks::ConvGeometry;

/// The output columns `oj` whose input column `oj·stride + offset − padding`
/// lies inside 0..in_len, as a range (offset = tap position · dilation).
pub(crate) fn valid_outputs(
    out_len: usize,
    in_len: usize,
    offset: usize,
    stride: usize,
    padding: usize,
) -> std::ops::Range<usize> {
    // Need oj·stride + offset ≥ padding and oj·stride + offset − padding < in_len.
    let first = padding.saturating_sub(offset).div_ceil(stride);
    let limit = (in_len + padding).saturating_sub(offset); // oj·stride < limit
    let end = limit.div_ceil(stride).min(out_len);
    first.min(end)..end
}

/// The first `len` cells of every `stride`-long row of `data`.
fn rows_mut(data: &mut [f32], stride: usize, len: usize) -> impl Iterator<Item = &mut [f32]> {
    data.chunks_mut(stride.max(1))
        .map_while(move |row| row.get_mut(..len))
}

/// One tap's patch row when stride is 1 and H_out·W_out rows are as wide as
/// the input rows ("same" padding): then patch cell t reads input cell
/// t + offset for one offset, so the valid block of rows moves as a single
/// contiguous run; only the cells wrapping from one row's end to the next
/// row's start lie in the padding.
struct SameWidthRun {
    /// Patch cells from the first to the last valid one.
    cells: std::ops::Range<usize>,
    /// Input cell = patch cell + offset − back, kept unsigned.
    offset: usize,
    back: usize,
    /// Valid output columns of every row.
    cols: std::ops::Range<usize>,
    width: usize,
}

impl SameWidthRun {
    /// The run of tap (ki, kj), or None when the layout does not apply or no cell is valid.
    fn new(g: &ConvGeometry, ki: usize, kj: usize) -> Option<Self> {
        if g.stride != 1 || g.in_w != g.out_w {
            return None;
        }
        let rows = valid_outputs(g.out_h, g.in_h, ki * g.dilation, 1, g.padding);
        let cols = valid_outputs(g.out_w, g.in_w, kj * g.dilation, 1, g.padding);
        if rows.is_empty() || cols.is_empty() {
            return None;
        }
        let width = g.out_w;
        Some(Self {
            cells: rows.start * width + cols.start..(rows.end - 1) * width + cols.end,
            offset: (ki * width + kj) * g.dilation,
            back: g.padding * width + g.padding,
            cols,
            width,
        })
    }

    /// The input cells the run reads.
    fn sources(&self) -> std::ops::Range<usize> {
        let shift = |cell: usize| cell + self.offset - self.back;
        shift(self.cells.start)..shift(self.cells.end)
    }

    /// Zeroes the cells inside the run that wrap between rows (they lie in the padding).
    fn clear_wraps(&self, patch_row: &mut [f32]) {
        let mut row_end = self.cells.start - self.cols.start + self.cols.end;
        while row_end < self.cells.end {
            let next_start = row_end - self.cols.end + self.width + self.cols.start;
            patch_row[row_end..next_start].fill(0.0);
            row_end = next_start - self.cols.start + self.cols.end;
        }
    }
}

/// Fills the patch columns of one image and group from `image`, the group's
/// C_in/groups input planes (each H × W, row-major): patch row r goes to
/// `columns[r·row_stride..][..out_plane]`, so several images can sit side by
/// side in one matrix.
pub(crate) fn im2col(
    geometry: &ConvGeometry,
    image: &[f32],
    columns: &mut [f32],
    row_stride: usize,
) {
    let g = geometry;
    let out_w = g.out_w;
    let mut rows = rows_mut(columns, row_stride, g.out_plane());
    for channel in image.chunks_exact(g.in_plane()).take(g.group_in()) {
        for ki in 0..g.kernel_h {
            let valid_rows = valid_outputs(g.out_h, g.in_h, ki * g.dilation, g.stride, g.padding);
            for kj in 0..g.kernel_w {
                let Some(row) = rows.next() else { return };
                let valid_cols =
                    valid_outputs(g.out_w, g.in_w, kj * g.dilation, g.stride, g.padding);
                if let Some(run) = SameWidthRun::new(g, ki, kj) {
                    row[..run.cells.start].fill(0.0);
                    row[run.cells.clone()].copy_from_slice(&channel[run.sources()]);
                    row[run.cells.end..].fill(0.0);
                    run.clear_wraps(row);
                    continue;
                }
                row.fill(0.0);
                if valid_cols.is_empty() {
                    continue;
                }
                for oi in valid_rows.clone() {
                    let ii = oi * g.stride + ki * g.dilation - g.padding;
                    let source = &channel[ii * g.in_w..(ii + 1) * g.in_w];
                    let target = &mut row[oi * out_w..(oi + 1) * out_w];
                    if g.stride == 1 {
                        let shift = kj * g.dilation;
                        let (start, end) = (valid_cols.start, valid_cols.end);
                        target[start..end].copy_from_slice(
                            &source[start + shift - g.padding..end + shift - g.padding],
                        );
                    } else {
                        for oj in valid_cols.clone() {
                            target[oj] = source[oj * g.stride + kj * g.dilation - g.padding];
                        }
                    }
                }
            }
        }
    }
}

/// Adds each entry of one image's patch columns (laid out as [`im2col`]
/// writes them) to the input cell it was taken from, into `image` (the
/// group's input planes): the adjoint of [`im2col`].
///
/// Cells of `columns` that lie in the padding may be overwritten with 0.
pub(crate) fn col2im_add(
    geometry: &ConvGeometry,
    columns: &mut [f32],
    row_stride: usize,
    image: &mut [f32],
) {
    let g = geometry;
    let out_w = g.out_w;
    let mut rows = rows_mut(columns, row_stride, g.out_plane());
    for channel in image.chunks_exact_mut(g.in_plane()).take(g.group_in()) {
        for ki in 0..g.kernel_h {
            let valid_rows = valid_outputs(g.out_h, g.in_h, ki * g.dilation, g.stride, g.padding);
            for kj in 0..g.kernel_w {
                let Some(row) = rows.next() else { return };
                let valid_cols =
                    valid_outputs(g.out_w, g.in_w, kj * g.dilation, g.stride, g.padding);
                if let Some(run) = SameWidthRun::new(g, ki, kj) {
                    run.clear_wraps(row);
                    let targets = &mut channel[run.sources()];
                    for (cell, value) in targets.iter_mut().zip(&row[run.cells.clone()]) {
                        *cell += value;
                    }
                    continue;
                }
                if valid_cols.is_empty() {
                    continue;
                }
                for oi in valid_rows.clone() {
                    let ii = oi * g.stride + ki * g.dilation - g.padding;
                    let target = &mut channel[ii * g.in_w..(ii + 1) * g.in_w];
                    let source = &row[oi * out_w..(oi + 1) * out_w];
                    if g.stride == 1 {
                        let shift = kj * g.dilation;
                        let (start, end) = (valid_cols.start, valid_cols.end);
                        let target =
                            &mut target[start + shift - g.padding..end + shift - g.padding];
                        for (cell, value) in target.iter_mut().zip(&source[start..end]) {
                            *cell += value;
                        }
                    } else {
                        for oj in valid_cols.clone() {
                            target[oj * g.stride + kj * g.dilation - g.padding] += source[oj];
                        }
                    }
                }
            }
        }
    }
}
