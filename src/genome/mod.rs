//! Genome encodings and the search spaces they live in.

mod any;
mod cell;
mod cell_mutation;
mod cell_space;
mod layer;
mod layer_mutation;
mod layer_space;
mod reference_cells;
mod space;

pub use any::{AnyGenome, AnySpace, Encoding};
pub use cell::{
    Block, Cell, CellGenome, CellKind, CellOp, ConvOp, DenseOp, ImageCellGenome, Skeleton,
    TableCellGenome, MAX_BLOCKS, MAX_CHANNELS, MAX_NORMAL_CELLS, MAX_REPEATS, STATE_H0, STATE_H1,
};
pub use cell_mutation::{CellMutation, CellMutationWeights};
pub use cell_space::{CellSpace, ImageCellSpace, TableCellSpace};
pub use layer::{
    sha256_hex, short_hash, Activation, LayerGene, LayerGenome, Optimizer, TrainGenes,
};
pub use layer_mutation::{LayerMutation, MutationWeights};
pub use layer_space::LayerSpace;
pub use reference_cells::{reference_image_cell_genome, reference_table_cell_genome};
pub use space::{Mutated, SearchSpace, SeededRng};
