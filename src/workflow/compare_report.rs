//! What a finished comparison found, computed from the runs' journals only.
//!
//! Per run: the best validation objective at the budget (the best-so-far
//! value after `evaluations` evaluations), the evaluations needed to reach a
//! target score, the area under the best-so-far curve (its mean over
//! evaluations `1..=budget`) and, when the run was finalized, the test score
//! of its first test opening (later openings are no longer unbiased). The
//! test split is never opened here.
//!
//! Missing scores: positions of a curve before its first scored evaluation,
//! and a run without any scored evaluation, count as the worst objective
//! scored by any run of the comparison (the *floor*).
//!
//! The default target is the median, over all runs, of the best objective at
//! the budget, so roughly half of the runs reach it.
//!
//! With both evolution and random search in the plan, a one-sided
//! Mann–Whitney U test asks whether evolution's best-at-budget values are
//! stochastically greater than random search's, and a seeded percentile
//! bootstrap gives a 95% interval for the difference of their medians.

use super::compare::Comparison;
use super::compare_plan::{ComparedStrategy, PlannedRun};
use crate::search::{Journal, JournalContents, RunSummary};
use crate::stats::{
    area_under_best_so_far, bootstrap_median_difference, evaluations_to_reach, mann_whitney_u,
    Alternative, MannWhitney, MedianDifferenceInterval, PValueMethod, Summary, DEFAULT_RESAMPLES,
};
use crate::{Error, Result};
use serde::Serialize;
use serde_json::Value;

/// Choices of the analysis (not of the runs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReportOptions {
    /// Score to reach; `None`: the median best-at-budget over all runs.
    pub target: Option<f64>,
    /// Bootstrap resamples.
    pub resamples: usize,
    /// Seed of the bootstrap generator.
    pub bootstrap_seed: u64,
}

impl Default for ReportOptions {
    /// Median target, 10,000 resamples, bootstrap seed 0.
    fn default() -> Self {
        ReportOptions {
            target: None,
            resamples: DEFAULT_RESAMPLES,
            bootstrap_seed: 0,
        }
    }
}

/// The measures of one run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunResult {
    /// The run's strategy.
    pub strategy: ComparedStrategy,
    /// The run's seed.
    pub seed: u64,
    /// The run directory's name inside the comparison directory.
    pub dir_name: String,
    /// Best validation objective after the budget's evaluations (`None`: nothing scored).
    pub best_at_budget: Option<f64>,
    /// Evaluations until the best-so-far objective reached the target (`None`: never).
    pub evaluations_to_target: Option<u64>,
    /// Mean best-so-far objective over evaluations `1..=budget`.
    pub area_under_curve: f64,
    /// Test score (trainer objective's name) of the run's first test opening,
    /// when that was the first opening of the test split by any run (the
    /// test ledger's count; openings recorded by gemmule 0.1.0 count too).
    pub test_score: Option<f64>,
    /// How often the run's test split was opened.
    pub test_openings: usize,
}

/// How quickly a strategy's runs reached the target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReachSummary {
    /// Runs that reached it.
    pub reached: usize,
    /// All runs.
    pub runs: usize,
    /// Median evaluations to reach it, counting runs that never did as slower
    /// than all others; `None` when half or more of the runs never reached it.
    pub median: Option<f64>,
}

/// The measures of one strategy over its seeds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StrategyResult {
    /// The strategy.
    pub strategy: ComparedStrategy,
    /// Best validation objective at the budget (runs without a score count as the floor).
    pub best_at_budget: Summary,
    /// Evaluations to reach the target.
    pub evaluations_to_target: ReachSummary,
    /// Area under the best-so-far curve.
    pub area_under_curve: Summary,
    /// Test scores of the finalized runs (`None`: no run finalized).
    pub test_score: Option<Summary>,
}

