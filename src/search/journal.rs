//! The run journal `RUN/journal.jsonl`: append-only JSON Lines whose content
//! depends only on the run's inputs (never on timing), so equal runs give
//! byte-identical journals.
//!
//! Line 1 is the header (`"kind":"header"`), then one `"evaluation"` record
//! per committed evaluation in index order, and `"test_opening"` records
//! appended when the sealed test split is opened. Every record is written
//! with one write and synced to disk before anything depends on it.
//!
//! Crash safety: the journal appears with its complete header line or not at
//! all; a write that fails (a full disk) is cut off again, so the file keeps
//! exactly the complete records before it; a line torn by a kill is ignored
//! on reading and removed by the next resume. Records go through a
//! [`JournalSink`], which tests replace to inject write errors.

use super::journal_read::parse_journal;
use super::lock::RunLock;
use super::records::{BaselineRecord, EvaluationRecord, RunHeader};
use crate::fsio::{create_new_atomic, open_no_follow, remove_stale_temps};
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
    /// Baseline records (runs made before baselines existed have none).
    pub baselines: Vec<BaselineRecord>,
    /// Problems that were tolerated (an incomplete last line).
    pub warnings: Vec<String>,
    /// Length in bytes of the intact part (everything before a torn last line).
    pub intact_len: u64,
}

/// Where journal records go: an append-only byte sink that can be made
/// durable. The journal file itself in normal runs; a test can wrap the file
/// to inject write errors (a full disk after N bytes, say).
pub trait JournalSink: Send {
    /// Appends all of `bytes` at the end, or fails (possibly after writing a prefix).
    fn append(&mut self, bytes: &[u8]) -> std::io::Result<()>;
    /// Makes everything appended so far durable.
    fn sync(&mut self) -> std::io::Result<()>;
    /// Cuts the sink back to its first `len` bytes and makes that durable
    /// (drops a partly written record).
    fn truncate(&mut self, len: u64) -> std::io::Result<()>;
}

impl JournalSink for File {
    fn append(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        self.write_all(bytes)
    }

    fn sync(&mut self) -> std::io::Result<()> {
        self.sync_data()
    }

    fn truncate(&mut self, len: u64) -> std::io::Result<()> {
        self.set_len(len)?;
        self.sync_data()
    }
}

/// Builds the sink a journal writes through from its opened file (in append
/// mode). [`plain_sink`] writes to the file directly.
pub type SinkFactory = dyn Fn(File) -> Box<dyn JournalSink> + Sync;

/// The [`SinkFactory`] of normal runs: the journal file itself.
pub fn plain_sink(file: File) -> Box<dyn JournalSink> {
    Box::new(file)
}

