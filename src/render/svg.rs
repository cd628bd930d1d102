//! Standalone SVG drawings of genome graphs, without Graphviz: nodes in rows
//! by rank, each row centred, straight edges between neighbouring rows and
//! gently bowed ones across several rows, all text escaped.

use super::graph::{cell_model, layer_model, Graph, NodeKind};
use super::text_cell::{is_image_catalogue, skeleton_text};
use crate::genome::{CellGenome, CellKind, CellOp, LayerGenome};

/// Estimated width of one character of the 12 px monospace font.
const CHAR_WIDTH: f64 = 7.2;
/// Height of a node box.
const NODE_HEIGHT: f64 = 28.0;
/// Vertical distance between the centres of two ranks.
const RANK_STEP: f64 = 64.0;
/// Horizontal gap between neighbouring nodes of a rank.
const NODE_GAP: f64 = 20.0;
/// Space around a panel's content.
const MARGIN: f64 = 20.0;
/// Extra room on both sides of a panel with edges across several ranks.
const LONG_EDGE_ROOM: f64 = 32.0;
/// Height of one caption line.
const LINE_HEIGHT: f64 = 18.0;

/// Escapes `text` for XML character data and attribute values.
fn escaped(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c => out.push(c),
        }
    }
    out
}

/// Width a line of text takes.
fn text_width(text: &str) -> f64 {
    text.chars().count() as f64 * CHAR_WIDTH
}

/// A laid-out graph: its size and its SVG elements (origin at the top left).
struct Panel {
    width: f64,
    height: f64,
    body: String,
}

/// Fill colour and SVG shape of a node of `kind`.
fn node_shape(kind: NodeKind, x: f64, y: f64, width: f64) -> String {
    let (left, top) = (x - width / 2.0, y - NODE_HEIGHT / 2.0);
    match kind {
        NodeKind::Input | NodeKind::Sum => {
            let fill = if kind == NodeKind::Input {
                "#e8f0fe"
            } else {
                "#e6f4ea"
            };
            format!(
                "<ellipse cx=\"{x:.1}\" cy=\"{y:.1}\" rx=\"{:.1}\" ry=\"{:.1}\" fill=\"{fill}\" stroke=\"#333\"/>",
                width / 2.0,
                NODE_HEIGHT / 2.0
            )
        }
        NodeKind::Operation => format!(
            "<rect x=\"{left:.1}\" y=\"{top:.1}\" width=\"{width:.1}\" height=\"{NODE_HEIGHT:.1}\" rx=\"6\" fill=\"#fff4d6\" stroke=\"#333\"/>"
        ),
        NodeKind::Output => format!(
            "<rect x=\"{left:.1}\" y=\"{top:.1}\" width=\"{width:.1}\" height=\"{NODE_HEIGHT:.1}\" fill=\"#fde7e9\" stroke=\"#333\" stroke-width=\"2\"/>"
        ),
    }
}

/// Lays `graph` out in rows by rank under its title.
fn layout(graph: &Graph) -> Panel {
    let widths: Vec<f64> = graph
        .nodes
        .iter()
        .map(|n| (text_width(&n.label) + 24.0).max(40.0))
        .collect();
    let ranks = graph.rank_count();
    let mut rows: Vec<Vec<usize>> = vec![Vec::new(); ranks];
    for (i, node) in graph.nodes.iter().enumerate() {
        rows[node.rank].push(i);
    }
    let row_width = |row: &[usize]| {
        row.iter().map(|&i| widths[i]).sum::<f64>() + NODE_GAP * row.len().saturating_sub(1) as f64
    };
    let content_width = rows
        .iter()
        .map(|row| row_width(row))
        .fold(text_width(&graph.title), f64::max);
    let has_long_edges = graph
        .edges
        .iter()
        .any(|e| graph.nodes[e.to].rank > graph.nodes[e.from].rank + 1);
    let room = if has_long_edges { LONG_EDGE_ROOM } else { 0.0 };
    let width = content_width + 2.0 * (MARGIN + room);
    let top = MARGIN + LINE_HEIGHT + 8.0;
    let mut predecessors: Vec<Vec<usize>> = vec![Vec::new(); graph.nodes.len()];
    for edge in &graph.edges {
        predecessors[edge.to].push(edge.from);
    }
    let mut centres = vec![(0.0, 0.0); graph.nodes.len()];
    for (rank, row) in rows.iter_mut().enumerate() {
        // Order each row by the mean position of the nodes feeding it (placed
        // already: they sit in earlier rows), which keeps crossings few.
        let mean_x = |i: usize| {
            let feeding = &predecessors[i];
            if feeding.is_empty() {
                i as f64
            } else {
                feeding.iter().map(|&p| centres[p].0).sum::<f64>() / feeding.len() as f64
            }
        };
        if rank > 0 {
            row.sort_by(|&a, &b| mean_x(a).total_cmp(&mean_x(b)));
        }
        let mut x = (width - row_width(row)) / 2.0;
        let y = top + rank as f64 * RANK_STEP + NODE_HEIGHT / 2.0;
        for &i in row.iter() {
            centres[i] = (x + widths[i] / 2.0, y);
            x += widths[i] + NODE_GAP;
        }
    }
    let mut body = format!(
        "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\" font-weight=\"bold\">{}</text>\n",
        width / 2.0,
        MARGIN + 12.0,
        escaped(&graph.title)
    );
    for edge in &graph.edges {
        let ((x1, y1), (x2, y2)) = (centres[edge.from], centres[edge.to]);
        let (y1, y2) = (y1 + NODE_HEIGHT / 2.0, y2 - NODE_HEIGHT / 2.0);
        let (from_rank, to_rank) = (graph.nodes[edge.from].rank, graph.nodes[edge.to].rank);
        let (path, mid) = if to_rank > from_rank + 1 {
            // A long edge bows outwards, on the side of the panel it lies in,
            // its middle clearing every node of the ranks it passes.
            let side = if x1 + x2 < width { -1.0 } else { 1.0 };
            let middle = (x1 + x2) / 2.0;
            let extent = graph
                .nodes
                .iter()
                .enumerate()
                .filter(|(_, n)| n.rank > from_rank && n.rank < to_rank)
                .map(|(i, _)| side * (centres[i].0 + side * widths[i] / 2.0))
                .fold(side * middle, f64::max);
            let peak = side * extent + side * LONG_EDGE_ROOM * 0.75;
            // A quadratic curve passes its middle halfway to its control point.
            let (cx, cy) = (2.0 * peak - middle, (y1 + y2) / 2.0);
            (
                format!("M {x1:.1} {y1:.1} Q {cx:.1} {cy:.1} {x2:.1} {y2:.1}"),
                (peak, cy),
            )
        } else {
            (
                format!("M {x1:.1} {y1:.1} L {x2:.1} {y2:.1}"),
                ((x1 + x2) / 2.0, (y1 + y2) / 2.0),
            )
        };
        let dash = if edge.label.is_some() {
            " stroke-dasharray=\"5 3\""
        } else {
            ""
        };
        body.push_str(&format!(
            "<path d=\"{path}\" fill=\"none\" stroke=\"#555\"{dash} marker-end=\"url(#arrow)\"/>\n"
        ));
        if let Some(label) = &edge.label {
            body.push_str(&format!(
                "<text x=\"{:.1}\" y=\"{:.1}\" font-size=\"10\">{}</text>\n",
                mid.0 + 4.0,
                mid.1,
                escaped(label)
            ));
        }
    }
    for (i, node) in graph.nodes.iter().enumerate() {
        let (x, y) = centres[i];
        body.push_str(&node_shape(node.kind, x, y, widths[i]));
        body.push_str(&format!(
            "\n<text x=\"{x:.1}\" y=\"{:.1}\" text-anchor=\"middle\">{}</text>\n",
            y + 4.0,
            escaped(&node.label)
        ));
    }
    let height = top + ranks as f64 * RANK_STEP + MARGIN;
    Panel {
        width,
        height,
        body,
    }
}

