//! Building an [`Mlp`] from given parameter values (tests, tools, weight files).

use std::collections::HashMap;

use candle_core::{DType, Device, Tensor, Var};

use super::dense::{Affine, HiddenLayer};
use super::mlp::Mlp;
use super::param_spec::{parameter_specs, ParameterSpec};
use crate::genome::LayerGenome;
use crate::{Error, Result};

impl Mlp {
    /// Builds a trainable network with the given parameter values, one
    /// row-major vector per tensor in [`parameter_specs`] order. For tests and
    /// tools (reference checks, imported weights); training uses [`Mlp::build`].
    /// A wrong count or size is an [`Error::Input`] naming the tensor.
    pub fn from_weights(
        genome: &LayerGenome,
        n_inputs: usize,
        n_classes: usize,
        weights: &[Vec<f32>],
    ) -> Result<Mlp> {
        let specs = checked_specs(genome, n_inputs, n_classes)?;
        if weights.len() != specs.len() {
            return Err(Error::input(format!(
                "expected {} parameter tensors ({}), got {}",
                specs.len(),
                spec_names(&specs),
                weights.len()
            )));
        }
        let mut tensors = Vec::with_capacity(specs.len());
        for (spec, values) in specs.iter().zip(weights) {
            if values.len() != spec.elem_count() {
                return Err(Error::input(format!(
                    "tensor {} has {} values but the genome needs shape {:?} ({} values)",
                    spec.name,
                    values.len(),
                    spec.shape,
                    spec.elem_count()
                )));
            }
            let var = Var::from_slice(values, spec.shape.as_slice(), &Device::Cpu)?;
            tensors.push(var.into_inner());
        }
        Self::assemble(genome, n_inputs, n_classes, tensors)
    }

    /// Builds a frozen (non-trainable) network from named tensors, as read
    /// from a weights file. Every tensor of the genome must be present as f32
    /// with its exact shape and no other tensor may be present; otherwise an
    /// [`Error::Input`] names the offending tensor.
    pub fn from_named_tensors(
        genome: &LayerGenome,
        n_inputs: usize,
        n_classes: usize,
        tensors: &HashMap<String, Tensor>,
    ) -> Result<Mlp> {
        let specs = checked_specs(genome, n_inputs, n_classes)?;
        let mut ordered = Vec::with_capacity(specs.len());
        for spec in &specs {
            let tensor = tensors.get(&spec.name).ok_or_else(|| {
                Error::input(format!(
                    "tensor {} is missing (the genome needs {})",
                    spec.name,
                    spec_names(&specs)
                ))
            })?;
            if tensor.dtype() != DType::F32 {
                return Err(Error::input(format!(
                    "tensor {} has dtype {:?}, expected f32",
                    spec.name,
                    tensor.dtype()
                )));
            }
            if tensor.dims() != spec.shape.as_slice() {
                return Err(Error::input(format!(
                    "tensor {} has shape {:?} but the genome needs {:?}",
                    spec.name,
                    tensor.dims(),
                    spec.shape
                )));
            }
            ordered.push(tensor.contiguous()?.detach());
        }
        let mut extra: Vec<&String> = tensors
            .keys()
            .filter(|name| !specs.iter().any(|spec| &spec.name == *name))
            .collect();
        extra.sort();
        if let Some(name) = extra.first() {
            return Err(Error::input(format!(
                "unexpected tensor {name}: the genome needs exactly {}",
                spec_names(&specs)
            )));
        }
        Self::assemble(genome, n_inputs, n_classes, ordered)
    }

    pub(super) fn assemble(
        genome: &LayerGenome,
        n_inputs: usize,
        n_classes: usize,
        tensors: Vec<Tensor>,
    ) -> Result<Mlp> {
        let mut tensors = tensors.into_iter();
        let mut next_affine = || match (tensors.next(), tensors.next()) {
            (Some(weight), Some(bias)) => Ok(Affine { weight, bias }),
            _ => Err(Error::internal("too few tensors to assemble the network")),
        };
        let mut hidden = Vec::with_capacity(genome.layers.len());
        for layer in &genome.layers {
            hidden.push(HiddenLayer {
                affine: next_affine()?,
                activation: layer.activation,
                residual: layer.residual,
                dropout: layer.dropout,
            });
        }
        let output = next_affine()?;
        Ok(Mlp {
            hidden,
            output,
            n_inputs,
            n_classes,
        })
    }
}

/// The genome's parameter specs after checking the genome and the sizes.
pub(super) fn checked_specs(
    genome: &LayerGenome,
    n_inputs: usize,
    n_classes: usize,
) -> Result<Vec<ParameterSpec>> {
    if n_inputs == 0 {
        return Err(Error::input("the network needs at least one input feature"));
    }
    if n_classes == 0 {
        return Err(Error::input("the network needs at least one class"));
    }
    genome.validate_basic()?;
    Ok(parameter_specs(genome, n_inputs, n_classes))
}

fn spec_names(specs: &[ParameterSpec]) -> String {
    let names: Vec<&str> = specs.iter().map(|spec| spec.name.as_str()).collect();
    names.join(", ")
}
