//! Crash-safe file writing: a file is either the old one or the complete new one.
//!
//! New content goes to a temporary sibling (`.gemmule-<pid>-<n>-NAME.partial`,
//! unique per process and call, and recognisable as gemmule's by its prefix),
//! is synced, and is then renamed over the target; the folder is synced so the
//! rename survives a power cut. A failed write removes its temporary file and
//! leaves the target as it was. A process killed while a temporary file
//! exists leaves it behind; [`remove_stale_temps`] removes such files (only
//! gemmule's own, and only those whose writing process is gone) the next time
//! gemmule writes into that folder.

use crate::{Error, Result};
use std::fs::{self, File, OpenOptions};
use std::io::{ErrorKind, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Prefix of every temporary file made by [`temp_sibling`].
pub const TEMP_PREFIX: &str = ".gemmule-";
/// Suffix of every temporary file made by [`temp_sibling`].
pub const TEMP_SUFFIX: &str = ".partial";

/// Counts temporary files made by this process, so two writers never share one.
static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// A fresh temporary sibling of `path` (`.gemmule-<pid>-<n>-NAME.partial`)
/// that a new version of the file is written to before it replaces `path`.
pub fn temp_sibling(path: &Path) -> PathBuf {
    let target = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let number = TEMP_COUNTER.fetch_add(1, Ordering::Relaxed);
    path.with_file_name(format!(
        "{TEMP_PREFIX}{}-{number}-{target}{TEMP_SUFFIX}",
        std::process::id()
    ))
}

/// The process id and target name of a temporary file made by
/// [`temp_sibling`] (of any process), or `None` when `name` is not one.
pub fn parse_temp_name(name: &str) -> Option<(u32, &str)> {
    let middle = name.strip_prefix(TEMP_PREFIX)?.strip_suffix(TEMP_SUFFIX)?;
    let (pid, rest) = middle.split_once('-')?;
    let (number, target) = rest.split_once('-')?;
    let digits = |part: &str| !part.is_empty() && part.bytes().all(|b| b.is_ascii_digit());
    if !digits(pid) || !digits(number) || target.is_empty() {
        return None;
    }
    Some((pid.parse().ok()?, target))
}

/// Whether `name` is a temporary sibling of a file called `target` made by
/// [`temp_sibling`] (of any process), e.g. to clean up after a crash.
pub fn is_temp_of(name: &str, target: &str) -> bool {
    parse_temp_name(name).is_some_and(|(_, of)| of == target)
}

/// Removes gemmule's temporary files in `dir` (names made by
/// [`temp_sibling`]) whose writing process no longer runs: what a process
/// killed in the middle of a write left behind. Files of this process and of
/// any other live process are kept, and nothing else in the folder is
/// touched. Returns how many files were removed. Best effort: a folder that
/// cannot be listed is left as it is.
///
/// Callers hold the lock that keeps other gemmule writers out of `dir`
/// (the run lock, or a model folder's lock), so a live writer's file can
/// only be its own; a process id that was reused by an unrelated live
/// process keeps its file until a later clean-up.
pub fn remove_stale_temps(dir: &Path) -> usize {
    let Ok(entries) = fs::read_dir(dir) else {
        return 0;
    };
    let mut removed = 0;
    for entry in entries.flatten() {
        let name = entry.file_name();
        let Some((pid, _)) = name.to_str().and_then(parse_temp_name) else {
            continue;
        };
        if process_is_gone(pid) && entry.file_type().is_ok_and(|t| t.is_file()) {
            removed += usize::from(fs::remove_file(entry.path()).is_ok());
        }
    }
    if removed > 0 {
        sync_dir(dir);
    }
    removed
}

/// Whether no process with id `pid` runs (never true for this process).
fn process_is_gone(pid: u32) -> bool {
    if pid == std::process::id() {
        return false;
    }
    #[cfg(unix)]
    {
        let Ok(pid) = libc::pid_t::try_from(pid) else {
            return true;
        };
        // Signal 0 checks for existence without sending anything; EPERM
        // means the process exists but belongs to another user.
        // SAFETY: kill with signal 0 has no effect on any process.
        let answer = unsafe { libc::kill(pid, 0) };
        answer != 0 && std::io::Error::last_os_error().raw_os_error() == Some(libc::ESRCH)
    }
    #[cfg(not(unix))]
    {
        false
    }
}

/// Environment variable naming a crash point ([`crash_point`]) at which the
/// process kills itself: a test hook that makes kill tests deterministic.
pub const CRASH_AT_VARIABLE: &str = "GEMMULE_CRASH_AT";

/// A named moment of a crash-safe write (for example
/// `model.json:temp-written`). When the environment variable
/// [`CRASH_AT_VARIABLE`] equals `name`, the process ends itself with
/// SIGKILL right here, exactly as a power cut or `kill -9` at this moment
/// would: tests use it to check every step of a save without timing luck.
/// Otherwise (always, outside tests) it does nothing.
pub fn crash_point(name: &str) {
    static TARGET: std::sync::OnceLock<Option<String>> = std::sync::OnceLock::new();
    let target = TARGET.get_or_init(|| std::env::var(CRASH_AT_VARIABLE).ok());
    if target.as_deref() == Some(name) {
        #[cfg(unix)]
        // SAFETY: raising SIGKILL on this process ends it; nothing runs after.
        unsafe {
            libc::raise(libc::SIGKILL);
        }
        std::process::abort();
    }
}

/// The crash point `TARGET:STEP` for the file `path` (its file name as TARGET).
fn crash_point_of(path: &Path, step: &str) {
    if let Some(name) = path.file_name().and_then(|n| n.to_str()) {
        crash_point(&format!("{name}:{step}"));
    }
}

/// Writes `bytes` to `path` atomically: temp file, fsync, rename, fsync of the folder.
///
/// On failure (a full disk, say) the error names `path` and says that the
/// previous file, if any, was left unchanged.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    if is_special_file(path) {
        // A device or FIFO (e.g. `--out /dev/stdout`) is written in place:
        // renaming over it would replace the device with a plain file.
        return fs::write(path, bytes).map_err(|e| Error::io(path, e));
    }
    write_atomic_with(path, |temp| {
        let mut file = File::create(temp).map_err(|e| Error::io(temp, e))?;
        file.write_all(bytes).map_err(|e| Error::io(temp, e))
    })
}

