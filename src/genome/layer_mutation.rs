//! The mutation catalogue of layer genomes.
//!
//! A child gets exactly one mutation. Operators that cannot apply to a parent
//! (e.g. removing a layer from a genome already at the minimum depth) are not
//! drawn for it. Every child stays inside the space's bounds; where a width
//! change breaks a residual skip (skips need equal widths), the skip is dropped.

use super::layer::{LayerGene, LayerGenome};
use super::layer_space::{grid_index, LayerSpace};
use super::space::{check_mutation_weights, Mutated, SeededRng};
use crate::Result;
use rand::seq::SliceRandom;
use rand::Rng;
use serde::{Deserialize, Serialize};

/// One operator of the catalogue.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum LayerMutation {
    /// Change one layer's width: half the time a multiplicative step (×2 or ÷2,
    /// clamped to the bounds), otherwise a uniform resample.
    Width,
    /// Insert a random layer at a random position.
    InsertLayer,
    /// Remove a random layer.
    RemoveLayer,
    /// Give one layer a different activation.
    Activation,
    /// Add a residual skip to a layer i ≥ 1 (its width becomes layer i−1's).
    AddSkip,
    /// Remove one residual skip.
    RemoveSkip,
    /// Move the learning rate one step up or down its log grid.
    LearningRate,
    /// Move the batch size one step up or down its list.
    BatchSize,
    /// Give one layer a different dropout probability.
    Dropout,
    /// Move the weight decay one step up or down its list.
    WeightDecay,
    /// Switch to another optimiser.
    Optimizer,
    /// No change: the same genome retrained with a new seed (Real et al. 2019).
    Identity,
}

impl LayerMutation {
    /// The whole catalogue, in a fixed order.
    pub const ALL: [LayerMutation; 12] = [
        LayerMutation::Width,
        LayerMutation::InsertLayer,
        LayerMutation::RemoveLayer,
        LayerMutation::Activation,
        LayerMutation::AddSkip,
        LayerMutation::RemoveSkip,
        LayerMutation::LearningRate,
        LayerMutation::BatchSize,
        LayerMutation::Dropout,
        LayerMutation::WeightDecay,
        LayerMutation::Optimizer,
        LayerMutation::Identity,
    ];

