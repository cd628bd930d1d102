//! The paired difference between a candidate and the linear baseline over
//! the same folds (or the same validation split), and the plain-words
//! verdict every summary prints.

use super::records::{BaselineRecord, EvaluationRecord, LINEAR_BASELINE};
use crate::metrics::mean_and_standard_error;

/// Candidate minus linear baseline, fold by fold.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BaselineGap {
    /// The candidate's objective.
    pub candidate: f64,
    /// The linear baseline's objective.
    pub baseline: f64,
    /// Mean paired difference (candidate − baseline) over the folds where
    /// both were scored, or the plain difference on one validation split.
    pub mean: f64,
    /// Standard error of that mean (`None` on one validation split).
    pub standard_error: Option<f64>,
    /// Folds paired (1 for a validation split).
    pub pairs: usize,
}

impl BaselineGap {
    /// The gap of `record` over the journal's linear baseline, if both are scored.
    pub fn of<G>(
        record: &EvaluationRecord<G>,
        baselines: &[BaselineRecord],
    ) -> Option<BaselineGap> {
        let baseline = baselines.iter().find(|b| b.name == LINEAR_BASELINE)?;
        let candidate = record.objective?;
        let theirs = baseline.evaluation.objective?;
        let (Some(ours), Some(base)) = (&record.folds, &baseline.evaluation.folds) else {
            return Some(BaselineGap {
                candidate,
                baseline: theirs,
                mean: candidate - theirs,
                standard_error: None,
                pairs: 1,
            });
        };
        let differences: Vec<f64> = ours
            .each
            .iter()
            .zip(&base.each)
            .filter_map(|(a, b)| Some(a.objective? - b.objective?))
            .collect();
        let summary = mean_and_standard_error(&differences).ok()?;
        Some(BaselineGap {
            candidate,
            baseline: theirs,
            mean: summary.mean,
            standard_error: Some(summary.standard_error),
            pairs: differences.len(),
        })
    }

    /// Whether the candidate is ahead by more than one standard error (on
    /// one validation split: ahead at all).
    pub fn beats_baseline(&self) -> bool {
        self.mean > self.standard_error.unwrap_or(0.0)
    }

    /// One line: both objectives, the paired difference and the verdict in
    /// plain words ("consider the linear model" when the search did not
    /// clearly beat it).
    pub fn describe(&self) -> String {
        let difference = match self.standard_error {
            Some(se) => format!(
                "paired difference {:+.4} ± {se:.4} over {} folds",
                self.mean, self.pairs
            ),
            None => format!("difference {:+.4} on the validation split", self.mean),
        };
        let verdict = if self.mean <= 0.0 {
            "the searched network does not beat the linear baseline: consider the linear model"
        } else if !self.beats_baseline() {
            "ahead of the linear baseline by less than one standard error: the data cannot \
             tell them apart; consider the linear model"
        } else {
            "ahead of the linear baseline"
        };
        format!(
            "pick {:.4} vs linear baseline {:.4}: {difference}; {verdict}",
            self.candidate, self.baseline
        )
    }
}
