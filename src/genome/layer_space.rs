//! The search space of layer genomes: bounds, validation, exact size, sampling.

use super::layer::{
    json_problem, Activation, LayerGene, LayerGenome, Optimizer, TrainGenes, MAX_HIDDEN_LAYERS,
    MAX_LAYER_WIDTH,
};
use super::layer_mutation::{LayerMutation, MutationWeights};
use super::space::{Mutated, SearchSpace, SeededRng};
use crate::{Error, Result};
use num_bigint::BigUint;
use rand::seq::SliceRandom;
use rand::Rng;
use serde::{Deserialize, Serialize};

/// Bounds of a layer-genome search space.
///
/// Widths are every integer in `min_width..=max_width`; the other genes take
/// one value from their list. A residual skip is possible on hidden layer
/// `i ≥ 1` when its width equals layer `i − 1`'s (and `residual` is allowed).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LayerSpace {
    /// Fewest hidden layers (0 allows multinomial logistic regression).
    pub min_layers: u32,
    /// Most hidden layers.
    pub max_layers: u32,
    /// Narrowest hidden layer (≥ 1).
    pub min_width: u32,
    /// Widest hidden layer.
    pub max_width: u32,
    /// Allowed activations.
    pub activations: Vec<Activation>,
    /// Whether residual skips are part of the space.
    pub residual: bool,
    /// Allowed dropout probabilities.
    #[serde(serialize_with = "super::layer::short_f32_list")]
    pub dropouts: Vec<f32>,
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
    pub mutation_weights: MutationWeights,
}

impl Default for LayerSpace {
    /// A space sized for small tables on a laptop: 1–4 hidden layers of 4–128 units.
    fn default() -> Self {
        LayerSpace {
            min_layers: 1,
            max_layers: 4,
            min_width: 4,
            max_width: 128,
            activations: Activation::ALL.to_vec(),
            residual: true,
            dropouts: vec![0.0, 0.1, 0.2, 0.3],
            learning_rates: vec![1e-4, 3e-4, 1e-3, 3e-3, 1e-2, 3e-2],
            batch_sizes: vec![16, 32, 64, 128],
            weight_decays: vec![0.0, 1e-5, 1e-4, 1e-3],
            optimizers: vec![Optimizer::Adam],
            mutation_weights: MutationWeights::default(),
        }
    }
}

/// Position of `value` in `grid` (relative tolerance 1e-9), if present.
pub(crate) fn grid_index(grid: &[f64], value: f64) -> Option<usize> {
    grid.iter()
        .position(|&g| (g - value).abs() <= 1e-9 * g.abs().max(value.abs()).max(1e-300))
}

fn list_f64(values: &[f64]) -> String {
    let parts: Vec<String> = values.iter().map(|v| format!("{v}")).collect();
    format!("[{}]", parts.join(", "))
}

impl LayerSpace {
    /// Checks the bounds themselves (non-empty lists, min ≤ max, ascending grids).
    pub fn check(&self) -> Result<()> {
        let bad = |m: String| Err(Error::input(format!("search space: {m}")));
        if self.min_layers > self.max_layers {
            return bad(format!(
                "min_layers {} is greater than max_layers {}",
                self.min_layers, self.max_layers
            ));
        }
        if self.max_layers as usize > MAX_HIDDEN_LAYERS {
            return bad(format!(
                "max_layers {} is above the limit of {MAX_HIDDEN_LAYERS}",
                self.max_layers
            ));
        }
        if self.min_width == 0 || self.min_width > self.max_width {
            return bad(format!(
                "widths must satisfy 1 <= min_width <= max_width, got {}..={}",
                self.min_width, self.max_width
            ));
        }
        if self.max_width > MAX_LAYER_WIDTH {
            return bad(format!(
                "max_width {} is above the limit of {MAX_LAYER_WIDTH}",
                self.max_width
            ));
        }
        if self.activations.is_empty()
            || self.dropouts.is_empty()
            || self.learning_rates.is_empty()
            || self.batch_sizes.is_empty()
            || self.weight_decays.is_empty()
            || self.optimizers.is_empty()
        {
            return bad("activations, dropouts, learning_rates, batch_sizes, weight_decays and optimizers must each list at least one value".into());
        }
        if let Some(d) = self.dropouts.iter().find(|d| !(0.0..1.0).contains(*d)) {
            return bad(format!("dropout {d} is outside [0, 1)"));
        }
        if let Some(lr) = self
            .learning_rates
            .iter()
            .find(|lr| !(lr.is_finite() && **lr > 0.0 && **lr <= 10.0))
        {
            return bad(format!("learning rate {lr} is outside (0, 10]"));
        }
        if self.batch_sizes.contains(&0) {
            return bad("batch size 0 is not allowed".into());
        }
        if let Some(wd) = self
            .weight_decays
            .iter()
            .find(|w| !(w.is_finite() && **w >= 0.0 && **w < 1.0))
        {
            return bad(format!("weight decay {wd} is outside [0, 1)"));
        }
        let ascending_f = |v: &[f64]| v.windows(2).all(|w| w[0] < w[1]);
        if !ascending_f(&self.learning_rates) || !ascending_f(&self.weight_decays) {
            return bad("learning_rates and weight_decays must be strictly ascending".into());
        }
        if !self.batch_sizes.windows(2).all(|w| w[0] < w[1]) {
            return bad("batch_sizes must be strictly ascending".into());
        }
        self.mutation_weights.check()
    }

