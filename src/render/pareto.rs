//! The Pareto front of a run: validation objective (higher is better) against
//! trainable parameters (fewer is better).

use crate::search::EvaluationRecord;

/// Indices of the non-dominated scored records, fewest parameters first.
///
/// A record takes part when it has a finite objective and a parameter count.
/// Record `a` is dominated when another record `b` has an objective ≥ `a`'s
/// and parameters ≤ `a`'s, with at least one of the two strict.
///
/// Ties: records with the same objective *and* the same parameter count do
/// not dominate each other, so all of them are on the front (listed in index
/// order), e.g. the same genome evaluated twice with an equal score.
pub fn pareto_front<G>(records: &[EvaluationRecord<G>]) -> Vec<u64> {
    let mut points: Vec<(u64, f64, u64)> = records
        .iter()
        .filter_map(|r| match (r.objective, r.params) {
            (Some(objective), Some(params)) if objective.is_finite() => {
                Some((params, objective, r.index))
            }
            _ => None,
        })
        .collect();
    // Fewest parameters first; within equal counts the best objective first.
    points.sort_by(|a, b| a.0.cmp(&b.0).then(b.1.total_cmp(&a.1)).then(a.2.cmp(&b.2)));
    let mut front = Vec::new();
    // Best objective among records with strictly fewer parameters.
    let mut best_smaller: Option<f64> = None;
    let mut start = 0;
    while start < points.len() {
        let params = points[start].0;
        let end = points[start..]
            .iter()
            .position(|p| p.0 != params)
            .map_or(points.len(), |offset| start + offset);
        let group_best = points[start].1;
        if best_smaller.is_none_or(|best| group_best > best) {
            front.extend(
                points[start..end]
                    .iter()
                    .filter(|p| p.1 == group_best)
                    .map(|p| p.2),
            );
        }
        best_smaller = Some(best_smaller.map_or(group_best, |best| best.max(group_best)));
        start = end;
    }
    front
}