/// Whether `path` exists and is neither a regular file nor a folder (a
/// device, FIFO or socket).
fn is_special_file(path: &Path) -> bool {
    fs::metadata(path).is_ok_and(|m| !m.is_file() && !m.is_dir())
}

/// Like [`write_atomic`], but `fill` writes the temporary file at the path it
/// is given (for writers that insist on opening the file themselves).
pub fn write_atomic_with(path: &Path, fill: impl FnOnce(&Path) -> Result<()>) -> Result<()> {
    let temp = temp_sibling(path);
    let result = fill(&temp)
        .inspect(|()| crash_point_of(path, "temp-written"))
        .and_then(|()| commit_temp(&temp, path))
        .inspect(|()| crash_point_of(path, "committed"));
    if let Err(error) = result {
        let _ = fs::remove_file(&temp);
        return Err(about_target(error, &temp, path));
    }
    Ok(())
}

/// Moves a finished temp file over `path` (after syncing it) and syncs the folder.
pub fn commit_temp(temp: &Path, path: &Path) -> Result<()> {
    File::open(temp)
        .and_then(|f| f.sync_all())
        .map_err(|e| Error::io(temp, e))?;
    fs::rename(temp, path).map_err(|e| Error::io(path, e))?;
    sync_folder_of(path);
    Ok(())
}

/// Creates `path` with `bytes` as its complete content, atomically: either
/// the file does not exist or it holds all of `bytes`, even after a crash.
///
/// Fails with an [`Error::Io`] of kind `AlreadyExists` when `path` exists.
/// Where the file system has no hard links, an existing file is checked for
/// first and then replaced by rename, so callers must hold a lock that keeps
/// other writers away (the run lock does).
pub fn create_new_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let temp = temp_sibling(path);
    let result = create_new_through(&temp, path, bytes);
    let _ = fs::remove_file(&temp);
    result.map_err(|error| about_target(error, &temp, path))?;
    sync_folder_of(path);
    Ok(())
}

fn create_new_through(temp: &Path, path: &Path, bytes: &[u8]) -> Result<()> {
    let mut file = OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(temp)
        .map_err(|e| Error::io(temp, e))?;
    file.write_all(bytes)
        .and_then(|()| file.sync_all())
        .map_err(|e| Error::io(temp, e))?;
    drop(file);
    match fs::hard_link(temp, path) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == ErrorKind::AlreadyExists => Err(Error::io(path, e)),
        Err(_) => {
            // No hard links here (some network or FAT file systems).
            if path.exists() {
                return Err(Error::io(path, ErrorKind::AlreadyExists.into()));
            }
            fs::rename(temp, path).map_err(|e| Error::io(path, e))
        }
    }
}

/// Opens a file of a run directory (journal, timings, lock) with `options`,
/// refusing a symbolic link in its place, so a prepared run directory
/// cannot make gemmule write to a file elsewhere.
pub fn open_no_follow(path: &Path, options: &mut OpenOptions) -> Result<File> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        options.custom_flags(libc::O_NOFOLLOW);
    }
    options.open(path).map_err(|e| {
        #[cfg(unix)]
        if e.raw_os_error() == Some(libc::ELOOP) {
            return Error::input(format!(
                "{}: is a symbolic link; gemmule writes its run files only as regular files \
                 in the run directory (replace the link with the file it points to)",
                path.display()
            ));
        }
        Error::io(path, e)
    })
}

/// Makes the directory entries of `dir` durable (best effort: some file
/// systems cannot sync a directory handle).
pub fn sync_dir(dir: &Path) {
    if let Ok(handle) = File::open(dir) {
        let _ = handle.sync_all();
    }
}

fn sync_folder_of(path: &Path) {
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        sync_dir(dir);
    }
}

