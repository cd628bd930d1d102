//! Running a strategy comparison: every planned run, one after another, each
//! started, continued or skipped according to its journal.
//!
//! Resuming is re-running: [`Comparison::open`] with the same plan on an
//! existing comparison directory checks the plan against `comparison.json`
//! (any difference is refused, naming the fields), and [`Comparison::run`]
//! skips finished runs, continues interrupted ones from their journals, and
//! starts the rest. Finished journals are never touched.

use super::compare_plan::{ComparePlan, PlannedRun};
use super::search_job::{resume_job, FoldChoice, SearchJob};
use crate::genome::AnyGenome;
use crate::search::{
    Journal, JournalContents, QuietObserver, SearchEnding, SearchObserver, SearchOutcome,
};
use crate::{Error, Result};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};

/// Where a planned run stands.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RunState {
    /// No journal yet.
    NotStarted,
    /// A journal with fewer evaluations than the budget (the count is given).
    Unfinished(u64),
    /// A journal holding the whole budget.
    Finished,
}

/// Hears about a comparison's progress run by run.
pub trait ComparisonObserver {
    /// Run `position` (1-based) of `total` is about to be started or continued.
    fn run_starting(&mut self, position: usize, total: usize, run: &PlannedRun, state: RunState);

    /// The observer of the search of the run that is starting.
    fn search_observer(&mut self) -> &mut dyn SearchObserver<AnyGenome>;

    /// Run `position` was already finished and is skipped.
    fn run_skipped(&mut self, _position: usize, _total: usize, _run: &PlannedRun) {}

    /// The search of a run ended (budget spent or stopped).
    fn run_ended(&mut self, _run: &PlannedRun, _outcome: &SearchOutcome) {}
}

/// A comparison observer that reports nothing.
#[derive(Debug, Default)]
pub struct QuietComparison {
    search: QuietObserver,
}

impl ComparisonObserver for QuietComparison {
    fn run_starting(&mut self, _: usize, _: usize, _: &PlannedRun, _: RunState) {}

    fn search_observer(&mut self) -> &mut dyn SearchObserver<AnyGenome> {
        &mut self.search
    }
}

/// How a call to [`Comparison::run`] ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ComparisonEnding {
    /// Every run holds its whole budget.
    Complete,
    /// The stop flag was set; running the comparison again continues it.
    Stopped,
}

/// A comparison directory and its plan.
#[derive(Debug, Clone)]
pub struct Comparison {
    dir: PathBuf,
    plan: ComparePlan,
}

impl Comparison {
    /// Creates the comparison directory for `plan`, or re-opens it when it
    /// already records the same plan.
    ///
    /// Refused when `dir` records a different plan, or is a non-empty folder
    /// without `comparison.json`.
    pub fn open(dir: &Path, plan: ComparePlan) -> Result<Comparison> {
        plan.check()?;
        match ComparePlan::read(dir)? {
            Some(recorded) => {
                let differences = plan.differences(&recorded)?;
                if !differences.is_empty() {
                    return Err(Error::input(format!(
                        "{} holds a comparison with other settings ({}); repeat the original command to continue it, or choose another --out folder",
                        dir.display(),
                        differences.join("; ")
                    )));
                }
            }
            None => {
                let occupied = std::fs::read_dir(dir)
                    .map(|mut entries| entries.next().is_some())
                    .unwrap_or(false);
                if occupied {
                    return Err(Error::input(format!(
                        "{} is not empty and holds no {}; choose a new or empty folder for the comparison",
                        dir.display(),
                        super::compare_plan::COMPARISON_FILE
                    )));
                }
                std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
                plan.write(dir)?;
            }
        }
        Ok(Comparison {
            dir: dir.to_path_buf(),
            plan,
        })
    }

    /// Opens an existing comparison directory with its recorded plan.
    pub fn load(dir: &Path) -> Result<Comparison> {
        match ComparePlan::read(dir)? {
            Some(plan) => Ok(Comparison {
                dir: dir.to_path_buf(),
                plan,
            }),
            None => Err(Error::input(format!(
                "{} holds no {}; is it a comparison directory?",
                dir.display(),
                super::compare_plan::COMPARISON_FILE
            ))),
        }
    }

