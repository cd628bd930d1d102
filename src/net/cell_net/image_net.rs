//! [`ImageCellNet`]: an image cell genome turned into a candle network.

use candle_core::Tensor;
use rand::RngCore;

use super::conv_layers::{in_mode, ConvBn, ConvSpec};
use super::image_cell::ImageCell;
use super::params::{ParamBuilder, ParamSet};
use crate::data::image::{augment_batch, ImageShape};
use crate::genome::{CellKind, ImageCellGenome};
use crate::net::init::InitScheme;
use crate::net::ops::global_avg_pool;
use crate::net::{image_cell_stages, CellStage};
use crate::train::AutogradNetwork;
use crate::{Error, Result};

/// A network built from an [`ImageCellGenome`] by the rules of
/// `crate::net::cell_cost`: stem 3×3 conv → BN, the skeleton's cells, global
/// average pool, linear head (weight (C, classes), bias).
///
/// Tensors are named `stem.…`, `cells.{i}.…`, `head.weight`, `head.bias`;
/// conv weights have PyTorch's (C_out, C_in/groups, k, k) layout; batch
/// norms add `….bn.weight` (γ), `….bn.bias` (β), `….bn.running_mean` and
/// `….bn.running_var`. Clones share parameter storage (a trained clone is
/// the trained network).
#[derive(Clone, Debug)]
pub struct ImageCellNet {
    stem: ConvBn,
    cells: Vec<ImageCell>,
    head_weight: Tensor,
    head_bias: Tensor,
    shape: ImageShape,
    n_classes: usize,
    augment: bool,
    /// Pixels of the smallest feature map a batch norm sees (stem or any cell output).
    smallest_map: u64,
    pub(super) params: ParamSet,
}

impl ImageCellNet {
    /// Builds the network for images of `shape` and `n_classes` classes with
    /// weights drawn from stream 0 of `seed`: He uniform U(±√(6/fan_in)) for
    /// convs (fan_in = C_in/groups·k·k), Glorot uniform for the head, zero
    /// head bias, BN γ 1 β 0. An invalid genome or zero classes is an input error.
    pub fn build(
        genome: &ImageCellGenome,
        shape: ImageShape,
        n_classes: usize,
        seed: u64,
    ) -> Result<Self> {
        genome.validate_basic()?;
        let shape = ImageShape::new(shape.height, shape.width, shape.channels)?;
        if n_classes == 0 {
            return Err(Error::input("a cell network needs at least one class"));
        }
        let mut params = ParamBuilder::new(seed);
        let f = genome.skeleton.channels as usize;
        let stem_spec = ConvSpec::plain(shape.channels, f, 3);
        let stem = ConvBn::build(&mut params, "stem", false, &[stem_spec])?;
        let stages = image_cell_stages(
            &genome.skeleton,
            (shape.channels, shape.height, shape.width),
        );
        let mut cells = Vec::with_capacity(stages.len());
        for (i, stage) in stages.iter().enumerate() {
            let cell = match stage.kind {
                CellKind::Normal => &genome.normal,
                CellKind::Reduction => &genome.reduction,
            };
            cells.push(ImageCell::build(
                &mut params,
                &format!("cells.{i}"),
                cell,
                stage,
            )?);
        }
        let last = stages
            .last()
            .map_or(f, |s: &CellStage| s.output.channels as usize);
        let head_weight = params.weight(
            "head.weight".to_string(),
            &[last, n_classes],
            InitScheme::GlorotUniform,
            last,
            n_classes,
        )?;
        let head_bias = params.bias("head.bias".to_string(), n_classes)?;
        let smallest_map = stages
            .iter()
            .map(|stage| stage.output.height.saturating_mul(stage.output.width))
            .fold((shape.height * shape.width) as u64, u64::min);
        Ok(ImageCellNet {
            stem,
            cells,
            head_weight,
            head_bias,
            shape,
            n_classes,
            augment: false,
            smallest_map,
            params: params.finish(),
        })
    }

    /// The fewest rows a training batch needs: 2 when some batch norm sees
    /// 1×1 maps (one value per channel and row), else 1.
    pub fn min_batch_rows(&self) -> usize {
        if self.smallest_map <= 1 {
            2
        } else {
            1
        }
    }

    /// Turns seeded training augmentation on or off: in training mode each
    /// batch is shifted by up to 1 pixel ([`augment_batch`], no flips), drawing
    /// from the epoch's stream passed to `forward`.
    pub fn set_augment(&mut self, augment: bool) {
        self.augment = augment;
    }

    /// The image shape the network reads.
    pub fn shape(&self) -> ImageShape {
        self.shape
    }

    /// Number of classes.
    pub fn n_classes(&self) -> usize {
        self.n_classes
    }

    /// Sum of the trainable tensors' element counts (equals `cell_cost(..).params`).
    pub fn param_count(&self) -> u64 {
        self.params.param_count()
    }

    /// Logits (N, classes) for `x` of shape (N, C·H·W) with CHW rows.
    /// `train` uses batch statistics (and updates the running ones) and
    /// records gradients; eval uses the running statistics.
    pub fn logits(&self, x: &Tensor, train: bool) -> Result<Tensor> {
        let rows = x.dim(0)?;
        let s = self.shape;
        let mut h1 = self
            .stem
            .forward(&x.reshape((rows, s.channels, s.height, s.width))?, train)?;
        let mut h0 = h1.clone();
        for cell in &self.cells {
            let out = cell.forward(&h0, &h1, train)?;
            h0 = std::mem::replace(&mut h1, out);
        }
        let pooled = global_avg_pool(&h1)?;
        let weight = in_mode(&self.head_weight, train);
        let bias = in_mode(&self.head_bias, train);
        Ok(pooled.matmul(&weight)?.broadcast_add(&bias)?)
    }

    /// Checks `x` is (rows, C·H·W) f32.
    fn check_input(&self, x: &Tensor) -> Result<()> {
        match x.dims() {
            [_, n] if *n == self.shape.n_values() => Ok(()),
            other => Err(Error::input(format!(
                "image cell network for {} images needs rows of {} values, got shape {other:?}",
                self.shape,
                self.shape.n_values()
            ))),
        }
    }
}

impl AutogradNetwork for ImageCellNet {
    fn n_inputs(&self) -> usize {
        self.shape.n_values()
    }

    fn n_classes(&self) -> usize {
        self.n_classes
    }

    fn forward(&self, x: &Tensor, train: bool, rng: &mut dyn RngCore) -> Result<Tensor> {
        self.check_input(x)?;
        if train && self.augment {
            let mut values = x.flatten_all()?.to_vec1::<f32>()?;
            augment_batch(&mut values, &self.shape, rng, true, false)?;
            let shifted = Tensor::from_vec(values, x.shape(), x.device())?;
            return self.logits(&shifted, true);
        }
        self.logits(x, train)
    }

    fn variables(&self) -> Result<Vec<candle_core::Var>> {
        Ok(self.params.vars.iter().map(|v| v.var.clone()).collect())
    }

    fn weight_decay_flags(&self) -> Vec<bool> {
        self.params.vars.iter().map(|v| v.decay).collect()
    }
}
