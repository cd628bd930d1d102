//! A [`Learner`] for any candle network, through candle's autograd.

use std::time::Instant;

use candle_core::{Device, Tensor, Var};
use rand::RngCore;

use super::fast_mlp::PhaseTimes;
use super::gradients::{gradients_of_logits, row_weights, variable_tensors};
use super::input_checks::check_class_weights;
use super::learner::{Learner, Snapshot};
use super::optimizer::OptimizerState;
use crate::genome::TrainGenes;
use crate::net::{seeded_rng, Mlp};
use crate::{Error, Result};

/// A candle network the [`AutogradLearner`] can train.
///
/// Implement it for a conv or cell network to get the whole training loop
/// ([`fit`](super::fit)) with the genome's optimiser for free.
pub trait AutogradNetwork {
    /// Number of input values per row (features, or C·H·W for images).
    fn n_inputs(&self) -> usize;

    /// Number of classes (logits per row).
    fn n_classes(&self) -> usize;

    /// Logits (rows × n_classes) for `x` of shape (rows, n_inputs). With
    /// `train`, training-mode behaviour applies (dropout masks from `rng`,
    /// batch statistics); without it `rng` must not be used.
    fn forward(&self, x: &Tensor, train: bool, rng: &mut dyn RngCore) -> Result<Tensor>;

    /// The trainable variables, always in the same order.
    fn variables(&self) -> Result<Vec<Var>>;

    /// One flag per variable (same order): true when the genome's weight
    /// decay applies to it (weights), false otherwise (biases, norms).
    fn weight_decay_flags(&self) -> Vec<bool>;
}

impl AutogradNetwork for Mlp {
    fn n_inputs(&self) -> usize {
        Mlp::n_inputs(self)
    }

    fn n_classes(&self) -> usize {
        Mlp::n_classes(self)
    }

    fn forward(&self, x: &Tensor, train: bool, rng: &mut dyn RngCore) -> Result<Tensor> {
        if train {
            Mlp::forward(self, x, true, &mut &mut *rng)
        } else {
            self.forward_eval(x)
        }
    }

    fn variables(&self) -> Result<Vec<Var>> {
        self.parameters()
            .into_iter()
            .map(|tensor| {
                if !tensor.is_variable() {
                    return Err(Error::internal(
                        "the network is frozen; train a network from Mlp::build or Mlp::from_weights",
                    ));
                }
                Ok(Var::from_tensor(tensor)?)
            })
            .collect()
    }

    fn weight_decay_flags(&self) -> Vec<bool> {
        (0..self.parameters().len()).map(|i| i % 2 == 0).collect()
    }
}

/// Trains an [`AutogradNetwork`]: candle autograd for the gradients of the
/// mean (or class-weighted mean) softmax cross-entropy, then the genome's optimiser
/// ([`OptimizerState`], fused in place on the variables' storage).
pub struct AutogradLearner<N: AutogradNetwork> {
    network: N,
    variables: Vec<Var>,
    optimizer: OptimizerState,
    /// Per-class weights of the training loss ([`Learner::set_class_weights`]).
    class_weights: Option<Vec<f32>>,
    timing: Option<PhaseTimes>,
}

impl<N: AutogradNetwork> AutogradLearner<N> {
    /// A learner updating `network`'s variables with the optimiser `genes` ask for.
    pub fn new(network: N, genes: &TrainGenes) -> Result<Self> {
        let variables = network.variables()?;
        let lengths: Vec<usize> = variables.iter().map(|v| v.elem_count()).collect();
        let optimizer =
            OptimizerState::for_buffers(genes, &lengths, &network.weight_decay_flags())?;
        Ok(AutogradLearner {
            network,
            variables,
            optimizer,
            class_weights: None,
            timing: None,
        })
    }

    /// Starts adding up the time spent in each phase of [`Learner::train_step`]
    /// (forward pass; loss and back-propagation; optimiser update), for benchmarks.
    pub fn enable_timing(&mut self) {
        self.timing = Some(PhaseTimes::default());
    }

