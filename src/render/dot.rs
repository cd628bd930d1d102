//! Graphviz DOT export (render with e.g. `dot -Tsvg genome.dot -o genome.svg`).

use super::graph::{cell_model, layer_model, Graph, NodeKind};
use super::text_cell::is_image_catalogue;
use crate::genome::{CellGenome, CellKind, CellOp, LayerGenome};

/// Quotes `text` as a DOT string: backslashes, quotes and line breaks escaped.
fn quoted(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    out.push('"');
    for c in text.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\r' => {}
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// DOT attributes for a node of `kind`.
fn node_style(kind: NodeKind) -> &'static str {
    match kind {
        NodeKind::Input => "shape=ellipse, style=filled, fillcolor=\"#e8f0fe\"",
        NodeKind::Operation => "shape=box, style=\"rounded,filled\", fillcolor=\"#fff4d6\"",
        NodeKind::Sum => "shape=circle, style=filled, fillcolor=\"#e6f4ea\"",
        NodeKind::Output => "shape=box, style=filled, fillcolor=\"#fde7e9\", peripheries=2",
    }
}

/// Writes the nodes and edges of `graph` with ids prefixed by `prefix`.
fn push_body(out: &mut String, graph: &Graph, prefix: &str, indent: &str) {
    for (i, node) in graph.nodes.iter().enumerate() {
        out.push_str(&format!(
            "{indent}{prefix}n{i} [label={}, {}];\n",
            quoted(&node.label),
            node_style(node.kind)
        ));
    }
    for edge in &graph.edges {
        out.push_str(&format!(
            "{indent}{prefix}n{} -> {prefix}n{}",
            edge.from, edge.to
        ));
        if let Some(label) = &edge.label {
            out.push_str(&format!(" [label={}, style=dashed]", quoted(label)));
        }
        out.push_str(";\n");
    }
}

const GRAPH_DEFAULTS: &str = "  rankdir=TB;\n  labelloc=t;\n  node [fontname=\"Helvetica\", fontsize=11];\n  edge [fontname=\"Helvetica\", fontsize=9];\n";

/// The network of a layer genome as a DOT digraph: input, one node per
/// hidden layer (a ⊕ node and a dashed `skip` edge for residual layers), output.
pub fn layer_dot(
    genome: &LayerGenome,
    n_inputs: Option<usize>,
    n_classes: Option<usize>,
) -> String {
    let graph = layer_model(genome, n_inputs, n_classes);
    let mut out = String::from("digraph layer_genome {\n");
    out.push_str(GRAPH_DEFAULTS);
    out.push_str(&format!("  label={};\n", quoted(&graph.title)));
    push_body(&mut out, &graph, "", "  ");
    out.push_str("}\n");
    out
}

/// Both cells of a cell genome as a DOT digraph with one cluster per cell
/// (inputs h0/h1, a node per branch op, a ⊕ per block, the concatenated output)
/// and the skeleton in the graph's caption.
pub fn cell_dot<Op: CellOp>(genome: &CellGenome<Op>, n_classes: Option<usize>) -> String {
    let skeleton = super::text_cell::skeleton_text(
        &genome.skeleton,
        is_image_catalogue::<Op>(),
        n_classes,
        false,
    );
    let caption = format!("cell genome {}\n{}", genome.id(), skeleton.trim_end());
    let mut out = String::from("digraph cell_genome {\n");
    out.push_str(GRAPH_DEFAULTS);
    out.push_str(&format!("  label={};\n", quoted(&caption)));
    for (name, cell, kind) in [
        ("normal", &genome.normal, CellKind::Normal),
        ("reduction", &genome.reduction, CellKind::Reduction),
    ] {
        let graph = cell_model(cell, kind);
        out.push_str(&format!("  subgraph cluster_{name} {{\n"));
        out.push_str(&format!("    label={};\n", quoted(&graph.title)));
        push_body(&mut out, &graph, &format!("{name}_"), "    ");
        out.push_str("  }\n");
    }
    out.push_str("}\n");
    out
}
