//! The pick of a whole comparison: the pick rule applied to every run's
//! candidates together, credited to every strategy that evaluated the
//! chosen genome (runs of one seed share their first random samples, so an
//! identical genome found by both strategies is no win for either).

use super::compare::Comparison;
use crate::search::{pick, EvaluationRecord, GapSummary, Journal, JournalContents, PickRule};
use crate::Result;
use serde::Serialize;
use serde_json::Value;
use std::path::PathBuf;

/// The comparison's pick (see the module docs).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComparisonPick {
    /// The run that holds it (the first in plan order among runs that
    /// evaluated the same genome with the same objective).
    pub run: String,
    /// That run's directory.
    pub run_dir: PathBuf,
    /// Its journal index in that run.
    pub index: u64,
    /// Genome id.
    pub id: String,
    /// Its objective (k-fold mean or validation score).
    pub objective: f64,
    /// Standard error of the k-fold mean.
    pub standard_error: Option<f64>,
    /// Trainable parameters.
    pub params: Option<u64>,
    /// The rule that chose it.
    pub rule: PickRule,
    /// Every strategy with a run that evaluated this genome, in plan order.
    pub found_by: Vec<String>,
    /// The pick minus the linear baseline of its run.
    pub baseline_gap: Option<GapSummary>,
}

impl ComparisonPick {
    /// One line for `compare` and the demo.
    pub fn describe(&self) -> String {
        let value = match self.standard_error {
            Some(se) => format!("{:.4} ± {se:.4}", self.objective),
            None => format!("{:.4}", self.objective),
        };
        let credit = if self.found_by.len() > 1 {
            format!(
                "found by {} (the same genome: no win for either strategy)",
                self.found_by.join(" and ")
            )
        } else {
            format!("found by {}", self.found_by.join(""))
        };
        format!(
            "pick over all runs: genome {} in {} (evaluation {}), {value}, {} parameters; {credit}; \
             rule: {}",
            self.id,
            self.run,
            self.index,
            self.params.map_or("?".to_string(), |p| p.to_string()),
            self.rule.describe()
        )
    }
}

/// The pick over every started run of `comparison` by `rule` (default: one
/// standard error when the runs were scored by k-fold, the top objective
/// otherwise); `None` when no run has a scored candidate.
pub fn comparison_pick(
    comparison: &Comparison,
    rule: Option<PickRule>,
) -> Result<Option<ComparisonPick>> {
    let mut runs = Vec::new();
    for planned in comparison.plan().runs() {
        let dir = comparison.run_dir(&planned);
        if !Journal::path_in(&dir).is_file() {
            continue;
        }
        let contents: JournalContents<Value> = Journal::read(&Journal::path_in(&dir))?;
        runs.push((planned, dir, contents));
    }
    let mut pooled: Vec<EvaluationRecord<Value>> = Vec::new();
    let mut owner = Vec::new();
    for (position, (_, _, contents)) in runs.iter().enumerate() {
        for record in &contents.evaluations {
            let mut copy = record.clone();
            // Pooled positions keep "earliest" meaning plan order, then index.
            copy.index = pooled.len() as u64;
            pooled.push(copy);
            owner.push((position, record.index));
        }
    }
    let folded = runs
        .first()
        .is_some_and(|(_, _, c)| c.header.trainer.get("folds").is_some());
    let rule = rule.unwrap_or(PickRule::default_for(folded));
    let Some(picked) = pick(&pooled, rule) else {
        return Ok(None);
    };
    let (run_position, index) = owner[picked.record.index as usize];
    let (planned, dir, contents) = &runs[run_position];
    let record = &contents.evaluations[index as usize];
    let mut found_by: Vec<String> = Vec::new();
    for (other, _, other_contents) in &runs {
        let name = other.strategy.name().to_string();
        if other_contents.evaluations.iter().any(|r| r.id == record.id) && !found_by.contains(&name)
        {
            found_by.push(name);
        }
    }
    let baseline_gap =
        crate::search::BaselineGap::of(record, &contents.baselines).map(GapSummary::from);
    Ok(Some(ComparisonPick {
        run: planned.dir_name.clone(),
        run_dir: dir.clone(),
        index: record.index,
        id: record.id.clone(),
        objective: record.objective.unwrap_or(f64::NAN),
        standard_error: record.folds.as_ref().and_then(|f| f.standard_error),
        params: record.params,
        rule: picked.rule,
        found_by,
        baseline_gap,
    }))
}
