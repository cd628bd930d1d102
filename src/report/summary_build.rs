//! Gathering the facts of `summary.json` from the runs' journals and timings.

use super::ancestry::{best_candidate, lineage_of, pooled_front};
use super::input::{ReportInput, ReportRun, ReportSubject};
use super::settings_check::check_settings;
use super::summary::{
    BestFacts, ComparisonFacts, OpeningFacts, ReportSummary, ReproducibilityFacts, RunFacts,
    SearchedFacts, StrategyFacts, TestSplitFacts, SUMMARY_FORMAT,
};
use super::timeline::{cpu_seconds, finish_times};
use crate::search::{EvalStatus, EvaluationRecord};
use serde_json::Value;
use std::collections::BTreeMap;

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
        verdict: crate::search::RunVerdict::new(&run.journal, None),
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
                opening: body
                    .get("opening")
                    .and_then(Value::as_u64)
                    .unwrap_or(position as u64 + 1),
                index: body.get("index").and_then(Value::as_u64),
                id: body.get("id").and_then(Value::as_str).map(String::from),
                test_rows: body.get("test_rows").and_then(Value::as_u64),
                test_scores,
                final_evaluation: crate::workflow::FinalReport::from_opening(body)
                    .ok()
                    .filter(|report| report.class_report.is_some()),
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