/// Rewrites an I/O error about the temporary file so it names the target and
/// says the old file is still there.
fn about_target(error: Error, temp: &Path, path: &Path) -> Error {
    match error {
        Error::Io { path: at, cause } if at == temp || at == path => {
            let note = if cause.kind() == ErrorKind::AlreadyExists {
                cause.to_string()
            } else {
                format!("{cause}; the previous file, if any, was left unchanged")
            };
            Error::io(path, std::io::Error::new(cause.kind(), note))
        }
        other => other,
    }
}

#[cfg(test)]
mod special_file_tests {
    #[test]
    #[cfg(unix)]
    fn writing_to_a_device_writes_in_place() {
        let null = std::path::Path::new("/dev/null");
        if null.exists() {
            super::write_atomic(null, b"gone").unwrap();
            assert!(
                !std::fs::metadata(null).unwrap().is_file(),
                "still a device"
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn temp_names_are_unique_and_recognized() {
        let a = temp_sibling(Path::new("dir/model.json"));
        let b = temp_sibling(Path::new("dir/model.json"));
        assert_ne!(a, b);
        let name = a.file_name().and_then(|n| n.to_str()).unwrap_or("");
        assert!(name.starts_with(TEMP_PREFIX), "{name}");
        assert!(is_temp_of(name, "model.json"), "{name}");
        assert!(!is_temp_of(name, "model"));
        assert_eq!(
            parse_temp_name(name).map(|(pid, _)| pid),
            Some(std::process::id())
        );
        assert!(!is_temp_of("model.json.partial", "model.json"));
        assert!(!is_temp_of(
            ".gemmule-12-x-model.json.partial",
            "model.json"
        ));
        assert!(!is_temp_of(".gemmule-12-3-.partial", ""));
        assert!(!is_temp_of(".tmp8lOTm7", "model.json"));
        assert!(is_temp_of(".gemmule-1-2-a-b.partial", "a-b"));
    }

    #[test]
    fn stale_temps_of_dead_processes_are_removed_and_nothing_else() {
        let dir = tempfile::tempdir().expect("temp dir");
        // A child that has exited and been reaped: its pid runs no process.
        let mut child = std::process::Command::new("true")
            .spawn()
            .expect("true runs");
        let dead = child.id();
        child.wait().expect("reaped");
        let mine = temp_sibling(&dir.path().join("model.json"));
        let stale = dir
            .path()
            .join(format!(".gemmule-{dead}-0-model.json.partial"));
        for (path, bytes) in [
            (&mine, b"live".as_slice()),
            (&stale, b"stale"),
            (&dir.path().join(".tmp8lOTm7"), b"foreign"),
            (&dir.path().join("notes.txt"), b"user"),
        ] {
            fs::write(path, bytes).expect("written");
        }
        assert_eq!(remove_stale_temps(dir.path()), 1);
        assert!(!stale.exists());
        assert!(mine.exists(), "this process's own file stays");
        assert!(
            dir.path().join(".tmp8lOTm7").exists(),
            "a file gemmule did not name stays"
        );
        assert!(dir.path().join("notes.txt").exists());
    }

    #[cfg(unix)]
    #[test]
    fn symbolic_links_are_not_followed() {
        let dir = tempfile::tempdir().expect("temp dir");
        let target = dir.path().join("elsewhere");
        fs::write(&target, b"keep").expect("target");
        let link = dir.path().join("lock");
        std::os::unix::fs::symlink(&target, &link).expect("symlink");
        let opened = open_no_follow(&link, OpenOptions::new().write(true).truncate(true));
        let message = opened.err().map(|e| e.to_string()).unwrap_or_default();
        assert!(message.contains("symbolic link"), "{message}");
        assert_eq!(fs::read(&target).expect("target"), b"keep");
    }

    #[test]
    fn create_new_refuses_an_existing_file_and_keeps_it() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("journal.jsonl");
        create_new_atomic(&path, b"first\n").expect("created");
        let again = create_new_atomic(&path, b"second\n");
        assert!(
            matches!(&again, Err(Error::Io { cause, .. }) if cause.kind() == ErrorKind::AlreadyExists)
        );
        assert_eq!(fs::read(&path).expect("readable"), b"first\n");
        let left: Vec<_> = fs::read_dir(dir.path()).expect("list").collect();
        assert_eq!(left.len(), 1, "no temporary file is left behind");
    }

    #[test]
    fn a_failed_write_keeps_the_old_file_and_removes_the_temp() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("out.txt");
        write_atomic(&path, b"old").expect("written");
        let failed = write_atomic_with(&path, |temp| {
            fs::write(temp, b"half").map_err(|e| Error::io(temp, e))?;
            Err(Error::io(temp, std::io::Error::from_raw_os_error(28)))
        });
        let message = failed.err().map(|e| e.to_string()).unwrap_or_default();
        assert!(
            message.contains("out.txt") && message.contains("left unchanged"),
            "{message}"
        );
        assert!(!message.contains(".partial"), "{message}");
        assert_eq!(fs::read(&path).expect("readable"), b"old");
        assert_eq!(fs::read_dir(dir.path()).expect("list").count(), 1);
    }
}