/// An open journal, appending records.
pub struct Journal {
    path: PathBuf,
    sink: Box<dyn JournalSink>,
    /// Bytes of complete records in the file.
    len: u64,
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
        Journal::create_with(run_dir, header, &plain_sink)
    }

    /// [`Journal::create`] writing through the sink `wrap` builds.
    ///
    /// The file appears complete with its header line or not at all (temp
    /// file, fsync, link), so a crash while a run starts never leaves an
    /// empty journal behind.
    pub fn create_with(run_dir: &Path, header: &RunHeader, wrap: &SinkFactory) -> Result<Journal> {
        let path = Journal::path_in(run_dir);
        // Temporary files of a process killed while it created this journal.
        remove_stale_temps(run_dir);
        let line = record_line("header", header)?;
        create_new_atomic(&path, &line).map_err(|e| match e {
            Error::Io { cause, .. } if cause.kind() == std::io::ErrorKind::AlreadyExists => {
                Error::input(format!(
                    "{} already holds a run journal; resume that run or choose another directory",
                    run_dir.display()
                ))
            }
            other => other,
        })?;
        let file = open_for_append(&path)?;
        Ok(Journal {
            path,
            sink: wrap(file),
            len: line.len() as u64,
        })
    }

    /// Opens an existing journal for appending after its first `intact_len`
    /// bytes, cutting off a torn last line.
    pub fn reopen(run_dir: &Path, intact_len: u64) -> Result<Journal> {
        Journal::reopen_with(run_dir, intact_len, &plain_sink)
    }

    /// [`Journal::reopen`] writing through the sink `wrap` builds.
    pub fn reopen_with(run_dir: &Path, intact_len: u64, wrap: &SinkFactory) -> Result<Journal> {
        let path = Journal::path_in(run_dir);
        // Temporary files of writers killed in this run folder (the caller
        // holds the run lock, so no other writer is there).
        remove_stale_temps(run_dir);
        let file = open_for_append(&path)?;
        let length = file.metadata().map_err(|e| Error::io(&path, e))?.len();
        if length < intact_len {
            return Err(Error::input(format!(
                "{}: the file shrank from {intact_len} to {length} bytes while it was being read; \
                 is another program changing it?",
                path.display()
            )));
        }
        let mut sink = wrap(file);
        if length > intact_len {
            sink.truncate(intact_len).map_err(|e| Error::io(&path, e))?;
        }
        Ok(Journal {
            path,
            sink,
            len: intact_len,
        })
    }

    /// Appends one baseline record.
    pub fn append_baseline(&mut self, record: &BaselineRecord) -> Result<()> {
        let what = format!("baseline record {}", record.name);
        self.append("baseline", record, &what)
    }

    /// Appends one evaluation record.
    pub fn append_evaluation<G: Serialize>(&mut self, record: &EvaluationRecord<G>) -> Result<()> {
        let what = format!("evaluation record {}", record.index);
        self.append("evaluation", record, &what)
    }

    /// Appends a test-opening record with a caller-provided body to the
    /// journal of the locked run, repairing a torn last line first.
    ///
    /// Returns the warnings of reading the journal.
    pub fn append_test_opening(lock: &RunLock, body: &serde_json::Value) -> Result<Vec<String>> {
        let run_dir = lock.run_dir();
        let contents: JournalContents = Journal::read(&Journal::path_in(run_dir))?;
        let mut journal = Journal::reopen(run_dir, contents.intact_len)?;
        journal.append(
            "test_opening",
            &OpeningBody { body },
            "the test-opening record",
        )?;
        Ok(contents.warnings)
    }

    /// Writes one record and syncs it. On failure the partial line is cut
    /// off again (best effort; a resume also removes it), so the file keeps
    /// exactly the complete records written before, and the error names the
    /// file, the cause (e.g. "No space left on device"), `what` was being
    /// written and what to do.
    fn append<T: Serialize>(&mut self, kind: &str, body: &T, what: &str) -> Result<()> {
        let line = record_line(kind, body)?;
        let written = self.sink.append(&line).and_then(|()| self.sink.sync());
        let Err(cause) = written else {
            self.len += line.len() as u64;
            return Ok(());
        };
        let partial = match self.sink.truncate(self.len) {
            Ok(()) => "",
            Err(_) => " (a partial last line may remain; a resume removes it)",
        };
        let advice = match (kind, self.path.parent()) {
            ("evaluation", Some(run_dir)) => format!(
                "free some disk space, then continue with `gemmule resume {}`",
                run_dir.display()
            ),
            _ => "free some disk space and try again".to_string(),
        };
        let text = format!(
            "{cause}, while appending {what}; the journal keeps every complete record \
             written before it{partial}; {advice}"
        );
        Err(Error::io(
            &self.path,
            std::io::Error::new(cause.kind(), text),
        ))
    }
}

/// One record as its journal line (compact JSON and `\n`).
fn record_line<T: Serialize>(kind: &str, body: &T) -> Result<Vec<u8>> {
    let mut line = serde_json::to_vec(&Tagged { kind, body })
        .map_err(|e| Error::internal(format!("journal record not serializable: {e}")))?;
    line.push(b'\n');
    Ok(line)
}

fn open_for_append(path: &Path) -> Result<File> {
    open_no_follow(path, OpenOptions::new().append(true))
}
