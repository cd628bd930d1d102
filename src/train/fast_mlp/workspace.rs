//! Activation buffers of one forward pass, kept and reused across steps.

use super::layout::LayerLayout;

/// Per-layer buffers for up to `rows` rows; grown on demand, never shrunk.
#[derive(Clone, Debug, Default)]
pub(super) struct Workspace {
    rows: usize,
    /// Per hidden layer: z, or act(z) for tanh and the sigmoid.
    pub(super) pre: Vec<Vec<f32>>,
    /// Per hidden layer: the layer's output (the next layer's input).
    pub(super) out: Vec<Vec<f32>>,
    /// Per hidden layer: the dropout multipliers of the last training pass.
    pub(super) mask: Vec<Vec<f32>>,
    /// The output layer's logits.
    pub(super) logits: Vec<f32>,
}

impl Workspace {
    /// Makes every buffer hold at least `rows` rows for `layouts`.
    pub(super) fn ensure_rows(&mut self, layouts: &[LayerLayout], rows: usize) {
        if rows <= self.rows && !self.logits.is_empty() {
            return;
        }
        let hidden: Vec<&LayerLayout> = layouts.iter().filter(|l| l.hidden.is_some()).collect();
        let size = |layout: &LayerLayout| rows * layout.fan_out;
        self.pre = hidden.iter().map(|l| vec![0.0; size(l)]).collect();
        self.out = hidden.iter().map(|l| vec![0.0; size(l)]).collect();
        self.mask = hidden
            .iter()
            .map(|l| match l.hidden {
                Some(kind) if kind.dropout > 0.0 => vec![0.0; size(l)],
                _ => Vec::new(),
            })
            .collect();
        self.logits = layouts.last().map_or(Vec::new(), |l| vec![0.0; size(l)]);
        self.rows = rows;
    }
}
