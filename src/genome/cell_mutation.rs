//! The mutation catalogue of cell genomes.
//!
//! The architecture moves are those of regularized evolution (Real et al.,
//! AAAI 2019): re-wire one hidden-state input, replace one op, or change
//! nothing. Skeleton and training genes move one step along their lists, as in
//! the layer space. A child gets exactly one mutation; operators that cannot
//! apply to a parent are not drawn; every child is canonical and in bounds.

use super::cell::{Cell, CellGenome, CellOp};
use super::cell_space::CellSpace;
use super::layer_mutation::{step_f64, step_index};
use super::space::{check_mutation_weights, Mutated, SeededRng};
use crate::Result;
use rand::seq::SliceRandom;
use rand::Rng;
use serde::{Deserialize, Serialize};

/// One operator of the catalogue.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum CellMutation {
    /// Re-wire one input of one block (normal or reduction cell, uniformly) to
    /// another state that block may read.
    HiddenState,
    /// Replace one op of one block by a different allowed op.
    Op,
    /// No change: the same genome retrained with a new seed.
    Identity,
    /// Move F one step along its list.
    Channels,
    /// Move N one step along its list.
    NormalCells,
    /// Move R one step along its list.
    Repeats,
    /// Move the learning rate one step up or down its log grid.
    LearningRate,
    /// Move the batch size one step up or down its list.
    BatchSize,
    /// Move the weight decay one step up or down its list.
    WeightDecay,
    /// Switch to another optimiser.
    Optimizer,
}

impl CellMutation {
    /// The whole catalogue, in a fixed order.
    pub const ALL: [CellMutation; 10] = [
        CellMutation::HiddenState,
        CellMutation::Op,
        CellMutation::Identity,
        CellMutation::Channels,
        CellMutation::NormalCells,
        CellMutation::Repeats,
        CellMutation::LearningRate,
        CellMutation::BatchSize,
        CellMutation::WeightDecay,
        CellMutation::Optimizer,
    ];

    /// The catalogue name, as recorded in the journal.
    pub fn name(self) -> &'static str {
        match self {
            CellMutation::HiddenState => "hidden_state",
            CellMutation::Op => "op",
            CellMutation::Identity => "identity",
            CellMutation::Channels => "channels",
            CellMutation::NormalCells => "normal_cells",
            CellMutation::Repeats => "repeats",
            CellMutation::LearningRate => "learning_rate",
            CellMutation::BatchSize => "batch_size",
            CellMutation::WeightDecay => "weight_decay",
            CellMutation::Optimizer => "optimizer",
        }
    }

    /// Whether this operator can change `parent` within `space`.
    pub fn applies<Op: CellOp>(self, space: &CellSpace<Op>, parent: &CellGenome<Op>) -> bool {
        let has_blocks = !parent.normal.blocks.is_empty() || !parent.reduction.blocks.is_empty();
        match self {
            CellMutation::HiddenState => has_blocks,
            CellMutation::Op => has_blocks && space.ops.len() > 1,
            CellMutation::Identity => true,
            CellMutation::Channels => space.channels.len() > 1,
            CellMutation::NormalCells => space.normal_cells.len() > 1,
            CellMutation::Repeats => space.repeats.len() > 1,
            CellMutation::LearningRate => space.learning_rates.len() > 1,
            CellMutation::BatchSize => space.batch_sizes.len() > 1,
            CellMutation::WeightDecay => space.weight_decays.len() > 1,
            CellMutation::Optimizer => space.optimizers.len() > 1,
        }
    }

    /// Draws one applicable operator (by weight) and applies it.
    pub fn apply_random<Op: CellOp>(
        space: &CellSpace<Op>,
        parent: &CellGenome<Op>,
        rng: &mut SeededRng,
    ) -> Mutated<CellGenome<Op>> {
        let candidates: Vec<(CellMutation, f64)> = CellMutation::ALL
            .iter()
            .filter(|m| m.applies(space, parent))
            .map(|&m| (m, space.mutation_weights.weight(m)))
            .filter(|(_, w)| *w > 0.0)
            .collect();
        let chosen = candidates
            .choose_weighted(rng, |(_, w)| *w)
            .map(|(m, _)| *m)
            .unwrap_or(CellMutation::Identity);
        Mutated {
            genome: chosen.apply(space, parent, rng),
            mutation: chosen.name(),
        }
    }

    /// Applies this operator and re-sorts the touched block. Call only when
    /// [`CellMutation::applies`] is true; otherwise the parent is returned unchanged.
    pub fn apply<Op: CellOp>(
        self,
        space: &CellSpace<Op>,
        parent: &CellGenome<Op>,
        rng: &mut SeededRng,
    ) -> CellGenome<Op> {
        let mut child = parent.clone();
        if !self.applies(space, parent) {
            return child;
        }
        let skeleton = &mut child.skeleton;
        let training = &mut child.training;
        match self {
            CellMutation::HiddenState => {
                rewire_input(pick_cell(&mut child.normal, &mut child.reduction, rng), rng)
            }
            CellMutation::Op => replace_op(
                pick_cell(&mut child.normal, &mut child.reduction, rng),
                &space.ops,
                rng,
            ),
            CellMutation::Identity => {}
            CellMutation::Channels => {
                skeleton.channels = step_u32(&space.channels, skeleton.channels, rng)
            }
            CellMutation::NormalCells => {
                skeleton.normal_cells = step_u32(&space.normal_cells, skeleton.normal_cells, rng)
            }
            CellMutation::Repeats => {
                skeleton.repeats = step_u32(&space.repeats, skeleton.repeats, rng)
            }
            CellMutation::LearningRate => {
                training.learning_rate =
                    step_f64(&space.learning_rates, training.learning_rate, rng)
            }
            CellMutation::BatchSize => {
                training.batch_size = step_u32(&space.batch_sizes, training.batch_size, rng)
            }
            CellMutation::WeightDecay => {
                training.weight_decay = step_f64(&space.weight_decays, training.weight_decay, rng)
            }
            CellMutation::Optimizer => {
                let current = training.optimizer;
                let others: Vec<_> = space.optimizers.iter().filter(|&&o| o != current).collect();
                if let Some(&&o) = others.choose(rng) {
                    training.optimizer = o;
                }
            }
        }
        child
    }
}