    /// The comparison directory.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// The plan.
    pub fn plan(&self) -> &ComparePlan {
        &self.plan
    }

    /// The directory of one run.
    pub fn run_dir(&self, run: &PlannedRun) -> PathBuf {
        self.dir.join(&run.dir_name)
    }

    /// Where `run` stands; refuses a journal that belongs to another run.
    pub fn state(&self, run: &PlannedRun) -> Result<RunState> {
        let run_dir = self.run_dir(run);
        let path = Journal::path_in(&run_dir);
        if !path.exists() {
            return Ok(RunState::NotStarted);
        }
        self.check_journal_matches(run, &run_dir)?;
        let contents: JournalContents<Value> = Journal::read(&path)?;
        let done = contents.evaluations.len() as u64;
        Ok(if done >= self.plan.evaluations {
            RunState::Finished
        } else {
            RunState::Unfinished(done)
        })
    }

    fn check_journal_matches(&self, run: &PlannedRun, run_dir: &Path) -> Result<()> {
        let (recorded, _) = SearchJob::from_run_dir(run_dir)?;
        let expected = self.plan.job(run);
        let mismatch = |what: &str| {
            Err(Error::input(format!(
                "{}: the journal's {what} differs from the comparison plan in {}; the run does not belong to this comparison",
                run_dir.display(),
                ComparePlan::path_in(&self.dir).display()
            )))
        };
        if recorded.strategy != expected.strategy {
            return mismatch("strategy");
        }
        if recorded.seed != expected.seed {
            return mismatch("seed");
        }
        if recorded.jobs != expected.jobs {
            return mismatch("jobs");
        }
        if recorded.budget.evaluations != expected.budget.evaluations {
            return mismatch("budget");
        }
        if recorded.space != expected.space {
            return mismatch("search space");
        }
        // The fold count is decided with the data when a run starts (and
        // recorded); the plan holds the choice that decided it.
        let mut recorded_trainer = recorded.trainer.clone();
        let folds = recorded_trainer.folds.take();
        if recorded_trainer != expected.trainer {
            return mismatch("trainer settings");
        }
        let folds_match = match expected.folds {
            FoldChoice::Auto => true,
            FoldChoice::Off => folds.is_none(),
            FoldChoice::Exactly(k) => folds == Some(k),
        };
        if !folds_match {
            return mismatch("k-fold setting");
        }
        if recorded.source != expected.source {
            return mismatch("data source");
        }
        Ok(())
    }

    /// Runs every planned run to its budget, in plan order (see the module docs).
    ///
    /// Stops early, with [`ComparisonEnding::Stopped`], when `stop` is set.
    pub fn run(
        &self,
        observer: &mut dyn ComparisonObserver,
        stop: &AtomicBool,
    ) -> Result<ComparisonEnding> {
        let runs = self.plan.runs();
        let total = runs.len();
        for (index, run) in runs.iter().enumerate() {
            let position = index + 1;
            let state = self.state(run)?;
            if state == RunState::Finished {
                observer.run_skipped(position, total, run);
                continue;
            }
            if stop.load(Ordering::SeqCst) {
                return Ok(ComparisonEnding::Stopped);
            }
            observer.run_starting(position, total, run, state);
            let run_dir = self.run_dir(run);
            let outcome = match state {
                RunState::NotStarted => {
                    self.plan
                        .job(run)
                        .run(&run_dir, observer.search_observer(), stop)?
                }
                _ => resume_job(
                    &run_dir,
                    Some(self.plan.source.path.clone()),
                    None,
                    observer.search_observer(),
                    stop,
                )?,
            };
            observer.run_ended(run, &outcome);
            if outcome.ending != SearchEnding::BudgetSpent {
                return Ok(ComparisonEnding::Stopped);
            }
        }
        Ok(ComparisonEnding::Complete)
    }
}
