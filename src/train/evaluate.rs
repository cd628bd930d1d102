//! Running a network over a whole table without training: logits,
//! probabilities and the mean cross-entropy.

use candle_core::{Device, Tensor};

use crate::net::Mlp;
use crate::{Error, Result};

/// Rows per forward pass when evaluating, to bound memory on large tables.
const EVAL_CHUNK_ROWS: usize = 4096;

/// Row-major logits (rows × n_classes) of `mlp` on `x` (rows × n_inputs), without dropout.
pub(crate) fn logits_of(mlp: &Mlp, x: &[f32], rows: usize) -> Result<Vec<f32>> {
    let n_inputs = mlp.n_inputs();
    if x.len() != rows.saturating_mul(n_inputs) {
        return Err(Error::input(format!(
            "expected {rows} rows of {n_inputs} features ({} values), got {} values",
            rows.saturating_mul(n_inputs),
            x.len()
        )));
    }
    let mut logits = Vec::with_capacity(rows * mlp.n_classes());
    for chunk in x.chunks(EVAL_CHUNK_ROWS * n_inputs) {
        let chunk_rows = chunk.len() / n_inputs;
        let input = Tensor::from_slice(chunk, (chunk_rows, n_inputs), &Device::Cpu)?;
        let output = mlp.forward_eval(&input)?;
        logits.extend(output.flatten_all()?.to_vec1::<f32>()?);
    }
    Ok(logits)
}

/// Turns row-major logits into probabilities in place (numerically stable softmax per row).
pub(crate) fn softmax_rows(values: &mut [f32], n_classes: usize) {
    for row in values.chunks_mut(n_classes.max(1)) {
        let max = row.iter().copied().fold(f32::NEG_INFINITY, f32::max);
        let mut total = 0.0f32;
        for value in row.iter_mut() {
            *value = (*value - max).exp();
            total += *value;
        }
        for value in row.iter_mut() {
            *value /= total;
        }
    }
}

/// Mean softmax cross-entropy −log softmax(logits)[label] over the rows,
/// computed in f64 with log-sum-exp (NaN when a logit is not finite).
pub(crate) fn mean_cross_entropy(logits: &[f32], labels: &[u32], n_classes: usize) -> f64 {
    if labels.is_empty() {
        return f64::NAN;
    }
    let mut total = 0.0f64;
    for (row, &label) in logits.chunks(n_classes.max(1)).zip(labels) {
        let max = row.iter().copied().fold(f32::NEG_INFINITY, f32::max) as f64;
        let sum: f64 = row.iter().map(|&z| (z as f64 - max).exp()).sum();
        let true_logit = row.get(label as usize).copied().unwrap_or(f32::NAN) as f64;
        total += max + sum.ln() - true_logit;
    }
    total / labels.len() as f64
}
