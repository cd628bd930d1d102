//! Size of a layer genome's network, computed from the genome alone.

use serde::{Deserialize, Serialize};

use crate::genome::LayerGenome;

/// How big a candidate network is.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Cost {
    /// Trainable parameters: every weight and bias.
    pub params: u64,
    /// Multiply-adds for one sample's forward pass (see [`layer_cost`]).
    pub madds: u64,
}

/// Parameter and multiply-add counts of the network `genome` describes, for
/// `n_inputs` features and `n_classes` classes, without building it.
///
/// Each affine map from `a` to `b` units has `a·b` weights and `b` biases and
/// costs `a·b` multiply-adds per sample. Only those matrix products count as
/// multiply-adds: bias additions, activations, residual additions and dropout
/// are left out.
pub fn layer_cost(genome: &LayerGenome, n_inputs: usize, n_classes: usize) -> Cost {
    let mut params = 0u64;
    let mut madds = 0u64;
    let mut fan_in = n_inputs as u64;
    let widths = genome.layers.iter().map(|layer| u64::from(layer.width));
    for fan_out in widths.chain(std::iter::once(n_classes as u64)) {
        let products = fan_in.saturating_mul(fan_out);
        params = params.saturating_add(products).saturating_add(fan_out);
        madds = madds.saturating_add(products);
        fan_in = fan_out;
    }
    Cost { params, madds }
}
