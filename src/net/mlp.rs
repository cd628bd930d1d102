//! The built network: a layer genome turned into candle tensors.

use candle_core::Tensor;
use rand::RngCore;

use super::dense::{Affine, HiddenLayer};
use super::init::{initial_weights, InitScheme};
use super::mlp_from_values::checked_specs;
use super::seeded::seeded_rng;
use crate::genome::LayerGenome;
use crate::Result;

/// The seeded stream initial weights are drawn from.
const INIT_STREAM: u64 = 0;

/// A multilayer perceptron built from a [`LayerGenome`]: hidden layers in
/// order, then a linear output layer giving one logit per class.
///
/// Parameters are candle tensors named `layers.{i}.weight`, `layers.{i}.bias`,
/// `output.weight` and `output.bias`; weights have shape (fan_in, fan_out)
/// and each layer computes z = h·W + b (transpose them for PyTorch's
/// (out, in) `nn.Linear` layout). Networks made by [`Mlp::build`] and
/// [`Mlp::from_weights`] hold trainable candle variables; copies made by
/// [`Mlp::frozen_copy`] hold plain tensors.
#[derive(Clone, Debug)]
pub struct Mlp {
    pub(super) hidden: Vec<HiddenLayer>,
    pub(super) output: Affine,
    pub(super) n_inputs: usize,
    pub(super) n_classes: usize,
}

impl Mlp {
    /// Builds a trainable network for `n_inputs` features and `n_classes`
    /// classes with initial weights drawn from stream 0 of `seed`: He uniform
    /// U(±√(6/fan_in)) for relu/GELU layers, Glorot uniform
    /// U(±√(6/(fan_in+fan_out))) for tanh/sigmoid layers and the output layer,
    /// zero biases. The same seed always gives the same weights.
    pub fn build(
        genome: &LayerGenome,
        n_inputs: usize,
        n_classes: usize,
        seed: u64,
    ) -> Result<Mlp> {
        let specs = checked_specs(genome, n_inputs, n_classes)?;
        let mut rng = seeded_rng(seed, INIT_STREAM);
        let schemes = genome
            .layers
            .iter()
            .map(|layer| InitScheme::for_activation(layer.activation))
            .chain(std::iter::once(InitScheme::GlorotUniform));
        let mut values = Vec::with_capacity(specs.len());
        for (pair, scheme) in specs.chunks(2).zip(schemes) {
            let (fan_in, fan_out) = (pair[0].shape[0], pair[0].shape[1]);
            values.push(initial_weights(scheme, fan_in, fan_out, &mut rng));
            values.push(vec![0.0; fan_out]);
        }
        Self::from_weights(genome, n_inputs, n_classes, &values)
    }

    /// Number of input features.
    pub fn n_inputs(&self) -> usize {
        self.n_inputs
    }

    /// Number of classes (output logits).
    pub fn n_classes(&self) -> usize {
        self.n_classes
    }

    /// The parameter tensors in [`parameter_specs`](crate::net::parameter_specs) order.
    pub fn parameters(&self) -> Vec<&Tensor> {
        let affines = self.hidden.iter().map(|layer| &layer.affine);
        affines
            .chain(std::iter::once(&self.output))
            .flat_map(|affine| [&affine.weight, &affine.bias])
            .collect()
    }

    /// The parameter names in [`parameter_specs`](crate::net::parameter_specs) order.
    pub fn parameter_names(&self) -> Vec<String> {
        let prefixes = (0..self.hidden.len())
            .map(|i| format!("layers.{i}"))
            .chain(std::iter::once("output".to_string()));
        prefixes
            .flat_map(|prefix| [format!("{prefix}.weight"), format!("{prefix}.bias")])
            .collect()
    }

    /// Total number of parameter values (sum of the tensors' element counts).
    pub fn param_count(&self) -> u64 {
        self.parameters()
            .iter()
            .map(|t| t.elem_count() as u64)
            .sum()
    }

    /// The logits, shape (rows, n_classes), for `x` of shape (rows, n_inputs).
    /// With `train`, dropout is applied with masks drawn from `rng`; without
    /// it `rng` is not used. On a trainable network the result is recorded
    /// for back-propagation.
    pub fn forward<R: RngCore>(&self, x: &Tensor, train: bool, rng: &mut R) -> Result<Tensor> {
        let rng: Option<&mut dyn RngCore> = if train { Some(rng) } else { None };
        self.run(x, rng)
    }

    /// The logits for `x` without dropout and without recording a graph:
    /// for validation and prediction.
    pub fn forward_eval(&self, x: &Tensor) -> Result<Tensor> {
        self.detached().run(x, None)
    }

    fn run(&self, x: &Tensor, mut dropout_rng: Option<&mut dyn RngCore>) -> Result<Tensor> {
        let mut h = x.clone();
        for layer in &self.hidden {
            h = layer.forward(&h, dropout_rng.as_deref_mut())?;
        }
        Ok(self.output.forward(&h)?)
    }

    /// The current parameter values, one row-major vector per tensor in
    /// [`parameter_specs`](crate::net::parameter_specs) order.
    pub fn weights(&self) -> Result<Vec<Vec<f32>>> {
        self.parameters()
            .into_iter()
            .map(|t| Ok(t.flatten_all()?.to_vec1::<f32>()?))
            .collect()
    }

    /// A deep copy with plain (non-trainable) tensors: later updates of this
    /// network do not change it.
    pub fn frozen_copy(&self) -> Result<Mlp> {
        self.map_tensors(|t| Ok(t.copy()?.detach()))
    }

    /// A view sharing this network's storage without graph recording.
    pub(crate) fn detached(&self) -> Mlp {
        let map = |affine: &Affine| Affine {
            weight: affine.weight.detach(),
            bias: affine.bias.detach(),
        };
        Mlp {
            hidden: self
                .hidden
                .iter()
                .map(|layer| HiddenLayer {
                    affine: map(&layer.affine),
                    ..layer.clone()
                })
                .collect(),
            output: map(&self.output),
            n_inputs: self.n_inputs,
            n_classes: self.n_classes,
        }
    }

    fn map_tensors(&self, mut f: impl FnMut(&Tensor) -> Result<Tensor>) -> Result<Mlp> {
        let mut map = |affine: &Affine| -> Result<Affine> {
            Ok(Affine {
                weight: f(&affine.weight)?,
                bias: f(&affine.bias)?,
            })
        };
        let mut hidden = Vec::with_capacity(self.hidden.len());
        for layer in &self.hidden {
            hidden.push(HiddenLayer {
                affine: map(&layer.affine)?,
                ..layer.clone()
            });
        }
        Ok(Mlp {
            hidden,
            output: map(&self.output)?,
            n_inputs: self.n_inputs,
            n_classes: self.n_classes,
        })
    }
}
