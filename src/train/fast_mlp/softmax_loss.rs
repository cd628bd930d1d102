//! Mean softmax cross-entropy and its gradient with respect to the logits, fused.

/// Returns the mean over rows of CE_i = −log softmax(logits_i)[label_i] and
/// writes dL/dlogits_i = (softmax(logits_i) − onehot(label_i)) / rows into
/// `delta`. With `class_weights` w the mean is weighted:
/// L = Σ w_{y_i}·CE_i / Σ w_{y_i} and dL/dlogits_i = w_{y_i}·(softmax − onehot) / Σ w_{y_i}.
/// Sums run in f64; without weights the arithmetic is exactly the plain
/// mean's (every row weight is 1.0, and the total is `rows`). A label out of
/// range or a non-finite logit gives NaN.
pub(super) fn softmax_cross_entropy(
    logits: &[f32],
    labels: &[u32],
    n_classes: usize,
    class_weights: Option<&[f32]>,
    delta: &mut [f32],
) -> f32 {
    let rows = labels.len();
    if rows == 0 || n_classes == 0 {
        return f32::NAN;
    }
    let row_weight = |label: u32| -> f64 {
        match class_weights {
            None => 1.0,
            Some(weights) => weights
                .get(label as usize)
                .map_or(f64::NAN, |&w| f64::from(w)),
        }
    };
    let total_weight = match class_weights {
        None => rows as f64,
        Some(_) => labels.iter().map(|&label| row_weight(label)).sum(),
    };
    let scale = 1.0 / total_weight;
    let mut total = 0.0f64;
    let mut exps = [0.0f64; 64];
    let row_pairs = logits
        .chunks_exact(n_classes)
        .zip(delta.chunks_exact_mut(n_classes));
    for ((row, delta_row), &label) in row_pairs.zip(labels) {
        let weight = row_weight(label);
        let row_scale = weight * scale;
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
            *d = ((probability - target) * row_scale) as f32;
        }
        match row.get(label) {
            Some(&true_logit) => total += weight * (max + sum.ln() - f64::from(true_logit)),
            None => total = f64::NAN,
        }
    }
    (total * scale) as f32
}

#[cfg(test)]
mod tests {
    use super::softmax_cross_entropy;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// The unweighted loss as it was before class weights existed (kept verbatim in its
    /// arithmetic), so `None` is checked to give the same bits.
    fn plain_mean(logits: &[f32], labels: &[u32], n_classes: usize, delta: &mut [f32]) -> f32 {
        let scale = 1.0 / labels.len() as f64;
        let mut total = 0.0f64;
        for ((row, delta_row), &label) in logits
            .chunks_exact(n_classes)
            .zip(delta.chunks_exact_mut(n_classes))
            .zip(labels)
        {
            let max = row.iter().copied().fold(f32::NEG_INFINITY, f32::max) as f64;
            let sum: f64 = row.iter().map(|&z| (f64::from(z) - max).exp()).sum();
            let inv_sum = 1.0 / sum;
            for (class, (&z, d)) in row.iter().zip(delta_row.iter_mut()).enumerate() {
                let probability = (f64::from(z) - max).exp() * inv_sum;
                let target = if class == label as usize { 1.0 } else { 0.0 };
                *d = ((probability - target) * scale) as f32;
            }
            total += max + sum.ln() - f64::from(row[label as usize]);
        }
        (total * scale) as f32
    }

    #[test]
    fn without_weights_the_bits_are_the_plain_means() {
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        for n_classes in [2, 3, 10, 64, 65, 100] {
            let rows = rng.gen_range(1..40);
            let logits: Vec<f32> = (0..rows * n_classes)
                .map(|_| rng.gen_range(-8.0..8.0))
                .collect();
            let labels: Vec<u32> = (0..rows)
                .map(|_| rng.gen_range(0..n_classes as u32))
                .collect();
            let (mut got, mut want) = (vec![0.0; logits.len()], vec![0.0; logits.len()]);
            let loss = softmax_cross_entropy(&logits, &labels, n_classes, None, &mut got);
            let reference = plain_mean(&logits, &labels, n_classes, &mut want);
            assert_eq!(loss.to_bits(), reference.to_bits(), "{n_classes} classes");
            let bits = |v: &[f32]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&got), bits(&want), "{n_classes} classes");
        }
    }

    #[test]
    fn weights_scale_each_row_by_its_class_weight() {
        // Worked by hand: two rows with equal logits (CE = ln 2 each, softmax 1/2), labels
        // 0 and 1, class weights 1 and 3: L = (1·ln 2 + 3·ln 2) / 4 = ln 2; the gradient of
        // row 0 is 1·(1/2 − 1, 1/2)/4, of row 1 3·(1/2, 1/2 − 1)/4.
        let mut delta = [0.0f32; 4];
        let loss = softmax_cross_entropy(&[0.0; 4], &[0, 1], 2, Some(&[1.0, 3.0]), &mut delta);
        assert!((f64::from(loss) - 2f64.ln()).abs() < 1e-7);
        assert_eq!(delta, [-0.125, 0.125, 0.375, -0.375]);
    }
}
