//! One line of the ledger: one opening of one test split.

use super::split_id::{SplitFacts, TestSplitId};
use serde::{Deserialize, Serialize};
use std::path::PathBuf;

/// Format of the ledger's lines; a line with a larger `format` was written
/// by a newer gemmule and is refused with a request to upgrade.
pub const LEDGER_FORMAT: u32 = 1;

/// One recorded opening of a test split (one JSON object per ledger line).
///
/// Fields a newer gemmule adds under the same `format` are ignored on read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LedgerEntry {
    /// Line format ([`LEDGER_FORMAT`]).
    pub format: u32,
    /// The test split that was opened.
    pub split: TestSplitId,
    /// 1 for the first opening of this split in the whole ledger, 2 for the second, …
    pub opening: u64,
    /// When it was recorded: RFC 3339 in UTC with whole seconds (`2026-05-01T09:30:00Z`).
    pub time: String,
    /// The run (or comparison) folder that opened it, as an absolute path.
    pub run: String,
    /// Why it was opened, e.g. `finalize`, `compare`, `demo`.
    pub purpose: String,
    /// What was scored on it, e.g. `pick 3f2a9c81d0e4`, `linear baseline`.
    pub evaluated: Vec<String>,
    /// The gemmule version that recorded it.
    pub gemmule_version: String,
    /// The facts behind `split`, for people reading the ledger.
    pub facts: SplitFacts,
}

impl LedgerEntry {
    /// One line for messages: `opening 1 at 2026-05-01T09:30:00Z by /runs/wine (finalize: pick 3f2a…)`.
    pub fn describe(&self) -> String {
        let evaluated = if self.evaluated.is_empty() {
            "nothing named".to_string()
        } else {
            self.evaluated.join(", ")
        };
        format!(
            "opening {} at {} by {} ({}: {evaluated})",
            self.opening, self.time, self.run, self.purpose
        )
    }
}

/// An opening about to be recorded: what the caller knows. The ledger adds
/// the split id, the time, the version and the opening number.
#[derive(Debug, Clone, PartialEq)]
pub struct NewOpening {
    /// The facts of the split being opened.
    pub facts: SplitFacts,
    /// The run (or comparison) folder that opens it (made absolute when recorded).
    pub run: PathBuf,
    /// Why it is opened, e.g. `finalize`.
    pub purpose: String,
    /// What is scored on it, e.g. `pick 3f2a9c81d0e4` or `linear baseline`.
    pub evaluated: Vec<String>,
}

impl NewOpening {
    /// An opening of the split `facts` by `run` for `purpose`, with nothing named as evaluated yet.
    pub fn new(facts: SplitFacts, run: impl Into<PathBuf>, purpose: impl Into<String>) -> Self {
        NewOpening {
            facts,
            run: run.into(),
            purpose: purpose.into(),
            evaluated: Vec::new(),
        }
    }

    /// Names what is scored on the split (replaces the list).
    pub fn evaluated<S: Into<String>>(mut self, items: impl IntoIterator<Item = S>) -> Self {
        self.evaluated = items.into_iter().map(Into::into).collect();
        self
    }
}
