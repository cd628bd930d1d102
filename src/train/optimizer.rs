//! Optimiser state for a whole network, updating candle parameters in place.

use std::cell::RefCell;

use candle_core::{CpuStorage, InplaceOp2, Layout, Tensor};

use super::adam::{adam_step, AdamSettings};
use super::sgd::sgd_momentum_step;
use crate::genome::{Optimizer, TrainGenes};
use crate::net::ParameterSpec;
use crate::{Error, Result};

/// Per-tensor optimiser buffers.
#[derive(Clone, Debug)]
struct Slot {
    /// Adam's first moment m, or SGD's velocity.
    first: Vec<f32>,
    /// Adam's second moment v (empty for SGD).
    second: Vec<f32>,
    /// L2 coefficient for this tensor: the genome's weight decay for weights, 0 for biases.
    l2: f32,
}

/// The state of the genome's optimiser (Adam or SGD with momentum) for every
/// parameter tensor of one network, plus the step count.
///
/// Weight decay is L2 regularisation added to the gradients of weight
/// matrices only (biases are not decayed).
#[derive(Clone, Debug)]
pub struct OptimizerState {
    kind: Optimizer,
    learning_rate: f32,
    adam: AdamSettings,
    steps: u32,
    slots: Vec<Slot>,
}

impl OptimizerState {
    /// Fresh state (zero moments, no steps) for parameters shaped like `specs`.
    pub fn new(genes: &TrainGenes, specs: &[ParameterSpec]) -> Self {
        let buffers = specs.iter().map(|spec| (spec.elem_count(), spec.is_weight));
        Self::from_buffers(genes, buffers)
    }

    /// Fresh state for parameter buffers of `lengths` values; `decayed[i]`
    /// says whether buffer `i` gets the genome's weight decay (weights do,
    /// biases and normalisation parameters do not). For networks other
    /// than [`crate::net::Mlp`]; the two slices must have the same length.
    pub fn for_buffers(genes: &TrainGenes, lengths: &[usize], decayed: &[bool]) -> Result<Self> {
        if lengths.len() != decayed.len() {
            return Err(Error::internal(format!(
                "{} buffer lengths but {} weight-decay flags",
                lengths.len(),
                decayed.len()
            )));
        }
        let buffers = lengths.iter().copied().zip(decayed.iter().copied());
        Ok(Self::from_buffers(genes, buffers))
    }

    fn from_buffers(genes: &TrainGenes, buffers: impl Iterator<Item = (usize, bool)>) -> Self {
        let slots = buffers
            .map(|(length, decayed)| Slot {
                first: vec![0.0; length],
                second: match genes.optimizer {
                    Optimizer::Adam => vec![0.0; length],
                    Optimizer::SgdMomentum => Vec::new(),
                },
                l2: if decayed {
                    genes.weight_decay as f32
                } else {
                    0.0
                },
            })
            .collect();
        OptimizerState {
            kind: genes.optimizer,
            learning_rate: genes.learning_rate as f32,
            adam: AdamSettings::with_learning_rate(genes.learning_rate),
            steps: 0,
            slots,
        }
    }

    /// Number of steps taken so far.
    pub fn steps(&self) -> u32 {
        self.steps
    }

    /// Adam's (m, v) for parameter `index`, or `None` for SGD or a bad index.
    /// For tests and tools.
    pub fn adam_moments(&self, index: usize) -> Option<(&[f32], &[f32])> {
        match (self.kind, self.slots.get(index)) {
            (Optimizer::Adam, Some(slot)) => Some((&slot.first, &slot.second)),
            _ => None,
        }
    }

