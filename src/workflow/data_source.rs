//! Where a run's data comes from and how it is split, as recorded in the journal.

use crate::data::{prepare, CsvOptions, Prepared, SplitFractions};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::path::PathBuf;

/// A CSV file and the options that turn it into sealed, prepared splits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DataSource {
    /// The CSV file, as the user named it.
    pub path: PathBuf,
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
}

impl DataSource {
    /// A source with the default options: last column is the label, comma,
    /// no imputation, 70/15/15 split with seed 0.
    pub fn new(path: impl Into<PathBuf>) -> Self {
        DataSource {
            path: path.into(),
            label: None,
            delimiter: None,
            impute: false,
            fractions: SplitFractions::default(),
            split_seed: 0,
        }
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

    /// Loads, splits (test sealed) and preprocesses the data.
    pub fn prepare(&self) -> Result<Prepared> {
        self.fractions.validate()?;
        prepare(
            &self.path,
            &self.csv_options()?,
            &self.fractions,
            self.split_seed,
        )
    }

    /// The journal header's `data` block: this source plus what was found in it.
    pub fn header_block(&self, prepared: &Prepared) -> serde_json::Value {
        let info = &prepared.info;
        serde_json::json!({
            "source": self,
            "fingerprint": info.fingerprint,
            "rows": { "train": info.rows_train, "valid": info.rows_valid, "test": info.rows_test },
            "classes": info.class_names,
            "features": prepared.preprocessor.feature_names(),
        })
    }

    /// Reads the source back from a journal header's `data` block.
    pub fn from_header_block(block: &serde_json::Value) -> Result<(DataSource, String)> {
        let source = block
            .get("source")
            .cloned()
            .ok_or_else(|| Error::input("the journal header's data block has no `source`"))?;
        let source: DataSource = serde_json::from_value(source).map_err(|e| {
            Error::input(format!(
                "the journal header's data source is unreadable: {e}"
            ))
        })?;
        let fingerprint = block
            .get("fingerprint")
            .and_then(|f| f.as_str())
            .ok_or_else(|| Error::input("the journal header's data block has no `fingerprint`"))?
            .to_string();
        Ok((source, fingerprint))
    }
}
