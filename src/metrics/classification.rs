//! A full classification report of predicted class probabilities.
//!
//! Definitions follow scikit-learn 1.9.1 (checked against its numbers in
//! `tests/fixtures/metrics_fixture.json`; the function named beside each
//! field is the one that made the check value):
//! - the predicted class of a row is its most probable class, the lowest
//!   class index among equal maxima (NumPy's `argmax`);
//! - `confusion_matrix`: `sklearn.metrics.confusion_matrix`, rows = true
//!   class, columns = predicted class;
//! - per-class precision, recall, F1, support:
//!   `precision_recall_fscore_support(labels=range(n_classes), zero_division=0)`,
//!   with F1 = 2·TP / (support + predicted count), as scikit-learn computes it;
//! - `balanced_accuracy`: `balanced_accuracy_score`, the mean recall over the
//!   classes present in the labels;
//! - `macro_f1`: `f1_score(average="macro")` without `labels`, the mean F1 over
//!   the classes present in the labels or the predictions (the same rule as
//!   [`crate::train::score`]);
//! - `log_loss`: `log_loss`, the mean over rows of −ln p(true class) with p
//!   clipped to [ε, 1 − ε], ε = 2.220446049250313e-16 (`f64::EPSILON`, NumPy's
//!   `finfo(float64).eps`, which scikit-learn uses for float64 input; for
//!   float32 input it would use float32's ε ≈ 1.19e-7, a difference only for
//!   probabilities within 1.2e-7 of 0 or 1. The fixture's probabilities lie
//!   in [0.011, 0.982], so it does not tell the two apart);
//! - `roc_auc`: `roc_auc_score`; two classes: the AUC of the positive class's
//!   probability (class 1 unless another is asked for); more classes: the
//!   macro average of the one-vs-rest AUCs (`multi_class="ovr"`,
//!   `average="macro"`). Each AUC is the Mann–Whitney form
//!   U / (n_pos · n_neg), a tied positive–negative pair counting 1/2,
//!   computed in exact integer arithmetic and divided once. `None` when a
//!   class has no positive or no negative row (scikit-learn raises there).

use serde::{Deserialize, Serialize};

use crate::{Error, Result};

/// Precision, recall, F1 and support of one class (zero_division = 0).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub struct ClassScores {
    /// TP / (rows predicted as the class); 0 when the class is never predicted.
    pub precision: f64,
    /// TP / support; 0 when the class has no rows.
    pub recall: f64,
    /// 2·TP / (support + rows predicted as the class); 0 when both are 0.
    pub f1: f64,
    /// Rows whose true class is this class.
    pub support: u64,
}

/// Every score of one set of predicted probabilities against true classes
/// (see the module docs for each definition).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub struct ClassReport {
    /// Rows scored.
    pub rows: usize,
    /// Number of classes (columns of the probability matrix).
    pub n_classes: usize,
    /// Row = true class, column = predicted class, `n_classes` × `n_classes`.
    pub confusion_matrix: Vec<Vec<u64>>,
    /// One entry per class, in class-index order.
    pub per_class: Vec<ClassScores>,
    /// Share of rows whose predicted class is the true class.
    pub accuracy: f64,
    /// Mean recall over the classes present in the labels.
    pub balanced_accuracy: f64,
    /// Mean F1 over the classes present in the labels or the predictions.
    pub macro_f1: f64,
    /// Mean −ln p(true class), p clipped to [ε, 1 − ε] with ε = `f64::EPSILON`.
    pub log_loss: f64,
    /// ROC AUC (binary: of `positive_class`; otherwise the macro one-vs-rest
    /// mean); `None` when a class has no positive or no negative row.
    pub roc_auc: Option<f64>,
    /// The class whose probability the binary ROC AUC ranks by; `None` for
    /// more than two classes.
    pub positive_class: Option<usize>,
}

