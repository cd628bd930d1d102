//! Turning genomes into candle networks, and counting their size.
//!
//! [`layer_cost`] sizes a candidate from its genome alone (no tensors are
//! built); [`Mlp`] is the built network the trainer updates.

mod activation;
mod cell_cost;
mod cell_net;
mod cost;
mod dense;
mod init;
mod mlp;
mod mlp_from_values;
pub mod ops;
mod param_spec;
mod seeded;
mod tensor_file;

pub use cell_cost::{
    cell_cost, image_cell_stages, table_cell_cost, table_cell_stages, CellStage, StateShape,
};
pub use cell_net::{
    train_image_cells, train_table_cells, CellTrainOutcome, ImageCellNet, TableCellNet,
};
pub(crate) use cell_net::{train_image_cells_with_cut, train_table_cells_with_cut};
pub use cost::{layer_cost, Cost};
pub use mlp::Mlp;
pub use param_spec::{parameter_specs, ParameterSpec};
pub use seeded::seeded_rng;
pub use tensor_file::write_tensor_file;
