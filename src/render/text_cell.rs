//! Terminal text of a cell genome: the macro skeleton as one summary line and
//! each cell type drawn once as a small graph.

use super::text::{fit_width, training_line, wrap_chain, Glyphs, TEXT_WIDTH};
use crate::genome::{Cell, CellGenome, CellKind, CellOp, ConvOp, Skeleton};

/// True when `Op` is the image catalogue (ops are convolutions and pools).
pub(crate) fn is_image_catalogue<Op: CellOp>() -> bool {
    Op::TAG == ConvOp::TAG
}

/// The name of hidden state `state`: `h0`, `h1`, then `b0`, `b1`, … for block outputs.
pub(crate) fn state_name(state: u8) -> String {
    match state {
        0 => "h0".to_string(),
        1 => "h1".to_string(),
        n => format!("b{}", n - 2),
    }
}

/// The label of one branch: the op's name, marked when it runs with stride 2
/// (image reduction cells, on h0 or h1).
pub(crate) fn branch_label<Op: CellOp>(op: Op, input: u8, kind: CellKind) -> String {
    if is_image_catalogue::<Op>() && kind == CellKind::Reduction && input <= 1 {
        format!("{} (stride 2)", op.name())
    } else {
        op.name().to_string()
    }
}

/// What maps the concatenated block outputs back to the cell's size.
pub(crate) fn output_map_label<Op: CellOp>() -> &'static str {
    if is_image_catalogue::<Op>() {
        "1x1 conv"
    } else {
        "affine map"
    }
}

/// What a cell of `kind` does to the shape.
fn shape_note<Op: CellOp>(kind: CellKind) -> &'static str {
    match (kind, is_image_catalogue::<Op>()) {
        (CellKind::Normal, _) => "keeps shape",
        (CellKind::Reduction, true) => "halves height and width, doubles channels",
        (CellKind::Reduction, false) => "halves the width",
    }
}

/// Draws one cell: each block's two (input → op) branches meeting in a ⊕,
/// then the concatenated outputs of the blocks no later block reads.
pub fn cell_text<Op: CellOp>(cell: &Cell<Op>, kind: CellKind, ascii: bool) -> String {
    let g = Glyphs::new(ascii);
    let name = match kind {
        CellKind::Normal => "normal",
        CellKind::Reduction => "reduction",
    };
    let mut lines = vec![format!(
        "{name} cell ({} blocks; {}):",
        cell.blocks.len(),
        shape_note::<Op>(kind)
    )];
    let labels: Vec<[(String, String); 2]> = cell
        .blocks
        .iter()
        .map(|block| {
            block
                .pairs()
                .map(|(input, op)| (state_name(input), branch_label(op, input, kind)))
        })
        .collect();
    let op_width = labels
        .iter()
        .flatten()
        .map(|(_, label)| label.chars().count())
        .max()
        .unwrap_or(0);
    let fill = |label: &str| g.line.repeat(op_width - label.chars().count() + 1);
    for (j, [(first_in, first_op), (second_in, second_op)]) in labels.iter().enumerate() {
        lines.push(format!(
            "  {first_in:<2} {l}{a} {first_op} {}{c}",
            fill(first_op),
            l = g.line,
            a = g.arrow,
            c = g.corner
        ));
        lines.push(format!(
            "  {second_in:<2} {l}{a} {second_op} {}{join}{l}{sum}{l}{a} b{j}",
            fill(second_op),
            l = g.line,
            a = g.arrow,
            join = g.join,
            sum = g.sum
        ));
    }
    let outputs: Vec<String> = cell
        .unused_blocks()
        .iter()
        .map(|j| format!("b{j}"))
        .collect();
    lines.push(format!(
        "  concat({}) {l}{a} {} {l}{a} cell output",
        outputs.join(", "),
        output_map_label::<Op>(),
        l = g.line,
        a = g.arrow
    ));
    fit_width(&lines.join("\n"), TEXT_WIDTH, ascii)
}

/// The macro skeleton as one summary line (wrapped to [`TEXT_WIDTH`]), e.g.
/// `stem 3x3 conv 16 → [normal ×1 → reduction] ×2 → normal ×1 → global pool → linear 10`,
/// then the channel count (images) or width (tables) of the cells in each repeat.
pub fn skeleton_text(
    skeleton: &Skeleton,
    images: bool,
    n_classes: Option<usize>,
    ascii: bool,
) -> String {
    let g = Glyphs::new(ascii);
    let stem = if images {
        format!("skeleton: stem 3x3 conv {}", skeleton.channels)
    } else {
        format!("skeleton: stem dense {}", skeleton.channels)
    };
    let normals = format!("normal {}{}", g.times, skeleton.normal_cells);
    let mut parts = vec![stem];
    if skeleton.repeats > 1 {
        parts.push(format!(
            "[{normals} {} reduction] {}{}",
            g.chain,
            g.times,
            skeleton.repeats - 1
        ));
    }
    parts.push(normals);
    if images {
        parts.push("global pool".to_string());
    }
    parts.push(match n_classes {
        Some(k) => format!("linear {k}"),
        None => "linear".to_string(),
    });
    let mut sizes = vec![u64::from(skeleton.channels)];
    for _ in 1..skeleton.repeats {
        let last = sizes.last().copied().unwrap_or(0);
        sizes.push(if images {
            last.saturating_mul(2)
        } else {
            last.div_ceil(2)
        });
    }
    let sizes: Vec<String> = sizes.iter().map(u64::to_string).collect();
    let text = format!(
        "{}\n{} by repeat: {}",
        wrap_chain(&parts, TEXT_WIDTH, g),
        if images {
            "cell channels"
        } else {
            "cell widths"
        },
        sizes.join(", ")
    );
    fit_width(&text, TEXT_WIDTH, ascii)
}

/// A cell genome for the terminal: the skeleton summary, both cells drawn
/// once, and the training genes, every line within [`TEXT_WIDTH`] columns.
pub fn cell_genome_text<Op: CellOp>(
    genome: &CellGenome<Op>,
    n_classes: Option<usize>,
    ascii: bool,
) -> String {
    let mut text = skeleton_text(
        &genome.skeleton,
        is_image_catalogue::<Op>(),
        n_classes,
        ascii,
    );
    text.push('\n');
    text.push_str(&cell_text(&genome.normal, CellKind::Normal, ascii));
    text.push('\n');
    text.push_str(&cell_text(&genome.reduction, CellKind::Reduction, ascii));
    if genome.skeleton.repeats <= 1 {
        text.push_str("  (unused: the skeleton has one repeat, so no reduction cell)\n");
    }
    text.push_str(&fit_width(
        &training_line(&genome.training),
        TEXT_WIDTH,
        ascii,
    ));
    text
}
