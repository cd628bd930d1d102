//! A genome of any encoding read back from a journal, ready to be drawn.

use super::{cell_dot, cell_genome_text, cell_svg, layer_dot, layer_graph, layer_svg};
use crate::genome::{CellOp, ConvOp, DenseOp, ImageCellGenome, LayerGenome, TableCellGenome};
use crate::{Error, Result};

/// A genome of one of gemmule's encodings.
#[derive(Debug, Clone, PartialEq)]
pub enum DrawableGenome {
    /// Hidden layers of an MLP.
    Layers(LayerGenome),
    /// Cells of convolutions and pools (images).
    ImageCells(ImageCellGenome),
    /// Cells of affine maps (tables).
    TableCells(TableCellGenome),
}

impl DrawableGenome {
    /// Reads a genome as a journal stores it: a cell genome when its `"ops"`
    /// tag names a catalogue, a layer genome otherwise. `source` names the
    /// genome in the error (e.g. "journal evaluation 7").
    pub fn from_value(value: &serde_json::Value, source: &str) -> Result<DrawableGenome> {
        let tag = value.get("ops").and_then(|ops| ops.as_str());
        let parsed = match tag {
            Some(t) if t == ConvOp::TAG => {
                serde_json::from_value(value.clone()).map(DrawableGenome::ImageCells)
            }
            Some(t) if t == DenseOp::TAG => {
                serde_json::from_value(value.clone()).map(DrawableGenome::TableCells)
            }
            _ => serde_json::from_value(value.clone()).map(DrawableGenome::Layers),
        };
        parsed.map_err(|e| {
            Error::input(format!(
                "{source}: the genome is not a layer genome or a cell genome \
                 (\"ops\": \"{}\" or \"{}\"): {e}",
                ConvOp::TAG,
                DenseOp::TAG
            ))
        })
    }

    /// Terminal text (see [`layer_graph`] and [`cell_genome_text`]).
    pub fn text(&self, n_inputs: Option<usize>, n_classes: Option<usize>, ascii: bool) -> String {
        match self {
            DrawableGenome::Layers(g) => layer_graph(g, n_inputs, n_classes, ascii),
            DrawableGenome::ImageCells(g) => cell_genome_text(g, n_classes, ascii),
            DrawableGenome::TableCells(g) => cell_genome_text(g, n_classes, ascii),
        }
    }

    /// Graphviz DOT (see [`layer_dot`] and [`cell_dot`]).
    pub fn dot(&self, n_inputs: Option<usize>, n_classes: Option<usize>) -> String {
        match self {
            DrawableGenome::Layers(g) => layer_dot(g, n_inputs, n_classes),
            DrawableGenome::ImageCells(g) => cell_dot(g, n_classes),
            DrawableGenome::TableCells(g) => cell_dot(g, n_classes),
        }
    }

    /// Standalone SVG (see [`layer_svg`] and [`cell_svg`]).
    pub fn svg(&self, n_inputs: Option<usize>, n_classes: Option<usize>) -> String {
        match self {
            DrawableGenome::Layers(g) => layer_svg(g, n_inputs, n_classes),
            DrawableGenome::ImageCells(g) => cell_svg(g, n_classes),
            DrawableGenome::TableCells(g) => cell_svg(g, n_classes),
        }
    }
}
