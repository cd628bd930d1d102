//! `candidates.csv`: one row per evaluation of every run, for spreadsheets
//! and scripts. Empty cells mean "not known" (no score, no timing line).
//!
//! Columns: `run, strategy, seed, index, id, parent, mutation, status,
//! objective`, then one `score_<name>` column per validation score found in
//! any run (sorted by name), then `params, madds, epochs, seconds`.

use super::input::ReportRun;
use super::summary_build::status_name;
use super::timeline::seconds_by_index;
use crate::{Error, Result};
use std::collections::BTreeSet;

fn cell<T: ToString>(value: Option<T>) -> String {
    value.map(|v| v.to_string()).unwrap_or_default()
}

/// The CSV text of every run's evaluations (see the module docs).
pub fn candidates_csv(runs: &[ReportRun]) -> Result<String> {
    let score_names: BTreeSet<&str> = runs
        .iter()
        .flat_map(|run| run.journal.evaluations.iter())
        .flat_map(|record| record.scores.keys().map(String::as_str))
        .collect();
    let mut writer = csv::Writer::from_writer(Vec::new());
    let failed = |e: csv::Error| Error::internal(format!("writing candidates.csv: {e}"));
    let mut header: Vec<String> = [
        "run",
        "strategy",
        "seed",
        "index",
        "id",
        "parent",
        "mutation",
        "status",
        "objective",
    ]
    .iter()
    .map(|name| name.to_string())
    .collect();
    header.extend(score_names.iter().map(|name| format!("score_{name}")));
    header.extend(["params", "madds", "epochs", "seconds"].map(String::from));
    writer.write_record(&header).map_err(failed)?;
    for run in runs {
        let seconds = seconds_by_index(&run.timings);
        for record in &run.journal.evaluations {
            let mut row = vec![
                run.name.clone(),
                run.strategy.clone(),
                run.seed.to_string(),
                record.index.to_string(),
                record.id.clone(),
                cell(record.parent),
                record.mutation.clone().unwrap_or_default(),
                status_name(record.status),
                cell(record.objective),
            ];
            row.extend(
                score_names
                    .iter()
                    .map(|name| cell(record.scores.get(*name))),
            );
            row.extend([
                cell(record.params),
                cell(record.madds),
                record.epochs.to_string(),
                cell(seconds.get(&record.index)),
            ]);
            writer.write_record(&row).map_err(failed)?;
        }
    }
    let bytes = writer
        .into_inner()
        .map_err(|e| Error::internal(format!("writing candidates.csv: {e}")))?;
    String::from_utf8(bytes)
        .map_err(|e| Error::internal(format!("candidates.csv is not UTF-8: {e}")))
}
