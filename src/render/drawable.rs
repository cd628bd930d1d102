//! A genome of any encoding read back from a journal, ready to be drawn.

use super::{cell_dot, cell_genome_text, cell_svg, layer_dot, layer_graph, layer_svg};
use crate::genome::AnyGenome;

/// A genome of one of gemmule's encodings (the drawing methods live here,
/// the type in [`crate::genome`]).
pub type DrawableGenome = AnyGenome;

impl AnyGenome {
    /// Terminal text (see [`layer_graph`] and [`cell_genome_text`]).
    pub fn text(&self, n_inputs: Option<usize>, n_classes: Option<usize>, ascii: bool) -> String {
        match self {
            AnyGenome::Layers(g) => layer_graph(g, n_inputs, n_classes, ascii),
            AnyGenome::ImageCells(g) => cell_genome_text(g, n_classes, ascii),
            AnyGenome::TableCells(g) => cell_genome_text(g, n_classes, ascii),
        }
    }

    /// Graphviz DOT (see [`layer_dot`] and [`cell_dot`]).
    pub fn dot(&self, n_inputs: Option<usize>, n_classes: Option<usize>) -> String {
        match self {
            AnyGenome::Layers(g) => layer_dot(g, n_inputs, n_classes),
            AnyGenome::ImageCells(g) => cell_dot(g, n_classes),
            AnyGenome::TableCells(g) => cell_dot(g, n_classes),
        }
    }

    /// Standalone SVG (see [`layer_svg`] and [`cell_svg`]).
    pub fn svg(&self, n_inputs: Option<usize>, n_classes: Option<usize>) -> String {
        match self {
            AnyGenome::Layers(g) => layer_svg(g, n_inputs, n_classes),
            AnyGenome::ImageCells(g) => cell_svg(g, n_classes),
            AnyGenome::TableCells(g) => cell_svg(g, n_classes),
        }
    }
}
