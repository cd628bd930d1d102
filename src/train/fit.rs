//! The epoch loop, written once for every [`Learner`].

use super::batches::Batches;
use super::curve_cut::{CurveCut, CurveWatch, CutVerdict};
use super::evaluate::{mean_cross_entropy, softmax_rows};
use super::input_checks::check_inputs;
use super::learner::{Learner, Snapshot};
use super::scores::{score, Scores};
use super::settings::{TrainSettings, TrainStatus, Watch};
use super::streams::dropout_stream;
use crate::data::Dataset;
use crate::net::seeded_rng;
use crate::Result;

/// Rows per forward pass when computing validation logits.
const EVAL_CHUNK_ROWS: usize = 1024;

/// What [`fit`] reports; the learner itself holds the resulting weights.
#[derive(Clone, Debug, PartialEq)]
pub struct FitOutcome {
    /// How the run ended.
    pub status: TrainStatus,
    /// Validation scores of the weights the learner holds at the end;
    /// `None` without validation data or when training diverged.
    pub scores: Option<Scores>,
    /// Epochs started (an epoch cut short by divergence counts).
    pub epochs_run: u32,
    /// 1-based epoch whose weights the learner holds (see
    /// [`TrainOutcome::best_epoch`](super::TrainOutcome::best_epoch)).
    pub best_epoch: u32,
    /// Mean training-batch loss of each completed epoch, in order (each
    /// batch's loss counted by its row count; with class weights, each
    /// batch's loss is its weighted mean).
    pub epoch_losses: Vec<f64>,
    /// Why training was cut, when `status` is [`TrainStatus::CurveCut`].
    pub cut: Option<CutVerdict>,
}

/// The best epoch so far by what [`TrainSettings::watch`] follows, with its weights.
struct BestEpoch {
    epoch: u32,
    loss: f64,
    /// The watched objective's value (NaN counted as −∞); `None` when the
    /// loss is watched.
    objective: Option<f64>,
    weights: Snapshot,
}

impl BestEpoch {
    /// True when an epoch with validation `loss` and watched `objective`
    /// beats this one: a lower loss when the loss is watched; otherwise a
    /// higher objective, or an equal one with a lower loss. A tie keeps the
    /// earlier epoch.
    fn beaten_by(&self, objective: Option<f64>, loss: f64) -> bool {
        match (objective, self.objective) {
            (Some(new), Some(old)) => new > old || (new == old && loss < self.loss),
            _ => loss < self.loss,
        }
    }
}

/// Trains `learner` on `train` for up to `settings.max_epochs` epochs of
/// mini-batches of `batch_size` rows (the last one may be smaller).
///
/// Each epoch visits the rows in a seeded order drawn from the seed and the
/// epoch number and draws dropout masks from the epoch's own stream, so an
/// epoch's randomness depends only on the seed and the epoch number. The
/// training loss is the mean cross-entropy, weighted by class when
/// [`TrainSettings::class_weights`] is set. After each epoch the validation
/// loss (always the unweighted mean cross-entropy) is computed, and with
/// [`Watch::Objective`] the validation split is also scored. After
/// `patience` epochs without improvement of what [`TrainSettings::watch`]
/// follows (a lower loss; or a higher objective, ties broken by a lower
/// loss) training stops early. When validation data is given the learner
/// ends holding the weights of the best epoch by the same rule (ties keep
/// the earlier epoch). A NaN or infinite batch loss, weight or validation
/// loss stops training with [`TrainStatus::Diverged`] (never an error).
///
/// Errors: [`Error::Input`](crate::Error::Input) for `max_epochs` 0, an
/// empty set, data whose sizes disagree with each other or the learner,
/// class weights that are not one finite positive number per class, or
/// class weights for a learner that cannot use them.
pub fn fit(
    learner: &mut dyn Learner,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
    batch_size: usize,
) -> Result<FitOutcome> {
    fit_with_cut(learner, train, valid, settings, batch_size, None)
}

