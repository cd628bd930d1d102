//! Behaviour of the network builder and the trainer on small synthetic problems.
//!
//! All data here is invented test data, generated inside the tests from fixed seeds.

use gemmule::data::Dataset;
use gemmule::genome::{Activation, LayerGene, LayerGenome, Optimizer, TrainGenes};
use gemmule::net::{layer_cost, Mlp};
use gemmule::train::{
    fit, score, train, FastMlpLearner, Learner, Objective, Scores, Snapshot, TrainSettings,
    TrainStatus, TrainedModel, Watch,
};
use gemmule::Error;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const N_FEATURES: usize = 4;
const N_CLASSES: usize = 3;

fn gene(width: u32, activation: Activation, residual: bool, dropout: f32) -> LayerGene {
    LayerGene {
        width,
        activation,
        residual,
        dropout,
    }
}

fn genome(layers: Vec<LayerGene>, learning_rate: f64, optimizer: Optimizer) -> LayerGenome {
    LayerGenome {
        layers,
        training: TrainGenes {
            learning_rate,
            batch_size: 16,
            weight_decay: 0.0,
            optimizer,
        },
    }
}

fn small_genome() -> LayerGenome {
    genome(
        vec![
            gene(16, Activation::Relu, false, 0.1),
            gene(16, Activation::Tanh, true, 0.0),
        ],
        0.01,
        Optimizer::Adam,
    )
}

/// Invented test data: `per_class` rows around each of three centres in 4-D
/// (centre c has 3.0 in feature c, 0 elsewhere), with uniform noise of ±`spread`.
fn blobs(per_class: usize, spread: f32, seed: u64) -> Dataset {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut x = Vec::new();
    let mut y = Vec::new();
    for _ in 0..per_class {
        for class in 0..N_CLASSES {
            for feature in 0..N_FEATURES {
                let centre = if feature == class { 3.0 } else { 0.0 };
                x.push(centre + rng.gen_range(-spread..spread));
            }
            y.push(class as u32);
        }
    }
    Dataset::new(x, y, N_FEATURES, N_CLASSES).unwrap()
}

/// Invented test data: standard-uniform features with labels drawn independently of them.
fn noise(rows: usize, seed: u64) -> Dataset {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let x = (0..rows * N_FEATURES)
        .map(|_| rng.gen_range(-1.0..1.0))
        .collect();
    let y = (0..rows)
        .map(|_| rng.gen_range(0..N_CLASSES as u32))
        .collect();
    Dataset::new(x, y, N_FEATURES, N_CLASSES).unwrap()
}

fn settings(max_epochs: u32, patience: u32, seed: u64) -> TrainSettings {
    TrainSettings::new(max_epochs, patience, seed)
}

#[test]
fn param_count_of_built_networks_equals_layer_cost() {
    let genomes = [
        genome(vec![], 0.01, Optimizer::Adam),
        genome(
            vec![gene(8, Activation::Relu, false, 0.0)],
            0.01,
            Optimizer::Adam,
        ),
        genome(
            vec![
                gene(16, Activation::Gelu, false, 0.2),
                gene(16, Activation::Tanh, true, 0.0),
                gene(16, Activation::Sigmoid, true, 0.5),
                gene(5, Activation::Relu, false, 0.0),
            ],
            0.01,
            Optimizer::SgdMomentum,
        ),
    ];
    for genome in &genomes {
        let mlp = Mlp::build(genome, 6, 3, 7).unwrap();
        assert_eq!(
            mlp.param_count(),
            layer_cost(genome, 6, 3).params,
            "{genome:?}"
        );
    }
}

#[test]
fn layer_cost_matches_hand_arithmetic() {
    // Hand arithmetic, 6 inputs, 3 classes, hidden widths 16, 16 (residual), 8:
    // madds  = 6·16 + 16·16 + 16·8 + 8·3 = 96 + 256 + 128 + 24 = 504
    // params = madds + biases (16 + 16 + 8 + 3 = 43) = 547
    let layers = vec![
        gene(16, Activation::Relu, false, 0.0),
        gene(16, Activation::Relu, true, 0.0),
        gene(8, Activation::Tanh, false, 0.0),
    ];
    let cost = layer_cost(&genome(layers, 0.01, Optimizer::Adam), 6, 3);
    assert_eq!((cost.params, cost.madds), (547, 504));
    // No hidden layer (logistic regression): madds = 6·3 = 18, params = 18 + 3 = 21.
    let cost = layer_cost(&genome(vec![], 0.01, Optimizer::Adam), 6, 3);
    assert_eq!((cost.params, cost.madds), (21, 18));
}

