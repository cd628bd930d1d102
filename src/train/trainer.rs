//! The training loop: mini-batch epochs, validation, early stopping, divergence.

use std::time::Instant;

use candle_core::Tensor;

use super::batches::Batches;
use super::evaluate::{logits_of, mean_cross_entropy};
use super::gradients::compute_gradients;
use super::model::TrainedModel;
use super::optimizer::OptimizerState;
use super::scores::score;
use super::settings::{TrainOutcome, TrainSettings, TrainStatus};
use super::streams::dropout_stream;
use crate::data::Dataset;
use crate::genome::LayerGenome;
use crate::net::{parameter_specs, seeded_rng, Mlp};
use crate::{Error, Result};

/// The weights of the epoch with the lowest validation loss so far.
struct BestEpoch {
    epoch: u32,
    loss: f64,
    weights: Vec<Tensor>,
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
/// [`TrainStatus::Diverged`] (never an error).
///
/// Runs on the calling thread only; the same genome, data and settings give
/// bit-identical results. Candle's matrix products must be kept
/// single-threaded by setting `RAYON_NUM_THREADS=1` before any candle call
/// (the command line does).
///
/// Errors: [`Error::Input`] for an invalid genome, `max_epochs` 0, an empty
/// set or data whose sizes disagree.
pub fn train(
    genome: &LayerGenome,
    train: &Dataset,
    valid: Option<&Dataset>,
    settings: &TrainSettings,
) -> Result<TrainOutcome> {
    let started = Instant::now();
    check_inputs(train, valid, settings)?;
    let (n_inputs, n_classes) = (train.n_features, train.n_classes);
    let mlp = Mlp::build(genome, n_inputs, n_classes, settings.seed)?;
    let parameters = mlp.parameters();
    let mut optimizer = OptimizerState::new(
        &genome.training,
        &parameter_specs(genome, n_inputs, n_classes),
    );
    let mut batches = Batches::new(train);
    let batch_size = genome.training.batch_size as usize;

    let mut status = TrainStatus::Completed;
    let mut epochs_run = 0;
    let mut best: Option<BestEpoch> = None;
    let mut epochs_without_improvement = 0;
    for epoch in 1..=settings.max_epochs {
        epochs_run = epoch;
        batches.shuffle(settings.seed, epoch);
        let mut dropout_rng = seeded_rng(settings.seed, dropout_stream(epoch));
        let mut losses_finite = true;
        for index in 0..batches.count(batch_size) {
            let (x, y) = batches.batch(index, batch_size)?;
            let gradients = compute_gradients(&mlp, &x, &y, &mut dropout_rng)?;
            if !gradients.loss.is_finite() {
                losses_finite = false;
                break;
            }
            optimizer.step(&parameters, &gradients.tensors)?;
        }
        if !losses_finite || !weights_finite(&mlp)? {
            status = TrainStatus::Diverged;
            break;
        }
        let Some(valid) = valid else { continue };
        let loss = validation_loss(&mlp, valid)?;
        if !loss.is_finite() {
            status = TrainStatus::Diverged;
            break;
        }
        if best.as_ref().is_none_or(|b| loss < b.loss) {
            let weights = snapshot(&mlp)?;
            best = Some(BestEpoch {
                epoch,
                loss,
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
    }

    let (network, best_epoch) = match (best, valid) {
        (Some(best), _) => (mlp.with_parameters(best.weights)?, best.epoch),
        (None, Some(_)) => (mlp.frozen_copy()?, 0),
        (None, None) => (mlp.frozen_copy()?, epochs_run),
    };
    let model = TrainedModel::from_frozen(genome.clone(), network);
    let scores = match (valid, status) {
        (Some(valid), TrainStatus::Completed | TrainStatus::EarlyStopped) => {
            let probabilities = model.predict_proba(&valid.x, valid.len())?;
            Some(score(&probabilities, &valid.y, n_classes))
        }
        _ => None,
    };
    Ok(TrainOutcome {
        status,
        scores,
        epochs_run,
        best_epoch,
        seconds: started.elapsed().as_secs_f64(),
        model,
    })
}

fn validation_loss(mlp: &Mlp, valid: &Dataset) -> Result<f64> {
    let logits = logits_of(mlp, &valid.x, valid.len())?;
    Ok(mean_cross_entropy(&logits, &valid.y, mlp.n_classes()))
}

fn snapshot(mlp: &Mlp) -> Result<Vec<Tensor>> {
    mlp.parameters()
        .into_iter()
        .map(|t| Ok(t.copy()?.detach()))
        .collect()
}

fn weights_finite(mlp: &Mlp) -> Result<bool> {
    for tensor in mlp.parameters() {
        let values = tensor.flatten_all()?.to_vec1::<f32>()?;
        if !values.iter().all(|v| v.is_finite()) {
            return Ok(false);
        }
    }
    Ok(true)
}

fn check_inputs(train: &Dataset, valid: Option<&Dataset>, settings: &TrainSettings) -> Result<()> {
    if settings.max_epochs == 0 {
        return Err(Error::input("max_epochs is 0, allowed range is 1 or more"));
    }
    check_dataset("training", train)?;
    if let Some(valid) = valid {
        check_dataset("validation", valid)?;
        if valid.n_features != train.n_features || valid.n_classes != train.n_classes {
            return Err(Error::input(format!(
                "the validation set has {} features and {} classes but the training set has {} and {}",
                valid.n_features, valid.n_classes, train.n_features, train.n_classes
            )));
        }
    }
    Ok(())
}

fn check_dataset(role: &str, data: &Dataset) -> Result<()> {
    if data.is_empty() {
        return Err(Error::input(format!("the {role} set has no rows")));
    }
    if data.n_features == 0 || data.n_classes == 0 {
        return Err(Error::input(format!(
            "the {role} set has {} features and {} classes; both must be at least 1",
            data.n_features, data.n_classes
        )));
    }
    if data.x.len() != data.len() * data.n_features {
        return Err(Error::input(format!(
            "the {role} set has {} values for {} rows of {} features",
            data.x.len(),
            data.len(),
            data.n_features
        )));
    }
    if let Some(label) = data
        .y
        .iter()
        .find(|&&label| label as usize >= data.n_classes)
    {
        return Err(Error::input(format!(
            "the {role} set has class index {label}, out of range for {} classes",
            data.n_classes
        )));
    }
    Ok(())
}
