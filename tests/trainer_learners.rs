//! The fast MLP learner against the candle-autograd learner, which the NumPy
//! fixture (tests/trainer_reference.rs) pins: gradients on random networks,
//! whole training runs, and the `Learner` seam both implement.
//!
//! All data and weights here are invented, drawn inside the tests from fixed seeds.

use candle_core::{Device, Tensor};
use gemmule::data::Dataset;
use gemmule::genome::{Activation, LayerGene, LayerGenome, Optimizer, TrainGenes};
use gemmule::net::{parameter_specs, seeded_rng, Mlp};
use gemmule::train::{
    compute_gradients, compute_weighted_gradients, fit, train_with_engine, AutogradLearner,
    FastMlpLearner, Learner, TrainEngine, TrainSettings, TrainStatus,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const N_INPUTS: usize = 6;
const N_CLASSES: usize = 4;
const ACTIVATIONS: [Activation; 4] = [
    Activation::Relu,
    Activation::Tanh,
    Activation::Gelu,
    Activation::Sigmoid,
];

fn genome(
    activation: Activation,
    residual: bool,
    dropout: f32,
    optimizer: Optimizer,
) -> LayerGenome {
    let gene = |width, residual| LayerGene {
        width,
        activation,
        residual,
        dropout,
    };
    LayerGenome {
        layers: vec![gene(9, false), gene(9, residual), gene(5, false)],
        training: TrainGenes {
            learning_rate: 0.01,
            batch_size: 8,
            weight_decay: 0.01,
            optimizer,
        },
    }
}

/// Invented weights: every value (biases too) uniform in ±0.8.
fn random_weights(genome: &LayerGenome, seed: u64) -> Vec<Vec<f32>> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    parameter_specs(genome, N_INPUTS, N_CLASSES)
        .iter()
        .map(|spec| {
            (0..spec.elem_count())
                .map(|_| rng.gen_range(-0.8..0.8))
                .collect()
        })
        .collect()
}

/// Invented data: uniform features in ±2, labels drawn independently.
fn random_data(rows: usize, seed: u64) -> Dataset {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let x = (0..rows * N_INPUTS)
        .map(|_| rng.gen_range(-2.0..2.0))
        .collect();
    let y = (0..rows)
        .map(|_| rng.gen_range(0..N_CLASSES as u32))
        .collect();
    Dataset::new(x, y, N_INPUTS, N_CLASSES).unwrap()
}

fn assert_close(what: &str, got: &[f32], want: &[f32], tolerance: f32) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    for (i, (&g, &w)) in got.iter().zip(want).enumerate() {
        let error = (g - w).abs();
        assert!(
            error <= tolerance * (1.0 + w.abs()),
            "{what}[{i}]: fast {g}, autograd {w} (error {error:e})"
        );
    }
}

#[test]
fn first_step_gradients_agree_with_autograd_for_every_activation() {
    let data = random_data(11, 1);
    for (case, activation) in ACTIVATIONS.into_iter().enumerate() {
        for residual in [false, true] {
            for dropout in [0.0, 0.3] {
                let genome = genome(activation, residual, dropout, Optimizer::Adam);
                let what = format!("{activation:?} residual {residual} dropout {dropout}");
                let weights = random_weights(&genome, 100 + case as u64);
                let mlp = Mlp::from_weights(&genome, N_INPUTS, N_CLASSES, &weights).unwrap();
                let x = Tensor::from_slice(&data.x, (data.len(), N_INPUTS), &Device::Cpu).unwrap();
                let y = Tensor::from_slice(&data.y, data.len(), &Device::Cpu).unwrap();
                // Same stream for both: the dropout masks are drawn in the same order.
                let reference = compute_gradients(&mlp, &x, &y, &mut seeded_rng(5, 9)).unwrap();
                let mut fast = FastMlpLearner::new(&genome, N_INPUTS, N_CLASSES, &weights).unwrap();
                let (loss, gradients) = fast
                    .gradients(&data.x, &data.y, data.len(), &mut seeded_rng(5, 9))
                    .unwrap();
                assert_close(&format!("{what} loss"), &[loss], &[reference.loss], 1e-5);
                let want = reference.to_vecs().unwrap();
                for (index, (got, want)) in gradients.iter().zip(&want).enumerate() {
                    assert_close(&format!("{what} gradient {index}"), got, want, 1e-5);
                }
                let logits = fast.logits(&data.x, data.len()).unwrap();
                let want = mlp.forward_eval(&x).unwrap().flatten_all().unwrap();
                assert_close(
                    &format!("{what} logits"),
                    &logits,
                    &want.to_vec1().unwrap(),
                    1e-5,
                );
            }
        }
    }
}

