//! The search space of cell genomes: bounds, validation, exact size, sampling.

use super::cell::{
    Block, Cell, CellGenome, CellOp, ConvOp, DenseOp, Skeleton, MAX_BLOCKS, MAX_CHANNELS,
    MAX_NORMAL_CELLS, MAX_REPEATS,
};
use super::cell_mutation::{CellMutation, CellMutationWeights};
use super::layer::{Optimizer, TrainGenes};
use super::layer_space::LayerSpace;
use super::space::{Mutated, SearchSpace, SeededRng};
use crate::{Error, Result};
use num_bigint::BigUint;
use rand::seq::SliceRandom;
use rand::Rng;
use serde::{Deserialize, Serialize};

/// Bounds of a cell-genome search space (NASNet search space, Zoph et al. 2018).
///
/// Every cell has exactly `blocks` blocks; ops come from `ops`; the skeleton
/// and training genes take one value from their lists.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, bound = "Op: CellOp")]
pub struct CellSpace<Op> {
    /// Blocks per cell, B (1..=5).
    pub blocks: u32,
    /// Allowed ops (K of them), no repeats.
    pub ops: Vec<Op>,
    /// Allowed stem channel counts / widths F, strictly ascending.
    pub channels: Vec<u32>,
    /// Allowed normal cells per repeat N, strictly ascending.
    pub normal_cells: Vec<u32>,
    /// Allowed repeats R, strictly ascending.
    pub repeats: Vec<u32>,
    /// Allowed learning rates, ascending (a log-scale grid).
    pub learning_rates: Vec<f64>,
    /// Allowed batch sizes, ascending.
    pub batch_sizes: Vec<u32>,
    /// Allowed weight decays, ascending.
    pub weight_decays: Vec<f64>,
    /// Allowed optimisers.
    pub optimizers: Vec<Optimizer>,
    /// Relative weights of the mutation catalogue.
    #[serde(default)]
    pub mutation_weights: CellMutationWeights,
}

/// A cell space for images.
pub type ImageCellSpace = CellSpace<ConvOp>;
/// A cell space for tables.
pub type TableCellSpace = CellSpace<DenseOp>;

impl<Op: CellOp> CellSpace<Op> {
    /// The laptop-sized settings both defaults share, with the given ops and F list.
    fn small(ops: &[Op], channels: Vec<u32>) -> Self {
        let training = LayerSpace::default();
        CellSpace {
            blocks: 3,
            ops: ops.to_vec(),
            channels,
            normal_cells: vec![1],
            repeats: vec![2],
            learning_rates: training.learning_rates,
            batch_sizes: training.batch_sizes,
            weight_decays: training.weight_decays,
            optimizers: training.optimizers,
            mutation_weights: CellMutationWeights::default(),
        }
    }
}

impl Default for CellSpace<ConvOp> {
    /// Small images on a laptop: B = 3, F ∈ {8, 12, 16}, N = 1, R = 2, all ops,
    /// the training grids of `LayerSpace::default()`.
    fn default() -> Self {
        CellSpace::small(ConvOp::ALL, vec![8, 12, 16])
    }
}

impl Default for CellSpace<DenseOp> {
    /// Small tables on a laptop: as for images but F ∈ {16, 32, 64} (dense
    /// cells are cheap and a reduction halves the width).
    fn default() -> Self {
        CellSpace::small(DenseOp::ALL, vec![16, 32, 64])
    }
}

fn check_list(name: &str, values: &[u32], max: u32) -> Result<()> {
    if values.is_empty() {
        return Err(Error::input(format!(
            "search space: {name} must list at least one value"
        )));
    }
    if let Some(v) = values.iter().find(|&&v| v == 0 || v > max) {
        return Err(Error::input(format!(
            "search space: {name} holds {v}, allowed range is 1..={max}"
        )));
    }
    if !values.windows(2).all(|w| w[0] < w[1]) {
        return Err(Error::input(format!(
            "search space: {name} must be strictly ascending"
        )));
    }
    Ok(())
}

