//! Training any genome and predicting with the network it becomes: the one
//! place that dispatches on the encoding, so the evaluator, finalize and the
//! model folder do not.

use crate::data::image::ImageShape;
use crate::data::Dataset;
use crate::genome::{AnyGenome, Encoding, ImageCellGenome, TableCellGenome};
use crate::net::{cell_cost, layer_cost, table_cell_cost, Cost, ImageCellNet, TableCellNet};
use crate::train::{
    train_with_cut, CurveCut, CutVerdict, Scores, TrainEngine, TrainSettings, TrainStatus,
    TrainedModel,
};
use crate::{Error, Result};
use candle_core::{Device, Tensor};
use std::path::Path;

/// Rows per forward pass when predicting with a cell network (bounds memory).
const PREDICT_CHUNK: usize = 256;

/// What the network reads: a flat feature vector or an image of a shape.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct InputLayout {
    /// Encoded input values per row.
    pub n_inputs: usize,
    /// The image shape when rows are images (CHW order), for cell networks.
    pub image: Option<ImageShape>,
}

impl InputLayout {
    /// Checks that `encoding` can read this input (image cells need images).
    pub fn check(&self, encoding: Encoding) -> Result<()> {
        if encoding.needs_images() && self.image.is_none() {
            return Err(Error::input(
                "image cell genomes (cells_image) need image data: give --data DIR (one sub-folder per class), --data IMAGES --idx-labels LABELS, or --data FILE.csv --image-shape HxWxC",
            ));
        }
        Ok(())
    }
}

/// Parameter and multiply-add counts of `genome` for this input and `n_classes`.
pub fn genome_cost(genome: &AnyGenome, input: &InputLayout, n_classes: usize) -> Result<Cost> {
    input.check(genome.encoding())?;
    Ok(match genome {
        AnyGenome::Layers(g) => layer_cost(g, input.n_inputs, n_classes),
        AnyGenome::TableCells(g) => table_cell_cost(g, input.n_inputs, n_classes),
        AnyGenome::ImageCells(g) => {
            let shape = input.image.expect("checked above");
            cell_cost(g, (shape.channels, shape.height, shape.width), n_classes)
        }
    })
}

/// A trained network of any encoding.
#[derive(Debug, Clone)]
pub enum TrainedNetwork {
    /// An MLP from a layer genome.
    Layers(TrainedModel),
    /// A cell network for images.
    ImageCells(ImageCellNet),
    /// A cell network for tables.
    TableCells(TableCellNet),
}

/// The result of [`train_genome`].
#[derive(Debug, Clone)]
pub struct GenomeTrainOutcome {
    /// How the run ended.
    pub status: TrainStatus,
    /// Validation scores; `None` without validation data or when diverged.
    pub scores: Option<Scores>,
    /// Epochs started.
    pub epochs_run: u32,
    /// 1-based epoch whose weights the network holds (see [`crate::train::TrainOutcome`]).
    pub best_epoch: u32,
    /// Wall-clock seconds.
    pub seconds: f64,
    /// The trained network.
    pub network: TrainedNetwork,
    /// Why training was cut, when `status` is [`TrainStatus::CurveCut`].
    pub cut: Option<CutVerdict>,
}

/// Trains the network `genome` describes on `train` (scored on `valid`) with
/// the shared epoch loop: MLPs with the fast MLP learner, cell networks
/// through candle autograd. `augment` shifts training images by up to one
/// pixel (image cells only). Single-threaded and bit-identical for the same
/// arguments.
pub fn train_genome(
    genome: &AnyGenome,
    train_part: &Dataset,
    valid: Option<&Dataset>,
    input: &InputLayout,
    settings: &TrainSettings,
    augment: bool,
) -> Result<GenomeTrainOutcome> {
    train_genome_with_cut(genome, train_part, valid, input, settings, augment, None)
}

