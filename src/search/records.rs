//! The records of a run journal (one JSON object per line, tagged by `"kind"`).

use super::budget::Budget;
use super::evaluation::{EvalStatus, Evaluation, FoldScores};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The journal format this gemmule writes (and the newest it reads).
pub const JOURNAL_FORMAT: u32 = 1;

/// The version of this gemmule, recorded in every journal header.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");

/// Which strategy a run uses and how it is set up.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StrategyInfo {
    /// The strategy's name (see `Strategy::name`).
    pub name: String,
    /// Its settings (see `Strategy::settings`).
    pub settings: serde_json::Value,
}

/// The first line of a journal (`"kind":"header"`): everything a run's results depend on.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RunHeader {
    /// Journal format version ([`JOURNAL_FORMAT`] when written by this gemmule).
    pub format: u32,
    /// The gemmule version that created the run.
    pub tool_version: String,
    /// The strategy and its settings.
    pub strategy: StrategyInfo,
    /// The run seed every proposal and evaluation seed is derived from.
    pub seed: u64,
    /// Worker threads; the journal depends on it (it fixes what each proposal has seen).
    pub jobs: usize,
    /// The information lag: proposal k saw the results `0..=k - lag`. Written
    /// only when it differs from `jobs` (this gemmule: 3 × jobs with two or
    /// more jobs); a header without it means `lag = jobs`, the rule of the
    /// first gemmule versions, which resumed runs keep. See [`RunHeader::lag`].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lag: Option<u64>,
    /// The budget the run was created with. Later sessions may raise or lower
    /// it; their budgets are recorded in `timings.jsonl`, not here.
    pub budget: Budget,
    /// The search space's settings (filled by the caller).
    pub space: serde_json::Value,
    /// The data's identity: source, fingerprint, split (filled by the caller).
    pub data: serde_json::Value,
    /// The trainer's settings (filled by the caller).
    pub trainer: serde_json::Value,
}

impl RunHeader {
    /// The information lag the run was made with (`lag`, or `jobs` when the
    /// header has none); at least 1.
    pub fn lag(&self) -> u64 {
        self.lag.unwrap_or(self.jobs as u64).max(1)
    }
}

/// Header fields that may differ between the sessions of one run.
pub const SESSION_FIELDS: [&str; 3] = ["format", "tool_version", "budget"];

/// One evaluated candidate (`"kind":"evaluation"`), at journal position `index`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EvaluationRecord<G> {
    /// Position in the journal: 0, 1, 2, … without gaps.
    pub index: u64,
    /// The genome's short id.
    pub id: String,
    /// The genome.
    pub genome: G,
    /// Journal index of its parent, if derived from one.
    pub parent: Option<u64>,
    /// The parent's short id.
    pub parent_id: Option<String>,
    /// The mutation that produced it from the parent.
    pub mutation: Option<String>,
    /// The seed the evaluator was given.
    pub seed: u64,
    /// How the evaluation ended.
    pub status: EvalStatus,
    /// The objective (higher is better); `None` ranks below every score.
    pub objective: Option<f64>,
    /// All validation scores by name.
    pub scores: BTreeMap<String, f64>,
    /// Trainable parameters, when known.
    pub params: Option<u64>,
    /// Multiply-adds per sample, when known.
    pub madds: Option<u64>,
    /// Epochs trained.
    pub epochs: u32,
    /// Best epoch by validation loss (1-based, 0 when not trained).
    pub best_epoch: u32,
    /// Explanation for failures, over-budget candidates and dropped values.
    pub message: Option<String>,
    /// Every fold of a k-fold evaluation; absent for a single validation split.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub folds: Option<FoldScores>,
}

impl<G> EvaluationRecord<G> {
    /// The evaluation as strategies observe it.
    pub fn evaluation(&self) -> Evaluation {
        Evaluation {
            status: self.status,
            objective: self.objective,
            scores: self.scores.clone(),
            params: self.params,
            madds: self.madds,
            epochs: self.epochs,
            best_epoch: self.best_epoch,
            message: self.message.clone(),
            folds: self.folds.clone(),
        }
    }
}

/// A reference model scored on the same validation split or folds as the
/// candidates (`"kind":"baseline"`), written right after the header. Not a
/// candidate: it is not in the budget, the strategy never sees it, and no
/// pick can choose it; it is there to say whether the search beat a simple
/// model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BaselineRecord {
    /// Which baseline ([`MAJORITY_BASELINE`] or [`LINEAR_BASELINE`]).
    pub name: String,
    /// The trained model's genome (the linear baseline's); `None` for the
    /// majority class, which trains nothing.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub genome: Option<serde_json::Value>,
    /// Its scores, exactly as a candidate's.
    #[serde(flatten)]
    pub evaluation: Evaluation,
}

/// The baseline that predicts the most frequent training class, with the
/// training class shares as probabilities.
pub const MAJORITY_BASELINE: &str = "majority_class";
/// The baseline with no hidden layer: multinomial logistic regression on the
/// encoded features, trained by the same trainer as every candidate.
pub const LINEAR_BASELINE: &str = "linear";

/// Makes an evaluation storable in JSON, which has no NaN or infinity.
///
/// A non-finite objective becomes `None` and non-finite scores are dropped,
/// both noted in `message`. Strategies observe the stored form, live and on
/// resume alike.
pub fn storable(mut evaluation: Evaluation) -> Evaluation {
    let mut dropped = Vec::new();
    if let Some(value) = evaluation.objective.filter(|value| !value.is_finite()) {
        dropped.push(format!("objective={value}"));
        evaluation.objective = None;
    }
    evaluation.scores.retain(|name, value| {
        let keep = value.is_finite();
        if !keep {
            dropped.push(format!("{name}={value}"));
        }
        keep
    });
    if let Some(folds) = &mut evaluation.folds {
        if folds.standard_error.is_some_and(|se| !se.is_finite()) {
            folds.standard_error = None;
        }
        for (number, fold) in folds.each.iter_mut().enumerate() {
            if let Some(value) = fold.objective.filter(|value| !value.is_finite()) {
                dropped.push(format!("fold {} objective={value}", number + 1));
                fold.objective = None;
            }
            fold.scores.retain(|name, value| {
                let keep = value.is_finite();
                if !keep {
                    dropped.push(format!("fold {} {name}={value}", number + 1));
                }
                keep
            });
        }
    }
    if !dropped.is_empty() {
        let note = format!("non-finite values dropped: {}", dropped.join(", "));
        evaluation.message = Some(match evaluation.message {
            Some(text) => format!("{text}; {note}"),
            None => note,
        });
    }
    evaluation
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn non_finite_values_are_dropped_and_noted() {
        let evaluation = Evaluation {
            status: EvalStatus::Diverged,
            objective: Some(f64::NAN),
            scores: [
                ("accuracy".to_string(), 0.5),
                ("log_loss".to_string(), f64::INFINITY),
            ]
            .into_iter()
            .collect(),
            params: Some(3),
            madds: None,
            epochs: 2,
            best_epoch: 1,
            message: None,
            folds: None,
        };
        let stored = storable(evaluation);
        assert_eq!(stored.objective, None);
        assert_eq!(stored.scores.len(), 1);
        let message = stored.message.unwrap_or_default();
        assert!(message.contains("objective=NaN") && message.contains("log_loss=inf"));
    }
}
