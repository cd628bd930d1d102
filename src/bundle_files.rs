//! The files of a model folder, written so that a crash at any moment leaves
//! either the previous model or the new one (never a description of one
//! with the weights of the other), and read back with checks.
//!
//! Layout (model format 2):
//!
//! ```text
//! DIR/
//!   model.json                         description; its "weights" entry names
//!                                      the weights file, its size and SHA-256
//!   weights-<12 hex>.safetensors       the weights, named by their SHA-256
//! ```
//!
//! A save writes the weights under their content-addressed name (temp file,
//! fsync, rename), then replaces `model.json` atomically, and only then
//! deletes the previous weights file. `model.json` is the single commit
//! point: whichever version it is, the weights file it names is complete and
//! present. Saves into one folder take an exclusive `flock` on the folder,
//! reads a shared one, so a reader never sees a weights file disappear under
//! it. Folders of model format 1 (`model.safetensors` beside `model.json`,
//! no "weights" entry) are still read.
//!
//! Names read from `model.json` never become paths outside the folder: a
//! weights name must be a plain file name ending in `.safetensors`.

use crate::fsio::{
    commit_temp, crash_point, remove_stale_temps, sync_dir, temp_sibling, write_atomic,
};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use serde_json::Value;
use sha2::{Digest, Sha256};
use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};

/// File name of the description inside a model folder.
pub const DESCRIPTION_FILE: &str = "model.json";
/// File name of the weights in folders of model format 1.
pub const LEGACY_WEIGHTS_FILE: &str = "model.safetensors";
/// Key of the weights reference in `model.json` (model format 2 and later).
pub const WEIGHTS_KEY: &str = "weights";
/// Largest model description read (a guard against hostile files).
pub const MAX_DESCRIPTION_BYTES: u64 = 64 << 20;
/// Hex digits of the SHA-256 in a weights file name.
const NAME_HASH_DIGITS: usize = 12;
/// Extension of weights files.
const WEIGHTS_EXTENSION: &str = ".safetensors";
/// Prefix of content-addressed weights files.
const WEIGHTS_PREFIX: &str = "weights-";

/// The `"weights"` entry of `model.json`: which file holds the weights.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct WeightsRef {
    /// File name inside the model folder (`weights-<12 hex>.safetensors`).
    pub file: String,
    /// Its size in bytes.
    pub bytes: u64,
    /// SHA-256 of its bytes, 64 lowercase hex digits.
    pub sha256: String,
}

/// Saves a model folder `dir` (created if needed): `write_weights` writes the
/// weights (safetensors) at the path it is given, and `description` (a JSON
/// object) becomes `model.json` with the weights reference added under
/// [`WEIGHTS_KEY`].
///
/// Returns the reference written. If the save fails or the process dies at
/// any point, the folder still holds the previous model, complete.
pub fn save_model_folder(
    dir: &Path,
    description: Value,
    write_weights: impl FnOnce(&Path) -> Result<()>,
) -> Result<WeightsRef> {
    let Value::Object(mut fields) = description else {
        return Err(Error::internal("a model description must be a JSON object"));
    };
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let _guard = FolderLock::exclusive(dir);
    // What saves killed before this one left behind (no other save runs now).
    remove_stale_temps(dir);
    let temp = temp_sibling(&dir.join("weights"));
    let written = write_weights(&temp)
        .and_then(|()| readable_by_all(&temp))
        .and_then(|()| describe_file(&temp));
    let reference = match written {
        Ok(reference) => reference,
        Err(error) => {
            let _ = std::fs::remove_file(&temp);
            return Err(save_failure(error, dir, "the weights"));
        }
    };
    crash_point("weights:temp-written");
    let weights_path = dir.join(&reference.file);
    let existed = weights_path.exists();
    if let Err(error) = commit_temp(&temp, &weights_path) {
        let _ = std::fs::remove_file(&temp);
        return Err(save_failure(error, dir, "the weights"));
    }
    crash_point("weights:committed");
    let entry = serde_json::to_value(&reference)
        .map_err(|e| Error::internal(format!("weights reference: {e}")))?;
    fields.insert(WEIGHTS_KEY.to_string(), entry);
    let json = serde_json::to_vec_pretty(&Value::Object(fields))
        .map_err(|e| Error::internal(format!("model description: {e}")))?;
    if let Err(error) = write_atomic(&dir.join(DESCRIPTION_FILE), &json) {
        if !existed {
            // Nothing names the new weights file; the old model stays as it was.
            let _ = std::fs::remove_file(&weights_path);
        }
        // The message names model.json and says the old one is unchanged.
        return Err(error);
    }
    remove_leftovers(dir, &reference.file);
    crash_point("model:saved");
    Ok(reference)
}

