//! The plan of a strategy comparison, recorded in `CMP/comparison.json`.
//!
//! A comparison runs every listed strategy once per seed, each as an ordinary
//! run directory `CMP/<strategy>-seed<N>/` with the same data, split, search
//! space, trainer settings, evaluation budget and jobs. The plan is written
//! before the first run starts; running the same comparison again checks the
//! plan against the recorded one and continues where it stopped.

use super::data_source::DataSource;
use super::search_job::{FoldChoice, SearchJob, StrategyChoice};
use crate::evaluate::TrainerSettings;
use crate::genome::AnySpace;
use crate::search::{AgingSettings, Budget};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use serde_json::Value;
use std::path::{Path, PathBuf};

/// File name of the plan inside a comparison directory.
pub const COMPARISON_FILE: &str = "comparison.json";

/// The `comparison.json` format this gemmule writes and reads.
pub const COMPARISON_FORMAT: u32 = 1;

/// A strategy taking part in a comparison.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ComparedStrategy {
    /// Aging evolution with the population and sample size scaled to the budget.
    Evolution,
    /// Random search.
    Random,
}

impl ComparedStrategy {
    /// The short name used in run directory names and reports.
    pub fn name(self) -> &'static str {
        match self {
            ComparedStrategy::Evolution => "evolution",
            ComparedStrategy::Random => "random",
        }
    }

    /// The search strategy for a run of `evaluations` evaluations.
    pub fn choice(self, evaluations: u64) -> StrategyChoice {
        match self {
            ComparedStrategy::Evolution => {
                StrategyChoice::Evolution(Some(AgingSettings::for_budget(evaluations)))
            }
            ComparedStrategy::Random => StrategyChoice::Random,
        }
    }
}

/// One run of a comparison.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct PlannedRun {
    /// Its strategy.
    pub strategy: ComparedStrategy,
    /// Its run seed.
    pub seed: u64,
    /// Its directory name inside the comparison directory.
    pub dir_name: String,
}

/// Everything the runs of a comparison share, and which runs there are.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ComparePlan {
    /// The strategies, in report order.
    pub strategies: Vec<ComparedStrategy>,
    /// The run seeds; every strategy runs once with each.
    pub seeds: Vec<u64>,
    /// Evaluations per run.
    pub evaluations: u64,
    /// Candidates each run trains at once (runs go one after another).
    pub jobs: usize,
    /// The data and its split.
    pub source: DataSource,
    /// SHA-256 of the data file when the comparison was planned.
    pub data_fingerprint: String,
    /// The search space (any encoding).
    pub space: AnySpace,
    /// How candidates are trained and ranked.
    pub trainer: TrainerSettings,
    /// Whether candidates are scored by k-fold cross-validation (plans
    /// written before k-fold scoring existed read as `off`).
    #[serde(default = "folds_of_older_plans")]
    pub folds: FoldChoice,
}

/// The fold choice of a plan that does not name one: written by a gemmule
/// that scored every candidate on one validation split.
fn folds_of_older_plans() -> FoldChoice {
    FoldChoice::Off
}

/// What `comparison.json` holds: the format, the plan and (for readers) the run list.
#[derive(Serialize, Deserialize)]
struct PlanFile {
    format: u32,
    plan: Value,
    #[serde(default)]
    runs: Value,
}

impl ComparePlan {
    /// A plan over the given runs; reads the data file to fingerprint it.
    pub fn new(
        source: DataSource,
        space: impl Into<AnySpace>,
        trainer: TrainerSettings,
        strategies: Vec<ComparedStrategy>,
        seeds: Vec<u64>,
        evaluations: u64,
        jobs: usize,
    ) -> Result<ComparePlan> {
        let data_fingerprint = source.fingerprint()?;
        let plan = ComparePlan {
            strategies,
            seeds,
            evaluations,
            jobs,
            source,
            data_fingerprint,
            space: space.into(),
            trainer,
            folds: FoldChoice::Auto,
        };
        plan.check()?;
        Ok(plan)
    }

    /// Sets whether candidates are scored by k-fold cross-validation.
    pub fn with_folds(mut self, folds: FoldChoice) -> Self {
        self.folds = folds;
        self
    }

