//! Names and shapes of a layer genome's parameters, in their fixed order.

use crate::genome::LayerGenome;

/// One parameter tensor of a network: its name, shape and kind.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ParameterSpec {
    /// `layers.{i}.weight`, `layers.{i}.bias`, `output.weight` or `output.bias`.
    pub name: String,
    /// `[fan_in, fan_out]` for weights (z = h·W + b), `[fan_out]` for biases.
    pub shape: Vec<usize>,
    /// True for weight matrices (they get weight decay), false for biases.
    pub is_weight: bool,
}

impl ParameterSpec {
    /// Number of values in the tensor.
    pub fn elem_count(&self) -> usize {
        self.shape.iter().product()
    }
}

/// The parameters of the network `genome` describes, in the order every
/// parameter list in this crate uses: each hidden layer's weight then bias,
/// then the output layer's weight then bias.
pub fn parameter_specs(
    genome: &LayerGenome,
    n_inputs: usize,
    n_classes: usize,
) -> Vec<ParameterSpec> {
    let mut specs = Vec::with_capacity(2 * genome.layers.len() + 2);
    let mut fan_in = n_inputs;
    for (i, layer) in genome.layers.iter().enumerate() {
        let fan_out = layer.width as usize;
        push_affine(&mut specs, &format!("layers.{i}"), fan_in, fan_out);
        fan_in = fan_out;
    }
    push_affine(&mut specs, "output", fan_in, n_classes);
    specs
}

fn push_affine(specs: &mut Vec<ParameterSpec>, prefix: &str, fan_in: usize, fan_out: usize) {
    specs.push(ParameterSpec {
        name: format!("{prefix}.weight"),
        shape: vec![fan_in, fan_out],
        is_weight: true,
    });
    specs.push(ParameterSpec {
        name: format!("{prefix}.bias"),
        shape: vec![fan_out],
        is_weight: false,
    });
}
