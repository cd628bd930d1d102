//! The layer genome: an ordered list of hidden layers plus training genes.

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

/// Most hidden layers any layer genome may have (whatever the search space).
pub const MAX_HIDDEN_LAYERS: usize = 64;

/// Widest hidden layer any layer genome may have (whatever the search space).
pub const MAX_LAYER_WIDTH: u32 = 65_536;

/// A hidden layer's non-linearity.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Activation {
    /// max(0, x).
    Relu,
    /// Hyperbolic tangent.
    Tanh,
    /// Gaussian error linear unit (tanh approximation).
    Gelu,
    /// Logistic sigmoid.
    Sigmoid,
}

impl Activation {
    /// All activations, in a fixed order.
    pub const ALL: [Activation; 4] = [
        Activation::Relu,
        Activation::Tanh,
        Activation::Gelu,
        Activation::Sigmoid,
    ];

    /// The lowercase name used in JSON and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Activation::Relu => "relu",
            Activation::Tanh => "tanh",
            Activation::Gelu => "gelu",
            Activation::Sigmoid => "sigmoid",
        }
    }
}

/// The optimiser a candidate is trained with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Optimizer {
    /// Adam (Kingma & Ba 2015, Algorithm 1), β1 0.9, β2 0.999, ε 1e-8.
    Adam,
    /// Stochastic gradient descent with momentum 0.9.
    SgdMomentum,
}

impl Optimizer {
    /// All optimisers, in a fixed order.
    pub const ALL: [Optimizer; 2] = [Optimizer::Adam, Optimizer::SgdMomentum];

    /// The name used in JSON.
    pub fn name(self) -> &'static str {
        match self {
            Optimizer::Adam => "adam",
            Optimizer::SgdMomentum => "sgd_momentum",
        }
    }
}

/// One hidden layer: `h' = dropout(act(W h + b))`, plus `h` when `residual`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LayerGene {
    /// Number of units (≥ 1).
    pub width: u32,
    /// Non-linearity applied after the affine map.
    pub activation: Activation,
    /// Adds the layer's input to its output; only allowed when the input has the same width.
    #[serde(default)]
    pub residual: bool,
    /// Dropout probability applied to the layer's output during training, in [0, 1).
    #[serde(default, serialize_with = "short_f32")]
    pub dropout: f32,
}

/// Genes that say how a candidate is trained rather than what it is.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TrainGenes {
    /// Step size of the optimiser.
    pub learning_rate: f64,
    /// Rows per mini-batch.
    pub batch_size: u32,
    /// L2 weight decay added to the gradient of weights (not biases).
    #[serde(default)]
    pub weight_decay: f64,
    /// The optimiser.
    #[serde(default = "default_optimizer")]
    pub optimizer: Optimizer,
}

fn default_optimizer() -> Optimizer {
    Optimizer::Adam
}

/// A candidate network for tabular data: hidden layers in order, then a linear
/// classifier; no hidden layer at all is multinomial logistic regression.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LayerGenome {
    /// Hidden layers from input to output.
    pub layers: Vec<LayerGene>,
    /// How the network is trained.
    pub training: TrainGenes,
}

impl LayerGenome {
    /// The canonical JSON form: fixed field order, no whitespace. Two genomes
    /// are the same candidate exactly when their canonical forms are equal.
    pub fn canonical_json(&self) -> String {
        serde_json::to_string(self).expect("a layer genome always serialises")
    }

    /// A short stable id: the first 12 hex digits of the SHA-256 of the canonical JSON.
    pub fn id(&self) -> String {
        short_hash(self.canonical_json().as_bytes())
    }

