//! Unfolding one image group into patch columns (im2col) and folding
//! column gradients back into the image (col2im).
//!
//! Column matrix of one image and group: row (c·KH + ki)·KW + kj, column
//! oi·W_out + oj holds x[c][oi·stride − padding + ki·dilation][oj·stride − padding + kj·dilation],
//! 0 where that cell lies in the padding.
//!
//! Where each tap's cells come from depends only on the geometry, so it is
//! worked out once per convolution ([`TapPlans`]) and then replayed for every
//! image and channel as a few slice copies and fills. Working it out per
//! image and channel (integer divisions for the valid ranges, row by row)
//! cost more than the copies on 8×8 images: with the plans, conv 3×3 on a
//! 64×16×8×8 input went from 2,800 to ~2,100 µs forward + backward
//! (benches/ops_quick.rs, thread CPU time, machine under load).

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

/// A run of patch cells `dst..dst + len` of one tap's patch row that reads
/// input cells `src, src + step, …` of the channel plane. With stride 1 and
/// "same" width one run covers all valid rows at once and also passes over
/// the padding cells where rows wrap; those are then cleared as padding.
#[derive(Clone, Copy, Debug)]
struct Run {
    dst: usize,
    src: usize,
    len: usize,
    step: usize,
}

/// How one tap's patch row relates to a channel plane.
#[derive(Clone, Debug, Default)]
struct TapPlan {
    runs: Vec<Run>,
    /// Patch cells lying in the padding (0 in the patch row), merged ranges.
    pads: Vec<std::ops::Range<usize>>,
}

/// The plan of every tap (ki, kj) of a geometry, in patch-row order.
pub(crate) struct TapPlans {
    taps: Vec<TapPlan>,
}

impl TapPlans {
    /// Works out the runs and padding cells of every tap of `g`.
    pub(crate) fn new(g: &ConvGeometry) -> Self {
        let mut taps = Vec::with_capacity(g.kernel_h * g.kernel_w);
        for ki in 0..g.kernel_h {
            for kj in 0..g.kernel_w {
                taps.push(tap_plan(g, ki, kj));
            }
        }
        TapPlans { taps }
    }
}

/// The plan of tap (ki, kj).
fn tap_plan(g: &ConvGeometry, ki: usize, kj: usize) -> TapPlan {
    let out_w = g.out_w;
    let rows = valid_outputs(g.out_h, g.in_h, ki * g.dilation, g.stride, g.padding);
    let cols = valid_outputs(g.out_w, g.in_w, kj * g.dilation, g.stride, g.padding);
    let mut valid = vec![false; g.out_plane()];
    if !cols.is_empty() {
        for oi in rows.clone() {
            valid[oi * out_w + cols.start..oi * out_w + cols.end].fill(true);
        }
    }
    let pads = false_ranges(&valid);
    let mut runs = Vec::new();
    if rows.is_empty() || cols.is_empty() {
        return TapPlan { runs, pads };
    }
    // Input cell of output (oi, oj): (oi·s + ki·d − p)·W + oj·s + kj·d − p.
    let source = |oi: usize, oj: usize| {
        (oi * g.stride + ki * g.dilation - g.padding) * g.in_w + oj * g.stride + kj * g.dilation
            - g.padding
    };
    if g.stride == 1 && g.in_w == out_w {
        // Row oi + 1 continues row oi in both the patch and the input: one run.
        let (first, last) = (
            rows.start * out_w + cols.start,
            (rows.end - 1) * out_w + cols.end,
        );
        runs.push(Run {
            dst: first,
            src: source(rows.start, cols.start),
            len: last - first,
            step: 1,
        });
    } else {
        for oi in rows {
            runs.push(Run {
                dst: oi * out_w + cols.start,
                src: source(oi, cols.start),
                len: cols.len(),
                step: g.stride,
            });
        }
    }
    TapPlan { runs, pads }
}

/// The ranges of `false` cells, merged.
fn false_ranges(valid: &[bool]) -> Vec<std::ops::Range<usize>> {
    let mut ranges = Vec::new();
    let mut start = None;
    for (cell, &ok) in valid.iter().enumerate() {
        match (ok, start) {
            (false, None) => start = Some(cell),
            (true, Some(first)) => {
                ranges.push(first..cell);
                start = None;
            }
            _ => {}
        }
    }
    if let Some(first) = start {
        ranges.push(first..valid.len());
    }
    ranges
}

/// Sets the cells of `range` to 0. Most padding ranges are one or two
/// cells (where rows wrap), for which a `memset` call costs more than the
/// stores; on B5 (benches/cells.rs) those calls took about 6% of a step.
fn clear(row: &mut [f32], range: &std::ops::Range<usize>) {
    match range.len() {
        1 => row[range.start] = 0.0,
        2 => {
            row[range.start] = 0.0;
            row[range.start + 1] = 0.0;
        }
        _ => row[range.clone()].fill(0.0),
    }
}

/// The first `len` cells of every `stride`-long row of `data`.
fn rows_mut(data: &mut [f32], stride: usize, len: usize) -> impl Iterator<Item = &mut [f32]> {
    data.chunks_mut(stride.max(1))
        .map_while(move |row| row.get_mut(..len))
}

/// Fills the patch columns of one image and group from `image`, the group's
/// C_in/groups input planes (each H × W, row-major): patch row r goes to
/// `columns[r·row_stride..][..out_plane]`, so several images can sit side by
/// side in one matrix. `plans` must come from the same geometry.
pub(crate) fn im2col(
    geometry: &ConvGeometry,
    plans: &TapPlans,
    image: &[f32],
    columns: &mut [f32],
    row_stride: usize,
) {
    let g = geometry;
    let mut rows = rows_mut(columns, row_stride, g.out_plane());
    for channel in image.chunks_exact(g.in_plane()).take(g.group_in()) {
        for plan in &plans.taps {
            let Some(row) = rows.next() else { return };
            for run in &plan.runs {
                let target = &mut row[run.dst..run.dst + run.len];
                if run.step == 1 {
                    target.copy_from_slice(&channel[run.src..run.src + run.len]);
                } else {
                    let source = channel[run.src..].iter().step_by(run.step);
                    for (cell, value) in target.iter_mut().zip(source) {
                        *cell = *value;
                    }
                }
            }
            for pad in &plan.pads {
                clear(row, pad);
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
    plans: &TapPlans,
    columns: &mut [f32],
    row_stride: usize,
    image: &mut [f32],
) {
    let g = geometry;
    let mut rows = rows_mut(columns, row_stride, g.out_plane());
    for channel in image.chunks_exact_mut(g.in_plane()).take(g.group_in()) {
        for plan in &plans.taps {
            let Some(row) = rows.next() else { return };
            // Padding cells inside a run must add nothing.
            for pad in &plan.pads {
                clear(row, pad);
            }
            for run in &plan.runs {
                let source = &row[run.dst..run.dst + run.len];
                if run.step == 1 {
                    let target = &mut channel[run.src..run.src + run.len];
                    for (cell, value) in target.iter_mut().zip(source) {
                        *cell += value;
                    }
                } else {
                    let target = channel[run.src..].iter_mut().step_by(run.step);
                    for (cell, value) in target.zip(source) {
                        *cell += value;
                    }
                }
            }
        }
    }
}