#[test]
fn both_engines_train_to_the_same_weights() {
    let (train_set, valid_set) = (random_data(90, 2), random_data(40, 3));
    let settings = TrainSettings::new(3, 0, 4);
    for optimizer in [Optimizer::Adam, Optimizer::SgdMomentum] {
        let genome = genome(Activation::Tanh, true, 0.2, optimizer);
        let run = |engine| {
            train_with_engine(&genome, &train_set, Some(&valid_set), &settings, engine).unwrap()
        };
        let (fast, autograd) = (run(TrainEngine::Fast), run(TrainEngine::Autograd));
        assert_eq!(
            (fast.status, fast.epochs_run, fast.best_epoch),
            (autograd.status, autograd.epochs_run, autograd.best_epoch),
            "{optimizer:?}"
        );
        let (fast_weights, autograd_weights) = (
            fast.model.weights().unwrap(),
            autograd.model.weights().unwrap(),
        );
        for (index, (got, want)) in fast_weights.iter().zip(&autograd_weights).enumerate() {
            assert_close(&format!("{optimizer:?} tensor {index}"), got, want, 1e-4);
        }
        let (fast_scores, autograd_scores) = (fast.scores.unwrap(), autograd.scores.unwrap());
        assert!((fast_scores.log_loss - autograd_scores.log_loss).abs() < 1e-4);
    }
}

#[test]
fn weighted_gradients_agree_with_autograd_for_every_activation() {
    // Invented class weights, one per class; the NumPy check of the weighted loss itself is
    // in tests/trainer_reference.rs.
    let class_weights = [0.5f32, 2.0, 1.25, 3.0];
    let data = random_data(11, 1);
    for (case, activation) in ACTIVATIONS.into_iter().enumerate() {
        let genome = genome(activation, true, 0.3, Optimizer::Adam);
        let weights = random_weights(&genome, 200 + case as u64);
        let mlp = Mlp::from_weights(&genome, N_INPUTS, N_CLASSES, &weights).unwrap();
        let x = Tensor::from_slice(&data.x, (data.len(), N_INPUTS), &Device::Cpu).unwrap();
        let y = Tensor::from_slice(&data.y, data.len(), &Device::Cpu).unwrap();
        let reference =
            compute_weighted_gradients(&mlp, &x, &y, &class_weights, &mut seeded_rng(5, 9))
                .unwrap();
        let mut fast = FastMlpLearner::new(&genome, N_INPUTS, N_CLASSES, &weights).unwrap();
        fast.set_class_weights(Some(&class_weights)).unwrap();
        let (loss, gradients) = fast
            .gradients(&data.x, &data.y, data.len(), &mut seeded_rng(5, 9))
            .unwrap();
        let what = format!("{activation:?} weighted");
        assert_close(&format!("{what} loss"), &[loss], &[reference.loss], 1e-5);
        for (index, (got, want)) in gradients
            .iter()
            .zip(reference.to_vecs().unwrap())
            .enumerate()
        {
            assert_close(&format!("{what} gradient {index}"), got, &want, 1e-5);
        }
        let unweighted = compute_gradients(&mlp, &x, &y, &mut seeded_rng(5, 9)).unwrap();
        assert!(
            (unweighted.loss - reference.loss).abs() > 1e-4,
            "{what}: the weights change the loss"
        );
    }
}

