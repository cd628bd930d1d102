//! Where the test ledger lives: `$GEMMULE_LEDGER_DIR`, else the XDG data
//! folder (`$XDG_DATA_HOME/gemmule`, else `$HOME/.local/share/gemmule`).

use crate::{Error, Result};
use std::ffi::OsStr;
use std::path::{Path, PathBuf};

/// Environment variable that names the ledger's folder (it wins over the XDG folders).
pub const LEDGER_DIR_VARIABLE: &str = "GEMMULE_LEDGER_DIR";
/// The XDG Base Directory variable for user data (`$HOME/.local/share` when unset).
pub const XDG_DATA_HOME_VARIABLE: &str = "XDG_DATA_HOME";
/// The user's home folder, the last fallback.
pub const HOME_VARIABLE: &str = "HOME";
/// Name of the ledger file inside its folder (JSON Lines).
pub const LEDGER_FILE: &str = "test-openings.jsonl";

/// How a [`LedgerLocation`] was chosen; error messages say it, so the user
/// knows which variable to change.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LocationSource {
    /// A library caller (or a test) named the folder.
    Given,
    /// `$GEMMULE_LEDGER_DIR`.
    LedgerVariable,
    /// `$XDG_DATA_HOME/gemmule`.
    XdgDataHome,
    /// `$HOME/.local/share/gemmule` (`XDG_DATA_HOME` unset or empty).
    Home,
}

impl LocationSource {
    /// Why the ledger is in its folder, in words for messages.
    pub fn describe(self) -> &'static str {
        match self {
            LocationSource::Given => "the folder the caller named",
            LocationSource::LedgerVariable => "named by GEMMULE_LEDGER_DIR",
            LocationSource::XdgDataHome => "$XDG_DATA_HOME/gemmule",
            LocationSource::Home => "$HOME/.local/share/gemmule, as XDG_DATA_HOME is not set",
        }
    }
}

/// The folder of the test ledger and how it was chosen.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LedgerLocation {
    dir: PathBuf,
    source: LocationSource,
}

impl LedgerLocation {
    /// The ledger in `dir` (for library callers and tests; the environment is not read).
    pub fn at(dir: impl Into<PathBuf>) -> LedgerLocation {
        LedgerLocation {
            dir: dir.into(),
            source: LocationSource::Given,
        }
    }

    /// The ledger's folder from this process's environment (see [`LedgerLocation::resolve`]).
    pub fn from_env() -> Result<LedgerLocation> {
        let ledger = std::env::var_os(LEDGER_DIR_VARIABLE);
        let xdg = std::env::var_os(XDG_DATA_HOME_VARIABLE);
        let home = std::env::var_os(HOME_VARIABLE);
        LedgerLocation::resolve(ledger.as_deref(), xdg.as_deref(), home.as_deref())
    }

    /// The ledger's folder from the values of `GEMMULE_LEDGER_DIR`,
    /// `XDG_DATA_HOME` and `HOME` (`None` when a variable is not set).
    ///
    /// `GEMMULE_LEDGER_DIR` wins when it is set and not empty; it must be an
    /// absolute path (a relative one would give a different ledger in every
    /// working folder). Otherwise, following the XDG Base Directory
    /// Specification, `$XDG_DATA_HOME/gemmule` when `XDG_DATA_HOME` is set to
    /// an absolute path (an empty or relative value is ignored, as the
    /// specification says), else `$HOME/.local/share/gemmule`. Without a
    /// usable `HOME` it refuses with [`Error::Input`] naming the variables to set.
    pub fn resolve(
        ledger_dir: Option<&OsStr>,
        xdg_data_home: Option<&OsStr>,
        home: Option<&OsStr>,
    ) -> Result<LedgerLocation> {
        fn set(value: Option<&OsStr>) -> Option<&Path> {
            value.filter(|v| !v.is_empty()).map(Path::new)
        }
        if let Some(dir) = set(ledger_dir) {
            if !dir.is_absolute() {
                return Err(Error::input(format!(
                    "{LEDGER_DIR_VARIABLE} is set to the relative path {:?}; set it to an \
                     absolute folder (e.g. {LEDGER_DIR_VARIABLE}=$HOME/gemmule-ledger), so every \
                     run records its test openings in the same ledger",
                    dir.display().to_string()
                )));
            }
            return Ok(LedgerLocation {
                dir: dir.to_path_buf(),
                source: LocationSource::LedgerVariable,
            });
        }
        if let Some(data) = set(xdg_data_home).filter(|d| d.is_absolute()) {
            return Ok(LedgerLocation {
                dir: data.join("gemmule"),
                source: LocationSource::XdgDataHome,
            });
        }
        match set(home).filter(|h| h.is_absolute()) {
            Some(home) => Ok(LedgerLocation {
                dir: home.join(".local/share/gemmule"),
                source: LocationSource::Home,
            }),
            None => Err(Error::input(format!(
                "cannot find a folder for the test ledger (the record of every test-split \
                 opening): neither {LEDGER_DIR_VARIABLE}, {XDG_DATA_HOME_VARIABLE} nor \
                 {HOME_VARIABLE} is set to an absolute path; set {LEDGER_DIR_VARIABLE} to a \
                 writable folder"
            ))),
        }
    }

    /// The ledger's folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// The ledger file (`DIR/test-openings.jsonl`).
    pub fn file(&self) -> PathBuf {
        self.dir.join(LEDGER_FILE)
    }

    /// How the folder was chosen.
    pub fn source(&self) -> LocationSource {
        self.source
    }

    /// An [`Error::Io`] about `path` (the folder or the file) that keeps the
    /// operating system's error kind and says why the ledger is there and
    /// how to move it.
    pub(crate) fn io_error(&self, path: &Path, cause: std::io::Error) -> Error {
        let note = format!(
            "{cause} (this is gemmule's test ledger, {}; set {LEDGER_DIR_VARIABLE} to a \
             writable folder to keep it elsewhere)",
            self.source.describe()
        );
        Error::io(path, std::io::Error::new(cause.kind(), note))
    }
}