#[test]
fn same_seed_gives_bit_identical_results() {
    let (train_set, valid_set) = (blobs(40, 1.5, 1), blobs(20, 1.5, 2));
    let genome = small_genome();
    let first = train(&genome, &train_set, Some(&valid_set), &settings(4, 0, 11)).unwrap();
    let second = train(&genome, &train_set, Some(&valid_set), &settings(4, 0, 11)).unwrap();
    assert_eq!(first.scores, second.scores);
    assert_eq!(
        first.model.weights().unwrap(),
        second.model.weights().unwrap()
    );
    assert_eq!(
        (first.status, first.epochs_run, first.best_epoch),
        (second.status, second.epochs_run, second.best_epoch)
    );
    let other_seed = train(&genome, &train_set, Some(&valid_set), &settings(4, 0, 12)).unwrap();
    assert_ne!(
        first.model.weights().unwrap(),
        other_seed.model.weights().unwrap()
    );
}

#[test]
fn early_stopping_restores_the_best_epoch() {
    // Labels independent of features: a wide network overfits and the validation loss soon rises.
    let (train_set, valid_set) = (noise(60, 3), noise(60, 4));
    let genome = genome(
        vec![gene(64, Activation::Relu, false, 0.0)],
        0.05,
        Optimizer::Adam,
    );
    let patience = 2;
    let stopped = train(
        &genome,
        &train_set,
        Some(&valid_set),
        &settings(60, patience, 5),
    )
    .unwrap();
    assert_eq!(stopped.status, TrainStatus::EarlyStopped);
    assert!(stopped.best_epoch >= 1 && stopped.best_epoch <= stopped.epochs_run);
    assert_eq!(stopped.epochs_run, stopped.best_epoch + patience);

    // Epoch k's randomness depends only on the seed and k, so a run cut at the best epoch
    // ends with exactly the weights the early-stopped run restored.
    let cut = train(
        &genome,
        &train_set,
        Some(&valid_set),
        &settings(stopped.best_epoch, 0, 5),
    )
    .unwrap();
    assert_eq!(cut.status, TrainStatus::Completed);
    assert_eq!(
        cut.model.weights().unwrap(),
        stopped.model.weights().unwrap()
    );
    assert_eq!(cut.scores, stopped.scores);
}

#[test]
fn without_patience_all_epochs_run() {
    let (train_set, valid_set) = (noise(30, 3), noise(30, 4));
    let genome = genome(
        vec![gene(32, Activation::Relu, false, 0.0)],
        0.05,
        Optimizer::Adam,
    );
    let outcome = train(&genome, &train_set, Some(&valid_set), &settings(6, 0, 5)).unwrap();
    assert_eq!(
        (outcome.status, outcome.epochs_run),
        (TrainStatus::Completed, 6)
    );
    assert!(outcome.best_epoch >= 1 && outcome.best_epoch <= 6);
    let no_valid = train(&genome, &train_set, None, &settings(3, 2, 5)).unwrap();
    assert_eq!(
        (no_valid.status, no_valid.epochs_run, no_valid.best_epoch),
        (TrainStatus::Completed, 3, 3)
    );
    assert_eq!(no_valid.scores, None);
}

#[test]
fn huge_inputs_with_learning_rate_10_diverge_without_panicking() {
    // SGD steps grow with the gradient, so the weights overflow within a few steps. (Adam's
    // steps are bounded by its learning rate, so it stays finite here; NaN features cover it.)
    let mut train_set = blobs(20, 0.5, 6);
    train_set.x.iter_mut().for_each(|v| *v *= 1e30);
    let valid_set = blobs(5, 0.5, 7);
    let genome = genome(
        vec![gene(8, Activation::Relu, false, 0.0)],
        10.0,
        Optimizer::SgdMomentum,
    );
    let outcome = train(&genome, &train_set, Some(&valid_set), &settings(20, 0, 8)).unwrap();
    assert_eq!(outcome.status, TrainStatus::Diverged);
    assert_eq!(outcome.scores, None);
    assert!(outcome.epochs_run < 20);
}

