//! "Balanced" class weights: rarer classes weigh more in the training loss.
//!
//! w_c = n_samples / (n_classes · count_c), scikit-learn's
//! `compute_class_weight("balanced")` (checked against scikit-learn 1.9.1 in
//! `tests/metrics_reference.rs`). Every class then contributes the same total
//! weight, n_samples / n_classes, and the weights average 1 over the rows.

use crate::{Error, Result};

/// The balanced weight of each class from its row count (see the module
/// docs), computed as scikit-learn does: `n / (k as f64 · count as f64)`.
///
/// Errors ([`Error::Input`]): no classes, or a class with no rows (its weight
/// would be infinite; drop the class or add rows of it).
pub fn balanced_class_weights(counts: &[usize]) -> Result<Vec<f64>> {
    if counts.is_empty() {
        return Err(Error::input(
            "balanced class weights need at least one class count, got none",
        ));
    }
    if let Some(class) = counts.iter().position(|&count| count == 0) {
        return Err(Error::input(format!(
            "class {class} has no rows, so its balanced class weight would be infinite; \
             add rows of that class or remove it from the class list"
        )));
    }
    let n_samples = counts.iter().sum::<usize>() as f64;
    let n_classes = counts.len() as f64;
    Ok(counts
        .iter()
        .map(|&count| n_samples / (n_classes * count as f64))
        .collect())
}
