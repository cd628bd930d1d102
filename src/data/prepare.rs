//! One call from a CSV path to the three prepared parts of a dataset.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::data::labels::{class_indices, label_warnings};
use crate::data::partition::{check_same_columns, check_test_labels, split_by_column};
use crate::data::roles::resolve_roles;
use crate::data::split::{split_named, split_train_valid};
use crate::data::{
    read_table, CsvOptions, Dataset, FoldSource, Preprocessor, Sealed, SplitFractions,
};
use crate::data::{Partition, RowTags, Table, TableRoles};
use crate::{Error, Result};

/// What was prepared, for the run record: source file, split and shapes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DataInfo {
    /// The CSV file.
    pub path: PathBuf,
    /// SHA-256 (hex) of the file's bytes.
    pub fingerprint: String,
    /// Seed of the stratified split.
    pub split_seed: u64,
    /// Split fractions used.
    pub fractions: SplitFractions,
    /// Rows in the training part.
    pub rows_train: usize,
    /// Rows in the validation part.
    pub rows_valid: usize,
    /// Rows in the sealed test part.
    pub rows_test: usize,
    /// Class names, sorted; class index `i` means `class_names[i]`.
    pub class_names: Vec<String>,
    /// Number of encoded feature columns.
    pub n_features: usize,
    /// Warnings for the user (dropped columns, imputation, unseen categories in validation).
    pub warnings: Vec<String>,
    /// SHA-256 (hex) of the test file's bytes, when the test rows come from one
    /// ([`Partition::TestFile`]); left out of the JSON otherwise.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub test_fingerprint: Option<String>,
}

/// A dataset ready for search: encoded train and validation parts, the sealed
/// test part, and the fitted preprocessor.
#[derive(Debug)]
pub struct Prepared {
    /// Training part, encoded.
    pub train: Dataset,
    /// Validation part, encoded.
    pub valid: Dataset,
    /// Test part, encoded, sealed until the final evaluation.
    pub test: Sealed<Dataset>,
    /// Where each test row came from (its line and identifier values), sealed
    /// with the test part; [`Sealed::zip`] joins the two so that one opening
    /// reveals both.
    pub test_rows: Sealed<RowTags>,
    /// Preprocessing fitted on the training part.
    pub preprocessor: Preprocessor,
    /// Provenance and shapes.
    pub info: DataInfo,
    /// The train+validation rows for k-fold scoring (test rows excluded).
    pub fold_source: FoldSource,
}

/// Reads `path`, splits it by class with `seed`, fits preprocessing on the
/// training part and encodes all three parts.
///
/// Warnings are returned in [`DataInfo::warnings`], never printed. The test
/// part is encoded behind its seal, and its warnings (e.g. unseen categories)
/// are discarded so nothing about it shows before the final evaluation.
pub fn prepare(
    path: &Path,
    opts: &CsvOptions,
    fractions: &SplitFractions,
    seed: u64,
) -> Result<Prepared> {
    prepare_with(path, opts, &TableRoles::default(), fractions, seed)
}