    /// Applies one step: updates every tensor of `parameters` in place from
    /// the matching tensor of `gradients` (same order and shapes).
    pub fn step(&mut self, parameters: &[&Tensor], gradients: &[Tensor]) -> Result<()> {
        if parameters.len() != self.slots.len() || gradients.len() != self.slots.len() {
            return Err(Error::internal(format!(
                "optimiser has {} slots but got {} parameters and {} gradients",
                self.slots.len(),
                parameters.len(),
                gradients.len()
            )));
        }
        self.steps += 1;
        let (kind, learning_rate, adam, steps) =
            (self.kind, self.learning_rate, self.adam, self.steps);
        for ((parameter, gradient), slot) in parameters.iter().zip(gradients).zip(&mut self.slots) {
            let gradient = if gradient.is_contiguous() {
                gradient.clone()
            } else {
                gradient.contiguous()?
            };
            let update = FusedUpdate {
                kind,
                learning_rate,
                adam,
                steps,
                slot: RefCell::new(slot),
            };
            parameter.inplace_op2(&gradient, &update)?;
        }
        Ok(())
    }
}

impl OptimizerState {
    /// Applies one step to parameters stored back to back in one flat
    /// buffer (buffer `i` of the state right after buffer `i − 1`), with
    /// `gradients` laid out the same way. Same arithmetic as [`Self::step`].
    pub fn step_flat(&mut self, parameters: &mut [f32], gradients: &[f32]) -> Result<()> {
        let total: usize = self.slots.iter().map(|slot| slot.first.len()).sum();
        if parameters.len() != total || gradients.len() != total {
            return Err(Error::internal(format!(
                "optimiser holds {total} values but got {} parameters and {} gradients",
                parameters.len(),
                gradients.len()
            )));
        }
        self.steps += 1;
        let mut parameters = parameters;
        let mut gradients = gradients;
        for slot in &mut self.slots {
            let length = slot.first.len();
            let (theta, rest) = std::mem::take(&mut parameters).split_at_mut(length);
            let (grad, grad_rest) = gradients.split_at(length);
            parameters = rest;
            gradients = grad_rest;
            match self.kind {
                Optimizer::Adam => adam_step(
                    theta,
                    grad,
                    &mut slot.first,
                    &mut slot.second,
                    self.steps,
                    &self.adam,
                    slot.l2,
                )?,
                Optimizer::SgdMomentum => {
                    sgd_momentum_step(theta, grad, &mut slot.first, self.learning_rate, slot.l2)?
                }
            }
        }
        Ok(())
    }
}

/// A candle in-place op running one optimiser step on a parameter's storage.
struct FusedUpdate<'a> {
    kind: Optimizer,
    learning_rate: f32,
    adam: AdamSettings,
    steps: u32,
    slot: RefCell<&'a mut Slot>,
}

impl InplaceOp2 for FusedUpdate<'_> {
    fn name(&self) -> &'static str {
        "gemmule-optimizer-step"
    }

    fn cpu_fwd(
        &self,
        parameter: &mut CpuStorage,
        parameter_layout: &Layout,
        gradient: &CpuStorage,
        gradient_layout: &Layout,
    ) -> candle_core::Result<()> {
        let (CpuStorage::F32(theta), CpuStorage::F32(grad)) = (parameter, gradient) else {
            candle_core::bail!("optimiser step needs f32 parameters and gradients");
        };
        let (Some((t0, t1)), Some((g0, g1))) = (
            parameter_layout.contiguous_offsets(),
            gradient_layout.contiguous_offsets(),
        ) else {
            candle_core::bail!("optimiser step needs contiguous tensors");
        };
        let (theta, grad) = (&mut theta[t0..t1], &grad[g0..g1]);
        let mut slot = self
            .slot
            .try_borrow_mut()
            .map_err(|e| candle_core::Error::Msg(e.to_string()))?;
        let slot = &mut **slot;
        let result = match self.kind {
            Optimizer::Adam => adam_step(
                theta,
                grad,
                &mut slot.first,
                &mut slot.second,
                self.steps,
                &self.adam,
                slot.l2,
            ),
            Optimizer::SgdMomentum => {
                sgd_momentum_step(theta, grad, &mut slot.first, self.learning_rate, slot.l2)
            }
        };
        result.map_err(|e| candle_core::Error::Msg(e.to_string()))
    }
}
