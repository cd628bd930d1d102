//! Stratified k-fold assignment: every row gets one held-out fold.
//!
//! How many rows of each class each fold holds out is scikit-learn's
//! `StratifiedKFold` allocation (scikit-learn 1.9.1,
//! `StratifiedKFold._make_test_folds`, read in its source): classes are
//! numbered in order of first appearance in `y`, the row labels so
//! numbered are sorted, and fold i receives the class counts of every k-th
//! entry of that sorted list starting at entry i (`y_order[i::k]`). So the
//! per-class counts of any two folds differ by at most 1, and so do the fold
//! sizes. `tests/metrics_reference.rs` checks the counts against scikit-learn
//! (also for labels whose classes first appear out of index order).
//!
//! Which rows of a class go to which fold is our own rule (scikit-learn's
//! shuffled order comes from NumPy's generator and is not reproduced): one
//! ChaCha8 generator seeded from `seed`, as in `data::split`, shuffles the
//! rows of each class in turn (classes in ascending label order, rows
//! ascending before the shuffle); the first rows of the shuffled class go
//! to fold 0, the next to fold 1, and so on by the allocation. The result is
//! the same on every machine for a seed.

use std::collections::BTreeMap;

use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

use crate::{Error, Result};

/// The held-out fold (0..k) of every row of `y` for `k`-fold stratified
/// cross-validation with the given seed (see the module docs).
///
/// Errors ([`Error::Input`]): no rows, `k` below 2, or `k` larger than the
/// row count of the smallest class (the message names `--folds`, the value
/// and that class by its index).
pub fn stratified_folds(y: &[u32], k: usize, seed: u64) -> Result<Vec<usize>> {
    if y.is_empty() {
        return Err(Error::input(
            "stratified folds need at least one row, got none",
        ));
    }
    if k < 2 {
        return Err(Error::input(format!(
            "--folds is {k}; cross-validation needs at least 2 folds"
        )));
    }
    // Per label: its number in order of first appearance (scikit-learn's
    // encoding) and its rows, ascending.
    let mut classes: BTreeMap<u32, (usize, Vec<usize>)> = BTreeMap::new();
    for (row, &label) in y.iter().enumerate() {
        let next = classes.len();
        classes
            .entry(label)
            .or_insert((next, Vec::new()))
            .1
            .push(row);
    }
    if let Some((&label, (_, rows))) = classes.iter().min_by_key(|(_, (_, rows))| rows.len()) {
        if rows.len() < k {
            return Err(Error::input(format!(
                "--folds is {k}, but class {label} has only {} rows; every class needs at \
                 least one row per fold, so use --folds {} or less",
                rows.len(),
                rows.len()
            )));
        }
    }

    // Counts per class in order of appearance, then the allocation:
    // allocation[fold][appearance number] = held-out rows of that class.
    let mut counts = vec![0usize; classes.len()];
    for (number, rows) in classes.values() {
        counts[*number] = rows.len();
    }
    let mut allocation = vec![vec![0usize; counts.len()]; k];
    let mut position = 0usize;
    for (number, &count) in counts.iter().enumerate() {
        for _ in 0..count {
            allocation[position % k][number] += 1;
            position += 1;
        }
    }

    let mut folds = vec![0usize; y.len()];
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    for (number, rows) in classes.into_values() {
        let mut rows = rows;
        rows.shuffle(&mut rng);
        let mut dealt = rows.into_iter();
        for (fold, per_class) in allocation.iter().enumerate() {
            for row in dealt.by_ref().take(per_class[number]) {
                folds[row] = fold;
            }
        }
    }
    Ok(folds)
}
