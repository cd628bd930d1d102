//! The folds of k-fold scoring on a table: the train+validation rows split
//! into K stratified folds, each fold's preprocessing fitted on the other
//! folds only, so no held-out row shapes the encoding it is scored with.

use crate::data::{Dataset, Preprocessor, Table, TableRoles};
use crate::metrics::stratified_folds;
use crate::Result;

/// What k-fold scoring needs of a prepared table: the table, the rows of
/// train+validation (the test rows are not among them), their classes, and
/// how preprocessing is fitted.
#[derive(Debug, Clone)]
pub struct FoldSource {
    table: Table,
    rows: Vec<usize>,
    labels: Vec<u32>,
    n_classes: usize,
    impute: bool,
    roles: TableRoles,
}

/// One fold: the network trains on `train` (the other folds) and is scored
/// on `held_out` (this fold).
#[derive(Debug, Clone)]
pub struct Fold {
    /// The other folds' rows, encoded with the preprocessing fitted on them.
    pub train: Dataset,
    /// This fold's rows, encoded with the same preprocessing.
    pub held_out: Dataset,
}

impl FoldSource {
    /// The fold source of `table`'s rows `rows` (train+validation, ascending)
    /// whose class indices are `labels` (one per row of the table).
    pub(crate) fn new(
        table: Table,
        mut rows: Vec<usize>,
        labels: &[u32],
        n_classes: usize,
        impute: bool,
    ) -> FoldSource {
        rows.sort_unstable();
        let labels = rows.iter().map(|&row| labels[row]).collect();
        FoldSource {
            table,
            rows,
            labels,
            n_classes,
            impute,
            roles: TableRoles::default(),
        }
    }

    /// The same source whose folds keep `roles`' id, ignored and split
    /// columns out of the features, as the run's own preprocessing does.
    pub(crate) fn with_roles(mut self, roles: TableRoles) -> FoldSource {
        self.roles = roles;
        self
    }

    /// A fold source over every row of `table` (no test part carved out),
    /// for cross-validating a model on a whole table, e.g. against a
    /// reference library's folds with [`FoldSource::folds_from`].
    pub fn whole_table(table: Table, impute: bool) -> Result<FoldSource> {
        let (class_names, labels) = crate::data::labels::class_indices(&table)?;
        let rows = (0..labels.len()).collect();
        Ok(FoldSource::new(
            table,
            rows,
            &labels,
            class_names.len(),
            impute,
        ))
    }

    /// Rows of train+validation.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Rows of the smallest class in train+validation.
    pub fn smallest_class(&self) -> usize {
        let mut counts = vec![0usize; self.n_classes];
        for &class in &self.labels {
            counts[class as usize] += 1;
        }
        counts.into_iter().min().unwrap_or(0)
    }

    /// The `k` stratified folds drawn with `seed` (scikit-learn's
    /// per-class allocation, [`stratified_folds`]); each fold's
    /// preprocessing is fitted on the other folds' rows.
    pub fn folds(&self, k: usize, seed: u64) -> Result<Vec<Fold>> {
        let assignment = stratified_folds(&self.labels, k, seed)?;
        self.folds_from(&assignment, k)
    }

    /// The `k` folds of a given assignment: `assignment[i]` is the fold
    /// (0-based, below `k`) of the source's i-th row (rows in ascending
    /// table order).
    pub fn folds_from(&self, assignment: &[usize], k: usize) -> Result<Vec<Fold>> {
        if assignment.len() != self.rows.len() || assignment.iter().any(|&f| f >= k) {
            return Err(crate::Error::input(format!(
                "a fold assignment needs one fold below {k} for each of the {} rows",
                self.rows.len()
            )));
        }
        (0..k)
            .map(|fold| {
                let pick = |inside: bool| -> Vec<usize> {
                    self.rows
                        .iter()
                        .zip(assignment)
                        .filter(|(_, &f)| (f == fold) == inside)
                        .map(|(&row, _)| row)
                        .collect()
                };
                let (train_rows, held_rows) = (pick(false), pick(true));
                let (preprocessor, _) = Preprocessor::fit_with_roles(
                    &self.table,
                    &train_rows,
                    self.impute,
                    &self.roles,
                )?;
                Ok(Fold {
                    train: preprocessor.transform(&self.table, &train_rows)?,
                    held_out: preprocessor.transform(&self.table, &held_rows)?,
                })
            })
            .collect()
    }
}
