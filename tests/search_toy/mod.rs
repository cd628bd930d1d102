//! A cheap synthetic search problem for the search-engine tests (no training):
//! genomes are 20 symbols over an alphabet of 4, the objective counts the
//! positions matching a hidden target, and a mutation changes one position.

#![allow(dead_code)]

use gemmule::genome::{Mutated, SearchSpace, SeededRng};
use gemmule::search::seeds::mix;
use gemmule::search::{EvalStatus, Evaluation, Evaluator};
use num_bigint::BigUint;
use rand::Rng;
use std::collections::BTreeMap;
use std::time::Duration;

/// Symbols per genome.
pub const LENGTH: usize = 20;
/// Size of the alphabet.
pub const ALPHABET: u8 = 4;

/// The space of all symbol strings.
pub struct MatchSpace;

impl SearchSpace for MatchSpace {
    type Genome = Vec<u8>;

    fn sample(&self, rng: &mut SeededRng) -> Vec<u8> {
        (0..LENGTH).map(|_| rng.gen_range(0..ALPHABET)).collect()
    }

    fn mutate(&self, parent: &Vec<u8>, rng: &mut SeededRng) -> Mutated<Vec<u8>> {
        let mut genome = parent.clone();
        let position = rng.gen_range(0..LENGTH);
        genome[position] = (genome[position] + rng.gen_range(1..ALPHABET)) % ALPHABET;
        Mutated {
            genome,
            mutation: "change_symbol",
        }
    }

    fn genome_id(&self, genome: &Vec<u8>) -> String {
        genome
            .iter()
            .map(|symbol| char::from(b'a' + symbol))
            .collect()
    }

    fn validate(&self, genome: &Vec<u8>) -> gemmule::Result<()> {
        if genome.len() != LENGTH || genome.iter().any(|&symbol| symbol >= ALPHABET) {
            return Err(gemmule::Error::input("not a toy genome"));
        }
        Ok(())
    }

    fn size(&self) -> BigUint {
        BigUint::from(u32::from(ALPHABET)).pow(LENGTH as u32)
    }

    fn describe(&self) -> serde_json::Value {
        serde_json::json!({ "length": LENGTH, "alphabet": ALPHABET })
    }
}

/// A hidden target that depends on `seed`.
pub fn target(seed: u64) -> Vec<u8> {
    (0..LENGTH as u64)
        .map(|position| (mix(seed ^ position.wrapping_mul(0x9E37)) % u64::from(ALPHABET)) as u8)
        .collect()
}

/// Positions of `genome` equal to `target`.
pub fn matches(genome: &[u8], target: &[u8]) -> usize {
    genome.iter().zip(target).filter(|(a, b)| a == b).count()
}

/// Scores genomes by matches, plus a seed-dependent nudge below 0.001 so
/// evaluation seeds visibly matter.
pub struct MatchEvaluator {
    /// The hidden target.
    pub target: Vec<u8>,
    /// Sleep up to this many milliseconds (chosen by the seed) so that
    /// finishing order varies between workers.
    pub max_sleep_ms: u64,
    /// Panic for genomes starting with this symbol.
    pub panic_on_first: Option<u8>,
    /// Journal the strategy's bar as the score `"bar"` (when there is one).
    pub record_bar: bool,
}

impl MatchEvaluator {
    /// A fast, well-behaved evaluator for `target`.
    pub fn new(target: Vec<u8>) -> Self {
        MatchEvaluator {
            target,
            max_sleep_ms: 0,
            panic_on_first: None,
            record_bar: false,
        }
    }
}

impl Evaluator<Vec<u8>> for MatchEvaluator {
    fn evaluate(&self, genome: &Vec<u8>, seed: u64) -> Evaluation {
        if self.max_sleep_ms > 0 {
            std::thread::sleep(Duration::from_millis(mix(seed) % (self.max_sleep_ms + 1)));
        }
        if self.panic_on_first.is_some() && genome.first().copied() == self.panic_on_first {
            panic!(
                "toy evaluator refuses genomes starting with {:?}",
                genome.first()
            );
        }
        let count = matches(genome, &self.target) as f64;
        let nudge = (seed % 1000) as f64 / 1_000_000.0;
        Evaluation {
            status: EvalStatus::Completed,
            objective: Some(count + nudge),
            scores: BTreeMap::from([("matches".to_string(), count), ("nudge".to_string(), nudge)]),
            params: Some(LENGTH as u64),
            madds: None,
            epochs: 1,
            best_epoch: 1,
            message: None,
            folds: None,
        }
    }

    fn evaluate_with_bar(&self, genome: &Vec<u8>, seed: u64, bar: Option<f64>) -> Evaluation {
        let mut evaluation = self.evaluate(genome, seed);
        if let (true, Some(bar)) = (self.record_bar, bar) {
            evaluation.scores.insert("bar".to_string(), bar);
        }
        evaluation
    }
}
