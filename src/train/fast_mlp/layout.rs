//! Where each layer's weights and biases live in the flat parameter buffer.

use crate::genome::{Activation, LayerGenome};

/// One affine map of the network (a hidden layer or the output layer) and
/// where its parameters sit in the flat buffer.
#[derive(Clone, Copy, Debug)]
pub(super) struct LayerLayout {
    /// Width of the layer's input.
    pub(super) fan_in: usize,
    /// Width of the layer's output.
    pub(super) fan_out: usize,
    /// Offset of the (fan_in × fan_out, row-major) weight matrix.
    pub(super) weight_offset: usize,
    /// Offset of the fan_out biases (right after the weights).
    pub(super) bias_offset: usize,
    /// What follows the affine map: `None` for the output layer.
    pub(super) hidden: Option<HiddenKind>,
}

/// The non-affine part of a hidden layer.
#[derive(Clone, Copy, Debug)]
pub(super) struct HiddenKind {
    /// The activation applied to z.
    pub(super) activation: Activation,
    /// Whether the layer's input is added to the activation.
    pub(super) residual: bool,
    /// Dropout probability (0 for none).
    pub(super) dropout: f32,
}

impl LayerLayout {
    /// Number of weights plus biases.
    pub(super) fn param_count(&self) -> usize {
        self.fan_in * self.fan_out + self.fan_out
    }
}

/// The layers of `genome`'s network for `n_inputs` features and `n_classes`
/// classes, hidden layers first, parameters in
/// [`crate::net::parameter_specs`] order.
pub(super) fn layer_layouts(
    genome: &LayerGenome,
    n_inputs: usize,
    n_classes: usize,
) -> Vec<LayerLayout> {
    let mut layouts = Vec::with_capacity(genome.layers.len() + 1);
    let mut fan_in = n_inputs;
    let mut offset = 0;
    let hidden = genome.layers.iter().map(|layer| {
        let kind = HiddenKind {
            activation: layer.activation,
            residual: layer.residual,
            dropout: layer.dropout,
        };
        (layer.width as usize, Some(kind))
    });
    for (fan_out, hidden) in hidden.chain(std::iter::once((n_classes, None))) {
        let layout = LayerLayout {
            fan_in,
            fan_out,
            weight_offset: offset,
            bias_offset: offset + fan_in * fan_out,
            hidden,
        };
        offset += layout.param_count();
        fan_in = fan_out;
        layouts.push(layout);
    }
    layouts
}