/// A standalone SVG document: `caption` lines on top, then the panels side by side.
fn document(caption: &[String], panels: &[Panel]) -> String {
    let caption_height = if caption.is_empty() {
        0.0
    } else {
        MARGIN + LINE_HEIGHT * caption.len() as f64
    };
    let caption_width = caption
        .iter()
        .map(|line| text_width(line) + 2.0 * MARGIN)
        .fold(0.0, f64::max);
    let panels_width: f64 = panels.iter().map(|p| p.width).sum();
    let width = panels_width.max(caption_width);
    let height = caption_height + panels.iter().map(|p| p.height).fold(0.0, f64::max);
    let mut out = format!(
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n\
         <svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width:.0}\" height=\"{height:.0}\" \
         viewBox=\"0 0 {width:.1} {height:.1}\" font-family=\"monospace\" font-size=\"12\">\n\
         <defs><marker id=\"arrow\" viewBox=\"0 0 10 10\" refX=\"10\" refY=\"5\" \
         markerWidth=\"7\" markerHeight=\"7\" orient=\"auto\">\
         <path d=\"M 0 0 L 10 5 L 0 10 z\" fill=\"#555\"/></marker></defs>\n\
         <rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n"
    );
    for (i, line) in caption.iter().enumerate() {
        out.push_str(&format!(
            "<text x=\"{MARGIN:.1}\" y=\"{:.1}\">{}</text>\n",
            MARGIN + LINE_HEIGHT * (i as f64 + 0.5),
            escaped(line)
        ));
    }
    let mut x = 0.0;
    for panel in panels {
        out.push_str(&format!(
            "<g transform=\"translate({x:.1} {caption_height:.1})\">\n{}</g>\n",
            panel.body
        ));
        x += panel.width;
    }
    out.push_str("</svg>\n");
    out
}

/// The network of a layer genome as a standalone SVG document (the same graph
/// as [`super::layer_dot`]).
pub fn layer_svg(
    genome: &LayerGenome,
    n_inputs: Option<usize>,
    n_classes: Option<usize>,
) -> String {
    document(&[], &[layout(&layer_model(genome, n_inputs, n_classes))])
}

/// Both cells of a cell genome side by side as a standalone SVG document, under
/// the genome's id and skeleton summary (the same graphs as [`super::cell_dot`]).
pub fn cell_svg<Op: CellOp>(genome: &CellGenome<Op>, n_classes: Option<usize>) -> String {
    let skeleton = skeleton_text(
        &genome.skeleton,
        is_image_catalogue::<Op>(),
        n_classes,
        false,
    );
    let mut caption = vec![format!("cell genome {}", genome.id())];
    caption.extend(skeleton.lines().map(|line| line.trim().to_string()));
    let panels = [
        layout(&cell_model(&genome.normal, CellKind::Normal)),
        layout(&cell_model(&genome.reduction, CellKind::Reduction)),
    ];
    document(&caption, &panels)
}
