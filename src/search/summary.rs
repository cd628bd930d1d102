//! A run at a glance, built from journal records only (for `show`).

use super::records::EvaluationRecord;
use super::strategy::compare_objectives;

/// Best record, leaderboard and best-so-far curve of a run.
#[derive(Debug, Clone, PartialEq)]
pub struct RunSummary<G> {
    /// Evaluations in the journal.
    pub evaluations: u64,
    /// Evaluations with an objective.
    pub scored: u64,
    /// The evaluation with the highest objective (the earliest on ties).
    pub best: Option<EvaluationRecord<G>>,
    /// Up to `top_k` scored evaluations, best first, earlier first on ties.
    pub top: Vec<EvaluationRecord<G>>,
    /// `best_so_far[i]`: best objective among evaluations `0..=i` (`None` while none scored).
    pub best_so_far: Vec<Option<f64>>,
}

impl<G: Clone> RunSummary<G> {
    /// Summarizes journal records (in index order), keeping the `top_k` best.
    pub fn new(records: &[EvaluationRecord<G>], top_k: usize) -> Self {
        let mut ranked: Vec<&EvaluationRecord<G>> = records
            .iter()
            .filter(|record| record.objective.is_some())
            .collect();
        ranked.sort_by(|a, b| {
            compare_objectives(b.objective, a.objective).then(a.index.cmp(&b.index))
        });
        let mut best_so_far = Vec::with_capacity(records.len());
        let mut running: Option<f64> = None;
        for record in records {
            if compare_objectives(record.objective, running).is_gt() {
                running = record.objective;
            }
            best_so_far.push(running);
        }
        RunSummary {
            evaluations: records.len() as u64,
            scored: ranked.len() as u64,
            best: ranked.first().map(|record| (*record).clone()),
            top: ranked
                .iter()
                .take(top_k)
                .map(|record| (*record).clone())
                .collect(),
            best_so_far,
        }
    }
}
