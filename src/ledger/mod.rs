//! The test ledger: one file per user that records every opening of every
//! test split by any run, so a test score can be trusted as a first look
//! and a second look is refused unless asked for (`--reopen`).
//!
//! A run's journal counts the openings of that run's split; two runs on the
//! same data and split settings would each report "opening 1". The ledger
//! counts by the split itself ([`TestSplitId`], from [`SplitFacts`]).
//!
//! The file is `test-openings.jsonl` (JSON Lines, one [`LedgerEntry`] per
//! line) in the folder [`LedgerLocation::from_env`] finds:
//! `$GEMMULE_LEDGER_DIR`, else `$XDG_DATA_HOME/gemmule`, else
//! `$HOME/.local/share/gemmule`. [`Ledger::record_opening`] re-reads the
//! file and appends under an exclusive `flock`, so concurrent processes
//! never lose, interleave or double-number a line; each line is written
//! with one `write_all` and made durable with `fsync` before the call returns.
//! The user guide is `docs/test-ledger.md`.

mod clock;
mod entry;
mod location;
mod read;
mod split_id;

pub use clock::{civil_from_days, rfc3339_utc, unix_seconds_rfc3339};
pub use entry::{LedgerEntry, NewOpening, LEDGER_FORMAT};
pub use location::{
    LedgerLocation, LocationSource, HOME_VARIABLE, LEDGER_DIR_VARIABLE, LEDGER_FILE,
    XDG_DATA_HOME_VARIABLE,
};
pub use read::MAX_LEDGER_BYTES;
pub use split_id::{SplitFacts, TestSplitId};