/// [`prepare`] with column roles and a fixed test set (see [`TableRoles`] and
/// [`Partition`]).
///
/// Identifier, ignored and split columns are kept out of the features. The
/// test rows are drawn by the stratified split (checked with
/// [`SplitFractions::validate`]), assigned by a split column (the fractions
/// and the seed are not used), or read from a test file with the same columns
/// and only the data's classes (the data's rows are then split into training
/// and validation in the ratio of the train and validation fractions, checked
/// with [`SplitFractions::validate_without_test`]). The test part's
/// [`RowTags`] (lines and identifier values) are sealed with it.
pub fn prepare_with(
    path: &Path,
    opts: &CsvOptions,
    roles: &TableRoles,
    fractions: &SplitFractions,
    seed: u64,
) -> Result<Prepared> {
    match &roles.partition {
        Partition::Stratified => fractions.validate()?,
        Partition::TestFile(_) => fractions.validate_without_test()?,
        Partition::Column(_) => {}
    }
    let table = read_table(path, opts)?;
    let resolved = resolve_roles(&table, roles)?;
    let (class_names, labels) = class_indices(&table)?;
    let in_file = |error| match error {
        Error::Input(message) => Error::input(format!("{}: {message}", path.display())),
        other => other,
    };
    let mut warnings = label_warnings(&table, &class_names);
    let mut test_table = None;
    let (train_rows, valid_rows, test_rows) = match &roles.partition {
        Partition::Stratified => {
            let split = split_named(&labels, &class_names, fractions, seed).map_err(in_file)?;
            (split.train, split.valid, split.test)
        }
        Partition::Column(_) => {
            let column = resolved
                .split_column
                .ok_or_else(|| Error::internal("the split column was not resolved"))?;
            let (parts, part_warnings) = split_by_column(&table, column, &labels, &class_names)?;
            warnings.extend(part_warnings);
            let n_test = parts.test.len();
            (parts.train, parts.valid, Sealed::new(parts.test, n_test))
        }
        Partition::TestFile(test_path) => {
            let share = fractions.validation_share_without_test();
            let (train, valid) =
                split_train_valid(&labels, &class_names, share, seed).map_err(in_file)?;
            let test = read_test_table(test_path, opts, &table, &class_names)?;
            let n_test = test.n_rows();
            test_table = Some(test);
            (train, valid, Sealed::new((0..n_test).collect(), n_test))
        }
    };
    let (preprocessor, fit_warnings) =
        Preprocessor::fit_with_roles(&table, &train_rows, opts.impute, roles)?;
    warnings.extend(fit_warnings);
    let (train, _) = preprocessor.transform_with_warnings(&table, &train_rows)?;
    let (valid, valid_warnings) = preprocessor.transform_with_warnings(&table, &valid_rows)?;
    warnings.extend(
        valid_warnings
            .into_iter()
            .map(|w| format!("validation split: {w}")),
    );
    let test_source = test_table.as_ref().unwrap_or(&table);
    let test_ids: Vec<usize> = preprocessor
        .id_columns()
        .iter()
        .filter_map(|name| test_source.column_index(name))
        .collect();
    let (test, test_rows) = test_rows
        .try_map(|rows| -> Result<(Dataset, RowTags)> {
            let data = preprocessor.transform(test_source, &rows)?;
            Ok((data, RowTags::from_table(test_source, &test_ids, &rows)))
        })?
        .unzip();
    let info = DataInfo {
        path: path.to_path_buf(),
        fingerprint: table.fingerprint().to_string(),
        split_seed: seed,
        fractions: *fractions,
        rows_train: train.len(),
        rows_valid: valid.len(),
        rows_test: test.rows(),
        class_names,
        n_features: preprocessor.n_features(),
        warnings,
        test_fingerprint: test_table.as_ref().map(|t| t.fingerprint().to_string()),
    };
    let fold_rows = train_rows.iter().chain(&valid_rows).copied().collect();
    let fold_source = FoldSource::new(
        table,
        fold_rows,
        &labels,
        info.class_names.len(),
        opts.impute,
    )
    .with_roles(roles.clone());
    Ok(Prepared {
        train,
        valid,
        test,
        test_rows,
        preprocessor,
        info,
        fold_source,
    })
}

/// Reads the test file with the data's options, checks that it has the data's
/// columns and only the data's classes, and makes the data's label its label.
fn read_test_table(
    path: &Path,
    opts: &CsvOptions,
    data: &Table,
    class_names: &[String],
) -> Result<Table> {
    let unlabelled = CsvOptions {
        label: None,
        ..opts.clone()
    };
    let mut test = read_table(path, &unlabelled)?;
    check_same_columns(data, &test)?;
    test.relabel(data.label_name())?;
    check_test_labels(&test, class_names)?;
    Ok(test)
}
