//! The strategy seam: what proposes the next genome and learns from results.

use super::evaluation::Evaluation;
use crate::genome::SeededRng;
use std::cmp::Ordering;

/// One candidate a strategy wants evaluated.
#[derive(Debug, Clone, PartialEq)]
pub struct Proposal<G> {
    /// The genome to evaluate.
    pub genome: G,
    /// Journal index of the genome it was derived from, if any.
    pub parent: Option<u64>,
    /// Name of the mutation applied to the parent; `None` for a fresh sample
    /// or a genome given verbatim.
    pub mutation: Option<String>,
}

/// A search strategy, driven by the scheduler.
///
/// The scheduler calls `propose` for indices 0, 1, 2, … in order, and
/// `observe` for every committed result in index order. Before proposing index
/// k the strategy has observed exactly the results `0..=k - lag` (none when
/// `k < lag`), where the lag is 1 for a run with one job and 3 × jobs for
/// more (recorded in the journal header as `lag` when it differs from
/// `jobs`). Right after `propose` it calls `cut_bar`. A strategy must be
/// deterministic given those calls and the generator it is handed, or a
/// resumed run will be refused.
pub trait Strategy<G>: Send {
    /// A short stable name, recorded in the journal header (e.g. `"aging_evolution"`).
    fn name(&self) -> &'static str;

    /// The settings that shape its proposals, recorded in the journal header
    /// and compared when a run is resumed.
    fn settings(&self) -> serde_json::Value;

    /// Proposes the candidate with journal index `index`, drawing all randomness from `rng`.
    fn propose(&mut self, index: u64, rng: &mut SeededRng) -> Proposal<G>;

    /// Learns the result of the candidate with journal index `index`.
    fn observe(&mut self, index: u64, genome: &G, evaluation: &Evaluation);

    /// The objective the candidate just proposed must be able to beat to
    /// matter to this strategy, given what it has observed so far; the
    /// evaluator may cut a candidate that cannot reach it (see
    /// [`Evaluator::evaluate_with_bar`](super::Evaluator::evaluate_with_bar)).
    /// `None` (the default) means every candidate trains in full.
    fn cut_bar(&self) -> Option<f64> {
        None
    }
}

/// Orders objectives, higher is better, with `None` below every score.
pub fn compare_objectives(a: Option<f64>, b: Option<f64>) -> Ordering {
    match (a, b) {
        (Some(x), Some(y)) => x.total_cmp(&y),
        (Some(_), None) => Ordering::Greater,
        (None, Some(_)) => Ordering::Less,
        (None, None) => Ordering::Equal,
    }
}
