//! The fast MLP learner: hand-written forward and backward passes on
//! preallocated f32 buffers, single-threaded GEMMs, fused element-wise
//! passes and the optimiser over one flat parameter buffer.
//!
//! Per step nothing is allocated once the buffers have grown to the batch
//! size. Numerics follow candle's ops (see `elementwise`) and the same
//! optimiser code ([`OptimizerState::step_flat`]), so the two learners agree
//! to float rounding; dropout masks are drawn in the same order.

mod backward;
mod elementwise;
mod forward;
#[cfg(target_arch = "x86_64")]
mod kernel_avx2;
mod layout;
mod matmul;
mod softmax_loss;
mod timing;
mod workspace;

use std::time::Instant;

use rand::RngCore;

use self::backward::{backward, Deltas};
use self::forward::forward;
use self::layout::{layer_layouts, LayerLayout};
use self::workspace::Workspace;
use super::input_checks::check_class_weights;
use super::learner::{Learner, Snapshot};
use super::optimizer::OptimizerState;
use crate::genome::LayerGenome;
use crate::net::{parameter_specs, Mlp};
use crate::{Error, Result};

pub use self::matmul::matmul_row_major;
pub use self::timing::PhaseTimes;

/// Trains the MLP a [`LayerGenome`] describes without candle: see the module docs.
pub struct FastMlpLearner {
    genome: LayerGenome,
    n_inputs: usize,
    n_classes: usize,
    layouts: Vec<LayerLayout>,
    tensor_lengths: Vec<usize>,
    params: Vec<f32>,
    grads: Vec<f32>,
    optimizer: OptimizerState,
    train_space: Workspace,
    eval_space: Workspace,
    deltas: Deltas,
    /// Per-class weights of the training loss ([`Learner::set_class_weights`]).
    class_weights: Option<Vec<f32>>,
    timing: Option<PhaseTimes>,
}

impl FastMlpLearner {
    /// A learner starting from the seeded initial weights of [`Mlp::build`].
    pub fn build(
        genome: &LayerGenome,
        n_inputs: usize,
        n_classes: usize,
        seed: u64,
    ) -> Result<Self> {
        let mlp = Mlp::build(genome, n_inputs, n_classes, seed)?;
        Self::new(genome, n_inputs, n_classes, &mlp.weights()?)
    }

    /// A learner starting from `weights`, one row-major vector per tensor in
    /// [`parameter_specs`] order. A wrong count or size is an [`Error::Input`].
    pub fn new(
        genome: &LayerGenome,
        n_inputs: usize,
        n_classes: usize,
        weights: &[Vec<f32>],
    ) -> Result<Self> {
        if n_inputs == 0 || n_classes == 0 {
            return Err(Error::input(format!(
                "the network needs at least one input and one class (got {n_inputs} and {n_classes})"
            )));
        }
        genome.validate_basic()?;
        let specs = parameter_specs(genome, n_inputs, n_classes);
        let tensor_lengths: Vec<usize> = specs.iter().map(|s| s.elem_count()).collect();
        if weights.len() != specs.len() {
            return Err(Error::input(format!(
                "expected {} parameter tensors, got {}",
                specs.len(),
                weights.len()
            )));
        }
        for (spec, values) in specs.iter().zip(weights) {
            if values.len() != spec.elem_count() {
                return Err(Error::input(format!(
                    "tensor {} has {} values but the genome needs shape {:?}",
                    spec.name,
                    values.len(),
                    spec.shape
                )));
            }
        }
        let params: Vec<f32> = weights.concat();
        Ok(FastMlpLearner {
            genome: genome.clone(),
            n_inputs,
            n_classes,
            layouts: layer_layouts(genome, n_inputs, n_classes),
            tensor_lengths,
            grads: vec![0.0; params.len()],
            params,
            optimizer: OptimizerState::new(&genome.training, &specs),
            train_space: Workspace::default(),
            eval_space: Workspace::default(),
            deltas: Deltas::default(),
            class_weights: None,
            timing: None,
        })
    }

    /// The current weights as a frozen [`Mlp`] (for [`super::TrainedModel`]).
    pub fn to_mlp(&self) -> Result<Mlp> {
        let weights = self.snapshot()?.into_tensors();
        Mlp::from_weights(&self.genome, self.n_inputs, self.n_classes, &weights)?.frozen_copy()
    }

    /// The optimiser state (moments and step count), for tests and tools.
    pub fn optimizer(&self) -> &OptimizerState {
        &self.optimizer
    }

    /// Starts adding up the time spent in each phase of [`Learner::train_step`].
    pub fn enable_timing(&mut self) {
        self.timing = Some(PhaseTimes::default());
    }

    /// Time spent per phase since [`Self::enable_timing`] (`None` before).
    pub fn phase_times(&self) -> Option<PhaseTimes> {
        self.timing
    }