    /// The catalogue name, as recorded in the journal.
    pub fn name(self) -> &'static str {
        match self {
            LayerMutation::Width => "width",
            LayerMutation::InsertLayer => "insert_layer",
            LayerMutation::RemoveLayer => "remove_layer",
            LayerMutation::Activation => "activation",
            LayerMutation::AddSkip => "add_skip",
            LayerMutation::RemoveSkip => "remove_skip",
            LayerMutation::LearningRate => "learning_rate",
            LayerMutation::BatchSize => "batch_size",
            LayerMutation::Dropout => "dropout",
            LayerMutation::WeightDecay => "weight_decay",
            LayerMutation::Optimizer => "optimizer",
            LayerMutation::Identity => "identity",
        }
    }

    /// Whether this operator can change `parent` within `space`.
    pub fn applies(self, space: &LayerSpace, parent: &LayerGenome) -> bool {
        let depth = parent.layers.len() as u32;
        match self {
            LayerMutation::Width => depth > 0 && space.max_width > space.min_width,
            LayerMutation::InsertLayer => depth < space.max_layers,
            LayerMutation::RemoveLayer => depth > space.min_layers,
            LayerMutation::Activation => depth > 0 && space.activations.len() > 1,
            LayerMutation::AddSkip => {
                space.residual && parent.layers.iter().skip(1).any(|l| !l.residual)
            }
            LayerMutation::RemoveSkip => parent.layers.iter().any(|l| l.residual),
            LayerMutation::LearningRate => space.learning_rates.len() > 1,
            LayerMutation::BatchSize => space.batch_sizes.len() > 1,
            LayerMutation::Dropout => depth > 0 && space.dropouts.len() > 1,
            LayerMutation::WeightDecay => space.weight_decays.len() > 1,
            LayerMutation::Optimizer => space.optimizers.len() > 1,
            LayerMutation::Identity => true,
        }
    }

    /// Draws one applicable operator (by weight) and applies it.
    pub fn apply_random(
        space: &LayerSpace,
        parent: &LayerGenome,
        rng: &mut SeededRng,
    ) -> Mutated<LayerGenome> {
        let candidates: Vec<(LayerMutation, f64)> = LayerMutation::ALL
            .iter()
            .filter(|m| m.applies(space, parent))
            .map(|&m| (m, space.mutation_weights.weight(m)))
            .filter(|(_, w)| *w > 0.0)
            .collect();
        let chosen = candidates
            .choose_weighted(rng, |(_, w)| *w)
            .map(|(m, _)| *m)
            .unwrap_or(LayerMutation::Identity);
        Mutated {
            genome: chosen.apply(space, parent, rng),
            mutation: chosen.name(),
        }
    }

    /// Applies this operator. Call only when [`LayerMutation::applies`] is true;
    /// otherwise the parent is returned unchanged.
    pub fn apply(
        self,
        space: &LayerSpace,
        parent: &LayerGenome,
        rng: &mut SeededRng,
    ) -> LayerGenome {
        let mut child = parent.clone();
        if !self.applies(space, parent) {
            return child;
        }
        let layers = &mut child.layers;
        match self {
            LayerMutation::Width => {
                let i = rng.gen_range(0..layers.len());
                let old = layers[i].width;
                let mut new = if rng.gen_bool(0.5) {
                    if rng.gen_bool(0.5) {
                        old.saturating_mul(2)
                    } else {
                        old / 2
                    }
                } else {
                    rng.gen_range(space.min_width..=space.max_width)
                }
                .clamp(space.min_width, space.max_width);
                while new == old {
                    new = rng.gen_range(space.min_width..=space.max_width);
                }
                layers[i].width = new;
            }
            LayerMutation::InsertLayer => {
                let at = rng.gen_range(0..=layers.len());
                let prev = if at == 0 {
                    None
                } else {
                    Some(layers[at - 1].width)
                };
                let layer = space.sample_layer(rng, prev);
                layers.insert(at, layer);
            }
            LayerMutation::RemoveLayer => {
                let at = rng.gen_range(0..layers.len());
                layers.remove(at);
            }
            LayerMutation::Activation => {
                let i = rng.gen_range(0..layers.len());
                let current = layers[i].activation;
                let others: Vec<_> = space
                    .activations
                    .iter()
                    .filter(|&&a| a != current)
                    .collect();
                if let Some(&&a) = others.choose(rng) {
                    layers[i].activation = a;
                }
            }
            LayerMutation::AddSkip => {
                let open: Vec<usize> = (1..layers.len()).filter(|&i| !layers[i].residual).collect();
                if let Some(&i) = open.choose(rng) {
                    layers[i].width = layers[i - 1].width;
                    layers[i].residual = true;
                }
            }
            LayerMutation::RemoveSkip => {
                let with: Vec<usize> = (0..layers.len()).filter(|&i| layers[i].residual).collect();
                if let Some(&i) = with.choose(rng) {
                    layers[i].residual = false;
                }
            }
            LayerMutation::LearningRate => {
                let t = &mut child.training;
                t.learning_rate = step_f64(&space.learning_rates, t.learning_rate, rng);
            }
            LayerMutation::WeightDecay => {
                let t = &mut child.training;
                t.weight_decay = step_f64(&space.weight_decays, t.weight_decay, rng);
            }
            LayerMutation::BatchSize => {
                let t = &mut child.training;
                let pos = space.batch_sizes.iter().position(|&b| b == t.batch_size);
                t.batch_size = space.batch_sizes[step_index(pos, space.batch_sizes.len(), rng)];
            }
            LayerMutation::Dropout => {
                let i = rng.gen_range(0..layers.len());
                let current = layers[i].dropout;
                let others: Vec<f32> = space
                    .dropouts
                    .iter()
                    .copied()
                    .filter(|d| (d - current).abs() >= 1e-6)
                    .collect();
                if let Some(&d) = others.choose(rng) {
                    layers[i].dropout = d;
                }
            }
            LayerMutation::Optimizer => {
                let current = child.training.optimizer;
                let others: Vec<_> = space.optimizers.iter().filter(|&&o| o != current).collect();
                if let Some(&&o) = others.choose(rng) {
                    child.training.optimizer = o;
                }
            }
            LayerMutation::Identity => {}
        }
        repair_skips(&mut child.layers);
        child
    }
}

