//! Renderings of genomes and runs: terminal text, Graphviz DOT, standalone
//! SVG, the lineage of a candidate and the Pareto front of a run.
//!
//! Terminal text ([`layer_graph`], [`cell_genome_text`]) keeps every line
//! within [`TEXT_WIDTH`] columns and has an ASCII-only form. DOT and SVG share
//! one graph model: layer genomes become a chain of layers (with a sum node
//! for each residual skip); cells become the states h0 and h1, one node per
//! (input → op) branch, a ⊕ node per block and the concatenated cell output.

mod dot;
mod drawable;
mod graph;
mod lineage;
mod pareto;
mod svg;
mod text;
mod text_cell;

pub use dot::{cell_dot, layer_dot};
pub use drawable::DrawableGenome;
pub use lineage::{lineage, lineage_lines, LineageStep};
pub use pareto::pareto_front;
pub use svg::{cell_svg, layer_svg};
pub use text::{fit_width, layer_graph, TEXT_WIDTH};
pub use text_cell::{cell_genome_text, cell_text, skeleton_text};
