//! `RUN/timings.jsonl`: everything time-dependent about a run (evaluation
//! durations, session starts and their budgets), kept out of the journal so
//! the journal stays byte-deterministic. Written best effort: lines are not
//! synced, and readers skip lines they cannot parse.

use super::budget::Budget;
use crate::fsio::open_no_follow;
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::time::{SystemTime, UNIX_EPOCH};

/// File name of the timings log inside a run directory.
pub const TIMINGS_FILE: &str = "timings.jsonl";

/// One line of the timings log.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum TimingEntry {
    /// How long one evaluation took.
    Timing {
        /// Journal index of the evaluation.
        index: u64,
        /// Wall-clock seconds the evaluation ran.
        seconds: f64,
        /// When it finished, in seconds since the Unix epoch.
        finished_unix: f64,
    },
    /// A search session started (the first one or a resume).
    Session {
        /// When it started, in seconds since the Unix epoch.
        started_unix: f64,
        /// Evaluations already in the journal.
        evaluations_before: u64,
        /// The session's budget (may differ from the header's on resume).
        budget: Budget,
        /// The gemmule version running the session.
        tool_version: String,
    },
}

/// Seconds since the Unix epoch (0 if the clock is before it).
pub fn unix_now() -> f64 {
    SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map(|elapsed| elapsed.as_secs_f64())
        .unwrap_or(0.0)
}

/// The timings log of a run, open for appending.
pub struct TimingLog {
    path: PathBuf,
    file: File,
}

impl TimingLog {
    /// Opens (creating if needed) the timings log of `run_dir`.
    ///
    /// A last line cut off by a crash is ended with a newline first, so the
    /// next entry starts on a line of its own (readers skip the torn one).
    pub fn open(run_dir: &Path) -> Result<TimingLog> {
        let path = run_dir.join(TIMINGS_FILE);
        let mut file = open_no_follow(
            &path,
            OpenOptions::new().read(true).append(true).create(true),
        )?;
        if ends_torn(&mut file).map_err(|e| Error::io(&path, e))? {
            file.write_all(b"\n").map_err(|e| Error::io(&path, e))?;
        }
        Ok(TimingLog { path, file })
    }

    /// Appends one entry with a single write.
    pub fn append(&mut self, entry: &TimingEntry) -> Result<()> {
        let mut line = serde_json::to_vec(entry)
            .map_err(|e| Error::internal(format!("timing entry not serializable: {e}")))?;
        line.push(b'\n');
        self.file
            .write_all(&line)
            .map_err(|e| Error::io(&self.path, e))
    }

    /// Reads the timings log of `run_dir`, skipping unparsable lines (a
    /// missing file reads as empty).
    pub fn read(run_dir: &Path) -> Result<Vec<TimingEntry>> {
        let path = run_dir.join(TIMINGS_FILE);
        let text = match std::fs::read(&path) {
            Ok(bytes) => String::from_utf8_lossy(&bytes).into_owned(),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
            Err(e) => return Err(Error::io(&path, e)),
        };
        Ok(text
            .lines()
            .filter_map(|line| serde_json::from_str(line).ok())
            .collect())
    }
}

/// Whether the file is non-empty and its last byte is not a newline.
fn ends_torn(file: &mut File) -> std::io::Result<bool> {
    if file.metadata()?.len() == 0 {
        return Ok(false);
    }
    file.seek(SeekFrom::End(-1))?;
    let mut last = [0u8; 1];
    file.read_exact(&mut last)?;
    Ok(last[0] != b'\n')
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_torn_last_line_does_not_swallow_the_next_entry() {
        let dir = tempfile::tempdir().expect("temp dir");
        let entry = |index| TimingEntry::Timing {
            index,
            seconds: 0.5,
            finished_unix: 1.0,
        };
        let mut log = TimingLog::open(dir.path()).expect("open");
        log.append(&entry(0)).expect("append");
        drop(log);
        let path = dir.path().join(TIMINGS_FILE);
        let mut bytes = std::fs::read(&path).expect("read");
        bytes.extend_from_slice(b"{\"kind\":\"timing\",\"ind");
        std::fs::write(&path, bytes).expect("write torn");
        let mut log = TimingLog::open(dir.path()).expect("reopen");
        log.append(&entry(1)).expect("append");
        let read = TimingLog::read(dir.path()).expect("read back");
        assert_eq!(read, vec![entry(0), entry(1)]);
    }
}
