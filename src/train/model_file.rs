//! Saving and loading trained models as safetensors files.
//!
//! The file holds one f32 tensor per parameter, named as in
//! [`crate::net::Mlp`] (`layers.{i}.weight` of shape (fan_in, fan_out),
//! `layers.{i}.bias`, `output.weight`, `output.bias`). The genome is not
//! stored in the file: it is passed to [`TrainedModel::load_safetensors`].

use std::collections::HashMap;
use std::path::Path;

use candle_core::{Device, Tensor};

use super::model::TrainedModel;
use crate::genome::LayerGenome;
use crate::net::Mlp;
use crate::{Error, Result};

impl TrainedModel {
    /// Writes the weights to `path` as a safetensors file.
    pub fn save_safetensors(&self, path: &Path) -> Result<()> {
        let network = self.network();
        let tensors: HashMap<String, Tensor> = network
            .parameter_names()
            .into_iter()
            .zip(network.parameters())
            .map(|(name, tensor)| (name, tensor.detach()))
            .collect();
        crate::net::write_tensor_file(&tensors, path)
    }

    /// Reads weights saved by [`TrainedModel::save_safetensors`] for the
    /// network `genome` describes. A missing, extra, non-f32 or wrongly shaped
    /// tensor is an [`Error::Input`] naming the file and the tensor.
    pub fn load_safetensors(
        path: &Path,
        genome: LayerGenome,
        n_inputs: usize,
        n_classes: usize,
    ) -> Result<TrainedModel> {
        genome.validate_basic()?;
        let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
        let tensors = candle_core::safetensors::load_buffer(&bytes, &Device::Cpu).map_err(|e| {
            Error::input(format!(
                "{}: not a valid safetensors file: {e}",
                path.display()
            ))
        })?;
        let network = Mlp::from_named_tensors(&genome, n_inputs, n_classes, &tensors).map_err(
            |e| match e {
                Error::Input(message) => Error::input(format!("{}: {message}", path.display())),
                other => other,
            },
        )?;
        Ok(TrainedModel::from_frozen(genome, network))
    }
}