#[test]
fn nan_features_diverge_on_the_first_epoch() {
    let mut train_set = blobs(10, 0.5, 6);
    train_set.x[5] = f32::NAN;
    for optimizer in [Optimizer::Adam, Optimizer::SgdMomentum] {
        let mut genome = small_genome();
        genome.training.optimizer = optimizer;
        let outcome = train(
            &genome,
            &train_set,
            Some(&blobs(5, 0.5, 7)),
            &settings(5, 0, 8),
        )
        .unwrap();
        let summary = (outcome.status, outcome.epochs_run, outcome.best_epoch);
        assert_eq!(summary, (TrainStatus::Diverged, 1, 0), "{optimizer:?}");
        assert_eq!(outcome.scores, None);
    }
}

#[test]
fn small_networks_learn_three_blobs() {
    let (train_set, valid_set) = (blobs(100, 1.5, 21), blobs(50, 1.5, 22));
    let adam = genome(
        vec![gene(16, Activation::Relu, false, 0.0)],
        0.01,
        Optimizer::Adam,
    );
    let sgd = genome(
        vec![gene(16, Activation::Gelu, false, 0.0)],
        0.05,
        Optimizer::SgdMomentum,
    );
    for genome in [adam, sgd] {
        let outcome = train(&genome, &train_set, Some(&valid_set), &settings(5, 0, 3)).unwrap();
        let scores = outcome.scores.unwrap();
        assert!(
            scores.accuracy >= 0.9,
            "{:?}: {scores:?}",
            genome.training.optimizer
        );
        assert_eq!(outcome.status, TrainStatus::Completed);
    }
}

#[test]
fn weight_decay_shrinks_weights() {
    let train_set = blobs(30, 1.5, 21);
    let squared_norm = |weight_decay: f64| -> f64 {
        let mut genome = small_genome();
        genome.training.weight_decay = weight_decay;
        let outcome = train(&genome, &train_set, None, &settings(5, 0, 3)).unwrap();
        let weights = outcome.model.weights().unwrap();
        weights
            .iter()
            .flatten()
            .map(|&w| f64::from(w) * f64::from(w))
            .sum()
    };
    assert!(squared_norm(0.5) < squared_norm(0.0));
}

#[test]
fn saved_models_load_with_identical_predictions() {
    let train_set = blobs(20, 1.0, 31);
    let genome = small_genome();
    let outcome = train(&genome, &train_set, None, &settings(2, 0, 4)).unwrap();
    let folder = tempfile::tempdir().unwrap();
    let path = folder.path().join("model.safetensors");
    outcome.model.save_safetensors(&path).unwrap();
    let loaded =
        TrainedModel::load_safetensors(&path, genome.clone(), N_FEATURES, N_CLASSES).unwrap();
    let rows = train_set.len();
    let before = outcome.model.predict_proba(&train_set.x, rows).unwrap();
    let after = loaded.predict_proba(&train_set.x, rows).unwrap();
    assert_eq!(before, after);
    assert_eq!(loaded.param_count(), outcome.model.param_count());
    for row in before.chunks(N_CLASSES) {
        assert!((row.iter().sum::<f32>() - 1.0).abs() < 1e-5);
    }
}

