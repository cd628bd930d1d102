//! The final evaluation: retrain the pick and the linear baseline on
//! train+validation (for the epochs the search found: the k-fold mean best
//! epoch, or the validation split's best epoch), open the sealed test split
//! once for both, record the opening in the test ledger and the journal,
//! save the model.

use super::final_report::{BaselineTest, FinalReport, McNemarSummary};
use super::prepared::PreparedData;
use super::search_job::SearchJob;
use super::test_predictions::{write_test_predictions, TEST_PREDICTIONS_FILE};
use super::wilson::wilson_interval;
use crate::bundle::ModelBundle;
use crate::data::Dataset;
use crate::evaluate::{linear_baseline_genome, scores_map, LINEAR_BASELINE_MIN_EPOCHS};
use crate::genome::AnyGenome;
use crate::ledger::{Ledger, LedgerLocation, NewOpening, SplitFacts};
use crate::metrics::{mcnemar_exact_p_value, ClassReport};
use crate::model::train_genome;
use crate::search::seeds::derive;
use crate::search::Evaluator;
use crate::search::{
    pick, BaselineRecord, EvaluationRecord, Journal, JournalContents, PickRule, RunLock,
    RunSummary, LINEAR_BASELINE,
};
use crate::train::{score, TrainSettings, TrainStatus};
use crate::{Error, Result};
use std::path::Path;

/// Folder inside a run directory that holds the finalized model.
pub const FINAL_MODEL_DIR: &str = "final";
/// Seed stream of the re-trainings that reduce selection noise (ASCII "recheck").
const RECHECK_STREAM: u64 = 0x0072_6563_6865_636b;
/// Seed stream of the final training (ASCII "finally").
const FINAL_STREAM: u64 = 0x0066_696e_616c_6c79;
/// Seed stream of the linear baseline's final training (ASCII "linbase").
const FINAL_BASELINE_STREAM: u64 = 0x006c_696e_6261_7365;

/// How the final pick is made.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FinalizeOptions {
    /// Re-train the best `top_k` distinct genomes (1 = take the pick as it is).
    pub top_k: usize,
    /// Seeds per re-trained genome; the pick is the best mean validation objective.
    pub repeats: usize,
    /// Open the test split even though it was opened before (every report says how often).
    pub reopen: bool,
    /// The data file, if it moved since the run started (its content must be unchanged).
    pub data: Option<std::path::PathBuf>,
    /// Finalize this evaluation (a journal index) instead of the pick.
    pub index: Option<u64>,
    /// The pick rule (default: one standard error for k-fold runs, the top
    /// objective otherwise; see [`PickRule`]).
    pub pick: Option<PickRule>,
    /// The class whose probability the binary ROC AUC ranks by (default: the
    /// second class in sorted order).
    pub positive_class: Option<String>,
    /// Where the test ledger lives (default: [`LedgerLocation::from_env`]).
    pub ledger: Option<LedgerLocation>,
}

impl Default for FinalizeOptions {
    fn default() -> Self {
        FinalizeOptions {
            top_k: 1,
            repeats: 1,
            reopen: false,
            data: None,
            index: None,
            pick: None,
            positive_class: None,
            ledger: None,
        }
    }
}

struct Pick {
    index: u64,
    genome: AnyGenome,
    objective: f64,
    standard_error: Option<f64>,
    epochs: u32,
    selection: String,
}

