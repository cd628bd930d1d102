//! Where a run's data comes from and how it is split, as recorded in the journal.

use super::prepared::{InputPreprocessor, PreparedData};
use crate::data::image::{
    prepare_images, read_idx, read_image_folder, read_pixel_csv, ImageFolderOptions, ImageShape,
    ImageTable,
};
use crate::data::{prepare_with, CsvOptions, Partition, SplitFractions, TableRoles};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// What kind of data a source holds and how to read it.
#[derive(Debug, Clone, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", tag = "kind", deny_unknown_fields)]
pub enum DataFormat {
    /// A CSV table: one row per example, feature columns of any kind, a label column.
    #[default]
    Table,
    /// A CSV file whose feature columns are the pixels of `shape` (HWC order)
    /// plus a label column.
    PixelCsv {
        /// Height, width and channels of every image.
        shape: ImageShape,
    },
    /// A folder with one sub-folder of PNG/JPEG files per class.
    ImageFolder {
        /// Channels to convert to (1 or 3); `None` keeps the first image's.
        #[serde(default, skip_serializing_if = "Option::is_none")]
        channels: Option<u8>,
        /// (height, width) to resize to; `None` refuses differing sizes.
        #[serde(default, skip_serializing_if = "Option::is_none")]
        resize: Option<(u32, u32)>,
    },
    /// An IDX images file (`path`) and its IDX labels file.
    Idx {
        /// The labels file.
        labels: PathBuf,
    },
}

impl DataFormat {
    /// Whether this is a plain table (the default, left out of journals).
    pub fn is_table(&self) -> bool {
        *self == DataFormat::Table
    }
}

/// A data file (or image folder) and the options that turn it into sealed,
/// prepared splits.
///
/// The column roles and the fixed test set (`id_columns`, `ignore_columns`,
/// `test_data`, `split_column`) apply to tables; each is left out of the JSON
/// when unset, so journals and comparison plans of sources without them keep
/// their bytes.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DataSource {
    /// The CSV file, image folder or IDX images file, as the user named it.
    pub path: PathBuf,
    /// What the path holds; tables are the default and are not written out.
    #[serde(default, skip_serializing_if = "DataFormat::is_table")]
    pub format: DataFormat,
    /// Label column name (`None`: the last column).
    pub label: Option<String>,
    /// Field delimiter (`None`: comma).
    pub delimiter: Option<char>,
    /// Whether missing feature cells are imputed.
    pub impute: bool,
    /// Train / validation / test shares.
    pub fractions: SplitFractions,
    /// Seed of the stratified split.
    pub split_seed: u64,
    /// Identifier columns of a table (`--id`), in order: not features, carried
    /// beside every prediction and every test row.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub id_columns: Vec<String>,
    /// Columns of a table left out of the features (`--ignore`).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub ignore_columns: Vec<String>,
    /// A CSV file with the same columns whose rows are the test part
    /// (`--test-data`); the data is then split into training and validation
    /// only (see [`Partition::TestFile`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub test_data: Option<PathBuf>,
    /// A column of the table whose values `train`, `validation`, `test` assign
    /// the rows (`--split-column`, see [`Partition::Column`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub split_column: Option<String>,
    /// The SHA-256 of the test file recorded in a run's journal header (set by
    /// [`DataSource::from_header_block`]): [`DataSource::prepare`] then refuses
    /// a test file with other bytes. A check, not a setting: it is not part of
    /// the source's JSON (the header's data block holds it as
    /// `test_fingerprint`) and `==` ignores it.
    #[serde(skip)]
    pub recorded_test_fingerprint: Option<String>,
}