#[test]
fn loading_with_a_different_genome_names_the_tensor() {
    let train_set = blobs(10, 1.0, 31);
    let genome = small_genome();
    let outcome = train(&genome, &train_set, None, &settings(1, 0, 4)).unwrap();
    let folder = tempfile::tempdir().unwrap();
    let path = folder.path().join("model.safetensors");
    outcome.model.save_safetensors(&path).unwrap();

    let mut narrower = genome.clone();
    narrower.layers[0].width = 12;
    narrower.layers[1].width = 12;
    match TrainedModel::load_safetensors(&path, narrower, N_FEATURES, N_CLASSES) {
        Err(Error::Input(message)) => {
            assert!(message.contains("layers.0.weight"), "{message}");
            assert!(message.contains("model.safetensors"), "{message}");
        }
        other => panic!("expected an input error, got {other:?}"),
    }
    let mut deeper = genome.clone();
    deeper.layers.push(gene(16, Activation::Relu, true, 0.0));
    match TrainedModel::load_safetensors(&path, deeper, N_FEATURES, N_CLASSES) {
        Err(Error::Input(message)) => assert!(message.contains("layers.2.weight"), "{message}"),
        other => panic!("expected an input error, got {other:?}"),
    }
    match TrainedModel::load_safetensors(&path, genome, N_FEATURES + 1, N_CLASSES) {
        Err(Error::Input(message)) => assert!(message.contains("layers.0.weight"), "{message}"),
        other => panic!("expected an input error, got {other:?}"),
    }
}

#[test]
fn bad_requests_are_input_errors() {
    let train_set = blobs(5, 1.0, 1);
    let genome = small_genome();
    let zero_epochs = train(&genome, &train_set, None, &settings(0, 0, 1));
    assert!(matches!(zero_epochs, Err(Error::Input(_))));
    let empty = Dataset::new(vec![], vec![], N_FEATURES, N_CLASSES).unwrap();
    assert!(matches!(
        train(&genome, &train_set, Some(&empty), &settings(1, 0, 1)),
        Err(Error::Input(_))
    ));
    let outcome = train(&genome, &train_set, None, &settings(1, 0, 1)).unwrap();
    assert!(matches!(
        outcome.model.predict_proba(&[1.0; 7], 2),
        Err(Error::Input(_))
    ));
}

#[test]
fn scores_match_hand_computed_values() {
    // Invented test data. Labels 0,0,1,2; predictions (argmax) 0,1,1,1; class 2 is never
    // predicted. Row 4 ties classes 1 and 2 at 0.4: the lower index (1) wins.
    let probabilities = [
        0.7, 0.2, 0.1, //
        0.2, 0.5, 0.3, //
        0.1, 0.8, 0.1, //
        0.2, 0.4, 0.4,
    ];
    let scores = score(&probabilities, &[0, 0, 1, 2], 3);
    // accuracy = 2 correct / 4 = 0.5
    assert!((scores.accuracy - 0.5).abs() < 1e-12);
    // recalls: class 0 1/2, class 1 1/1, class 2 0/1 → mean 0.5
    assert!((scores.balanced_accuracy - 0.5).abs() < 1e-12);
    // F1 = 2TP/(2TP+FP+FN): class 0 2/(2+0+1) = 2/3, class 1 2/(2+2+0) = 1/2, class 2 0 → mean 7/18
    assert!((scores.macro_f1 - 7.0 / 18.0).abs() < 1e-12);
    // log loss = −(ln 0.7 + ln 0.2 + ln 0.8 + ln 0.4)/4 (f32 inputs, so 1e-6)
    let want = -((0.7f64).ln() + (0.2f64).ln() + (0.8f64).ln() + (0.4f64).ln()) / 4.0;
    assert!((scores.log_loss - want).abs() < 1e-6);

    // A class absent from the labels but predicted scores F1 0; p = 0 is clipped to 1e-15.
    let scores = score(&[0.0, 1.0, 1.0, 0.0], &[0, 0], 2);
    assert_eq!((scores.accuracy, scores.balanced_accuracy), (0.5, 0.5));
    // class 0: 2·1/(2+0+1) = 2/3; class 1 (predicted once, never a label): 0 → mean 1/3
    assert!((scores.macro_f1 - 1.0 / 3.0).abs() < 1e-12);
    assert!((scores.log_loss - (-(1e-15f64).ln()) / 2.0).abs() < 1e-9);

    assert!(score(&[0.5, 0.5], &[0, 1], 2).accuracy.is_nan());
}

