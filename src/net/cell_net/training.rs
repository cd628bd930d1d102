//! Training cell networks with the shared epoch loop ([`fit`](crate::train::fit)).

use std::time::Instant;

use candle_core::Tensor;
use rand::RngCore;

use super::params::Norm;
use super::{ImageCellNet, TableCellNet};
use crate::data::image::ImageShape;
use crate::data::Dataset;
use crate::genome::{ImageCellGenome, TableCellGenome};
use crate::train::{
    fit_with_cut, AutogradLearner, CurveCut, CutVerdict, FitOutcome, Learner, Scores, Snapshot,
    TrainSettings, TrainStatus,
};
use crate::Result;

/// The result of [`train_image_cells`] / [`train_table_cells`], mirroring
/// [`crate::train::TrainOutcome`] with the cell network in place of the MLP.
#[derive(Clone, Debug)]
pub struct CellTrainOutcome<N> {
    /// How the run ended.
    pub status: TrainStatus,
    /// Validation scores of `network`; `None` without validation data or when diverged.
    pub scores: Option<Scores>,
    /// Epochs started (an epoch cut short by divergence counts).
    pub epochs_run: u32,
    /// 1-based epoch whose weights `network` holds (see [`crate::train::TrainOutcome::best_epoch`]).
    pub best_epoch: u32,
    /// Wall-clock seconds the whole call took.
    pub seconds: f64,
    /// The trained network (best weights and their running statistics by
    /// validation loss when validation data was given).
    pub network: N,
    /// Why training was cut, when `status` is [`TrainStatus::CurveCut`].
    pub cut: Option<CutVerdict>,
}

/// An [`AutogradLearner`] whose snapshots also hold batch-norm running
/// statistics, so restoring the best epoch restores the statistics its
/// weights were evaluated with.
struct NormTrackingLearner<N: crate::train::AutogradNetwork> {
    inner: AutogradLearner<N>,
    norms: Vec<Norm>,
    /// See [`ImageCellNet::min_batch_rows`].
    min_rows: usize,
}

impl<N: crate::train::AutogradNetwork> Learner for NormTrackingLearner<N> {
    fn set_class_weights(&mut self, weights: Option<&[f32]>) -> Result<()> {
        self.inner.set_class_weights(weights)
    }

    fn n_inputs(&self) -> usize {
        self.inner.n_inputs()
    }

    fn n_classes(&self) -> usize {
        self.inner.n_classes()
    }

    fn train_step(
        &mut self,
        x: &[f32],
        labels: &[u32],
        rows: usize,
        rng: &mut dyn RngCore,
    ) -> Result<f32> {
        self.inner.train_step(x, labels, rows, rng)
    }

    fn logits(&mut self, x: &[f32], rows: usize) -> Result<Vec<f32>> {
        self.inner.logits(x, rows)
    }

    fn min_batch_rows(&self) -> usize {
        self.min_rows
    }

    fn snapshot(&self) -> Result<Snapshot> {
        let mut tensors = self.inner.snapshot()?.into_tensors();
        for norm in &self.norms {
            let (mean, var) = norm.running_stats()?;
            tensors.push(mean.to_vec1::<f32>()?);
            tensors.push(var.to_vec1::<f32>()?);
        }
        Ok(Snapshot::new(tensors))
    }

    fn restore(&mut self, snapshot: &Snapshot) -> Result<()> {
        let mut tensors = snapshot.tensors().to_vec();
        let split = tensors.len().saturating_sub(2 * self.norms.len());
        let stats = tensors.split_off(split);
        self.inner.restore(&Snapshot::new(tensors))?;
        for (norm, pair) in self.norms.iter().zip(stats.chunks(2)) {
            if let [mean, var] = pair {
                let device = candle_core::Device::Cpu;
                norm.set_running_stats(
                    Tensor::from_slice(mean, mean.len(), &device)?,
                    Tensor::from_slice(var, var.len(), &device)?,
                )?;
            }
        }
        Ok(())
    }

    fn all_finite(&self) -> Result<bool> {
        self.inner.all_finite()
    }
}

fn outcome<N>(fitted: FitOutcome, started: Instant, network: N) -> CellTrainOutcome<N> {
    CellTrainOutcome {
        status: fitted.status,
        scores: fitted.scores,
        epochs_run: fitted.epochs_run,
        best_epoch: fitted.best_epoch,
        seconds: started.elapsed().as_secs_f64(),
        network,
        cut: fitted.cut,
    }
}

/// Builds the network `genome` describes for images of `shape` (weights
/// from `settings.seed`) and trains it with the genome's optimiser, batch
/// size and the shared epoch loop ([`fit`](crate::train::fit): seeded shuffles, validation
/// loss, early stopping, best-epoch restore, divergence). With `augment`,
/// each training batch is shifted by up to 1 pixel (no flips), drawn from
/// the epoch's seeded stream. Single-threaded runs are bit-identical.
pub fn train_image_cells(
    genome: &ImageCellGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    shape: ImageShape,
    settings: &TrainSettings,
    augment: bool,
) -> Result<CellTrainOutcome<ImageCellNet>> {
    train_image_cells_with_cut(genome, train, valid, shape, settings, augment, None)
}

/// [`train_image_cells`] with an optional learning-curve cut
/// ([`fit_with_cut`]); `None` trains exactly as [`train_image_cells`].
pub(crate) fn train_image_cells_with_cut(
    genome: &ImageCellGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    shape: ImageShape,
    settings: &TrainSettings,
    augment: bool,
    cut: Option<CurveCut>,
) -> Result<CellTrainOutcome<ImageCellNet>> {
    let started = Instant::now();
    let mut network = ImageCellNet::build(genome, shape, train.n_classes, settings.seed)?;
    network.set_augment(augment);
    let norms = network.params.norms.clone();
    let inner = AutogradLearner::new(network.clone(), &genome.training)?;
    let min_rows = network.min_batch_rows();
    let mut learner = NormTrackingLearner {
        inner,
        norms,
        min_rows,
    };
    let batch_size = genome.training.batch_size as usize;
    let fitted = fit_with_cut(&mut learner, train, valid, settings, batch_size, cut)?;
    network.set_augment(false);
    Ok(outcome(fitted, started, network))
}

/// [`train_image_cells`] for tables: builds the [`TableCellNet`] for
/// `train`'s features and classes and trains it with the shared loop.
pub fn train_table_cells(
    genome: &TableCellGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
) -> Result<CellTrainOutcome<TableCellNet>> {
    train_table_cells_with_cut(genome, train, valid, settings, None)
}

/// [`train_table_cells`] with an optional learning-curve cut
/// ([`fit_with_cut`]); `None` trains exactly as [`train_table_cells`].
pub(crate) fn train_table_cells_with_cut(
    genome: &TableCellGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
    cut: Option<CurveCut>,
) -> Result<CellTrainOutcome<TableCellNet>> {
    let started = Instant::now();
    let network = TableCellNet::build(genome, train.n_features, train.n_classes, settings.seed)?;
    let mut learner = AutogradLearner::new(network.clone(), &genome.training)?;
    let batch_size = genome.training.batch_size as usize;
    let fitted = fit_with_cut(&mut learner, train, valid, settings, batch_size, cut)?;
    Ok(outcome(fitted, started, network))
}
