//! A whole search on a table or on images: prepare the data, build the
//! strategy and evaluator, and run or resume the journal in a run directory.

use super::data_source::DataSource;
use super::prepared::PreparedData;
use crate::data::FoldSource;
use crate::evaluate::{TrainerSettings, TrainingEvaluator};
use crate::genome::{AnyGenome, AnySpace, SearchSpace};
use crate::search::seeds::derive;
use crate::search::{
    resume_search, run_search, AgingEvolution, AgingSettings, Budget, Journal, JournalContents,
    RandomSampling, SearchContext, SearchObserver, SearchOutcome, SearchPlan, Strategy,
};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;
use std::sync::Arc;

/// Seed stream of the fold assignment, derived from the split seed (ASCII "foldset").
const FOLD_ASSIGNMENT_STREAM: u64 = 0x0066_6f6c_6473_6574;
/// Seed stream of the linear baseline's training, derived from the run seed (ASCII "baselin").
const BASELINE_STREAM: u64 = 0x0062_6173_656c_696e;

/// Which strategy proposes candidates.
#[derive(Debug, Clone, PartialEq)]
pub enum StrategyChoice {
    /// Regularized (aging) evolution; `None` settings scale with the budget.
    Evolution(Option<AgingSettings>),
    /// Random search over the same space.
    Random,
}

impl StrategyChoice {
    fn build(
        &self,
        space: Arc<AnySpace>,
        evaluations: u64,
        seed_genomes: &[AnyGenome],
    ) -> Result<Box<dyn Strategy<AnyGenome>>> {
        Ok(match self {
            StrategyChoice::Evolution(settings) => {
                let settings = settings.unwrap_or_else(|| AgingSettings::for_budget(evaluations));
                let strategy = AgingEvolution::new(space, settings, evaluations)?;
                if seed_genomes.is_empty() {
                    Box::new(strategy)
                } else {
                    Box::new(strategy.with_seed_genomes(seed_genomes.to_vec())?)
                }
            }
            StrategyChoice::Random => Box::new(RandomSampling::new(space)),
        })
    }

    /// Reads the choice back from a journal header's strategy name and settings.
    fn from_header(name: &str, settings: &Value) -> Result<Self> {
        match name {
            "aging_evolution" => {
                let read = |key: &str| settings.get(key).and_then(|v| v.as_u64());
                match (read("population"), read("sample_size")) {
                    (Some(p), Some(s)) => Ok(StrategyChoice::Evolution(Some(AgingSettings {
                        population: p as usize,
                        sample_size: s as usize,
                    }))),
                    _ => Err(Error::input(
                        "the journal header's aging_evolution settings lack population or sample_size",
                    )),
                }
            }
            "random_sampling" => Ok(StrategyChoice::Random),
            other => Err(Error::input(format!(
                "the journal names strategy `{other}`, which this gemmule does not know"
            ))),
        }
    }
}

/// Whether candidates are scored by k-fold cross-validation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FoldChoice {
    /// [`AUTO_FOLDS`] folds for tables of at most [`AUTO_FOLD_MAX_ROWS`]
    /// train+validation rows (fewer when the smallest class has fewer rows,
    /// none below 2); one validation split for larger tables and for images.
    Auto,
    /// One validation split.
    Off,
    /// Exactly this many folds (at least 2, at most the rows of the
    /// smallest class).
    Exactly(u32),
}

/// Folds of [`FoldChoice::Auto`] on a small table.
pub const AUTO_FOLDS: u32 = 5;
/// Largest train+validation row count for which [`FoldChoice::Auto`] uses folds.
pub const AUTO_FOLD_MAX_ROWS: usize = 4_000;