/// A model folder opened for reading: `model.json` read and checked, the
/// weights file located (not yet checked). Holds a shared lock on the folder
/// until dropped, so a concurrent save cannot delete the weights meanwhile.
#[derive(Debug)]
pub struct ModelFolder {
    description_path: PathBuf,
    description: Value,
    weights_path: PathBuf,
    weights: Option<WeightsRef>,
    _guard: FolderLock,
}

impl ModelFolder {
    /// Opens the model folder `dir` and reads its `model.json` (at most
    /// [`MAX_DESCRIPTION_BYTES`]), refusing a format newer than
    /// `newest_format` and a weights entry that is missing (format 2 and
    /// later), malformed, or names anything but a plain `.safetensors` file
    /// name in the folder.
    pub fn open(dir: &Path, newest_format: u32) -> Result<ModelFolder> {
        let description_path = dir.join(DESCRIPTION_FILE);
        if !dir.is_dir() {
            return Err(Error::input(format!(
                "{}: no such folder; a model folder holds {DESCRIPTION_FILE} and the weights \
                 file it names (made by `gemmule train` or `gemmule finalize`)",
                dir.display()
            )));
        }
        let guard = FolderLock::shared(dir);
        let text = read_description_text(&description_path)?;
        let mut value: Value = serde_json::from_str(&text).map_err(|e| {
            Error::input(format!(
                "{}:{}:{}: not valid JSON: {e}",
                description_path.display(),
                e.line(),
                e.column()
            ))
        })?;
        let format = value.get("format").and_then(Value::as_u64).unwrap_or(0);
        if format > u64::from(newest_format) {
            return Err(Error::input(format!(
                "{}: model format {format} was written by a newer gemmule ({}); upgrade gemmule to read it",
                description_path.display(),
                value
                    .get("tool_version")
                    .and_then(Value::as_str)
                    .unwrap_or("unknown version")
            )));
        }
        let entry = match &mut value {
            Value::Object(fields) => fields.remove(WEIGHTS_KEY),
            _ => None,
        };
        let weights = match entry {
            Some(entry) => Some(parse_reference(&description_path, entry)?),
            None if format >= 2 => {
                return Err(Error::input(format!(
                    "{}: model format {format} needs a \"{WEIGHTS_KEY}\" entry naming the weights file; \
                     the folder is damaged: save the model again",
                    description_path.display()
                )))
            }
            None => None,
        };
        let file = weights
            .as_ref()
            .map_or(LEGACY_WEIGHTS_FILE, |reference| reference.file.as_str());
        Ok(ModelFolder {
            weights_path: dir.join(file),
            description_path,
            description: value,
            weights,
            _guard: guard,
        })
    }

    /// Path of `model.json` (for messages).
    pub fn description_path(&self) -> &Path {
        &self.description_path
    }

    /// The description as JSON, without the weights entry.
    pub fn description(&self) -> &Value {
        &self.description
    }

    /// Deserializes the description (without the weights entry).
    pub fn parse_description<D: serde::de::DeserializeOwned>(&self) -> Result<D> {
        D::deserialize(&self.description).map_err(|e| {
            Error::input(format!(
                "{}: not a gemmule model description: {e}",
                self.description_path.display()
            ))
        })
    }

    /// Path of the weights file `model.json` names.
    pub fn weights_path(&self) -> &Path {
        &self.weights_path
    }

    /// The weights entry (`None` for a folder of model format 1).
    pub fn weights_ref(&self) -> Option<&WeightsRef> {
        self.weights.as_ref()
    }

