//! Crash-safe file writing: a file is either the old one or the complete new one.

use crate::{Error, Result};
use std::fs::{self, File};
use std::io::Write;
use std::path::{Path, PathBuf};

/// The temporary sibling a file is written to before it replaces `path`.
pub fn temp_sibling(path: &Path) -> PathBuf {
    let mut name = path
        .file_name()
        .map(|n| n.to_os_string())
        .unwrap_or_default();
    name.push(".partial");
    path.with_file_name(name)
}

/// Writes `bytes` to `path` atomically: temp file, fsync, rename, fsync of the folder.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let temp = temp_sibling(path);
    let mut file = File::create(&temp).map_err(|e| Error::io(&temp, e))?;
    file.write_all(bytes).map_err(|e| Error::io(&temp, e))?;
    file.sync_all().map_err(|e| Error::io(&temp, e))?;
    drop(file);
    commit_temp(&temp, path)
}

/// Moves a finished temp file over `path` (after syncing it) and syncs the folder.
pub fn commit_temp(temp: &Path, path: &Path) -> Result<()> {
    File::open(temp)
        .and_then(|f| f.sync_all())
        .map_err(|e| Error::io(temp, e))?;
    fs::rename(temp, path).map_err(|e| Error::io(path, e))?;
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        // Best effort: some file systems cannot sync a directory handle.
        let _ = File::open(dir).and_then(|d| d.sync_all());
    }
    Ok(())
}