fn check_choice(field: &str, value: u32, allowed: &[u32]) -> Result<()> {
    if allowed.contains(&value) {
        return Ok(());
    }
    Err(Error::input(format!(
        "{field} is {value}, allowed values are {allowed:?}"
    )))
}

impl<Op: CellOp> CellSpace<Op> {
    /// Checks the bounds themselves (block count, non-empty ascending lists, weights).
    pub fn check(&self) -> Result<()> {
        if self.blocks == 0 || self.blocks > MAX_BLOCKS {
            return Err(Error::input(format!(
                "search space: blocks is {}, allowed range is 1..={MAX_BLOCKS}",
                self.blocks
            )));
        }
        if self.ops.is_empty() {
            return Err(Error::input("search space: ops must list at least one op"));
        }
        if let Some((i, op)) = self
            .ops
            .iter()
            .enumerate()
            .find(|(i, op)| self.ops[..*i].contains(op))
        {
            return Err(Error::input(format!(
                "search space: ops[{i}] repeats {}; list each op once",
                op.name()
            )));
        }
        check_list("channels", &self.channels, MAX_CHANNELS)?;
        check_list("normal_cells", &self.normal_cells, MAX_NORMAL_CELLS)?;
        check_list("repeats", &self.repeats, MAX_REPEATS)?;
        if self.learning_rates.is_empty()
            || self.batch_sizes.is_empty()
            || self.weight_decays.is_empty()
            || self.optimizers.is_empty()
        {
            return Err(Error::input("search space: learning_rates, batch_sizes, weight_decays and optimizers must each list at least one value"));
        }
        self.training_grids().check()?;
        self.mutation_weights.check()
    }

    /// A layer space carrying only our training grids, to share its training-gene
    /// checks, sampling and messages.
    pub(crate) fn training_grids(&self) -> LayerSpace {
        LayerSpace {
            learning_rates: self.learning_rates.clone(),
            batch_sizes: self.batch_sizes.clone(),
            weight_decays: self.weight_decays.clone(),
            optimizers: self.optimizers.clone(),
            ..LayerSpace::default()
        }
    }

    /// Number of distinct canonical blocks at position `i` (0-based).
    ///
    /// The block picks an unordered pair, repetition allowed, of the
    /// m = (2 + i)·K (input, op) pairs: m(m + 1)/2 choices.
    pub fn block_choices(&self, i: u32) -> BigUint {
        let m = BigUint::from(2 + u64::from(i)) * BigUint::from(self.ops.len());
        &m * (&m + 1u32) / 2u32
    }

    /// Number of distinct cells: Π over i < B of [`CellSpace::block_choices`]`(i)`.
    pub fn cell_count(&self) -> BigUint {
        (0..self.blocks).map(|i| self.block_choices(i)).product()
    }

    /// Number of distinct training-gene combinations.
    pub fn training_combinations(&self) -> BigUint {
        self.training_grids().training_combinations()
    }

    /// Draws block `i`: each input uniform over h0, h1 and blocks 0..i, each op
    /// uniform over the allowed ops, then put into canonical order.
    pub(crate) fn sample_block(&self, rng: &mut SeededRng, i: usize) -> Block<Op> {
        let mut draw = || {
            let input = rng.gen_range(0..=i + 1) as u8;
            let op = *self.ops.choose(rng).unwrap_or(&Op::ALL[0]);
            (input, op)
        };
        let (first, second) = (draw(), draw());
        let mut block = Block {
            inputs: [first.0, second.0],
            ops: [first.1, second.1],
        };
        block.canonicalise();
        block
    }

    fn sample_cell(&self, rng: &mut SeededRng) -> Cell<Op> {
        Cell {
            blocks: (0..self.blocks as usize)
                .map(|i| self.sample_block(rng, i))
                .collect(),
        }
    }

