//! The one error type of the core: every message names what went wrong, where,
//! and, where it can, how to fix it.

use std::fmt;

/// Everything that can go wrong in the core. No variant is ever a panic.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Error {
    /// A problem in the cohort file, at a row and/or column when known.
    /// Rows are 1-based line-of-record numbers counting the header as row 1.
    Data {
        /// 1-based record number in the file (header = 1), when known.
        row: Option<usize>,
        /// Column name, when known.
        column: Option<String>,
        /// What is wrong and how to fix it.
        message: String,
    },
    /// A problem in the study file (TOML), at a key.
    Study {
        /// Dotted key path, e.g. `designs[1].caliper`.
        key: String,
        /// What is wrong and what is allowed.
        message: String,
    },
    /// An invalid parameter passed to an algorithm.
    Param {
        /// Parameter name.
        name: String,
        /// What is wrong and what is allowed.
        message: String,
    },
    /// A computation that cannot give an answer for this input
    /// (for example no feasible match under the caliper).
    Compute {
        /// What happened and what to try.
        message: String,
    },
}

impl Error {
    /// A data error at a row and column.
    pub fn data(row: Option<usize>, column: Option<&str>, message: impl Into<String>) -> Self {
        Error::Data {
            row,
            column: column.map(str::to_string),
            message: message.into(),
        }
    }
    /// A study-file error at a key.
    pub fn study(key: impl Into<String>, message: impl Into<String>) -> Self {
        Error::Study {
            key: key.into(),
            message: message.into(),
        }
    }
    /// An invalid parameter.
    pub fn param(name: impl Into<String>, message: impl Into<String>) -> Self {
        Error::Param {
            name: name.into(),
            message: message.into(),
        }
    }
    /// A computation that cannot proceed.
    pub fn compute(message: impl Into<String>) -> Self {
        Error::Compute {
            message: message.into(),
        }
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Data {
                row,
                column,
                message,
            } => {
                f.write_str("data")?;
                match (row, column) {
                    (Some(r), Some(c)) => write!(f, " (row {r}, column \"{c}\")")?,
                    (Some(r), None) => write!(f, " (row {r})")?,
                    (None, Some(c)) => write!(f, " (column \"{c}\")")?,
                    (None, None) => {}
                }
                write!(f, ": {message}")
            }
            Error::Study { key, message } => write!(f, "study file (key \"{key}\"): {message}"),
            Error::Param { name, message } => write!(f, "parameter \"{name}\": {message}"),
            Error::Compute { message } => write!(f, "{message}"),
        }
    }
}

impl std::error::Error for Error {}

/// Result with the core's error.
pub type Result<T, E = Error> = std::result::Result<T, E>;