    /// Checks the plan is usable: strategies and seeds non-empty and distinct,
    /// at least one evaluation and one job, a valid space and trainer.
    pub fn check(&self) -> Result<()> {
        if self.strategies.is_empty() {
            return Err(Error::input("a comparison needs at least one strategy"));
        }
        if self.seeds.is_empty() {
            return Err(Error::input("a comparison needs at least one seed"));
        }
        if let Some(twice) = first_repeat(&self.strategies) {
            return Err(Error::input(format!(
                "strategy `{}` is listed twice",
                twice.name()
            )));
        }
        if let Some(twice) = first_repeat(&self.seeds) {
            return Err(Error::input(format!("seed {twice} is listed twice")));
        }
        if self.jobs == 0 {
            return Err(Error::input("the number of jobs must be at least 1"));
        }
        Budget::evaluations(self.evaluations).check()?;
        self.space.check()?;
        self.trainer.check()
    }

    /// The runs in execution order: seed by seed, every strategy for a seed,
    /// so an unfinished comparison stays balanced between strategies.
    pub fn runs(&self) -> Vec<PlannedRun> {
        let mut runs = Vec::new();
        for &seed in &self.seeds {
            for &strategy in &self.strategies {
                runs.push(PlannedRun {
                    strategy,
                    seed,
                    dir_name: format!("{}-seed{seed}", strategy.name()),
                });
            }
        }
        runs
    }

    /// The search job of one run.
    pub fn job(&self, run: &PlannedRun) -> SearchJob {
        SearchJob::new(self.source.clone())
            .space(self.space.clone())
            .strategy(run.strategy.choice(self.evaluations))
            .trainer(self.trainer.clone())
            .folds(self.folds)
            .seed(run.seed)
            .jobs(self.jobs)
            .evaluations(self.evaluations)
    }

    /// The path of `comparison.json` in a comparison directory.
    pub fn path_in(dir: &Path) -> PathBuf {
        dir.join(COMPARISON_FILE)
    }

    /// Reads the plan recorded in a comparison directory, if there is one.
    pub fn read(dir: &Path) -> Result<Option<ComparePlan>> {
        let path = ComparePlan::path_in(dir);
        if !path.is_file() {
            return Ok(None);
        }
        let text = std::fs::read_to_string(&path).map_err(|e| Error::io(&path, e))?;
        let unreadable = |e: serde_json::Error| {
            Error::input(format!(
                "{}: not a readable comparison plan ({e})",
                path.display()
            ))
        };
        let file: PlanFile = serde_json::from_str(&text).map_err(unreadable)?;
        if file.format != COMPARISON_FORMAT {
            return Err(Error::input(format!(
                "{}: comparison format {} is not the format {COMPARISON_FORMAT} this gemmule reads",
                path.display(),
                file.format
            )));
        }
        let plan: ComparePlan = serde_json::from_value(file.plan).map_err(unreadable)?;
        plan.check()
            .map_err(|e| Error::input(format!("{}: {e}", path.display())))?;
        Ok(Some(plan))
    }

    /// Writes the plan to `comparison.json` in `dir` (atomically).
    pub fn write(&self, dir: &Path) -> Result<()> {
        let file = PlanFile {
            format: COMPARISON_FORMAT,
            plan: self.to_value()?,
            runs: serde_json::to_value(self.runs())
                .map_err(|e| Error::internal(format!("comparison runs: {e}")))?,
        };
        let mut text = serde_json::to_string_pretty(&file)
            .map_err(|e| Error::internal(format!("comparison plan: {e}")))?;
        text.push('\n');
        // Temporary files of an earlier writer of the plan that was killed.
        crate::fsio::remove_stale_temps(dir);
        crate::fsio::write_atomic(&ComparePlan::path_in(dir), text.as_bytes())
    }

    fn to_value(&self) -> Result<Value> {
        serde_json::to_value(self).map_err(|e| Error::internal(format!("comparison plan: {e}")))
    }

    /// The fields where `self` differs from the `recorded` plan, each with both values.
    pub fn differences(&self, recorded: &ComparePlan) -> Result<Vec<String>> {
        let (now, before) = (self.to_value()?, recorded.to_value()?);
        let (Value::Object(now), Value::Object(before)) = (now, before) else {
            return Err(Error::internal("a comparison plan is not a JSON object"));
        };
        Ok(now
            .iter()
            .filter(|(field, value)| before.get(*field) != Some(*value))
            .map(|(field, value)| {
                let old = before.get(field).cloned().unwrap_or(Value::Null);
                format!("`{field}`: recorded {old}, requested {value}")
            })
            .collect())
    }
}

fn first_repeat<T: PartialEq + Copy>(items: &[T]) -> Option<T> {
    items
        .iter()
        .enumerate()
        .find(|(i, item)| items[..*i].contains(item))
        .map(|(_, item)| *item)
}
