//! The graph model the DOT and SVG renderings share: nodes placed in ranks
//! (depth from the inputs) and directed edges.

use super::text::training_line;
use super::text_cell::{branch_label, output_map_label, state_name};
use crate::genome::{Cell, CellKind, CellOp, LayerGenome};

/// What a node stands for; decides its shape.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum NodeKind {
    /// A network input or a cell's input state.
    Input,
    /// A layer or an op.
    Operation,
    /// The sum of two branches (a block's ⊕ or a residual skip).
    Sum,
    /// The network's or the cell's output.
    Output,
}

/// One node.
#[derive(Debug, Clone)]
pub(crate) struct Node {
    /// Text shown on the node.
    pub label: String,
    /// Shape class.
    pub kind: NodeKind,
    /// Depth: 0 for inputs, one more than the deepest node feeding it.
    pub rank: usize,
}

/// One directed edge between node positions.
#[derive(Debug, Clone)]
pub(crate) struct Edge {
    /// Source node.
    pub from: usize,
    /// Target node.
    pub to: usize,
    /// Text on the edge (e.g. `skip`).
    pub label: Option<String>,
}

/// A titled directed graph.
#[derive(Debug, Clone, Default)]
pub(crate) struct Graph {
    /// Caption of the whole graph.
    pub title: String,
    /// Nodes, in creation order (the order within a rank).
    pub nodes: Vec<Node>,
    /// Edges.
    pub edges: Vec<Edge>,
}

impl Graph {
    fn node(&mut self, label: impl Into<String>, kind: NodeKind, rank: usize) -> usize {
        self.nodes.push(Node {
            label: label.into(),
            kind,
            rank,
        });
        self.nodes.len() - 1
    }

    fn edge(&mut self, from: usize, to: usize, label: Option<&str>) {
        self.edges.push(Edge {
            from,
            to,
            label: label.map(String::from),
        });
    }

    /// Number of ranks (1 + the deepest rank; 0 when empty).
    pub fn rank_count(&self) -> usize {
        self.nodes.iter().map(|n| n.rank + 1).max().unwrap_or(0)
    }
}

/// The chain of a layer genome: input, one node per layer (plus a ⊕ node fed
/// by a `skip` edge for each residual layer), output.
pub(crate) fn layer_model(
    genome: &LayerGenome,
    n_inputs: Option<usize>,
    n_classes: Option<usize>,
) -> Graph {
    let mut graph = Graph {
        title: format!(
            "layer genome {} · {}",
            genome.id(),
            training_line(&genome.training)
        ),
        ..Graph::default()
    };
    let input_label = n_inputs.map_or("input".to_string(), |n| format!("input: {n} features"));
    let mut previous = graph.node(input_label, NodeKind::Input, 0);
    for (i, layer) in genome.layers.iter().enumerate() {
        let mut label = format!(
            "layer {}: dense {}, {}",
            i + 1,
            layer.width,
            layer.activation.name()
        );
        if layer.dropout > 0.0 {
            label.push_str(&format!(", dropout {}", layer.dropout));
        }
        let rank = graph.nodes[previous].rank + 1;
        let node = graph.node(label, NodeKind::Operation, rank);
        graph.edge(previous, node, None);
        if layer.residual {
            let sum = graph.node("⊕", NodeKind::Sum, rank + 1);
            graph.edge(node, sum, None);
            graph.edge(previous, sum, Some("skip"));
            previous = sum;
        } else {
            previous = node;
        }
    }
    let output_label = n_classes.map_or("output: dense, softmax".to_string(), |k| {
        format!("output: dense {k}, softmax")
    });
    let rank = graph.nodes[previous].rank + 1;
    let output = graph.node(output_label, NodeKind::Output, rank);
    graph.edge(previous, output, None);
    graph
}

/// One cell: inputs h0 and h1, a node per branch op, a ⊕ node per block, and
/// the output node fed by the blocks no later block reads. A branch reading a
/// state that does not exist (an invalid genome) reads a placeholder node.
pub(crate) fn cell_model<Op: CellOp>(cell: &Cell<Op>, kind: CellKind) -> Graph {
    let title = match kind {
        CellKind::Normal => "normal cell",
        CellKind::Reduction => "reduction cell",
    };
    let mut graph = Graph {
        title: title.to_string(),
        ..Graph::default()
    };
    let mut states: Vec<usize> = vec![
        graph.node("h0", NodeKind::Input, 0),
        graph.node("h1", NodeKind::Input, 0),
    ];
    for (j, block) in cell.blocks.iter().enumerate() {
        let sources = block
            .pairs()
            .map(|(input, _)| match states.get(usize::from(input)) {
                Some(&node) => node,
                None => graph.node(
                    format!("{} (undefined)", state_name(input)),
                    NodeKind::Input,
                    0,
                ),
            });
        // Both branches sit just above their ⊕, so a block reads as one unit.
        let branch_rank = sources
            .iter()
            .map(|&s| graph.nodes[s].rank + 1)
            .max()
            .unwrap_or(1);
        let mut branches = Vec::with_capacity(2);
        for (source, (input, op)) in sources.into_iter().zip(block.pairs()) {
            let label = branch_label(op, input, kind);
            let branch = graph.node(label, NodeKind::Operation, branch_rank);
            graph.edge(source, branch, None);
            branches.push(branch);
        }
        let sum = graph.node(format!("⊕ b{j}"), NodeKind::Sum, branch_rank + 1);
        for branch in branches {
            graph.edge(branch, sum, None);
        }
        states.push(sum);
    }
    let outputs = cell.unused_blocks();
    let rank = outputs
        .iter()
        .filter_map(|&j| states.get(j + 2))
        .map(|&node| graph.nodes[node].rank + 1)
        .max()
        .unwrap_or(1);
    let output = graph.node(
        format!("concat → {} → cell output", output_map_label::<Op>()),
        NodeKind::Output,
        rank,
    );
    for j in outputs {
        if let Some(&node) = states.get(j + 2) {
            graph.edge(node, output, None);
        }
    }
    graph
}
