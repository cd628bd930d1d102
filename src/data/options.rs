//! Options for reading a CSV file and for splitting its rows.

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
}