/// Finalizes the run in `run_dir` (see the module docs).
///
/// Refuses, before anything is trained, when the test split was opened
/// before by any run (the test ledger) or by this run (its journal),
/// unless `options.reopen`.
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
    let run_openings = contents.openings.len();
    if run_openings > 0 && !options.reopen {
        return Err(Error::input(format!(
            "{}: the test split of this run was already opened {}; a second look is no longer \
             an unbiased test. Pass --reopen to open it again (every report will show the count)",
            run_dir.display(),
            crate::data::count_of(run_openings, "time")
        )));
    }
    let prepared = job.source.prepare()?;
    if prepared.info.fingerprint != fingerprint {
        return Err(Error::input(format!(
            "{}: the data file changed since the run started; finalize needs the original file (--data PATH if it moved)",
            job.source.path.display()
        )));
    }
    let positive = positive_class(
        &prepared.info.class_names,
        options.positive_class.as_deref(),
    )?;
    let mut facts = SplitFacts::of_prepared(&prepared);
    facts.test_data_fingerprint = prepared.info.test_fingerprint.clone();
    facts.split_column = job.source.split_column.clone();
    let location = match &options.ledger {
        Some(location) => location.clone(),
        None => LedgerLocation::from_env()?,
    };
    let ledger = Ledger::open(location)?;
    ledger.check_can_open(&facts.id(), options.reopen)?;
    let pick = choose(&contents, &job, &prepared, options)?;
    let seed = derive(job.seed, FINAL_STREAM, run_openings as u64);
    let train_valid = prepared.train.concat(&prepared.valid);
    let layout = prepared.layout();
    let weights = final_class_weights(&job, &train_valid)?;
    let mut settings = TrainSettings::new(pick.epochs, 0, seed);
    settings.class_weights = weights.clone();
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
    let (baseline_genome, baseline_record) = linear_baseline(&contents);
    let baseline_epochs = baseline_record
        .map(|record| record.evaluation.best_epoch)
        .filter(|&epochs| epochs > 0)
        .unwrap_or_else(|| job.trainer.max_epochs.max(LINEAR_BASELINE_MIN_EPOCHS));
    let mut baseline_settings = TrainSettings::new(
        baseline_epochs,
        0,
        derive(job.seed, FINAL_BASELINE_STREAM, run_openings as u64),
    );
    baseline_settings.class_weights = weights;
    let baseline_outcome = train_genome(
        &baseline_genome,
        &train_valid,
        None,
        &layout,
        &baseline_settings,
        false,
    )?;

    let ((test, tags), _opening) = prepared.test.zip(prepared.test_rows)?.open("finalize");
    let probabilities = outcome.network.predict_proba(&test.x, test.len())?;
    let report =
        ClassReport::from_probabilities(&probabilities, &test.y, test.n_classes, positive)?;
    let scores = score(&probabilities, &test.y, test.n_classes);
    // A diverged baseline is left out (the pick's opening still counts).
    let baseline_probabilities = if baseline_outcome.status == TrainStatus::Diverged {
        None
    } else {
        Some(
            baseline_outcome
                .network
                .predict_proba(&test.x, test.len())?,
        )
    };
    let entry = ledger.record_opening(
        &NewOpening::new(facts, run_dir, "finalize").evaluated(
            std::iter::once(format!(
                "pick {} (evaluation {})",
                pick.genome.id(),
                pick.index
            ))
            .chain(
                baseline_probabilities
                    .is_some()
                    .then(|| format!("{LINEAR_BASELINE} baseline {}", baseline_genome.id())),
            ),
        ),
        options.reopen,
    )?;
    let correct = |report: &ClassReport| -> u64 {
        (0..report.n_classes)
            .map(|c| report.confusion_matrix[c][c])
            .sum()
    };
    let rows = test.len() as u64;
    let final_report = FinalReport {
        purpose: "finalize".into(),
        opening: entry.opening as usize,
        index: pick.index,
        id: pick.genome.id(),
        genome: pick.genome.clone(),
        validation_objective: pick.objective,
        validation_standard_error: pick.standard_error,
        selection: pick.selection,
        epochs: pick.epochs,
        seed,
        trained_rows: train_valid.len(),
        test_rows: test.len(),
        n_inputs: test.n_features,
        n_classes: test.n_classes,
        test_scores: scores_map(&scores),
        test_accuracy_interval: wilson_interval(correct(&report), rows),
        recall_intervals: report
            .confusion_matrix
            .iter()
            .enumerate()
            .map(|(c, row)| wilson_interval(row[c], row.iter().sum()))
            .collect(),
        class_names: prepared.info.class_names.clone(),
        class_report: Some(report),
        baseline: match &baseline_probabilities {
            Some(theirs) => {
                let class_report =
                    ClassReport::from_probabilities(theirs, &test.y, test.n_classes, positive)?;
                Some(BaselineTest {
                    name: LINEAR_BASELINE.into(),
                    genome: baseline_genome,
                    validation_objective: baseline_record
                        .and_then(|record| record.evaluation.objective),
                    epochs: baseline_epochs,
                    test_scores: scores_map(&score(theirs, &test.y, test.n_classes)),
                    test_accuracy_interval: wilson_interval(correct(&class_report), rows),
                    class_report,
                })
            }
            None => None,
        },
        mcnemar: baseline_probabilities
            .as_ref()
            .map(|theirs| mcnemar_of(&probabilities, theirs, &test.y, test.n_classes)),
        split_id: Some(entry.split.as_str().to_string()),
        ledger: Some(ledger.path().display().to_string()),
        predictions_file: Some(format!("{FINAL_MODEL_DIR}/{TEST_PREDICTIONS_FILE}")),
        model_dir: FINAL_MODEL_DIR.into(),
    };
    // The predictions first: a kill after the journal record must not leave
    // an opening without its predictions file.
    let final_dir = run_dir.join(FINAL_MODEL_DIR);
    std::fs::create_dir_all(&final_dir).map_err(|e| Error::io(&final_dir, e))?;
    write_test_predictions(
        &final_dir.join(TEST_PREDICTIONS_FILE),
        &tags,
        &final_report.class_names,
        &test.y,
        &probabilities,
    )?;
    let body = serde_json::to_value(&final_report)
        .map_err(|e| Error::internal(format!("final report: {e}")))?;
    Journal::append_test_opening(&lock, &body)?;
    let provenance = serde_json::json!({
        "made_by": "finalize",
        "run_seed": job.seed,
        "data_fingerprint": fingerprint,
        "journal_index": final_report.index,
        "epochs": final_report.epochs,
        "seed": seed,
        "trained_rows": final_report.trained_rows,
        "test_scores": final_report.test_scores,
        "test_opening": final_report.opening,
    });
    ModelBundle::new(
        pick.genome,
        outcome.network,
        prepared.preprocessor,
        provenance,
    )
    .save(&final_dir)?;
    Ok(final_report)
}

