//! Progress reporting: how the scheduler tells the caller what happened.

use super::records::EvaluationRecord;

/// Receives search progress (e.g. to draw a progress bar). Called on the
/// scheduler's thread, in commit order.
pub trait SearchObserver<G> {
    /// A session starts with `already_done` evaluations in the journal and a
    /// total budget of `budget` evaluations.
    fn on_start(&mut self, _already_done: u64, _budget: u64) {}

    /// A new evaluation was committed to the journal; `done` evaluations are
    /// now in it, and `best_so_far` is the best objective among them.
    fn on_commit(
        &mut self,
        record: &EvaluationRecord<G>,
        best_so_far: Option<f64>,
        done: u64,
        budget: u64,
    );

    /// Something was tolerated or repaired (a stale lock, a torn journal line).
    fn on_warning(&mut self, _message: &str) {}
}

/// An observer that ignores everything.
#[derive(Debug, Clone, Copy, Default)]
pub struct QuietObserver;

impl<G> SearchObserver<G> for QuietObserver {
    fn on_commit(&mut self, _: &EvaluationRecord<G>, _: Option<f64>, _: u64, _: u64) {}
}