/// [`train_genome`] with an optional learning-curve cut (see
/// [`crate::train::fit_with_cut`]); `None` trains exactly as [`train_genome`].
pub fn train_genome_with_cut(
    genome: &AnyGenome,
    train_part: &Dataset,
    valid: Option<&Dataset>,
    input: &InputLayout,
    settings: &TrainSettings,
    augment: bool,
    cut: Option<CurveCut>,
) -> Result<GenomeTrainOutcome> {
    input.check(genome.encoding())?;
    Ok(match genome {
        AnyGenome::Layers(g) => {
            let o = train_with_cut(g, train_part, valid, settings, TrainEngine::Fast, cut)?;
            GenomeTrainOutcome {
                status: o.status,
                scores: o.scores,
                epochs_run: o.epochs_run,
                best_epoch: o.best_epoch,
                seconds: o.seconds,
                network: TrainedNetwork::Layers(o.model),
                cut: o.cut,
            }
        }
        AnyGenome::TableCells(g) => {
            let o = crate::net::train_table_cells_with_cut(g, train_part, valid, settings, cut)?;
            GenomeTrainOutcome {
                status: o.status,
                scores: o.scores,
                epochs_run: o.epochs_run,
                best_epoch: o.best_epoch,
                seconds: o.seconds,
                network: TrainedNetwork::TableCells(o.network),
                cut: o.cut,
            }
        }
        AnyGenome::ImageCells(g) => {
            let shape = input.image.expect("checked above");
            let o = crate::net::train_image_cells_with_cut(
                g, train_part, valid, shape, settings, augment, cut,
            )?;
            GenomeTrainOutcome {
                status: o.status,
                scores: o.scores,
                epochs_run: o.epochs_run,
                best_epoch: o.best_epoch,
                seconds: o.seconds,
                network: TrainedNetwork::ImageCells(o.network),
                cut: o.cut,
            }
        }
    })
}

impl TrainedNetwork {
    /// Encoded input values per row.
    pub fn n_inputs(&self) -> usize {
        match self {
            TrainedNetwork::Layers(m) => m.n_inputs,
            TrainedNetwork::ImageCells(n) => n.shape().n_values(),
            TrainedNetwork::TableCells(n) => n.n_inputs(),
        }
    }

    /// Number of classes (outputs).
    pub fn n_classes(&self) -> usize {
        match self {
            TrainedNetwork::Layers(m) => m.n_classes,
            TrainedNetwork::ImageCells(n) => n.n_classes(),
            TrainedNetwork::TableCells(n) => n.n_classes(),
        }
    }

    /// Trainable parameter count.
    pub fn param_count(&self) -> u64 {
        match self {
            TrainedNetwork::Layers(m) => m.param_count(),
            TrainedNetwork::ImageCells(n) => n.param_count(),
            TrainedNetwork::TableCells(n) => n.param_count(),
        }
    }

    /// Class probabilities, row-major rows × classes, for `rows` rows of
    /// encoded inputs in `x`. A size mismatch is an input error.
    pub fn predict_proba(&self, x: &[f32], rows: usize) -> Result<Vec<f32>> {
        let n_inputs = self.n_inputs();
        if x.len() != rows.saturating_mul(n_inputs) {
            return Err(Error::input(format!(
                "the model reads rows of {n_inputs} values; got {} values for {rows} rows",
                x.len()
            )));
        }
        match self {
            TrainedNetwork::Layers(m) => m.predict_proba(x, rows),
            TrainedNetwork::ImageCells(n) => {
                cell_probabilities(x, rows, n_inputs, |t| n.logits(t, false))
            }
            TrainedNetwork::TableCells(n) => {
                cell_probabilities(x, rows, n_inputs, |t| n.logits(t, false))
            }
        }
    }

    /// The most probable class of each row (ties go to the lowest class index).
    pub fn predict_classes(&self, x: &[f32], rows: usize) -> Result<Vec<u32>> {
        let n_classes = self.n_classes().max(1);
        let probabilities = self.predict_proba(x, rows)?;
        Ok(probabilities
            .chunks(n_classes)
            .map(|row| crate::train::argmax_lowest_on_ties(row) as u32)
            .collect())
    }

    /// Writes the weights (and batch-norm running statistics) as safetensors.
    pub fn save_safetensors(&self, path: &Path) -> Result<()> {
        match self {
            TrainedNetwork::Layers(m) => m.save_safetensors(path),
            TrainedNetwork::ImageCells(n) => n.save_safetensors(path),
            TrainedNetwork::TableCells(n) => n.save_safetensors(path),
        }
    }

    /// Rebuilds the network `genome` describes for `input` and `n_classes`
    /// and reads its tensors from `path`.
    pub fn load_safetensors(
        path: &Path,
        genome: &AnyGenome,
        input: &InputLayout,
        n_classes: usize,
    ) -> Result<TrainedNetwork> {
        input.check(genome.encoding())?;
        Ok(match genome {
            AnyGenome::Layers(g) => TrainedNetwork::Layers(TrainedModel::load_safetensors(
                path,
                g.clone(),
                input.n_inputs,
                n_classes,
            )?),
            AnyGenome::TableCells(g) => {
                TrainedNetwork::TableCells(load_table(path, g, input, n_classes)?)
            }
            AnyGenome::ImageCells(g) => {
                TrainedNetwork::ImageCells(load_image(path, g, input, n_classes)?)
            }
        })
    }
}

