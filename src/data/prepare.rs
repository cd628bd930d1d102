//! One call from a CSV path to the three prepared parts of a dataset.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::data::labels::{class_indices, label_warnings};
use crate::data::split::split_named;
use crate::data::{read_table, CsvOptions, Dataset, Preprocessor, Sealed, SplitFractions};
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
    /// Preprocessing fitted on the training part.
    pub preprocessor: Preprocessor,
    /// Provenance and shapes.
    pub info: DataInfo,
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
    fractions.validate()?;
    let table = read_table(path, opts)?;
    let (class_names, labels) = class_indices(&table)?;
    let split =
        split_named(&labels, &class_names, fractions, seed).map_err(|error| match error {
            Error::Input(message) => Error::input(format!("{}: {message}", path.display())),
            other => other,
        })?;
    let (preprocessor, fit_warnings) = Preprocessor::fit(&table, &split.train, opts.impute)?;
    let mut warnings = label_warnings(&table, &class_names);
    warnings.extend(fit_warnings);
    let (train, _) = preprocessor.transform_with_warnings(&table, &split.train)?;
    let (valid, valid_warnings) = preprocessor.transform_with_warnings(&table, &split.valid)?;
    warnings.extend(
        valid_warnings
            .into_iter()
            .map(|w| format!("validation split: {w}")),
    );
    let test = split
        .test
        .try_map(|rows| preprocessor.transform(&table, &rows))?;
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
    };
    Ok(Prepared {
        train,
        valid,
        test,
        preprocessor,
        info,
    })
}
