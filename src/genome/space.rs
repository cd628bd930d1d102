//! The search-space seam: what a strategy needs to know about an encoding.

use num_bigint::BigUint;
use rand_chacha::ChaCha8Rng;
use serde::{de::DeserializeOwned, Serialize};
use std::fmt::Debug;

/// The seeded generator every random choice in gemmule flows from.
pub type SeededRng = ChaCha8Rng;

/// A child genome together with the name of the mutation that made it.
#[derive(Debug, Clone, PartialEq)]
pub struct Mutated<G> {
    /// The child.
    pub genome: G,
    /// The catalogue name of the mutation applied (e.g. `"insert_layer"`).
    pub mutation: &'static str,
}

/// A family of genomes that strategies can sample and mutate.
///
/// Implemented by the layer-genome space and, later, cell-genome spaces;
/// strategies and the scheduler only see this trait, so they can be tested
/// with a cheap synthetic space.
pub trait SearchSpace: Send + Sync {
    /// The genome type of this space.
    type Genome: Clone + Debug + PartialEq + Serialize + DeserializeOwned + Send + Sync + 'static;

    /// Draws a random member (the distribution is documented by each space).
    fn sample(&self, rng: &mut SeededRng) -> Self::Genome;

    /// Applies exactly one mutation from the catalogue to `parent`; the child
    /// stays inside the space's bounds.
    fn mutate(&self, parent: &Self::Genome, rng: &mut SeededRng) -> Mutated<Self::Genome>;

    /// A stable short id of a genome (equal genomes, equal ids).
    fn genome_id(&self, genome: &Self::Genome) -> String;

    /// Checks that `genome` lies inside this space; the message names the field and allowed range.
    fn validate(&self, genome: &Self::Genome) -> crate::Result<()>;

    /// The exact number of members.
    fn size(&self) -> BigUint;

    /// The space's settings, for the run journal's header.
    fn describe(&self) -> serde_json::Value;
}

/// Checks a mutation catalogue's weights, given as (operator name, weight):
/// each finite and non-negative, and at least one positive.
pub(crate) fn check_mutation_weights(
    weights: impl Iterator<Item = (&'static str, f64)>,
) -> crate::Result<()> {
    let mut any_positive = false;
    for (name, w) in weights {
        if !(w.is_finite() && w >= 0.0) {
            return Err(crate::Error::input(format!(
                "search space: mutation_weights.{name} is {w}, allowed range is [0, inf)"
            )));
        }
        any_positive |= w > 0.0;
    }
    if !any_positive {
        return Err(crate::Error::input(
            "search space: every mutation weight is 0; give at least one a positive weight",
        ));
    }
    Ok(())
}
