//! The reference cell genomes: one small, fixed genome per catalogue that
//! tests, benchmarks (B6 in `benches/cells.rs`) and examples share, so
//! "the reference cell" means the same network everywhere.

use super::cell::{
    Block, Cell, CellGenome, ConvOp, DenseOp, ImageCellGenome, Skeleton, TableCellGenome,
};
use super::layer::{Optimizer, TrainGenes};

/// Adam with the given learning rate and batch size, no weight decay.
fn adam(learning_rate: f64, batch_size: u32) -> TrainGenes {
    TrainGenes {
        learning_rate,
        batch_size,
        weight_decay: 0.0,
        optimizer: Optimizer::Adam,
    }
}

/// A cell of two blocks: block 0 reads states `first.0`, block 1 `second.0`.
fn two_blocks<Op>(first: ([u8; 2], [Op; 2]), second: ([u8; 2], [Op; 2])) -> Cell<Op> {
    Cell {
        blocks: vec![
            Block {
                inputs: first.0,
                ops: first.1,
            },
            Block {
                inputs: second.0,
                ops: second.1,
            },
        ],
    }
}

/// The reference image cell genome: F = 8 stem channels, N = 1 normal cell
/// per repeat, R = 2 repeats (normal → reduction → normal), B = 2 blocks per
/// cell. Normal cell: block 0 = conv3x3(h0) + sep_conv3x3(h1), block 1 =
/// identity(h1) + sep_conv3x3(block 0). Reduction cell: block 0 =
/// max_pool3x3(h0) + sep_conv3x3(h1), block 1 = identity(h1) +
/// conv3x3(block 0). Adam, learning rate 0.01, batch 32.
pub fn reference_image_cell_genome() -> ImageCellGenome {
    use ConvOp::*;
    CellGenome {
        normal: two_blocks(
            ([0, 1], [Conv3x3, SepConv3x3]),
            ([1, 2], [Identity, SepConv3x3]),
        ),
        reduction: two_blocks(
            ([0, 1], [MaxPool3x3, SepConv3x3]),
            ([1, 2], [Identity, Conv3x3]),
        ),
        skeleton: Skeleton {
            channels: 8,
            normal_cells: 1,
            repeats: 2,
        },
        training: adam(0.01, 32),
    }
}

/// The reference table cell genome: F = 32 stem width, N = 1, R = 2, B = 2.
/// Normal cell: block 0 = dense_relu(h0) + gated(h1), block 1 =
/// identity(h1) + dense_gelu(block 0). Reduction cell: block 0 =
/// identity(h0) + dense_tanh(h1), block 1 = dense_relu(h1) +
/// identity(block 0). Adam, learning rate 0.01, batch 16.
pub fn reference_table_cell_genome() -> TableCellGenome {
    use DenseOp::*;
    CellGenome {
        normal: two_blocks(
            ([0, 1], [DenseRelu, Gated]),
            ([1, 2], [Identity, DenseGelu]),
        ),
        reduction: two_blocks(
            ([0, 1], [Identity, DenseTanh]),
            ([1, 2], [DenseRelu, Identity]),
        ),
        skeleton: Skeleton {
            channels: 32,
            normal_cells: 1,
            repeats: 2,
        },
        training: adam(0.01, 16),
    }
}