/// Evolution against random search on the best objective at the budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StrategyTest {
    /// Strategy of the first sample.
    pub first: ComparedStrategy,
    /// Strategy of the second sample.
    pub second: ComparedStrategy,
    /// One-sided test: first stochastically greater than second.
    pub mann_whitney: MannWhitney,
    /// Bootstrap 95% interval of median(first) − median(second).
    pub median_difference: MedianDifferenceInterval,
}

/// The whole analysis of a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComparisonReport {
    /// The objective's name (log loss is negated: higher is better).
    pub objective: String,
    /// Evaluations per run.
    pub evaluations: u64,
    /// The target score.
    pub target: f64,
    /// Whether the target was given or is the median best-at-budget.
    pub target_is_default: bool,
    /// The value that stands in for missing scores (worst score seen).
    pub floor: f64,
    /// Per strategy, in plan order.
    pub strategies: Vec<StrategyResult>,
    /// Evolution against random search, when both took part.
    pub test: Option<StrategyTest>,
    /// Per run, in plan order.
    pub runs: Vec<RunResult>,
}

/// A run's journal reduced to what the report needs.
struct RunCurve {
    run: PlannedRun,
    curve: Vec<Option<f64>>,
    worst: Option<f64>,
    test_score: Option<f64>,
    test_openings: usize,
}

impl Comparison {
    /// Analyses the finished comparison (see the module docs).
    ///
    /// Refused while a run lacks evaluations of its budget.
    pub fn report(&self, options: &ReportOptions) -> Result<ComparisonReport> {
        let plan = self.plan();
        let budget = usize::try_from(plan.evaluations)
            .map_err(|_| Error::input("the evaluation budget is too large for this machine"))?;
        let objective = plan.trainer.objective.name();
        let mut curves = Vec::new();
        for run in plan.runs() {
            curves.push(self.read_curve(run, budget, objective)?);
        }
        let floor = curves
            .iter()
            .filter_map(|c| c.worst)
            .min_by(f64::total_cmp)
            .ok_or_else(|| Error::input("no run of the comparison has a scored evaluation"))?;
        let finals: Vec<f64> = curves
            .iter()
            .map(|c| c.curve[budget - 1].unwrap_or(floor))
            .collect();
        let target = match options.target {
            Some(t) if t.is_finite() => t,
            Some(t) => {
                return Err(Error::input(format!(
                    "the target must be a finite number, got {t}"
                )))
            }
            None => crate::stats::median(&finals)?,
        };
        let mut runs = Vec::new();
        for c in curves {
            runs.push(RunResult {
                strategy: c.run.strategy,
                seed: c.run.seed,
                dir_name: c.run.dir_name,
                best_at_budget: c.curve[budget - 1],
                evaluations_to_target: evaluations_to_reach(&c.curve, target),
                area_under_curve: area_under_best_so_far(&c.curve, budget, floor)?,
                test_score: c.test_score,
                test_openings: c.test_openings,
            });
        }
        let mut strategies = Vec::new();
        for &strategy in &plan.strategies {
            strategies.push(summarize(strategy, &runs, floor)?);
        }
        let test = strategy_test(&runs, floor, options)?;
        Ok(ComparisonReport {
            objective: objective.to_string(),
            evaluations: plan.evaluations,
            target,
            target_is_default: options.target.is_none(),
            floor,
            strategies,
            test,
            runs,
        })
    }