impl FoldChoice {
    /// The fold count for data of `rows` train+validation rows whose
    /// smallest class has `smallest_class` rows (`None`: one validation
    /// split). Images (`rows` = `None`) use one split unless K is given.
    pub fn resolve(self, rows: Option<(usize, usize)>) -> Result<Option<u32>> {
        match (self, rows) {
            (FoldChoice::Off, _) => Ok(None),
            (FoldChoice::Auto, None) => Ok(None),
            (FoldChoice::Auto, Some((rows, smallest))) => {
                let k = AUTO_FOLDS.min(smallest as u32);
                Ok(Some(k).filter(|&k| rows <= AUTO_FOLD_MAX_ROWS && k >= 2))
            }
            (FoldChoice::Exactly(k), None) => Err(Error::input(format!(
                "--folds {k}: k-fold scoring is for tables; image data is scored on one \
                 validation split (leave --folds out, or give --folds off)"
            ))),
            (FoldChoice::Exactly(k), Some((_, smallest))) => {
                if k < 2 {
                    return Err(Error::input(format!(
                        "--folds {k}: k-fold scoring needs at least 2 folds (or --folds off)"
                    )));
                }
                if k as usize > smallest {
                    return Err(Error::input(format!(
                        "--folds {k} is more than the {smallest} train+validation rows of the \
                         smallest class; every fold needs a row of every class: give --folds \
                         {smallest} or fewer"
                    )));
                }
                Ok(Some(k))
            }
        }
    }
}

/// Everything a search needs; build it, adjust the public fields, then [`SearchJob::run`].
#[derive(Debug, Clone)]
pub struct SearchJob {
    /// The data and its split.
    pub source: DataSource,
    /// The search space; its encoding (layers, image cells, table cells)
    /// decides what networks are searched.
    pub space: AnySpace,
    /// The strategy.
    pub strategy: StrategyChoice,
    /// How candidates are trained and ranked.
    pub trainer: TrainerSettings,
    /// Run seed: every proposal and training seed derives from it.
    pub seed: u64,
    /// Candidates trained at once (each on one thread); the journal depends on it.
    pub jobs: usize,
    /// Evaluation count and optional wall-clock limit.
    pub budget: Budget,
    /// Genomes aging evolution starts from instead of random samples (e.g.
    /// minimal networks that evolution grows); empty for random starts.
    pub seed_genomes: Vec<AnyGenome>,
    /// Whether candidates are scored by k-fold cross-validation; decided
    /// with the data when the run starts and recorded in the header's
    /// trainer block (`folds`).
    pub folds: FoldChoice,
}

impl SearchJob {
    /// A search of the default space with aging evolution, 40 evaluations, seed 0, 1 job.
    pub fn new(source: DataSource) -> Self {
        SearchJob {
            source,
            space: AnySpace::default(),
            strategy: StrategyChoice::Evolution(None),
            trainer: TrainerSettings::default(),
            seed: 0,
            jobs: 1,
            budget: Budget::evaluations(40),
            seed_genomes: Vec::new(),
            folds: FoldChoice::Auto,
        }
    }

    /// Sets whether candidates are scored by k-fold cross-validation.
    pub fn folds(mut self, folds: FoldChoice) -> Self {
        self.folds = folds;
        self
    }

    /// Sets the strategy.
    pub fn strategy(mut self, strategy: StrategyChoice) -> Self {
        self.strategy = strategy;
        self
    }

    /// Sets the evaluation budget.
    pub fn evaluations(mut self, evaluations: u64) -> Self {
        self.budget.evaluations = evaluations;
        self
    }

    /// Sets the run seed.
    pub fn seed(mut self, seed: u64) -> Self {
        self.seed = seed;
        self
    }

    /// Sets the number of parallel jobs.
    pub fn jobs(mut self, jobs: usize) -> Self {
        self.jobs = jobs;
        self
    }

    /// Sets the search space (a [`crate::genome::LayerSpace`], a cell space or an [`AnySpace`]).
    pub fn space(mut self, space: impl Into<AnySpace>) -> Self {
        self.space = space.into();
        self
    }

    /// Sets the genomes aging evolution starts from.
    pub fn seed_genomes(mut self, genomes: Vec<AnyGenome>) -> Self {
        self.seed_genomes = genomes;
        self
    }

    /// Sets the trainer settings.
    pub fn trainer(mut self, trainer: TrainerSettings) -> Self {
        self.trainer = trainer;
        self
    }