impl ClassReport {
    /// Scores row-major `probabilities` (`labels.len()` × `n_classes`, f32 or
    /// f64) against the true class indices `labels`.
    ///
    /// `positive_class` applies to two classes only (default: class 1); give
    /// `None` for more classes.
    ///
    /// Errors ([`Error::Input`]): fewer than 2 classes, no rows, a probability
    /// matrix of the wrong size, a label ≥ `n_classes`, a NaN or infinite
    /// probability, a positive class ≥ 2, or a positive class with more than
    /// two classes.
    pub fn from_probabilities<T: Copy + Into<f64>>(
        probabilities: &[T],
        labels: &[u32],
        n_classes: usize,
        positive_class: Option<usize>,
    ) -> Result<ClassReport> {
        let positive_class = check_request(probabilities, labels, n_classes, positive_class)?;
        let rows = labels.len();
        let row_of = |row: usize| &probabilities[row * n_classes..(row + 1) * n_classes];

        let mut confusion_matrix = vec![vec![0u64; n_classes]; n_classes];
        let mut log_loss_total = 0.0f64;
        for (row, &label) in labels.iter().enumerate() {
            let values = row_of(row);
            let predicted = first_argmax(values);
            confusion_matrix[label as usize][predicted] += 1;
            let p_true: f64 = values[label as usize].into();
            log_loss_total -= p_true.clamp(f64::EPSILON, 1.0 - f64::EPSILON).ln();
        }

        let support: Vec<u64> = confusion_matrix.iter().map(|r| r.iter().sum()).collect();
        let predicted: Vec<u64> = (0..n_classes)
            .map(|c| confusion_matrix.iter().map(|r| r[c]).sum())
            .collect();
        let per_class: Vec<ClassScores> = (0..n_classes)
            .map(|c| {
                let tp = confusion_matrix[c][c];
                ClassScores {
                    precision: ratio(tp, predicted[c]),
                    recall: ratio(tp, support[c]),
                    f1: ratio(2 * tp, support[c] + predicted[c]),
                    support: support[c],
                }
            })
            .collect();
        let correct: u64 = (0..n_classes).map(|c| confusion_matrix[c][c]).sum();
        let recalls: Vec<f64> = (0..n_classes)
            .filter(|&c| support[c] > 0)
            .map(|c| per_class[c].recall)
            .collect();
        let f1s: Vec<f64> = (0..n_classes)
            .filter(|&c| support[c] > 0 || predicted[c] > 0)
            .map(|c| per_class[c].f1)
            .collect();

        let class_auc = |class: usize| {
            let scores: Vec<f64> = (0..rows).map(|r| row_of(r)[class].into()).collect();
            let positive: Vec<bool> = labels.iter().map(|&l| l as usize == class).collect();
            roc_auc(&scores, &positive)
        };
        let roc_auc = match positive_class {
            Some(class) => class_auc(class),
            None => (0..n_classes)
                .map(class_auc)
                .collect::<Option<Vec<f64>>>()
                .map(|aucs| mean(&aucs)),
        };

        Ok(ClassReport {
            rows,
            n_classes,
            confusion_matrix,
            per_class,
            accuracy: correct as f64 / rows as f64,
            balanced_accuracy: mean(&recalls),
            macro_f1: mean(&f1s),
            log_loss: log_loss_total / rows as f64,
            roc_auc,
            positive_class,
        })
    }
}

/// Checks the request and returns the positive class to use (binary only).
fn check_request<T: Copy + Into<f64>>(
    probabilities: &[T],
    labels: &[u32],
    n_classes: usize,
    positive_class: Option<usize>,
) -> Result<Option<usize>> {
    if n_classes < 2 {
        return Err(Error::input(format!(
            "a classification report needs at least 2 classes, got {n_classes}"
        )));
    }
    if labels.is_empty() {
        return Err(Error::input(
            "a classification report needs at least one labelled row, got none",
        ));
    }
    if probabilities.len() != labels.len().saturating_mul(n_classes) {
        return Err(Error::input(format!(
            "expected {} probabilities ({} rows × {n_classes} classes), got {}",
            labels.len().saturating_mul(n_classes),
            labels.len(),
            probabilities.len()
        )));
    }
    if let Some((row, label)) = labels
        .iter()
        .enumerate()
        .find(|(_, &label)| label as usize >= n_classes)
    {
        return Err(Error::input(format!(
            "row {row} has class index {label}, but there are only {n_classes} classes \
             (indices 0 to {})",
            n_classes - 1
        )));
    }
    if let Some(index) = probabilities.iter().position(|&p| !p.into().is_finite()) {
        return Err(Error::input(format!(
            "the probability of row {} for class {} is {}; every probability must be a finite \
             number (did training diverge?)",
            index / n_classes,
            index % n_classes,
            probabilities[index].into()
        )));
    }
    match (n_classes, positive_class) {
        (2, None) => Ok(Some(1)),
        (2, Some(class)) if class < 2 => Ok(Some(class)),
        (2, Some(class)) => Err(Error::input(format!(
            "the positive class is {class}, but with 2 classes it must be 0 or 1"
        ))),
        (_, None) => Ok(None),
        (_, Some(class)) => Err(Error::input(format!(
            "a positive class ({class}) applies to two classes only, but there are \
             {n_classes}; leave it out to get the macro one-vs-rest ROC AUC"
        ))),
    }
}