    fn read_curve(&self, run: PlannedRun, budget: usize, objective: &str) -> Result<RunCurve> {
        let run_dir = self.run_dir(&run);
        let path = Journal::path_in(&run_dir);
        if !path.exists() {
            return Err(Error::input(format!(
                "{} has not started yet; run the comparison to finish it",
                run_dir.display()
            )));
        }
        let contents: JournalContents<Value> = Journal::read(&path)?;
        if contents.evaluations.len() < budget {
            return Err(Error::input(format!(
                "{} holds {} of {budget} evaluations; run the comparison again to finish it",
                run_dir.display(),
                contents.evaluations.len()
            )));
        }
        let records = &contents.evaluations[..budget];
        let curve = RunSummary::new(records, 0).best_so_far;
        let worst = records
            .iter()
            .filter_map(|r| r.objective)
            .min_by(f64::total_cmp);
        // Only a first opening of the test split (by any run, as the test
        // ledger counted it) is an unbiased test score; the runs of one
        // comparison share their test split, so at most one run has it.
        let test_score = contents
            .openings
            .first()
            .filter(|body| {
                body.get("opening")
                    .and_then(Value::as_u64)
                    .is_none_or(|opening| opening == 1)
            })
            .and_then(|body| body.get("test_scores"))
            .and_then(|scores| scores.get(objective))
            .and_then(Value::as_f64);
        Ok(RunCurve {
            run,
            curve,
            worst,
            test_score,
            test_openings: contents.openings.len(),
        })
    }
}

fn best_values(runs: &[RunResult], strategy: ComparedStrategy, floor: f64) -> Vec<f64> {
    runs.iter()
        .filter(|r| r.strategy == strategy)
        .map(|r| r.best_at_budget.unwrap_or(floor))
        .collect()
}

fn summarize(strategy: ComparedStrategy, runs: &[RunResult], floor: f64) -> Result<StrategyResult> {
    let own: Vec<&RunResult> = runs.iter().filter(|r| r.strategy == strategy).collect();
    let areas: Vec<f64> = own.iter().map(|r| r.area_under_curve).collect();
    let tests: Vec<f64> = own.iter().filter_map(|r| r.test_score).collect();
    let reaches: Vec<Option<u64>> = own.iter().map(|r| r.evaluations_to_target).collect();
    Ok(StrategyResult {
        strategy,
        best_at_budget: Summary::of(&best_values(runs, strategy, floor))?,
        evaluations_to_target: reach_summary(&reaches),
        area_under_curve: Summary::of(&areas)?,
        test_score: if tests.is_empty() {
            None
        } else {
            Some(Summary::of(&tests)?)
        },
    })
}

/// The median with never-reached runs ranked after all others.
fn reach_summary(reaches: &[Option<u64>]) -> ReachSummary {
    let mut reached: Vec<u64> = reaches.iter().flatten().copied().collect();
    reached.sort_unstable();
    let runs = reaches.len();
    let upper_middle = runs / 2;
    let lower_middle = (runs.saturating_sub(1)) / 2;
    let median = if runs > 0 && upper_middle < reached.len() {
        Some((reached[lower_middle] + reached[upper_middle]) as f64 / 2.0)
    } else {
        None
    };
    ReachSummary {
        reached: reached.len(),
        runs,
        median,
    }
}

fn strategy_test(
    runs: &[RunResult],
    floor: f64,
    options: &ReportOptions,
) -> Result<Option<StrategyTest>> {
    let (first, second) = (ComparedStrategy::Evolution, ComparedStrategy::Random);
    let evolution = best_values(runs, first, floor);
    let random = best_values(runs, second, floor);
    if evolution.is_empty() || random.is_empty() {
        return Ok(None);
    }
    Ok(Some(StrategyTest {
        first,
        second,
        mann_whitney: mann_whitney_u(
            &evolution,
            &random,
            Alternative::Greater,
            PValueMethod::Auto,
        )?,
        median_difference: bootstrap_median_difference(
            &evolution,
            &random,
            0.95,
            options.resamples,
            options.bootstrap_seed,
        )?,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn never_reached_runs_rank_last_in_the_median() {
        let summary = reach_summary(&[Some(3), None, Some(1)]);
        assert_eq!((summary.reached, summary.median), (2, Some(3.0)));
        assert_eq!(reach_summary(&[Some(2), None]).median, None);
        assert_eq!(
            reach_summary(&[Some(2), Some(4), None, Some(1)]).median,
            Some(3.0)
        );
        assert_eq!(reach_summary(&[None]).median, None);
    }
}