    /// Checks the weights file: a regular file of at most `max_bytes`, and,
    /// when `model.json` records them, of the recorded size and SHA-256.
    pub fn check_weights(&self, max_bytes: u64) -> Result<()> {
        let path = &self.weights_path;
        let metadata = std::fs::metadata(path).map_err(|e| match e.kind() {
            std::io::ErrorKind::NotFound => Error::input(format!(
                "{}: missing; {} names it as the model's weights (a model folder is made by \
                 `gemmule train` or `gemmule finalize`)",
                path.display(),
                self.description_path.display()
            )),
            _ => Error::io(path, e),
        })?;
        if !metadata.is_file() {
            return Err(Error::input(format!(
                "{}: not a regular file; the weights must be a file in the model folder",
                path.display()
            )));
        }
        let size = metadata.len();
        if size > max_bytes {
            return Err(Error::input(format!(
                "{}: {size} bytes is more than the model described in {} can have \
                 ({max_bytes} bytes at most)",
                path.display(),
                self.description_path.display()
            )));
        }
        let Some(expected) = &self.weights else {
            return Ok(());
        };
        let actual = describe_file_limited(path, max_bytes)?;
        if actual.bytes != expected.bytes || actual.sha256 != expected.sha256 {
            return Err(Error::input(format!(
                "{}: {} bytes with SHA-256 {}, but {} records {} bytes with SHA-256 {}; \
                 the weights file was changed or damaged: save the model again",
                path.display(),
                actual.bytes,
                actual.sha256,
                self.description_path.display(),
                expected.bytes,
                expected.sha256
            )));
        }
        Ok(())
    }
}

/// Reads `model.json` with the size cap; a missing file is an input error.
fn read_description_text(path: &Path) -> Result<String> {
    let file = File::open(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => Error::input(format!(
            "{}: missing; a model folder holds {DESCRIPTION_FILE} and the weights file it names \
             (made by `gemmule train` or `gemmule finalize`)",
            path.display()
        )),
        _ => Error::io(path, e),
    })?;
    let mut bytes = Vec::new();
    file.take(MAX_DESCRIPTION_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| Error::io(path, e))?;
    if bytes.len() as u64 > MAX_DESCRIPTION_BYTES {
        return Err(Error::input(format!(
            "{}: larger than any model description ({MAX_DESCRIPTION_BYTES} bytes at most)",
            path.display()
        )));
    }
    String::from_utf8(bytes).map_err(|e| {
        Error::input(format!(
            "{}: not UTF-8 text (byte {})",
            path.display(),
            e.utf8_error().valid_up_to()
        ))
    })
}

/// Parses and checks the weights entry of `model.json`.
fn parse_reference(description_path: &Path, entry: Value) -> Result<WeightsRef> {
    let reference: WeightsRef = serde_json::from_value(entry).map_err(|e| {
        Error::input(format!(
            "{}: bad \"{WEIGHTS_KEY}\" entry: {e}",
            description_path.display()
        ))
    })?;
    if !is_plain_weights_name(&reference.file) {
        return Err(Error::input(format!(
            "{}: \"{WEIGHTS_KEY}\".file {:?} is not a plain file name ending in {WEIGHTS_EXTENSION}; \
             the weights must lie in the model folder itself",
            description_path.display(),
            reference.file
        )));
    }
    let hex = |text: &str| text.bytes().all(|b| matches!(b, b'0'..=b'9' | b'a'..=b'f'));
    if reference.sha256.len() != 64 || !hex(&reference.sha256) {
        return Err(Error::input(format!(
            "{}: \"{WEIGHTS_KEY}\".sha256 {:?} is not 64 lowercase hex digits",
            description_path.display(),
            reference.sha256
        )));
    }
    Ok(reference)
}

/// A single path component naming a `.safetensors` file: no separators, no
/// `..`, no control characters, not hidden, at most 255 bytes.
pub fn is_plain_weights_name(name: &str) -> bool {
    name.len() <= 255
        && name.len() > WEIGHTS_EXTENSION.len()
        && name.ends_with(WEIGHTS_EXTENSION)
        && !name.starts_with('.')
        && !name.contains(['/', '\\', ':'])
        && !name.chars().any(char::is_control)
}

/// Name, size and SHA-256 of a freshly written weights file.
fn describe_file(path: &Path) -> Result<WeightsRef> {
    describe_file_limited(path, u64::MAX)
}

