//! Which score a search maximises.

use serde::{Deserialize, Serialize};

use super::scores::Scores;

/// The validation score a search ranks candidates by.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
#[value(rename_all = "snake_case")]
pub enum Objective {
    /// Accuracy: the share of correctly classified rows.
    Accuracy,
    /// Balanced accuracy: the mean of the per-class recalls.
    #[value(alias = "balanced-accuracy")]
    BalancedAccuracy,
    /// Macro F1: the mean of the per-class F1 scores.
    #[value(alias = "macro-f1")]
    MacroF1,
    /// Log loss (mean cross-entropy), negated so that higher is better.
    #[value(alias = "log-loss")]
    LogLoss,
}

impl Objective {
    /// All objectives, in a fixed order.
    pub const ALL: [Objective; 4] = [
        Objective::Accuracy,
        Objective::BalancedAccuracy,
        Objective::MacroF1,
        Objective::LogLoss,
    ];

    /// The objective's value for `scores`, oriented so that higher is better
    /// (the log loss is negated).
    pub fn value(self, scores: &Scores) -> f64 {
        match self {
            Objective::Accuracy => scores.accuracy,
            Objective::BalancedAccuracy => scores.balanced_accuracy,
            Objective::MacroF1 => scores.macro_f1,
            Objective::LogLoss => -scores.log_loss,
        }
    }

    /// The snake_case name used in JSON, reports and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Objective::Accuracy => "accuracy",
            Objective::BalancedAccuracy => "balanced_accuracy",
            Objective::MacroF1 => "macro_f1",
            Objective::LogLoss => "log_loss",
        }
    }
}
