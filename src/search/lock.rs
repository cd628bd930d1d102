//! `RUN/lock`: one gemmule process per run directory.
//!
//! The owner holds an exclusive advisory lock (`flock`) on the lock file for
//! as long as it works on the run; the kernel releases it when the process
//! ends in any way, kill -9 included, so a lock nobody holds is stale by
//! definition. The file also names the owner for messages: its pid and, on
//! Linux, its start time in clock ticks (`"<pid> <start>\n"`).
//!
//! A lock file that is not locked but names a live process (same pid and
//! start time) is still refused: an older gemmule, which only wrote the file,
//! may be working on the run. Where file locks are not supported, the pid
//! check alone decides, as in older versions.

use crate::fsio::open_no_follow;
use crate::{Error, Result};
use std::collections::BTreeSet;
use std::fs::{File, OpenOptions, TryLockError};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// File name of the lock inside a run directory.
pub const LOCK_FILE: &str = "lock";

/// How often acquiring starts over when the lock file is replaced under it.
const ATTEMPTS: usize = 5;

/// Run directories locked by this process (a pid alone cannot tell).
static HELD: Mutex<BTreeSet<PathBuf>> = Mutex::new(BTreeSet::new());

/// Exclusive use of a run directory; released (the file removed) on drop.
#[derive(Debug)]
pub struct RunLock {
    run_dir: PathBuf,
    path: PathBuf,
    content: String,
    /// The locked file; closing it releases the `flock`.
    _file: File,
}

/// The owner recorded in a lock file.
struct Owner {
    pid: u32,
    start: Option<u64>,
}

/// Whether the opened lock file is ours now.
enum Attempt {
    /// We may use the file: its previous content, and whether the kernel
    /// lock is ours (false where file locks are not supported).
    Locked { previous: String, flocked: bool },
    /// Another process holds it; the file's content.
    Busy(String),
    /// The file was removed or replaced meanwhile; try again.
    Replaced,
}

impl RunLock {
    /// Locks the existing directory `run_dir`.
    ///
    /// Refuses (input error naming the pid) when a running process holds it;
    /// takes over a stale lock, returning a warning that says so.
    pub fn acquire(run_dir: &Path) -> Result<(RunLock, Option<String>)> {
        let run_dir = run_dir.canonicalize().map_err(|e| Error::io(run_dir, e))?;
        let path = run_dir.join(LOCK_FILE);
        let pid = std::process::id();
        if held().contains(&run_dir) {
            return Err(Error::input(format!(
                "{} is already in use by this process (pid {pid})",
                run_dir.display()
            )));
        }
        let content = match process_start(pid) {
            Some(start) => format!("{pid} {start}\n"),
            None => format!("{pid}\n"),
        };
        for _attempt in 0..ATTEMPTS {
            let mut file = open_no_follow(
                &path,
                OpenOptions::new()
                    .read(true)
                    .write(true)
                    .create(true)
                    .truncate(false),
            )?;
            let (previous, flocked) = match try_lock(&mut file, &path)? {
                Attempt::Locked { previous, flocked } => (previous, flocked),
                Attempt::Busy(text) => return Err(in_use(&path, parse_owner(&text))),
                Attempt::Replaced => continue,
            };
            let warning = judge_previous(&path, &previous, flocked)?;
            if let Err(e) = write_content(&mut file, &content) {
                let _ = std::fs::remove_file(&path);
                return Err(Error::io(&path, e));
            }
            held().insert(run_dir.clone());
            let lock = RunLock {
                run_dir,
                path,
                content,
                _file: file,
            };
            return Ok((lock, warning));
        }
        Err(Error::input(format!(
            "{}: could not take the lock; another process keeps recreating it",
            path.display()
        )))
    }

    /// The locked run directory (canonical path).
    pub fn run_dir(&self) -> &Path {
        &self.run_dir
    }
}

impl Drop for RunLock {
    fn drop(&mut self) {
        // Removed while still locked; `_file` is closed (unlocked) after this.
        if std::fs::read_to_string(&self.path).is_ok_and(|text| text == self.content) {
            let _ = std::fs::remove_file(&self.path);
        }
        held().remove(&self.run_dir);
    }
}

/// Tries the `flock` on the opened lock file and reads its content.
fn try_lock(file: &mut File, path: &Path) -> Result<Attempt> {
    let flocked = match file.try_lock() {
        Ok(()) => true,
        Err(TryLockError::WouldBlock) => {
            return Ok(Attempt::Busy(read_owner_text(file, path)?));
        }
        // No file locks here (some network file systems): the pid check decides.
        Err(TryLockError::Error(_)) => false,
    };
    if !same_file(file, path) {
        return Ok(Attempt::Replaced);
    }
    let previous = read_owner_text(file, path)?;
    Ok(Attempt::Locked { previous, flocked })
}

