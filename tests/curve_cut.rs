//! The learning-curve cut: in the trainer (cuts only what cannot reach the
//! bar, changes nothing when it does not cut) and through `gemmule search`
//! (journaled as `curve_cut`, deterministic, off by default).
//!
//! Data: invented seeded test data for the trainer (labels independent of the
//! features, or well-separated blobs), and the UCI wine data for searches
//! (copy and provenance in tests/data/README.md). The cut rule itself is our
//! own (src/train/curve_cut.rs; common practice, no source for its constants).

use gemmule::data::Dataset;
use gemmule::genome::{Activation, LayerGene, LayerGenome, Optimizer, TrainGenes};
use gemmule::search::{EvalStatus, EvaluationRecord, Journal, JournalContents};
use gemmule::train::{
    first_cut_epoch, train_with_cut, CurveCut, Objective, TrainEngine, TrainSettings, TrainStatus,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

mod private_dirs;

const FEATURES: usize = 4;
const CLASSES: usize = 3;

fn genome() -> LayerGenome {
    LayerGenome {
        layers: vec![LayerGene {
            width: 16,
            activation: Activation::Relu,
            residual: false,
            dropout: 0.0,
        }],
        training: TrainGenes {
            learning_rate: 0.01,
            batch_size: 16,
            weight_decay: 0.0,
            optimizer: Optimizer::Adam,
        },
    }
}

/// Invented test data: `rows` rows; with `learnable` the class is the index
/// of the largest of the first three features plus a margin, else drawn
/// independently of the features.
fn data(rows: usize, learnable: bool, seed: u64) -> Dataset {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut x = Vec::with_capacity(rows * FEATURES);
    let mut y = Vec::with_capacity(rows);
    for _ in 0..rows {
        let class = rng.gen_range(0..CLASSES);
        for feature in 0..FEATURES {
            let shift = if learnable && feature == class {
                2.5
            } else {
                0.0
            };
            x.push(shift + rng.gen_range(-1.0f32..1.0));
        }
        y.push(class as u32);
    }
    Dataset::new(x, y, FEATURES, CLASSES).expect("consistent sizes")
}

fn settings(max_epochs: u32) -> TrainSettings {
    TrainSettings::new(max_epochs, 0, 11)
}

fn cut(bar: f64) -> Option<CurveCut> {
    Some(CurveCut {
        bar,
        objective: Objective::Accuracy,
    })
}

#[test]
fn a_bar_nobody_can_miss_changes_nothing() {
    let (train, valid) = (data(300, true, 1), data(90, true, 2));
    let plain = train_with_cut(
        &genome(),
        &train,
        Some(&valid),
        &settings(12),
        TrainEngine::Fast,
        None,
    )
    .expect("trains");
    let watched = train_with_cut(
        &genome(),
        &train,
        Some(&valid),
        &settings(12),
        TrainEngine::Fast,
        cut(f64::NEG_INFINITY),
    )
    .expect("trains");
    assert_eq!(watched.status, plain.status);
    assert_eq!(watched.epochs_run, 12);
    assert_eq!(watched.best_epoch, plain.best_epoch);
    assert_eq!(watched.scores, plain.scores, "bit-identical scores");
    assert_eq!(watched.cut, None);
    let rows = valid.x.as_slice();
    assert_eq!(
        watched
            .model
            .predict_proba(rows, valid.len())
            .expect("predicts"),
        plain
            .model
            .predict_proba(rows, valid.len())
            .expect("predicts"),
        "bit-identical weights"
    );
}

#[test]
fn a_candidate_that_cannot_learn_is_cut_at_the_first_cut_epoch() {
    // Labels independent of the features: validation accuracy stays near
    // 1/3 and flat, far below a bar of 0.9.
    let (train, valid) = (data(300, false, 3), data(90, false, 4));
    let outcome = train_with_cut(
        &genome(),
        &train,
        Some(&valid),
        &settings(20),
        TrainEngine::Fast,
        cut(0.9),
    )
    .expect("trains");
    assert_eq!(outcome.status, TrainStatus::CurveCut);
    assert_eq!(outcome.epochs_run, first_cut_epoch(20));
    let verdict = outcome.cut.expect("a verdict");
    assert_eq!(verdict.epoch, 5);
    assert!(verdict.projected < 0.9 && verdict.best < 0.6, "{verdict:?}");
    let scores = outcome.scores.expect("scored with its best weights");
    assert!(scores.accuracy < 0.6);
    assert!((1..=5).contains(&outcome.best_epoch));
}

#[test]
fn a_candidate_that_can_reach_the_bar_trains_in_full() {
    let (train, valid) = (data(300, true, 5), data(90, true, 6));
    let outcome = train_with_cut(
        &genome(),
        &train,
        Some(&valid),
        &settings(10),
        TrainEngine::Fast,
        cut(0.6),
    )
    .expect("trains");
    assert_eq!(outcome.status, TrainStatus::Completed);
    assert_eq!(outcome.epochs_run, 10);
    assert!(outcome.scores.expect("scored").accuracy > 0.8);
}

fn gemmule(args: &[&str]) -> Output {
    private_dirs::isolate(&mut Command::new(env!("CARGO_BIN_EXE_gemmule")))
        .env("RAYON_NUM_THREADS", "1")
        .args(args)
        .output()
        .expect("the binary runs")
}

fn wine() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/wine.csv")
}

