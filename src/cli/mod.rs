//! The `gemmule` command line: parses options, calls the library, prints.
//!
//! Exit codes: 0 success, 1 internal failure, 2 bad input, 130 interrupted.

mod args;
mod commands;
mod compare;
mod progress;
mod report;
mod show;

pub use args::Cli;

use clap::Parser;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

/// Exit code of a run stopped by Ctrl-C.
pub const EXIT_INTERRUPTED: i32 = 130;

/// Runs the command line with the process arguments; returns the exit code.
pub fn main() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() { 2 } else { 0 };
        }
    };
    // One line per panic, no backtrace: a panic inside a worker is recorded
    // as a failed evaluation and the search goes on.
    std::panic::set_hook(Box::new(|info| {
        eprintln!("gemmule: internal error: {info} (inside a candidate it is recorded as failed and the search goes on)");
    }));
    let stop = Arc::new(AtomicBool::new(false));
    let flag = stop.clone();
    let _ = ctrlc::set_handler(move || {
        if flag.swap(true, Ordering::SeqCst) {
            std::process::exit(EXIT_INTERRUPTED);
        }
        eprintln!("\ngemmule: stopping; finished evaluations stay in the journal, running ones are abandoned (press Ctrl-C again to quit at once)");
    });
    let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        commands::dispatch(cli.command, &stop)
    }));
    match outcome {
        Ok(Ok(code)) => code,
        Ok(Err(e)) => {
            eprintln!("gemmule: error: {e:#}");
            match e.downcast_ref::<crate::Error>() {
                Some(err) => err.exit_code(),
                None => 1,
            }
        }
        Err(_) => {
            eprintln!("gemmule: internal error (a bug): please report it with the command you ran");
            1
        }
    }
}
