//! `RUN/lock`: one gemmule process per run directory.
//!
//! The lock file holds the owner's pid and, on Linux, its start time in clock
//! ticks (`"<pid> <start>\n"`), so a pid reused by an unrelated process is
//! still recognized as stale. A lock whose owner is gone (no `/proc/<pid>`, a
//! different start time, or unreadable content) is taken over with a warning.
//! Where `/proc` does not exist every recorded owner is assumed alive.

use crate::{Error, Result};
use std::collections::BTreeSet;
use std::fs::OpenOptions;
use std::io::{ErrorKind, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// File name of the lock inside a run directory.
pub const LOCK_FILE: &str = "lock";

/// Run directories locked by this process (a pid alone cannot tell).
static HELD: Mutex<BTreeSet<PathBuf>> = Mutex::new(BTreeSet::new());

/// Exclusive use of a run directory; released (the file removed) on drop.
#[derive(Debug)]
pub struct RunLock {
    run_dir: PathBuf,
    path: PathBuf,
    content: String,
}

/// The owner recorded in a lock file.
struct Owner {
    pid: u32,
    start: Option<u64>,
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
        let mut warning = None;
        for _attempt in 0..3 {
            match OpenOptions::new().write(true).create_new(true).open(&path) {
                Ok(mut file) => {
                    file.write_all(content.as_bytes())
                        .and_then(|()| file.sync_all())
                        .map_err(|e| Error::io(&path, e))?;
                    held().insert(run_dir.clone());
                    let lock = RunLock {
                        run_dir,
                        path,
                        content,
                    };
                    return Ok((lock, warning));
                }
                Err(e) if e.kind() == ErrorKind::AlreadyExists => {
                    if let Some(note) = take_over_if_stale(&path)? {
                        warning = Some(note);
                    }
                }
                Err(e) => return Err(Error::io(&path, e)),
            }
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
        if std::fs::read_to_string(&self.path).is_ok_and(|text| text == self.content) {
            let _ = std::fs::remove_file(&self.path);
        }
        held().remove(&self.run_dir);
    }
}

fn held() -> std::sync::MutexGuard<'static, BTreeSet<PathBuf>> {
    HELD.lock().unwrap_or_else(|poisoned| poisoned.into_inner())
}

/// Removes the lock at `path` if its owner is gone and says so; refuses if it is alive.
fn take_over_if_stale(path: &Path) -> Result<Option<String>> {
    let text = match std::fs::read_to_string(path) {
        Ok(text) => text,
        Err(e) if e.kind() == ErrorKind::NotFound => return Ok(None),
        Err(e) => return Err(Error::io(path, e)),
    };
    let owner = parse_owner(&text);
    if let Some(owner) = owner.as_ref().filter(|owner| is_alive(owner)) {
        return Err(Error::input(format!(
            "{} is in use by gemmule process {} (lock file {}); wait for it to finish, \
             or delete the lock file if that process is not working on this run",
            path.parent().unwrap_or(path).display(),
            owner.pid,
            path.display()
        )));
    }
    match std::fs::remove_file(path) {
        Ok(()) => {}
        Err(e) if e.kind() == ErrorKind::NotFound => {}
        Err(e) => return Err(Error::io(path, e)),
    }
    Ok(Some(match owner {
        Some(owner) => format!(
            "took over the stale lock {} of process {}, which is no longer running",
            path.display(),
            owner.pid
        ),
        None => format!("took over the unreadable lock {}", path.display()),
    }))
}

fn parse_owner(text: &str) -> Option<Owner> {
    let mut fields = text.split_whitespace();
    let pid = fields.next()?.parse().ok()?;
    let start = fields.next().and_then(|field| field.parse().ok());
    Some(Owner { pid, start })
}

fn is_alive(owner: &Owner) -> bool {
    if owner.pid == std::process::id() {
        // Not in HELD (checked before), so a previous process had our pid.
        return false;
    }
    if !Path::new("/proc/self").exists() {
        return true;
    }
    if !Path::new(&format!("/proc/{}", owner.pid)).exists() {
        return false;
    }
    match (owner.start, process_start(owner.pid)) {
        (Some(recorded), Some(actual)) => recorded == actual,
        _ => true,
    }
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