    /// Checks the limits every genome must meet whatever the search space:
    /// at most [`MAX_HIDDEN_LAYERS`] layers, widths in 1..=[`MAX_LAYER_WIDTH`],
    /// dropout in [0, 1), positive learning rate and batch size, residual
    /// skips only between hidden layers of equal width (never on the first
    /// hidden layer, so a genome's validity does not depend on the data).
    pub fn validate_basic(&self) -> crate::Result<()> {
        if self.layers.len() > MAX_HIDDEN_LAYERS {
            return Err(crate::Error::input(format!(
                "layers has {} entries, allowed range is 0..={MAX_HIDDEN_LAYERS}",
                self.layers.len()
            )));
        }
        let t = &self.training;
        if !(t.learning_rate.is_finite() && t.learning_rate > 0.0 && t.learning_rate <= 10.0) {
            return Err(crate::Error::input(format!(
                "training.learning_rate is {}, allowed range is (0, 10]",
                t.learning_rate
            )));
        }
        if t.batch_size == 0 {
            return Err(crate::Error::input(
                "training.batch_size is 0, allowed range is 1 or more",
            ));
        }
        if !(t.weight_decay.is_finite() && t.weight_decay >= 0.0 && t.weight_decay < 1.0) {
            return Err(crate::Error::input(format!(
                "training.weight_decay is {}, allowed range is [0, 1)",
                t.weight_decay
            )));
        }
        let mut prev: Option<usize> = None;
        for (i, layer) in self.layers.iter().enumerate() {
            if layer.width == 0 || layer.width > MAX_LAYER_WIDTH {
                return Err(crate::Error::input(format!(
                    "layers[{i}].width is {}, allowed range is 1..={MAX_LAYER_WIDTH}",
                    layer.width
                )));
            }
            if !(layer.dropout.is_finite() && (0.0..1.0).contains(&layer.dropout)) {
                return Err(crate::Error::input(format!(
                    "layers[{i}].dropout is {}, allowed range is [0, 1)",
                    layer.dropout
                )));
            }
            if layer.residual {
                let Some(p) = prev else {
                    return Err(crate::Error::input(
                        "layers[0].residual is true, but the first hidden layer cannot have a residual skip (skips join hidden layers of equal width)",
                    ));
                };
                if p != layer.width as usize {
                    return Err(crate::Error::input(format!(
                        "layers[{i}].residual is true but its input width is {p} and its width is {}; a residual skip needs equal widths",
                        layer.width
                    )));
                }
            }
            prev = Some(layer.width as usize);
        }
        Ok(())
    }

    /// Parses a genome from JSON text, naming `source` (a file name) in errors.
    pub fn from_json(text: &str, source: &str) -> crate::Result<Self> {
        serde_json::from_str(text).map_err(|e| {
            crate::Error::input(format!(
                "{source}:{}:{}: not a valid layer genome: {}",
                e.line(),
                e.column(),
                json_problem(&e)
            ))
        })
    }
}

/// What a JSON parse error says, without serde_json's trailing " at line L
/// column C" (our messages put the position first, as `file:line:column`).
pub(crate) fn json_problem(error: &serde_json::Error) -> String {
    let text = error.to_string();
    let suffix = format!(" at line {} column {}", error.line(), error.column());
    match text.strip_suffix(&suffix) {
        Some(problem) => problem.to_string(),
        None => text,
    }
}

/// Writes an `f32` as the `f64` with the same shortest decimal form, so JSON
/// shows `0.1` rather than `0.10000000149011612` wherever the value passes
/// through `serde_json::Value` (which widens floats to `f64`).
pub(crate) fn short_f32<S: serde::Serializer>(
    value: &f32,
    serializer: S,
) -> Result<S::Ok, S::Error> {
    serializer.serialize_f64(widen(*value))
}

/// The `f64` whose shortest decimal form equals `value`'s.
pub(crate) fn widen(value: f32) -> f64 {
    value.to_string().parse::<f64>().unwrap_or(f64::from(value))
}

/// Like [`short_f32`] for a list.
pub(crate) fn short_f32_list<S: serde::Serializer>(
    values: &[f32],
    serializer: S,
) -> Result<S::Ok, S::Error> {
    use serde::ser::SerializeSeq;
    let mut seq = serializer.serialize_seq(Some(values.len()))?;
    for v in values {
        seq.serialize_element(&widen(*v))?;
    }
    seq.end()
}

/// First 12 hex digits of the SHA-256 of `bytes`.
pub fn short_hash(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    digest.iter().take(6).map(|b| format!("{b:02x}")).collect()
}

/// Full SHA-256 of `bytes` as 64 hex digits.
pub fn sha256_hex(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    digest.iter().map(|b| format!("{b:02x}")).collect()
}
