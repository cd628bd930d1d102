//! `gemmule show --json`: everything `show` prints, as one JSON document on
//! standard output. The keys are documented in docs/json-output.md; they use
//! the same names as `summary.json` (`gemmule report`) where the two overlap.

use crate::render::{lineage, pareto_front, LineageStep};
use crate::search::{
    Budget, EvalStatus, EvaluationRecord, JournalContents, RunSummary, StrategyInfo,
};
use serde::Serialize;
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::Path;

/// The `show --json` format this gemmule writes. It goes up when a key is
/// removed or changes meaning; new keys may appear without a change.
pub const SHOW_FORMAT: u32 = 1;

/// The whole `show --json` document.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ShowDocument {
    /// [`SHOW_FORMAT`].
    pub format: u32,
    /// Always `run` (one run directory).
    pub kind: &'static str,
    /// The run directory, as given on the command line.
    pub directory: String,
    /// The objective's name (log loss is stored negated: higher is better).
    pub objective: String,
    /// λ of `--size-penalty` when candidates were ranked by objective − λ·log10(params).
    pub size_penalty: Option<f64>,
    /// How the run was set up (from the journal header).
    pub settings: RunSettings,
    /// The data the run searched on (from the journal header).
    pub data: DataFacts,
    /// Evaluations in the journal.
    pub evaluations: u64,
    /// Evaluations with an objective.
    pub scored: u64,
    /// Evaluations per status (`completed`, `early_stopped`, `diverged`, `over_budget`, `failed`).
    pub statuses: BTreeMap<String, u64>,
    /// Training seconds summed over the timed evaluations (`timings.jsonl`; 0 when missing).
    pub cpu_seconds: f64,
    /// The best `--top` scored candidates, best first (earlier first on ties).
    pub leaderboard: Vec<Candidate>,
    /// Best objective among evaluations 0..=i, one entry per evaluation (`null` while none scored).
    pub best_so_far: Vec<Option<f64>>,
    /// The candidate drawn by `show`: the best, or the one picked with `--index`.
    pub chosen: Option<ChosenCandidate>,
    /// The chosen candidate's lineage, first ancestor first (empty without a chosen one).
    pub lineage: Vec<LineageStep>,
    /// Candidates not beaten on both objective and parameters, fewest parameters first.
    pub pareto_front: Vec<FrontEntry>,
    /// What the journal records about the sealed test split (`show` never opens it).
    pub test_split: TestSplit,
    /// How candidates were scored (`folds`), the pick and its rule, the
    /// baselines and the pick's paired difference over the linear baseline.
    pub verdict: crate::search::RunVerdict,
    /// Problems met while reading the journal (also printed on standard error).
    pub warnings: Vec<String>,
}

/// The run's settings as recorded in the journal header.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunSettings {
    /// gemmule version that created the run.
    pub tool_version: String,
    /// Strategy name (`aging_evolution`, `random_sampling`) and its settings.
    pub strategy: StrategyInfo,
    /// Run seed.
    pub seed: u64,
    /// Candidates trained at once.
    pub jobs: usize,
    /// The budget the run was created with (`evaluations`, `seconds`).
    pub budget: Budget,
    /// Genome encoding: `layers`, `cells_image` or `cells_table`.
    pub encoding: Option<String>,
    /// The search space as recorded (`encoding` and `settings`).
    pub space: Value,
    /// The trainer settings as recorded (epochs, patience, objective, caps).
    pub trainer: Value,
}

/// The data block of the journal header, flattened for reading.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DataFacts {
    /// The data file or folder, as recorded.
    pub file: Option<String>,
    /// SHA-256 fingerprint of the data.
    pub fingerprint: Option<String>,
    /// Rows per split (`train`, `valid`, `test`).
    pub rows: Value,
    /// Class names.
    pub classes: Vec<String>,
    /// Encoded input features (tables; `null` for images).
    pub features: Option<usize>,
    /// Image shape `HxWxC` (images; `null` for tables).
    pub image_shape: Option<String>,
    /// The data source as recorded: path, format, label, delimiter, imputation, split shares and seed.
    pub source: Value,
}

