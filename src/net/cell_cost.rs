//! Shapes and size of a cell genome's network, computed from the genome alone.
//!
//! These are the rules a network builder for cell genomes follows.
//!
//! **Macro skeleton** ([`Skeleton::layout`]): stem → cells → head.
//! - Images: stem = 3×3 conv (padding 1, no bias) from the input channels to F
//!   → BN. Head = global average pool → linear (weights and bias) to the classes.
//! - Tables: stem = affine map (weights and bias, no activation) from the
//!   features to F. Head = affine map to the classes.
//! - The first cell gets h0 = h1 = stem output. After each cell, h0 ← the old
//!   h1 (as it was, before any preprocessing) and h1 ← the cell's output.
//!
//! **Cell channel count C** (width for tables): a normal cell keeps h1's; a
//! reduction cell has 2 × h1's channels and ⌈H/2⌉ × ⌈W/2⌉ of h1's spatial size
//! (images) or ⌈h1 width / 2⌉ (tables).
//!
//! **Preprocessing**, only for a state some block of the cell reads:
//! - h1: if its channels ≠ C: ReLU → 1×1 conv (stride 1) → BN (images), an
//!   affine map to C (tables).
//! - h0 (images): if its spatial size differs from h1's (h0 comes from before
//!   a reduction): a factorised reduction to C; else if its channels ≠ C, as
//!   for h1. Tables: an affine map to C when the widths differ.
//! - Factorised reduction from c to C: ReLU → two 1×1 convs with stride 2, the
//!   first on x, the second on x shifted by one pixel right and down
//!   (zero-padded at the bottom/right), with ⌊C/2⌋ and C − ⌊C/2⌋ outputs →
//!   concatenate → BN(C). Output ⌈H/2⌉ × ⌈W/2⌉.
//!
//! **Ops** then map C → C. Images: in a normal cell all use stride 1 and keep
//! the size; in a reduction cell an op reading state 0 or 1 uses stride 2 (so
//! `identity` becomes a factorised reduction C → C) and an op reading a block
//! output uses stride 1. Every op's output has the cell's output size.
//!
//! **Cell output**: the outputs of blocks no later block reads
//! ([`Cell::unused_blocks`], k of them, in block order) are concatenated and
//! mapped back to C — always, even for k = 1 — by ReLU → 1×1 conv (k·C → C) → BN
//! (images) or an affine map k·C → C (tables).
//!
//! **Counting.** Params: conv weights C_out·(C_in/groups)·k_h·k_w (no bias,
//! every conv is followed by BN); 2 per BN channel (γ, β; running statistics
//! are not parameters); affine maps a·b weights + b biases; the gated op two
//! such maps. Multiply-adds per sample: convs H_out·W_out·C_out·(C_in/groups)·k·k
//! (a dilated 3×3 counts as 3×3), affine maps a·b. Pools, BN, ReLU and other
//! activations, additions, the gate's element-wise product, concatenation and
//! global pooling count 0.

use super::Cost;
use crate::genome::{
    Cell, CellKind, ConvOp, DenseOp, ImageCellGenome, Skeleton, TableCellGenome, STATE_H0, STATE_H1,
};

/// Shape of one hidden state; tables use `height = width = 1` and `channels` for the width.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct StateShape {
    /// Channels (images) or units (tables).
    pub channels: u64,
    /// Rows of the feature map (1 for tables).
    pub height: u64,
    /// Columns of the feature map (1 for tables).
    pub width: u64,
}

impl StateShape {
    fn area(self) -> u64 {
        self.height.saturating_mul(self.width)
    }

    fn same_spatial(self, other: StateShape) -> bool {
        (self.height, self.width) == (other.height, other.width)
    }
}

/// One cell of the skeleton with the shapes it reads and produces.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CellStage {
    /// Normal or reduction.
    pub kind: CellKind,
    /// Shape of h0 before preprocessing.
    pub h0: StateShape,
    /// Shape of h1 before preprocessing.
    pub h1: StateShape,
    /// Shape of the cell's output (C channels).
    pub output: StateShape,
}

fn stages(
    skeleton: &Skeleton,
    stem: StateShape,
    reduce: fn(StateShape) -> StateShape,
) -> Vec<CellStage> {
    let (mut h0, mut h1) = (stem, stem);
    let mut out = Vec::new();
    for kind in skeleton.layout() {
        let output = match kind {
            CellKind::Normal => h1,
            CellKind::Reduction => reduce(h1),
        };
        out.push(CellStage {
            kind,
            h0,
            h1,
            output,
        });
        (h0, h1) = (h1, output);
    }
    out
}

/// The cells of an image network for inputs of `(channels, height, width)`.
pub fn image_cell_stages(
    skeleton: &Skeleton,
    input_shape: (usize, usize, usize),
) -> Vec<CellStage> {
    let stem = StateShape {
        channels: u64::from(skeleton.channels),
        height: input_shape.1 as u64,
        width: input_shape.2 as u64,
    };
    stages(skeleton, stem, |s| StateShape {
        channels: s.channels.saturating_mul(2),
        height: s.height.div_ceil(2),
        width: s.width.div_ceil(2),
    })
}

/// The cells of a table network.
pub fn table_cell_stages(skeleton: &Skeleton) -> Vec<CellStage> {
    let stem = StateShape {
        channels: u64::from(skeleton.channels),
        height: 1,
        width: 1,
    };
    stages(skeleton, stem, |s| StateShape {
        channels: s.channels.div_ceil(2),
        ..s
    })
}

