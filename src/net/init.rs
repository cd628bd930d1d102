//! Seeded initial weights.
//!
//! Hidden layers with relu or GELU use He uniform initialisation
//! (U(±√(6/fan_in)), He et al. 2015); hidden layers with tanh or sigmoid and
//! the output layer use Glorot uniform (U(±√(6/(fan_in+fan_out))), Glorot &
//! Bengio 2010). Biases start at zero. Values come from a seeded ChaCha8
//! stream, so the same seed always gives the same network.

use rand::Rng;

use crate::genome::Activation;

/// Which uniform limit a weight matrix is drawn with.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum InitScheme {
    /// U(±√(6/fan_in)): for relu and GELU layers.
    HeUniform,
    /// U(±√(6/(fan_in+fan_out))): for tanh, sigmoid and the output layer.
    GlorotUniform,
}

impl InitScheme {
    /// The scheme used for a hidden layer with `activation`.
    pub(crate) fn for_activation(activation: Activation) -> Self {
        match activation {
            Activation::Relu | Activation::Gelu => InitScheme::HeUniform,
            Activation::Tanh | Activation::Sigmoid => InitScheme::GlorotUniform,
        }
    }

    fn limit(self, fan_in: usize, fan_out: usize) -> f64 {
        match self {
            InitScheme::HeUniform => (6.0 / fan_in.max(1) as f64).sqrt(),
            InitScheme::GlorotUniform => (6.0 / (fan_in + fan_out).max(1) as f64).sqrt(),
        }
    }
}

/// A row-major `fan_in × fan_out` weight matrix drawn with `scheme` from `rng`.
pub(crate) fn initial_weights<R: Rng + ?Sized>(
    scheme: InitScheme,
    fan_in: usize,
    fan_out: usize,
    rng: &mut R,
) -> Vec<f32> {
    let limit = scheme.limit(fan_in, fan_out) as f32;
    (0..fan_in * fan_out)
        .map(|_| rng.gen_range(-limit..=limit))
        .collect()
}
