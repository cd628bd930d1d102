//! What a final evaluation found: the body of a journal's test-opening
//! record, and what `finalize`, `show`, `compare` and the report print.

use crate::genome::AnyGenome;
use crate::metrics::ClassReport;
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// What the final evaluation found; also the body of the journal's test-opening record.
///
/// Fields added after gemmule 0.1.0 are optional, so test openings written
/// by 0.1.0 still read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FinalReport {
    /// Why the split was opened.
    pub purpose: String,
    /// Which opening of this test split this was: 1 for the first opening
    /// by any run (as counted by the test ledger; only the first is an
    /// unbiased estimate), 2 for the second, … Openings recorded by gemmule
    /// 0.1.0 counted this run's openings only.
    pub opening: usize,
    /// Journal index of the chosen evaluation.
    pub index: u64,
    /// Id of the chosen genome.
    pub id: String,
    /// The chosen genome.
    pub genome: AnyGenome,
    /// Its validation objective (k-fold mean, or the mean over re-trainings when they were made).
    pub validation_objective: f64,
    /// Standard error of the k-fold mean (`None` for one validation split).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub validation_standard_error: Option<f64>,
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
    /// Wilson 95% interval of the test accuracy (from the count of correct test rows).
    pub test_accuracy_interval: (f64, f64),
    /// Confusion matrix and per-class scores of the pick on the test rows.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub class_report: Option<ClassReport>,
    /// Wilson 95% interval of each class's test recall (from its correct
    /// rows out of its support), in class order.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub recall_intervals: Vec<(f64, f64)>,
    /// Class names in class-index order.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub class_names: Vec<String>,
    /// The linear baseline, scored in the same opening.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub baseline: Option<BaselineTest>,
    /// The exact McNemar test of the pick against the baseline on the test rows.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mcnemar: Option<McNemarSummary>,
    /// The identity of the test split in the test ledger.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub split_id: Option<String>,
    /// The test ledger's file, where this opening is recorded.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ledger: Option<String>,
    /// The test rows' predictions, relative to the run directory.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub predictions_file: Option<String>,
    /// Where the model was saved, relative to the run directory.
    pub model_dir: String,
}

/// The linear baseline in a final evaluation: retrained on train+validation
/// and scored on the same test rows as the pick.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BaselineTest {
    /// Which baseline (`linear`).
    pub name: String,
    /// Its genome.
    pub genome: AnyGenome,
    /// Its validation objective in the search (k-fold mean or validation split).
    pub validation_objective: Option<f64>,
    /// Epochs of its final training.
    pub epochs: u32,
    /// Test scores by name.
    pub test_scores: BTreeMap<String, f64>,
    /// Wilson 95% interval of its test accuracy.
    pub test_accuracy_interval: (f64, f64),
    /// Its confusion matrix and per-class scores.
    pub class_report: ClassReport,
}

/// The exact McNemar test (McNemar 1947) on the test rows where exactly one
/// of the pick and the baseline is right.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct McNemarSummary {
    /// Rows the pick classifies correctly and the baseline does not.
    pub pick_only_right: u64,
    /// Rows the baseline classifies correctly and the pick does not.
    pub baseline_only_right: u64,
    /// Two-sided exact p-value (binomial test of the smaller count at 1/2).
    pub p_value: f64,
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

    /// The plain-words verdict of the pick against the linear baseline on
    /// the test rows, when a baseline was scored.
    pub fn verdict(&self) -> Option<String> {
        let baseline = self.baseline.as_ref()?;
        let ours = self.test_scores.get("accuracy")?;
        let theirs = baseline.test_scores.get("accuracy")?;
        let p = self.mcnemar.as_ref().map(|m| m.p_value);
        let p_text = p.map_or(String::new(), |p| format!("; exact McNemar p = {p:.3}"));
        Some(if ours > theirs {
            format!(
                "the searched network is ahead of the linear baseline on the test rows (test \
                 accuracy {ours:.3} vs {theirs:.3}{p_text})"
            )
        } else {
            format!(
                "the searched network does not beat the linear baseline on the test rows (test \
                 accuracy {ours:.3} vs {theirs:.3}{p_text}): consider the linear model"
            )
        })
    }
}