    fn check_cell(&self, cell: &Cell<Op>, name: &str) -> Result<()> {
        if cell.blocks.len() != self.blocks as usize {
            return Err(Error::input(format!(
                "{name}.blocks has {} entries, allowed range is {b}..={b} (the space's block count)",
                cell.blocks.len(),
                b = self.blocks
            )));
        }
        for (i, block) in cell.blocks.iter().enumerate() {
            for (slot, op) in block.ops.iter().enumerate() {
                if !self.ops.contains(op) {
                    let names: Vec<&str> = self.ops.iter().map(|o| o.name()).collect();
                    return Err(Error::input(format!(
                        "{name}.blocks[{i}].ops[{slot}] is {}, allowed values are [{}]",
                        op.name(),
                        names.join(", ")
                    )));
                }
            }
        }
        Ok(())
    }

    fn check_skeleton(&self, skeleton: &Skeleton) -> Result<()> {
        check_choice("skeleton.channels", skeleton.channels, &self.channels)?;
        check_choice(
            "skeleton.normal_cells",
            skeleton.normal_cells,
            &self.normal_cells,
        )?;
        check_choice("skeleton.repeats", skeleton.repeats, &self.repeats)
    }

    /// Parses a space from JSON text, naming `source` in errors, and checks it.
    pub fn from_json(text: &str, source: &str) -> Result<Self> {
        let space: CellSpace<Op> = serde_json::from_str(text).map_err(|e| {
            Error::input(format!(
                "{source}:{}:{}: not a valid cell search space ({} ops): {e}",
                e.line(),
                e.column(),
                Op::TAG
            ))
        })?;
        space.check()?;
        Ok(space)
    }
}

impl<Op: CellOp> SearchSpace for CellSpace<Op> {
    type Genome = CellGenome<Op>;

    /// Every gene uniform over its allowed values, independently; each block's
    /// two (input, op) pairs are drawn as an ordered pair and then sorted, so
    /// a canonical block with two different pairs is twice as likely as one
    /// with two equal pairs.
    fn sample(&self, rng: &mut SeededRng) -> CellGenome<Op> {
        let normal = self.sample_cell(rng);
        let reduction = self.sample_cell(rng);
        let mut pick = |values: &[u32]| *values.choose(rng).unwrap_or(&1);
        let skeleton = Skeleton {
            channels: pick(&self.channels),
            normal_cells: pick(&self.normal_cells),
            repeats: pick(&self.repeats),
        };
        let training: TrainGenes = self.training_grids().sample_training(rng);
        CellGenome {
            normal,
            reduction,
            skeleton,
            training,
        }
    }

    fn mutate(&self, parent: &CellGenome<Op>, rng: &mut SeededRng) -> Mutated<CellGenome<Op>> {
        CellMutation::apply_random(self, parent, rng)
    }

    fn genome_id(&self, genome: &CellGenome<Op>) -> String {
        genome.id()
    }

    fn validate(&self, genome: &CellGenome<Op>) -> Result<()> {
        genome.validate_basic()?;
        self.check_cell(&genome.normal, "normal")?;
        self.check_cell(&genome.reduction, "reduction")?;
        self.check_skeleton(&genome.skeleton)?;
        self.training_grids().check_training(&genome.training)
    }

    /// Exact count of canonical genomes:
    ///
    /// size = C² · |F| · |N| · |R| · T, with C = Π_{i=0}^{B−1} m_i(m_i + 1)/2,
    /// m_i = (2 + i)·K for K allowed ops (each block an unordered pair, with
    /// repetition, of its m_i (input, op) pairs; normal and reduction cells
    /// independent), and T the training combinations (|lr|·|batch|·|wd|·|opt|).
    ///
    /// Hand check, default image space: K = 7, B = 3 → m = 14, 21, 28 →
    /// 105 · 231 · 406 = 9 847 530 cells; × 9 847 530 × 3 × 1 × 1 × 96
    /// (6 · 4 · 4 · 1) = 27 928 467 965 059 200.
    fn size(&self) -> BigUint {
        let cells = self.cell_count();
        &cells
            * &cells
            * BigUint::from(self.channels.len())
            * BigUint::from(self.normal_cells.len())
            * BigUint::from(self.repeats.len())
            * self.training_combinations()
    }

    fn describe(&self) -> serde_json::Value {
        serde_json::json!({ "encoding": Op::ENCODING, "settings": self })
    }
}
