//! The library's error type and the exit codes the command line maps it to.

use std::path::PathBuf;

/// Every failure the library reports.
///
/// Bad input (a malformed file, an option out of range, a genome outside its
/// search space) is kept apart from internal failures so the command line can
/// exit with code 2 for the former and 1 for the latter.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The user's input is wrong; the message says what to fix (file, line, column, value).
    #[error("{0}")]
    Input(String),
    /// A file could not be read or written.
    #[error("{}: {cause}", path.display())]
    Io {
        /// The file or folder involved.
        path: PathBuf,
        /// What the operating system said (kept out of the error chain so
        /// the message is printed once).
        cause: std::io::Error,
    },
    /// A tensor operation failed inside candle (a bug on our side, not bad input).
    #[error("tensor library: {0}")]
    Tensor(#[from] candle_core::Error),
    /// Something that should not happen happened; please report it.
    #[error("internal error: {0}")]
    Internal(String),
}

/// Shorthand for results carrying [`Error`].
pub type Result<T, E = Error> = std::result::Result<T, E>;

impl Error {
    /// Builds an [`Error::Input`] from anything printable.
    pub fn input(message: impl Into<String>) -> Self {
        Error::Input(message.into())
    }

    /// Builds an [`Error::Internal`] from anything printable.
    pub fn internal(message: impl Into<String>) -> Self {
        Error::Internal(message.into())
    }

    /// Wraps an I/O error with the path it concerns.
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            cause: source,
        }
    }

    /// The process exit code for this error: 2 for bad input, 1 otherwise.
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Input(_) => 2,
            Error::Io { cause, .. } if cause.kind() == std::io::ErrorKind::NotFound => 2,
            _ => 1,
        }
    }
}