    /// Starts a new run in `run_dir`, which must not hold a journal yet.
    pub fn run(
        &self,
        run_dir: &Path,
        observer: &mut dyn SearchObserver<AnyGenome>,
        stop: &AtomicBool,
    ) -> Result<SearchOutcome> {
        if Journal::path_in(run_dir).exists() {
            return Err(Error::input(format!(
                "{} already holds a run; continue it with `gemmule resume {}` or choose another --out folder",
                run_dir.display(),
                run_dir.display()
            )));
        }
        self.execute(run_dir, observer, stop, None)
    }

    /// Checks the parts of the job fit together before any data is read.
    fn check(&self) -> Result<()> {
        self.space.check()?;
        self.trainer.check()?;
        self.budget.check()?;
        let encoding = self.space.encoding();
        if encoding.needs_images() && !self.source.is_images() {
            return Err(Error::input(format!(
                "{}: the {encoding} encoding searches convolutional cells and needs image data; give --data DIR (one sub-folder per class), --data IMAGES --idx-labels LABELS, or --image-shape HxWxC for a CSV of pixel columns",
                self.source.path.display()
            )));
        }
        if self.trainer.augment && !encoding.needs_images() {
            return Err(Error::input(
                "--augment shifts images and applies to the cells_image encoding only",
            ));
        }
        for (i, genome) in self.seed_genomes.iter().enumerate() {
            self.space.validate(genome).map_err(|e| {
                Error::input(format!(
                    "seed genome {} is outside the search space: {e}",
                    i + 1
                ))
            })?;
        }
        Ok(())
    }

    /// Runs (or with `fingerprint`, resumes) the search; a resumed run's data
    /// must have the recorded fingerprint.
    fn execute(
        &self,
        run_dir: &Path,
        observer: &mut dyn SearchObserver<AnyGenome>,
        stop: &AtomicBool,
        fingerprint: Option<&str>,
    ) -> Result<SearchOutcome> {
        self.check()?;
        let prepared = self.source.prepare()?;
        if let Some(recorded) = fingerprint {
            if prepared.info.fingerprint != recorded {
                return Err(Error::input(format!(
                    "{}: the data changed since the run started (SHA-256 {} now, {} in the journal); resume with the original data (--data PATH if it moved)",
                    self.source.path.display(),
                    &prepared.info.fingerprint[..prepared.info.fingerprint.len().min(12)],
                    &recorded[..recorded.len().min(12)]
                )));
            }
        }
        for warning in &prepared.info.warnings {
            observer.on_warning(warning);
        }
        let data_block = self.source.header_block(&prepared);
        let space = Arc::new(self.space.clone());
        if !self.seed_genomes.is_empty() && self.strategy == StrategyChoice::Random {
            return Err(Error::input(
                "seed genomes apply to aging evolution only; random search samples the whole space",
            ));
        }
        let mut strategy =
            self.strategy
                .build(space.clone(), self.budget.evaluations, &self.seed_genomes)?;
        let mut trainer = self.trainer.clone();
        let fold_rows = prepared
            .fold_source
            .as_ref()
            .map(|source| (source.len(), source.smallest_class()));
        trainer.folds = self.folds.resolve(fold_rows)?;
        let evaluator = Arc::new(self.evaluator(prepared, &trainer)?);
        let plan = SearchPlan {
            seed: self.seed,
            jobs: self.jobs,
            budget: self.budget,
            space: space.describe(),
            data: data_block,
            trainer: serde_json::to_value(&trainer)
                .map_err(|e| Error::internal(format!("trainer settings: {e}")))?,
            baselines: if self.journal_needs_baselines(run_dir, fingerprint.is_some())? {
                evaluator.baselines(derive(self.seed, BASELINE_STREAM, 0))
            } else {
                Vec::new()
            },
        };
        let context = SearchContext {
            space: space.as_ref(),
            evaluator,
            strategy: strategy.as_mut(),
            observer,
            stop,
        };
        if fingerprint.is_some() {
            resume_search(run_dir, &plan, context)
        } else {
            run_search(run_dir, &plan, context)
        }
    }

