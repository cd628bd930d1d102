//! The named, seeded parameters of a cell network and its batch norms.

use std::sync::{Arc, Mutex};

use candle_core::{DType, Device, Tensor, Var};
use rand_chacha::ChaCha8Rng;

use crate::net::init::{initial_weights, InitScheme};
use crate::net::ops::BatchNorm2d;
use crate::net::seeded_rng;
use crate::{Error, Result};

/// The seeded stream initial weights are drawn from (as for [`crate::net::Mlp`]).
const INIT_STREAM: u64 = 0;

/// One trainable tensor with its file name and weight-decay flag.
#[derive(Clone, Debug)]
pub(crate) struct NamedVar {
    pub(crate) name: String,
    pub(crate) var: Var,
    pub(crate) decay: bool,
}

/// A batch norm shared between the module using it and the parameter list.
#[derive(Clone, Debug)]
pub(crate) struct Norm {
    pub(crate) name: String,
    shared: Arc<Mutex<BatchNorm2d>>,
}

impl Norm {
    /// Normalises `x` (N, C, H, W); `train` uses and updates batch statistics.
    pub(crate) fn forward(&self, x: &Tensor, train: bool) -> Result<Tensor> {
        self.lock()?.forward(x, train)
    }

    /// The running mean and variance.
    pub(crate) fn running_stats(&self) -> Result<(Tensor, Tensor)> {
        Ok(self.lock()?.running_stats())
    }

    /// Replaces the running mean and variance.
    pub(crate) fn set_running_stats(&self, mean: Tensor, var: Tensor) -> Result<()> {
        self.lock()?.set_running_stats(mean, var)
    }

    fn lock(&self) -> Result<std::sync::MutexGuard<'_, BatchNorm2d>> {
        self.shared
            .lock()
            .map_err(|_| Error::internal(format!("batch norm {} lock poisoned", self.name)))
    }
}

/// Every parameter of a network in build order, plus its batch norms.
#[derive(Clone, Debug, Default)]
pub(crate) struct ParamSet {
    pub(crate) vars: Vec<NamedVar>,
    pub(crate) norms: Vec<Norm>,
}

impl ParamSet {
    /// Sum of the element counts of the trainable tensors.
    pub(crate) fn param_count(&self) -> u64 {
        self.vars.iter().map(|v| v.var.elem_count() as u64).sum()
    }
}

/// Creates parameters in a fixed order from one seeded stream.
pub(crate) struct ParamBuilder {
    rng: ChaCha8Rng,
    set: ParamSet,
}

impl ParamBuilder {
    /// A builder drawing from stream 0 of `seed`.
    pub(crate) fn new(seed: u64) -> Self {
        ParamBuilder {
            rng: seeded_rng(seed, INIT_STREAM),
            set: ParamSet::default(),
        }
    }

    /// A weight tensor of `shape` drawn with `scheme` for the given fans (weight decay applies).
    pub(crate) fn weight(
        &mut self,
        name: String,
        shape: &[usize],
        scheme: InitScheme,
        fan_in: usize,
        fan_out: usize,
    ) -> Result<Tensor> {
        let count: usize = shape.iter().product();
        let mut values = initial_weights(scheme, fan_in, fan_out, &mut self.rng);
        values.resize(count, 0.0);
        let tensor = Tensor::from_vec(values, shape, &Device::Cpu)?;
        self.push(name, Var::from_tensor(&tensor)?, true)
    }

    /// A zero bias of `len` values (no weight decay).
    pub(crate) fn bias(&mut self, name: String, len: usize) -> Result<Tensor> {
        let var = Var::zeros(len, DType::F32, &Device::Cpu)?;
        self.push(name, var, false)
    }

    /// A batch norm over `channels` (gamma 1, beta 0; no weight decay),
    /// registered as `{name}.weight`, `{name}.bias` and its running statistics.
    pub(crate) fn norm(&mut self, name: String, channels: usize) -> Result<Norm> {
        let norm = BatchNorm2d::new(channels)?;
        let vars = norm.vars();
        for (var, suffix) in vars.into_iter().zip(["weight", "bias"]) {
            self.push(format!("{name}.{suffix}"), var, false)?;
        }
        let norm = Norm {
            name,
            shared: Arc::new(Mutex::new(norm)),
        };
        self.set.norms.push(norm.clone());
        Ok(norm)
    }

    /// The parameters created so far.
    pub(crate) fn finish(self) -> ParamSet {
        self.set
    }

    fn push(&mut self, name: String, var: Var, decay: bool) -> Result<Tensor> {
        let tensor = var.as_tensor().clone();
        self.set.vars.push(NamedVar { name, var, decay });
        Ok(tensor)
    }
}