fn s(p: &Path) -> &str {
    p.to_str().expect("utf-8 path")
}

fn search(run: &Path, jobs: &str, extra: &[&str]) -> Output {
    let wine = wine();
    let mut args = vec![
        "search",
        "--data",
        s(&wine),
        "--out",
        s(run),
        "--budget",
        "24",
        "--population",
        "6",
        "--sample-size",
        "3",
        "--epochs",
        "12",
        "--patience",
        "0",
        "--seed",
        "5",
        "--jobs",
        jobs,
        // The cut's journal checks below were measured on one validation
        // split; with k-fold scoring a cut fold ends the candidate as well
        // (tests/kfold_search.rs covers folds).
        "--folds",
        "off",
        "--quiet",
    ];
    args.extend_from_slice(extra);
    gemmule(&args)
}

fn records(run: &Path) -> Vec<EvaluationRecord<serde_json::Value>> {
    let contents: JournalContents<serde_json::Value> =
        Journal::read(&run.join("journal.jsonl")).expect("journal readable");
    contents.evaluations
}

#[test]
fn a_search_with_the_cut_journals_cut_candidates_and_repeats_byte_for_byte() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (first, second, plain) = (
        dir.path().join("a"),
        dir.path().join("b"),
        dir.path().join("plain"),
    );
    for run in [&first, &second] {
        let o = search(run, "2", &["--curve-cut"]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let bytes = std::fs::read(first.join("journal.jsonl")).expect("journal");
    assert!(bytes == std::fs::read(second.join("journal.jsonl")).expect("journal"));
    let header = String::from_utf8_lossy(&bytes);
    assert!(header
        .lines()
        .next()
        .unwrap_or("")
        .contains("\"curve_cut\":true"));

    let evaluations = records(&first);
    let cut: Vec<_> = evaluations
        .iter()
        .filter(|r| r.status == EvalStatus::CurveCut)
        .collect();
    assert!(!cut.is_empty(), "seed 5 cuts some candidates on wine");
    for record in &cut {
        // Cuts happen from epoch 3 (a quarter of 12, at least 3), never at the last one.
        assert!((3..12).contains(&record.epochs), "{record:?}");
        assert!(record.objective.is_some(), "scored with its best weights");
        let message = record.message.as_deref().unwrap_or("");
        assert!(
            message.starts_with(&format!(
                "learning-curve cut after epoch {} of 12",
                record.epochs
            )),
            "{message}"
        );
        // Only candidates proposed from a full population (index >= P) have a bar.
        assert!(record.index >= 6, "{record:?}");
    }
    let show = gemmule(&["show", s(&first)]);
    let shown = String::from_utf8_lossy(&show.stdout);
    assert!(shown.contains("learning-curve cut on"), "{shown}");
    assert!(
        shown.contains(&format!(
            "{} evaluation(s) stopped by the learning-curve cut",
            cut.len()
        )),
        "{shown}"
    );

    // Off by default: no cut, and the header does not mention it.
    let o = search(&plain, "2", &[]);
    assert!(o.status.success());
    let plain_text = std::fs::read_to_string(plain.join("journal.jsonl")).expect("journal");
    assert!(!plain_text.contains("curve_cut"));
    let plain_epochs: u32 = records(&plain).iter().map(|r| r.epochs).sum();
    let cut_epochs: u32 = evaluations.iter().map(|r| r.epochs).sum();
    assert_eq!(
        plain_epochs,
        24 * 12,
        "patience 0: every plain candidate trains 12 epochs"
    );
    assert!(cut_epochs < plain_epochs);
}

#[test]
fn random_search_with_the_cut_is_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let run = dir.path().join("run");
    let wine = wine();
    let o = gemmule(&[
        "search",
        "--data",
        s(&wine),
        "--out",
        s(&run),
        "--strategy",
        "random",
        "--curve-cut",
        "--quiet",
    ]);
    assert_eq!(o.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert!(
        stderr.contains("--curve-cut") && stderr.contains("random search"),
        "{stderr}"
    );
    assert!(!run.exists());
}

#[test]
fn the_evaluator_cuts_only_when_asked_and_reports_in_objective_terms() {
    use gemmule::evaluate::{penalised_objective, TrainerSettings, TrainingEvaluator};
    use gemmule::net::layer_cost;
    use gemmule::search::Evaluator;

    let (train, valid) = (data(300, false, 7), data(90, false, 8));
    let lambda = 0.05;
    let trainer = TrainerSettings {
        max_epochs: 20,
        patience: 0,
        size_penalty: Some(lambda),
        curve_cut: true,
        ..TrainerSettings::default()
    };
    let params = layer_cost(&genome(), FEATURES, CLASSES).params;
    let penalty = -penalised_objective(0.0, params, lambda);
    assert!(penalty > 0.1, "a penalty worth checking: {penalty}");
    // The bar is on the penalised scale: 0.9 − penalty is out of reach for
    // labels that do not depend on the features (accuracy ~1/3).
    let bar = 0.9 - penalty;
    let evaluator = TrainingEvaluator::new(train.clone(), valid.clone(), trainer.clone());
    let cut = evaluator.evaluate_with_bar(&genome(), 3, Some(bar));
    assert_eq!(cut.status, EvalStatus::CurveCut);
    assert_eq!(cut.epochs, first_cut_epoch(20));
    let accuracy = cut.scores["accuracy"];
    let objective = cut.objective.expect("scored");
    assert!(
        (objective - (accuracy - penalty)).abs() < 1e-12,
        "objective is penalised"
    );
    let message = cut.message.as_deref().unwrap_or("");
    assert!(
        message.starts_with("learning-curve cut after epoch 5 of 20: best accuracy so far ")
            && message.ends_with(&format!("below the population's worst {bar:.4}")),
        "{message}"
    );
    let best_shown: f64 = message
        .split("best accuracy so far ")
        .nth(1)
        .and_then(|rest| rest.split(',').next())
        .and_then(|number| number.parse().ok())
        .expect("a number after 'best accuracy so far'");
    assert!(
        best_shown < 0.6 - penalty,
        "shown on the penalised scale: {message}"
    );

    // No bar, or the cut off: the candidate trains all 20 epochs.
    assert_eq!(evaluator.evaluate_with_bar(&genome(), 3, None).epochs, 20);
    let off = TrainingEvaluator::new(
        train,
        valid,
        TrainerSettings {
            curve_cut: false,
            ..trainer
        },
    );
    let full = off.evaluate_with_bar(&genome(), 3, Some(bar));
    assert_eq!(full.status, EvalStatus::Completed);
    assert_eq!(
        full,
        evaluator.evaluate(&genome(), 3),
        "evaluate() passes no bar"
    );
}