    /// Number of widths in the space.
    fn width_count(&self) -> u64 {
        u64::from(self.max_width - self.min_width + 1)
    }

    /// Exact number of distinct layer stacks with exactly `depth` hidden layers.
    ///
    /// Each layer picks a width (W choices), an activation (A) and a dropout (D).
    /// Without skips that is (W·A·D)^depth. With skips, layer i ≥ 1 may also
    /// set `residual` when its width equals the previous one; counting by the
    /// last width (all widths are symmetric) gives W·A·D·(A·D·(W+1))^(depth−1).
    pub fn stacks_at_depth(&self, depth: u32) -> BigUint {
        if depth == 0 {
            return BigUint::from(1u32);
        }
        let w = BigUint::from(self.width_count());
        let ad = BigUint::from(self.activations.len() as u64 * self.dropouts.len() as u64);
        if self.residual {
            let per_next = &ad * (&w + 1u32);
            &w * &ad * per_next.pow(depth - 1)
        } else {
            (&w * &ad).pow(depth)
        }
    }

    /// Number of distinct training-gene combinations.
    pub fn training_combinations(&self) -> BigUint {
        BigUint::from(self.learning_rates.len())
            * BigUint::from(self.batch_sizes.len())
            * BigUint::from(self.weight_decays.len())
            * BigUint::from(self.optimizers.len())
    }

    /// Draws a random layer with the given input width (`None` for the first hidden layer).
    pub(crate) fn sample_layer(&self, rng: &mut SeededRng, prev_width: Option<u32>) -> LayerGene {
        let width = rng.gen_range(self.min_width..=self.max_width);
        let residual = self.residual && prev_width == Some(width) && rng.gen_bool(0.5);
        LayerGene {
            width,
            activation: *self.activations.choose(rng).unwrap_or(&Activation::Relu),
            residual,
            dropout: *self.dropouts.choose(rng).unwrap_or(&0.0),
        }
    }

    /// Draws random training genes.
    pub(crate) fn sample_training(&self, rng: &mut SeededRng) -> TrainGenes {
        TrainGenes {
            learning_rate: *self.learning_rates.choose(rng).unwrap_or(&1e-3),
            batch_size: *self.batch_sizes.choose(rng).unwrap_or(&32),
            weight_decay: *self.weight_decays.choose(rng).unwrap_or(&0.0),
            optimizer: *self.optimizers.choose(rng).unwrap_or(&Optimizer::Adam),
        }
    }

