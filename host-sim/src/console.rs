//! Writing to stdout and stderr without panicking.
//!
//! `print!` and `eprint!` panic when the stream cannot be written (a full
//! disk behind `> file`, `2>/dev/full`). Every line `humsim` prints goes
//! through [`out`] or [`err`] instead, and a failure becomes a
//! [`CliError`]:
//!
//! - stdout closed by its reader (`humsim replay log.csv | head`): the run
//!   stops at once and exits quietly with status 0 ([`CliError::Closed`]), as
//!   the reader asked for no more;
//! - any other stdout error: a message naming stdout and a non-zero exit;
//! - stderr unwritable: the run stops with a non-zero exit and no message
//!   (there is nowhere to put one).

use std::io::{ErrorKind, Write};

/// Why a command stopped.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum CliError {
    /// A message for stderr; exit status 1.
    Message(String),
    /// stdout was closed by its reader: exit quietly, status 0.
    Closed,
    /// stderr cannot be written: exit status 1 without a message.
    NoStderr,
}

impl From<String> for CliError {
    fn from(m: String) -> Self {
        CliError::Message(m)
    }
}

impl std::fmt::Display for CliError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            CliError::Message(m) => f.write_str(m),
            CliError::Closed => f.write_str("stdout was closed"),
            CliError::NoStderr => f.write_str("stderr cannot be written"),
        }
    }
}

/// The error for a failed write to stdout (also used by writers that hold
/// a stdout lock of their own).
pub fn stdout_error(e: &std::io::Error) -> CliError {
    if e.kind() == ErrorKind::BrokenPipe {
        CliError::Closed
    } else {
        CliError::Message(format!("stdout: cannot write: {e}"))
    }
}

/// Writes `text` to stdout and flushes it.
pub fn out(text: &str) -> Result<(), CliError> {
    let mut o = std::io::stdout().lock();
    o.write_all(text.as_bytes())
        .and_then(|()| o.flush())
        .map_err(|e| stdout_error(&e))
}

/// Writes `text` to stderr.
pub fn err(text: &str) -> Result<(), CliError> {
    let mut e = std::io::stderr().lock();
    e.write_all(text.as_bytes())
        .and_then(|()| e.flush())
        .map_err(|_| CliError::NoStderr)
}

/// The exit status for a command's result, after printing its message (if
/// stderr takes it).
pub fn finish(result: Result<(), CliError>) -> std::process::ExitCode {
    match result {
        Ok(()) | Err(CliError::Closed) => std::process::ExitCode::SUCCESS,
        Err(CliError::Message(m)) => {
            let _ = err(&format!("humsim: error: {m}\n"));
            std::process::ExitCode::FAILURE
        }
        Err(CliError::NoStderr) => std::process::ExitCode::FAILURE,
    }
}
