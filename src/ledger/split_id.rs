//! The identity of a test split: which examples end up in it, whatever run,
//! folder or model looks at them.

use crate::data::SplitFractions;
use crate::workflow::{InputPreprocessor, PreparedData};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::fmt;

/// The facts that decide which examples form a test split.
///
/// Two runs whose facts give the same [`TestSplitId`] look at the same test
/// examples, so their openings are counted together. What is in it, and why:
///
/// - `data_fingerprint`: the SHA-256 the data loaders compute (the bytes of
///   a CSV file; every image file with its relative path for a folder; the
///   images and labels files for IDX). Other data means other examples.
/// - `label`: the label column, because the split is stratified by class,
///   so another label column gives other test rows (and asks another question).
/// - `fractions` (only the **test** share counts for the identity) and
///   `split_seed`: per class, the first `round(n · test)` rows of a shuffle
///   seeded by the split seed are the test rows (`data::split`); the train and
///   validation shares only move rows between training and validation.
/// - `test_data_fingerprint`: a fixed test file; when present the test split
///   *is* that file, so only it and the label make the identity.
/// - `split_column`: a column that marks the test rows; when present, seed
///   and fractions no longer choose the rows.
///
/// Left out on purpose: the run folder and the data path (copying a run or
/// moving the data does not make the test rows new), the search and the
/// trainer settings, and how rows are decoded (image channels, resize, the
/// pixel-CSV shape, delimiter, imputation): those change the numbers a
/// model sees, not which examples are in the test split, and a second look
/// at the same examples through other settings is still a second look. When
/// in doubt a fact is left out, because merging two splits only errs towards
/// a refusal that `--reopen` overrides, while splitting one would hide openings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SplitFacts {
    /// SHA-256 (hex) of the data, as the loaders compute it (the journal
    /// header's `data.fingerprint`).
    pub data_fingerprint: String,
    /// The label column's name; `None` for images, whose labels come from
    /// class folders or an IDX labels file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    /// Train / validation / test shares (only `test` is part of the identity).
    pub fractions: SplitFractions,
    /// Seed of the stratified split.
    pub split_seed: u64,
    /// SHA-256 (hex) of a fixed test file, when the test split is a file of its own.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub test_data_fingerprint: Option<String>,
    /// The column that marks test rows, when the split is given by the data.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub split_column: Option<String>,
}

impl SplitFacts {
    /// The facts of a split made from a prepared run's data: its fingerprint,
    /// the resolved label column (so `--label` naming the last column and the
    /// default agree), fractions and seed. The optional fields are `None`.
    pub fn of_prepared(prepared: &PreparedData) -> SplitFacts {
        let info = &prepared.info;
        let label = match &prepared.preprocessor {
            InputPreprocessor::Table(p) => Some(p.label_name().to_string()),
            InputPreprocessor::Image(_) => None,
        };
        SplitFacts {
            data_fingerprint: info.fingerprint.clone(),
            label,
            fractions: info.fractions,
            split_seed: info.split_seed,
            test_data_fingerprint: None,
            split_column: None,
        }
    }

    /// The identity of the test split these facts describe.
    pub fn id(&self) -> TestSplitId {
        TestSplitId(crate::genome::sha256_hex(self.canonical_json().as_bytes()))
    }

    /// The canonical JSON the identity hashes: the facts that choose the
    /// test rows in the mode they describe, keys in a fixed order, absent
    /// options left out. It must never change for facts that exist today,
    /// or every recorded opening would lose its split; a new fact must be
    /// an `Option` that is left out when `None`.
    pub fn canonical_json(&self) -> String {
        let identity = if let Some(test_data) = &self.test_data_fingerprint {
            Identity {
                label: self.label.as_deref(),
                test_data: Some(test_data),
                ..Identity::default()
            }
        } else if let Some(column) = &self.split_column {
            Identity {
                data: Some(&self.data_fingerprint),
                label: self.label.as_deref(),
                split_column: Some(column),
                ..Identity::default()
            }
        } else {
            Identity {
                data: Some(&self.data_fingerprint),
                label: self.label.as_deref(),
                split_seed: Some(self.split_seed),
                test_fraction: Some(self.fractions.test),
                ..Identity::default()
            }
        };
        serde_json::to_string(&identity).expect("the identity always serialises")
    }

    /// One line for messages, e.g. `data 3f2a9c81d0e4…, label 'species', test share 0.15, split seed 0`.
    pub fn describe(&self) -> String {
        let short = |hash: &str| format!("{}…", hash.get(..12).unwrap_or(hash));
        let label = match &self.label {
            Some(label) => format!(", label '{label}'"),
            None => String::new(),
        };
        if let Some(test_data) = &self.test_data_fingerprint {
            return format!("test file {}{label}", short(test_data));
        }
        let data = short(&self.data_fingerprint);
        match &self.split_column {
            Some(column) => format!("data {data}{label}, split column '{column}'"),
            None => format!(
                "data {data}{label}, test share {}, split seed {}",
                self.fractions.test, self.split_seed
            ),
        }
    }
}

/// The hashed facts, in a fixed key order (alphabetical); struct field
/// order, not map order, fixes the bytes.
#[derive(Default, Serialize)]
struct Identity<'a> {
    #[serde(skip_serializing_if = "Option::is_none")]
    data: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    label: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    split_column: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    split_seed: Option<u64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    test_data: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    test_fraction: Option<f64>,
}

/// The identity of a test split: SHA-256 (64 lowercase hex digits) of
/// [`SplitFacts::canonical_json`].
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(try_from = "String", into = "String")]
pub struct TestSplitId(String);

impl TestSplitId {
    /// Reads an identity from its 64 hex digits.
    pub fn parse(text: &str) -> Result<TestSplitId> {
        let hex = text.len() == 64
            && text
                .bytes()
                .all(|b| b.is_ascii_digit() || (b'a'..=b'f').contains(&b));
        if !hex {
            return Err(Error::input(format!(
                "{text:?} is not a test split id (64 lowercase hex digits)"
            )));
        }
        Ok(TestSplitId(text.to_string()))
    }

    /// The 64 hex digits.
    pub fn as_str(&self) -> &str {
        &self.0
    }

    /// The first 12 hex digits, for messages.
    pub fn short(&self) -> &str {
        &self.0[..12]
    }
}

impl fmt::Display for TestSplitId {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl TryFrom<String> for TestSplitId {
    type Error = String;

    fn try_from(text: String) -> std::result::Result<Self, String> {
        TestSplitId::parse(&text).map_err(|e| e.to_string())
    }
}

impl From<TestSplitId> for String {
    fn from(id: TestSplitId) -> String {
        id.0
    }
}
