//! The built-in demonstration: generate the invented demo data, compare
//! aging evolution with random search on the roast table over a few seeds,
//! and finalize the winning run, whose one test opening scores the pick and
//! the no-hidden-layer baseline together, so a newcomer sees the whole job
//! in a few minutes. The comparison scores candidates on one validation
//! split (the table has 1,700 train+validation rows; k-fold scoring would
//! make the demo five times slower).

use super::compare::{Comparison, ComparisonEnding, ComparisonObserver};
use super::compare_pick::comparison_pick;
use super::compare_plan::{ComparePlan, ComparedStrategy};
use super::compare_report::{ComparisonReport, ReportOptions};
use super::data_source::DataSource;
use super::final_report::{BaselineTest, FinalReport};
use super::finalize::{finalize, FinalizeOptions};
use super::search_job::FoldChoice;
use crate::demo::{ensure_demo_data, DemoFiles};
use crate::evaluate::TrainerSettings;
use crate::genome::{LayerGenome, LayerSpace};
use crate::search::{Journal, JournalContents};
use crate::{Error, Result};
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;

/// Folder (inside the demo folder) holding the generated data.
pub const DEMO_DATA_DIR: &str = "data";
/// Folder (inside the demo folder) holding the comparison and its runs.
pub const DEMO_COMPARISON_DIR: &str = "comparison";

/// How big a demonstration to run.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DemoOptions {
    /// Folder for the data, the runs and the report (created if needed;
    /// running the demo again reuses finished runs).
    pub dir: PathBuf,
    /// A smaller comparison (fewer seeds, evaluations and epochs).
    pub quick: bool,
    /// Candidates trained at once in each run.
    pub jobs: usize,
}

impl DemoOptions {
    /// Seeds, evaluations per run, and epochs per candidate.
    pub fn sizes(&self) -> (Vec<u64>, u64, u32) {
        if self.quick {
            ((1..=3).collect(), 20, 20)
        } else {
            ((1..=5).collect(), 80, 30)
        }
    }
}

/// What the demonstration did and found.
#[derive(Debug, Clone)]
pub struct DemoOutcome {
    /// The generated (or reused) demo data.
    pub files: DemoFiles,
    /// The comparison directory.
    pub comparison_dir: PathBuf,
    /// The statistics of evolution against random search.
    pub report: ComparisonReport,
    /// The run whose best candidate was finalized.
    pub winner_run: PathBuf,
    /// The final evaluation of the winner (test split opened once).
    pub winner: FinalReport,
    /// The no-hidden-layer baseline (a multinomial logistic regression),
    /// scored in the winner's test opening.
    pub baseline: BaselineTest,
}

/// The search space of the demo: the default layer space with at most 3
/// hidden layers of width up to 64, so candidates train in a fraction of a second.
pub fn demo_space() -> LayerSpace {
    LayerSpace {
        max_layers: 3,
        max_width: 64,
        ..LayerSpace::default()
    }
}

/// Runs the demonstration (see the module docs). Finished runs in
/// `options.dir` are reused, so a second call only reports; a stop request
/// returns `Ok(None)` and a later call continues.
pub fn run_demo(
    options: &DemoOptions,
    observer: &mut dyn ComparisonObserver,
    stop: &AtomicBool,
) -> Result<Option<DemoOutcome>> {
    let files = ensure_demo_data(&options.dir.join(DEMO_DATA_DIR))?;
    let mut source = DataSource::new(&files.table);
    source.impute = true;
    let (seeds, evaluations, epochs) = options.sizes();
    let trainer = TrainerSettings {
        max_epochs: epochs,
        patience: 5,
        ..TrainerSettings::default()
    };
    let plan = ComparePlan::new(
        source.clone(),
        demo_space(),
        trainer.clone(),
        vec![ComparedStrategy::Evolution, ComparedStrategy::Random],
        seeds,
        evaluations,
        options.jobs,
    )?;
    let comparison_dir = options.dir.join(DEMO_COMPARISON_DIR);
    let comparison = Comparison::open(&comparison_dir, plan.with_folds(FoldChoice::Off))?;
    if comparison.run(observer, stop)? == ComparisonEnding::Stopped {
        return Ok(None);
    }
    let (winner_run, index) = best_run(&comparison)?;
    let winner = finalize_once(&winner_run, index)?;
    let report = comparison.report(&ReportOptions::default())?;
    let baseline = winner.baseline.clone().ok_or_else(|| {
        Error::input(format!(
            "{}: its test opening was made by an older gemmule without the linear baseline; \
             remove the demo folder and run the demo again",
            winner_run.display()
        ))
    })?;
    crate::report::write_report(&comparison_dir, None)?;
    Ok(Some(DemoOutcome {
        files,
        comparison_dir,
        report,
        winner_run,
        winner,
        baseline,
    }))
}

/// The run of the comparison holding the comparison's pick
/// ([`comparison_pick`]: the pick rule over every run's candidates).
fn best_run(comparison: &Comparison) -> Result<(PathBuf, u64)> {
    comparison_pick(comparison, None)?
        .map(|pick| (pick.run_dir, pick.index))
        .ok_or_else(|| Error::internal("no run of the demo comparison scored a candidate"))
}

/// Finalizes `run` unless it was finalized before, then returns its first
/// test opening (so repeating the demo never opens a test split twice).
fn finalize_once(run: &Path, index: u64) -> Result<FinalReport> {
    let contents: JournalContents<serde_json::Value> = Journal::read(&Journal::path_in(run))?;
    if let Some(first) = contents.openings.first() {
        return FinalReport::from_opening(first);
    }
    let options = FinalizeOptions {
        index: Some(index),
        ..FinalizeOptions::default()
    };
    finalize(run, &options)
}

/// The baseline genome: no hidden layer (softmax regression on the encoded
/// features), Adam with learning rate 0.01 and batch 32 (the linear baseline
/// every run scores).
pub fn baseline_genome() -> LayerGenome {
    crate::evaluate::linear_baseline_genome()
}
