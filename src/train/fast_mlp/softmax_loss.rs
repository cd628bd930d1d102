//! Mean softmax cross-entropy and its gradient with respect to the logits, fused.

/// Returns the mean over rows of −log softmax(logits)[label] and writes
/// dL/dlogits = (softmax(logits) − onehot(label)) / rows into `delta`.
/// Sums run in f64. A label out of range or a non-finite logit gives NaN.
pub(super) fn softmax_cross_entropy(
    logits: &[f32],
    labels: &[u32],
    n_classes: usize,
    delta: &mut [f32],
) -> f32 {
    let rows = labels.len();
    if rows == 0 || n_classes == 0 {
        return f32::NAN;
    }
    let scale = 1.0 / rows as f64;
    let mut total = 0.0f64;
    let mut exps = [0.0f64; 64];
    let row_pairs = logits
        .chunks_exact(n_classes)
        .zip(delta.chunks_exact_mut(n_classes));
    for ((row, delta_row), &label) in row_pairs.zip(labels) {
        let label = label as usize;
        let max = row.iter().copied().fold(f32::NEG_INFINITY, f32::max) as f64;
        let exp = |z: f32| (f64::from(z) - max).exp();
        // Each exponential once when the row fits the stack buffer (libm's
        // exp was a tenth of the non-GEMM time); the same values either way.
        let cached = n_classes <= exps.len();
        if cached {
            for (e, &z) in exps.iter_mut().zip(row) {
                *e = exp(z);
            }
        }
        let sum: f64 = if cached {
            exps[..n_classes].iter().sum()
        } else {
            row.iter().map(|&z| exp(z)).sum()
        };
        let inv_sum = 1.0 / sum;
        for (class, (&z, d)) in row.iter().zip(delta_row.iter_mut()).enumerate() {
            let e = if cached { exps[class] } else { exp(z) };
            let probability = e * inv_sum;
            let target = if class == label { 1.0 } else { 0.0 };
            *d = ((probability - target) * scale) as f32;
        }
        match row.get(label) {
            Some(&true_logit) => total += max + sum.ln() - f64::from(true_logit),
            None => total = f64::NAN,
        }
    }
    (total * scale) as f32
}
