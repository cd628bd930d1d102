//! Seeded row order and mini-batches.

use rand::seq::SliceRandom;

use super::streams::shuffle_stream;
use crate::data::Dataset;
use crate::net::seeded_rng;

/// Mini-batches of a dataset in a seeded order, reusing its buffers.
pub(crate) struct Batches<'a> {
    data: &'a Dataset,
    order: Vec<usize>,
    x: Vec<f32>,
    y: Vec<u32>,
}

impl<'a> Batches<'a> {
    /// Batches over `data`, in row order until [`Batches::shuffle`] is called.
    pub(crate) fn new(data: &'a Dataset) -> Self {
        Batches {
            data,
            order: (0..data.len()).collect(),
            x: Vec::new(),
            y: Vec::new(),
        }
    }

    /// Sets the row order of `epoch`: a Fisher–Yates shuffle drawn from the
    /// epoch's own stream of `seed`, independent of earlier epochs.
    pub(crate) fn shuffle(&mut self, seed: u64, epoch: u32) {
        let mut rng = seeded_rng(seed, shuffle_stream(epoch));
        self.order.clear();
        self.order.extend(0..self.data.len());
        self.order.shuffle(&mut rng);
    }

    /// Number of batches of `batch_size` rows (the last one may be smaller).
    pub(crate) fn count(&self, batch_size: usize) -> usize {
        self.order.len().div_ceil(batch_size.max(1))
    }

    /// Batch `index` as (features, rows × n_features row-major; labels, one per row).
    pub(crate) fn batch(&mut self, index: usize, batch_size: usize) -> (&[f32], &[u32]) {
        let batch_size = batch_size.max(1);
        let start = (index * batch_size).min(self.order.len());
        let end = (start + batch_size).min(self.order.len());
        self.x.clear();
        self.y.clear();
        for &row in &self.order[start..end] {
            self.x.extend_from_slice(self.data.row(row));
            self.y.push(self.data.y[row]);
        }
        (&self.x, &self.y)
    }
}
