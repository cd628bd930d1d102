//! Reading the ledger's bytes: the size limit, torn last lines, damage reports.

use super::entry::{LedgerEntry, LEDGER_FORMAT};
use crate::{Error, Result};
use serde_json::Value;
use std::io::Read;
use std::path::Path;

/// Largest ledger gemmule reads: 64 MiB, about 100 000 openings.
pub const MAX_LEDGER_BYTES: u64 = 64 << 20;

/// The entries of a ledger file and where its intact part ends.
#[derive(Debug)]
pub(crate) struct Parsed {
    /// Every complete entry, in file order.
    pub entries: Vec<LedgerEntry>,
    /// Bytes up to and including the last newline; anything after it is a
    /// torn line (an append cut off by a crash) that the next write removes.
    pub intact_len: u64,
}

/// Reads all of `file` (at its start), refusing more than [`MAX_LEDGER_BYTES`].
pub(crate) fn read_limited(file: &mut impl Read, path: &Path) -> Result<Vec<u8>> {
    let mut bytes = Vec::new();
    file.take(MAX_LEDGER_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| Error::io(path, e))?;
    if bytes.len() as u64 > MAX_LEDGER_BYTES {
        return Err(Error::input(format!(
            "{}: the test ledger is larger than the {} MiB gemmule reads; move it aside (keep \
             it: it records every earlier test opening) and gemmule starts a new one",
            path.display(),
            MAX_LEDGER_BYTES >> 20
        )));
    }
    Ok(bytes)
}

/// Parses a ledger's bytes. An unterminated last line is torn and skipped;
/// blank lines are skipped; any other line that is not an entry is an
/// [`Error::Input`] naming the file and the line.
pub(crate) fn parse_ledger(path: &Path, bytes: &[u8]) -> Result<Parsed> {
    let intact_len = bytes
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |newline| newline + 1);
    let mut entries = Vec::new();
    for (position, line) in bytes[..intact_len]
        .split_inclusive(|&b| b == b'\n')
        .enumerate()
    {
        let line = line.strip_suffix(b"\n").unwrap_or(line);
        if line.iter().all(u8::is_ascii_whitespace) {
            continue;
        }
        entries.push(parse_line(path, position + 1, line)?);
    }
    Ok(Parsed {
        entries,
        intact_len: intact_len as u64,
    })
}

fn parse_line(path: &Path, number: usize, line: &[u8]) -> Result<LedgerEntry> {
    let damaged = |what: String| {
        Error::input(format!(
            "{}: line {number}: {what}; the test ledger is damaged (only an incomplete last \
             line is repaired automatically). Fix or delete that line, or move the file aside \
             (keep it: it records earlier test openings) and gemmule starts a new ledger",
            path.display()
        ))
    };
    let value: Value =
        serde_json::from_slice(line).map_err(|e| damaged(format!("not valid JSON ({e})")))?;
    match value.get("format").and_then(Value::as_u64) {
        Some(format) if format > u64::from(LEDGER_FORMAT) => {
            let version = value
                .get("gemmule_version")
                .and_then(Value::as_str)
                .unwrap_or("of unknown version");
            return Err(Error::input(format!(
                "{}: line {number} was written by a newer gemmule {version} (ledger format \
                 {format}); this gemmule {} reads formats up to {LEDGER_FORMAT}: upgrade gemmule",
                path.display(),
                env!("CARGO_PKG_VERSION")
            )));
        }
        Some(format) if format >= 1 => {}
        _ => return Err(damaged("no valid \"format\" field".to_string())),
    }
    let entry: LedgerEntry = serde_json::from_value(value)
        .map_err(|e| damaged(format!("not a test-opening entry ({e})")))?;
    if entry.opening == 0 {
        return Err(damaged("opening number 0 (numbers start at 1)".to_string()));
    }
    Ok(entry)
}
