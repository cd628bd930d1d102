//! The lineage of a candidate: the chain of parents from an individual with
//! no parent (sampled at random, or given verbatim) down to the candidate.

use super::text::{fit_width, Glyphs, TEXT_WIDTH};
use crate::search::EvaluationRecord;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;

/// One generation of a lineage.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LineageStep {
    /// Journal index of this evaluation.
    pub index: u64,
    /// The genome's short id.
    pub id: String,
    /// The mutation that made it from the previous step; `None` for the first
    /// step (no parent).
    pub mutation: Option<String>,
    /// Validation objective (`None` when not scored).
    pub objective: Option<f64>,
    /// Trainable parameters, when known.
    pub params: Option<u64>,
}

/// The chain of parents leading to evaluation `index`, oldest first, ending
/// with `index` itself; empty when no record has that index.
///
/// The chain starts at the first ancestor without a parent. It also stops,
/// without error, at a parent that is missing from `records` or whose index is
/// not lower than its child's (neither happens in a journal gemmule wrote).
pub fn lineage<G>(records: &[EvaluationRecord<G>], index: u64) -> Vec<LineageStep> {
    let by_index: HashMap<u64, &EvaluationRecord<G>> = records
        .iter()
        .map(|record| (record.index, record))
        .collect();
    let mut chain = Vec::new();
    let mut next = by_index.get(&index).copied();
    while let Some(record) = next {
        chain.push(LineageStep {
            index: record.index,
            id: record.id.clone(),
            mutation: record.mutation.clone(),
            objective: record.objective,
            params: record.params,
        });
        next = record
            .parent
            .filter(|&parent| parent < record.index)
            .and_then(|parent| by_index.get(&parent).copied());
    }
    chain.reverse();
    chain
}

/// Steps shown in full at the start of a long lineage.
const HEAD_STEPS: usize = 2;
/// Steps shown in full at the end of a long lineage.
const TAIL_STEPS: usize = 8;

/// Compact text of a lineage, one line per step (`start` marks the first),
/// with the middle of chains longer than ten steps folded into one line.
pub fn lineage_lines(steps: &[LineageStep], ascii: bool) -> String {
    let glyphs = Glyphs::new(ascii);
    let line = |step: &LineageStep| {
        let how = match &step.mutation {
            Some(name) => format!("{} {name}", glyphs.chain),
            None => "start".to_string(),
        };
        format!(
            "  {:>6}  {:<12}  {:<16}  {:>9}  {:>9}",
            step.index,
            step.id,
            how,
            step.objective
                .map_or("-".to_string(), |v| format!("{v:.4}")),
            step.params.map_or("-".to_string(), |p| p.to_string()),
        )
    };
    let mut lines = vec![format!(
        "  {:>6}  {:<12}  {:<16}  {:>9}  {:>9}",
        "index", "id", "mutation", "objective", "params"
    )];
    if steps.len() > HEAD_STEPS + TAIL_STEPS {
        lines.extend(steps[..HEAD_STEPS].iter().map(line));
        lines.push(format!(
            "  {:>6}  ({} more steps)",
            glyphs.ellipsis,
            steps.len() - HEAD_STEPS - TAIL_STEPS
        ));
        lines.extend(steps[steps.len() - TAIL_STEPS..].iter().map(line));
    } else {
        lines.extend(steps.iter().map(line));
    }
    fit_width(&lines.join("\n"), TEXT_WIDTH, ascii)
}