/// Balanced class weights of the final training when the run used them.
fn final_class_weights(job: &SearchJob, rows: &Dataset) -> Result<Option<Vec<f32>>> {
    if job.trainer.class_weight.is_none() {
        return Ok(None);
    }
    crate::evaluate::balanced_weights(rows).map(Some)
}

/// The linear baseline's genome (from the journal's baseline record; the
/// default one for runs made before baselines were journaled) and its record.
fn linear_baseline(contents: &JournalContents<AnyGenome>) -> (AnyGenome, Option<&BaselineRecord>) {
    let record = contents
        .baselines
        .iter()
        .find(|record| record.name == LINEAR_BASELINE);
    let genome = record
        .and_then(|record| record.genome.clone())
        .and_then(|value| serde_json::from_value(value).ok())
        .unwrap_or_else(|| AnyGenome::Layers(linear_baseline_genome()));
    (genome, record)
}

/// The class index of `--positive CLASS` for a binary task (default:
/// class 1); `None` for more than two classes.
fn positive_class(class_names: &[String], named: Option<&str>) -> Result<Option<usize>> {
    match (class_names.len(), named) {
        (2, None) => Ok(Some(1)),
        (2, Some(name)) => class_names
            .iter()
            .position(|class| class == name)
            .map(Some)
            .ok_or_else(|| {
                Error::input(format!(
                    "--positive {name:?} is not a class of this data; the classes are {}",
                    class_names.join(", ")
                ))
            }),
        (_, Some(name)) => Err(Error::input(format!(
            "--positive {name:?}: a positive class applies to two classes only; this data has \
             {} (multiclass ROC AUC is the macro one-vs-rest mean)",
            class_names.len()
        ))),
        (_, None) => Ok(None),
    }
}

/// The exact McNemar test of two models' argmax predictions on the same rows.
fn mcnemar_of(ours: &[f32], theirs: &[f32], labels: &[u32], n_classes: usize) -> McNemarSummary {
    let argmax = |row: &[f32]| {
        let mut best = 0;
        for (class, &p) in row.iter().enumerate() {
            if p > row[best] {
                best = class;
            }
        }
        best
    };
    let (mut b, mut c) = (0u64, 0u64);
    for (row, &label) in labels.iter().enumerate() {
        let span = row * n_classes..(row + 1) * n_classes;
        let a_right = argmax(&ours[span.clone()]) == label as usize;
        let b_right = argmax(&theirs[span]) == label as usize;
        match (a_right, b_right) {
            (true, false) => b += 1,
            (false, true) => c += 1,
            _ => {}
        }
    }
    McNemarSummary {
        pick_only_right: b,
        baseline_only_right: c,
        p_value: mcnemar_exact_p_value(b, c),
    }
}

