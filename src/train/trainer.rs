//! Training a layer genome's MLP: builds a learner and runs the epoch loop.

use std::time::Instant;

use super::autograd_learner::AutogradLearner;
use super::curve_cut::CurveCut;
use super::fast_mlp::FastMlpLearner;
use super::fit::fit_with_cut;
use super::input_checks::check_inputs;
use super::model::TrainedModel;
use super::settings::{TrainOutcome, TrainSettings};
use crate::data::Dataset;
use crate::genome::LayerGenome;
use crate::net::Mlp;
use crate::Result;

/// Which implementation computes the training steps of an MLP.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum TrainEngine {
    /// [`FastMlpLearner`]: hand-written passes on preallocated buffers (the default).
    #[default]
    Fast,
    /// [`AutogradLearner`] over a candle [`Mlp`]: for cross-checks and comparisons.
    Autograd,
}

/// Trains the network `genome` describes on `train` and scores it on `valid`.
///
/// Weights are initialised from `settings.seed` ([`Mlp::build`]). Each epoch
/// visits the training rows in a seeded order drawn from the seed and the
/// epoch number, in mini-batches of the genome's batch size (the last one
/// may be smaller), minimising the mean softmax cross-entropy with the
/// genome's optimiser (Adam or SGD with momentum 0.9; weight decay is L2 on
/// weight matrices only). After each epoch the validation loss (mean
/// cross-entropy) is computed; after `patience` epochs without a lower one
/// training stops early, and the model returned holds the weights of the
/// best epoch. A NaN or infinite loss or weight stops training with status
/// [`TrainStatus::Diverged`](super::TrainStatus::Diverged) (never an error).
/// See [`fit`] for the loop and [`FastMlpLearner`] for the steps.
///
/// Runs on the calling thread only; the same genome, data and settings give
/// bit-identical results.
///
/// Errors: [`Error::Input`](crate::Error::Input) for an invalid genome,
/// `max_epochs` 0, an empty set or data whose sizes disagree.
pub fn train(
    genome: &LayerGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
) -> Result<TrainOutcome> {
    train_with_engine(genome, train, valid, settings, TrainEngine::Fast)
}

/// [`train`] with the step implementation chosen by `engine`. Both engines
/// start from the same weights, see the same batches and dropout masks and
/// agree to float rounding. Candle's matrix products in the autograd engine
/// must be kept single-threaded by setting `RAYON_NUM_THREADS=1` before any
/// candle call (the command line does).
pub fn train_with_engine(
    genome: &LayerGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
    engine: TrainEngine,
) -> Result<TrainOutcome> {
    train_with_cut(genome, train, valid, settings, engine, None)
}

/// [`train_with_engine`] with an optional learning-curve cut (see
/// [`fit_with_cut`](super::fit_with_cut)); `None` trains exactly as
/// [`train_with_engine`] does.
pub fn train_with_cut(
    genome: &LayerGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
    engine: TrainEngine,
    cut: Option<CurveCut>,
) -> Result<TrainOutcome> {
    let started = Instant::now();
    check_inputs(train, valid, settings, train.n_features, train.n_classes)?;
    let (n_inputs, n_classes) = (train.n_features, train.n_classes);
    let batch_size = genome.training.batch_size as usize;
    let (fitted, network) = match engine {
        TrainEngine::Fast => {
            let mut learner = FastMlpLearner::build(genome, n_inputs, n_classes, settings.seed)?;
            let fitted = fit_with_cut(&mut learner, train, valid, settings, batch_size, cut)?;
            (fitted, learner.to_mlp()?)
        }
        TrainEngine::Autograd => {
            let mlp = Mlp::build(genome, n_inputs, n_classes, settings.seed)?;
            let mut learner = AutogradLearner::new(mlp, &genome.training)?;
            let fitted = fit_with_cut(&mut learner, train, valid, settings, batch_size, cut)?;
            (fitted, learner.network().frozen_copy()?)
        }
    };
    Ok(TrainOutcome {
        status: fitted.status,
        scores: fitted.scores,
        epochs_run: fitted.epochs_run,
        best_epoch: fitted.best_epoch,
        seconds: started.elapsed().as_secs_f64(),
        model: TrainedModel::from_frozen(genome.clone(), network),
        cut: fitted.cut,
    })
}
