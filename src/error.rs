//! The one error type of the library: every user mistake becomes a value whose
//! message names the file, the key or column and, where it applies, the row.

use std::path::Path;

/// Errors that user input can cause, and failures of the numerical work.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The model spec or a scenario file is wrong: `file` names it, the message names the key.
    #[error("{file}: {message}")]
    Spec { file: String, message: String },
    /// The data do not fit the spec: the message names the column and the row.
    #[error("{file}: {message}")]
    Data { file: String, message: String },
    /// A file could not be read or written.
    #[error("{path}: {message}")]
    Io { path: String, message: String },
    /// The estimation could not proceed (for example no free parameter).
    #[error("{0}")]
    Estimate(String),
    /// A command-line request that does not fit the model (unknown alternative, ...).
    #[error("{0}")]
    Usage(String),
}

impl Error {
    pub fn spec(file: impl AsRef<Path>, message: impl Into<String>) -> Self {
        Error::Spec {
            file: file.as_ref().display().to_string(),
            message: message.into(),
        }
    }
    pub fn data(file: impl AsRef<Path>, message: impl Into<String>) -> Self {
        Error::Data {
            file: file.as_ref().display().to_string(),
            message: message.into(),
        }
    }
    pub fn io(path: impl AsRef<Path>, err: impl std::fmt::Display) -> Self {
        Error::Io {
            path: path.as_ref().display().to_string(),
            message: err.to_string(),
        }
    }
}

pub type Result<T> = std::result::Result<T, Error>;

/// Refuses a count asked for on the command line (or in the workbench) that is
/// past `limit`, saying the limit and the memory the request would take.
pub fn check_count(option: &str, n: usize, limit: usize, bytes_each: usize) -> Result<()> {
    if n <= limit {
        return Ok(());
    }
    let bytes = n as f64 * bytes_each as f64;
    let cost = if bytes_each == 0 {
        String::new()
    } else {
        format!(": it would take about {} of memory", human_bytes(bytes))
    };
    Err(Error::Usage(format!(
        "{option} {n} is more than the {limit} allowed{cost}"
    )))
}

/// A byte count for people: `3.2 GB`, `1.8e11 GB`.
pub fn human_bytes(bytes: f64) -> String {
    let gb = bytes / 1e9;
    if gb >= 1e6 {
        format!("{gb:.1e} GB")
    } else if gb >= 1.0 {
        format!("{gb:.1} GB")
    } else {
        format!("{:.1} MB", bytes / 1e6)
    }
}
