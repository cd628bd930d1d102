//! Options for reading a CSV file, the roles of its columns, and splitting its rows.

use std::path::PathBuf;

use serde::{Deserialize, Serialize};

use crate::{Error, Result};

/// How to read a tabular CSV file.
///
/// The default reads a comma-separated file whose last column is the label and
/// refuses missing feature cells.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct CsvOptions {
    /// Name of the label column; `None` means the last column.
    pub label: Option<String>,
    /// Field delimiter byte; `None` means `b','`.
    pub delimiter: Option<u8>,
    /// Fill missing feature cells (median / most frequent value of the training
    /// split, plus a missing-indicator column) instead of refusing them.
    ///
    /// Used by [`crate::data::prepare`] when fitting the preprocessor;
    /// [`crate::data::read_table`] itself always keeps missing cells as they are.
    pub impute: bool,
}

/// Shares of the rows that go to training, validation and the sealed test part.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SplitFractions {
    /// Share of the rows used to fit weights and preprocessing.
    pub train: f64,
    /// Share used to compare candidate architectures.
    pub valid: f64,
    /// Share sealed away for the one final evaluation.
    pub test: f64,
}

impl Default for SplitFractions {
    fn default() -> Self {
        SplitFractions {
            train: 0.70,
            valid: 0.15,
            test: 0.15,
        }
    }
}

impl SplitFractions {
    /// Checks that each share lies strictly between 0 and 1 and that they sum to 1 (within 1e-9).
    pub fn validate(&self) -> Result<()> {
        for (name, value) in [
            ("train", self.train),
            ("validation", self.valid),
            ("test", self.test),
        ] {
            if !(value > 0.0 && value < 1.0) {
                return Err(Error::input(format!(
                    "the {name} fraction is {value} (--split), but each split fraction must \
                     lie strictly between 0 and 1 (e.g. train 0.70, validation 0.15, test 0.15)"
                )));
            }
        }
        self.check_sum()
    }
}

/// Where the rows of the three parts of a table come from.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub enum Partition {
    /// The seeded, stratified split of the data by [`SplitFractions`] (the default).
    #[default]
    Stratified,
    /// Every row of this CSV file (the same columns as the data, in any order) is a test
    /// row; the data's own rows are split into training and validation only, in the
    /// ratio of the train and validation fractions (the test fraction is ignored).
    TestFile(PathBuf),
    /// This column assigns every row: its value must be `train`, `validation` or `test`
    /// (case-sensitive, after trimming); each part needs at least one row. The column is
    /// not a feature, and the split fractions and seed are not used.
    Column(String),
}

/// What the columns of a table are for beyond the label and the features, and where
/// its test rows come from. The default (no ids, nothing ignored, a stratified split)
/// reads a table as [`crate::data::prepare`] always has.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct TableRoles {
    /// Identifier columns, in the order given: kept out of the features and carried
    /// beside every prediction (and every row of the sealed test part).
    pub ids: Vec<String>,
    /// Columns left out of the features and carried nowhere.
    pub ignore: Vec<String>,
    /// Where the test rows come from.
    pub partition: Partition,
}

impl SplitFractions {
    /// Checks the fractions for a table whose test rows are fixed ([`Partition::TestFile`]):
    /// train and validation strictly between 0 and 1, the test fraction (ignored) at
    /// least 0 and below 1, and the three summing to 1 (within 1e-9). So both
    /// `0.8,0.2,0` and the default `0.70,0.15,0.15` are accepted.
    pub fn validate_without_test(&self) -> Result<()> {
        for (name, value) in [("train", self.train), ("validation", self.valid)] {
            if !(value > 0.0 && value < 1.0) {
                return Err(Error::input(format!(
                    "the {name} fraction is {value} (--split), but the train and validation \
                     fractions must lie strictly between 0 and 1 (e.g. --split 0.8,0.2 with \
                     --test-data)"
                )));
            }
        }
        if !(self.test >= 0.0 && self.test < 1.0) {
            return Err(Error::input(format!(
                "the test fraction is {} (--split); with a fixed test set it is ignored, but it \
                 must lie between 0 and 1 (or leave it out: --split 0.8,0.2)",
                self.test
            )));
        }
        self.check_sum()
    }

    /// Refuses shares that do not add up to 1 (within 1e-9).
    fn check_sum(&self) -> Result<()> {
        let sum = self.train + self.valid + self.test;
        if (sum - 1.0).abs() > 1e-9 {
            return Err(Error::input(format!(
                "the split fractions train {} + validation {} + test {} sum to {sum}, not 1 \
                 (--split); adjust them so they add up to 1",
                self.train, self.valid, self.test
            )));
        }
        Ok(())
    }

    /// The validation share of the data's rows when the test rows are fixed:
    /// `valid / (train + valid)`.
    pub fn validation_share_without_test(&self) -> f64 {
        self.valid / (self.train + self.valid)
    }
}
