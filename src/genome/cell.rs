//! Cell genomes in the style of NASNet (Zoph et al., CVPR 2018): a normal cell
//! and a reduction cell, each a few two-input blocks, stacked in a fixed macro
//! skeleton. One generic structure serves two op catalogues: [`ConvOp`] for
//! images and [`DenseOp`] for tables.
//!
//! The shapes, preprocessing and counting rules a network builder follows are
//! written down in `crate::net::cell_cost`.

use super::layer::{json_problem, short_hash, LayerGenome, TrainGenes};
use crate::{Error, Result};
use serde::{de::DeserializeOwned, Deserialize, Serialize};
use std::fmt::Debug;
use std::hash::Hash;

/// Most blocks a cell may hold.
pub const MAX_BLOCKS: u32 = 5;
/// Largest stem channel count / stem width `F`.
pub const MAX_CHANNELS: u32 = 4096;
/// Most normal cells `N` per repeat.
pub const MAX_NORMAL_CELLS: u32 = 16;
/// Most repeats `R` of the macro skeleton.
pub const MAX_REPEATS: u32 = 8;

/// An operation catalogue for the two branches of a block.
///
/// The derived order of the enum is the catalogue order that canonical blocks sort by.
pub trait CellOp:
    Copy + Debug + Eq + Ord + Hash + Serialize + DeserializeOwned + Send + Sync + 'static
{
    /// Every op of the catalogue, in catalogue order.
    const ALL: &'static [Self];
    /// Value of the genome's `"ops"` field; keeps genomes of different catalogues apart.
    const TAG: &'static str;
    /// The `"encoding"` name in a space's description.
    const ENCODING: &'static str;
    /// The name used in JSON.
    fn name(self) -> &'static str;
}

/// Ops for image cells. Every conv op is ReLU → conv (no bias) → batch norm and
/// keeps the channel count; stride 1 with "same" padding, except that in a
/// reduction cell an op reading h0 or h1 directly uses stride 2.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
pub enum ConvOp {
    /// The input unchanged; on a stride-2 input a factorised reduction
    /// (ReLU → two 1×1 stride-2 convs on grids offset by one pixel, concatenated → BN).
    #[serde(rename = "identity")]
    Identity,
    /// ReLU → 1×1 conv → BN.
    #[serde(rename = "conv1x1")]
    Conv1x1,
    /// ReLU → 3×3 conv (padding 1) → BN.
    #[serde(rename = "conv3x3")]
    Conv3x3,
    /// ReLU → depthwise 3×3 conv (padding 1) → pointwise 1×1 conv → BN.
    #[serde(rename = "sep_conv3x3")]
    SepConv3x3,
    /// ReLU → full 3×3 conv with dilation 2 (padding 2) → BN.
    #[serde(rename = "dil_conv3x3")]
    DilConv3x3,
    /// 3×3 max pooling (padding 1), no parameters.
    #[serde(rename = "max_pool3x3")]
    MaxPool3x3,
    /// 3×3 average pooling (padding 1, averaging over pixels inside the image), no parameters.
    #[serde(rename = "avg_pool3x3")]
    AvgPool3x3,
}

impl CellOp for ConvOp {
    const ALL: &'static [ConvOp] = &[
        ConvOp::Identity,
        ConvOp::Conv1x1,
        ConvOp::Conv3x3,
        ConvOp::SepConv3x3,
        ConvOp::DilConv3x3,
        ConvOp::MaxPool3x3,
        ConvOp::AvgPool3x3,
    ];
    const TAG: &'static str = "conv";
    const ENCODING: &'static str = "cells_image";

    fn name(self) -> &'static str {
        match self {
            ConvOp::Identity => "identity",
            ConvOp::Conv1x1 => "conv1x1",
            ConvOp::Conv3x3 => "conv3x3",
            ConvOp::SepConv3x3 => "sep_conv3x3",
            ConvOp::DilConv3x3 => "dil_conv3x3",
            ConvOp::MaxPool3x3 => "max_pool3x3",
            ConvOp::AvgPool3x3 => "avg_pool3x3",
        }
    }
}

/// Ops for table cells: affine maps (weights and bias) of the cell's width.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
pub enum DenseOp {
    /// The input unchanged.
    #[serde(rename = "identity")]
    Identity,
    /// relu(W h + b).
    #[serde(rename = "dense_relu")]
    DenseRelu,
    /// tanh(W h + b).
    #[serde(rename = "dense_tanh")]
    DenseTanh,
    /// gelu(W h + b) (tanh approximation).
    #[serde(rename = "dense_gelu")]
    DenseGelu,
    /// sigmoid(W_g h + b_g) ⊙ (W h + b): two affine maps.
    #[serde(rename = "gated")]
    Gated,
}

impl CellOp for DenseOp {
    const ALL: &'static [DenseOp] = &[
        DenseOp::Identity,
        DenseOp::DenseRelu,
        DenseOp::DenseTanh,
        DenseOp::DenseGelu,
        DenseOp::Gated,
    ];
    const TAG: &'static str = "dense";
    const ENCODING: &'static str = "cells_table";

    fn name(self) -> &'static str {
        match self {
            DenseOp::Identity => "identity",
            DenseOp::DenseRelu => "dense_relu",
            DenseOp::DenseTanh => "dense_tanh",
            DenseOp::DenseGelu => "dense_gelu",
            DenseOp::Gated => "gated",
        }
    }
}

