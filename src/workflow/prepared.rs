//! Prepared data of any kind (a table or images) behind one type, so the
//! search, finalize and the model folder handle both alike.

use crate::data::image::{ImagePreprocessor, ImageShape, PreparedImages};
use crate::data::{DataInfo, Dataset, FoldSource, Prepared, Preprocessor, RowTags, Sealed};
use crate::model::InputLayout;

/// The fitted preprocessing of a dataset: column encoding for tables,
/// per-channel standardisation for images. Saved with a model so raw rows
/// or image files can be predicted.
#[derive(Debug, Clone, PartialEq)]
pub enum InputPreprocessor {
    /// A CSV table's column plans.
    Table(Preprocessor),
    /// Image channel statistics and shape.
    Image(ImagePreprocessor),
}

impl InputPreprocessor {
    /// Encoded values per row.
    pub fn n_features(&self) -> usize {
        match self {
            InputPreprocessor::Table(p) => p.n_features(),
            InputPreprocessor::Image(p) => p.n_features(),
        }
    }

    /// Class names in output order.
    pub fn class_names(&self) -> &[String] {
        match self {
            InputPreprocessor::Table(p) => p.class_names(),
            InputPreprocessor::Image(p) => &p.class_names,
        }
    }

    /// The image shape, for image data.
    pub fn image_shape(&self) -> Option<ImageShape> {
        match self {
            InputPreprocessor::Table(_) => None,
            InputPreprocessor::Image(p) => Some(p.shape),
        }
    }

    /// What a network trained on this data reads.
    pub fn layout(&self) -> InputLayout {
        InputLayout {
            n_inputs: self.n_features(),
            image: self.image_shape(),
        }
    }
}

/// A dataset ready for search, table or images: encoded train and
/// validation parts, the sealed test part and the fitted preprocessing.
#[derive(Debug)]
pub struct PreparedData {
    /// Training part, encoded.
    pub train: Dataset,
    /// Validation part, encoded.
    pub valid: Dataset,
    /// Test part, encoded, sealed until the final evaluation.
    pub test: Sealed<Dataset>,
    /// Where each test row came from: its line in its file and its identifier
    /// values (`--id` columns; an image's file or IDX record), sealed with the
    /// test part. Open both at once with
    /// `test.zip(test_rows)?.open(purpose)`, which gives one opening record,
    /// then write them with [`super::write_test_predictions`].
    pub test_rows: Sealed<RowTags>,
    /// Preprocessing fitted on the training part.
    pub preprocessor: InputPreprocessor,
    /// Provenance and shapes.
    pub info: DataInfo,
    /// The train+validation rows of a table for k-fold scoring (`None` for
    /// images, which are scored on one validation split).
    pub fold_source: Option<FoldSource>,
}

impl PreparedData {
    /// What a network trained on this data reads.
    pub fn layout(&self) -> InputLayout {
        self.preprocessor.layout()
    }
}

impl From<Prepared> for PreparedData {
    fn from(p: Prepared) -> Self {
        PreparedData {
            train: p.train,
            valid: p.valid,
            test: p.test,
            test_rows: p.test_rows,
            preprocessor: InputPreprocessor::Table(p.preprocessor),
            info: p.info,
            fold_source: Some(p.fold_source),
        }
    }
}

impl From<PreparedImages> for PreparedData {
    fn from(p: PreparedImages) -> Self {
        PreparedData {
            train: p.train,
            valid: p.valid,
            test: p.test,
            test_rows: p.test_rows,
            preprocessor: InputPreprocessor::Image(p.preprocessor),
            info: p.info,
            fold_source: None,
        }
    }
}