/// The lock file's content; bytes that are not UTF-8 make an unreadable owner.
fn read_owner_text(file: &mut File, path: &Path) -> Result<String> {
    let mut bytes = Vec::new();
    file.read_to_end(&mut bytes)
        .map_err(|e| Error::io(path, e))?;
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}

/// Whether `path` still names the opened `file` (the previous owner may have
/// removed it, and a third process created a new one, before we locked).
fn same_file(file: &File, path: &Path) -> bool {
    let Ok(opened) = file.metadata() else {
        return false;
    };
    let Ok(named) = std::fs::metadata(path) else {
        return false;
    };
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        opened.dev() == named.dev() && opened.ino() == named.ino()
    }
    #[cfg(not(unix))]
    {
        let _ = (opened, named);
        true
    }
}

/// Decides about the content left by a previous owner of a lock file that
/// is not locked now: refuses a live (older) owner, warns about a stale one.
/// Without a kernel lock (`flocked` false) an owner whose liveness cannot be
/// told counts as alive.
fn judge_previous(path: &Path, previous: &str, flocked: bool) -> Result<Option<String>> {
    if previous.trim().is_empty() {
        return Ok(None);
    }
    let Some(owner) = parse_owner(previous) else {
        return Ok(Some(format!(
            "took over the unreadable lock {}",
            path.display()
        )));
    };
    let alive = is_alive(&owner).unwrap_or(!flocked);
    if owner.pid != std::process::id() && alive {
        return Err(in_use(path, Some(owner)));
    }
    Ok(Some(format!(
        "took over the stale lock {} of process {}, which is no longer running",
        path.display(),
        owner.pid
    )))
}

/// The refusal when another process works on the run.
fn in_use(path: &Path, owner: Option<Owner>) -> Error {
    let who = match owner {
        Some(owner) => format!("gemmule process {}", owner.pid),
        None => "another gemmule process".to_string(),
    };
    Error::input(format!(
        "{} is in use by {who} (lock file {}); wait for it to finish, \
         or delete the lock file if that process is not working on this run",
        path.parent().unwrap_or(path).display(),
        path.display()
    ))
}

/// Replaces the lock file's content with ours and syncs it.
fn write_content(file: &mut File, content: &str) -> std::io::Result<()> {
    file.set_len(0)?;
    file.seek(SeekFrom::Start(0))?;
    file.write_all(content.as_bytes())?;
    file.sync_all()
}

fn held() -> std::sync::MutexGuard<'static, BTreeSet<PathBuf>> {
    HELD.lock().unwrap_or_else(|poisoned| poisoned.into_inner())
}

fn parse_owner(text: &str) -> Option<Owner> {
    let mut fields = text.split_whitespace();
    let pid = fields.next()?.parse().ok()?;
    let start = fields.next().and_then(|field| field.parse().ok());
    Some(Owner { pid, start })
}

/// Whether the recorded owner still runs: `None` where this cannot be told
/// (no `/proc`).
fn is_alive(owner: &Owner) -> Option<bool> {
    if !Path::new("/proc/self").exists() {
        return None;
    }
    if !Path::new(&format!("/proc/{}", owner.pid)).exists() {
        return Some(false);
    }
    Some(match (owner.start, process_start(owner.pid)) {
        (Some(recorded), Some(actual)) => recorded == actual,
        _ => true,
    })
}

/// Start time of a process in clock ticks since boot (field 22 of `/proc/<pid>/stat`).
fn process_start(pid: u32) -> Option<u64> {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    // The command name (field 2) may contain spaces; fields after it follow the last ')'.
    let after_name = &stat[stat.rfind(')')? + 1..];
    after_name.split_whitespace().nth(19)?.parse().ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn own_start_time_is_readable_on_linux() {
        if Path::new("/proc/self").exists() {
            assert!(process_start(std::process::id()).is_some());
        }
    }

    #[test]
    fn owners_parse_with_and_without_start_time() {
        let owner = parse_owner("123 456\n").expect("parsable");
        assert_eq!((owner.pid, owner.start), (123, Some(456)));
        assert!(parse_owner("77").is_some_and(|o| o.start.is_none()));
        assert!(parse_owner("").is_none());
    }
}
