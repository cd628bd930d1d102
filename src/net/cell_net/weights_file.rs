//! Saving and loading cell networks as safetensors files, batch-norm running
//! statistics included (`….running_mean`, `….running_var`).

use std::collections::HashMap;
use std::path::Path;

use candle_core::{DType, Device, Tensor};

use super::params::ParamSet;
use super::{ImageCellNet, TableCellNet};
use crate::data::image::ImageShape;
use crate::genome::{ImageCellGenome, TableCellGenome};
use crate::{Error, Result};

impl ParamSet {
    /// Every stored tensor by name: trainable ones, then running statistics.
    pub(crate) fn named_tensors(&self) -> Result<Vec<(String, Tensor)>> {
        let mut out: Vec<(String, Tensor)> = self
            .vars
            .iter()
            .map(|v| (v.name.clone(), v.var.as_tensor().detach()))
            .collect();
        for norm in &self.norms {
            let (mean, var) = norm.running_stats()?;
            out.push((format!("{}.running_mean", norm.name), mean));
            out.push((format!("{}.running_var", norm.name), var));
        }
        Ok(out)
    }

    /// Copies every tensor from `tensors` (as written by [`Self::named_tensors`]).
    /// A missing, extra, non-f32 or wrongly shaped tensor is an input error naming it.
    pub(crate) fn load_named(&self, tensors: &HashMap<String, Tensor>) -> Result<()> {
        let expected: Vec<(String, Tensor)> = self.named_tensors()?;
        if let Some(extra) = tensors
            .keys()
            .filter(|name| !expected.iter().any(|(n, _)| n == *name))
            .min()
        {
            return Err(Error::input(format!(
                "tensor '{extra}' does not belong to this network; was the file saved for another genome?"
            )));
        }
        let pick = |name: &str, like: &Tensor| -> Result<Tensor> {
            let found = tensors.get(name).ok_or_else(|| {
                Error::input(format!(
                    "tensor '{name}' is missing; was the file saved for another genome?"
                ))
            })?;
            if found.dtype() != DType::F32 || found.dims() != like.dims() {
                return Err(Error::input(format!(
                    "tensor '{name}' must be f32 of shape {:?}, found {:?} of shape {:?}",
                    like.dims(),
                    found.dtype(),
                    found.dims()
                )));
            }
            Ok(found.to_device(&Device::Cpu)?)
        };
        let mut checked = Vec::with_capacity(expected.len());
        for (name, like) in &expected {
            checked.push(pick(name, like)?);
        }
        for (v, tensor) in self.vars.iter().zip(&checked) {
            v.var.set(tensor)?;
        }
        let stats = &checked[self.vars.len()..];
        for (norm, pair) in self.norms.iter().zip(stats.chunks(2)) {
            if let [mean, var] = pair {
                norm.set_running_stats(mean.copy()?, var.copy()?)?;
            }
        }
        Ok(())
    }

    /// Writes every tensor to `path`.
    pub(crate) fn save(&self, path: &Path) -> Result<()> {
        let tensors: HashMap<String, Tensor> = self.named_tensors()?.into_iter().collect();
        crate::net::write_tensor_file(&tensors, path)
    }

    /// Reads `path` into this set; errors name the file.
    pub(crate) fn load(&self, path: &Path) -> Result<()> {
        let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
        let tensors = candle_core::safetensors::load_buffer(&bytes, &Device::Cpu).map_err(|e| {
            Error::input(format!(
                "{}: not a valid safetensors file: {e}",
                path.display()
            ))
        })?;
        self.load_named(&tensors).map_err(|e| match e {
            Error::Input(message) => Error::input(format!("{}: {message}", path.display())),
            other => other,
        })
    }
}

impl ImageCellNet {
    /// Writes all parameters and batch-norm running statistics to `path` (safetensors).
    pub fn save_safetensors(&self, path: &Path) -> Result<()> {
        self.params.save(path)
    }

    /// Rebuilds the network `genome` describes and reads its tensors from a
    /// file written by [`ImageCellNet::save_safetensors`].
    pub fn load_safetensors(
        path: &Path,
        genome: &ImageCellGenome,
        shape: ImageShape,
        n_classes: usize,
    ) -> Result<Self> {
        let net = ImageCellNet::build(genome, shape, n_classes, 0)?;
        net.params.load(path)?;
        Ok(net)
    }
}

impl TableCellNet {
    /// Writes all parameters to `path` (safetensors).
    pub fn save_safetensors(&self, path: &Path) -> Result<()> {
        self.params.save(path)
    }

    /// Rebuilds the network `genome` describes and reads its tensors from a
    /// file written by [`TableCellNet::save_safetensors`].
    pub fn load_safetensors(
        path: &Path,
        genome: &TableCellGenome,
        n_inputs: usize,
        n_classes: usize,
    ) -> Result<Self> {
        let net = TableCellNet::build(genome, n_inputs, n_classes, 0)?;
        net.params.load(path)?;
        Ok(net)
    }
}
