//! The final evaluation: retrain the pick on train+validation, open the
//! sealed test split once, record the opening in the journal, save the model.

use super::prepared::PreparedData;
use super::search_job::SearchJob;
use super::wilson::wilson_interval;
use crate::bundle::ModelBundle;
use crate::data::Dataset;
use crate::evaluate::scores_map;
use crate::genome::AnyGenome;
use crate::model::{train_genome, TrainedNetwork};
use crate::search::seeds::derive;
use crate::search::{Journal, JournalContents, RunLock, RunSummary};
use crate::train::{score, Scores, TrainSettings, TrainStatus};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::Path;

/// Folder inside a run directory that holds the finalized model.
pub const FINAL_MODEL_DIR: &str = "final";
/// Seed stream of the re-trainings that reduce selection noise (ASCII "recheck").
const RECHECK_STREAM: u64 = 0x0072_6563_6865_636b;
/// Seed stream of the final training (ASCII "finally").
const FINAL_STREAM: u64 = 0x0066_696e_616c_6c79;

/// How the final pick is made.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FinalizeOptions {
    /// Re-train the best `top_k` distinct genomes (1 = take the best record as it is).
    pub top_k: usize,
    /// Seeds per re-trained genome; the pick is the best mean validation objective.
    pub repeats: usize,
    /// Open the test split even though it was opened before (every report says how often).
    pub reopen: bool,
    /// The data file, if it moved since the run started (its content must be unchanged).
    pub data: Option<std::path::PathBuf>,
}

impl Default for FinalizeOptions {
    fn default() -> Self {
        FinalizeOptions {
            top_k: 1,
            repeats: 1,
            reopen: false,
            data: None,
        }
    }
}

/// What the final evaluation found; also the body of the journal's test-opening record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FinalReport {
    /// Why the split was opened.
    pub purpose: String,
    /// 1 for the first opening of this run's test split, 2 for the second, …
    pub opening: usize,
    /// Journal index of the chosen evaluation.
    pub index: u64,
    /// Id of the chosen genome.
    pub id: String,
    /// The chosen genome.
    pub genome: AnyGenome,
    /// Its validation objective (mean over re-trainings when they were made).
    pub validation_objective: f64,
    /// How the pick was made.
    pub selection: String,
    /// Epochs of the final training on train+validation.
    pub epochs: u32,
    /// Seed of the final training.
    pub seed: u64,
    /// Rows the final model was trained on (train + validation).
    pub trained_rows: usize,
    /// Rows of the test split.
    pub test_rows: usize,
    /// Encoded input features of the model.
    pub n_inputs: usize,
    /// Classes.
    pub n_classes: usize,
    /// Test scores by name.
    pub test_scores: BTreeMap<String, f64>,
    /// Wilson 95% interval of the test accuracy.
    pub test_accuracy_interval: (f64, f64),
    /// Where the model was saved, relative to the run directory.
    pub model_dir: String,
}

impl FinalReport {
    /// Reads a report back from a journal's test-opening record.
    pub fn from_opening(record: &serde_json::Value) -> Result<FinalReport> {
        serde_json::from_value(record.clone()).map_err(|e| {
            Error::input(format!(
                "a test-opening record of the journal is unreadable: {e}"
            ))
        })
    }
}

struct Pick {
    index: u64,
    genome: AnyGenome,
    objective: f64,
    epochs: u32,
    selection: String,
}

