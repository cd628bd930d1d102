//! What a training run is asked to do and what it reports.

use serde::{Deserialize, Serialize};

use super::curve_cut::CutVerdict;
use super::model::TrainedModel;
use super::objective::Objective;
use super::scores::Scores;

/// How long and with which seed to train (the genome's training genes say how).
///
/// [`TrainSettings::new`] gives the defaults of the optional fields
/// (unweighted loss, the validation loss watched); both are left out of the
/// JSON form while they hold their defaults, so serialised settings read the
/// same as before the fields existed.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TrainSettings {
    /// Largest number of passes over the training set (at least 1).
    pub max_epochs: u32,
    /// Stop after this many epochs without improvement of what `watch`
    /// follows; 0 never stops early.
    pub patience: u32,
    /// Seed of every random choice: initial weights, shuffles, dropout masks.
    pub seed: u64,
    /// One weight per class for the training loss, or `None` for the plain
    /// mean. With weights, each training batch minimises the weighted mean
    /// cross-entropy Σ w_{y_i}·CE_i / Σ w_{y_i} (the "mean" reduction of
    /// PyTorch's `CrossEntropyLoss(weight=…)` and the weighted average of
    /// scikit-learn's `log_loss(sample_weight=…)`; from memory of their
    /// documentation) and its exact gradient. Weights must be finite and
    /// positive, one per class. The validation loss (early stopping,
    /// best-epoch choice) stays the unweighted mean, so it measures the
    /// model the same way with and without weights.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub class_weights: Option<Vec<f32>>,
    /// What early stopping and the best-epoch restore follow (default: the
    /// validation loss).
    #[serde(default, skip_serializing_if = "Watch::is_loss")]
    pub watch: Watch,
}

impl TrainSettings {
    /// Settings with an unweighted loss and the validation loss watched.
    pub fn new(max_epochs: u32, patience: u32, seed: u64) -> Self {
        TrainSettings {
            max_epochs,
            patience,
            seed,
            class_weights: None,
            watch: Watch::Loss,
        }
    }
}

/// What the epoch loop watches on the validation split to stop early and to
/// choose the epoch whose weights it keeps.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Watch {
    /// The mean validation cross-entropy: best = lowest (ties: the earlier
    /// epoch); patience counts epochs without a lower one.
    #[default]
    Loss,
    /// A search objective (higher is better, [`Objective::value`]): best =
    /// highest objective, ties broken by the lower validation loss, then the
    /// earlier epoch; patience counts epochs without a better
    /// (objective, loss) pair. Scoring the validation split every epoch
    /// costs a softmax and a pass over the rows.
    Objective(Objective),
}

impl Watch {
    /// True for [`Watch::Loss`] (the default, left out of the JSON form).
    pub fn is_loss(&self) -> bool {
        matches!(self, Watch::Loss)
    }
}

/// How a training run ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TrainStatus {
    /// All `max_epochs` epochs ran.
    Completed,
    /// `patience` epochs passed without improvement of what
    /// [`TrainSettings::watch`] follows.
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
    /// 1-based epoch whose weights `model` holds: the best epoch by
    /// [`TrainSettings::watch`] (by default the lowest validation loss), or
    /// the last epoch run without validation data; 0 when validation data
    /// was given but no epoch ended with a finite validation loss.
    pub best_epoch: u32,
    /// Wall-clock seconds the whole call took.
    pub seconds: f64,
    /// The trained network (the best epoch's weights when validation data was given).
    pub model: TrainedModel,
    /// Why training was cut, when `status` is [`TrainStatus::CurveCut`].
    pub cut: Option<CutVerdict>,
}