#[test]
fn objectives_are_oriented_so_higher_is_better() {
    let scores = Scores {
        accuracy: 0.9,
        balanced_accuracy: 0.8,
        macro_f1: 0.7,
        log_loss: 0.3,
    };
    let values: Vec<f64> = Objective::ALL.iter().map(|o| o.value(&scores)).collect();
    assert_eq!(values, vec![0.9, 0.8, 0.7, -0.3]);
    let names: Vec<&str> = Objective::ALL.iter().map(|o| o.name()).collect();
    assert_eq!(
        names,
        vec!["accuracy", "balanced_accuracy", "macro_f1", "log_loss"]
    );
    assert_eq!(
        serde_json::to_string(&Objective::MacroF1).unwrap(),
        "\"macro_f1\""
    );
    for objective in Objective::ALL {
        let parsed = <Objective as clap::ValueEnum>::from_str(objective.name(), false);
        assert_eq!(parsed, Ok(objective));
        let kebab = objective.name().replace('_', "-");
        assert_eq!(
            <Objective as clap::ValueEnum>::from_str(&kebab, false),
            Ok(objective)
        );
    }
}

/// A learner that keeps a copy of every batch of logits `fit` asks for: one validation pass
/// per epoch, then one for the final scores.
struct Recorder {
    inner: FastMlpLearner,
    seen: Vec<Vec<f32>>,
}

impl Learner for Recorder {
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
        rng: &mut dyn rand::RngCore,
    ) -> gemmule::Result<f32> {
        self.inner.train_step(x, labels, rows, rng)
    }
    fn logits(&mut self, x: &[f32], rows: usize) -> gemmule::Result<Vec<f32>> {
        let logits = self.inner.logits(x, rows)?;
        self.seen.push(logits.clone());
        Ok(logits)
    }
    fn snapshot(&self) -> gemmule::Result<Snapshot> {
        self.inner.snapshot()
    }
    fn restore(&mut self, snapshot: &Snapshot) -> gemmule::Result<()> {
        self.inner.restore(snapshot)
    }
    fn all_finite(&self) -> gemmule::Result<bool> {
        self.inner.all_finite()
    }
}

/// Validation (loss, accuracy) of one epoch's logits, computed as the epoch loop does: the
/// mean cross-entropy by log-sum-exp in f64, the accuracy of the f32 softmax.
fn loss_and_accuracy(logits: &[f32], labels: &[u32]) -> (f64, f64) {
    let mut total = 0.0f64;
    let mut probabilities = logits.to_vec();
    for (row, &label) in probabilities.chunks_mut(N_CLASSES).zip(labels) {
        let max = row.iter().copied().fold(f32::NEG_INFINITY, f32::max);
        let sum: f64 = row.iter().map(|&z| (z as f64 - max as f64).exp()).sum();
        total += max as f64 + sum.ln() - row[label as usize] as f64;
        let mut row_total = 0.0f32;
        for value in row.iter_mut() {
            *value = (*value - max).exp();
            row_total += *value;
        }
        for value in row.iter_mut() {
            *value /= row_total;
        }
    }
    let accuracy = score(&probabilities, labels, N_CLASSES).accuracy;
    (total / labels.len() as f64, accuracy)
}

/// Runs `fit` for `max_epochs` epochs (patience 0) while recording the validation curve:
/// (loss, accuracy) after each epoch, exactly as the epoch loop saw them.
fn validation_curve(
    genome: &LayerGenome,
    train_set: &Dataset,
    valid_set: &Dataset,
    max_epochs: u32,
) -> Vec<(f64, f64)> {
    let mut recorder = Recorder {
        inner: FastMlpLearner::build(genome, N_FEATURES, N_CLASSES, 5).unwrap(),
        seen: Vec::new(),
    };
    let batch = genome.training.batch_size as usize;
    let fitted = fit(
        &mut recorder,
        train_set,
        Some(valid_set),
        &settings(max_epochs, 0, 5),
        batch,
    )
    .unwrap();
    assert_eq!(fitted.epochs_run, max_epochs);
    recorder.seen[..max_epochs as usize]
        .iter()
        .map(|logits| loss_and_accuracy(logits, &valid_set.y))
        .collect()
}

