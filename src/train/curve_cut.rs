//! The learning-curve cut: stopping a candidate whose validation curve says
//! it cannot reach a bar by the end of its epoch budget.
//!
//! After each epoch the trainer scores the current weights on the validation
//! split. From the earliest cut epoch on, the curve is extrapolated
//! optimistically: the best score so far plus, for every epoch left, the
//! steepest recent rise of that best score (over the last
//! [`SLOPE_WINDOW`] epochs, never negative). If even that projection stays
//! below the bar, training stops. Learning curves of small networks mostly
//! flatten as training goes on, so a straight line at the recent slope
//! over-estimates where they end; the cut errs towards training a candidate
//! in full. Extrapolating learning curves to stop unpromising trainings
//! early is published (Domhan, Springenberg & Hutter, "Speeding up automatic
//! hyperparameter optimization of deep neural networks by extrapolation of
//! learning curves", IJCAI 2015, fit a family of parametric curves); this
//! linear upper bound is a deliberately simple, deterministic variant of
//! that idea (our own rule, no source for its constants).

use super::objective::Objective;
use super::scores::Scores;

/// Epochs over which the recent rise of the best score is measured.
pub const SLOPE_WINDOW: u32 = 3;

/// The earliest epoch a cut may happen at for a budget of `max_epochs`:
/// a quarter of the budget, and never before epoch 3 (the first epochs of
/// Adam-trained networks often move most).
pub fn first_cut_epoch(max_epochs: u32) -> u32 {
    max_epochs.div_ceil(4).max(3)
}

/// What a cut is measured against; built by the evaluator from the
/// strategy's bar.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurveCut {
    /// The raw validation score (of `objective`, higher is better, before any
    /// size penalty) the candidate must be able to reach.
    pub bar: f64,
    /// Which score the curve follows.
    pub objective: Objective,
}

/// Why a training run was cut, for the journal message.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CutVerdict {
    /// The epoch after which training stopped (1-based).
    pub epoch: u32,
    /// The best score reached so far.
    pub best: f64,
    /// The rise per epoch the projection assumed.
    pub slope: f64,
    /// The projected score at the last epoch of the budget.
    pub projected: f64,
}

/// Follows one training run's validation curve and decides when to cut it.
#[derive(Clone, Debug)]
pub struct CurveWatch {
    cut: CurveCut,
    max_epochs: u32,
    /// Best score so far after each epoch.
    best_so_far: Vec<f64>,
}

impl CurveWatch {
    /// Watches a run of up to `max_epochs` epochs against `cut`.
    pub fn new(cut: CurveCut, max_epochs: u32) -> Self {
        CurveWatch {
            cut,
            max_epochs,
            best_so_far: Vec::new(),
        }
    }

    /// Records the validation scores after the next epoch and says whether
    /// training should stop now. A non-finite score is taken as no progress.
    pub fn after_epoch(&mut self, scores: &Scores) -> Option<CutVerdict> {
        let value = self.cut.objective.value(scores);
        let previous = self.best_so_far.last().copied();
        let best = match previous {
            Some(before) if value.is_finite() && value > before => value,
            Some(before) => before,
            None if value.is_finite() => value,
            None => f64::NEG_INFINITY,
        };
        self.best_so_far.push(best);
        let epoch = self.best_so_far.len() as u32;
        if epoch < first_cut_epoch(self.max_epochs) || epoch >= self.max_epochs {
            return None;
        }
        let window = SLOPE_WINDOW.min(epoch - 1).max(1);
        let earlier = self.best_so_far[(epoch - 1 - window) as usize];
        let slope = if earlier.is_finite() {
            ((best - earlier) / f64::from(window)).max(0.0)
        } else {
            f64::INFINITY
        };
        let projected = best + slope * f64::from(self.max_epochs - epoch);
        (projected < self.cut.bar).then_some(CutVerdict {
            epoch,
            best,
            slope,
            projected,
        })
    }
}

#[cfg(test)]
mod tests {
    //! The projection rule is our own (module docs); the numbers below are
    //! worked by hand from it.
    use super::*;

    fn accuracy(value: f64) -> Scores {
        Scores {
            accuracy: value,
            balanced_accuracy: value,
            macro_f1: value,
            log_loss: 1.0,
        }
    }

    fn watch(bar: f64, max_epochs: u32) -> CurveWatch {
        CurveWatch::new(
            CurveCut {
                bar,
                objective: Objective::Accuracy,
            },
            max_epochs,
        )
    }

