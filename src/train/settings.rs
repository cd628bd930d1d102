//! What a training run is asked to do and what it reports.

use serde::{Deserialize, Serialize};

use super::curve_cut::CutVerdict;
use super::model::TrainedModel;
use super::scores::Scores;

/// How long and with which seed to train (the genome's training genes say how).
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct TrainSettings {
    /// Largest number of passes over the training set (at least 1).
    pub max_epochs: u32,
    /// Stop after this many epochs without a lower validation loss; 0 never stops early.
    pub patience: u32,
    /// Seed of every random choice: initial weights, shuffles, dropout masks.
    pub seed: u64,
}

/// How a training run ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TrainStatus {
    /// All `max_epochs` epochs ran.
    Completed,
    /// `patience` epochs passed without a lower validation loss.
    EarlyStopped,
    /// The training loss, the validation loss or a weight became NaN or infinite.
    Diverged,
    /// Stopped by a learning-curve cut: the validation curve could not reach
    /// the bar by the last epoch (see [`CurveWatch`](super::CurveWatch)).
    CurveCut,
}

/// The result of [`train`](super::train).
#[derive(Clone, Debug)]
pub struct TrainOutcome {
    /// How the run ended.
    pub status: TrainStatus,
    /// Validation scores of `model`; `None` without validation data or when diverged.
    pub scores: Option<Scores>,
    /// Epochs started (an epoch cut short by divergence counts).
    pub epochs_run: u32,
    /// 1-based epoch whose weights `model` holds: the epoch with the lowest
    /// validation loss, or the last epoch run without validation data; 0 when
    /// validation data was given but no epoch ended with a finite validation loss.
    pub best_epoch: u32,
    /// Wall-clock seconds the whole call took.
    pub seconds: f64,
    /// The trained network (best weights by validation loss when validation data was given).
    pub model: TrainedModel,
    /// Why training was cut, when `status` is [`TrainStatus::CurveCut`].
    pub cut: Option<CutVerdict>,
}
