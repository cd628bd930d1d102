//! The seeded, stratified train / validation / test split.
//!
//! Rules: every class needs at least [`MIN_ROWS_PER_CLASS`] rows, so that each
//! of the three parts gets one. Per class, the validation and test sizes are
//! the class size times their fraction rounded to the nearest row, but at
//! least 1; training gets the rest, and if that would leave training empty the
//! larger of validation and test (validation on a tie) gives back rows one at
//! a time. Rows of each class are shuffled with one ChaCha8 generator seeded
//! from the seed (classes in index order); the first rows go to test, the next
//! to validation, the rest to training. Each part then lists its rows in
//! ascending (file) order.

use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

use crate::data::cells::count_of;
use crate::data::{Sealed, SplitFractions};
use crate::{Error, Result};

/// Fewest rows a class may have: one for each of training, validation and test.
pub const MIN_ROWS_PER_CLASS: usize = 3;

/// Row indices of the three parts of a dataset; the test part is sealed.
#[derive(Debug)]
pub struct Split {
    /// Rows to fit weights and preprocessing on, ascending.
    pub train: Vec<usize>,
    /// Rows to compare candidates on, ascending.
    pub valid: Vec<usize>,
    /// Rows of the final evaluation, ascending, behind a seal.
    pub test: Sealed<Vec<usize>>,
    /// The seed the split was drawn with.
    pub seed: u64,
}

/// Splits rows by class so that each part keeps the class proportions.
///
/// `labels` holds one class index (`< n_classes`) per row. Deterministic for a
/// given seed; see the module documentation for the rounding rules.
pub fn stratified_split(
    labels: &[u32],
    n_classes: usize,
    fractions: &SplitFractions,
    seed: u64,
) -> Result<Split> {
    let names: Vec<String> = (0..n_classes).map(|c| format!("class {c}")).collect();
    split_named(labels, &names, fractions, seed)
}

/// [`stratified_split`] with class names for the error messages.
pub(crate) fn split_named(
    labels: &[u32],
    class_names: &[String],
    fractions: &SplitFractions,
    seed: u64,
) -> Result<Split> {
    fractions.validate()?;
    let mut rows_of_class: Vec<Vec<usize>> = vec![Vec::new(); class_names.len()];
    for (row, &class) in labels.iter().enumerate() {
        let rows = rows_of_class.get_mut(class as usize).ok_or_else(|| {
            Error::input(format!(
                "row {row} has class index {class}, but there are only {} classes",
                class_names.len()
            ))
        })?;
        rows.push(row);
    }
    if class_names.len() < 2 {
        return Err(Error::input(format!(
            "a stratified split needs at least two classes, got {}",
            class_names.len()
        )));
    }
    check_class_sizes(&rows_of_class, class_names)?;

    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (mut train, mut valid, mut test) = (Vec::new(), Vec::new(), Vec::new());
    for mut rows in rows_of_class {
        let (_, n_valid, n_test) = part_sizes(rows.len(), fractions);
        rows.shuffle(&mut rng);
        test.extend_from_slice(&rows[..n_test]);
        valid.extend_from_slice(&rows[n_test..n_test + n_valid]);
        train.extend_from_slice(&rows[n_test + n_valid..]);
    }
    train.sort_unstable();
    valid.sort_unstable();
    test.sort_unstable();
    let test_rows = test.len();
    Ok(Split {
        train,
        valid,
        test: Sealed::new(test, test_rows),
        seed,
    })
}

