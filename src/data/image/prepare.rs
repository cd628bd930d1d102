//! From an image table to the three prepared parts of an image dataset.

use crate::data::cells::{count_of, is_missing};
use crate::data::image::{ImagePreprocessor, ImageShape, ImageTable};
use crate::data::labels::class_index;
use crate::data::split::split_named;
use crate::data::{DataInfo, Dataset, RowTags, Sealed, SplitFractions};
use crate::{Error, Result};

/// An image dataset ready for search: standardised train and validation
/// parts, the sealed test part, the fitted preprocessor and the run record.
#[derive(Debug)]
pub struct PreparedImages {
    /// Training images, standardised, CHW per row.
    pub train: Dataset,
    /// Validation images, standardised.
    pub valid: Dataset,
    /// Test images, standardised, sealed until the final evaluation.
    pub test: Sealed<Dataset>,
    /// Where each test image came from (its file relative to the folder, its
    /// line of a pixel CSV, or its IDX record), sealed with the test part.
    pub test_rows: Sealed<RowTags>,
    /// Shape of every image (`n_features = height · width · channels`).
    pub shape: ImageShape,
    /// Channel statistics fitted on the training images.
    pub preprocessor: ImagePreprocessor,
    /// Provenance and shapes (path and fingerprint of the source).
    pub info: DataInfo,
}

/// Splits `table` by class with `seed` exactly like tables
/// ([`crate::data::stratified_split`]), fits per-channel standardisation on
/// the training images only and encodes the three parts.
///
/// Class names are the distinct label texts sorted by their bytes; a
/// missing label, a single class or a class with fewer than
/// [`crate::data::MIN_ROWS_PER_CLASS`] images is bad input. Warnings (ignored
/// files, constant channels) go to [`DataInfo::warnings`].
pub fn prepare_images(
    table: &ImageTable,
    fractions: &SplitFractions,
    seed: u64,
) -> Result<PreparedImages> {
    fractions.validate()?;
    table.check_sizes()?;
    let file = table.path.display().to_string();
    let (class_names, labels) = image_classes(table)?;
    let split = split_named(&labels, &class_names, fractions, seed).map_err(|e| match e {
        Error::Input(message) => Error::input(format!("{file}: {message}")),
        other => other,
    })?;
    let (preprocessor, fit_warnings) =
        ImagePreprocessor::fit(table, &split.train, class_names.clone())?;
    let part = |rows: &[usize]| -> Result<Dataset> {
        let x = preprocessor.standardise(table, rows)?;
        let y = rows.iter().map(|&r| labels[r]).collect();
        Dataset::new(x, y, preprocessor.n_features(), class_names.len())
    };
    let train = part(&split.train)?;
    let valid = part(&split.valid)?;
    let (test, test_rows) = split
        .test
        .try_map(|rows| -> Result<(Dataset, RowTags)> {
            Ok((part(&rows)?, RowTags::from_images(table, &rows)))
        })?
        .unzip();
    let mut warnings = table.warnings.clone();
    warnings.extend(fit_warnings);
    let info = DataInfo {
        path: table.path.clone(),
        fingerprint: table.fingerprint.clone(),
        split_seed: seed,
        fractions: *fractions,
        rows_train: train.len(),
        rows_valid: valid.len(),
        rows_test: test.rows(),
        class_names,
        n_features: preprocessor.n_features(),
        warnings,
        test_fingerprint: None,
    };
    Ok(PreparedImages {
        train,
        valid,
        test,
        test_rows,
        shape: table.shape,
        preprocessor,
        info,
    })
}

/// Sorted class names and each image's class index; refuses missing labels and a single class.
fn image_classes(table: &ImageTable) -> Result<(Vec<String>, Vec<u32>)> {
    let file = table.path.display();
    if table.label_texts.is_empty() {
        return Err(Error::input(format!(
            "{file}: the images have no labels; training needs a class for every image"
        )));
    }
    let missing: Vec<&str> = table
        .label_texts
        .iter()
        .zip(&table.sources)
        .filter(|(text, _)| is_missing(text))
        .map(|(_, source)| source.as_str())
        .collect();
    if let Some(first) = missing.first() {
        return Err(Error::input(format!(
            "{file}: {} without a label (first: {first}); fill in or remove them",
            count_of(missing.len(), "image")
        )));
    }
    let mut names = table.label_texts.clone();
    names.sort();
    names.dedup();
    if names.len() < 2 {
        return Err(Error::input(format!(
            "{file}: all {} have the class '{}'; a classifier needs at least two classes",
            count_of(table.len(), "image"),
            names.first().map_or("", String::as_str)
        )));
    }
    let indices = table
        .label_texts
        .iter()
        .map(|text| class_index(&names, text))
        .collect::<Option<Vec<u32>>>()
        .ok_or_else(|| Error::internal("a label vanished from its own class list"))?;
    Ok((names, indices))
}