/// The genome to finalize: `--index N`, the pick by the rule, or the best
/// mean over re-trainings of the top genomes.
fn choose(
    contents: &JournalContents<AnyGenome>,
    job: &SearchJob,
    prepared: &PreparedData,
    options: &FinalizeOptions,
) -> Result<Pick> {
    let fallback_epochs = |best_epoch: u32| {
        if best_epoch == 0 {
            job.trainer.max_epochs
        } else {
            best_epoch
        }
    };
    let standard_error = |record: &EvaluationRecord<AnyGenome>| {
        record.folds.as_ref().and_then(|folds| folds.standard_error)
    };
    if let Some(index) = options.index {
        let record = contents
            .evaluations
            .iter()
            .find(|record| record.index == index)
            .ok_or_else(|| {
                Error::input(format!(
                    "--index {index}: the journal has evaluations 0 to {} (see `gemmule show`)",
                    contents.evaluations.len().saturating_sub(1)
                ))
            })?;
        let Some(objective) = record.objective else {
            return Err(Error::input(format!(
                "--index {index}: evaluation {index} has no score ({:?}); choose a scored one",
                record.status
            )));
        };
        return Ok(Pick {
            index,
            genome: record.genome.clone(),
            objective,
            standard_error: standard_error(record),
            epochs: fallback_epochs(record.best_epoch),
            selection: format!("evaluation {index}, chosen with --index"),
        });
    }
    let folded = job.trainer.folds.is_some();
    let rule = options.pick.unwrap_or(PickRule::default_for(folded));
    let Some(picked) = pick(&contents.evaluations, rule) else {
        return Err(Error::input(
            "the run has no scored evaluation yet; run or resume the search first",
        ));
    };
    if options.top_k == 1 && options.repeats == 1 {
        let record = picked.record;
        return Ok(Pick {
            index: record.index,
            genome: record.genome.clone(),
            objective: record.objective.unwrap_or(f64::NEG_INFINITY),
            standard_error: standard_error(record),
            epochs: fallback_epochs(record.best_epoch),
            selection: picked.rule.describe().to_string(),
        });
    }
    let summary = RunSummary::new(&contents.evaluations, usize::MAX);
    let mut distinct: Vec<&EvaluationRecord<AnyGenome>> = Vec::new();
    for record in &summary.top {
        if !distinct.iter().any(|r| r.id == record.id) {
            distinct.push(record);
        }
        if distinct.len() == options.top_k {
            break;
        }
    }
    // K-fold runs re-score on the same folds; other runs on the validation split.
    let folds = match (job.trainer.folds, &prepared.fold_source) {
        (Some(k), Some(source)) => Some(job.fold_evaluator(source, k, &job.trainer)?),
        _ => None,
    };
    let mut best: Option<Pick> = None;
    for (rank, record) in distinct.iter().enumerate() {
        let mut total = 0.0;
        let mut epochs = 0u64;
        for repeat in 0..options.repeats {
            let seed = derive(
                job.seed,
                RECHECK_STREAM,
                (rank * options.repeats + repeat) as u64,
            );
            let (value, best_epoch) = match &folds {
                Some(evaluator) => {
                    let evaluation =
                        Evaluator::<AnyGenome>::evaluate(evaluator, &record.genome, seed);
                    (
                        evaluation.objective.unwrap_or(f64::NEG_INFINITY),
                        evaluation.best_epoch,
                    )
                }
                None => {
                    let mut settings =
                        TrainSettings::new(job.trainer.max_epochs, job.trainer.patience, seed);
                    settings.watch = job.trainer.watch.watch(job.trainer.objective);
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
                    (value, outcome.best_epoch)
                }
            };
            total += value;
            epochs += u64::from(fallback_epochs(best_epoch));
        }
        let mean = total / options.repeats as f64;
        if best.as_ref().is_none_or(|p| mean > p.objective) {
            best = Some(Pick {
                index: record.index,
                genome: record.genome.clone(),
                objective: mean,
                standard_error: None,
                epochs: ((epochs as f64) / options.repeats as f64).round().max(1.0) as u32,
                selection: format!(
                    "best mean validation objective of the top {} genomes over {} seeds each \
                     (re-scored on {})",
                    distinct.len(),
                    options.repeats,
                    if folds.is_some() {
                        "the same folds"
                    } else {
                        "the validation split"
                    }
                ),
            });
        }
    }
    best.ok_or_else(|| Error::internal("no candidate to pick"))
}