/// Size and SHA-256 of the first `limit` + 1 bytes at most of `path`, and
/// the content-addressed name they give.
fn describe_file_limited(path: &Path, limit: u64) -> Result<WeightsRef> {
    let file = File::open(path).map_err(|e| Error::io(path, e))?;
    let mut reader = file.take(limit.saturating_add(1));
    let mut hasher = Sha256::new();
    let mut buffer = vec![0u8; 1 << 16];
    let mut bytes = 0u64;
    loop {
        let read = reader.read(&mut buffer).map_err(|e| Error::io(path, e))?;
        if read == 0 {
            break;
        }
        hasher.update(&buffer[..read]);
        bytes += read as u64;
    }
    let sha256: String = hasher
        .finalize()
        .iter()
        .map(|byte| format!("{byte:02x}"))
        .collect();
    Ok(WeightsRef {
        file: format!(
            "{WEIGHTS_PREFIX}{}{WEIGHTS_EXTENSION}",
            &sha256[..NAME_HASH_DIGITS]
        ),
        bytes,
        sha256,
    })
}

/// Removes what earlier saves left: weights files other than `keep`, the
/// format-1 weights file, and gemmule's temporary files of saves whose
/// process is gone ([`remove_stale_temps`]). Called with the folder's
/// exclusive lock held, after the new `model.json` is durable.
fn remove_leftovers(dir: &Path, keep: &str) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut removed = false;
    for entry in entries.flatten() {
        let name = entry.file_name();
        let Some(name) = name.to_str() else { continue };
        let old_weights =
            name != keep && (name == LEGACY_WEIGHTS_FILE || is_content_addressed(name));
        if old_weights {
            removed |= std::fs::remove_file(entry.path()).is_ok();
        }
    }
    if removed {
        sync_dir(dir);
    }
    remove_stale_temps(dir);
}

/// Whether `name` is `weights-<12 hex>.safetensors`.
fn is_content_addressed(name: &str) -> bool {
    name.strip_prefix(WEIGHTS_PREFIX)
        .and_then(|rest| rest.strip_suffix(WEIGHTS_EXTENSION))
        .is_some_and(|hash| {
            hash.len() == NAME_HASH_DIGITS
                && hash.bytes().all(|b| matches!(b, b'0'..=b'9' | b'a'..=b'f'))
        })
}

/// Rewrites a failed save's I/O error so it names the model folder, what
/// was being written, and that the previous model is still there.
fn save_failure(error: Error, dir: &Path, what: &str) -> Error {
    match error {
        Error::Io { cause, .. } => {
            let text = format!(
                "{cause}, while saving {what}; the previous model in this folder, if any, \
                 was left unchanged"
            );
            Error::io(dir, std::io::Error::new(cause.kind(), text))
        }
        other => other,
    }
}

/// Gives a file the usual 0644 permissions (the tensor writer creates 0600).
fn readable_by_all(path: &Path) -> Result<()> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(path, std::fs::Permissions::from_mode(0o644))
            .map_err(|e| Error::io(path, e))?;
    }
    Ok(())
}

/// An advisory `flock` on a model folder (best effort: where a folder cannot
/// be opened or locked, saving and loading go on without it).
#[derive(Debug)]
struct FolderLock {
    _handle: Option<File>,
}

impl FolderLock {
    fn exclusive(dir: &Path) -> FolderLock {
        FolderLock::take(dir, File::lock)
    }

    fn shared(dir: &Path) -> FolderLock {
        FolderLock::take(dir, File::lock_shared)
    }

