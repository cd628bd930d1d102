//! K-fold scoring against scikit-learn: a fixed small MLP (one hidden layer
//! of 32 ReLU units, Adam) scored by gemmule's k-fold evaluator on exactly
//! the folds scikit-learn's `StratifiedKFold(5, shuffle=True,
//! random_state=0)` made (tests/data/splits/, copied from shared/data/splits
//! with the provenance in tests/data/README.md), each fold's preprocessing
//! fitted on the other four folds as scikit-learn's scaler was.
//!
//! Reference figures (shared/data/README.md, scikit-learn 1.9.1,
//! MLPClassifier(32), adam, max_iter 500, random_state 0; mean ± std over
//! the 5 folds): iris 0.9467 ± 0.0267, wine 0.9721 ± 0.0176,
//! digits 0.9716 ± 0.0118; logistic regression 0.9600 / 0.9832 / 0.9694.
//!
//! Tolerance: the two trainers differ (scikit-learn trains up to 500
//! epochs with its own stopping rule, gemmule 60 epochs with early stopping
//! on the held-out fold), so fold scores differ by a few rows. We accept a
//! mean within 0.04 of the reference on iris and wine (about one held-out
//! row per fold: 1/30 and 1/36) and within 0.02 on digits (about 7 of 360
//! rows per fold), and a standard error within the same margin of the
//! reference's std/√5. Also: the baselines over the same folds (majority
//! class = the reference's majority share as a held-out mean).

use gemmule::data::{read_table, CsvOptions, FoldSource};
use gemmule::evaluate::{TrainerSettings, TrainingEvaluator};
use gemmule::genome::{Activation, AnyGenome, LayerGene, LayerGenome, Optimizer, TrainGenes};
use gemmule::search::{Evaluator, MAJORITY_BASELINE};
use std::path::Path;

fn data(name: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

/// scikit-learn's held-out folds for `name`, as a fold index per row.
fn sklearn_folds(name: &str, rows: usize) -> Vec<usize> {
    let text = std::fs::read_to_string(data(&format!("splits/{name}.json"))).expect("splits");
    let value: serde_json::Value = serde_json::from_str(&text).expect("JSON");
    let folds = value["cv5_test_folds"].as_array().expect("cv5_test_folds");
    let mut assignment = vec![usize::MAX; rows];
    for (fold, members) in folds.iter().enumerate() {
        for row in members.as_array().expect("rows") {
            assignment[row.as_u64().expect("row") as usize] = fold;
        }
    }
    assert!(assignment.iter().all(|&f| f < 5), "every row in one fold");
    assignment
}

fn mlp32() -> AnyGenome {
    AnyGenome::Layers(LayerGenome {
        layers: vec![LayerGene {
            width: 32,
            activation: Activation::Relu,
            residual: false,
            dropout: 0.0,
        }],
        training: TrainGenes {
            learning_rate: 0.003,
            batch_size: 16,
            weight_decay: 0.0,
            optimizer: Optimizer::Adam,
        },
    })
}

/// (mean accuracy, standard error, majority-class mean) over scikit-learn's folds.
fn cross_validate(name: &str) -> (f64, f64, f64) {
    let table = read_table(&data(&format!("{name}.csv")), &CsvOptions::default()).expect("table");
    let rows = table.n_rows();
    let source = FoldSource::whole_table(table, false).expect("fold source");
    let folds = source
        .folds_from(&sklearn_folds(name, rows), 5)
        .expect("folds");
    let settings = TrainerSettings {
        max_epochs: 60,
        patience: 10,
        ..TrainerSettings::default()
    };
    let evaluator = TrainingEvaluator::with_folds(folds, None, settings).expect("evaluator");
    let evaluation = Evaluator::<AnyGenome>::evaluate(&evaluator, &mlp32(), 7);
    let folds = evaluation.folds.expect("k-fold scores");
    assert_eq!(folds.k, 5);
    assert_eq!(folds.each.len(), 5);
    let majority = evaluator
        .baselines(7)
        .into_iter()
        .find(|b| b.name == MAJORITY_BASELINE)
        .and_then(|b| b.evaluation.scores.get("accuracy").copied())
        .expect("majority baseline");
    (
        evaluation.scores["accuracy"],
        folds.standard_error.expect("a standard error"),
        majority,
    )
}

fn check(name: &str, reference: (f64, f64), majority_share: f64, tolerance: f64) {
    let (mean, se, majority) = cross_validate(name);
    let reference_se = reference.1 / 5f64.sqrt();
    eprintln!(
        "{name}: gemmule 5-fold {mean:.4} ± {se:.4} (SE), scikit-learn {:.4} ± {reference_se:.4}; \
         majority {majority:.4}",
        reference.0
    );
    assert!(
        (mean - reference.0).abs() <= tolerance,
        "{name}: mean {mean:.4} vs scikit-learn {:.4}",
        reference.0
    );
    assert!(
        (se - reference_se).abs() <= tolerance,
        "{name}: standard error {se:.4} vs scikit-learn {reference_se:.4}"
    );
    // Stratified folds keep the class shares, so the majority class scores
    // its share of the rows on every fold (within one row per fold).
    assert!(
        (majority - majority_share).abs() <= 0.02,
        "{name}: majority class {majority:.4} vs share {majority_share:.4}"
    );
}

#[test]
fn iris_five_fold_mean_matches_scikit_learn() {
    check("iris", (0.9467, 0.0267), 50.0 / 150.0, 0.04);
}

#[test]
fn wine_five_fold_mean_matches_scikit_learn() {
    check("wine", (0.9721, 0.0176), 71.0 / 178.0, 0.04);
}

#[test]
fn digits_five_fold_mean_matches_scikit_learn() {
    check("digits", (0.9716, 0.0118), 0.1013, 0.02);
}
