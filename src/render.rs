//! Text renderings of genomes for the terminal.

use crate::genome::LayerGenome;

/// Draws a layer genome top to bottom, one box-drawing line per layer
/// (`ascii` swaps the box characters for plain ones), within 80 columns.
pub fn layer_graph(
    genome: &LayerGenome,
    n_inputs: Option<usize>,
    n_classes: Option<usize>,
    ascii: bool,
) -> String {
    let (pipe, branch, skip) = if ascii {
        ("|", "+-", "(+ skip)")
    } else {
        ("│", "├─", "↺ skip")
    };
    let mut out = String::new();
    match n_inputs {
        Some(n) => out.push_str(&format!("input ({n} features)\n")),
        None => out.push_str("input\n"),
    }
    for (i, layer) in genome.layers.iter().enumerate() {
        out.push_str(&format!("{pipe}\n"));
        let mut line = format!(
            "{branch} layer {}: dense {} {}",
            i + 1,
            layer.width,
            layer.activation.name()
        );
        if layer.dropout > 0.0 {
            line.push_str(&format!(", dropout {}", layer.dropout));
        }
        if layer.residual {
            line.push_str(&format!("  {skip}"));
        }
        out.push_str(&line);
        out.push('\n');
    }
    out.push_str(&format!("{pipe}\n"));
    match n_classes {
        Some(n) => out.push_str(&format!("output: dense {n}, softmax\n")),
        None => out.push_str("output: dense, softmax\n"),
    }
    let t = &genome.training;
    out.push_str(&format!(
        "training: {} lr {}, batch {}, weight decay {}\n",
        t.optimizer.name(),
        t.learning_rate,
        t.batch_size,
        t.weight_decay
    ));
    out
}