#[test]
fn both_engines_train_to_the_same_weights_with_class_weights() {
    let (train_set, valid_set) = (random_data(90, 2), random_data(40, 3));
    let mut settings = TrainSettings::new(3, 0, 4);
    settings.class_weights = Some(vec![0.5, 2.0, 1.25, 3.0]);
    let genome = genome(Activation::Tanh, true, 0.2, Optimizer::Adam);
    let run = |settings: &TrainSettings, engine| {
        train_with_engine(&genome, &train_set, Some(&valid_set), settings, engine).unwrap()
    };
    let (fast, autograd) = (
        run(&settings, TrainEngine::Fast),
        run(&settings, TrainEngine::Autograd),
    );
    assert_eq!(
        (fast.status, fast.epochs_run, fast.best_epoch),
        (autograd.status, autograd.epochs_run, autograd.best_epoch)
    );
    let (fast_weights, autograd_weights) = (
        fast.model.weights().unwrap(),
        autograd.model.weights().unwrap(),
    );
    for (index, (got, want)) in fast_weights.iter().zip(&autograd_weights).enumerate() {
        assert_close(&format!("weighted tensor {index}"), got, want, 1e-4);
    }
    // The weights reach the result: an unweighted run ends elsewhere.
    let plain = run(&TrainSettings::new(3, 0, 4), TrainEngine::Fast);
    assert_ne!(plain.model.weights().unwrap(), fast_weights);
}

#[test]
fn fit_drives_both_learners_and_restores_the_best_epoch() {
    // Labels independent of features: the validation loss soon rises and training stops early.
    let (train_set, valid_set) = (random_data(60, 5), random_data(60, 6));
    let mut genome = genome(Activation::Relu, false, 0.0, Optimizer::Adam);
    genome.training.learning_rate = 0.05;
    let settings = TrainSettings::new(60, 2, 7);
    let mut fast = FastMlpLearner::build(&genome, N_INPUTS, N_CLASSES, 7).unwrap();
    let fitted = fit(&mut fast, &train_set, Some(&valid_set), &settings, 8).unwrap();
    assert_eq!(fitted.status, TrainStatus::EarlyStopped);
    assert_eq!(fitted.epochs_run, fitted.best_epoch + 2);
    assert_eq!(fitted.epoch_losses.len() as u32, fitted.epochs_run);

    let mlp = Mlp::build(&genome, N_INPUTS, N_CLASSES, 7).unwrap();
    let mut autograd = AutogradLearner::new(mlp, &genome.training).unwrap();
    let cut = TrainSettings {
        max_epochs: fitted.best_epoch,
        patience: 0,
        ..settings
    };
    let reference = fit(&mut autograd, &train_set, Some(&valid_set), &cut, 8).unwrap();
    assert_eq!(reference.best_epoch, fitted.best_epoch);
    let (got, want) = (fast.snapshot().unwrap(), autograd.snapshot().unwrap());
    for (index, (got, want)) in got.tensors().iter().zip(want.tensors()).enumerate() {
        assert_close(&format!("tensor {index}"), got, want, 1e-4);
    }
}

#[test]
fn fast_learner_rejects_bad_batches_and_weights() {
    let genome = genome(Activation::Relu, false, 0.0, Optimizer::Adam);
    let mut learner = FastMlpLearner::build(&genome, N_INPUTS, N_CLASSES, 1).unwrap();
    let mut rng = seeded_rng(1, 1);
    assert!(learner.train_step(&[0.0; 5], &[0], 1, &mut rng).is_err());
    assert!(learner
        .train_step(&[0.0; N_INPUTS], &[9], 1, &mut rng)
        .is_err());
    assert!(learner.logits(&[0.0; 7], 1).is_err());
    let mut weights = random_weights(&genome, 1);
    weights[2].pop();
    assert!(FastMlpLearner::new(&genome, N_INPUTS, N_CLASSES, &weights).is_err());
}

#[test]
fn no_hidden_layer_and_batches_larger_than_the_data_agree_with_autograd() {
    let data = random_data(13, 8);
    let mut genome = genome(Activation::Relu, false, 0.0, Optimizer::SgdMomentum);
    genome.layers.clear();
    genome.training.batch_size = 64;
    let settings = TrainSettings::new(4, 0, 9);
    let run = |engine| train_with_engine(&genome, &data, Some(&data), &settings, engine).unwrap();
    let (fast, autograd) = (run(TrainEngine::Fast), run(TrainEngine::Autograd));
    assert_eq!(fast.status, TrainStatus::Completed);
    let (got, want) = (
        fast.model.weights().unwrap(),
        autograd.model.weights().unwrap(),
    );
    for (index, (got, want)) in got.iter().zip(&want).enumerate() {
        assert_close(&format!("tensor {index}"), got, want, 1e-5);
    }
}