/// Index of the first largest value (the values are finite).
fn first_argmax<T: Copy + Into<f64>>(values: &[T]) -> usize {
    let mut best = 0;
    let mut best_value: f64 = values[0].into();
    for (index, &value) in values.iter().enumerate().skip(1) {
        let value: f64 = value.into();
        if value > best_value {
            best = index;
            best_value = value;
        }
    }
    best
}

/// `numerator / denominator`, 0 when the denominator is 0 (zero_division = 0).
fn ratio(numerator: u64, denominator: u64) -> f64 {
    if denominator == 0 {
        0.0
    } else {
        numerator as f64 / denominator as f64
    }
}

/// Arithmetic mean; NaN for no values (not reached: a report has rows).
fn mean(values: &[f64]) -> f64 {
    values.iter().sum::<f64>() / values.len() as f64
}

/// The Mann–Whitney AUC of `scores` for rows flagged `positive`: the share
/// of (positive, negative) pairs whose positive scores higher, a tie counting
/// 1/2. `None` without a positive or without a negative row.
fn roc_auc(scores: &[f64], positive: &[bool]) -> Option<f64> {
    let n_positive = positive.iter().filter(|&&p| p).count() as u128;
    let n_negative = positive.len() as u128 - n_positive;
    if n_positive == 0 || n_negative == 0 {
        return None;
    }
    let mut order: Vec<usize> = (0..scores.len()).collect();
    order.sort_by(|&a, &b| scores[a].total_cmp(&scores[b]));
    // Twice U, exactly: each positive gains 2 per negative scored strictly
    // lower and 1 per negative with an equal score.
    let mut twice_u: u128 = 0;
    let mut negatives_below: u128 = 0;
    let mut start = 0;
    while start < order.len() {
        let value = scores[order[start]];
        let end = start
            + order[start..]
                .iter()
                .take_while(|&&row| scores[row] == value)
                .count();
        let group_positive = order[start..end].iter().filter(|&&r| positive[r]).count() as u128;
        let group_negative = (end - start) as u128 - group_positive;
        twice_u += group_positive * (2 * negatives_below + group_negative);
        negatives_below += group_negative;
        start = end;
    }
    Some(twice_u as f64 / (2 * n_positive * n_negative) as f64)
}

#[cfg(test)]
mod tests {
    //! Worked by hand from the definitions in the module docs (no outside source).
    use super::*;

    #[test]
    fn auc_counts_ties_as_half() {
        // Positives 0.5, 0.8; negatives 0.5, 0.1: pairs (0.5,0.5) = 1/2,
        // (0.5,0.1) = 1, (0.8,0.5) = 1, (0.8,0.1) = 1 → 3.5 / 4.
        let auc = roc_auc(&[0.5, 0.8, 0.5, 0.1], &[true, true, false, false]);
        assert_eq!(auc, Some(0.875));
        assert_eq!(roc_auc(&[0.1, 0.2], &[true, true]), None);
    }

    #[test]
    fn ties_in_argmax_go_to_the_first_class() {
        assert_eq!(first_argmax(&[0.4f32, 0.4, 0.2]), 0);
        assert_eq!(first_argmax(&[0.2f64, 0.4, 0.4]), 1);
    }
}