fn load_table(
    path: &Path,
    genome: &TableCellGenome,
    input: &InputLayout,
    n_classes: usize,
) -> Result<TableCellNet> {
    TableCellNet::load_safetensors(path, genome, input.n_inputs, n_classes)
}

fn load_image(
    path: &Path,
    genome: &ImageCellGenome,
    input: &InputLayout,
    n_classes: usize,
) -> Result<ImageCellNet> {
    let shape = input.image.expect("checked by the caller");
    ImageCellNet::load_safetensors(path, genome, shape, n_classes)
}

/// Softmax probabilities of a cell network, computed in chunks of rows.
fn cell_probabilities(
    x: &[f32],
    rows: usize,
    n_inputs: usize,
    logits: impl Fn(&Tensor) -> Result<Tensor>,
) -> Result<Vec<f32>> {
    let mut out = Vec::new();
    for start in (0..rows).step_by(PREDICT_CHUNK) {
        let n = PREDICT_CHUNK.min(rows - start);
        let chunk = &x[start * n_inputs..(start + n) * n_inputs];
        let input = Tensor::from_slice(chunk, (n, n_inputs), &Device::Cpu)?;
        let mut values = logits(&input)?.flatten_all()?.to_vec1::<f32>()?;
        let n_classes = values.len() / n.max(1);
        crate::train::softmax_rows(&mut values, n_classes);
        out.extend(values);
    }
    Ok(out)
}

/// A rough upper estimate of the memory (bytes) one training of `genome`
/// needs besides the data: 4-byte floats for the parameters four times
/// (weights, gradients, two Adam moments) plus, per row of a batch, the
/// activations autograd keeps for the backward pass and their gradients.
///
/// Activations per row (common practice, no source; an estimate of what the
/// builders keep, not a measurement): MLPs 3 values per hidden unit (pre-
/// and post-activation, dropout mask) plus the inputs; cell networks, per
/// cell with an output of S = C·H·W values, S·(12·B + 3·k + 10) for B blocks
/// and k concatenated block outputs (each conv op keeps its ReLU input, an
/// unfolded 3×3 patch buffer, conv and batch-norm outputs), and 4 values per
/// stem output value. The evaluator compares it with `--max-memory-mb`.
pub fn training_memory_bytes(genome: &AnyGenome, input: &InputLayout, n_classes: usize) -> u64 {
    let params = genome_cost(genome, input, n_classes)
        .map(|c| c.params)
        .unwrap_or(0);
    let n_inputs = input.n_inputs as u64;
    let per_row: u64 = match genome {
        AnyGenome::Layers(g) => {
            let hidden: u64 = g.layers.iter().map(|l| u64::from(l.width)).sum();
            n_inputs + 3 * hidden + n_classes as u64
        }
        AnyGenome::TableCells(g) => {
            let stages = crate::net::table_cell_stages(&g.skeleton);
            n_inputs + 4 * u64::from(g.skeleton.channels) + cell_stage_values(&stages, g)
        }
        AnyGenome::ImageCells(g) => match input.image {
            Some(s) => {
                let stages =
                    crate::net::image_cell_stages(&g.skeleton, (s.channels, s.height, s.width));
                let stem = u64::from(g.skeleton.channels) * (s.height * s.width) as u64;
                n_inputs + 4 * stem + cell_stage_values(&stages, g)
            }
            None => n_inputs,
        },
    };
    let batch = u64::from(genome.training().batch_size);
    let floats = params
        .saturating_mul(4)
        .saturating_add(batch.saturating_mul(per_row).saturating_mul(2));
    floats.saturating_mul(4)
}

fn cell_stage_values<Op: crate::genome::CellOp>(
    stages: &[crate::net::CellStage],
    genome: &crate::genome::CellGenome<Op>,
) -> u64 {
    stages
        .iter()
        .map(|stage| {
            let cell = match stage.kind {
                crate::genome::CellKind::Normal => &genome.normal,
                crate::genome::CellKind::Reduction => &genome.reduction,
            };
            let size = stage
                .output
                .channels
                .saturating_mul(stage.output.height)
                .saturating_mul(stage.output.width);
            let b = cell.blocks.len() as u64;
            let k = cell.unused_blocks().len() as u64;
            size.saturating_mul(12 * b + 3 * k + 10)
        })
        .sum()
}
