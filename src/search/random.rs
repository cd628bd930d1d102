//! Random search (Li & Talwalkar, UAI 2019): every proposal is a fresh sample.

use super::evaluation::Evaluation;
use super::strategy::{Proposal, Strategy};
use crate::genome::{SearchSpace, SeededRng};
use std::sync::Arc;

/// The random-search baseline: samples the space independently for every index.
pub struct RandomSampling<S: SearchSpace> {
    space: Arc<S>,
}

impl<S: SearchSpace> RandomSampling<S> {
    /// Random search over `space`.
    pub fn new(space: Arc<S>) -> Self {
        RandomSampling { space }
    }
}

impl<S: SearchSpace> Strategy<S::Genome> for RandomSampling<S> {
    fn name(&self) -> &'static str {
        "random_sampling"
    }

    fn settings(&self) -> serde_json::Value {
        serde_json::json!({})
    }

    fn propose(&mut self, _index: u64, rng: &mut SeededRng) -> Proposal<S::Genome> {
        Proposal {
            genome: self.space.sample(rng),
            parent: None,
            mutation: None,
        }
    }

    fn observe(&mut self, _index: u64, _genome: &S::Genome, _evaluation: &Evaluation) {}
}
