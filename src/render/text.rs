//! Terminal text of a layer genome, and the helpers every text rendering shares.

use crate::genome::{LayerGenome, TrainGenes};

/// Columns every terminal rendering stays within.
pub const TEXT_WIDTH: usize = 80;

/// The characters a text rendering draws with: box drawing or plain ASCII.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Glyphs {
    /// A vertical line.
    pub pipe: &'static str,
    /// A branch off the vertical line.
    pub branch: &'static str,
    /// The last branch.
    pub last: &'static str,
    /// A horizontal line.
    pub line: &'static str,
    /// An arrow head.
    pub arrow: &'static str,
    /// A free-standing arrow between items of a chain.
    pub chain: &'static str,
    /// The corner where a block's first branch turns down.
    pub corner: &'static str,
    /// Where a block's second branch meets the first.
    pub join: &'static str,
    /// The sum of a block's two branches.
    pub sum: &'static str,
    /// "times", as in `×2`.
    pub times: &'static str,
    /// Marks a residual skip.
    pub skip: &'static str,
    /// Ends a cut line.
    pub ellipsis: &'static str,
}

impl Glyphs {
    /// Box drawing, or ASCII when `ascii`.
    pub fn new(ascii: bool) -> Glyphs {
        if ascii {
            Glyphs {
                pipe: "|",
                branch: "+-",
                last: "`-",
                line: "-",
                arrow: ">",
                chain: "->",
                corner: "+",
                join: "+",
                sum: "(+)",
                times: "x",
                skip: "(+ skip)",
                ellipsis: "~",
            }
        } else {
            Glyphs {
                pipe: "│",
                branch: "├─",
                last: "└─",
                line: "─",
                arrow: "→",
                chain: "→",
                corner: "┐",
                join: "┴",
                sum: "⊕",
                times: "×",
                skip: "⊕ skip",
                ellipsis: "…",
            }
        }
    }
}

/// Cuts every line of `text` longer than `width` columns (counted in
/// characters) and ends it with `…` (`~` when `ascii`).
pub fn fit_width(text: &str, width: usize, ascii: bool) -> String {
    let ellipsis = Glyphs::new(ascii).ellipsis;
    let mut out = String::with_capacity(text.len());
    for line in text.lines() {
        if line.chars().count() > width {
            out.extend(line.chars().take(width.saturating_sub(1)));
            out.push_str(ellipsis);
        } else {
            out.push_str(line);
        }
        out.push('\n');
    }
    out
}

/// Joins `parts` with ` → ` (` -> ` in ASCII), breaking onto indented
/// continuation lines so no line passes `width` columns.
pub(crate) fn wrap_chain(parts: &[String], width: usize, glyphs: Glyphs) -> String {
    let separator = format!(" {} ", glyphs.chain);
    let mut lines: Vec<String> = Vec::new();
    let mut current = String::new();
    for part in parts {
        if current.is_empty() {
            current.push_str(part);
            continue;
        }
        let candidate_len =
            current.chars().count() + separator.chars().count() + part.chars().count();
        if candidate_len > width {
            lines.push(std::mem::take(&mut current));
            current = format!("   {} {part}", glyphs.chain);
        } else {
            current.push_str(&separator);
            current.push_str(part);
        }
    }
    lines.push(current);
    lines.join("\n")
}

/// One line describing how a candidate is trained.
pub(crate) fn training_line(training: &TrainGenes) -> String {
    format!(
        "training: {}, learning rate {}, batch {}, weight decay {}",
        training.optimizer.name(),
        training.learning_rate,
        training.batch_size,
        training.weight_decay
    )
}

/// Draws a layer genome top to bottom, one line per layer, within
/// [`TEXT_WIDTH`] columns; `ascii` swaps the box-drawing characters for
/// plain ones. Feature and class counts are shown when known.
pub fn layer_graph(
    genome: &LayerGenome,
    n_inputs: Option<usize>,
    n_classes: Option<usize>,
    ascii: bool,
) -> String {
    let glyphs = Glyphs::new(ascii);
    let mut lines = vec![match n_inputs {
        Some(n) => format!("input: {n} features"),
        None => "input".to_string(),
    }];
    for (i, layer) in genome.layers.iter().enumerate() {
        lines.push(glyphs.pipe.to_string());
        let mut line = format!(
            "{} layer {}: dense {}, {}",
            glyphs.branch,
            i + 1,
            layer.width,
            layer.activation.name()
        );
        if layer.dropout > 0.0 {
            line.push_str(&format!(", dropout {}", layer.dropout));
        }
        if layer.residual {
            line.push_str(&format!("  {} (adds the layer's input)", glyphs.skip));
        }
        lines.push(line);
    }
    lines.push(glyphs.pipe.to_string());
    lines.push(match n_classes {
        Some(n) => format!("{} output: dense {n}, softmax", glyphs.last),
        None => format!("{} output: dense, softmax", glyphs.last),
    });
    lines.push(training_line(&genome.training));
    fit_width(&lines.join("\n"), TEXT_WIDTH, ascii)
}