    /// Time spent per phase since [`Self::enable_timing`] (`None` before).
    pub fn phase_times(&self) -> Option<PhaseTimes> {
        self.timing
    }

    /// The network being trained.
    pub fn network(&self) -> &N {
        &self.network
    }

    /// The optimiser state (moments and step count).
    pub fn optimizer(&self) -> &OptimizerState {
        &self.optimizer
    }

    fn input_tensor(&self, x: &[f32], rows: usize) -> Result<Tensor> {
        let n_inputs = self.network.n_inputs();
        if x.len() != rows.saturating_mul(n_inputs) {
            return Err(Error::input(format!(
                "expected {rows} rows of {n_inputs} values, got {} values",
                x.len()
            )));
        }
        Ok(Tensor::from_slice(x, (rows, n_inputs), &Device::Cpu)?)
    }
}

impl<N: AutogradNetwork> Learner for AutogradLearner<N> {
    fn n_inputs(&self) -> usize {
        self.network.n_inputs()
    }

    fn n_classes(&self) -> usize {
        self.network.n_classes()
    }

    fn train_step(
        &mut self,
        x: &[f32],
        labels: &[u32],
        rows: usize,
        rng: &mut dyn RngCore,
    ) -> Result<f32> {
        let started = Instant::now();
        let input = self.input_tensor(x, rows)?;
        let weights = match &self.class_weights {
            Some(class_weights) => Some(row_weights(labels, class_weights)?),
            None => None,
        };
        let labels = Tensor::from_slice(labels, labels.len(), &Device::Cpu)?;
        let logits = self.network.forward(&input, true, rng)?;
        let forward_done = Instant::now();
        let parameters = variable_tensors(&self.variables);
        let gradients = gradients_of_logits(&logits, &labels, weights.as_deref(), &parameters)?;
        let backward_done = Instant::now();
        if gradients.loss.is_finite() {
            self.optimizer.step(&parameters, &gradients.tensors)?;
        }
        if let Some(timing) = &mut self.timing {
            timing.forward += forward_done - started;
            timing.backward += backward_done - forward_done;
            timing.optimizer += backward_done.elapsed();
            timing.steps += 1;
        }
        Ok(gradients.loss)
    }

    fn set_class_weights(&mut self, weights: Option<&[f32]>) -> Result<()> {
        if let Some(weights) = weights {
            check_class_weights(weights, self.network.n_classes())?;
        }
        self.class_weights = weights.map(<[f32]>::to_vec);
        Ok(())
    }

    fn logits(&mut self, x: &[f32], rows: usize) -> Result<Vec<f32>> {
        let input = self.input_tensor(x, rows)?;
        let mut unused_rng = seeded_rng(0, 0);
        let logits = self.network.forward(&input, false, &mut unused_rng)?;
        Ok(logits.detach().flatten_all()?.to_vec1::<f32>()?)
    }

    fn snapshot(&self) -> Result<Snapshot> {
        let tensors = self
            .variables
            .iter()
            .map(|v| Ok(v.as_tensor().flatten_all()?.to_vec1::<f32>()?))
            .collect::<Result<Vec<_>>>()?;
        Ok(Snapshot::new(tensors))
    }

    fn restore(&mut self, snapshot: &Snapshot) -> Result<()> {
        let lengths: Vec<usize> = self.variables.iter().map(|v| v.elem_count()).collect();
        snapshot.check_lengths(&lengths)?;
        for (variable, values) in self.variables.iter().zip(snapshot.tensors()) {
            let tensor = Tensor::from_slice(values, variable.shape(), &Device::Cpu)?;
            variable.set(&tensor)?;
        }
        Ok(())
    }

    fn all_finite(&self) -> Result<bool> {
        for variable in &self.variables {
            let values = variable.as_tensor().flatten_all()?.to_vec1::<f32>()?;
            if !values.iter().all(|v| v.is_finite()) {
                return Ok(false);
            }
        }
        Ok(true)
    }
}
