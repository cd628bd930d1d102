//! A channel-major, zero-padded working layout for stride-1 convolutions.
//!
//! The grid holds (C, N, rows, cols) with rows = H + 2·padding and
//! cols = W + 2·padding. With every image on the same padded grid, kernel
//! tap (ki, kj) of a stride-1 convolution reads input grid cell j + shift
//! for output grid cell j, shift = ki·dilation·cols + kj·dilation, across
//! all images and rows at once; only output cells with row < H_out and
//! column < W_out are kept. Each tap is then one long, contiguous multiply-add.

use super::scratch;

/// Sizes of a padded grid (see the module documentation).
#[derive(Clone, Copy, Debug)]
pub(crate) struct Grid {
    pub(crate) batch: usize,
    pub(crate) rows: usize,
    pub(crate) cols: usize,
}

impl Grid {
    /// Cells of one channel over all images.
    pub(crate) fn channel_len(&self) -> usize {
        self.batch * self.rows * self.cols
    }

    /// Copies `values` (N, C, h, w) into a zero grid of C channels, cell
    /// (r, c) landing on grid cell (r + at, c + at).
    pub(crate) fn embed(
        &self,
        values: &[f32],
        channels: usize,
        h: usize,
        w: usize,
        at: usize,
    ) -> Vec<f32> {
        let mut grid = vec![0.0f32; channels * self.channel_len()];
        let image_planes = values.chunks_exact(h * w);
        for (index, plane) in image_planes.enumerate() {
            let (image, channel) = (index / channels, index % channels);
            let start = channel * self.channel_len() + image * self.rows * self.cols;
            for (r, row) in plane.chunks_exact(w).enumerate() {
                let offset = start + (r + at) * self.cols + at;
                grid[offset..offset + w].copy_from_slice(row);
            }
        }
        grid
    }

    /// A zero grid of `channels` channels in a recycled [`scratch`] buffer.
    pub(crate) fn zeros(&self, channels: usize) -> Vec<f32> {
        let mut grid = scratch::take(0);
        grid.resize(channels * self.channel_len(), 0.0);
        grid
    }

    /// The inverse of [`Grid::embed`]: reads (N, C, h, w) values from grid
    /// cells (r + at, c + at) of a grid of C channels.
    pub(crate) fn extract(
        &self,
        grid: &[f32],
        channels: usize,
        h: usize,
        w: usize,
        at: usize,
    ) -> Vec<f32> {
        let mut values = vec![0.0f32; self.batch * channels * h * w];
        for (index, plane) in values.chunks_exact_mut(h * w).enumerate() {
            let (image, channel) = (index / channels, index % channels);
            let start = channel * self.channel_len() + image * self.rows * self.cols;
            for (r, row) in plane.chunks_exact_mut(w).enumerate() {
                let offset = start + (r + at) * self.cols + at;
                row.copy_from_slice(&grid[offset..offset + w]);
            }
        }
        values
    }
}
