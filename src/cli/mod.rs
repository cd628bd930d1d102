//! The `gemmule` command line: parses options, calls the library, prints.
//!
//! Exit codes (docs/cli.md):
//!
//! | code | meaning |
//! |---|---|
//! | 0 | success (also `--help` and `--version`) |
//! | 1 | internal failure: a bug, a tensor error, an I/O error other than "not found", a panic |
//! | 2 | bad input: a wrong file or option value, a file that does not exist, a usage error |
//! | 130 | interrupted by Ctrl-C |

mod args;
mod commands;
mod compare;
mod demo;
mod final_text;
mod progress;
mod report;
mod show;
mod show_json;

pub use args::Cli;

use args::Command;
use clap::Parser;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

/// Exit code of a successful command.
pub const EXIT_OK: i32 = 0;
/// Exit code of an internal failure (a bug, a panic, a failed write).
pub const EXIT_INTERNAL: i32 = 1;
/// Exit code of bad input (a wrong file, option or value; a usage error).
pub const EXIT_BAD_INPUT: i32 = 2;
/// Exit code of a run stopped by Ctrl-C.
pub const EXIT_INTERRUPTED: i32 = 130;

/// Runs the command line with the process arguments; returns the exit code.
pub fn main() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() {
                EXIT_BAD_INPUT
            } else {
                EXIT_OK
            };
        }
    };
    // One line per panic, no backtrace: a panic inside a worker is recorded
    // as a failed evaluation and the search goes on.
    std::panic::set_hook(Box::new(|info| {
        eprintln!("gemmule: internal error: {info} (inside a candidate it is recorded as failed and the search goes on)");
    }));
    let stop = Arc::new(AtomicBool::new(false));
    let flag = stop.clone();
    let graceful = stops_gracefully(&cli.command);
    let _ = ctrlc::set_handler(move || {
        if !graceful {
            eprintln!("\ngemmule: interrupted");
            std::process::exit(EXIT_INTERRUPTED);
        }
        if flag.swap(true, Ordering::SeqCst) {
            std::process::exit(EXIT_INTERRUPTED);
        }
        eprintln!("\ngemmule: stopping; finished evaluations stay in the journal, running ones are abandoned (press Ctrl-C again to quit at once)");
    });
    run_guarded(|| commands::dispatch(cli.command, &stop))
}

/// Whether `command` watches the stop flag and ends cleanly on the first
/// Ctrl-C (searches, comparisons, the demo); every other command exits at once.
fn stops_gracefully(command: &Command) -> bool {
    matches!(
        command,
        Command::Search(_) | Command::Resume(_) | Command::Compare(_) | Command::Demo(_)
    )
}

/// Runs a command, prints its error and turns the outcome into an exit code:
/// the command's own code on success, [`exit_code_of`] on an error, and
/// [`EXIT_INTERNAL`] after a panic.
fn run_guarded(command: impl FnOnce() -> anyhow::Result<i32>) -> i32 {
    match std::panic::catch_unwind(std::panic::AssertUnwindSafe(command)) {
        Ok(Ok(code)) => code,
        Ok(Err(e)) => {
            eprintln!("gemmule: error: {e:#}");
            exit_code_of(&e)
        }
        Err(_) => {
            eprintln!("gemmule: internal error (a bug): please report it with the command you ran");
            EXIT_INTERNAL
        }
    }
}

/// The exit code of a failed command: that of the first [`crate::Error`] in
/// the error's chain (context added on top does not change it), 2 for a
/// "not found" I/O error outside one, 1 for anything else.
fn exit_code_of(error: &anyhow::Error) -> i32 {
    for cause in error.chain() {
        if let Some(e) = cause.downcast_ref::<crate::Error>() {
            return e.exit_code();
        }
        if let Some(e) = cause.downcast_ref::<std::io::Error>() {
            return if e.kind() == std::io::ErrorKind::NotFound {
                EXIT_BAD_INPUT
            } else {
                EXIT_INTERNAL
            };
        }
    }
    EXIT_INTERNAL
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::Error;
    use anyhow::Context;

    #[test]
    fn errors_map_to_the_documented_exit_codes() {
        // Source: the exit-code table of docs/cli.md and DEVELOPERS.md.
        let input: anyhow::Error = Error::input("--budget must be at least 1").into();
        assert_eq!(exit_code_of(&input), EXIT_BAD_INPUT);
        let internal: anyhow::Error = Error::internal("broken invariant").into();
        assert_eq!(exit_code_of(&internal), EXIT_INTERNAL);
        let missing: anyhow::Error = Error::io(
            "runs/none",
            std::io::Error::from(std::io::ErrorKind::NotFound),
        )
        .into();
        assert_eq!(exit_code_of(&missing), EXIT_BAD_INPUT);
        let denied: anyhow::Error = Error::io(
            "runs/locked",
            std::io::Error::from(std::io::ErrorKind::PermissionDenied),
        )
        .into();
        assert_eq!(exit_code_of(&denied), EXIT_INTERNAL);
        let plain: anyhow::Error = anyhow::anyhow!("something else");
        assert_eq!(exit_code_of(&plain), EXIT_INTERNAL);
    }

    #[test]
    fn context_keeps_the_exit_code_of_the_cause() {
        let wrapped = Err::<(), _>(Error::input("bad value"))
            .context("finalize")
            .context("outer")
            .expect_err("an error");
        assert_eq!(exit_code_of(&wrapped), EXIT_BAD_INPUT);
        let io = Err::<(), _>(std::io::Error::from(std::io::ErrorKind::NotFound))
            .context("reading")
            .expect_err("an error");
        assert_eq!(exit_code_of(&io), EXIT_BAD_INPUT);
    }

    #[test]
    fn a_panic_in_a_command_exits_with_1() {
        assert_eq!(run_guarded(|| panic!("test panic")), EXIT_INTERNAL);
        assert_eq!(run_guarded(|| Ok(EXIT_INTERRUPTED)), EXIT_INTERRUPTED);
        assert_eq!(
            run_guarded(|| Err(Error::input("bad").into())),
            EXIT_BAD_INPUT
        );
    }
}
