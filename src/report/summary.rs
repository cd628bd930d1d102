//! `summary.json`: the facts of a report in machine-readable form. The HTML
//! page is drawn from the same facts, so the two always agree.

use super::ancestry::{best_candidate, lineage_of, pooled_front, FrontMember};
use super::input::{ReportInput, ReportRun, ReportSubject};
use super::settings_check::{check_settings, SettingsCheck};
use super::timeline::{cpu_seconds, finish_times};
use crate::render::LineageStep;
use crate::search::{EvalStatus, EvaluationRecord};
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
    /// 1 for the run's first opening, 2 for the second, …
    pub opening: u64,
    /// Journal index of the candidate tested.
    pub index: Option<u64>,
    /// Its genome id.
    pub id: Option<String>,
    /// Test rows.
    pub test_rows: Option<u64>,
    /// Test scores by name.
    pub test_scores: BTreeMap<String, f64>,
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

/// The name of a status as written in the journal.
pub fn status_name(status: EvalStatus) -> String {
    serde_json::to_value(status)
        .ok()
        .and_then(|value| value.as_str().map(String::from))
        .unwrap_or_else(|| format!("{status:?}"))
}

fn distinct<T: PartialEq + Clone>(items: impl IntoIterator<Item = T>) -> Vec<T> {
    let mut out: Vec<T> = Vec::new();
    for item in items {
        if !out.contains(&item) {
            out.push(item);
        }
    }
    out
}

impl ReportSummary {
    /// Gathers the facts of `input`.
    pub fn build(input: &ReportInput) -> ReportSummary {
        let runs = &input.runs;
        let best = best_candidate(runs);
        let lineage = best.map(|b| lineage_of(runs, b)).unwrap_or_default();
        let best = best.map(|b| best_facts(&runs[b.run], b.record));
        ReportSummary {
            format: SUMMARY_FORMAT,
            kind: if input.is_comparison() {
                "comparison"
            } else {
                "run"
            }
            .to_string(),
            directory: input.dir.display().to_string(),
            objective: input.objective(),
            searched: searched(runs),
            runs: runs.iter().map(run_facts).collect(),
            best,
            lineage,
            pareto_front: pooled_front(runs),
            comparison: comparison_facts(&input.subject),
            test_split: test_split(runs),
            reproducibility: reproducibility(runs),
        }
    }
}

fn searched(runs: &[ReportRun]) -> SearchedFacts {
    let header = runs.first().map(|run| &run.journal.header);
    let data = header.map(|h| h.data.clone()).unwrap_or(Value::Null);
    let strategies = distinct(runs.iter().map(|run| run.strategy.clone()))
        .into_iter()
        .filter_map(|name| {
            let run = runs.iter().find(|run| run.strategy == name)?;
            Some(StrategyFacts {
                name,
                journal_name: run.journal.header.strategy.name.clone(),
                settings: run.journal.header.strategy.settings.clone(),
            })
        })
        .collect();
    SearchedFacts {
        data_file: data
            .pointer("/source/path")
            .and_then(Value::as_str)
            .map(String::from),
        features: data
            .get("features")
            .and_then(Value::as_array)
            .map_or(0, Vec::len),
        classes: data
            .get("classes")
            .and_then(Value::as_array)
            .map(|names| {
                names
                    .iter()
                    .map(|n| n.as_str().unwrap_or("?").to_string())
                    .collect()
            })
            .unwrap_or_default(),
        rows: data.get("rows").cloned().unwrap_or(Value::Null),
        space: header.map(|h| h.space.clone()).unwrap_or(Value::Null),
        strategies,
        seeds: distinct(runs.iter().map(|run| run.seed)),
        evaluations_per_run: header.map_or(0, |h| h.budget.evaluations),
    }
}