impl PartialEq for DataSource {
    fn eq(&self, other: &Self) -> bool {
        let DataSource {
            path,
            format,
            label,
            delimiter,
            impute,
            fractions,
            split_seed,
            id_columns,
            ignore_columns,
            test_data,
            split_column,
            recorded_test_fingerprint: _,
        } = self;
        *path == other.path
            && *format == other.format
            && *label == other.label
            && *delimiter == other.delimiter
            && *impute == other.impute
            && *fractions == other.fractions
            && *split_seed == other.split_seed
            && *id_columns == other.id_columns
            && *ignore_columns == other.ignore_columns
            && *test_data == other.test_data
            && *split_column == other.split_column
    }
}

impl DataSource {
    /// A source with the default options: last column is the label, comma,
    /// no imputation, 70/15/15 split with seed 0.
    pub fn new(path: impl Into<PathBuf>) -> Self {
        DataSource {
            path: path.into(),
            format: DataFormat::Table,
            label: None,
            delimiter: None,
            impute: false,
            fractions: SplitFractions::default(),
            split_seed: 0,
            id_columns: Vec::new(),
            ignore_columns: Vec::new(),
            test_data: None,
            split_column: None,
            recorded_test_fingerprint: None,
        }
    }

    /// The column roles and where the test rows come from; refuses
    /// `test_data` together with `split_column`, and any of them for images.
    pub fn table_roles(&self) -> Result<TableRoles> {
        let partition = match (&self.test_data, &self.split_column) {
            (Some(_), Some(_)) => {
                return Err(Error::input(
                    "--test-data and --split-column both fix the test rows; give one of them",
                ))
            }
            (Some(file), None) => Partition::TestFile(file.clone()),
            (None, Some(column)) => Partition::Column(column.clone()),
            (None, None) => Partition::Stratified,
        };
        let roles = TableRoles {
            ids: self.id_columns.clone(),
            ignore: self.ignore_columns.clone(),
            partition,
        };
        if self.is_images() && roles != TableRoles::default() {
            return Err(Error::input(format!(
                "{}: --id, --ignore, --test-data and --split-column apply to CSV tables, not \
                 to images (an image's file or record identifies it in the test predictions)",
                self.path.display()
            )));
        }
        Ok(roles)
    }

    /// The CSV reading options.
    pub fn csv_options(&self) -> Result<CsvOptions> {
        let delimiter = match self.delimiter {
            None => None,
            Some(c) if c.is_ascii() => Some(c as u8),
            Some(c) => {
                return Err(Error::input(format!(
                    "the delimiter must be a single ASCII character, got {c:?}"
                )))
            }
        };
        Ok(CsvOptions {
            label: self.label.clone(),
            delimiter,
            impute: self.impute,
        })
    }

    /// A source of images in a folder tree (one sub-folder per class).
    pub fn image_folder(path: impl Into<PathBuf>) -> Self {
        DataSource {
            format: DataFormat::ImageFolder {
                channels: None,
                resize: None,
            },
            ..DataSource::new(path)
        }
    }

    /// A source of images in IDX files.
    pub fn idx(images: impl Into<PathBuf>, labels: impl Into<PathBuf>) -> Self {
        DataSource {
            format: DataFormat::Idx {
                labels: labels.into(),
            },
            ..DataSource::new(images)
        }
    }

    /// A source of images stored as pixel columns of a CSV file.
    pub fn pixel_csv(path: impl Into<PathBuf>, shape: ImageShape) -> Self {
        DataSource {
            format: DataFormat::PixelCsv { shape },
            ..DataSource::new(path)
        }
    }

    /// SHA-256 (hex) identifying the data: of the file's bytes for CSV
    /// files, of every image file (see the loaders) for folders and IDX.
    pub fn fingerprint(&self) -> Result<String> {
        match &self.format {
            DataFormat::Table | DataFormat::PixelCsv { .. } => {
                let bytes = std::fs::read(&self.path).map_err(|e| Error::io(&self.path, e))?;
                Ok(crate::genome::sha256_hex(&bytes))
            }
            _ => Ok(self.read_images()?.fingerprint),
        }
    }

    /// Whether the source holds images.
    pub fn is_images(&self) -> bool {
        !self.format.is_table()
    }