/// One evaluated candidate.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Candidate {
    /// Journal index.
    pub index: u64,
    /// Genome id.
    pub id: String,
    /// Validation objective (`null` when not scored).
    pub objective: Option<f64>,
    /// Every validation score by name.
    pub scores: BTreeMap<String, f64>,
    /// Trainable parameters.
    pub params: Option<u64>,
    /// Multiply-adds per example.
    pub madds: Option<u64>,
    /// Epochs trained.
    pub epochs: u32,
    /// Best epoch by the watched validation quantity (1-based, 0 when not
    /// trained; with k-fold scoring the folds' mean, rounded).
    pub best_epoch: u32,
    /// How the evaluation ended.
    pub status: EvalStatus,
    /// Journal index of the parent (`null`: sampled or given).
    pub parent: Option<u64>,
    /// Mutation that made it from the parent.
    pub mutation: Option<String>,
    /// Explanation for failures and over-budget candidates.
    pub message: Option<String>,
    /// Every fold of its k-fold evaluation (absent for one validation split).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub folds: Option<crate::search::FoldScores>,
}

/// The candidate `show` draws, with its genome.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChosenCandidate {
    /// `best` (the highest objective) or `index` (picked with `--index`).
    pub selected_by: &'static str,
    /// The candidate's journal facts.
    #[serde(flatten)]
    pub candidate: Candidate,
    /// The genome as recorded in the journal.
    pub genome: Value,
}

/// One member of the Pareto front.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrontEntry {
    /// Journal index.
    pub index: u64,
    /// Genome id.
    pub id: String,
    /// Validation objective.
    pub objective: Option<f64>,
    /// Trainable parameters.
    pub params: Option<u64>,
    /// Multiply-adds per example.
    pub madds: Option<u64>,
}

/// Test openings recorded in the journal.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TestSplit {
    /// How often the test split was opened.
    pub openings: u64,
    /// Every opening, in journal order.
    pub records: Vec<TestOpening>,
}

/// One test opening (written by `gemmule finalize`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TestOpening {
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
    /// the same opening, McNemar, the test ledger), for openings made by a
    /// gemmule that records them.
    pub final_evaluation: Option<crate::workflow::FinalReport>,
}

/// The journal name of a status (`completed`, `over_budget`, …).
pub fn status_name(status: EvalStatus) -> String {
    serde_json::to_value(status)
        .ok()
        .and_then(|v| v.as_str().map(String::from))
        .unwrap_or_default()
}

/// Evaluations per status name.
pub fn status_counts<G>(records: &[EvaluationRecord<G>]) -> BTreeMap<String, u64> {
    let mut counts = BTreeMap::new();
    for record in records {
        *counts.entry(status_name(record.status)).or_default() += 1;
    }
    counts
}

impl ShowDocument {
    /// Gathers the document for the run in `run` from its journal contents,
    /// its summary, the chosen record (`by_index`: picked with `--index`) and
    /// the summed training seconds.
    pub fn new(
        run: &Path,
        contents: &JournalContents<Value>,
        summary: &RunSummary<Value>,
        chosen: Option<&EvaluationRecord<Value>>,
        by_index: bool,
        cpu_seconds: f64,
        pick: Option<crate::search::PickRule>,
    ) -> Self {
        let h = &contents.header;
        let records = &contents.evaluations;
        let text = |v: &Value, key: &str| v.get(key).and_then(Value::as_str).map(String::from);
        let front = pareto_front(records)
            .into_iter()
            .filter_map(|index| records.iter().find(|r| r.index == index))
            .map(|r| FrontEntry {
                index: r.index,
                id: r.id.clone(),
                objective: r.objective,
                params: r.params,
                madds: r.madds,
            })
            .collect();
        ShowDocument {
            format: SHOW_FORMAT,
            kind: "run",
            directory: run.display().to_string(),
            objective: text(&h.trainer, "objective").unwrap_or_else(|| "objective".into()),
            size_penalty: h.trainer.get("size_penalty").and_then(Value::as_f64),
            settings: RunSettings {
                tool_version: h.tool_version.clone(),
                strategy: h.strategy.clone(),
                seed: h.seed,
                jobs: h.jobs,
                budget: h.budget,
                encoding: text(&h.space, "encoding"),
                space: h.space.clone(),
                trainer: h.trainer.clone(),
            },
            data: data_facts(&h.data),
            evaluations: summary.evaluations,
            scored: summary.scored,
            statuses: status_counts(records),
            cpu_seconds,
            leaderboard: summary.top.iter().map(candidate).collect(),
            best_so_far: summary.best_so_far.clone(),
            chosen: chosen.map(|r| ChosenCandidate {
                selected_by: if by_index { "index" } else { "best" },
                candidate: candidate(r),
                genome: r.genome.clone(),
            }),
            lineage: chosen.map_or_else(Vec::new, |r| lineage(records, r.index)),
            pareto_front: front,
            test_split: test_split(&contents.openings),
            verdict: crate::search::RunVerdict::new(contents, pick),
            warnings: contents.warnings.clone(),
        }
    }
}

