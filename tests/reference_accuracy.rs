//! A fixed small MLP genome trained by gemmule's trainer reaches the accuracy
//! that reference libraries reach on three open datasets.
//!
//! Sources: iris (Fisher 1936), wine (UCI, Forina et al.) and digits (UCI
//! optical digits, Alpaydin & Kaynak 1998), all as shipped in scikit-learn
//! 1.9.1 (copies and provenance in tests/data/README.md). Reference figures:
//! scikit-learn 1.9.1 MLPClassifier (adam) reaches 0.947 (iris, MLP(32)),
//! 0.972 (wine, MLP(32)) and 0.972 (digits, MLP(32)) 5-fold CV accuracy
//! (../shared/data/README.md). Thresholds keep a margin for small
//! validation sets: ≥ 0.90 on iris and wine, ≥ 0.93 on digits.

use gemmule::data::{prepare, CsvOptions, SplitFractions};
use gemmule::genome::LayerGenome;
use gemmule::train::{train, TrainSettings};
use std::path::Path;

fn genome() -> LayerGenome {
    LayerGenome::from_json(
        r#"{"layers":[{"width":32,"activation":"relu"}],
            "training":{"learning_rate":0.01,"batch_size":32}}"#,
        "reference genome",
    )
    .unwrap()
}

fn validation_accuracy(file: &str, epochs: u32) -> f64 {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(file);
    let data = prepare(&path, &CsvOptions::default(), &SplitFractions::default(), 0).unwrap();
    let settings = TrainSettings::new(epochs, 10, 1);
    let outcome = train(&genome(), &data.train, Some(&data.valid), &settings).unwrap();
    let scores = outcome.scores.expect("validation scores");
    eprintln!(
        "{file}: validation accuracy {:.4}, {} epochs, {:.5} s per epoch",
        scores.accuracy,
        outcome.epochs_run,
        outcome.seconds / f64::from(outcome.epochs_run)
    );
    scores.accuracy
}

#[test]
fn iris_reaches_ninety_percent() {
    let acc = validation_accuracy("iris.csv", 100);
    assert!(acc >= 0.90, "iris validation accuracy {acc}");
}

#[test]
fn wine_reaches_ninety_percent() {
    let acc = validation_accuracy("wine.csv", 60);
    assert!(acc >= 0.90, "wine validation accuracy {acc}");
}

#[test]
fn digits_reaches_ninety_three_percent() {
    let acc = validation_accuracy("digits.csv", 30);
    assert!(acc >= 0.93, "digits validation accuracy {acc}");
}