fn run_facts(run: &ReportRun) -> RunFacts {
    let records = &run.journal.evaluations;
    let mut statuses = BTreeMap::new();
    for record in records {
        *statuses.entry(status_name(record.status)).or_insert(0) += 1;
    }
    let best = best_candidate(std::slice::from_ref(run)).map(|b| b.record);
    let finished = finish_times(&run.timings);
    RunFacts {
        name: run.name.clone(),
        strategy: run.strategy.clone(),
        seed: run.seed,
        evaluations: records.len() as u64,
        scored: records.iter().filter(|r| r.objective.is_some()).count() as u64,
        statuses,
        best_index: best.map(|r| r.index),
        best_id: best.map(|r| r.id.clone()),
        best_objective: best.and_then(|r| r.objective),
        cpu_seconds: cpu_seconds(&run.timings),
        search_seconds: finished.values().copied().fold(0.0, f64::max),
        timed_evaluations: records
            .iter()
            .filter(|r| finished.contains_key(&r.index))
            .count() as u64,
        test_openings: run.journal.openings.len() as u64,
        warnings: run.journal.warnings.clone(),
    }
}

fn best_facts(run: &ReportRun, record: &EvaluationRecord<Value>) -> BestFacts {
    BestFacts {
        run: run.name.clone(),
        strategy: run.strategy.clone(),
        index: record.index,
        id: record.id.clone(),
        objective: record.objective,
        scores: record.scores.clone(),
        params: record.params,
        madds: record.madds,
        epochs: record.epochs,
        parent: record.parent,
        mutation: record.mutation.clone(),
        genome: record.genome.clone(),
    }
}

fn comparison_facts(subject: &ReportSubject) -> Option<ComparisonFacts> {
    match subject {
        ReportSubject::Run => None,
        ReportSubject::Comparison {
            plan,
            analysis,
            not_started,
        } => Some(ComparisonFacts {
            planned_runs: plan.runs().len(),
            not_started: not_started.clone(),
            statistics: analysis.as_ref().ok().map(|report| (**report).clone()),
            statistics_unavailable: analysis.as_ref().err().cloned(),
        }),
    }
}

fn test_split(runs: &[ReportRun]) -> TestSplitFacts {
    let mut records = Vec::new();
    for run in runs {
        for (position, body) in run.journal.openings.iter().enumerate() {
            let test_scores = body
                .get("test_scores")
                .and_then(Value::as_object)
                .map(|scores| {
                    scores
                        .iter()
                        .filter_map(|(name, value)| Some((name.clone(), value.as_f64()?)))
                        .collect()
                })
                .unwrap_or_default();
            records.push(OpeningFacts {
                run: run.name.clone(),
                opening: position as u64 + 1,
                index: body.get("index").and_then(Value::as_u64),
                id: body.get("id").and_then(Value::as_str).map(String::from),
                test_rows: body.get("test_rows").and_then(Value::as_u64),
                test_scores,
            });
        }
    }
    TestSplitFacts {
        openings: records.len() as u64,
        records,
    }
}

fn reproducibility(runs: &[ReportRun]) -> ReproducibilityFacts {
    let headers: Vec<_> = runs.iter().map(|run| &run.journal.header).collect();
    let first_data = headers
        .first()
        .map(|h| h.data.clone())
        .unwrap_or(Value::Null);
    let session_versions = runs.iter().flat_map(|run| {
        run.timings.iter().filter_map(|entry| match entry {
            crate::search::TimingEntry::Session { tool_version, .. } => Some(tool_version.clone()),
            crate::search::TimingEntry::Timing { .. } => None,
        })
    });
    ReproducibilityFacts {
        tool_versions: distinct(headers.iter().map(|h| h.tool_version.clone())),
        session_tool_versions: distinct(session_versions),
        data_fingerprints: distinct(headers.iter().filter_map(|h| {
            h.data
                .get("fingerprint")
                .and_then(Value::as_str)
                .map(String::from)
        })),
        data_source: first_data.get("source").cloned().unwrap_or(Value::Null),
        space: headers
            .first()
            .map(|h| h.space.clone())
            .unwrap_or(Value::Null),
        trainer: headers
            .first()
            .map(|h| h.trainer.clone())
            .unwrap_or(Value::Null),
        settings: check_settings(runs),
        budgets: distinct(
            headers
                .iter()
                .map(|h| serde_json::to_value(h.budget).unwrap_or(Value::Null)),
        ),
        seeds: distinct(runs.iter().map(|run| run.seed)),
        jobs: distinct(headers.iter().map(|h| h.jobs)),
        total_cpu_seconds: runs.iter().map(|run| cpu_seconds(&run.timings)).sum(),
        test_openings: runs
            .iter()
            .map(|run| run.journal.openings.len() as u64)
            .sum(),
    }
}
