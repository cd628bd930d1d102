//! The run journal `RUN/journal.jsonl`: append-only JSON Lines whose content
//! depends only on the run's inputs (never on timing), so equal runs give
//! byte-identical journals.
//!
//! Line 1 is the header (`"kind":"header"`), then one `"evaluation"` record
//! per committed evaluation in index order, and `"test_opening"` records
//! appended when the sealed test split is opened. Every record is written
//! with one write and synced to disk before anything depends on it.

use super::journal_read::parse_journal;
use super::lock::RunLock;
use super::records::{EvaluationRecord, RunHeader};
use crate::{Error, Result};
use serde::{de::DeserializeOwned, Serialize};
use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};

/// File name of the journal inside a run directory.
pub const JOURNAL_FILE: &str = "journal.jsonl";

/// Everything a journal holds, as read back.
#[derive(Debug, Clone, PartialEq)]
pub struct JournalContents<G = serde_json::Value> {
    /// The header (line 1).
    pub header: RunHeader,
    /// Evaluation records; `evaluations[i].index == i`.
    pub evaluations: Vec<EvaluationRecord<G>>,
    /// Bodies of the test-opening records, in order.
    pub openings: Vec<serde_json::Value>,
    /// Problems that were tolerated (an incomplete last line).
    pub warnings: Vec<String>,
    /// Length in bytes of the intact part (everything before a torn last line).
    pub intact_len: u64,
}

/// An open journal, appending records.
pub struct Journal {
    path: PathBuf,
    file: File,
}

#[derive(Serialize)]
struct Tagged<'a, T> {
    kind: &'a str,
    #[serde(flatten)]
    body: &'a T,
}

#[derive(Serialize)]
struct OpeningBody<'a> {
    body: &'a serde_json::Value,
}

impl Journal {
    /// The journal path of a run directory.
    pub fn path_in(run_dir: &Path) -> PathBuf {
        run_dir.join(JOURNAL_FILE)
    }

    /// Reads and checks a journal (see [`JournalContents`]).
    ///
    /// An incomplete or unparsable last line is ignored with a warning; damage
    /// anywhere else is an input error naming the line. A journal of a newer
    /// format is refused.
    pub fn read<G: DeserializeOwned>(path: &Path) -> Result<JournalContents<G>> {
        let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
        parse_journal(path, &bytes)
    }

    /// Creates the journal of a new run and writes its header.
    pub fn create(run_dir: &Path, header: &RunHeader) -> Result<Journal> {
        let path = Journal::path_in(run_dir);
        let file = OpenOptions::new()
            .append(true)
            .create_new(true)
            .open(&path)
            .map_err(|e| match e.kind() {
                std::io::ErrorKind::AlreadyExists => Error::input(format!(
                    "{} already holds a run journal; resume that run or choose another directory",
                    run_dir.display()
                )),
                _ => Error::io(&path, e),
            })?;
        sync_directory(run_dir);
        let mut journal = Journal { path, file };
        journal.append("header", header)?;
        Ok(journal)
    }

    /// Opens an existing journal for appending after its first `intact_len`
    /// bytes, cutting off a torn last line.
    pub fn reopen(run_dir: &Path, intact_len: u64) -> Result<Journal> {
        let path = Journal::path_in(run_dir);
        let file = OpenOptions::new()
            .append(true)
            .open(&path)
            .map_err(|e| Error::io(&path, e))?;
        let length = file.metadata().map_err(|e| Error::io(&path, e))?.len();
        if length > intact_len {
            file.set_len(intact_len).map_err(|e| Error::io(&path, e))?;
            file.sync_all().map_err(|e| Error::io(&path, e))?;
        }
        Ok(Journal { path, file })
    }

    /// Appends one evaluation record.
    pub fn append_evaluation<G: Serialize>(&mut self, record: &EvaluationRecord<G>) -> Result<()> {
        self.append("evaluation", record)
    }

    /// Appends a test-opening record with a caller-provided body to the
    /// journal of the locked run, repairing a torn last line first.
    ///
    /// Returns the warnings of reading the journal.
    pub fn append_test_opening(lock: &RunLock, body: &serde_json::Value) -> Result<Vec<String>> {
        let run_dir = lock.run_dir();
        let contents: JournalContents = Journal::read(&Journal::path_in(run_dir))?;
        let mut journal = Journal::reopen(run_dir, contents.intact_len)?;
        journal.append("test_opening", &OpeningBody { body })?;
        Ok(contents.warnings)
    }

    fn append<T: Serialize>(&mut self, kind: &str, body: &T) -> Result<()> {
        let mut line = serde_json::to_vec(&Tagged { kind, body })
            .map_err(|e| Error::internal(format!("journal record not serializable: {e}")))?;
        line.push(b'\n');
        self.file
            .write_all(&line)
            .and_then(|()| self.file.sync_data())
            .map_err(|e| Error::io(&self.path, e))
    }
}

/// Makes a newly created file's directory entry durable (best effort).
pub(crate) fn sync_directory(dir: &Path) {
    if let Ok(handle) = File::open(dir) {
        let _ = handle.sync_all();
    }
}
