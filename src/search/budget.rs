//! How much a search may spend, and strategy defaults scaled to it.

use crate::{Error, Result};
use serde::{Deserialize, Serialize};

/// The spending limits of a search session.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Budget {
    /// Total evaluations in the journal at which the search stops (counting
    /// evaluations of earlier sessions of the same run).
    pub evaluations: u64,
    /// Wall-clock limit of this session in seconds, if any. It is checked
    /// before each new proposal; evaluations already running are finished and
    /// journaled. A resumed session gets the full limit again.
    pub seconds: Option<f64>,
}

impl Budget {
    /// An evaluation-count budget without a time limit.
    pub fn evaluations(evaluations: u64) -> Self {
        Budget {
            evaluations,
            seconds: None,
        }
    }

    /// Checks the limits are usable (at least one evaluation, a positive finite time).
    pub fn check(&self) -> Result<()> {
        if self.evaluations == 0 {
            return Err(Error::input(
                "the evaluation budget (--budget) is 0; it must be at least 1",
            ));
        }
        if let Some(seconds) = self.seconds {
            if !(seconds.is_finite() && seconds > 0.0) {
                return Err(Error::input(format!(
                    "the time budget (--time-limit) is {seconds}; it must be a positive \
                     number of seconds"
                )));
            }
        }
        Ok(())
    }
}

/// Default aging-evolution population for an evaluation budget.
///
/// A quarter of the budget, at least 4 and at most 100 (the population of
/// Real et al.), so that at least three quarters of the evaluations are
/// evolved children; budgets below 4 use the whole budget.
pub fn default_population(evaluations: u64) -> usize {
    let population = if evaluations < 4 {
        evaluations.max(1)
    } else {
        (evaluations / 4).clamp(4, 100)
    };
    usize::try_from(population).unwrap_or(100)
}

/// Default tournament sample size for a population.
///
/// A quarter of the population rounded up, at least 2 and at most 25 (Real et
/// al. used 25 of 100), never more than the population.
pub fn default_sample_size(population: usize) -> usize {
    population.div_ceil(4).clamp(2, 25).min(population.max(1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_scale_with_the_budget() {
        assert_eq!(default_population(1), 1);
        assert_eq!(default_population(3), 3);
        assert_eq!(default_population(10), 4);
        assert_eq!(default_population(200), 50);
        assert_eq!(default_population(100_000), 100);
        assert_eq!(default_sample_size(1), 1);
        assert_eq!(default_sample_size(3), 2);
        assert_eq!(default_sample_size(50), 13);
        assert_eq!(default_sample_size(100), 25);
        for budget in 1..500 {
            let population = default_population(budget);
            assert!(population as u64 <= budget);
            let sample = default_sample_size(population);
            assert!(sample >= 1 && sample <= population);
        }
    }

    #[test]
    fn budget_checks_reject_nonsense() {
        assert!(Budget::evaluations(0).check().is_err());
        let timed = Budget {
            evaluations: 5,
            seconds: Some(f64::NAN),
        };
        assert!(timed.check().is_err());
        assert!(Budget::evaluations(5).check().is_ok());
    }
}