    /// Loss and gradients (one vector per tensor, [`parameter_specs`]
    /// order) of a mini-batch, without updating anything (class-weighted
    /// after [`Learner::set_class_weights`]). For tests and tools.
    pub fn gradients(
        &mut self,
        x: &[f32],
        labels: &[u32],
        rows: usize,
        rng: &mut dyn RngCore,
    ) -> Result<(f32, Vec<Vec<f32>>)> {
        let loss = self.forward_backward(x, labels, rows, rng)?;
        Ok((loss, split_tensors(&self.grads, &self.tensor_lengths)))
    }

    fn check_batch(&self, x: &[f32], labels: &[u32], rows: usize) -> Result<()> {
        if x.len() != rows.saturating_mul(self.n_inputs) || labels.len() != rows {
            return Err(Error::input(format!(
                "expected {rows} rows of {} features and {rows} labels, got {} values and {} labels",
                self.n_inputs,
                x.len(),
                labels.len()
            )));
        }
        if let Some(label) = labels.iter().find(|&&l| l as usize >= self.n_classes) {
            return Err(Error::input(format!(
                "class index {label} is out of range for {} classes",
                self.n_classes
            )));
        }
        Ok(())
    }

    fn forward_backward(
        &mut self,
        x: &[f32],
        labels: &[u32],
        rows: usize,
        rng: &mut dyn RngCore,
    ) -> Result<f32> {
        self.check_batch(x, labels, rows)?;
        let started = Instant::now();
        self.train_space.ensure_rows(&self.layouts, rows);
        self.deltas.ensure_rows(&self.layouts, rows);
        forward(
            &self.params,
            &self.layouts,
            x,
            rows,
            &mut self.train_space,
            Some(rng),
        )?;
        let forward_done = Instant::now();
        let loss = backward(
            &self.params,
            &mut self.grads,
            &self.layouts,
            x,
            labels,
            self.class_weights.as_deref(),
            &self.train_space,
            &mut self.deltas,
        )?;
        if let Some(timing) = &mut self.timing {
            timing.forward += forward_done - started;
            timing.backward += forward_done.elapsed();
        }
        Ok(loss)
    }
}

impl Learner for FastMlpLearner {
    fn n_inputs(&self) -> usize {
        self.n_inputs
    }

    fn n_classes(&self) -> usize {
        self.n_classes
    }

    fn train_step(
        &mut self,
        x: &[f32],
        labels: &[u32],
        rows: usize,
        rng: &mut dyn RngCore,
    ) -> Result<f32> {
        let loss = self.forward_backward(x, labels, rows, rng)?;
        if !loss.is_finite() {
            return Ok(loss);
        }
        let started = Instant::now();
        self.optimizer.step_flat(&mut self.params, &self.grads)?;
        if let Some(timing) = &mut self.timing {
            timing.optimizer += started.elapsed();
            timing.steps += 1;
        }
        Ok(loss)
    }

    fn set_class_weights(&mut self, weights: Option<&[f32]>) -> Result<()> {
        if let Some(weights) = weights {
            check_class_weights(weights, self.n_classes)?;
        }
        self.class_weights = weights.map(<[f32]>::to_vec);
        Ok(())
    }

    fn logits(&mut self, x: &[f32], rows: usize) -> Result<Vec<f32>> {
        if x.len() != rows.saturating_mul(self.n_inputs) {
            return Err(Error::input(format!(
                "expected {rows} rows of {} features ({} values), got {} values",
                self.n_inputs,
                rows.saturating_mul(self.n_inputs),
                x.len()
            )));
        }
        self.eval_space.ensure_rows(&self.layouts, rows);
        forward(
            &self.params,
            &self.layouts,
            x,
            rows,
            &mut self.eval_space,
            None,
        )?;
        Ok(self.eval_space.logits[..rows * self.n_classes].to_vec())
    }

    fn snapshot(&self) -> Result<Snapshot> {
        Ok(Snapshot::new(split_tensors(
            &self.params,
            &self.tensor_lengths,
        )))
    }

    fn restore(&mut self, snapshot: &Snapshot) -> Result<()> {
        snapshot.check_lengths(&self.tensor_lengths)?;
        let mut offset = 0;
        for values in snapshot.tensors() {
            self.params[offset..offset + values.len()].copy_from_slice(values);
            offset += values.len();
        }
        Ok(())
    }

    fn all_finite(&self) -> Result<bool> {
        Ok(self.params.iter().all(|v| v.is_finite()))
    }
}

/// Cuts a flat buffer into one vector per tensor.
fn split_tensors(flat: &[f32], lengths: &[usize]) -> Vec<Vec<f32>> {
    let mut offset = 0;
    lengths
        .iter()
        .map(|&length| {
            let values = flat[offset..offset + length].to_vec();
            offset += length;
            values
        })
        .collect()
}
