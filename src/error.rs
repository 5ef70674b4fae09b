//! The library's error type: one enum, each variant says what was wrong and where, in a
//! single line fit for `rotorsift: error: ...`.

use std::path::PathBuf;

/// Errors of the rotorsift library.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// A recording (or other input file) is malformed: names the file and what is wrong.
    #[error("{}: {msg}", path.display())]
    Format { path: PathBuf, msg: String },
    /// A parameter is out of its allowed range; the message names the value and the range.
    #[error("{0}")]
    Invalid(String),
    /// An I/O failure, with the file it concerns (the OS error is part of the message, so
    /// it is not also chained as a source and printed twice).
    #[error("{}: {err}", path.display())]
    Io { path: PathBuf, err: std::io::Error },
}

/// Result with the library's [`Error`].
pub type Result<T> = std::result::Result<T, Error>;

impl Error {
    /// Shorthand for a [`Error::Format`] error.
    pub fn format(path: impl Into<PathBuf>, msg: impl Into<String>) -> Self {
        Error::Format {
            path: path.into(),
            msg: msg.into(),
        }
    }
    /// Shorthand for an [`Error::Io`] error.
    pub fn io(path: impl Into<PathBuf>, err: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            err,
        }
    }
}

/// Returns `Err(Error::Invalid)` with `msg` unless `ok`.
pub fn ensure(ok: bool, msg: impl FnOnce() -> String) -> Result<()> {
    if ok {
        Ok(())
    } else {
        Err(Error::Invalid(msg()))
    }
}

/// Whether an error (one link of a chain) is a closed pipe on output, e.g. `| head`: the
/// reader has gone, which is no failure of the command.
pub fn is_broken_pipe(e: &(dyn std::error::Error + 'static)) -> bool {
    e.downcast_ref::<std::io::Error>()
        .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
        || matches!(e.downcast_ref::<Error>(),
            Some(Error::Io { err, .. }) if err.kind() == std::io::ErrorKind::BrokenPipe)
}