/// Splits rows by class into training and validation only, for a table whose test
/// rows come from elsewhere (a test file). Per class of `n` rows, validation gets
/// `round(n · valid_share)` rows, at least 1 and at most `n − 1`, and training the
/// rest, so every class needs 2 rows. Rows are shuffled as in [`stratified_split`]
/// (one ChaCha8 generator from `seed`, classes in index order); validation takes the
/// first rows. Returns (train, valid), each ascending.
pub(crate) fn split_train_valid(
    labels: &[u32],
    class_names: &[String],
    valid_share: f64,
    seed: u64,
) -> Result<(Vec<usize>, Vec<usize>)> {
    let mut rows_of_class: Vec<Vec<usize>> = vec![Vec::new(); class_names.len()];
    for (row, &class) in labels.iter().enumerate() {
        rows_of_class
            .get_mut(class as usize)
            .ok_or_else(|| Error::internal(format!("row {row} has class index {class}")))?
            .push(row);
    }
    let small: Vec<String> = rows_of_class
        .iter()
        .zip(class_names)
        .filter(|(rows, _)| rows.len() < 2)
        .map(|(rows, name)| format!("'{name}' has {}", count_of(rows.len(), "row")))
        .collect();
    if !small.is_empty() {
        return Err(Error::input(format!(
            "too few rows to split by class: {}; with a test file every class needs at least \
             2 rows (one each for training and validation); add rows or remove the class",
            small.join(", ")
        )));
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (mut train, mut valid) = (Vec::new(), Vec::new());
    for mut rows in rows_of_class {
        let n = rows.len();
        let n_valid = ((n as f64 * valid_share).round() as usize).clamp(1, n - 1);
        rows.shuffle(&mut rng);
        valid.extend_from_slice(&rows[..n_valid]);
        train.extend_from_slice(&rows[n_valid..]);
    }
    train.sort_unstable();
    valid.sort_unstable();
    Ok((train, valid))
}

/// Refuses classes with fewer than [`MIN_ROWS_PER_CLASS`] rows, naming all of them.
fn check_class_sizes(rows_of_class: &[Vec<usize>], class_names: &[String]) -> Result<()> {
    let small: Vec<String> = rows_of_class
        .iter()
        .zip(class_names)
        .filter(|(rows, _)| rows.len() < MIN_ROWS_PER_CLASS)
        .map(|(rows, name)| format!("'{name}' has {}", count_of(rows.len(), "row")))
        .collect();
    if small.is_empty() {
        return Ok(());
    }
    Err(Error::input(format!(
        "too few rows to split by class: {}; every class needs at least {MIN_ROWS_PER_CLASS} \
         rows (one each for training, validation and test); add rows or remove the class",
        small.join(", ")
    )))
}

/// Rows of one class of `n` rows (`n >= 3`) that go to (train, valid, test).
pub(crate) fn part_sizes(n: usize, fractions: &SplitFractions) -> (usize, usize, usize) {
    let share = |fraction: f64| ((n as f64 * fraction).round() as usize).max(1);
    let (mut valid, mut test) = (share(fractions.valid), share(fractions.test));
    while valid + test >= n && valid + test > 2 {
        if valid >= test && valid > 1 {
            valid -= 1;
        } else {
            test -= 1;
        }
    }
    (n.saturating_sub(valid + test), valid, test)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn part_sizes_give_every_part_a_row() {
        let default = SplitFractions::default();
        assert_eq!(part_sizes(3, &default), (1, 1, 1));
        assert_eq!(part_sizes(50, &default), (34, 8, 8));
        assert_eq!(part_sizes(100, &default), (70, 15, 15));
        let lopsided = SplitFractions {
            train: 0.02,
            valid: 0.49,
            test: 0.49,
        };
        assert_eq!(part_sizes(4, &lopsided), (1, 1, 2));
        assert_eq!(part_sizes(3, &lopsided), (1, 1, 1));
    }

    #[test]
    fn train_valid_split_keeps_a_row_of_each_class_in_both_parts() {
        let names: Vec<String> = ["a", "b"].iter().map(|s| s.to_string()).collect();
        let labels = [0, 0, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1];
        let (train, valid) = split_train_valid(&labels, &names, 0.2, 3).expect("splits");
        assert_eq!((train.len(), valid.len()), (9, 3));
        let mut all = [train.clone(), valid.clone()].concat();
        all.sort_unstable();
        assert_eq!(all, (0..12).collect::<Vec<_>>());
        assert!(valid.iter().any(|&r| r < 2) && train.iter().any(|&r| r < 2));
        let again = split_train_valid(&labels, &names, 0.2, 3).expect("splits");
        assert_eq!(again, (train, valid));
        let error = split_train_valid(&[0, 1, 1], &names, 0.2, 3).expect_err("one row of a");
        assert!(error.to_string().contains("'a' has 1 row"), "{error}");
    }

    #[test]
    fn every_row_lands_in_exactly_one_part() {
        let labels: Vec<u32> = (0..40).map(|i| (i % 3) as u32).collect();
        let split =
            stratified_split(&labels, 3, &SplitFractions::default(), 7).expect("valid split");
        let (test, _) = split.test.open("unit test");
        let mut all: Vec<usize> = [split.train, split.valid, test].concat();
        all.sort_unstable();
        assert_eq!(all, (0..40).collect::<Vec<_>>());
    }
}