/// The rule of `Watch::Objective` replayed on a recorded curve: best = highest accuracy, ties
/// by lower loss, then the earlier epoch; stop after `patience` epochs without a better pair.
/// Returns (epochs run, best epoch).
fn replay_objective_watch(curve: &[(f64, f64)], patience: u32) -> (u32, u32) {
    let (mut best, mut best_epoch, mut waited) = (curve[0], 1, 0);
    for (index, &(loss, accuracy)) in curve.iter().enumerate().skip(1) {
        if accuracy > best.1 || (accuracy == best.1 && loss < best.0) {
            (best, best_epoch, waited) = ((loss, accuracy), index as u32 + 1, 0);
        } else {
            waited += 1;
            if patience > 0 && waited >= patience {
                return (index as u32 + 1, best_epoch);
            }
        }
    }
    (curve.len() as u32, best_epoch)
}

fn watching_accuracy(max_epochs: u32, patience: u32) -> TrainSettings {
    let mut settings = settings(max_epochs, patience, 5);
    settings.watch = Watch::Objective(Objective::Accuracy);
    settings
}

/// One invented noisy-blobs problem (data seed `seed`, validation seed `seed + 100`), the
/// network trained on it and its 30-epoch validation curve.
struct NoisyCase {
    genome: LayerGenome,
    train_set: Dataset,
    valid_set: Dataset,
    curve: Vec<(f64, f64)>,
}

fn noisy_case(seed: u64) -> NoisyCase {
    let (train_set, valid_set) = (blobs_noisy(30, 2.5, seed), blobs_noisy(30, 2.5, seed + 100));
    let genome = genome(
        vec![gene(32, Activation::Relu, false, 0.0)],
        0.01,
        Optimizer::Adam,
    );
    let curve = validation_curve(&genome, &train_set, &valid_set, 30);
    NoisyCase {
        genome,
        train_set,
        valid_set,
        curve,
    }
}

/// Epochs (1-based) of the highest accuracy of a curve.
fn accuracy_peaks(curve: &[(f64, f64)]) -> Vec<u32> {
    let max_accuracy = curve.iter().map(|c| c.1).fold(0.0, f64::max);
    (0..curve.len())
        .filter(|&e| curve[e].1 == max_accuracy)
        .map(|e| e as u32 + 1)
        .collect()
}

/// The first epoch (1-based) of the lowest loss among `epochs`.
fn lowest_loss_epoch(curve: &[(f64, f64)], epochs: impl Iterator<Item = u32>) -> u32 {
    epochs
        .min_by(|&a, &b| {
            let (a_loss, b_loss) = (curve[a as usize - 1].0, curve[b as usize - 1].0);
            a_loss.total_cmp(&b_loss).then(a.cmp(&b))
        })
        .unwrap()
}

#[test]
fn watching_the_objective_keeps_the_epoch_of_highest_accuracy() {
    // The first invented data seed whose validation accuracy peaks once, after the epoch of
    // the lowest validation loss (on the development machine: seed 0, loss lowest at epoch 7,
    // accuracy highest at epoch 19). The expectations come from the recorded curve.
    let case = (0..30)
        .map(noisy_case)
        .find(|case| {
            let peaks = accuracy_peaks(&case.curve);
            peaks.len() == 1 && peaks[0] > lowest_loss_epoch(&case.curve, 1..=30)
        })
        .expect("a noisy problem whose accuracy keeps rising after the loss minimum");
    let NoisyCase {
        genome,
        train_set,
        valid_set,
        curve,
    } = &case;
    let loss_best = lowest_loss_epoch(curve, 1..=30);
    let peak = accuracy_peaks(curve)[0];

    let by_loss = train(genome, train_set, Some(valid_set), &settings(30, 0, 5)).unwrap();
    assert_eq!(by_loss.best_epoch, loss_best);
    let by_accuracy = train(
        genome,
        train_set,
        Some(valid_set),
        &watching_accuracy(30, 0),
    )
    .unwrap();
    assert_eq!(by_accuracy.status, TrainStatus::Completed);
    assert_eq!(by_accuracy.best_epoch, peak);
    assert_ne!(by_accuracy.best_epoch, by_loss.best_epoch);
    assert_eq!(
        by_accuracy.scores.unwrap().accuracy,
        curve[peak as usize - 1].1
    );
    assert!(by_accuracy.scores.unwrap().accuracy > by_loss.scores.unwrap().accuracy);

    // Patience counts epochs without a better (accuracy, loss) pair.
    for patience in [2, 3, 5, 8] {
        let (epochs_run, best_epoch) = replay_objective_watch(curve, patience);
        let run = train(
            genome,
            train_set,
            Some(valid_set),
            &watching_accuracy(30, patience),
        )
        .unwrap();
        assert_eq!(
            (run.epochs_run, run.best_epoch),
            (epochs_run, best_epoch),
            "patience {patience}"
        );
        let status = if epochs_run < 30 {
            TrainStatus::EarlyStopped
        } else {
            TrainStatus::Completed
        };
        assert_eq!(run.status, status, "patience {patience}");
    }
}