/// The normal or the reduction cell, uniformly (only cells with blocks).
fn pick_cell<'a, Op>(
    normal: &'a mut Cell<Op>,
    reduction: &'a mut Cell<Op>,
    rng: &mut SeededRng,
) -> &'a mut Cell<Op> {
    let use_normal = if normal.blocks.is_empty() {
        false
    } else if reduction.blocks.is_empty() {
        true
    } else {
        rng.gen_bool(0.5)
    };
    if use_normal {
        normal
    } else {
        reduction
    }
}

/// Points one input of one block at another state that block may read.
/// Block i reads 2 + i ≥ 2 states, so another state always exists.
fn rewire_input<Op: CellOp>(cell: &mut Cell<Op>, rng: &mut SeededRng) {
    if cell.blocks.is_empty() {
        return;
    }
    let i = rng.gen_range(0..cell.blocks.len());
    let slot = rng.gen_range(0..2);
    let block = &mut cell.blocks[i];
    let current = block.inputs[slot];
    let others: Vec<u8> = (0..=(i + 1) as u8).filter(|&s| s != current).collect();
    if let Some(&state) = others.choose(rng) {
        block.inputs[slot] = state;
    }
    block.canonicalise();
}

/// Replaces one op of one block by a different allowed op.
fn replace_op<Op: CellOp>(cell: &mut Cell<Op>, allowed: &[Op], rng: &mut SeededRng) {
    if cell.blocks.is_empty() {
        return;
    }
    let i = rng.gen_range(0..cell.blocks.len());
    let slot = rng.gen_range(0..2);
    let block = &mut cell.blocks[i];
    let current = block.ops[slot];
    let others: Vec<Op> = allowed.iter().copied().filter(|&o| o != current).collect();
    if let Some(&op) = others.choose(rng) {
        block.ops[slot] = op;
    }
    block.canonicalise();
}

fn step_u32(list: &[u32], value: u32, rng: &mut SeededRng) -> u32 {
    let pos = list.iter().position(|&v| v == value);
    list[step_index(pos, list.len(), rng)]
}

/// Relative weights of the cell mutation catalogue (0 disables an operator).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct CellMutationWeights {
    /// Weight of [`CellMutation::HiddenState`].
    pub hidden_state: f64,
    /// Weight of [`CellMutation::Op`].
    pub op: f64,
    /// Weight of [`CellMutation::Identity`].
    pub identity: f64,
    /// Weight of [`CellMutation::Channels`].
    pub channels: f64,
    /// Weight of [`CellMutation::NormalCells`].
    pub normal_cells: f64,
    /// Weight of [`CellMutation::Repeats`].
    pub repeats: f64,
    /// Weight of [`CellMutation::LearningRate`].
    pub learning_rate: f64,
    /// Weight of [`CellMutation::BatchSize`].
    pub batch_size: f64,
    /// Weight of [`CellMutation::WeightDecay`].
    pub weight_decay: f64,
    /// Weight of [`CellMutation::Optimizer`].
    pub optimizer: f64,
}

impl Default for CellMutationWeights {
    /// The two architecture moves of Real et al. weigh most; the rest is our
    /// choice (no source).
    fn default() -> Self {
        CellMutationWeights {
            hidden_state: 2.0,
            op: 2.0,
            identity: 0.5,
            channels: 0.5,
            normal_cells: 0.5,
            repeats: 0.5,
            learning_rate: 1.0,
            batch_size: 0.5,
            weight_decay: 0.5,
            optimizer: 0.5,
        }
    }
}

impl CellMutationWeights {
    /// The weight of one operator.
    pub fn weight(&self, m: CellMutation) -> f64 {
        match m {
            CellMutation::HiddenState => self.hidden_state,
            CellMutation::Op => self.op,
            CellMutation::Identity => self.identity,
            CellMutation::Channels => self.channels,
            CellMutation::NormalCells => self.normal_cells,
            CellMutation::Repeats => self.repeats,
            CellMutation::LearningRate => self.learning_rate,
            CellMutation::BatchSize => self.batch_size,
            CellMutation::WeightDecay => self.weight_decay,
            CellMutation::Optimizer => self.optimizer,
        }
    }

    /// Checks every weight is finite and non-negative, and one is positive.
    pub fn check(&self) -> Result<()> {
        check_mutation_weights(
            CellMutation::ALL
                .iter()
                .map(|&m| (m.name(), self.weight(m))),
        )
    }
}
