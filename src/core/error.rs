//! Errors for every stage, with the exit-code class each maps to.
//!
//! Input errors (exit code 2) carry what the user needs to act: the file, the field or row, the
//! value and, where there is one, the fix. Internal errors (exit code 1) are bugs or solver
//! failures that the user cannot fix by changing the input.

use std::path::PathBuf;

/// Everything that can stop a run.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The input is wrong in a way the user can fix; `hint` says how.
    #[error("{message}")]
    Input {
        message: String,
        hint: Option<String>,
    },
    /// Reading or writing a file failed.
    #[error("cannot {action} `{}`: {source}", path.display())]
    Io {
        action: &'static str,
        path: PathBuf,
        source: std::io::Error,
    },
    /// GDAL failed on a file (open, read, transform).
    #[error("GDAL could not {action} `{}`: {message}", path.display())]
    Gdal {
        action: &'static str,
        path: PathBuf,
        message: String,
    },
    /// Something that should not happen: a solver failure or a broken invariant.
    #[error("internal error: {0}")]
    Internal(String),
}

impl Error {
    /// A bad-input error with no fix line.
    pub fn input(message: impl Into<String>) -> Self {
        Error::Input {
            message: message.into(),
            hint: None,
        }
    }

    /// A bad-input error with one hint line saying how to fix it.
    pub fn input_with_hint(message: impl Into<String>, hint: impl Into<String>) -> Self {
        Error::Input {
            message: message.into(),
            hint: Some(hint.into()),
        }
    }

    /// A read or write failure on `path`.
    pub fn io(action: &'static str, path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            action,
            path: path.into(),
            source,
        }
    }

    /// The process exit code for this error: 2 for anything the user can fix, 1 otherwise.
    pub fn exit_code(&self) -> u8 {
        match self {
            Error::Input { .. } | Error::Io { .. } | Error::Gdal { .. } => 2,
            Error::Internal(_) => 1,
        }
    }

    /// The hint line, if the error has one.
    pub fn hint(&self) -> Option<&str> {
        match self {
            Error::Input { hint, .. } => hint.as_deref(),
            Error::Gdal { action, .. }
                if [
                    "create",
                    "write",
                    "finish writing",
                    "set nodata of",
                    "georeference",
                ]
                .iter()
                .any(|a| action.starts_with(a)) =>
            {
                Some("check that the folder exists, is writable and has space left")
            }
            Error::Gdal { .. } => {
                Some("check that the file exists, is readable and is a format GDAL can open")
            }
            _ => None,
        }
    }
}

/// Result with the crate's error.
pub type Result<T, E = Error> = std::result::Result<T, E>;
