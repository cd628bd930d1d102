//! The evaluator seam: how a strategy learns what a genome is worth.

use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// How an evaluation ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EvalStatus {
    /// Trained for the whole epoch budget.
    Completed,
    /// Stopped by early stopping on validation loss (best weights restored).
    EarlyStopped,
    /// The training loss became NaN or infinite.
    Diverged,
    /// Over the parameter or multiply-add cap; not trained.
    OverBudget,
    /// The evaluation failed (e.g. a panic in the worker); see `message`.
    Failed,
    /// Stopped early by the learning-curve cut: its validation curve could not
    /// reach the strategy's bar (the population's worst objective) by the end
    /// of its epoch budget. Scored with its best weights so far; `message`
    /// gives the projection.
    CurveCut,
}

/// The result of evaluating one genome once.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Evaluation {
    /// How it ended.
    pub status: EvalStatus,
    /// The search objective on the validation split, higher is better; `None`
    /// when there is no score (diverged, over budget, failed), which ranks below any score.
    pub objective: Option<f64>,
    /// All validation scores by name (e.g. `accuracy`, `log_loss`), sorted by name.
    pub scores: BTreeMap<String, f64>,
    /// Trainable parameters, when known.
    pub params: Option<u64>,
    /// Multiply-adds per sample (forward), when known.
    pub madds: Option<u64>,
    /// Epochs trained (0 when not trained).
    pub epochs: u32,
    /// Best epoch by validation loss (1-based; 0 when not trained).
    pub best_epoch: u32,
    /// A short explanation for `Failed` or `OverBudget`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub message: Option<String>,
    /// Every fold of a k-fold evaluation (`None` for a single validation
    /// split): then `objective` and `scores` are the means over the folds,
    /// `epochs` the epochs trained in all folds together and `best_epoch`
    /// the folds' mean best epoch, rounded.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub folds: Option<FoldScores>,
}

/// The result of one fold of a k-fold evaluation: trained on the other
/// folds, scored on this one.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FoldResult {
    /// How this fold's training ended.
    pub status: EvalStatus,
    /// The objective on the held-out fold (`None` when not scored).
    pub objective: Option<f64>,
    /// All scores on the held-out fold by name.
    pub scores: BTreeMap<String, f64>,
    /// Epochs trained.
    pub epochs: u32,
    /// Best epoch by the watched validation quantity (1-based).
    pub best_epoch: u32,
}

/// The folds of a k-fold evaluation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FoldScores {
    /// The K of K-fold cross-validation (`each` may hold fewer folds when a
    /// fold diverged, failed or was cut and ended the candidate).
    pub k: u32,
    /// Standard error of the mean objective over the folds (sample standard
    /// deviation / √K); `None` when fewer than two folds were scored.
    pub standard_error: Option<f64>,
    /// Each fold's result, fold 1 first.
    pub each: Vec<FoldResult>,
}

impl FoldScores {
    /// The per-fold objectives, `None` where a fold was not scored.
    pub fn objectives(&self) -> Vec<Option<f64>> {
        self.each.iter().map(|fold| fold.objective).collect()
    }
}

/// Scores genomes. Implementations must be deterministic in (`genome`, `seed`)
/// and single-threaded, so the scheduler can run several side by side.
pub trait Evaluator<G>: Send + Sync {
    /// Evaluates `genome`, with every random choice drawn from `seed`.
    fn evaluate(&self, genome: &G, seed: u64) -> Evaluation;

    /// Evaluates `genome` knowing the strategy's bar: the objective the
    /// candidate must be able to beat to matter to the strategy
    /// ([`Strategy::cut_bar`](super::Strategy::cut_bar); `None` when there is
    /// none). An evaluator may stop a candidate that cannot reach it and
    /// report [`EvalStatus::CurveCut`]; the default ignores the bar. The
    /// scheduler calls this, so the result must be deterministic in
    /// (`genome`, `seed`, `bar`).
    fn evaluate_with_bar(&self, genome: &G, seed: u64, bar: Option<f64>) -> Evaluation {
        let _ = bar;
        self.evaluate(genome, seed)
    }
}
