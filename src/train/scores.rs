//! Classification scores of predicted probabilities.

use serde::{Deserialize, Serialize};

/// Smallest probability used in the log loss (as scikit-learn's `log_loss` did).
const LOG_LOSS_FLOOR: f64 = 1e-15;

/// Classification scores of one model on one labelled table.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct Scores {
    /// Share of rows whose most probable class is the true class.
    pub accuracy: f64,
    /// Mean recall over the classes present in the labels.
    pub balanced_accuracy: f64,
    /// Mean F1 over the classes present in the labels or the predictions.
    pub macro_f1: f64,
    /// Mean −ln p(true class), with p clipped to [1e-15, 1]; lower is better.
    pub log_loss: f64,
}

impl Scores {
    /// Every score NaN: the result for empty or inconsistent input.
    pub const NAN: Scores = Scores {
        accuracy: f64::NAN,
        balanced_accuracy: f64::NAN,
        macro_f1: f64::NAN,
        log_loss: f64::NAN,
    };
}

/// Scores row-major `probabilities` (labels.len() × n_classes) against `labels`.
///
/// The predicted class of a row is its most probable class, ties going to
/// the lowest class index. Balanced accuracy averages recall over the
/// classes present in `labels`. Macro-F1 averages F1 = 2TP/(2TP+FP+FN) over
/// the classes present in `labels` or in the predictions (a class predicted
/// but absent from the labels scores 0; a class neither predicted nor
/// present is left out), as scikit-learn's `f1_score(average="macro")` does.
/// Log loss is the mean of −ln p(true class) with p clipped to [1e-15, 1].
///
/// With no rows, `n_classes` 0, a size mismatch or a label ≥ `n_classes`,
/// every score is NaN.
pub fn score(probabilities: &[f32], labels: &[u32], n_classes: usize) -> Scores {
    let consistent = n_classes > 0
        && !labels.is_empty()
        && probabilities.len() == labels.len() * n_classes
        && labels.iter().all(|&label| (label as usize) < n_classes);
    if !consistent {
        return Scores::NAN;
    }
    let mut true_positives = vec![0u64; n_classes];
    let mut label_counts = vec![0u64; n_classes];
    let mut predicted_counts = vec![0u64; n_classes];
    let mut log_loss_total = 0.0f64;
    for (row, &label) in probabilities.chunks(n_classes).zip(labels) {
        let label = label as usize;
        let predicted = argmax_lowest_on_ties(row);
        label_counts[label] += 1;
        predicted_counts[predicted] += 1;
        if predicted == label {
            true_positives[label] += 1;
        }
        let p_true = f64::from(row[label]).clamp(LOG_LOSS_FLOOR, 1.0);
        log_loss_total -= p_true.ln();
    }
    let rows = labels.len() as f64;
    let accuracy = true_positives.iter().sum::<u64>() as f64 / rows;
    let recalls: Vec<f64> = (0..n_classes)
        .filter(|&c| label_counts[c] > 0)
        .map(|c| true_positives[c] as f64 / label_counts[c] as f64)
        .collect();
    let f1s: Vec<f64> = (0..n_classes)
        .filter(|&c| label_counts[c] > 0 || predicted_counts[c] > 0)
        .map(|c| 2.0 * true_positives[c] as f64 / (label_counts[c] + predicted_counts[c]) as f64)
        .collect();
    Scores {
        accuracy,
        balanced_accuracy: mean(&recalls),
        macro_f1: mean(&f1s),
        log_loss: log_loss_total / rows,
    }
}

/// Index of the largest value; the lowest index among equal maxima (NaN never wins).
pub(crate) fn argmax_lowest_on_ties(row: &[f32]) -> usize {
    let mut best = 0;
    for (index, &value) in row.iter().enumerate().skip(1) {
        if value > row[best] || (row[best].is_nan() && !value.is_nan()) {
            best = index;
        }
    }
    best
}

fn mean(values: &[f64]) -> f64 {
    if values.is_empty() {
        f64::NAN
    } else {
        values.iter().sum::<f64>() / values.len() as f64
    }
}