use crate::{Error, Result};
use read::{parse_ledger, read_limited, Parsed};
use std::fs::{File, OpenOptions};
use std::io::{ErrorKind, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::time::SystemTime;

/// What [`Ledger::check_can_open`] found: the earlier openings of a split
/// and the number the next one gets.
#[derive(Debug, Clone, PartialEq)]
pub struct OpeningCheck {
    /// Earlier openings of the split, in ledger order (empty for a first look).
    pub earlier: Vec<LedgerEntry>,
    /// The number the next opening gets, unless another process records one first.
    pub number: u64,
}

/// The test ledger at one location (see the module docs).
#[derive(Debug, Clone)]
pub struct Ledger {
    location: LedgerLocation,
    path: PathBuf,
}

impl Ledger {
    /// Opens the ledger at `location`, creating its folder and an empty
    /// file when missing. An unwritable location is an [`Error::Io`] that
    /// names the path and `GEMMULE_LEDGER_DIR`, the variable that moves it.
    pub fn open(location: LedgerLocation) -> Result<Ledger> {
        let dir = location.dir();
        std::fs::create_dir_all(dir).map_err(|e| location.io_error(dir, e))?;
        let path = location.file();
        let existed = path.is_file();
        OpenOptions::new()
            .append(true)
            .create(true)
            .open(&path)
            .map_err(|e| location.io_error(&path, e))?;
        if !existed {
            crate::fsio::sync_dir(dir);
        }
        Ok(Ledger { location, path })
    }

    /// The ledger file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Where the ledger is and how that was chosen.
    pub fn location(&self) -> &LedgerLocation {
        &self.location
    }

    /// Every recorded opening, in file order (a torn last line is skipped).
    pub fn entries(&self) -> Result<Vec<LedgerEntry>> {
        let mut file = match File::open(&self.path) {
            Ok(file) => file,
            // Moved aside since `open`: nothing recorded here now.
            Err(e) if e.kind() == ErrorKind::NotFound => return Ok(Vec::new()),
            Err(e) => return Err(self.location.io_error(&self.path, e)),
        };
        file.lock_shared().map_err(|e| self.lock_error(e))?;
        let bytes = read_limited(&mut file, &self.path)?;
        Ok(parse_ledger(&self.path, &bytes)?.entries)
    }

    /// The recorded openings of `split`, in order.
    pub fn openings(&self, split: &TestSplitId) -> Result<Vec<LedgerEntry>> {
        let mut entries = self.entries()?;
        entries.retain(|entry| entry.split == *split);
        Ok(entries)
    }

    /// Checks, before any work, whether `split` may be opened: refuses with
    /// [`Error::Input`] (naming every earlier opening and `--reopen`) when it
    /// was opened before and `allow_reopen` is false. Records nothing; call
    /// [`Ledger::record_opening`] when the split is actually opened (it
    /// checks again, as another process may have opened it meanwhile).
    pub fn check_can_open(&self, split: &TestSplitId, allow_reopen: bool) -> Result<OpeningCheck> {
        let earlier = self.openings(split)?;
        if !earlier.is_empty() && !allow_reopen {
            return Err(self.refusal(&earlier));
        }
        let number = next_number(&earlier);
        Ok(OpeningCheck { earlier, number })
    }

    /// Records one opening of the split of `opening.facts` and returns the
    /// entry with its number (1 for the first opening of that split in the
    /// whole ledger).
    ///
    /// Under an exclusive `flock` on the ledger file it re-reads the ledger,
    /// refuses with [`Error::Input`] when the split was opened before and
    /// `allow_reopen` is false, removes a torn last line left by a crash,
    /// then appends the entry as one line with `write_all` and `fsync`. On
    /// any error nothing is left half-written (a failed append is cut off
    /// again, best effort; a crash leaves a torn line the next write removes).
    pub fn record_opening(&self, opening: &NewOpening, allow_reopen: bool) -> Result<LedgerEntry> {
        let split = opening.facts.id();
        // Someone may move the ledger aside between our open and our lock;
        // then the lock is on the old file and we start over.
        for _ in 0..3 {
            let mut file = OpenOptions::new()
                .read(true)
                .write(true)
                .create(true)
                .truncate(false)
                .open(&self.path)
                .map_err(|e| self.location.io_error(&self.path, e))?;
            file.lock().map_err(|e| self.lock_error(e))?;
            if !names_same_file(&file, &self.path) {
                continue;
            }
            let bytes = read_limited(&mut file, &self.path)?;
            let parsed = parse_ledger(&self.path, &bytes)?;
            let earlier: Vec<LedgerEntry> = parsed
                .entries
                .iter()
                .filter(|entry| entry.split == split)
                .cloned()
                .collect();
            if !earlier.is_empty() && !allow_reopen {
                return Err(self.refusal(&earlier));
            }
            let entry = LedgerEntry {
                format: LEDGER_FORMAT,
                split: split.clone(),
                opening: next_number(&earlier),
                time: rfc3339_utc(SystemTime::now()),
                run: absolute_text(&opening.run),
                purpose: opening.purpose.clone(),
                evaluated: opening.evaluated.clone(),
                gemmule_version: env!("CARGO_PKG_VERSION").to_string(),
                facts: opening.facts.clone(),
            };
            let mut line = serde_json::to_vec(&entry)
                .map_err(|e| Error::internal(format!("ledger entry: {e}")))?;
            line.push(b'\n');
            self.append(&mut file, &parsed, bytes.len() as u64, &line)?;
            return Ok(entry);
        }
        Err(Error::io(
            &self.path,
            std::io::Error::other(
                "the test ledger was replaced three times while gemmule waited to write it; \
                 try again once nothing else moves it",
            ),
        ))
    }

    /// Cuts off a torn tail, appends `line` and syncs; on failure cuts the
    /// file back to its intact part.
    fn append(&self, file: &mut File, parsed: &Parsed, len: u64, line: &[u8]) -> Result<()> {
        let intact = parsed.intact_len;
        write_line_at(file, len, intact, line).map_err(|e| {
            let _ = file.set_len(intact).and_then(|()| file.sync_all());
            self.location.io_error(&self.path, e)
        })
    }

    fn lock_error(&self, cause: std::io::Error) -> Error {
        let note = std::io::Error::new(
            cause.kind(),
            format!("cannot lock the file ({cause}); does this file system support file locks?"),
        );
        self.location.io_error(&self.path, note)
    }

    /// The refusal of a further look at a split opened before.
    fn refusal(&self, earlier: &[LedgerEntry]) -> Error {
        let about = earlier
            .first()
            .map(|entry| format!(" ({}; id {})", entry.facts.describe(), entry.split.short()))
            .unwrap_or_default();
        let list: Vec<String> = earlier.iter().map(LedgerEntry::describe).collect();
        Error::input(format!(
            "the test split{about} was already opened {}: {}. Another look at the same test \
             examples is no longer an unbiased test. Pass --reopen to open it again (the opening \
             is then recorded and counted in {})",
            match earlier.len() {
                1 => "1 time".to_string(),
                n => format!("{n} times"),
            },
            list.join("; "),
            self.path.display()
        ))
    }
}

/// Cuts `file` (of `len` bytes) back to `intact` when longer, writes
/// `line` there and syncs.
fn write_line_at(file: &mut File, len: u64, intact: u64, line: &[u8]) -> std::io::Result<()> {
    if len > intact {
        file.set_len(intact)?;
    }
    file.seek(SeekFrom::Start(intact))?;
    file.write_all(line)?;
    file.sync_all()
}

/// The number after the earlier openings (never reusing a number, even
/// when lines were removed by hand).
fn next_number(earlier: &[LedgerEntry]) -> u64 {
    let highest = earlier.iter().map(|entry| entry.opening).max().unwrap_or(0);
    highest.max(earlier.len() as u64) + 1
}

/// `path` as absolute text (symbolic links resolved when it exists).
fn absolute_text(path: &Path) -> String {
    std::fs::canonicalize(path)
        .or_else(|_| std::path::absolute(path))
        .unwrap_or_else(|_| path.to_path_buf())
        .display()
        .to_string()
}

/// Whether `path` still names the opened `file`.
fn names_same_file(file: &File, path: &Path) -> bool {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        match (file.metadata(), std::fs::metadata(path)) {
            (Ok(opened), Ok(named)) => opened.dev() == named.dev() && opened.ino() == named.ino(),
            _ => false,
        }
    }
    #[cfg(not(unix))]
    {
        let _ = (file, path);
        true
    }
}