/// Drops residual flags that the current widths no longer allow.
fn repair_skips(layers: &mut [LayerGene]) {
    for i in 0..layers.len() {
        if layers[i].residual && (i == 0 || layers[i - 1].width != layers[i].width) {
            layers[i].residual = false;
        }
    }
}

/// One step up or down from `pos` in a list of `len` values (the only way at an end).
/// A value not on the list (`None`) moves to a uniformly drawn entry.
pub(crate) fn step_index(pos: Option<usize>, len: usize, rng: &mut SeededRng) -> usize {
    match pos {
        None => rng.gen_range(0..len),
        Some(0) => 1.min(len - 1),
        Some(p) if p + 1 == len => p - 1,
        Some(p) => {
            if rng.gen_bool(0.5) {
                p + 1
            } else {
                p - 1
            }
        }
    }
}

/// One step up or down `grid` from `value` (see [`step_index`]).
pub(crate) fn step_f64(grid: &[f64], value: f64, rng: &mut SeededRng) -> f64 {
    grid[step_index(grid_index(grid, value), grid.len(), rng)]
}

/// Relative weights of the layer mutation catalogue (0 disables an operator).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct MutationWeights {
    /// Weight of [`LayerMutation::Width`].
    pub width: f64,
    /// Weight of [`LayerMutation::InsertLayer`].
    pub insert_layer: f64,
    /// Weight of [`LayerMutation::RemoveLayer`].
    pub remove_layer: f64,
    /// Weight of [`LayerMutation::Activation`].
    pub activation: f64,
    /// Weight of [`LayerMutation::AddSkip`].
    pub add_skip: f64,
    /// Weight of [`LayerMutation::RemoveSkip`].
    pub remove_skip: f64,
    /// Weight of [`LayerMutation::LearningRate`].
    pub learning_rate: f64,
    /// Weight of [`LayerMutation::BatchSize`].
    pub batch_size: f64,
    /// Weight of [`LayerMutation::Dropout`].
    pub dropout: f64,
    /// Weight of [`LayerMutation::WeightDecay`].
    pub weight_decay: f64,
    /// Weight of [`LayerMutation::Optimizer`].
    pub optimizer: f64,
    /// Weight of [`LayerMutation::Identity`].
    pub identity: f64,
}

impl Default for MutationWeights {
    /// Architecture changes dominate; width changes, the most common useful
    /// step, weigh most (common practice, no source).
    fn default() -> Self {
        MutationWeights {
            width: 3.0,
            insert_layer: 1.0,
            remove_layer: 1.0,
            activation: 1.0,
            add_skip: 0.5,
            remove_skip: 0.5,
            learning_rate: 1.0,
            batch_size: 0.5,
            dropout: 0.5,
            weight_decay: 0.5,
            optimizer: 0.5,
            identity: 0.5,
        }
    }
}

impl MutationWeights {
    /// The weight of one operator.
    pub fn weight(&self, m: LayerMutation) -> f64 {
        match m {
            LayerMutation::Width => self.width,
            LayerMutation::InsertLayer => self.insert_layer,
            LayerMutation::RemoveLayer => self.remove_layer,
            LayerMutation::Activation => self.activation,
            LayerMutation::AddSkip => self.add_skip,
            LayerMutation::RemoveSkip => self.remove_skip,
            LayerMutation::LearningRate => self.learning_rate,
            LayerMutation::BatchSize => self.batch_size,
            LayerMutation::Dropout => self.dropout,
            LayerMutation::WeightDecay => self.weight_decay,
            LayerMutation::Optimizer => self.optimizer,
            LayerMutation::Identity => self.identity,
        }
    }

    /// Checks every weight is finite and non-negative, and one is positive.
    pub fn check(&self) -> Result<()> {
        check_mutation_weights(
            LayerMutation::ALL
                .iter()
                .map(|&m| (m.name(), self.weight(m))),
        )
    }
}