/// Index of the hidden state h0 (output of the cell before the previous one).
pub const STATE_H0: u8 = 0;
/// Index of the hidden state h1 (output of the previous cell).
pub const STATE_H1: u8 = 1;

/// One block: `ops[0](state inputs[0]) + ops[1](state inputs[1])`.
///
/// State 0 is h0, 1 is h1 and 2 + j the output of block j of the same cell
/// (j below this block's position). The sum is commutative, so the canonical form stores the two
/// (input, op) pairs in ascending order (input first, then catalogue order).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Block<Op> {
    /// The states the two branches read.
    pub inputs: [u8; 2],
    /// The op applied on each branch.
    pub ops: [Op; 2],
}

impl<Op: CellOp> Block<Op> {
    /// The two (input, op) pairs in storage order.
    pub fn pairs(&self) -> [(u8, Op); 2] {
        [(self.inputs[0], self.ops[0]), (self.inputs[1], self.ops[1])]
    }

    /// Whether the pairs are stored in ascending order.
    pub fn is_canonical(&self) -> bool {
        let [first, second] = self.pairs();
        first <= second
    }

    /// Swaps the pairs when they are out of order.
    pub fn canonicalise(&mut self) {
        if !self.is_canonical() {
            self.inputs.swap(0, 1);
            self.ops.swap(0, 1);
        }
    }
}

/// A cell: blocks in order. Block outputs no later block of the same cell
/// reads are concatenated (in block order) and mapped back to the cell's
/// channel count / width to form the cell's output.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Cell<Op> {
    /// The blocks, each reading only h0, h1 or earlier blocks.
    pub blocks: Vec<Block<Op>>,
}

impl<Op: CellOp> Cell<Op> {
    /// Indices of the blocks whose outputs form the cell output (read by no later block).
    pub fn unused_blocks(&self) -> Vec<usize> {
        (0..self.blocks.len())
            .filter(|&j| {
                let state = j + 2;
                !self.blocks[j + 1..]
                    .iter()
                    .any(|b| b.inputs.iter().any(|&i| usize::from(i) == state))
            })
            .collect()
    }

    /// Whether any block reads `state` (e.g. [`STATE_H0`]).
    pub fn reads_state(&self, state: u8) -> bool {
        self.blocks.iter().any(|b| b.inputs.contains(&state))
    }

    /// Puts every block into canonical order.
    pub fn canonicalise(&mut self) {
        self.blocks.iter_mut().for_each(Block::canonicalise);
    }

    /// Checks block count (1..=[`MAX_BLOCKS`]), input ranges and canonical order.
    fn validate_basic(&self, name: &str) -> Result<()> {
        let count = self.blocks.len();
        if count == 0 || count > MAX_BLOCKS as usize {
            return Err(Error::input(format!(
                "{name}.blocks has {count} entries, allowed range is 1..={MAX_BLOCKS}"
            )));
        }
        for (i, block) in self.blocks.iter().enumerate() {
            for (slot, &input) in block.inputs.iter().enumerate() {
                if usize::from(input) > i + 1 {
                    let later = usize::from(input) - 2;
                    return Err(Error::input(format!(
                        "{name}.blocks[{i}].inputs[{slot}] is {input}, allowed range is 0..={} ({}); \
                         state {input} is the output of block {later}, which {} block {i}: a \
                         block reads only h0, h1 and earlier blocks",
                        i + 1,
                        state_names(i),
                        if later == i { "is" } else { "comes after" }
                    )));
                }
            }
            if !block.is_canonical() {
                let [a, b] = block.pairs();
                return Err(Error::input(format!(
                    "{name}.blocks[{i}] is not in canonical order: (input, op) pairs must be ascending, \
                     got ({}, {}) before ({}, {}); swap them",
                    a.0,
                    a.1.name(),
                    b.0,
                    b.1.name()
                )));
            }
        }
        Ok(())
    }
}

/// Names of the states block `i` may read, e.g. "h0, h1, blocks 0..1".
fn state_names(i: usize) -> String {
    match i {
        0 => "h0, h1".to_string(),
        1 => "h0, h1, block 0".to_string(),
        _ => format!("h0, h1, blocks 0..{}", i - 1),
    }
}

/// The macro skeleton around the cells.
///
/// Images: stem 3×3 conv to `channels` (F) → `repeats` (R) times
/// [`normal_cells` (N) normal cells, then one reduction cell], the last repeat
/// without its reduction cell → global average pool → linear classifier. A
/// reduction cell doubles the channel count and halves height and width
/// (rounding up). Tables: stem affine map to F units, the same pattern, then a
/// linear classifier; a reduction cell halves the width (rounding up).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Skeleton {
    /// Stem channels (images) or stem width (tables), F.
    pub channels: u32,
    /// Normal cells per repeat, N.
    pub normal_cells: u32,
    /// Repeats of the normal-cells-then-reduction pattern, R.
    pub repeats: u32,
}