/// Finalizes the run in `run_dir` (see the module docs).
///
/// Refuses when the test split was opened before, unless `options.reopen`.
pub fn finalize(run_dir: &Path, options: &FinalizeOptions) -> Result<FinalReport> {
    if options.top_k == 0 || options.repeats == 0 {
        return Err(Error::input("--top-k and --repeats must be at least 1"));
    }
    let (lock, _) = RunLock::acquire(run_dir)?;
    let (mut job, fingerprint) = SearchJob::from_run_dir(run_dir)?;
    if let Some(path) = &options.data {
        job.source.path = path.clone();
    }
    let contents: JournalContents<AnyGenome> = Journal::read(&Journal::path_in(run_dir))?;
    let openings = contents.openings.len();
    if openings > 0 && !options.reopen {
        return Err(Error::input(format!(
            "{}: the test split of this run was already opened {openings} time(s); a second look is no longer an unbiased test. Pass --reopen to open it again (every report will show the count)",
            run_dir.display()
        )));
    }
    let prepared = job.source.prepare()?;
    if prepared.info.fingerprint != fingerprint {
        return Err(Error::input(format!(
            "{}: the data file changed since the run started; finalize needs the original file (--data PATH if it moved)",
            job.source.path.display()
        )));
    }
    let pick = choose(&contents, &job, &prepared, options)?;
    let seed = derive(job.seed, FINAL_STREAM, openings as u64);
    let train_valid = prepared.train.concat(&prepared.valid);
    let settings = TrainSettings {
        max_epochs: pick.epochs,
        patience: 0,
        seed,
    };
    let layout = prepared.layout();
    let outcome = train_genome(
        &pick.genome,
        &train_valid,
        None,
        &layout,
        &settings,
        job.trainer.augment,
    )?;
    if outcome.status == TrainStatus::Diverged {
        return Err(Error::input(format!(
            "the final training of {} diverged on train+validation; the test split stays sealed. Try --top-k 3 --repeats 3 to pick a steadier candidate",
            pick.genome.id()
        )));
    }
    let (test, _opening) = prepared.test.open("finalize");
    let scores = test_scores(&outcome.network, &test)?;
    let correct = (scores.accuracy * test.len() as f64).round() as u64;
    let report = FinalReport {
        purpose: "finalize".into(),
        opening: openings + 1,
        index: pick.index,
        id: pick.genome.id(),
        genome: pick.genome.clone(),
        validation_objective: pick.objective,
        selection: pick.selection,
        epochs: pick.epochs,
        seed,
        trained_rows: train_valid.len(),
        test_rows: test.len(),
        n_inputs: test.n_features,
        n_classes: test.n_classes,
        test_scores: scores_map(&scores),
        test_accuracy_interval: wilson_interval(correct, test.len() as u64),
        model_dir: FINAL_MODEL_DIR.into(),
    };
    let body =
        serde_json::to_value(&report).map_err(|e| Error::internal(format!("final report: {e}")))?;
    Journal::append_test_opening(&lock, &body)?;
    let provenance = serde_json::json!({
        "made_by": "finalize",
        "run_seed": job.seed,
        "data_fingerprint": fingerprint,
        "journal_index": report.index,
        "epochs": report.epochs,
        "seed": seed,
        "trained_rows": report.trained_rows,
        "test_scores": report.test_scores,
        "test_opening": report.opening,
    });
    ModelBundle::new(
        pick.genome,
        outcome.network,
        prepared.preprocessor,
        provenance,
    )
    .save(&run_dir.join(FINAL_MODEL_DIR))?;
    Ok(report)
}

fn test_scores(model: &TrainedNetwork, test: &Dataset) -> Result<Scores> {
    let probabilities = model.predict_proba(&test.x, test.len())?;
    Ok(score(&probabilities, &test.y, test.n_classes))
}

/// The genome to finalize: the best record, or the best mean over re-trainings.
fn choose(
    contents: &JournalContents<AnyGenome>,
    job: &SearchJob,
    prepared: &PreparedData,
    options: &FinalizeOptions,
) -> Result<Pick> {
    let summary = RunSummary::new(&contents.evaluations, usize::MAX);
    let mut distinct = Vec::new();
    for record in &summary.top {
        if !distinct
            .iter()
            .any(|r: &&crate::search::EvaluationRecord<AnyGenome>| r.id == record.id)
        {
            distinct.push(record);
        }
        if distinct.len() == options.top_k {
            break;
        }
    }
    let Some(best) = distinct.first() else {
        return Err(Error::input(
            "the run has no scored evaluation yet; run or resume the search first",
        ));
    };
    let fallback_epochs = |best_epoch: u32| {
        if best_epoch == 0 {
            job.trainer.max_epochs
        } else {
            best_epoch
        }
    };
    if options.top_k == 1 && options.repeats == 1 {
        return Ok(Pick {
            index: best.index,
            genome: best.genome.clone(),
            objective: best.objective.unwrap_or(f64::NEG_INFINITY),
            epochs: fallback_epochs(best.best_epoch),
            selection: "best validation objective in the journal".into(),
        });
    }
    let mut pick: Option<Pick> = None;
    for (rank, record) in distinct.iter().enumerate() {
        let mut total = 0.0;
        let mut epochs = 0u64;
        for repeat in 0..options.repeats {
            let seed = derive(
                job.seed,
                RECHECK_STREAM,
                (rank * options.repeats + repeat) as u64,
            );
            let settings = TrainSettings {
                max_epochs: job.trainer.max_epochs,
                patience: job.trainer.patience,
                seed,
            };
            let outcome = train_genome(
                &record.genome,
                &prepared.train,
                Some(&prepared.valid),
                &prepared.layout(),
                &settings,
                job.trainer.augment,
            )?;
            let value = match (outcome.status, outcome.scores) {
                (TrainStatus::Diverged, _) | (_, None) => f64::NEG_INFINITY,
                (_, Some(s)) => job.trainer.objective.value(&s),
            };
            total += value;
            epochs += u64::from(fallback_epochs(outcome.best_epoch));
        }
        let mean = total / options.repeats as f64;
        if pick.as_ref().is_none_or(|p| mean > p.objective) {
            pick = Some(Pick {
                index: record.index,
                genome: record.genome.clone(),
                objective: mean,
                epochs: ((epochs as f64) / options.repeats as f64).round().max(1.0) as u32,
                selection: format!(
                    "best mean validation objective of the top {} genomes over {} seeds each",
                    distinct.len(),
                    options.repeats
                ),
            });
        }
    }
    pick.ok_or_else(|| Error::internal("no candidate to pick"))
}
