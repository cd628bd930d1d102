//! A trained network ready for prediction.

use crate::genome::LayerGenome;
use crate::net::Mlp;
use crate::Result;

use super::evaluate::{logits_of, softmax_rows};
use super::scores::argmax_lowest_on_ties;

/// A trained network with the genome it was built from: predicts class
/// probabilities and can be saved to / loaded from a safetensors file.
#[derive(Clone, Debug)]
pub struct TrainedModel {
    /// The genome the network was built from.
    pub genome: LayerGenome,
    /// Number of input features.
    pub n_inputs: usize,
    /// Number of classes.
    pub n_classes: usize,
    network: Mlp,
}

impl TrainedModel {
    /// Wraps a network; a frozen copy is taken so later changes to `network` do not leak in.
    pub fn from_network(genome: LayerGenome, network: &Mlp) -> Result<Self> {
        Ok(Self::from_frozen(genome, network.frozen_copy()?))
    }

    /// Wraps a network that nothing else will update.
    pub(crate) fn from_frozen(genome: LayerGenome, network: Mlp) -> Self {
        TrainedModel {
            genome,
            n_inputs: network.n_inputs(),
            n_classes: network.n_classes(),
            network,
        }
    }

    /// The underlying network.
    pub fn network(&self) -> &Mlp {
        &self.network
    }

    /// Class probabilities, row-major rows × n_classes, for `x` holding `rows`
    /// rows of `n_inputs` features (row-major). A size mismatch is an input error.
    pub fn predict_proba(&self, x: &[f32], rows: usize) -> Result<Vec<f32>> {
        let mut values = logits_of(&self.network, x, rows)?;
        softmax_rows(&mut values, self.n_classes);
        Ok(values)
    }

    /// The most probable class of each row (ties go to the lowest class index).
    pub fn predict_classes(&self, x: &[f32], rows: usize) -> Result<Vec<u32>> {
        let logits = logits_of(&self.network, x, rows)?;
        Ok(logits
            .chunks(self.n_classes.max(1))
            .map(|row| argmax_lowest_on_ties(row) as u32)
            .collect())
    }

    /// Total number of parameter values.
    pub fn param_count(&self) -> u64 {
        self.network.param_count()
    }

    /// The parameter values, one row-major vector per tensor in
    /// [`crate::net::parameter_specs`] order.
    pub fn weights(&self) -> Result<Vec<Vec<f32>>> {
        self.network.weights()
    }
}
