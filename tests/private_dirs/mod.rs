//! Keeps the gemmule binary under test away from the user's data folders.
//!
//! [`isolate`] points a command's `GEMMULE_LEDGER_DIR` (the test ledger,
//! `src/ledger/`) and `XDG_DATA_HOME` into one temporary folder per test.
//! libtest runs every test on a thread of its own, so the folder is a
//! thread-local made on first use and removed when the test's thread ends:
//! the commands of one test share a ledger (a second `finalize` of a run
//! sees the first), while tests never see each other's openings, even when
//! they finalize runs on the same data. A command spawned from a helper
//! thread of a test gets that thread's own folder.

#![allow(dead_code)]

use std::path::PathBuf;
use std::process::Command;

thread_local! {
    static TEST_DATA_HOME: tempfile::TempDir = tempfile::Builder::new()
        .prefix("gemmule-test-data-")
        .tempdir()
        .expect("a temporary folder for this test's ledger");
}

/// The folder `GEMMULE_LEDGER_DIR` names for the commands of this test.
pub fn ledger_dir() -> PathBuf {
    TEST_DATA_HOME.with(|home| home.path().join("ledger"))
}

/// Sets `GEMMULE_LEDGER_DIR` and `XDG_DATA_HOME` of `command` to this
/// test's temporary folder.
pub fn isolate(command: &mut Command) -> &mut Command {
    TEST_DATA_HOME.with(|home| {
        command
            .env("GEMMULE_LEDGER_DIR", home.path().join("ledger"))
            .env("XDG_DATA_HOME", home.path().join("xdg-data"))
    })
}
