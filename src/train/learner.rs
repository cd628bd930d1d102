//! The seam between the epoch loop ([`fit`](super::fit)) and a network that
//! can take training steps.

use rand::RngCore;

use crate::{Error, Result};

/// A trainable network with its optimiser state, as the epoch loop sees it.
///
/// [`fit`](super::fit) drives any implementation through the same loop
/// (seeded shuffles, mini-batches, per-epoch dropout streams, validation loss,
/// early stopping with best-weight restore, divergence, scores). Two
/// implementations exist: [`FastMlpLearner`](super::FastMlpLearner) (the
/// default for MLPs) and [`AutogradLearner`](super::AutogradLearner) (any
/// candle network). Matrices are row-major f32; labels are class indices.
pub trait Learner {
    /// Number of input features a row must have.
    fn n_inputs(&self) -> usize;

    /// Number of classes (logits per row).
    fn n_classes(&self) -> usize;

    /// One optimiser step on a mini-batch of `rows` rows: forward in training
    /// mode (dropout masks drawn from `rng`), mean softmax cross-entropy
    /// against `labels` (class-weighted after
    /// [`set_class_weights`](Learner::set_class_weights)), gradients, update. Returns the batch loss before
    /// the update (NaN or infinite when training diverged; the update may
    /// then be skipped).
    fn train_step(
        &mut self,
        x: &[f32],
        labels: &[u32],
        rows: usize,
        rng: &mut dyn RngCore,
    ) -> Result<f32>;

    /// Logits (rows × n_classes, row-major) for `rows` rows of `x`, without
    /// dropout and without changing any state the next step depends on.
    fn logits(&mut self, x: &[f32], rows: usize) -> Result<Vec<f32>>;

    /// A copy of the current parameter values.
    fn snapshot(&self) -> Result<Snapshot>;

    /// Puts the parameter values of `snapshot` back (optimiser state is kept).
    fn restore(&mut self, snapshot: &Snapshot) -> Result<()>;

    /// True when every parameter value is finite.
    fn all_finite(&self) -> Result<bool>;

    /// Weights the training loss by class from now on: each later
    /// [`train_step`](Learner::train_step) minimises Σ w_{y_i}·CE_i / Σ w_{y_i}
    /// over its batch (see [`TrainSettings::class_weights`](super::TrainSettings::class_weights));
    /// `None` goes back to the plain mean. [`fit`](super::fit) calls it once
    /// before the first epoch with the settings' weights.
    ///
    /// The default accepts `None` only and refuses weights with an
    /// [`Error::Input`], so a learner that does not implement weighting never
    /// ignores them silently; a wrapper around another learner should
    /// forward this call.
    fn set_class_weights(&mut self, weights: Option<&[f32]>) -> Result<()> {
        match weights {
            None => Ok(()),
            Some(_) => Err(Error::input(
                "this kind of network cannot train with class weights yet; train it without them",
            )),
        }
    }

    /// The fewest rows a training mini-batch may have (default 1). The epoch
    /// loop skips a smaller last batch; its rows land in other batches in
    /// other epochs' orders. Networks with batch norm on 1×1 maps need 2,
    /// since batch statistics of one value per channel are undefined.
    fn min_batch_rows(&self) -> usize {
        1
    }
}

/// Parameter values of a network at one moment: one row-major vector per
/// parameter tensor, in the network's parameter order.
#[derive(Clone, Debug, PartialEq)]
pub struct Snapshot {
    tensors: Vec<Vec<f32>>,
}

impl Snapshot {
    /// Wraps one vector per parameter tensor.
    pub fn new(tensors: Vec<Vec<f32>>) -> Self {
        Snapshot { tensors }
    }

    /// The values, one vector per parameter tensor.
    pub fn tensors(&self) -> &[Vec<f32>] {
        &self.tensors
    }

    /// The values, consuming the snapshot.
    pub fn into_tensors(self) -> Vec<Vec<f32>> {
        self.tensors
    }

    /// Checks that the snapshot holds tensors of exactly `lengths` values.
    pub fn check_lengths(&self, lengths: &[usize]) -> Result<()> {
        let found: Vec<usize> = self.tensors.iter().map(Vec::len).collect();
        if found != lengths {
            return Err(Error::internal(format!(
                "snapshot has tensor sizes {found:?} but the network needs {lengths:?}"
            )));
        }
        Ok(())
    }
}