    /// Reads the images of an image source (not split, not standardised).
    pub fn read_images(&self) -> Result<ImageTable> {
        read_images_at(&self.path, &self.format, &self.csv_options()?)
    }

    /// Loads, splits (test sealed) and preprocesses the data.
    ///
    /// With a recorded test fingerprint (a source rebuilt from a journal
    /// header), a test file whose bytes changed is refused.
    pub fn prepare(&self) -> Result<PreparedData> {
        let roles = self.table_roles()?;
        if self.is_images() {
            self.fractions.validate()?;
            let table = self.read_images()?;
            return Ok(prepare_images(&table, &self.fractions, self.split_seed)?.into());
        }
        let prepared = prepare_with(
            &self.path,
            &self.csv_options()?,
            &roles,
            &self.fractions,
            self.split_seed,
        )?;
        if let (Some(recorded), Some(now), Some(file)) = (
            &self.recorded_test_fingerprint,
            &prepared.info.test_fingerprint,
            &self.test_data,
        ) {
            if recorded != now {
                return Err(Error::input(format!(
                    "{}: the test file (--test-data) changed since the run started (SHA-256 {} \
                     now, {} in the journal); use the original test file",
                    file.display(),
                    &now[..now.len().min(12)],
                    &recorded[..recorded.len().min(12)]
                )));
            }
        }
        Ok(prepared.into())
    }

    /// The journal header's `data` block: this source plus what was found in it.
    pub fn header_block(&self, prepared: &PreparedData) -> serde_json::Value {
        let info = &prepared.info;
        let mut block = serde_json::json!({
            "source": self,
            "fingerprint": info.fingerprint,
            "rows": { "train": info.rows_train, "valid": info.rows_valid, "test": info.rows_test },
            "classes": info.class_names,
        });
        if let Some(test_fingerprint) = &info.test_fingerprint {
            block["test_fingerprint"] = serde_json::json!(test_fingerprint);
        }
        match &prepared.preprocessor {
            InputPreprocessor::Table(p) => block["features"] = serde_json::json!(p.feature_names()),
            InputPreprocessor::Image(p) => {
                block["image_shape"] = serde_json::json!(p.shape.to_string())
            }
        }
        block
    }

    /// Reads the source back from a journal header's `data` block.
    pub fn from_header_block(block: &serde_json::Value) -> Result<(DataSource, String)> {
        let source = block
            .get("source")
            .cloned()
            .ok_or_else(|| Error::input("the journal header's data block has no `source`"))?;
        let mut source: DataSource = serde_json::from_value(source).map_err(|e| {
            Error::input(format!(
                "the journal header's data source is unreadable: {e}"
            ))
        })?;
        if source.test_data.is_some() {
            let recorded = block
                .get("test_fingerprint")
                .and_then(|f| f.as_str())
                .ok_or_else(|| {
                    Error::input(
                        "the journal header's data block names a test file but has no \
                         `test_fingerprint`",
                    )
                })?;
            source.recorded_test_fingerprint = Some(recorded.to_string());
        }
        let fingerprint = block
            .get("fingerprint")
            .and_then(|f| f.as_str())
            .ok_or_else(|| Error::input("the journal header's data block has no `fingerprint`"))?
            .to_string();
        Ok((source, fingerprint))
    }
}

/// Reads images at `path` in `format` (a table format is an internal error).
pub(crate) fn read_images_at(
    path: &Path,
    format: &DataFormat,
    csv: &CsvOptions,
) -> Result<ImageTable> {
    match format {
        DataFormat::Table => Err(Error::internal("a table source holds no images")),
        DataFormat::PixelCsv { shape } => read_pixel_csv(path, *shape, csv),
        DataFormat::ImageFolder { channels, resize } => read_image_folder(
            path,
            &ImageFolderOptions {
                channels: *channels,
                resize: *resize,
            },
        ),
        DataFormat::Idx { labels } => read_idx(path, labels),
    }
}