/// Which of the two cells of a genome sits at a position of the skeleton.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum CellKind {
    /// Keeps shape.
    Normal,
    /// Doubles channels and halves height and width (images) or halves width (tables).
    Reduction,
}

impl Skeleton {
    /// The cells from input to output: R·N normal cells and R − 1 reduction cells.
    pub fn layout(&self) -> Vec<CellKind> {
        let mut kinds = Vec::new();
        for repeat in 0..self.repeats {
            kinds.extend((0..self.normal_cells).map(|_| CellKind::Normal));
            if repeat + 1 < self.repeats {
                kinds.push(CellKind::Reduction);
            }
        }
        kinds
    }

    fn validate_basic(&self) -> Result<()> {
        let fields = [
            ("channels", self.channels, MAX_CHANNELS),
            ("normal_cells", self.normal_cells, MAX_NORMAL_CELLS),
            ("repeats", self.repeats, MAX_REPEATS),
        ];
        for (name, value, max) in fields {
            if value == 0 || value > max {
                return Err(Error::input(format!(
                    "skeleton.{name} is {value}, allowed range is 1..={max}"
                )));
            }
        }
        Ok(())
    }
}

/// A cell-encoded candidate: normal cell, reduction cell, skeleton, training genes.
///
/// JSON: `{"ops": "conv" | "dense", "normal": …, "reduction": …, "skeleton": …,
/// "training": …}`; the `"ops"` tag keeps image and table genomes apart.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(
    try_from = "CellGenomeJson<Op>",
    into = "CellGenomeJson<Op>",
    bound = "Op: CellOp"
)]
pub struct CellGenome<Op> {
    /// The cell that keeps shape.
    pub normal: Cell<Op>,
    /// The cell that reduces (see [`Skeleton`]).
    pub reduction: Cell<Op>,
    /// How the cells are stacked.
    pub skeleton: Skeleton,
    /// How the network is trained.
    pub training: TrainGenes,
}

/// A cell genome for images.
pub type ImageCellGenome = CellGenome<ConvOp>;
/// A cell genome for tables.
pub type TableCellGenome = CellGenome<DenseOp>;

/// The JSON form of a [`CellGenome`], with its catalogue tag.
#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields, bound = "Op: CellOp")]
struct CellGenomeJson<Op> {
    ops: String,
    normal: Cell<Op>,
    reduction: Cell<Op>,
    skeleton: Skeleton,
    training: TrainGenes,
}

impl<Op: CellOp> TryFrom<CellGenomeJson<Op>> for CellGenome<Op> {
    type Error = String;

    fn try_from(json: CellGenomeJson<Op>) -> Result<Self, String> {
        if json.ops != Op::TAG {
            return Err(format!(
                "ops is \"{}\", allowed value here is \"{}\"",
                json.ops,
                Op::TAG
            ));
        }
        Ok(CellGenome {
            normal: json.normal,
            reduction: json.reduction,
            skeleton: json.skeleton,
            training: json.training,
        })
    }
}

impl<Op: CellOp> From<CellGenome<Op>> for CellGenomeJson<Op> {
    fn from(genome: CellGenome<Op>) -> Self {
        CellGenomeJson {
            ops: Op::TAG.to_string(),
            normal: genome.normal,
            reduction: genome.reduction,
            skeleton: genome.skeleton,
            training: genome.training,
        }
    }
}

impl<Op: CellOp> CellGenome<Op> {
    /// The canonical JSON form: fixed field order, no whitespace. For genomes
    /// in canonical block order, equal forms mean the same candidate.
    pub fn canonical_json(&self) -> String {
        serde_json::to_string(self).expect("a cell genome always serialises")
    }

    /// A short stable id: the first 12 hex digits of the SHA-256 of the canonical JSON.
    pub fn id(&self) -> String {
        short_hash(self.canonical_json().as_bytes())
    }

    /// Puts every block of both cells into canonical order.
    pub fn canonicalise(&mut self) {
        self.normal.canonicalise();
        self.reduction.canonicalise();
    }

    /// Checks the limits every cell genome must meet whatever the search
    /// space: 1..=[`MAX_BLOCKS`] blocks per cell, inputs reading only h0, h1
    /// or earlier blocks, canonical block order, skeleton within its limits,
    /// and training genes as for layer genomes.
    pub fn validate_basic(&self) -> Result<()> {
        self.normal.validate_basic("normal")?;
        self.reduction.validate_basic("reduction")?;
        self.skeleton.validate_basic()?;
        let training_only = LayerGenome {
            layers: Vec::new(),
            training: self.training.clone(),
        };
        training_only.validate_basic()
    }

    /// Parses a genome from JSON text, naming `source` (a file name) in errors.
    pub fn from_json(text: &str, source: &str) -> Result<Self> {
        serde_json::from_str(text).map_err(|e| {
            Error::input(format!(
                "{source}:{}:{}: not a valid cell genome ({} ops): {}",
                e.line(),
                e.column(),
                Op::TAG,
                json_problem(&e)
            ))
        })
    }
}