    #[test]
    fn first_cut_epoch_is_a_quarter_of_the_budget_and_at_least_three() {
        assert_eq!(first_cut_epoch(1), 3);
        assert_eq!(first_cut_epoch(8), 3);
        assert_eq!(first_cut_epoch(20), 5);
        assert_eq!(first_cut_epoch(30), 8);
    }

    #[test]
    fn a_flat_curve_below_the_bar_is_cut_at_the_first_cut_epoch() {
        let mut w = watch(0.8, 20);
        for _ in 0..4 {
            assert_eq!(w.after_epoch(&accuracy(0.5)), None);
        }
        let verdict = w.after_epoch(&accuracy(0.5)).expect("cut at epoch 5");
        assert_eq!(verdict.epoch, 5);
        assert_eq!(verdict.slope, 0.0);
        assert_eq!(verdict.projected, 0.5);
    }

    #[test]
    fn a_rising_curve_that_could_reach_the_bar_is_kept() {
        // Best 0.50 at epoch 2, 0.65 at epoch 5: slope 0.05 per epoch,
        // 15 epochs left, projection 0.65 + 0.75 = 1.40 >= 0.8.
        let mut w = watch(0.8, 20);
        for value in [0.3, 0.5, 0.55, 0.6, 0.65] {
            assert_eq!(w.after_epoch(&accuracy(value)), None);
        }
    }

    #[test]
    fn a_slow_rise_is_projected_linearly_and_cut_when_short() {
        // Epoch 5 of 10: best 0.60, three epochs earlier 0.57: slope 0.01,
        // 5 epochs left, projection 0.65 < 0.7.
        let mut w = watch(0.7, 10);
        for value in [0.5, 0.57, 0.58, 0.59] {
            assert_eq!(w.after_epoch(&accuracy(value)), None);
        }
        let verdict = w.after_epoch(&accuracy(0.60)).expect("cut");
        assert_eq!(verdict.epoch, 5);
        assert!((verdict.slope - 0.01).abs() < 1e-12, "{verdict:?}");
        assert!((verdict.projected - 0.65).abs() < 1e-12, "{verdict:?}");
    }

    #[test]
    fn the_last_epoch_is_never_cut_and_a_drop_does_not_lower_the_best() {
        let mut w = watch(0.9, 4);
        assert_eq!(w.after_epoch(&accuracy(0.7)), None);
        assert_eq!(w.after_epoch(&accuracy(0.7)), None);
        // Epoch 3: best stays 0.7 after a dip; projection 0.7 < 0.9.
        let verdict = w.after_epoch(&accuracy(0.2)).expect("cut");
        assert_eq!(verdict.best, 0.7);
        let mut w = watch(0.9, 3);
        for value in [0.1, 0.1, 0.1] {
            assert_eq!(w.after_epoch(&accuracy(value)), None);
        }
    }

    #[test]
    fn non_finite_scores_count_as_no_progress() {
        let mut w = watch(0.5, 8);
        assert_eq!(w.after_epoch(&accuracy(f64::NAN)), None);
        assert_eq!(w.after_epoch(&accuracy(0.1)), None);
        // Epochs 3 and 4: the window reaches back to epoch 1's -inf best, so
        // the slope is unbounded and nothing is cut yet.
        assert_eq!(w.after_epoch(&accuracy(0.1)), None);
        assert_eq!(w.after_epoch(&accuracy(0.1)), None);
        assert_eq!(w.after_epoch(&accuracy(0.1)).map(|v| v.epoch), Some(5));
    }

    #[test]
    fn log_loss_objective_follows_the_negated_loss() {
        let mut w = CurveWatch::new(
            CurveCut {
                bar: -0.2,
                objective: Objective::LogLoss,
            },
            12,
        );
        let loss = |l: f64| Scores {
            log_loss: l,
            ..accuracy(0.5)
        };
        assert_eq!(w.after_epoch(&loss(1.0)), None);
        assert_eq!(w.after_epoch(&loss(0.9)), None);
        let verdict = w.after_epoch(&loss(0.9)).expect("cut");
        // best -0.9, slope (−0.9 − −1.0)/2 = 0.05, 9 epochs left → −0.45.
        assert!((verdict.projected + 0.45).abs() < 1e-12, "{verdict:?}");
    }
}