#[test]
fn equal_accuracy_is_broken_by_the_lower_validation_loss() {
    // The first invented data seed whose highest accuracy is reached at several epochs, a
    // later one with a lower validation loss than the first (on the development machine:
    // seed 7, peaks at epochs 7, 8, 14 and 17, epoch 14 lowest in loss).
    let case = (0..40)
        .map(noisy_case)
        .find(|case| {
            let peaks = accuracy_peaks(&case.curve);
            lowest_loss_epoch(&case.curve, peaks.iter().copied()) != peaks[0]
        })
        .expect("a noisy problem with tied accuracy peaks");
    let peaks = accuracy_peaks(&case.curve);
    let want = lowest_loss_epoch(&case.curve, peaks.iter().copied());
    let run = train(
        &case.genome,
        &case.train_set,
        Some(&case.valid_set),
        &watching_accuracy(30, 0),
    )
    .unwrap();
    assert_eq!(run.best_epoch, want, "peaks {peaks:?}");
    assert!(want > peaks[0]);
}

#[test]
fn train_settings_json_leaves_out_the_defaults() {
    let plain = settings(20, 5, 3);
    let json = serde_json::to_string(&plain).unwrap();
    assert_eq!(json, r#"{"max_epochs":20,"patience":5,"seed":3}"#);
    let back: TrainSettings = serde_json::from_str(&json).unwrap();
    assert_eq!(back, plain);
    assert_eq!((back.class_weights, back.watch), (None, Watch::Loss));

    let mut full = watching_accuracy(20, 5);
    full.class_weights = Some(vec![0.5, 2.0, 1.0]);
    let json = serde_json::to_string(&full).unwrap();
    assert_eq!(
        json,
        r#"{"max_epochs":20,"patience":5,"seed":5,"class_weights":[0.5,2.0,1.0],"watch":{"objective":"accuracy"}}"#
    );
    assert_eq!(serde_json::from_str::<TrainSettings>(&json).unwrap(), full);
    let loss: Watch = serde_json::from_str(r#""loss""#).unwrap();
    assert_eq!(loss, Watch::default());
}

#[test]
fn bad_class_weights_are_input_errors() {
    let data = blobs(5, 0.5, 1);
    for (weights, needle) in [
        (vec![1.0, 2.0], "2 class weights were given for 3 classes"),
        (vec![1.0, 0.0, 1.0], "the weight of class 1 is 0"),
        (
            vec![1.0, 1.0, f32::INFINITY],
            "the weight of class 2 is inf",
        ),
    ] {
        let mut settings = settings(2, 0, 1);
        settings.class_weights = Some(weights);
        let error = train(&small_genome(), &data, Some(&data), &settings).unwrap_err();
        assert!(matches!(error, Error::Input(_)), "{error:?}");
        assert!(
            error.to_string().contains(needle),
            "{error} lacks {needle:?}"
        );
    }
}

/// Invented test data: [`blobs`] with a seeded 15% of the labels redrawn at random, so that
/// the validation loss and the accuracy disagree about the best epoch.
fn blobs_noisy(per_class: usize, spread: f32, seed: u64) -> Dataset {
    let mut data = blobs(per_class, spread, seed);
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0xabc);
    for label in data.y.iter_mut() {
        if rng.gen_bool(0.15) {
            *label = rng.gen_range(0..N_CLASSES as u32);
        }
    }
    data
}