    fn take(dir: &Path, lock: fn(&File) -> std::io::Result<()>) -> FolderLock {
        let handle = File::open(dir).ok().filter(|handle| lock(handle).is_ok());
        FolderLock { _handle: handle }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn save(dir: &Path, content: &[u8]) -> WeightsRef {
        save_model_folder(dir, json!({ "format": 2, "note": "test" }), |path| {
            std::fs::write(path, content).map_err(|e| Error::io(path, e))
        })
        .expect("saved")
    }

    fn names(dir: &Path) -> Vec<String> {
        let mut names: Vec<String> = std::fs::read_dir(dir)
            .expect("list")
            .flatten()
            .filter_map(|e| e.file_name().to_str().map(String::from))
            .collect();
        names.sort();
        names
    }

    /// SHA-256 of "abc": FIPS 180-2, Appendix B.1.
    const ABC_SHA256: &str = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad";

    #[test]
    fn weights_are_named_by_their_sha256_and_old_ones_removed() {
        let dir = tempfile::tempdir().expect("temp dir");
        let first = save(dir.path(), b"abc");
        assert_eq!(first.sha256, ABC_SHA256);
        assert_eq!(first.file, "weights-ba7816bf8f01.safetensors");
        assert_eq!(first.bytes, 3);
        std::fs::write(dir.path().join(LEGACY_WEIGHTS_FILE), b"old").expect("legacy file");
        let mut gone = std::process::Command::new("true")
            .spawn()
            .expect("true runs");
        let dead = gone.id();
        gone.wait().expect("reaped");
        let torn = format!(
            "{}{dead}-0-weights{}",
            crate::fsio::TEMP_PREFIX,
            crate::fsio::TEMP_SUFFIX
        );
        std::fs::write(dir.path().join(torn), b"torn").expect("leftover");
        let second = save(dir.path(), b"abcd");
        assert_eq!(
            names(dir.path()),
            vec![DESCRIPTION_FILE.to_string(), second.file.clone()]
        );
        let folder = ModelFolder::open(dir.path(), 2).expect("opens");
        assert_eq!(folder.weights_ref(), Some(&second));
        assert_eq!(
            folder.description(),
            &json!({ "format": 2, "note": "test" })
        );
        folder.check_weights(1000).expect("intact");
        let message = folder
            .check_weights(3)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(message.contains("3 bytes at most"), "{message}");
    }

    #[test]
    fn a_changed_weights_file_is_refused() {
        let dir = tempfile::tempdir().expect("temp dir");
        let reference = save(dir.path(), b"abc");
        std::fs::write(dir.path().join(&reference.file), b"abd").expect("tamper");
        let folder = ModelFolder::open(dir.path(), 2).expect("opens");
        let message = folder
            .check_weights(1000)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(message.contains("changed or damaged"), "{message}");
    }

    #[test]
    fn weights_names_that_leave_the_folder_are_refused() {
        for bad in [
            "../weights.safetensors",
            "/etc/passwd.safetensors",
            "sub/w.safetensors",
            "..\\w.safetensors",
            "..",
            ".safetensors",
            ".hidden.safetensors",
            "model.json",
            "c:w.safetensors",
        ] {
            assert!(!is_plain_weights_name(bad), "{bad}");
            let dir = tempfile::tempdir().expect("temp dir");
            let description = json!({
                "format": 2,
                "weights": { "file": bad, "bytes": 3, "sha256": ABC_SHA256 }
            });
            std::fs::write(dir.path().join(DESCRIPTION_FILE), description.to_string())
                .expect("write");
            let message = ModelFolder::open(dir.path(), 2)
                .err()
                .map(|e| e.to_string())
                .unwrap_or_default();
            assert!(
                message.contains("not a plain file name"),
                "{bad}: {message}"
            );
        }
        assert!(is_plain_weights_name("weights-ba7816bf8f01.safetensors"));
        assert!(is_plain_weights_name(LEGACY_WEIGHTS_FILE));
    }

    #[test]
    fn format_two_without_weights_and_newer_formats_are_refused() {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join(DESCRIPTION_FILE);
        std::fs::write(&path, r#"{"format":2}"#).expect("write");
        let message = ModelFolder::open(dir.path(), 2)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(message.contains("needs a \"weights\" entry"), "{message}");
        std::fs::write(&path, r#"{"format":3,"tool_version":"9.9.9"}"#).expect("write");
        let message = ModelFolder::open(dir.path(), 2)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(message.contains("newer gemmule (9.9.9)"), "{message}");
        std::fs::write(&path, r#"{"format":1}"#).expect("write");
        let folder = ModelFolder::open(dir.path(), 2).expect("format 1 opens");
        assert!(folder.weights_path().ends_with(LEGACY_WEIGHTS_FILE));
        assert!(folder.weights_ref().is_none());
    }

    #[test]
    fn a_failed_weights_write_keeps_the_previous_model() {
        let dir = tempfile::tempdir().expect("temp dir");
        let first = save(dir.path(), b"abc");
        let failed = save_model_folder(dir.path(), json!({ "format": 2 }), |path| {
            std::fs::write(path, b"ab").map_err(|e| Error::io(path, e))?;
            Err(Error::io(path, std::io::Error::from_raw_os_error(28)))
        });
        assert!(failed.is_err());
        assert_eq!(
            names(dir.path()),
            vec![DESCRIPTION_FILE.to_string(), first.file.clone()]
        );
        let folder = ModelFolder::open(dir.path(), 2).expect("opens");
        assert_eq!(folder.weights_ref(), Some(&first));
        folder.check_weights(1000).expect("intact");
    }
}