/// [`fit`] with a learning-curve cut: with validation data and `cut` given,
/// the current weights are also scored after every epoch and training stops
/// with [`TrainStatus::CurveCut`] once the curve cannot reach `cut.bar`
/// ([`CurveWatch`]). The learner then holds the best epoch's weights and the
/// outcome their scores, as after early stopping. Without `cut` this is
/// exactly [`fit`]: the extra scoring only happens when a cut is asked for.
pub fn fit_with_cut(
    learner: &mut dyn Learner,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
    batch_size: usize,
    cut: Option<CurveCut>,
) -> Result<FitOutcome> {
    check_inputs(
        train,
        valid,
        settings,
        learner.n_inputs(),
        learner.n_classes(),
    )?;
    let min_rows = learner.min_batch_rows().max(1);
    if min_rows > 1 && (train.len() < min_rows || batch_size < min_rows) {
        return Err(crate::Error::input(format!(
            "this network needs at least {min_rows} rows per training batch (batch norm on \
             1×1 maps), but the batch size is {batch_size} and the training split has {} rows",
            train.len()
        )));
    }
    learner.set_class_weights(settings.class_weights.as_deref())?;
    let watched_objective = match settings.watch {
        Watch::Loss => None,
        Watch::Objective(objective) => Some(objective),
    };
    let mut batches = Batches::new(train);
    let mut status = TrainStatus::Completed;
    let mut epochs_run = 0;
    let mut best: Option<BestEpoch> = None;
    let mut epochs_without_improvement = 0;
    let mut epoch_losses = Vec::new();
    let mut curve = cut.map(|cut| CurveWatch::new(cut, settings.max_epochs));
    let mut verdict = None;
    let mut logits = Vec::new();
    let mut probabilities = Vec::new();
    for epoch in 1..=settings.max_epochs {
        epochs_run = epoch;
        batches.shuffle(settings.seed, epoch);
        let mut dropout_rng = seeded_rng(settings.seed, dropout_stream(epoch));
        let mut loss_sum = 0.0f64;
        let mut rows_trained = 0usize;
        let mut losses_finite = true;
        for index in 0..batches.count(batch_size) {
            let (x, y) = batches.batch(index, batch_size);
            if y.len() < min_rows {
                continue;
            }
            rows_trained += y.len();
            let loss = learner.train_step(x, y, y.len(), &mut dropout_rng)?;
            if !loss.is_finite() {
                losses_finite = false;
                break;
            }
            loss_sum += f64::from(loss) * y.len() as f64;
        }
        if !losses_finite || !learner.all_finite()? {
            status = TrainStatus::Diverged;
            break;
        }
        epoch_losses.push(loss_sum / rows_trained as f64);
        let Some(valid) = valid else { continue };
        logits_in_chunks(learner, valid, &mut logits)?;
        let loss = mean_cross_entropy(&logits, &valid.y, valid.n_classes);
        if !loss.is_finite() {
            status = TrainStatus::Diverged;
            break;
        }
        // Scores only when something reads them, so the default path does no extra work.
        let epoch_scores = (curve.is_some() || watched_objective.is_some()).then(|| {
            probabilities.clear();
            probabilities.extend_from_slice(&logits);
            softmax_rows(&mut probabilities, valid.n_classes);
            score(&probabilities, &valid.y, valid.n_classes)
        });
        let cut_now = match (curve.as_mut(), &epoch_scores) {
            (Some(curve), Some(scores)) => curve.after_epoch(scores),
            _ => None,
        };
        let objective = watched_objective
            .zip(epoch_scores)
            .map(|(objective, scores)| {
                let value = objective.value(&scores);
                if value.is_nan() {
                    f64::NEG_INFINITY
                } else {
                    value
                }
            });
        if best.as_ref().is_none_or(|b| b.beaten_by(objective, loss)) {
            let weights = learner.snapshot()?;
            best = Some(BestEpoch {
                epoch,
                loss,
                objective,
                weights,
            });
            epochs_without_improvement = 0;
        } else {
            epochs_without_improvement += 1;
            if settings.patience > 0 && epochs_without_improvement >= settings.patience {
                status = TrainStatus::EarlyStopped;
                break;
            }
        }
        if cut_now.is_some() {
            status = TrainStatus::CurveCut;
            verdict = cut_now;
            break;
        }
    }

    let best_epoch = match (best, valid) {
        (Some(best), _) => {
            learner.restore(&best.weights)?;
            best.epoch
        }
        (None, Some(_)) => 0,
        (None, None) => epochs_run,
    };
    let scores = match (valid, status) {
        (
            Some(valid),
            TrainStatus::Completed | TrainStatus::EarlyStopped | TrainStatus::CurveCut,
        ) => {
            logits_in_chunks(learner, valid, &mut probabilities)?;
            softmax_rows(&mut probabilities, valid.n_classes);
            Some(score(&probabilities, &valid.y, valid.n_classes))
        }
        _ => None,
    };
    Ok(FitOutcome {
        status,
        scores,
        epochs_run,
        best_epoch,
        epoch_losses,
        cut: verdict,
    })
}

/// The logits of every row of `data`, written into `logits` (cleared
/// first; its allocation is reused from epoch to epoch).
fn logits_in_chunks(
    learner: &mut dyn Learner,
    data: &Dataset,
    logits: &mut Vec<f32>,
) -> Result<()> {
    logits.clear();
    logits.reserve(data.len() * data.n_classes);
    for chunk in data.x.chunks(EVAL_CHUNK_ROWS * data.n_features) {
        let rows = chunk.len() / data.n_features;
        logits.extend(learner.logits(chunk, rows)?);
    }
    Ok(())
}
