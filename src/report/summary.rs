//! `summary.json`: the facts of a report in machine-readable form. The HTML
//! page is drawn from the same facts, so the two always agree. They are
//! gathered in `summary_build`.

use super::ancestry::FrontMember;
use super::settings_check::SettingsCheck;
use crate::render::LineageStep;
use crate::workflow::ComparisonReport;
use serde::Serialize;
use serde_json::Value;
use std::collections::BTreeMap;

/// The `summary.json` format this gemmule writes.
pub const SUMMARY_FORMAT: u32 = 1;

/// Everything the report states, machine-readable.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReportSummary {
    /// [`SUMMARY_FORMAT`].
    pub format: u32,
    /// `run` or `comparison`.
    pub kind: String,
    /// The directory described, as given.
    pub directory: String,
    /// The objective's name (log loss is stored negated: higher is better).
    pub objective: String,
    /// What was searched.
    pub searched: SearchedFacts,
    /// Per run, in plan order.
    pub runs: Vec<RunFacts>,
    /// The best candidate over every run.
    pub best: Option<BestFacts>,
    /// The best candidate's lineage, first ancestor first.
    pub lineage: Vec<LineageStep>,
    /// Pareto-optimal candidates over every run, fewest parameters first.
    pub pareto_front: Vec<FrontMember>,
    /// The comparison's plan and statistics (comparisons only).
    pub comparison: Option<ComparisonFacts>,
    /// What the journals record about the sealed test split.
    pub test_split: TestSplitFacts,
    /// What is needed to repeat the search.
    pub reproducibility: ReproducibilityFacts,
}

/// The data, space and strategies searched.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SearchedFacts {
    /// The data file's path as recorded.
    pub data_file: Option<String>,
    /// Encoded input features.
    pub features: usize,
    /// Class names.
    pub classes: Vec<String>,
    /// Rows per split (`train`, `valid`, `test`).
    pub rows: Value,
    /// The search space as recorded (encoding and settings).
    pub space: Value,
    /// The strategies, with their recorded settings (one entry per distinct strategy).
    pub strategies: Vec<StrategyFacts>,
    /// Run seeds, in plan order.
    pub seeds: Vec<u64>,
    /// Evaluation budget of each run as created.
    pub evaluations_per_run: u64,
}

/// A strategy and its recorded settings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StrategyFacts {
    /// Its name in the report (the strategy short name).
    pub name: String,
    /// Its name in the journal.
    pub journal_name: String,
    /// Its settings from the first run that used it.
    pub settings: Value,
}

/// One run at a glance.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunFacts {
    /// Run name.
    pub name: String,
    /// Strategy.
    pub strategy: String,
    /// Run seed.
    pub seed: u64,
    /// Evaluations in the journal.
    pub evaluations: u64,
    /// Evaluations with an objective.
    pub scored: u64,
    /// Evaluations per status.
    pub statuses: BTreeMap<String, u64>,
    /// Journal index of the run's best candidate.
    pub best_index: Option<u64>,
    /// Its genome id.
    pub best_id: Option<String>,
    /// Its objective.
    pub best_objective: Option<f64>,
    /// Training seconds summed over the run's timed evaluations.
    pub cpu_seconds: f64,
    /// Elapsed search seconds until the last timed evaluation (pauses left out).
    pub search_seconds: f64,
    /// Evaluations with a timing line.
    pub timed_evaluations: u64,
    /// How often the run's test split was opened.
    pub test_openings: u64,
    /// How candidates were scored, the pick, the baselines and the pick's
    /// paired difference over the linear baseline.
    pub verdict: crate::search::RunVerdict,
    /// Problems met reading the journal.
    pub warnings: Vec<String>,
}

/// The best candidate over every run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BestFacts {
    /// The run it belongs to.
    pub run: String,
    /// That run's strategy.
    pub strategy: String,
    /// Journal index.
    pub index: u64,
    /// Genome id.
    pub id: String,
    /// Validation objective.
    pub objective: Option<f64>,
    /// Every validation score.
    pub scores: BTreeMap<String, f64>,
    /// Trainable parameters.
    pub params: Option<u64>,
    /// Multiply-adds per example.
    pub madds: Option<u64>,
    /// Epochs trained.
    pub epochs: u32,
    /// Parent's journal index.
    pub parent: Option<u64>,
    /// Mutation from the parent.
    pub mutation: Option<String>,
    /// The genome as recorded.
    pub genome: Value,
}

/// A comparison's plan and statistics.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComparisonFacts {
    /// Runs in the plan.
    pub planned_runs: usize,
    /// Planned runs without a journal yet.
    pub not_started: Vec<String>,
    /// The statistics (see `Comparison::report`), when every run holds its budget.
    pub statistics: Option<ComparisonReport>,
    /// Why there are no statistics.
    pub statistics_unavailable: Option<String>,
}

/// The sealed test split as the journals record it (this report never opens it).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TestSplitFacts {
    /// Test openings over every run.
    pub openings: u64,
    /// Every opening, run by run, in journal order.
    pub records: Vec<OpeningFacts>,
}

/// One test-opening record.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OpeningFacts {
    /// The run.
    pub run: String,
    /// Which opening of the test split this was, as the test ledger counted
    /// it (openings written by gemmule 0.1.0: the run's own count).
    pub opening: u64,
    /// Journal index of the candidate tested.
    pub index: Option<u64>,
    /// Its genome id.
    pub id: Option<String>,
    /// Test rows.
    pub test_rows: Option<u64>,
    /// Test scores by name.
    pub test_scores: BTreeMap<String, f64>,
    /// The whole final evaluation (per-class results, the linear baseline in
    /// the same opening, McNemar), when the record was made by a gemmule that
    /// wrote them.
    pub final_evaluation: Option<crate::workflow::FinalReport>,
}

/// What is needed to repeat the search and judge the result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReproducibilityFacts {
    /// gemmule versions that created the runs (distinct).
    pub tool_versions: Vec<String>,
    /// gemmule versions of every search session, from the timings (distinct).
    pub session_tool_versions: Vec<String>,
    /// SHA-256 fingerprints of the data file (distinct).
    pub data_fingerprints: Vec<String>,
    /// The data source as recorded: path, label, delimiter, imputation, split shares and seed.
    pub data_source: Value,
    /// The search space as recorded.
    pub space: Value,
    /// Trainer settings as recorded (of the first run).
    pub trainer: Value,
    /// Whether the runs' settings agree.
    pub settings: SettingsCheck,
    /// Each run's budget as created (distinct).
    pub budgets: Vec<Value>,
    /// Run seeds.
    pub seeds: Vec<u64>,
    /// Jobs per run (distinct).
    pub jobs: Vec<usize>,
    /// Training seconds summed over every timed evaluation of every run.
    pub total_cpu_seconds: f64,
    /// Test openings over every run.
    pub test_openings: u64,
}
