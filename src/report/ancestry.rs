//! The candidates a report singles out: the best one (over every run), its
//! lineage, and the Pareto-optimal ones pooled over every run.

use super::input::ReportRun;
use crate::render::{lineage, pareto_front, LineageStep};
use crate::search::EvaluationRecord;
use serde::Serialize;
use serde_json::Value;

/// A candidate located in its run.
#[derive(Debug, Clone, Copy)]
pub struct Located<'a> {
    /// Position of the run in the report's run list.
    pub run: usize,
    /// The evaluation record.
    pub record: &'a EvaluationRecord<Value>,
}

/// A Pareto-optimal candidate (most objective for its parameter count).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrontMember {
    /// The run's name.
    pub run: String,
    /// The run's strategy.
    pub strategy: String,
    /// Journal index in that run.
    pub index: u64,
    /// Genome id.
    pub id: String,
    /// Trainable parameters.
    pub params: u64,
    /// Multiply-adds per example, when known.
    pub madds: Option<u64>,
    /// Validation objective.
    pub objective: f64,
}

/// The candidate the report presents: the pick rule over every run's
/// candidates together (one standard error for k-fold runs, the top
/// objective otherwise; see [`crate::search::pick`]); ties go to the earlier
/// run, then to the earlier evaluation. `None` when nothing is scored.
pub fn best_candidate(runs: &[ReportRun]) -> Option<Located<'_>> {
    let (pooled, owners) = pooled_records(runs);
    let folded = runs
        .first()
        .is_some_and(|run| run.journal.header.trainer.get("folds").is_some());
    let picked = crate::search::pick(&pooled, crate::search::PickRule::default_for(folded))?;
    let (run, record) = owners[picked.record.index as usize];
    Some(Located { run, record })
}

/// A pooled record's run (its position in the runs) and original record.
type Owner<'a> = (usize, &'a EvaluationRecord<Value>);

/// Every run's records in one list (plan order, then journal order), their
/// `index` renumbered to the pooled position, without genomes; and for each
/// pooled position its run and original record.
fn pooled_records(runs: &[ReportRun]) -> (Vec<EvaluationRecord<()>>, Vec<Owner<'_>>) {
    let mut owners = Vec::new();
    let mut pooled: Vec<EvaluationRecord<()>> = Vec::new();
    for (position, run) in runs.iter().enumerate() {
        for record in &run.journal.evaluations {
            owners.push((position, record));
            pooled.push(EvaluationRecord {
                index: pooled.len() as u64,
                id: record.id.clone(),
                genome: (),
                parent: None,
                parent_id: None,
                mutation: None,
                seed: record.seed,
                status: record.status,
                objective: record.objective,
                scores: Default::default(),
                params: record.params,
                madds: record.madds,
                epochs: record.epochs,
                best_epoch: record.best_epoch,
                message: None,
                folds: record.folds.clone(),
            });
        }
    }
    (pooled, owners)
}

/// The lineage of `candidate` inside its run, first ancestor first.
pub fn lineage_of(runs: &[ReportRun], candidate: Located<'_>) -> Vec<LineageStep> {
    runs.get(candidate.run)
        .map(|run| lineage(&run.journal.evaluations, candidate.record.index))
        .unwrap_or_default()
}

/// The Pareto front over every run's candidates together (fewest parameters
/// first): a candidate is on it when no candidate of any run has at least
/// its objective with at most its parameters, one of them strictly.
pub fn pooled_front(runs: &[ReportRun]) -> Vec<FrontMember> {
    let (pooled, owners) = pooled_records(runs);
    pareto_front(&pooled)
        .into_iter()
        .filter_map(|pooled_index| {
            let &(position, record) = owners.get(usize::try_from(pooled_index).ok()?)?;
            let run = &runs[position];
            Some(FrontMember {
                run: run.name.clone(),
                strategy: run.strategy.clone(),
                index: record.index,
                id: record.id.clone(),
                params: record.params?,
                madds: record.madds,
                objective: record.objective?,
            })
        })
        .collect()
}
