//! Cell genomes turned into candle networks ([`ImageCellNet`],
//! [`TableCellNet`]), following the shape and counting rules written down
//! in `crate::net::cell_cost`, so `param_count()` equals the genome-computed
//! parameter count.

mod cell_graph;
mod conv_layers;
mod image_cell;
mod image_net;
mod params;
mod table_layers;
mod table_net;
mod training;
mod weights_file;

pub use image_net::ImageCellNet;
pub use table_net::TableCellNet;
pub use training::{train_image_cells, train_table_cells, CellTrainOutcome};
pub(crate) use training::{train_image_cells_with_cut, train_table_cells_with_cut};