    fn check_layers(&self, genome: &LayerGenome) -> Result<()> {
        let depth = genome.layers.len() as u32;
        if depth < self.min_layers || depth > self.max_layers {
            return Err(Error::input(format!(
                "layers has {depth} entries, allowed range is {}..={}",
                self.min_layers, self.max_layers
            )));
        }
        for (i, layer) in genome.layers.iter().enumerate() {
            if layer.width < self.min_width || layer.width > self.max_width {
                return Err(Error::input(format!(
                    "layers[{i}].width is {}, allowed range is {}..={}",
                    layer.width, self.min_width, self.max_width
                )));
            }
            if !self.activations.contains(&layer.activation) {
                let names: Vec<&str> = self.activations.iter().map(|a| a.name()).collect();
                return Err(Error::input(format!(
                    "layers[{i}].activation is {}, allowed values are [{}]",
                    layer.activation.name(),
                    names.join(", ")
                )));
            }
            if layer.residual && !self.residual {
                return Err(Error::input(format!(
                    "layers[{i}].residual is true, but this search space has no residual skips"
                )));
            }
            if !self
                .dropouts
                .iter()
                .any(|d| (d - layer.dropout).abs() < 1e-6)
            {
                let list: Vec<f64> = self.dropouts.iter().map(|&d| f64::from(d)).collect();
                return Err(Error::input(format!(
                    "layers[{i}].dropout is {}, allowed values are {}",
                    layer.dropout,
                    list_f64(&list)
                )));
            }
        }
        Ok(())
    }

    pub(crate) fn check_training(&self, t: &TrainGenes) -> Result<()> {
        if grid_index(&self.learning_rates, t.learning_rate).is_none() {
            return Err(Error::input(format!(
                "training.learning_rate is {}, allowed values are {}",
                t.learning_rate,
                list_f64(&self.learning_rates)
            )));
        }
        if !self.batch_sizes.contains(&t.batch_size) {
            return Err(Error::input(format!(
                "training.batch_size is {}, allowed values are {:?}",
                t.batch_size, self.batch_sizes
            )));
        }
        if grid_index(&self.weight_decays, t.weight_decay).is_none() {
            return Err(Error::input(format!(
                "training.weight_decay is {}, allowed values are {}",
                t.weight_decay,
                list_f64(&self.weight_decays)
            )));
        }
        if !self.optimizers.contains(&t.optimizer) {
            let names: Vec<&str> = self.optimizers.iter().map(|o| o.name()).collect();
            return Err(Error::input(format!(
                "training.optimizer is {}, allowed values are [{}]",
                t.optimizer.name(),
                names.join(", ")
            )));
        }
        Ok(())
    }

    /// Parses a space from JSON text, naming `source` in errors, and checks it.
    pub fn from_json(text: &str, source: &str) -> Result<Self> {
        let space: LayerSpace = serde_json::from_str(text).map_err(|e| {
            Error::input(format!(
                "{source}:{}:{}: not a valid layer search space: {}",
                e.line(),
                e.column(),
                json_problem(&e)
            ))
        })?;
        space.check()?;
        Ok(space)
    }
}

impl SearchSpace for LayerSpace {
    type Genome = LayerGenome;

    /// Depth uniform in `min_layers..=max_layers`, then every gene uniform over
    /// its allowed values (independent per gene, as in Li & Talwalkar's random
    /// search); a skip is drawn with probability 1/2 where widths allow it.
    fn sample(&self, rng: &mut SeededRng) -> LayerGenome {
        let depth = rng.gen_range(self.min_layers..=self.max_layers);
        let mut layers: Vec<LayerGene> = Vec::with_capacity(depth as usize);
        for _ in 0..depth {
            let prev = layers.last().map(|l| l.width);
            layers.push(self.sample_layer(rng, prev));
        }
        LayerGenome {
            layers,
            training: self.sample_training(rng),
        }
    }

    fn mutate(&self, parent: &LayerGenome, rng: &mut SeededRng) -> Mutated<LayerGenome> {
        LayerMutation::apply_random(self, parent, rng)
    }

    fn genome_id(&self, genome: &LayerGenome) -> String {
        genome.id()
    }

    fn validate(&self, genome: &LayerGenome) -> Result<()> {
        genome.validate_basic()?;
        self.check_layers(genome)?;
        self.check_training(&genome.training)
    }

    /// Σ over depths of [`LayerSpace::stacks_at_depth`], times the training combinations.
    fn size(&self) -> BigUint {
        let stacks: BigUint = (self.min_layers..=self.max_layers)
            .map(|d| self.stacks_at_depth(d))
            .sum();
        stacks * self.training_combinations()
    }

    fn describe(&self) -> serde_json::Value {
        serde_json::json!({ "encoding": "layers", "settings": self })
    }
}
