//! Genome encodings and the search spaces they live in.

mod layer;
mod layer_mutation;
mod layer_space;
mod space;

pub use layer::{
    sha256_hex, short_hash, Activation, LayerGene, LayerGenome, Optimizer, TrainGenes,
};
pub use layer_mutation::{LayerMutation, MutationWeights};
pub use layer_space::LayerSpace;
pub use space::{Mutated, SearchSpace, SeededRng};