    /// Whether the run's journal still lacks its baselines: a new run, or a
    /// resumed one killed before its first evaluation with a baseline
    /// missing (a run made before baselines existed never gets them, so its
    /// journal stays as it was).
    fn journal_needs_baselines(&self, run_dir: &Path, resuming: bool) -> Result<bool> {
        if !resuming {
            return Ok(true);
        }
        let contents: JournalContents<Value> = Journal::read(&Journal::path_in(run_dir))?;
        Ok(contents.evaluations.is_empty() && contents.baselines.len() < 2)
    }

    /// The k-fold evaluator of this job's table: `k` folds drawn from the
    /// split seed (so every run on the same data and split shares them).
    pub(crate) fn fold_evaluator(
        &self,
        source: &FoldSource,
        k: u32,
        trainer: &TrainerSettings,
    ) -> Result<TrainingEvaluator> {
        let seed = derive(self.source.split_seed, FOLD_ASSIGNMENT_STREAM, 0);
        let folds = source.folds(k as usize, seed)?;
        TrainingEvaluator::with_folds(folds, None, trainer.clone())
    }

    /// The evaluator of this job's candidates: k-fold when `trainer.folds`
    /// is set (folds drawn from the split seed, so every run on the same
    /// data and split shares them), one validation split otherwise.
    fn evaluator(
        &self,
        prepared: PreparedData,
        trainer: &TrainerSettings,
    ) -> Result<TrainingEvaluator> {
        let image = prepared.preprocessor.image_shape();
        match (trainer.folds, prepared.fold_source) {
            (Some(k), Some(source)) => self.fold_evaluator(&source, k, trainer),
            (Some(_), None) => Err(Error::input(
                "k-fold scoring is for tables; image data is scored on one validation split \
                 (--folds off)",
            )),
            (None, _) => Ok(match image {
                Some(shape) => TrainingEvaluator::for_images(
                    prepared.train,
                    prepared.valid,
                    shape,
                    trainer.clone(),
                ),
                None => TrainingEvaluator::new(prepared.train, prepared.valid, trainer.clone()),
            }),
        }
    }

    /// Rebuilds the job a run directory was started with, from its journal header.
    pub fn from_run_dir(run_dir: &Path) -> Result<(SearchJob, String)> {
        let contents: JournalContents<Value> = Journal::read(&Journal::path_in(run_dir))?;
        let header = contents.header;
        let (source, fingerprint) = DataSource::from_header_block(&header.data)?;
        let space = AnySpace::from_description(&header.space)?;
        let trainer: TrainerSettings =
            serde_json::from_value(header.trainer.clone()).map_err(|e| {
                Error::input(format!(
                    "the journal header's trainer settings are unreadable: {e}"
                ))
            })?;
        let trainer_folds = trainer.folds;
        let strategy =
            StrategyChoice::from_header(&header.strategy.name, &header.strategy.settings)?;
        let seed_genomes: Vec<AnyGenome> = match header.strategy.settings.get("seed_genomes") {
            Some(value) => serde_json::from_value(value.clone()).map_err(|e| {
                Error::input(format!(
                    "the journal header's seed genomes are unreadable: {e}"
                ))
            })?,
            None => Vec::new(),
        };
        let job = SearchJob {
            source,
            space,
            strategy,
            trainer,
            seed: header.seed,
            jobs: header.jobs,
            budget: header.budget,
            seed_genomes,
            folds: match trainer_folds {
                Some(k) => FoldChoice::Exactly(k),
                None => FoldChoice::Off,
            },
        };
        Ok((job, fingerprint))
    }
}

/// Continues the run in `run_dir`.
///
/// `data` replaces the recorded data path (e.g. after the file moved); the
/// file's fingerprint must still match. `budget` replaces the recorded
/// budget (e.g. to extend a finished run).
pub fn resume_job(
    run_dir: &Path,
    data: Option<PathBuf>,
    budget: Option<Budget>,
    observer: &mut dyn SearchObserver<AnyGenome>,
    stop: &AtomicBool,
) -> Result<SearchOutcome> {
    let (mut job, fingerprint) = SearchJob::from_run_dir(run_dir)?;
    if let Some(path) = data {
        job.source.path = path;
    }
    if let Some(budget) = budget {
        job.budget = budget;
    }
    job.execute(run_dir, observer, stop, Some(&fingerprint))
}