fn candidate(r: &EvaluationRecord<Value>) -> Candidate {
    Candidate {
        index: r.index,
        id: r.id.clone(),
        objective: r.objective,
        scores: r.scores.clone(),
        params: r.params,
        madds: r.madds,
        epochs: r.epochs,
        best_epoch: r.best_epoch,
        status: r.status,
        parent: r.parent,
        mutation: r.mutation.clone(),
        message: r.message.clone(),
        folds: r.folds.clone(),
    }
}

fn data_facts(data: &Value) -> DataFacts {
    let source = data.get("source").cloned().unwrap_or(Value::Null);
    DataFacts {
        file: source.get("path").and_then(Value::as_str).map(String::from),
        fingerprint: data
            .get("fingerprint")
            .and_then(Value::as_str)
            .map(String::from),
        rows: data.get("rows").cloned().unwrap_or(Value::Null),
        classes: data
            .get("classes")
            .and_then(Value::as_array)
            .map(|names| {
                names
                    .iter()
                    .filter_map(|n| n.as_str().map(String::from))
                    .collect()
            })
            .unwrap_or_default(),
        features: data.get("features").and_then(Value::as_array).map(Vec::len),
        image_shape: data
            .get("image_shape")
            .and_then(Value::as_str)
            .map(String::from),
        source,
    }
}

fn test_split(openings: &[Value]) -> TestSplit {
    let records: Vec<TestOpening> = openings
        .iter()
        .enumerate()
        .map(|(position, body)| TestOpening {
            opening: body
                .get("opening")
                .and_then(Value::as_u64)
                .unwrap_or(position as u64 + 1),
            final_evaluation: crate::workflow::FinalReport::from_opening(body)
                .ok()
                .filter(|report| report.class_report.is_some()),
            index: body.get("index").and_then(Value::as_u64),
            id: body.get("id").and_then(Value::as_str).map(String::from),
            test_rows: body.get("test_rows").and_then(Value::as_u64),
            test_scores: body
                .get("test_scores")
                .and_then(Value::as_object)
                .map(|scores| {
                    scores
                        .iter()
                        .filter_map(|(name, value)| Some((name.clone(), value.as_f64()?)))
                        .collect()
                })
                .unwrap_or_default(),
        })
        .collect();
    TestSplit {
        openings: records.len() as u64,
        records,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn status_names_are_the_journal_names() {
        // Source: the snake_case names of EvalStatus in the journal (docs/journal.md).
        assert_eq!(status_name(EvalStatus::EarlyStopped), "early_stopped");
        assert_eq!(status_name(EvalStatus::OverBudget), "over_budget");
    }

    #[test]
    fn openings_are_numbered_from_one_with_their_scores() {
        // Common practice, no source: the body shape written by workflow::finalize.
        let body = serde_json::json!({
            "index": 4, "id": "abc", "test_rows": 24,
            "test_scores": {"accuracy": 0.75, "macro_f1": 0.7}
        });
        let split = test_split(&[body.clone(), body]);
        assert_eq!(split.openings, 2);
        assert_eq!(split.records[1].opening, 2);
        assert_eq!(split.records[0].index, Some(4));
        assert_eq!(split.records[0].test_scores.get("accuracy"), Some(&0.75));
    }
}