/// Running totals with saturating arithmetic.
struct Tally(Cost);

impl Tally {
    fn new() -> Self {
        Tally(Cost {
            params: 0,
            madds: 0,
        })
    }

    fn add(&mut self, params: u64, madds: u64) {
        self.0.params = self.0.params.saturating_add(params);
        self.0.madds = self.0.madds.saturating_add(madds);
    }

    /// A conv without bias followed by BN: `c_in·c_out·taps` weights + 2·c_out.
    fn conv_bn(&mut self, c_in: u64, c_out: u64, taps: u64, out_area: u64) {
        let weights = c_in.saturating_mul(c_out).saturating_mul(taps);
        let bn = c_out.saturating_mul(2);
        self.add(weights.saturating_add(bn), weights.saturating_mul(out_area));
    }

    /// An affine map with bias.
    fn affine(&mut self, n_in: u64, n_out: u64) {
        let weights = n_in.saturating_mul(n_out);
        self.add(weights.saturating_add(n_out), weights);
    }
}

fn conv_op(tally: &mut Tally, op: ConvOp, c: u64, out_area: u64, stride2: bool) {
    match op {
        ConvOp::Identity if stride2 => tally.conv_bn(c, c, 1, out_area),
        ConvOp::Identity | ConvOp::MaxPool3x3 | ConvOp::AvgPool3x3 => {}
        ConvOp::Conv1x1 => tally.conv_bn(c, c, 1, out_area),
        ConvOp::Conv3x3 | ConvOp::DilConv3x3 => tally.conv_bn(c, c, 9, out_area),
        ConvOp::SepConv3x3 => {
            let depthwise = c.saturating_mul(9);
            tally.add(depthwise, depthwise.saturating_mul(out_area));
            tally.conv_bn(c, c, 1, out_area);
        }
    }
}

fn image_cell(tally: &mut Tally, cell: &Cell<ConvOp>, stage: &CellStage) {
    let c = stage.output.channels;
    let in_area = stage.h1.area();
    let out_area = stage.output.area();
    if cell.reads_state(STATE_H1) && stage.h1.channels != c {
        tally.conv_bn(stage.h1.channels, c, 1, in_area);
    }
    let h0_needs_map = !stage.h0.same_spatial(stage.h1) || stage.h0.channels != c;
    if cell.reads_state(STATE_H0) && h0_needs_map {
        // A factorised reduction counts as one 1×1 conv c0 → C at h1's size.
        tally.conv_bn(stage.h0.channels, c, 1, in_area);
    }
    let reduction = stage.kind == CellKind::Reduction;
    for block in &cell.blocks {
        for (input, op) in block.pairs() {
            conv_op(tally, op, c, out_area, reduction && input <= STATE_H1);
        }
    }
    let k = cell.unused_blocks().len() as u64;
    tally.conv_bn(k.saturating_mul(c), c, 1, out_area);
}

/// Parameter and multiply-add counts of the image network `genome` describes,
/// for inputs of `(channels, height, width)` and `n_classes` classes, by the
/// rules of this module.
pub fn cell_cost(
    genome: &ImageCellGenome,
    input_shape: (usize, usize, usize),
    n_classes: usize,
) -> Cost {
    let mut tally = Tally::new();
    let f = u64::from(genome.skeleton.channels);
    let input_area = (input_shape.1 as u64).saturating_mul(input_shape.2 as u64);
    tally.conv_bn(input_shape.0 as u64, f, 9, input_area);
    let mut last = f;
    for stage in image_cell_stages(&genome.skeleton, input_shape) {
        let cell = match stage.kind {
            CellKind::Normal => &genome.normal,
            CellKind::Reduction => &genome.reduction,
        };
        image_cell(&mut tally, cell, &stage);
        last = stage.output.channels;
    }
    tally.affine(last, n_classes as u64);
    tally.0
}

fn dense_op(tally: &mut Tally, op: DenseOp, w: u64) {
    match op {
        DenseOp::Identity => {}
        DenseOp::DenseRelu | DenseOp::DenseTanh | DenseOp::DenseGelu => tally.affine(w, w),
        DenseOp::Gated => {
            tally.affine(w, w);
            tally.affine(w, w);
        }
    }
}

fn table_cell(tally: &mut Tally, cell: &Cell<DenseOp>, stage: &CellStage) {
    let w = stage.output.channels;
    for (state, shape) in [(STATE_H0, stage.h0), (STATE_H1, stage.h1)] {
        if cell.reads_state(state) && shape.channels != w {
            tally.affine(shape.channels, w);
        }
    }
    for block in &cell.blocks {
        for op in block.ops {
            dense_op(tally, op, w);
        }
    }
    let k = cell.unused_blocks().len() as u64;
    tally.affine(k.saturating_mul(w), w);
}

/// Parameter and multiply-add counts of the table network `genome` describes,
/// for `n_inputs` features and `n_classes` classes, by the rules of this module.
pub fn table_cell_cost(genome: &TableCellGenome, n_inputs: usize, n_classes: usize) -> Cost {
    let mut tally = Tally::new();
    let f = u64::from(genome.skeleton.channels);
    tally.affine(n_inputs as u64, f);
    let mut last = f;
    for stage in table_cell_stages(&genome.skeleton) {
        let cell = match stage.kind {
            CellKind::Normal => &genome.normal,
            CellKind::Reduction => &genome.reduction,
        };
        table_cell(&mut tally, cell, &stage);
        last = stage.output.channels;
    }
    tally.affine(last, n_classes as u64);
    tally.0
}
