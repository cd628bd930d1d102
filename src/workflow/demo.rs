//! The built-in demonstration: generate the invented demo data, compare
//! aging evolution with random search on the roast table over a few seeds,
//! finalize the winning run, and measure a no-hidden-layer baseline on the
//! same split, so a newcomer sees the whole job in a few minutes.

use super::compare::{Comparison, ComparisonEnding, ComparisonObserver};
use super::compare_plan::{ComparePlan, ComparedStrategy};
use super::compare_report::{ComparisonReport, ReportOptions};
use super::data_source::DataSource;
use super::finalize::{finalize, FinalReport, FinalizeOptions};
use super::search_job::{SearchJob, StrategyChoice};
use crate::demo::{ensure_demo_data, DemoFiles};
use crate::evaluate::TrainerSettings;
use crate::genome::{AnyGenome, LayerGenome, LayerSpace, Optimizer, TrainGenes};
use crate::search::{AgingSettings, Journal, JournalContents, QuietObserver, RunSummary};
use crate::{Error, Result};
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;

/// Folder (inside the demo folder) holding the generated data.
pub const DEMO_DATA_DIR: &str = "data";
/// Folder (inside the demo folder) holding the comparison and its runs.
pub const DEMO_COMPARISON_DIR: &str = "comparison";
/// Folder (inside the demo folder) holding the baseline run.
pub const DEMO_BASELINE_DIR: &str = "baseline";

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
    /// trained and finalized on the same split.
    pub baseline: FinalReport,
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
    let comparison = Comparison::open(&comparison_dir, plan)?;
    if comparison.run(observer, stop)? == ComparisonEnding::Stopped {
        return Ok(None);
    }
    let winner_run = best_run(&comparison)?;
    let winner = finalize_once(&winner_run)?;
    let report = comparison.report(&ReportOptions::default())?;
    let baseline_run = options.dir.join(DEMO_BASELINE_DIR);
    run_baseline(&baseline_run, source, trainer, stop)?;
    let baseline = finalize_once(&baseline_run)?;
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

/// The run of the comparison holding the best validation objective (the
/// first such run in plan order on ties).
fn best_run(comparison: &Comparison) -> Result<PathBuf> {
    let mut best: Option<(f64, PathBuf)> = None;
    for run in comparison.plan().runs() {
        let dir = comparison.run_dir(&run);
        let contents: JournalContents<AnyGenome> = Journal::read(&Journal::path_in(&dir))?;
        let summary = RunSummary::new(&contents.evaluations, 1);
        if let Some(value) = summary.best.as_ref().and_then(|r| r.objective) {
            if best.as_ref().is_none_or(|(b, _)| value > *b) {
                best = Some((value, dir));
            }
        }
    }
    best.map(|(_, dir)| dir)
        .ok_or_else(|| Error::internal("no run of the demo comparison scored a candidate"))
}

/// Finalizes `run` unless it was finalized before, then returns its first
/// test opening (so repeating the demo never opens a test split twice).
fn finalize_once(run: &Path) -> Result<FinalReport> {
    let contents: JournalContents<serde_json::Value> = Journal::read(&Journal::path_in(run))?;
    if let Some(first) = contents.openings.first() {
        return FinalReport::from_opening(first);
    }
    finalize(run, &FinalizeOptions::default())
}

/// The baseline genome: no hidden layer (softmax regression on the encoded
/// features), Adam with learning rate 0.01 and batch 32.
pub fn baseline_genome() -> LayerGenome {
    LayerGenome {
        layers: Vec::new(),
        training: TrainGenes {
            learning_rate: 0.01,
            batch_size: 32,
            weight_decay: 0.0,
            optimizer: Optimizer::Adam,
        },
    }
}

/// A one-evaluation run of the baseline genome with the comparison's
/// trainer settings and data, so it is journaled and finalized like any run.
fn run_baseline(
    dir: &Path,
    source: DataSource,
    trainer: TrainerSettings,
    stop: &AtomicBool,
) -> Result<()> {
    if Journal::path_in(dir).exists() {
        let contents: JournalContents<serde_json::Value> = Journal::read(&Journal::path_in(dir))?;
        if !contents.evaluations.is_empty() {
            return Ok(());
        }
        std::fs::remove_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    }
    let job = SearchJob::new(source)
        .space(LayerSpace {
            min_layers: 0,
            max_layers: 0,
            ..LayerSpace::default()
        })
        .strategy(StrategyChoice::Evolution(Some(AgingSettings {
            population: 1,
            sample_size: 1,
        })))
        .seed_genomes(vec![AnyGenome::Layers(baseline_genome())])
        .trainer(trainer)
        .evaluations(1)
        .jobs(1);
    job.run(dir, &mut QuietObserver, stop)?;
    Ok(())
}
